"""Read a file of rows into a frame of raw values, choosing the reader by format.

The format comes from the extension, or is forced (``--input-format`` or a profile's
``source.format``). Delimited text, Excel sheets and JSON lines arrive as text; Parquet decimal and
timestamp columns arrive typed. Each reader adds ``source_row`` so later errors can name the row.
FIX logs are not rows of columns: :mod:`reconcile.io.readers.fix` reads them.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from reconcile.errors import InputError, SourceEmptyError, SourceNotFoundError
from reconcile.io.readers.arrow_frame import contiguous_frame
from reconcile.io.readers.delimited import Dialect, read_delimited
from reconcile.io.readers.typed_csv import UNTYPED, TypedColumns

FORMATS = ("csv", "tsv", "parquet", "excel", "jsonl", "fix")
_SUFFIXES = {
    ".csv": "csv",
    ".txt": "csv",
    ".tsv": "tsv",
    ".tab": "tsv",
    ".parquet": "parquet",
    ".pq": "parquet",
    ".xlsx": "excel",
    ".xlsm": "excel",
    ".xlsb": "excel",
    ".xls": "excel",
    ".ods": "excel",
    ".jsonl": "jsonl",
    ".ndjson": "jsonl",
    ".fix": "fix",
    ".log": "fix",
}


def detect_format(path: Path, forced: str | None = None) -> str:
    if forced is not None:
        if forced not in FORMATS:
            raise InputError(
                f"{path}: input format: expected one of {', '.join(FORMATS)}, found {forced!r}"
            )
        return forced
    fmt = _SUFFIXES.get(path.suffix.lower())
    if fmt is None:
        raise InputError(
            f"{path}: cannot tell the format from the extension {path.suffix!r}; "
            f"expected one of {', '.join(sorted(_SUFFIXES))} or --input-format"
        )
    return fmt


def read_table(
    path: Path | str,
    forced_format: str | None = None,
    *,
    dialect: Dialect | None = None,
    sheet: str | int | None = None,
    places: dict[str, int] | None = None,
    decimal_mark: str = ".",
    header_row: int | None = None,
    typed: TypedColumns = UNTYPED,
) -> pd.DataFrame:
    """The file's rows as a DataFrame of raw values (text but for typed Parquet columns).

    ``dialect`` says how delimited text is written; ``sheet``, ``places`` (decimal places of the
    numeric columns) and ``decimal_mark`` are for Excel, whose numeric cells are doubles. Columns
    named in ``typed`` may come back from a plain CSV as exact Arrow decimals and UTC times (a
    shortcut for large, clean files; see :mod:`reconcile.io.readers.typed_csv`).
    """
    path = Path(path)
    check_exists(path)
    fmt = detect_format(path, forced_format)
    if fmt == "parquet":
        return _read_parquet(path)
    if fmt == "excel":
        from reconcile.io.readers.excel import read_excel

        return read_excel(
            path,
            sheet=sheet,
            places=places or {},
            decimal_mark=decimal_mark,
            header_row=header_row,
        )
    if fmt == "jsonl":
        from reconcile.io.readers.jsonl import read_jsonl

        return read_jsonl(path)
    if fmt == "fix":
        raise InputError(f"{path}: a FIX log holds messages, not rows; read it as fills")
    dialect = dialect or Dialect()
    if fmt == "tsv" and dialect.delimiter == ",":
        dialect = Dialect("\t", dialect.encoding, dialect.header_row)
    return read_delimited(path, dialect, typed)


def check_exists(path: Path) -> None:
    if not path.exists():
        raise SourceNotFoundError(f"{path}: no such file")
    if not path.is_file():
        raise SourceNotFoundError(f"{path}: expected a file, found a directory or device")
    if path.stat().st_size == 0:
        raise SourceEmptyError(
            f"{path}: the file is empty; expected a header row naming the columns"
        )


def _read_parquet(path: Path) -> pd.DataFrame:
    try:
        table = pq.read_table(path)
    except (pa.ArrowInvalid, OSError) as exc:
        raise InputError(f"{path}: cannot be read as Parquet: {exc}") from exc
    return contiguous_frame(table)
