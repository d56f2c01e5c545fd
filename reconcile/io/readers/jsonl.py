"""JSON lines: one object per line, every value kept as the text it was written with.

Numbers in JSON are read as their own digits (``1.10`` stays ``1.10``), never as binary floats.
pyarrow's JSON reader will not put a JSON number into a text column, so the standard ``json``
module reads each line, with its number hooks returning the literal text; that also names the
line of any malformed record exactly. Rows are numbered by line (the first line is row 1).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pandas as pd

from reconcile import schema
from reconcile.errors import Problem, SourceEmptyError, ValidationError
from reconcile.io.readers.excel import PROBLEMS

#: Key under which the reader leaves the text of lines it could not read in ``frame.attrs``.
RAW_LINES = "raw_lines"


def read_jsonl(path: Path, encoding: str = "utf-8") -> pd.DataFrame:
    records: list[dict[str, str]] = []
    unreadable: dict[int, str] = {}
    rows: list[int] = []
    problems: list[Problem] = []
    try:
        text = path.read_bytes().decode(
            "utf-8-sig" if encoding.lower() in ("utf-8", "utf8") else encoding
        )
    except UnicodeDecodeError as bad:
        raise ValidationError(
            str(path),
            [
                Problem(
                    str(path),
                    f"{encoding} text",
                    repr(bad.object[bad.start : bad.start + 4]),
                    None,
                    None,
                    "bad encoding",
                )
            ],
        ) from None
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            continue
        record = _record(line, number, str(path), problems)
        if record is not None:
            records.append(record)
            rows.append(number)
        else:
            unreadable[number] = line
    if not records and not problems:
        raise SourceEmptyError(f"{path}: no records; expected one JSON object per line")
    names = list(dict.fromkeys(name for record in records for name in record))
    frame = pd.DataFrame(
        {name: pd.Series([r.get(name, "") for r in records], dtype="str") for name in names}
    )
    frame[schema.SOURCE_ROW] = pd.Series(rows, dtype="int64")
    frame.attrs[PROBLEMS] = problems
    frame.attrs[RAW_LINES] = unreadable
    return frame


def _record(line: str, number: int, source: str, problems: list[Problem]) -> dict[str, str] | None:
    try:
        value = json.loads(line, parse_float=str, parse_int=str, parse_constant=_no_constant)
    except (json.JSONDecodeError, ValueError) as exc:
        problems.append(
            Problem(source, "one JSON object on the line", _reason(exc), number, None, "bad JSON")
        )
        return None
    if not isinstance(value, dict):
        problems.append(
            Problem(source, "a JSON object", type(value).__name__, number, None, "bad JSON")
        )
        return None
    record: dict[str, str] = {}
    for key, item in value.items():
        text = _text(item)
        if text is None:
            problems.append(
                Problem(
                    source,
                    "a string, number, true, false or null",
                    json.dumps(item)[:60],
                    number,
                    key,
                    "nested value",
                )
            )
            return None
        record[key] = text
    return record


def _text(item: Any) -> str | None:
    if item is None:
        return ""
    if isinstance(item, bool):
        return "true" if item else "false"
    if isinstance(item, str):
        return item
    return None


def _no_constant(name: str) -> Any:
    raise ValueError(f"{name} is not a number JSON allows")


def _reason(exc: Exception) -> str:
    return exc.msg if isinstance(exc, json.JSONDecodeError) else str(exc)
