"""Tables out as one Excel workbook: a sheet per table, numbers as numbers, text inert.

Excel stores every number as a binary double. Amounts are written as numbers (so a spreadsheet
can sum them) only when the double shows every digit: up to 15 significant digits. A value with
more is written as exact text instead. The exact figures are always in the CSV, JSON and Parquet
tables; the workbook is for reading.

Text that Excel would run as a formula (starting with = + - @ tab or CR) is written as a string
with Excel's quote prefix, so it shows as typed and never runs. The file's creation date is fixed,
so the same tables always give the same bytes.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import xlsxwriter
from xlsxwriter.format import Format
from xlsxwriter.worksheet import Worksheet

from reconcile import schema
from reconcile.io.render.numbers import cell_text
from reconcile.io.writers.tables import FORMULA_TRIGGERS
from reconcile.money import minor_unit

#: Significant digits a double always shows exactly.
EXACT_DOUBLE_DIGITS = 15
FIXED_CREATION_DATE = datetime(2026, 1, 1)
MAX_COLUMN_WIDTH = 60
SHEET_NAME_LIMIT = 31


def write_workbook(
    path: Path, sheets: Mapping[str, pd.DataFrame], *, title: str, about: Sequence[str] = ()
) -> None:
    """Write ``sheets`` (name -> table) to ``path``, after an "About" sheet with ``about`` lines."""
    book = xlsxwriter.Workbook(
        str(path),
        {
            "strings_to_formulas": False,
            "strings_to_numbers": False,
            "strings_to_urls": False,
            "remove_timezone": False,
        },
    )
    book.set_properties({"title": title, "created": FIXED_CREATION_DATE})
    styles = _Styles(book)
    _about_sheet(book, styles, title, about)
    for name, frame in sheets.items():
        _table_sheet(book.add_worksheet(_sheet_name(name)), frame, styles)
    book.close()


class _Styles:
    def __init__(self, book: xlsxwriter.Workbook) -> None:
        self.book = book
        self.header = book.add_format({"bold": True, "bottom": 1, "bg_color": "#EEF1F4"})
        self.title = book.add_format({"bold": True, "font_size": 14})
        self.text = book.add_format({})
        self.inert = book.add_format({"quote_prefix": True})
        self.time = book.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
        self.integer = book.add_format({"num_format": "0"})
        self._numbers: dict[int, Format] = {}

    def number(self, places: int) -> Format:
        if places not in self._numbers:
            pattern = "#,##0" + ("." + "0" * places if places else "")
            self._numbers[places] = self.book.add_format({"num_format": pattern})
        return self._numbers[places]


def _about_sheet(
    book: xlsxwriter.Workbook, styles: _Styles, title: str, lines: Sequence[str]
) -> None:
    sheet = book.add_worksheet("About")
    sheet.write_string(0, 0, title, styles.title)
    for row, line in enumerate(lines, start=2):
        sheet.write_string(
            row, 0, line, styles.inert if line.startswith(FORMULA_TRIGGERS) else styles.text
        )
    sheet.set_column(0, 0, 100)


def _table_sheet(sheet: Worksheet, frame: pd.DataFrame, styles: _Styles) -> None:
    currencies = frame["currency"].tolist() if "currency" in frame.columns else None
    widths = []
    for col, name in enumerate(frame.columns):
        sheet.write_string(0, col, str(name), styles.header)
        values = frame[name].astype(object).where(frame[name].notna(), None).tolist()
        money = name in schema.MONEY_COLUMNS and currencies is not None
        width = len(str(name))
        for row, value in enumerate(values, start=1):
            currency = currencies[row - 1] if money and currencies is not None else None
            fixed = schema.FIXED_PLACES.get(str(name))
            width = max(width, _write_cell(sheet, row, col, value, currency, styles, fixed))
        widths.append(min(width + 2, MAX_COLUMN_WIDTH))
    for col, width in enumerate(widths):
        sheet.set_column(col, col, width)
    sheet.freeze_panes(1, 0)
    if len(frame.columns):
        sheet.autofilter(0, 0, max(len(frame), 1), len(frame.columns) - 1)


def _write_cell(
    sheet: Worksheet,
    row: int,
    col: int,
    value: Any,
    currency: str | None,
    styles: _Styles,
    fixed: int | None = None,
) -> int:
    """Write one cell; return the width of what a person sees."""
    shown = cell_text(value, currency)
    if value is None:
        return 0
    if isinstance(value, Decimal):
        if len(value.as_tuple().digits) <= EXACT_DOUBLE_DIGITS:
            places = fixed if fixed is not None else _places(value, currency)
            sheet.write_number(row, col, float(value), styles.number(places))
        else:
            sheet.write_string(row, col, shown, styles.text)
    elif isinstance(value, bool | int):
        sheet.write_number(row, col, int(value), styles.integer)
    elif isinstance(value, pd.Timestamp):
        sheet.write_datetime(
            row, col, value.tz_convert("UTC").tz_localize(None).to_pydatetime(), styles.time
        )
        shown = "yyyy-mm-dd hh:mm:ss"
    else:
        text = str(value) if not isinstance(value, pd.Timedelta) else shown
        inert = text.startswith(FORMULA_TRIGGERS)
        sheet.write_string(row, col, text, styles.inert if inert else styles.text)
    return len(shown)


def _places(value: Decimal, currency: str | None) -> int:
    digits = len(shown.split(".")[1]) if "." in (shown := cell_text(value, currency)) else 0
    return max(digits, minor_unit(currency) or 0) if currency else digits


def _sheet_name(name: str) -> str:
    cleaned = "".join(" " if c in "[]:*?/\\" else c for c in name.replace("_", " "))
    return cleaned[:SHEET_NAME_LIMIT]
