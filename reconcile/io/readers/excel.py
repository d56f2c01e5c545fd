"""Excel and OpenDocument sheets (.xlsx, .xlsm, .xlsb, .xls, .ods) as raw text, via python-calamine.

Text cells are taken as written. A numeric cell is a binary double, so it is turned into a decimal
once, here: quantized to the decimal places a profile declares for its column
(``numbers.places``), and reported when the double is not within a few units in its last place of
that decimal (it then holds more digits than declared, e.g. 101.255 declared with 2 places).
Without a declared scale a double becomes the shortest decimal that reads back as the same double
(what Excel shows at full precision), which must have at most :data:`DEFAULT_MAX_PLACES` places.
Date cells become ISO 8601 text without an offset: a profile's ``time.timezone`` or
``--timezone`` places them.
"""

from __future__ import annotations

import datetime as dt
import math
from decimal import ROUND_HALF_EVEN, Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import python_calamine

from reconcile import schema
from reconcile.errors import InputError, Problem, SourceEmptyError
from reconcile.io.readers.delimited import check_header_names
from reconcile.money import places_of

#: Places a numeric cell may carry when its column's places are not declared.
DEFAULT_MAX_PLACES = 8
#: A double this many units in its last place from the declared decimal still counts as it.
ULP_TOLERANCE = 4
#: Significant digits a double holds reliably.
DOUBLE_DIGITS = 15
#: Key under which a reader leaves row problems in ``frame.attrs``.
PROBLEMS = "read_problems"


def read_excel(
    path: Path,
    *,
    sheet: str | int | None = None,
    places: dict[str, int],
    decimal_mark: str = ".",
    header_row: int | None = None,
) -> pd.DataFrame:
    """One sheet's rows as text columns plus ``source_row`` (the sheet's row number)."""
    cells = _sheet_cells(path, sheet)
    header_at = _header_index(path, cells, header_row)
    header = [_header_text(v) for v in cells[header_at]]
    _check_header(path, header, header_at + 1)
    convert = _Converter(str(path), places, decimal_mark)
    columns: dict[str, list[str]] = {name: [] for name in header if name}
    rows: list[int] = []
    for index in range(header_at + 1, len(cells)):
        values = cells[index]
        if all(v == "" or v is None for v in values):
            continue
        rows.append(index + 1)
        for position, name in enumerate(header):
            if name:
                value = values[position] if position < len(values) else ""
                columns[name].append(convert(value, name, index + 1))
    frame = pd.DataFrame({name: pd.Series(v, dtype="str") for name, v in columns.items()})
    frame[schema.SOURCE_ROW] = pd.Series(rows, dtype="int64")
    frame.attrs[PROBLEMS] = convert.problems
    return frame


def _sheet_cells(path: Path, sheet: str | int | None) -> list[list[Any]]:
    try:
        book = python_calamine.CalamineWorkbook.from_path(str(path))
    except (python_calamine.CalamineError, OSError, ValueError) as exc:
        raise InputError(f"{path}: cannot be read as a spreadsheet: {exc}") from None
    names = list(book.sheet_names)
    if not names:
        raise SourceEmptyError(f"{path}: the workbook has no sheets")
    if sheet is None:
        chosen = names[0]
    elif isinstance(sheet, int):
        if not 1 <= sheet <= len(names):
            raise InputError(
                f"{path}: sheet number {sheet}: expected 1 to {len(names)} "
                f"(sheets: {', '.join(names)})"
            )
        chosen = names[sheet - 1]
    elif sheet in names:
        chosen = sheet
    else:
        raise InputError(
            f"{path}: expected a sheet named {sheet!r}, found sheets: {', '.join(names)}"
        )
    try:
        cells: list[list[Any]] = book.get_sheet_by_name(chosen).to_python(skip_empty_area=False)
    except (python_calamine.CalamineError, ValueError) as exc:
        raise InputError(f"{path}: sheet {chosen!r} cannot be read: {exc}") from None
    if not any(any(v not in ("", None) for v in row) for row in cells):
        raise SourceEmptyError(
            f"{path}: sheet {chosen!r} is empty; expected a header row naming the columns"
        )
    return cells


def _header_index(path: Path, cells: list[list[Any]], header_row: int | None) -> int:
    if header_row is None:
        return next(i for i, row in enumerate(cells) if any(v not in ("", None) for v in row))
    if header_row > len(cells) or not any(v not in ("", None) for v in cells[header_row - 1]):
        raise SourceEmptyError(
            f"{path}: row {header_row} is blank; expected a header row naming the columns "
            "(source.header_row in the profile)"
        )
    return header_row - 1


def _header_text(value: Any) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return "" if value is None else str(value).strip()


def _check_header(path: Path, header: list[str], row: int) -> None:
    while header and not header[-1]:
        header.pop()
    check_header_names(path, header, row)


class _Converter:
    """Cell values to text; doubles of numeric columns quantized to their declared places."""

    def __init__(self, source: str, places: dict[str, int], decimal_mark: str) -> None:
        self.source = source
        self.places = places
        self.decimal_mark = decimal_mark
        self.problems: list[Problem] = []

    def __call__(self, value: Any, column: str, row: int) -> str:
        if value is None or value == "":
            return ""
        if isinstance(value, bool):
            return "TRUE" if value else "FALSE"
        if isinstance(value, int):
            return str(value)
        if isinstance(value, float):
            return self._number(value, column, row)
        if isinstance(value, dt.datetime | dt.date | dt.time):
            return value.isoformat()
        return str(value)

    def _number(self, value: float, column: str, row: int) -> str:
        if not math.isfinite(value):
            return self._bad(column, row, "a finite number", repr(value))
        if column not in self.places:
            if value.is_integer():
                return str(int(value))
            exact = Decimal(repr(value))
            if places_of(exact) > DEFAULT_MAX_PLACES:
                return self._bad(
                    column,
                    row,
                    f"at most {DEFAULT_MAX_PLACES} decimal places (declare the column's places "
                    "in the profile's numbers.places, or store it as text)",
                    repr(value),
                )
            return self._text(exact)
        places = self.places[column]
        binary = Decimal.from_float(value)  # the one deliberate float-to-decimal step
        nearest = binary.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_EVEN)
        close = abs(binary - nearest) <= ULP_TOLERANCE * Decimal.from_float(math.ulp(value))
        if not close or len(nearest.as_tuple().digits) > DOUBLE_DIGITS:
            return self._bad(
                column,
                row,
                f"a number with at most {places} decimal places (profile numbers.places), "
                f"exact in a double",
                repr(value),
            )
        return self._text(nearest)

    def _text(self, value: Decimal) -> str:
        text = format(value, "f")
        return text.replace(".", self.decimal_mark) if self.decimal_mark != "." else text

    def _bad(self, column: str, row: int, expected: str, found: str) -> str:
        """Record the problem; the cell keeps the text shown in it, so the rejects file has it
        (the row is set aside before the values are checked)."""
        self.problems.append(Problem(self.source, expected, found, row, column, "inexact cell"))
        return found
