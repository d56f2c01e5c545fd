"""Tables out as CSV, Parquet or JSON, with amounts as exact decimal text in minor units."""

from __future__ import annotations

import json
import os
from collections.abc import Mapping
from decimal import Decimal
from pathlib import Path
from typing import Any, TypeAlias

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

from reconcile import schema
from reconcile.core import vectorised
from reconcile.core.frames import frame_from_arrow
from reconcile.errors import OutputError
from reconcile.io.writers import arrow_text
from reconcile.io.writers.atomic import FileSet, Writer, file_set
from reconcile.money import minor_unit

TABLE_FORMATS = ("csv", "parquet", "json")

#: A table to write: a DataFrame, or an Arrow table in the same columns and types.
AnyTable: TypeAlias = pd.DataFrame | pa.Table

#: Tables written at once: pyarrow's CSV and Parquet writers release the GIL.
WRITE_THREADS = max(min(os.cpu_count() or 1, 4), 1)


def write_tables(
    tables: Mapping[str, AnyTable],
    directory: Path | str,
    fmt: str = "csv",
    extra: Mapping[str, Any] | None = None,
    files_too: Mapping[str, Writer] | None = None,
) -> list[Path]:
    """Write each table to ``directory/<name>.<fmt>``, and ``extra`` JSON documents, atomically.

    ``files_too`` adds other files (a workbook, a page) by name and writer to the same set, so
    they land together with the tables or not at all.
    """
    if fmt not in TABLE_FORMATS:
        raise OutputError(f"format: expected one of {', '.join(TABLE_FORMATS)}, found {fmt!r}")
    with file_set(directory) as files:
        written = [files.add(name, write) for name, write in (files_too or {}).items()]
        return written + add_tables(files, tables, fmt, extra)


def add_tables(
    files: FileSet,
    tables: Mapping[str, AnyTable],
    fmt: str = "csv",
    extra: Mapping[str, Any] | None = None,
) -> list[Path]:
    """Stage each table as ``<name>.<fmt>`` (and ``extra`` JSON documents) in a file set.

    A table is a DataFrame or an Arrow table (what a fast-path book holds), written without a
    round trip through pandas. The tables are written by :data:`WRITE_THREADS` threads at once.
    """
    if fmt not in TABLE_FORMATS:
        raise OutputError(f"format: expected one of {', '.join(TABLE_FORMATS)}, found {fmt!r}")
    writers = [(f"{name}.{fmt}", _WRITERS[fmt](frame)) for name, frame in tables.items()]
    written = files.add_all(writers, threads=WRITE_THREADS)
    for name, document in (extra or {}).items():
        written.append(files.add(name, _json_document(document)))
    return written


#: A spreadsheet treats a cell starting with one of these as a formula.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")


#: Decimal places to show at least, per row, for columns whose rows mix money and other figures.
RowPlaces = Mapping[str, np.ndarray]


def text_table(
    frame: pd.DataFrame, *, spreadsheet_safe: bool = False, places: RowPlaces | None = None
) -> pd.DataFrame:
    """The table as exact text: amounts in the row's currency's minor unit, times in ISO 8601.

    Money columns are known by name (:data:`reconcile.schema.MONEY_COLUMNS`). A column whose
    rows are money in some rows only (a tie-out's ``difference`` of a P&L line and of a quantity
    line) takes its per-row minimum places from ``places`` instead.

    With ``spreadsheet_safe``, text that a spreadsheet would run as a formula gets a leading
    apostrophe (``=HYPERLINK(..)`` -> ``'=HYPERLINK(..)``); the readers remove exactly that
    apostrophe again, so a file written here reads back unchanged.
    """
    out = pd.DataFrame(index=frame.index)
    currencies = frame["currency"] if "currency" in frame.columns else None
    for name in frame.columns:
        column = _text_column(frame[name], name, currencies, (places or {}).get(str(name)))
        if spreadsheet_safe and _is_text(frame[name]):
            column = column.map(neutralise, na_action="ignore")
        out[name] = column
    return out


def arrow_text_table(table: pa.Table, *, spreadsheet_safe: bool = False) -> pa.Table:
    """:func:`text_table` of an Arrow table, column by column in Arrow: the same text."""
    currencies = table.column("currency") if "currency" in table.column_names else None
    units = None if currencies is None else _arrow_minor_units(currencies)
    columns = []
    for name, values in zip(table.column_names, table.columns, strict=True):
        array = values.combine_chunks()
        kind = array.type
        if pa.types.is_decimal(kind):
            places = units if name in schema.MONEY_COLUMNS else None
            columns.append(arrow_text.decimal_texts(array, places, _one_decimal))
        elif pa.types.is_timestamp(kind) or pa.types.is_duration(kind):
            columns.append(_time_texts(array))
        elif pa.types.is_integer(kind):
            columns.append(array)
        else:
            text = array.cast(pa.string())
            columns.append(neutralise_all(text) if spreadsheet_safe else text)
    return pa.Table.from_arrays(columns, names=table.column_names)


