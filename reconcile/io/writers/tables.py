"""Tables out as CSV, Parquet or JSON, with amounts as exact decimal text in minor units."""

from __future__ import annotations

import json
from collections.abc import Mapping
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

from reconcile import schema
from reconcile.errors import OutputError
from reconcile.io.writers.atomic import file_set
from reconcile.money import minor_unit

TABLE_FORMATS = ("csv", "parquet", "json")


def write_tables(
    tables: Mapping[str, pd.DataFrame],
    directory: Path | str,
    fmt: str = "csv",
    extra: Mapping[str, Any] | None = None,
) -> list[Path]:
    """Write each table to ``directory/<name>.<fmt>``, and ``extra`` JSON documents, atomically."""
    if fmt not in TABLE_FORMATS:
        raise OutputError(f"format: expected one of {', '.join(TABLE_FORMATS)}, found {fmt!r}")
    written = []
    with file_set(directory) as files:
        for name, frame in tables.items():
            written.append(files.add(f"{name}.{fmt}", _WRITERS[fmt](frame)))
        for name, document in (extra or {}).items():
            written.append(files.add(name, _json_document(document)))
    return written


#: A spreadsheet treats a cell starting with one of these as a formula.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")


def text_table(frame: pd.DataFrame, *, spreadsheet_safe: bool = False) -> pd.DataFrame:
    """The table as exact text: amounts in the row's currency's minor unit, times in ISO 8601.

    With ``spreadsheet_safe``, text that a spreadsheet would run as a formula gets a leading
    apostrophe (``=HYPERLINK(..)`` -> ``'=HYPERLINK(..)``); the readers remove exactly that
    apostrophe again, so a file written here reads back unchanged.
    """
    out = pd.DataFrame(index=frame.index)
    currencies = frame["currency"] if "currency" in frame.columns else None
    for name in frame.columns:
        column = _text_column(frame[name], name, currencies)
        if spreadsheet_safe and _is_text(frame[name]):
            column = column.map(neutralise, na_action="ignore")
        out[name] = column
    return out


def neutralise(text: str) -> str:
    """Make text inert in a spreadsheet: prefix an apostrophe to a would-be formula."""
    return "'" + text if text.startswith(FORMULA_TRIGGERS) else text


def _is_text(series: pd.Series) -> bool:
    return pd.api.types.is_string_dtype(series.dtype) and not isinstance(
        series.dtype, pd.ArrowDtype
    )


def _text_column(series: pd.Series, name: str, currencies: pd.Series | None) -> pd.Series:
    dtype = series.dtype
    if isinstance(dtype, pd.ArrowDtype) and pa.types.is_decimal(dtype.pyarrow_dtype):
        money = name in schema.MONEY_COLUMNS and currencies is not None
        codes = _values(currencies) if money and currencies is not None else [None] * len(series)
        return pd.Series(
            [decimal_text(v, c) for v, c in zip(_values(series), codes, strict=True)],
            index=series.index,
            dtype="str",
        )
    if isinstance(dtype, pd.DatetimeTZDtype):
        return pd.Series(
            [None if pd.isna(v) else v.isoformat() for v in series], index=series.index, dtype="str"
        )
    if pd.api.types.is_timedelta64_dtype(dtype):
        return pd.Series(
            [None if pd.isna(v) else v.isoformat() for v in series], index=series.index, dtype="str"
        )
    return series.astype("str") if not pd.api.types.is_integer_dtype(dtype) else series


def _values(series: pd.Series) -> list[Any]:
    """Python values of a column, with None (not pd.NA) for missing ones."""
    return list(pa.array(series.array).to_pylist())


def decimal_text(value: Decimal | None, currency: str | None = None) -> str | None:
    """Exact text of a decimal: trailing zeros dropped, but at least the currency's minor unit."""
    if value is None:
        return None
    text = format(abs(value) if value == 0 else value, "f")
    whole, _, fraction = text.partition(".")
    fraction = fraction.rstrip("0")
    places = (minor_unit(currency) or 0) if currency else 0
    fraction = fraction.ljust(places, "0")
    return f"{whole}.{fraction}" if fraction else whole


def _csv(frame: pd.DataFrame) -> Any:
    def write(path: Path) -> None:
        table = pa.Table.from_pandas(text_table(frame, spreadsheet_safe=True), preserve_index=False)
        pa_csv.write_csv(table, path, pa_csv.WriteOptions(quoting_style="needed"))

    return write


def _parquet(frame: pd.DataFrame) -> Any:
    def write(path: Path) -> None:
        pq.write_table(pa.Table.from_pandas(frame, preserve_index=False), path)

    return write


def _json(frame: pd.DataFrame) -> Any:
    def write(path: Path) -> None:
        records = text_table(frame).to_dict(orient="records")
        path.write_text(json.dumps(records, indent=1, default=str) + "\n", encoding="utf-8")

    return write


def _json_document(document: Any) -> Any:
    def write(path: Path) -> None:
        path.write_text(json.dumps(document, indent=2, default=str) + "\n", encoding="utf-8")

    return write


_WRITERS = {"csv": _csv, "parquet": _parquet, "json": _json}


def table_writer(frame: pd.DataFrame, fmt: str) -> Any:
    """A writer of one table in ``fmt``, for :meth:`atomic.FileSet.add` with other files."""
    return _WRITERS[fmt](frame)


def document_writer(document: Any) -> Any:
    """A writer of one JSON document, for :meth:`atomic.FileSet.add` with other files."""
    return _json_document(document)
