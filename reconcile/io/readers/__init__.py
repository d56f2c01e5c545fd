"""Readers: files in, canonical frames out (every value validated, every problem reported)."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from reconcile.core.canon import canonical_fills, canonical_financing, canonical_opening
from reconcile.errors import ValidationError
from reconcile.io.readers.tabular import read_table

#: Fill columns a large CSV can have parsed as decimals by the reader itself.
_FILL_DECIMALS = ("quantity", "price", "commission", "multiplier")

__all__ = ["read_fills", "read_financing", "read_opening", "read_table"]


def read_fills(
    path: Path | str,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    input_format: str | None = None,
) -> pd.DataFrame:
    """Read and validate a fills file (CSV or Parquet) into the canonical fill columns."""
    raw = read_table(path, input_format, decimals=_FILL_DECIMALS)
    typed = Path(path).suffix.lower() != ".parquet" and _has_decimals(raw)
    try:
        result = canonical_fills(raw, source=str(path), timezone=timezone, dedupe=dedupe)
    except ValidationError:
        if not typed:
            raise
    else:
        # Repeated rows are compared as written (5 and 5.0 are not the same text), so a file
        # with repeats is judged by the text path.
        if not typed or not result.attrs["read_summary"]["duplicates_dropped"]:
            return result
    # Report problems as the text path words them, with every value as written in the file.
    raw = read_table(path, input_format)
    return canonical_fills(raw, source=str(path), timezone=timezone, dedupe=dedupe)


def _has_decimals(raw: pd.DataFrame) -> bool:
    return any(isinstance(raw[c].dtype, pd.ArrowDtype) for c in _FILL_DECIMALS if c in raw)


def read_financing(
    path: Path | str,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    input_format: str | None = None,
) -> pd.DataFrame:
    """Read and validate a financing-events file into the canonical financing columns."""
    raw = read_table(path, input_format)
    return canonical_financing(raw, source=str(path), timezone=timezone, dedupe=dedupe)


def read_opening(
    path: Path | str, *, timezone: str | None = None, input_format: str | None = None
) -> pd.DataFrame:
    """Read open lots carried in from an earlier period (the ``open_lots`` table of ``match``)."""
    raw = read_table(path, input_format)
    return canonical_opening(raw, source=str(path), timezone=timezone)
