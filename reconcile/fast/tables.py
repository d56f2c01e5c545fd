"""The kernel's integer rows to the Book's Arrow tables, column by column (no per-row Python).

Each table carries a private ``_key`` column (the key's place in sorted order) until the rows the
reference engine produced for keys that did not fit are merged in.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from reconcile import schema
from reconcile.core.frames import release_unused_memory
from reconcile.core.threads import concurrently
from reconcile.fast import kernel
from reconcile.fast.pages import release_rows
from reconcile.fast.prepare import Prepared
from reconcile.fast.scaled import decimal_type, ints_of, to_decimal

KEY = "_key"
TIME = pa.timestamp("ns", tz="UTC")
DIRECTIONS = pa.array(["short", "long"], pa.string())
UNATTRIBUTED_REASON = "no open position at the event time"
_EMPTY = np.zeros((0, 0), np.int64)
#: Closed lots are built this many pieces at a time (about 250 MB of table per slice).
CHUNK_ROWS = 1 << 20


@dataclass
class KernelOutput:
    pieces: np.ndarray
    piece_times: np.ndarray
    trips: np.ndarray
    trip_times: np.ndarray
    lots: np.ndarray
    lot_times: np.ndarray
    keys: np.ndarray
    unattributed: np.ndarray

    def without(self, dropped: np.ndarray, financing_keys: np.ndarray) -> KernelOutput:
        """The output less every row of the keys marked in ``dropped``."""
        p, t, lots = (~dropped[a[:, 0]] for a in (self.pieces, self.trips, self.lots))
        u = ~dropped[financing_keys[self.unattributed]]
        return KernelOutput(
            self.pieces[p],
            self.piece_times[p],
            self.trips[t],
            self.trip_times[t],
            self.lots[lots],
            self.lot_times[lots],
            self.keys,
            self.unattributed[u],
        )


class TableBuilder:
    """Shapes kernel output into the five tables of :mod:`reconcile.schema`."""

    def __init__(
        self,
        prepared: Prepared,
        out: KernelOutput,
        derived: dict[str, np.ndarray],
        trip_offsets: np.ndarray,
        merging: bool = True,
    ) -> None:
        self.p = prepared
        self.merging = merging
        self.out = out
        self.d = derived
        self.trip_offsets = trip_offsets
        fills = prepared.sources["fills"].columns
        opening = prepared.sources["opening"].columns
        # Taken out of the sources: the ids become Arrow strings (a copy of pandas' large
        # strings), and the original need not stay beside the copy while the tables are built.
        self.fill_ids = _plain(fills.pop("fill_id")) if fills else pa.array([], pa.string())
        opened = _plain(opening["open_fill_id"]) if opening else pa.array([], pa.string())
        self.lot_ids = pa.concat_arrays([self.fill_ids, opened]) if len(opened) else self.fill_ids
        self.fill_prices = fills["price"] if fills else pa.array([], pa.decimal128(1, 0))

    def build_all(self, good: np.ndarray, average: bool) -> dict[str, pa.Table]:
        """Every table, letting go of the kernel rows and derived columns of each as it is
        built, so the largest (closed lots) is not in memory beside its integer rows."""
        out = self.out
        self._stash_derived()
        closed = self.closed_lots(average)
        out.pieces, out.piece_times = _EMPTY, _EMPTY
        opened = self.open_lots(average)
        # Only closed and open lots take the fills' ids and prices.
        self.fill_ids = self.lot_ids = pa.array([], pa.string())
        self.fill_prices = pa.array([], pa.decimal128(1, 0))
        release_unused_memory()  # what they and the pieces held, before the round trips
        tables = {"closed_lots": closed, "round_trips": self.round_trips(), "open_lots": opened}
        out.trips, out.trip_times = _EMPTY, _EMPTY
        tables["positions"] = self.positions(good)
        tables["unattributed"] = self.unattributed()
        return tables

    def _stash_derived(self) -> None:
        """Move the derived piece and trip columns into columns of the kernel's rows that only
        the finish step reads, so that they are handed back to the system with those rows as
        the tables are built slice by slice."""
        stash = {
            "pieces": ((4, "piece_open_price"), (6, "piece_gross"), (9, "piece_net")),
            "trips": (
                *((3, "trip_entry"), (4, "trip_exit"), (6, "trip_gross")),
                *((7, "trip_commission"), (8, "trip_financing"), (9, "trip_net")),
            ),
        }
        for rows_name, columns in stash.items():
            rows = getattr(self.out, rows_name)
            for column, name in columns:
                rows[:, column] = self.d.pop(name)

    def _merge_keys(self, keys: np.ndarray) -> np.ndarray | None:
        """Each row's key, as the private ``_key`` column, only for rows to be merged with the
        reference engine's (an int64 per row otherwise held to no purpose)."""
        return keys if self.merging else None

    def _key_columns(self, keys: np.ndarray) -> dict[str, pa.Array]:
        index = pa.array(keys)
        return {
            "account": self.p.accounts.take(index),
            "instrument": self.p.instruments.take(index),
            "currency": self.p.currencies.take(index),
        }

    def _trip_ids(self, keys: np.ndarray, local: np.ndarray) -> pa.Array:
        return pa.array(self.trip_offsets[keys] + local + 1, pa.int64())

    def _open_price(self, values: np.ndarray, keys: np.ndarray, average: bool) -> pa.Array:
        scales = kernel.AVERAGE_PLACES if average else self.p.key["ps"][keys]
        return to_decimal(values, scales)

    def closed_lots(self, average: bool) -> pa.Table:
        return self._in_slices(
            self.out.pieces, self.out.piece_times, self._closed_lot_batch, average
        )

    def round_trips(self) -> pa.Table:
        return self._in_slices(self.out.trips, self.out.trip_times, self._round_trip_batch)

    @staticmethod
    def _in_slices(
        rows: np.ndarray, times: np.ndarray, build: Callable[..., pa.Table], *args: object
    ) -> pa.Table:
        """A table built ``CHUNK_ROWS`` kernel rows at a time, each slice's rows released once
        built (they read as zeros after)."""
        batches = []
        for start in range(0, max(len(rows), 1), CHUNK_ROWS):
            stop = min(start + CHUNK_ROWS, len(rows))
            batches.append(build(rows[start:stop], times[start:stop], *args))
            release_rows(rows, stop)
            release_rows(times, stop)
        return _joined(batches)

    def _closed_lot_batch(self, rows: np.ndarray, times: np.ndarray, average: bool) -> pa.Table:
        keys = rows[:, 0]
        ws, minor = self.p.key["ws"][keys], self.p.key["minor"][keys]
        qs = self.p.key["qs"][keys]
        columns = _concurrently(
            {
                "key": lambda: self._key_columns(keys),
                "direction": lambda: _directions(rows[:, 11]),
                "open_fill_id": lambda: self.lot_ids.take(pa.array(rows[:, 1])),
                "close_fill_id": lambda: self.fill_ids.take(pa.array(rows[:, 2])),
                "open_time": lambda: _times(times[:, 0]),
                "close_time": lambda: _times(times[:, 1]),
                "quantity": lambda: to_decimal(rows[:, 3], qs),
                "open_price": lambda: self._open_price(rows[:, 4], keys, average),
                "close_price": lambda: self.fill_prices.take(pa.array(rows[:, 2])),
                "gross_pnl": lambda: to_decimal(rows[:, 6], minor),
                "commission": lambda: to_decimal(rows[:, 7], ws),
                "financing": lambda: to_decimal(rows[:, 8], ws),
                "net_pnl": lambda: to_decimal(rows[:, 9], minor),
                "multiplier": lambda: self._multiplier(keys),
                "gross_pnl_unrounded": lambda: to_decimal(rows[:, 5], ws),
                "trip_id": lambda: self._trip_ids(keys, rows[:, 10]),
            }
        )
        return _table(columns, schema.CLOSED_LOTS, self._merge_keys(keys))

    def _round_trip_batch(self, rows: np.ndarray, times: np.ndarray) -> pa.Table:
        keys = rows[:, 0]
        minor = self.p.key["minor"][keys]
        columns = _concurrently(
            {
                "trip_id": lambda: self._trip_ids(keys, rows[:, 10]),
                "key": lambda: self._key_columns(keys),
                "direction": lambda: _directions(rows[:, 1]),
                "open_time": lambda: _times(times[:, 0]),
                "close_time": lambda: _times(times[:, 1]),
                "max_quantity": lambda: to_decimal(rows[:, 2], self.p.key["qs"][keys]),
                "entry_price": lambda: to_decimal(rows[:, 3], kernel.AVERAGE_PLACES),
                "exit_price": lambda: to_decimal(rows[:, 4], kernel.AVERAGE_PLACES),
                "fills": lambda: pa.array(rows[:, 5], pa.int64()),
                "gross_pnl": lambda: to_decimal(rows[:, 6], minor),
                "commission": lambda: to_decimal(rows[:, 7], minor),
                "financing": lambda: to_decimal(rows[:, 8], minor),
                "net_pnl": lambda: to_decimal(rows[:, 9], minor),
                "holding_time": lambda: pa.array(times[:, 1] - times[:, 0], pa.int64()).view(
                    pa.duration("ns")
                ),
            }
        )
        return _table(columns, schema.ROUND_TRIPS, self._merge_keys(keys))

    def open_lots(self, average: bool) -> pa.Table:
        rows = self.out.lots
        keys = rows[:, 0]
        ws = self.p.key["ws"][keys]
        columns = _concurrently(
            {
                "key": lambda: self._key_columns(keys),
                "direction": lambda: _directions(rows[:, 8]),
                "open_fill_id": lambda: self.lot_ids.take(pa.array(rows[:, 1])),
                "open_time": lambda: _times(self.out.lot_times),
                "quantity": lambda: to_decimal(rows[:, 2], self.p.key["qs"][keys]),
                "open_price": lambda: self._open_price(self.d["lot_open_price"], keys, average),
                "commission": lambda: to_decimal(rows[:, 4], ws),
                "financing": lambda: to_decimal(rows[:, 5], ws),
                "multiplier": lambda: self._multiplier(keys),
                "cost_basis": lambda: to_decimal(rows[:, 6], ws),
                "trip_id": lambda: self._trip_ids(keys, rows[:, 7]),
            }
        )
        return _table(columns, schema.OPEN_LOTS, self._merge_keys(keys))

    def positions(self, keys: np.ndarray) -> pa.Table:
        rows = self.out.keys[keys]
        minor = self.p.key["minor"][keys]
        columns = {
            **self._key_columns(keys),
            "multiplier": self._multiplier(keys),
            "quantity": to_decimal(rows[:, 0], self.p.key["qs"][keys]),
            "average_price": to_decimal(
                self.d["key_average"][keys], kernel.AVERAGE_PLACES, rows[:, 2] > 0
            ),
            "realized_gross": to_decimal(self.d["key_gross"][keys], minor),
            "commission": to_decimal(self.d["key_commission"][keys], minor),
            "financing": to_decimal(self.d["key_financing"][keys], minor),
            "realized_net": to_decimal(self.d["key_net"][keys], minor),
            "open_lots": pa.array(rows[:, 7], pa.int64()),
        }
        return _table(columns, schema.POSITIONS, self._merge_keys(keys))

    def unattributed(self) -> pa.Table:
        source = self.p.sources["financing"]
        rows = self.out.unattributed
        keys = source.keys[rows]
        columns: dict[str, pa.Array] = {
            name: source.columns[name].take(pa.array(rows))
            for name in ("event_id", "account", "instrument", "amount", "currency", "kind")
            if name in source.columns
        }
        if not columns:
            columns = {n: pa.array([], pa.string()) for n in ("event_id", "account", "instrument")}
            columns |= {"currency": pa.array([], pa.string()), "kind": pa.array([], pa.string())}
            columns["amount"] = pa.array([], pa.decimal128(1, 0))
            columns["time"] = pa.array([], TIME)
        else:
            columns["time"] = _times(ints_of(source.columns["time"])[rows])
        columns["reason"] = pa.array([UNATTRIBUTED_REASON] * len(rows), pa.string())
        return _table(columns, schema.UNATTRIBUTED, self._merge_keys(keys))

    def _multiplier(self, keys: np.ndarray) -> pa.Array:
        return to_decimal(self.p.key["mult"][keys], self.p.key["ms"][keys])


