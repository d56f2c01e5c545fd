"""Read CSV and Parquet files into frames of raw values, with file-level errors that name the row.

Every CSV cell is read as text, so no value passes through a binary float on the way in; the core's
canonicaliser then parses decimals exactly. pyarrow does the reading; when it rejects a file, the
standard ``csv`` module re-reads it only to find and name the offending row.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

from reconcile.errors import (
    InputError,
    Problem,
    SourceEmptyError,
    SourceNotFoundError,
    ValidationError,
)
from reconcile.io.readers.typed_csv import read_decimal_csv
from reconcile.schema import SOURCE_ROW

#: Files up to this size are re-read to number rows by line when records span lines.
LINE_SCAN_LIMIT = 64 * 1024 * 1024

FORMATS = ("csv", "parquet")
_SUFFIXES = {".csv": "csv", ".txt": "csv", ".parquet": "parquet", ".pq": "parquet"}


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
    path: Path | str, forced_format: str | None = None, decimals: Sequence[str] = ()
) -> pd.DataFrame:
    """The file's rows as a DataFrame of raw values (CSV: all text), header row 1.

    CSV columns named in ``decimals`` may come back as exact Arrow decimals when every cell of
    them parses cleanly (a shortcut for large files); otherwise they are text like the rest.
    """
    path = Path(path)
    _check_exists(path)
    fmt = detect_format(path, forced_format)
    if fmt == "parquet":
        return _read_parquet(path)
    return _read_csv(path, decimals)


def _check_exists(path: Path) -> None:
    if not path.exists():
        raise SourceNotFoundError(f"{path}: no such file")
    if not path.is_file():
        raise SourceNotFoundError(f"{path}: expected a file, found a directory or device")
    if path.stat().st_size == 0:
        raise SourceEmptyError(
            f"{path}: the file is empty; expected a header row naming the columns"
        )


def _read_csv(path: Path, decimals: Sequence[str] = ()) -> pd.DataFrame:
    header = _csv_header(path)
    typed = read_decimal_csv(path, header, decimals) if decimals else None
    if typed is not None:
        typed[SOURCE_ROW] = _record_lines(path, len(typed))
        return typed
    types = {name: pa.string() for name in header}
    try:
        table = pa_csv.read_csv(
            path,
            read_options=pa_csv.ReadOptions(encoding="utf8"),
            parse_options=pa_csv.ParseOptions(newlines_in_values=True),
            convert_options=pa_csv.ConvertOptions(
                column_types=types, strings_can_be_null=False, quoted_strings_can_be_null=False
            ),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError) as exc:
        raise _diagnose_csv(path, header, exc) from exc
    frame: pd.DataFrame = table.to_pandas()
    frame[SOURCE_ROW] = _record_lines(path, table.num_rows)
    return frame


def _record_lines(path: Path, records: int) -> np.ndarray:
    """The line each record starts on (header = 1), so errors point at what an editor shows.

    Records and lines differ only when the file has blank lines or line breaks inside quoted
    fields; only then, and only for files up to :data:`LINE_SCAN_LIMIT` bytes, is the file
    re-read to map one to the other. Larger such files number records instead.
    """
    plain = np.arange(2, records + 2, dtype=np.int64)
    if path.stat().st_size > LINE_SCAN_LIMIT:
        return plain
    raw = path.read_bytes()
    if b"\n\n" not in raw and b"\n\r\n" not in raw and b'"' not in raw:
        return plain
    reader = csv.reader(io.StringIO(raw.decode("utf-8-sig"), newline=""))
    starts, line = [], 1
    for record in reader:
        if record:
            starts.append(line)
        line = reader.line_num + 1
    lines = np.asarray(starts[1:], dtype=np.int64)
    return lines if len(lines) == records else plain


def _csv_header(path: Path) -> list[str]:
    with path.open("r", encoding="utf-8-sig", newline="", errors="replace") as handle:
        first = next(csv.reader(handle), [])
    names = [name.strip() for name in first]
    if not any(names):
        raise SourceEmptyError(f"{path}: row 1 is blank; expected a header row naming the columns")
    problems = [
        Problem(str(path), "a name for every column", "", 1, f"#{i + 1}", "blank header")
        for i, name in enumerate(names)
        if not name
    ]
    seen: dict[str, int] = {}
    for i, name in enumerate(names):
        if name and name in seen:
            problems.append(
                Problem(
                    str(path),
                    f"each column named once (also column #{seen[name]})",
                    name,
                    1,
                    f"#{i + 1}",
                    "repeated header",
                )
            )
        seen.setdefault(name, i + 1)
    if problems:
        raise ValidationError(str(path), problems)
    return first


def _diagnose_csv(path: Path, header: list[str], exc: Exception) -> InputError:
    """Find the row pyarrow rejected, by re-reading with the strict standard reader."""
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as bad:
        line = raw[: bad.start].count(b"\n") + 1
        return ValidationError(
            str(path),
            [
                Problem(
                    str(path),
                    "UTF-8 text (declare another encoding with a profile)",
                    repr(raw[bad.start : bad.start + 4]),
                    line,
                    None,
                    "bad encoding",
                )
            ],
        )
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        for record in reader:
            if reader.line_num > 1 and len(record) != len(header) and any(record):
                return ValidationError(
                    str(path),
                    [
                        Problem(
                            str(path),
                            f"{len(header)} fields as in the header",
                            f"{len(record)} fields",
                            reader.line_num,
                            None,
                            "wrong field count",
                        )
                    ],
                )
    except csv.Error as bad:
        return ValidationError(
            str(path),
            [
                Problem(
                    str(path),
                    "well-formed CSV quoting",
                    str(bad),
                    reader.line_num + 1,
                    None,
                    "bad quoting",
                )
            ],
        )
    return InputError(f"{path}: cannot be read as CSV: {exc}")


def _read_parquet(path: Path) -> pd.DataFrame:
    try:
        table = pq.read_table(path)
    except (pa.ArrowInvalid, OSError) as exc:
        raise InputError(f"{path}: cannot be read as Parquet: {exc}") from exc
    frame: pd.DataFrame = table.to_pandas(
        types_mapper=lambda t: pd.ArrowDtype(t) if pa.types.is_decimal(t) else None
    )
    return frame
