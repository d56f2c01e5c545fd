"""Arrow tables handed to pandas with each text and decimal column in one contiguous array.

Arrow's readers return columns in many chunks. The checks in :mod:`reconcile.core.canon` work on
whole arrays, and a chunked column would be copied into one there while the frame still holds the
chunks, doubling its memory at the peak. Joining each column here, one at a time, costs one
column's copy at most, and canon then shares the frame's buffers instead of copying them.
"""

from __future__ import annotations

import pandas as pd
import pyarrow as pa


def contiguous_frame(table: pa.Table) -> pd.DataFrame:
    """``table`` as a frame: text as pandas strings, decimals as exact Arrow decimals."""
    for index, field in enumerate(table.schema):
        column = table.column(index)
        if pa.types.is_string(field.type):
            column = column.cast(pa.large_string())  # the layout pandas keeps strings in
        if column.num_chunks > 1 and _kept_as_arrow(column.type):
            column = pa.chunked_array([column.combine_chunks()], column.type)
        table = table.set_column(index, field.name, column)
    frame: pd.DataFrame = table.to_pandas(
        types_mapper=lambda t: pd.ArrowDtype(t) if pa.types.is_decimal(t) else None
    )
    return frame


def _kept_as_arrow(kind: pa.DataType) -> bool:
    return bool(pa.types.is_large_string(kind) or pa.types.is_decimal(kind))