def _concurrently(
    makers: dict[str, Callable[[], pa.Array | dict[str, pa.Array]]],
) -> dict[str, pa.Array]:
    """A table's columns, built concurrently; a maker may return several named columns."""
    columns: dict[str, pa.Array] = {}
    for name, made in concurrently(makers).items():
        columns |= made if isinstance(made, dict) else {name: made}
    return columns


def _directions(signs: np.ndarray) -> pa.Array:
    return DIRECTIONS.take(pa.array((signs > 0).astype(np.int64)))


def _times(values: np.ndarray) -> pa.Array:
    return pa.array(np.asarray(values, np.int64), pa.int64()).view(TIME)


def _table(
    columns: dict[str, pa.Array], names: tuple[str, ...], keys: np.ndarray | None
) -> pa.Table:
    arrays = [_plain(columns[n]) for n in names]
    if keys is None:
        return pa.Table.from_arrays(arrays, names=list(names))
    arrays.append(pa.array(np.asarray(keys, np.int64), pa.int64()))
    return pa.Table.from_arrays(arrays, names=[*names, KEY])


def _joined(parts: list[pa.Table]) -> pa.Table:
    """Tables built from slices of one table's rows, as one table typed as if built whole.

    A decimal column is typed by its values (the widest integer part and the largest scale),
    so slices can differ; each is brought to the widest, which is what the whole would have had.
    """
    if len(parts) == 1:
        return parts[0]
    fields = []
    for index, field in enumerate(parts[0].schema):
        kinds = [part.schema.field(index).type for part in parts]
        if pa.types.is_decimal(field.type):
            scale = max(k.scale for k in kinds)
            whole = max(k.precision - k.scale for k in kinds)
            field = field.with_type(decimal_type(whole + scale, scale))
        fields.append(field)
    schema = pa.schema(fields)
    return pa.concat_tables([_retyped(part, schema) for part in parts])


def _retyped(part: pa.Table, schema: pa.Schema) -> pa.Table:
    columns = []
    for column, field in zip(part.columns, schema, strict=True):
        if column.type != field.type:
            column = pa.chunked_array([_retype(c, field.type) for c in column.chunks], field.type)
        columns.append(column)
    return pa.Table.from_arrays(columns, schema=schema)


def _retype(values: pa.Array, kind: pa.DataType) -> pa.Array:
    """A wider decimal at the same scale and width is the same bytes: a view, not a copy."""
    if values.type.scale == kind.scale and values.type.bit_width == kind.bit_width:
        return values.view(kind)
    return values.cast(kind)


def _plain(values: pa.Array | pa.ChunkedArray) -> pa.Array:
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    if pa.types.is_large_string(values.type):
        return pc.cast(values, pa.string())
    return values
