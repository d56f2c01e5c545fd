"""A CSV read that parses decimal columns inside pyarrow's (multi-threaded) reader.

For large, clean files this saves a pass over the text of every amount. It is only a shortcut:
any cell Arrow's decimal parser refuses (or any oddity such as spaces around a number) returns None,
and the caller reads the file as text, whose checks word every problem. Time columns are parsed
here too, a block at a time, by the same rule canon's own shortcut applies
(:func:`reconcile.core.vectorised.iso_times`): a column it refuses stays text for canon, and no
column of ten million times is first copied into one array of text.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pa_csv

from reconcile.core.vectorised import iso_times
from reconcile.io.readers.arrow_frame import contiguous_frame

#: Bytes read as text first, to learn the places each decimal column is written with.
SAMPLE_BYTES = 1 << 22


@dataclass(frozen=True)
class TypedColumns:
    """Columns a plain CSV may have parsed by the reader: exact decimals, and UTC times."""

    decimals: Sequence[str] = ()
    times: Sequence[str] = ()


#: Nothing typed: every column read as text.
UNTYPED = TypedColumns()


def read_typed_csv(path: Path, header: list[str], typed: TypedColumns) -> pd.DataFrame | None:
    """The file with ``typed.decimals`` as exact Arrow decimals, ``typed.times`` as UTC times
    where every value carries its offset, and every other column as text."""
    wanted = [name for name in header if name.strip() in typed.decimals]
    places = _sampled_places(path, header, wanted) if wanted else {}
    if places is None:
        return None
    types = {name: pa.string() for name in header}
    types |= {name: pa.decimal128(38, places[name]) for name in wanted}
    try:
        table = pa_csv.read_csv(
            path,
            read_options=pa_csv.ReadOptions(encoding="utf8"),
            parse_options=pa_csv.ParseOptions(newlines_in_values=True),
            convert_options=pa_csv.ConvertOptions(
                column_types=types,
                null_values=[""],
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError):
        return None
    for index, field in enumerate(table.schema):
        if pa.types.is_decimal(field.type):
            table = table.set_column(index, field.name, _tight(table.column(index)))
        elif field.name.strip() in typed.times:
            table = _with_times(table, index)
    return contiguous_frame(table)


def _with_times(table: pa.Table, index: int) -> pa.Table:
    """The table with column ``index`` as UTC times, if every block of its text parses."""
    blocks = []
    for chunk in table.column(index).chunks:
        times = iso_times(chunk)
        if times is None:
            return table
        blocks.append(times)
    if not blocks:
        return table
    column = pa.chunked_array(blocks, blocks[0].type)
    return table.set_column(index, table.schema.field(index).name, column)


def _sampled_places(path: Path, header: list[str], wanted: list[str]) -> dict[str, int] | None:
    """The places each decimal column is written with in the file's first bytes.

    Canon types a column at the most places any of its values is written with; a later value
    written with more places than the sample showed makes Arrow refuse the file, and the text path
    then reads it.
    """
    with path.open("rb") as handle:
        sample = handle.read(SAMPLE_BYTES)
    if len(sample) == SAMPLE_BYTES:
        sample = sample[: sample.rfind(b"\n") + 1]
    try:
        table = pa_csv.read_csv(
            pa.BufferReader(sample),
            read_options=pa_csv.ReadOptions(encoding="utf8"),
            parse_options=pa_csv.ParseOptions(newlines_in_values=True),
            convert_options=pa_csv.ConvertOptions(
                column_types={name: pa.string() for name in header}, include_columns=wanted
            ),
        )
    except (pa.ArrowInvalid, UnicodeDecodeError):
        return None
    places = {}
    for name in wanted:
        text = table.column(name)
        if pc.any(pc.match_substring(text, "e", ignore_case=True)).as_py():
            return None  # exponent forms are the text path's to rewrite
        dot = pc.find_substring(text, ".")
        after = pc.if_else(
            pc.greater_equal(dot, 0), pc.subtract(pc.subtract(pc.utf8_length(text), dot), 1), 0
        )
        places[name] = int(pc.max(after).as_py() or 0)
    return places


def _tight(values: pa.ChunkedArray) -> pa.Array:
    """The column at the narrowest precision its values need, as canon types parsed text."""
    array = values.combine_chunks()
    scale = array.type.scale
    if array.null_count == len(array):
        return array.cast(pa.decimal128(1 + scale, scale))
    bounds = pc.min_max(array)
    largest = max(abs(bounds["min"].as_py()), abs(bounds["max"].as_py()))
    whole = max(largest.adjusted() + 1, 1) if largest else 1
    # Every value fits the narrower precision, and decimal128 lays out every precision alike:
    # a view retypes the column without the cast's pass over each value.
    return array.view(pa.decimal128(whole + scale, scale))
