"""Delimited text (CSV, TSV, any one-character delimiter) in a declared encoding, as raw text.

Every cell is read as text, so no value passes through a binary float on the way in; the core's
canonicaliser then parses decimals exactly. pyarrow does the reading; when it rejects a file, the
standard ``csv`` module re-reads it only to find and name the offending row. The encoding is
declared (UTF-8 by default, a byte-order mark ignored), never guessed.
"""

from __future__ import annotations

import codecs
import csv
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv

from reconcile.errors import InputError, Problem, SourceEmptyError, ValidationError
from reconcile.io.readers.arrow_frame import contiguous_frame
from reconcile.io.readers.typed_csv import UNTYPED, TypedColumns, read_typed_csv
from reconcile.schema import SOURCE_ROW

#: Files up to this size are re-read to number rows by line when records span lines.
LINE_SCAN_LIMIT = 64 * 1024 * 1024


@dataclass(frozen=True)
class Dialect:
    """How a delimited file is written: its delimiter, encoding and the line of its header."""

    delimiter: str = ","
    encoding: str = "utf-8"
    header_row: int = 1

    @property
    def python_encoding(self) -> str:
        name = codecs.lookup(self.encoding).name
        return "utf-8-sig" if name in ("utf-8", "utf-8-sig") else name

    @property
    def arrow_encoding(self) -> str:
        name = codecs.lookup(self.encoding).name
        return "utf8" if name in ("utf-8", "utf-8-sig") else name


def read_delimited(
    path: Path, dialect: Dialect = Dialect(), typed: TypedColumns = UNTYPED
) -> pd.DataFrame:
    """The file's rows as text columns plus ``source_row`` (the line each record starts on).

    In a plain UTF-8, comma-separated file, columns named in ``typed`` may come back as exact
    Arrow decimals and UTC times parsed by pyarrow itself (see
    :mod:`reconcile.io.readers.typed_csv`).
    """
    header = _csv_header(path, _head(path, dialect), dialect)
    if (typed.decimals or typed.times) and dialect == Dialect():
        frame = read_typed_csv(path, header, typed)
        if frame is not None:
            frame[SOURCE_ROW] = _record_lines(path, len(frame), dialect)
            return frame
    types = {name: pa.string() for name in header}
    try:
        table = pa_csv.read_csv(
            path,
            read_options=pa_csv.ReadOptions(
                encoding=dialect.arrow_encoding, skip_rows=dialect.header_row - 1
            ),
            parse_options=pa_csv.ParseOptions(delimiter=dialect.delimiter, newlines_in_values=True),
            convert_options=pa_csv.ConvertOptions(
                column_types=types, strings_can_be_null=False, quoted_strings_can_be_null=False
            ),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError) as exc:
        raise _diagnose_csv(path, header, dialect, exc) from exc
    frame = contiguous_frame(table)
    frame[SOURCE_ROW] = _record_lines(path, table.num_rows, dialect)
    return frame


def _head(path: Path, dialect: Dialect) -> str:
    """The lines up to the header's, enough to read it (the rest is read by pyarrow)."""
    lines = []
    with path.open("r", encoding=dialect.python_encoding, newline="", errors="replace") as handle:
        for _ in range(dialect.header_row):
            lines.append(handle.readline())
        lines.append(handle.readline())  # a quoted header may run on
    return "".join(lines)


def _decode(path: Path, raw: bytes, dialect: Dialect) -> str:
    try:
        return raw.decode(dialect.python_encoding)
    except UnicodeDecodeError as bad:
        line = raw[: bad.start].count(b"\n") + 1
        raise ValidationError(
            str(path),
            [
                Problem(
                    str(path),
                    f"{_encoding_name(dialect)} text (declare another encoding with a profile)",
                    repr(raw[bad.start : bad.start + 4]),
                    line,
                    None,
                    "bad encoding",
                )
            ],
        ) from None


def _encoding_name(dialect: Dialect) -> str:
    return "UTF-8" if dialect.arrow_encoding == "utf8" else dialect.python_encoding


def _lines_after_header(text: str, dialect: Dialect) -> str:
    if dialect.header_row == 1:
        return text
    return "".join(text.splitlines(keepends=True)[dialect.header_row - 1 :])


def _record_lines(path: Path, records: int, dialect: Dialect) -> np.ndarray:
    """The line each record starts on (header = its own line), as an editor shows them.

    Records and lines differ only when the file has blank lines or line breaks inside quoted
    fields; only then, and only for files up to :data:`LINE_SCAN_LIMIT` bytes, is the file
    re-read to map one to the other. Larger such files number records instead.
    """
    first = dialect.header_row + 1
    plain = np.arange(first, records + first, dtype=np.int64)
    if path.stat().st_size > LINE_SCAN_LIMIT:
        return plain
    raw = path.read_bytes()
    if b"\n\n" not in raw and b"\n\r\n" not in raw and b'"' not in raw:
        return plain
    body = _lines_after_header(raw.decode(dialect.python_encoding, errors="replace"), dialect)
    reader = csv.reader(io.StringIO(body, newline=""), delimiter=dialect.delimiter)
    starts, line = [], dialect.header_row
    for record in reader:
        if record:
            starts.append(line)
        line = dialect.header_row + reader.line_num
    lines = np.asarray(starts[1:], dtype=np.int64)
    return lines if len(lines) == records else plain


def _csv_header(path: Path, text: str, dialect: Dialect) -> list[str]:
    body = _lines_after_header(text, dialect)
    first = next(csv.reader(io.StringIO(body, newline=""), delimiter=dialect.delimiter), [])
    names = [name.strip() for name in first]
    row = dialect.header_row
    if not any(names):
        raise SourceEmptyError(
            f"{path}: row {row} is blank; expected a header row naming the columns"
        )
    check_header_names(path, names, row)
    return first


def check_header_names(path: Path, names: list[str], row: int) -> None:
    """Every column named, and named once; raise with every problem (the header is ``row``)."""
    problems = [
        Problem(str(path), "a name for every column", "", row, f"#{i + 1}", "blank header")
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
                    row,
                    f"#{i + 1}",
                    "repeated header",
                )
            )
        seen.setdefault(name, i + 1)
    if problems:
        raise ValidationError(str(path), problems)


def _diagnose_csv(path: Path, header: list[str], dialect: Dialect, exc: Exception) -> InputError:
    """Find the row pyarrow rejected, by re-reading with the strict standard reader."""
    try:
        text = _decode(path, path.read_bytes(), dialect)
    except ValidationError as bad_encoding:
        return bad_encoding
    body = _lines_after_header(text, dialect)
    reader = csv.reader(io.StringIO(body, newline=""), delimiter=dialect.delimiter, strict=True)
    offset = dialect.header_row - 1
    ragged: list[Problem] = []
    try:
        for record in reader:
            if reader.line_num > 1 and len(record) != len(header) and any(record):
                ragged.append(
                    Problem(
                        str(path),
                        f"{len(header)} fields as in the header, not {len(record)}",
                        dialect.delimiter.join(record),
                        reader.line_num + offset,
                        None,
                        "wrong field count",
                    )
                )
    except csv.Error as bad:
        return ValidationError(
            str(path),
            [
                *ragged,
                Problem(
                    str(path),
                    "well-formed CSV quoting",
                    str(bad),
                    reader.line_num + 1 + offset,
                    None,
                    "bad quoting",
                ),
            ],
        )
    if ragged:
        return ValidationError(str(path), ragged)
    return InputError(f"{path}: cannot be read as delimited text: {exc}")
