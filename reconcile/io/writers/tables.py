"""Tables out as CSV, Parquet or JSON, with amounts as exact decimal text in minor units."""

from __future__ import annotations

import json
from collections.abc import Mapping
from decimal import Decimal
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

from reconcile import schema
from reconcile.core import vectorised
from reconcile.errors import OutputError
from reconcile.io.writers import arrow_text
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


def text_table(frame: pd.DataFrame) -> pd.DataFrame:
    """The table as exact text: amounts in the row's currency's minor unit, times in ISO 8601."""
    out = pd.DataFrame(index=frame.index)
    currencies = frame["currency"] if "currency" in frame.columns else None
    for name in frame.columns:
        out[name] = _text_column(frame[name], name, currencies)
    return out


def _text_column(series: pd.Series, name: str, currencies: pd.Series | None) -> pd.Series:
    """One column as text, whole-column (see :mod:`reconcile.io.writers.arrow_text`)."""
    dtype = series.dtype
    if isinstance(dtype, pd.ArrowDtype) and pa.types.is_decimal(dtype.pyarrow_dtype):
        money = name in schema.MONEY_COLUMNS and currencies is not None
        places = _minor_units(currencies) if money and currencies is not None else None
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


def _csv(frame: pd.DataFrame) -> Any:
    def write(path: Path) -> None:
        table = pa.Table.from_pandas(text_table(frame), preserve_index=False)
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