def _time_texts(array: pa.Array) -> pa.Array:
    """ISO 8601 text of a timestamp (UTC) or duration column, as :func:`text_table` writes it."""
    instant = pa.types.is_timestamp(array.type)
    unit = pa.timestamp("ns", array.type.tz) if instant else pa.duration("ns")
    valid = np.asarray(array.is_valid().to_numpy(zero_copy_only=False), bool)
    ints = pc.fill_null(array.cast(unit).cast(pa.int64()), 0)
    nanoseconds = np.asarray(ints.to_numpy(zero_copy_only=False), np.int64)
    if instant:
        return arrow_text.iso_times(nanoseconds, valid)
    return arrow_text.iso_durations(nanoseconds, valid)


def neutralise_all(text: pa.Array) -> pa.Array:
    """:func:`neutralise` over a whole column of text."""
    triggered = pc.fill_null(pc.match_substring_regex(text, "^[=+\\-@\t\r]"), False)
    if not pc.any(triggered).as_py():
        return text
    return pc.if_else(triggered, pc.binary_join_element_wise("'", text, ""), text)


def _arrow_minor_units(currencies: pa.ChunkedArray) -> np.ndarray:
    encoded = pc.dictionary_encode(currencies.combine_chunks())
    units = [minor_unit(str(c)) or 0 for c in encoded.dictionary.to_pylist()]
    codes = np.asarray(pc.fill_null(encoded.indices, len(units)).to_numpy(), np.int64)
    found: np.ndarray = np.array([*units, 0], dtype=np.int64)[codes]
    return found


def neutralise(text: str) -> str:
    """Make text inert in a spreadsheet: prefix an apostrophe to a would-be formula."""
    return "'" + text if text.startswith(FORMULA_TRIGGERS) else text


def _is_text(series: pd.Series) -> bool:
    return pd.api.types.is_string_dtype(series.dtype) and not isinstance(
        series.dtype, pd.ArrowDtype
    )


def _text_column(
    series: pd.Series, name: str, currencies: pd.Series | None, places: np.ndarray | None = None
) -> pd.Series:
    """One column as text, whole-column (see :mod:`reconcile.io.writers.arrow_text`)."""
    dtype = series.dtype
    if isinstance(dtype, pd.ArrowDtype) and pa.types.is_decimal(dtype.pyarrow_dtype):
        money = name in schema.MONEY_COLUMNS and currencies is not None
        if places is None and money and currencies is not None:
            places = _minor_units(currencies)
        values = pa.array(series.array)
        text = arrow_text.decimal_texts(values, places, _one_decimal)
        return pd.Series(vectorised.string_series(text).array, index=series.index)
    if isinstance(dtype, pd.DatetimeTZDtype) or pd.api.types.is_timedelta64_dtype(dtype):
        valid = series.notna().to_numpy()
        if isinstance(dtype, pd.DatetimeTZDtype):
            ints = series.dt.as_unit("ns").dt.tz_convert("UTC").array.asi8.copy()
            ints[~valid] = 0
            text = arrow_text.iso_times(ints, valid)
        else:
            ints = series.astype("timedelta64[ns]").to_numpy().view("int64").copy()
            ints[~valid] = 0
            text = arrow_text.iso_durations(ints, valid)
        return pd.Series(vectorised.string_series(text).array, index=series.index)
    return series.astype("str") if not pd.api.types.is_integer_dtype(dtype) else series


def _minor_units(currencies: pd.Series) -> np.ndarray:
    """The minor unit of each row's currency (0 for a code with none)."""
    codes, uniques = pd.factorize(currencies)
    units = np.array([minor_unit(str(c)) or 0 for c in uniques] + [0], dtype=np.int64)
    found: np.ndarray = units[codes]
    return found


def _one_decimal(value: Decimal | None, places: int) -> str | None:
    if value is None:
        return None
    text = decimal_text(value)
    if text is None or places == 0:
        return text
    whole, _, fraction = text.partition(".")
    return f"{whole}.{fraction.ljust(places, '0')}"


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


def csv_bytes(frame: pd.DataFrame, places: RowPlaces | None = None) -> bytes:
    """The table as spreadsheet-safe CSV, exactly as :func:`write_tables` writes it."""
    text = text_table(frame, spreadsheet_safe=True, places=places)
    table = pa.Table.from_pandas(text, preserve_index=False)
    sink = pa.BufferOutputStream()
    pa_csv.write_csv(table, sink, pa_csv.WriteOptions(quoting_style="needed"))
    data: bytes = sink.getvalue().to_pybytes()
    return data


