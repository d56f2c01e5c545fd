"""Readers: files in, canonical frames out (every value validated, every problem reported).

Any supported format (CSV/TSV, Parquet, Excel, JSON lines, FIX logs), optionally mapped through a
column profile, goes through :func:`~reconcile.io.readers.sources.read_source`.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from reconcile.core import canon
from reconcile.core.canon import canonical_marks, canonical_opening
from reconcile.io.readers.profiles import Profile, load_profile
from reconcile.io.readers.sources import ProfileLike, Source, read_source
from reconcile.io.readers.tabular import read_table

__all__ = [
    "Profile",
    "Source",
    "check",
    "load_profile",
    "read_fills",
    "read_financing",
    "read_marks",
    "read_opening",
    "read_rates",
    "read_source",
    "read_statement",
    "read_table",
]


def read_fills(
    path: Path | str,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    input_format: str | None = None,
    profile: ProfileLike = None,
    fix_lenient: bool = False,
) -> pd.DataFrame:
    """Read and validate a fills file (any supported format) into the canonical fill columns."""
    return read_source(
        path,
        "fills",
        profile=profile,
        input_format=input_format,
        timezone=timezone,
        dedupe=dedupe,
        fix_lenient=fix_lenient,
    ).frame


def read_financing(
    path: Path | str,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    input_format: str | None = None,
    profile: ProfileLike = None,
) -> pd.DataFrame:
    """Read and validate a financing-events file into the canonical financing columns."""
    return read_source(
        path,
        "financing",
        profile=profile,
        input_format=input_format,
        timezone=timezone,
        dedupe=dedupe,
    ).frame


def read_opening(
    path: Path | str, *, timezone: str | None = None, input_format: str | None = None
) -> pd.DataFrame:
    """Read open lots carried in from an earlier period (the ``open_lots`` table of ``match``)."""
    raw = read_table(path, input_format)
    return canonical_opening(raw, source=str(path), timezone=timezone)


def check(
    path: Path | str,
    *,
    kind: str = "fills",
    profile: ProfileLike = None,
    input_format: str | None = None,
    timezone: str | None = None,
    dedupe: bool = False,
    fix_lenient: bool = False,
) -> Source:
    """Validate a file without matching: accepted rows, rejected rows with reasons, counts."""
    return read_source(
        path,
        kind,
        profile=profile,
        input_format=input_format,
        timezone=timezone,
        dedupe=dedupe,
        keep_rejects=True,
        fix_lenient=fix_lenient,
    )


def read_marks(
    path: Path | str, *, timezone: str | None = None, input_format: str | None = None
) -> pd.DataFrame:
    """Read marks (time, instrument, price, optional account) that price positions for financing."""
    raw = read_table(path, input_format)
    return canonical_marks(raw, source=str(path), timezone=timezone)


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
