"""Build output DataFrames with exact, predictable column types from rows of Python values."""

from __future__ import annotations

from collections.abc import Sequence
from decimal import Decimal
from typing import Any

import pandas as pd
import pyarrow as pa

from reconcile import schema
from reconcile.errors import PrecisionError
from reconcile.money import places_of

#: The most digits an exact decimal column holds (Arrow's decimal256).
MAX_DECIMAL_DIGITS = 76

#: One match's canonical input frames: fills, financing events, carried-in open lots.
InputFrames = tuple[pd.DataFrame, pd.DataFrame | None, pd.DataFrame | None]


def decimal_array(values: Sequence[Decimal | None], column: str = "decimal") -> pa.Array:
    """An Arrow decimal array wide enough for every value, at the largest scale among them."""
    present = [v for v in values if v is not None]
    scale = max((places_of(v) for v in present), default=0)
    return pa.array(
        # A zero can come out of the arithmetic signed (0 x -1); it is written unsigned.
        [v.copy_abs() if v is not None and v == 0 else v for v in values],
        type=tight_decimal_type(present, scale, column),
    )


def tight_decimal_type(
    values: Sequence[Decimal], scale: int, column: str = "decimal"
) -> pa.DataType:
    """The narrowest decimal type holding ``values`` at ``scale``.

    Narrow types matter: Arrow widens precision on every multiplication, so a column typed at the
    maximum precision could not even be multiplied by another. Raises :class:`PrecisionError`
    when no exact column can hold them all (a huge value beside one with many decimal places).
    """
    int_digits = max((v.adjusted() + 1 for v in values if v != 0), default=1)
    precision = max(int_digits, 1) + scale
    if precision > MAX_DECIMAL_DIGITS:
        raise PrecisionError(
            f"column {column}: expected values that fit {MAX_DECIMAL_DIGITS} digits at one scale, "
            f"found {max(int_digits, 1)} digits before the point and {scale} after "
            f"({precision} in all)"
        )
    return pa.decimal128(precision, scale) if precision <= 38 else pa.decimal256(precision, scale)


def build_frame(rows: Sequence[dict[str, Any]], columns: Sequence[str]) -> pd.DataFrame:
    """A DataFrame of ``columns`` from row dicts, each column typed by :mod:`reconcile.schema`."""
    arrays = [_array(name, [row.get(name) for row in rows]) for name in columns]
    table = pa.Table.from_arrays(arrays, names=list(columns))
    frame: pd.DataFrame = table.to_pandas(types_mapper=_pandas_type)
    return frame


def _array(name: str, values: list[Any]) -> pa.Array:
    if name in schema.DECIMAL_COLUMNS or name in schema.TIEOUT_DECIMAL_COLUMNS:
        return decimal_array(values, name)
    if name in schema.TIME_COLUMNS or name in schema.TIEOUT_TIME_COLUMNS:
        return pa.array(values, pa.timestamp("ns", tz="UTC"))
    if name in schema.DURATION_COLUMNS:
        return pa.array(values, pa.duration("ns"))
    if name in schema.INTEGER_COLUMNS or name in schema.TIEOUT_INTEGER_COLUMNS:
        return pa.array(values, pa.int64())
    return pa.array(values, pa.string())


def _pandas_type(kind: pa.DataType) -> Any:
    if pa.types.is_decimal(kind):
        return pd.ArrowDtype(kind)
    if pa.types.is_string(kind):
        return pd.StringDtype(na_value=float("nan"))
    return None


def frame_from_arrow(table: pa.Table) -> pd.DataFrame:
    """A DataFrame of an Arrow table, with the same column types :func:`build_frame` gives."""
    frame: pd.DataFrame = table.to_pandas(types_mapper=_pandas_type)
    return frame


def release_unused_memory() -> None:
    """Return the memory Arrow has freed to the operating system.

    Arrow's allocator keeps freed pages for its own next use, but NumPy allocates elsewhere: after
    a large parse, the pages of the text it parsed would otherwise stay resident beside every
    array the match then builds.
    """
    pa.default_memory_pool().release_unused()