def json_records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """The table as JSON-ready records of exact text (amounts in minor units, ISO 8601 times).

    A blank is ``null``: a missing text cell would otherwise come out as ``NaN``, which is not JSON.
    """
    text = text_table(frame).astype(object)
    records = text.where(text.notna(), None).to_dict(orient="records")
    return [{str(k): v for k, v in record.items()} for record in records]


def _csv(frame: AnyTable) -> Any:
    def write(path: Path) -> None:
        if isinstance(frame, pa.Table):
            pa_csv.write_csv(arrow_text_table(frame, spreadsheet_safe=True), path, _CSV_OPTIONS)
        else:
            path.write_bytes(csv_bytes(frame))

    return write


_CSV_OPTIONS = pa_csv.WriteOptions(quoting_style="needed")


#: Rows per Parquet row group (pyarrow's own default, stated so slices can match it).
ROW_GROUP_ROWS = 1 << 20


def _parquet(frame: AnyTable) -> Any:
    def write(path: Path) -> None:
        if isinstance(frame, pa.Table):
            _write_arrow_parquet(frame, path)
            return
        table = pa.Table.from_pandas(frame, preserve_index=False)
        pq.write_table(table, path, row_group_size=ROW_GROUP_ROWS, **parquet_options(table))

    return write


def _write_arrow_parquet(table: pa.Table, path: Path) -> None:
    """The file ``write_table`` would write of the table as from pandas, a row group at a
    time: only one row group's text is recast (to large strings) at once, not the table's."""
    schema = _like_from_pandas(table.slice(0, 0)).schema
    options = parquet_options(table)
    with pq.ParquetWriter(path, schema, **options) as writer:
        for start in range(0, max(table.num_rows, 1), ROW_GROUP_ROWS):
            part = table.slice(start, ROW_GROUP_ROWS).cast(schema)
            writer.write_table(part, row_group_size=ROW_GROUP_ROWS)


def parquet_options(table: pa.Table) -> dict[str, Any]:
    """Lean Parquet: a dictionary only for text that repeats, statistics only where a reader
    filters (keys and times); encoding unique fill ids in a dictionary costs more than it saves."""
    texts = [f.name for f in table.schema if pa.types.is_string(f.type) or _large_text(f)]
    repeating = [name for name in texts if not name.endswith("_id")]
    filtered = [name for name in table.column_names if name in STATISTICS_COLUMNS]
    return {"use_dictionary": repeating, "write_statistics": filtered}


#: Columns whose Parquet statistics let a reader skip row groups (by key, currency and time).
STATISTICS_COLUMNS = frozenset(
    ("account", "instrument", "currency", "time", "open_time", "close_time", "trip_id")
)


def _large_text(field: pa.Field) -> bool:
    return bool(pa.types.is_large_string(field.type))


def _like_from_pandas(table: pa.Table) -> pa.Table:
    """The Arrow table as ``Table.from_pandas`` of its DataFrame would give it (text as large
    strings, pandas metadata), so a Parquet file reads back the same whichever engine wrote it."""
    fields = [
        pa.field(f.name, pa.large_string()) if pa.types.is_string(f.type) else f
        for f in table.schema
    ]
    return table.cast(pa.schema(fields)).replace_schema_metadata(_pandas_metadata(table))


def _pandas_metadata(table: pa.Table) -> dict[bytes, bytes] | None:
    """The pandas metadata ``Table.from_pandas`` would attach, so a table written straight from
    Arrow describes itself as one written from its DataFrame does."""
    empty = pa.Table.from_pandas(frame_from_arrow(table.slice(0, 0)), preserve_index=False)
    metadata: dict[bytes, bytes] | None = empty.schema.metadata
    return metadata


def _json(frame: AnyTable) -> Any:
    def write(path: Path) -> None:
        records = json_records(frame_from_arrow(frame) if isinstance(frame, pa.Table) else frame)
        text = json.dumps(records, indent=1, default=str, allow_nan=False)
        path.write_text(text + "\n", encoding="utf-8")

    return write


def _json_document(document: Any) -> Any:
    def write(path: Path) -> None:
        path.write_text(json.dumps(document, indent=2, default=str) + "\n", encoding="utf-8")

    return write


_WRITERS = {"csv": _csv, "parquet": _parquet, "json": _json}


def table_writer(frame: pd.DataFrame, fmt: str, places: RowPlaces | None = None) -> Any:
    """A writer of one table in ``fmt``, for :meth:`atomic.FileSet.add` with other files.

    ``places`` is for CSV (see :func:`text_table`).
    """
    if places is not None and fmt == "csv":
        return lambda path: path.write_bytes(csv_bytes(frame, places))
    return _WRITERS[fmt](frame)


def document_writer(document: Any) -> Any:
    """A writer of one JSON document, for :meth:`atomic.FileSet.add` with other files."""
    return _json_document(document)
