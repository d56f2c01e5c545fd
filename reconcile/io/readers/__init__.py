"""Readers: files in, canonical frames out (every value validated, every problem reported)."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from reconcile.core import canon
from reconcile.core.canon import canonical_fills, canonical_financing, canonical_opening
from reconcile.io.readers.tabular import read_table

__all__ = ["read_fills", "read_financing", "read_opening", "read_table"]
__all__ += ["read_rates", "read_statement"]


def read_fills(
    path: Path | str,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    input_format: str | None = None,
) -> pd.DataFrame:
    """Read and validate a fills file (CSV or Parquet) into the canonical fill columns."""
    raw = read_table(path, input_format)
    return canonical_fills(raw, source=str(path), timezone=timezone, dedupe=dedupe)


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


def read_statement(path: Path | str, *, input_format: str | None = None) -> pd.DataFrame:
    """Read and validate a statement to tie out against (the columns of docs/formats.md)."""
    raw = read_table(path, input_format)
    return canon.canonical_statement(raw, source=str(path))


def read_rates(
    path: Path | str, *, timezone: str | None = None, input_format: str | None = None
) -> pd.DataFrame:
    """Read FX rates (time, base, quote or pair, rate, optional source) for ``--base``."""
    raw = read_table(path, input_format)
    return canon.canonical_rates(raw, source=str(path), timezone=timezone)
