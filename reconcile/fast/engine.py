"""The fast path of ``match``: prepare, run the kernel, shape the tables; hand keys that do not fit
in 64 bits to the reference engine and merge its rows back in key order.

The result is the same :class:`~reconcile.core.book.Book` the reference engine builds: the same
columns, values and row order in every table (decimal columns may be typed at another scale).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd
import pyarrow as pa

from reconcile.core.book import Book, build_book
from reconcile.core.engine import replay
from reconcile.core.frames import InputFrames, release_unused_memory
from reconcile.errors import InputError
from reconcile.fast import kernel
from reconcile.fast.finish import finish
from reconcile.fast.pages import releasable_zeros
from reconcile.fast.prepare import Prepared, arrow_columns, prepare
from reconcile.fast.tables import KEY, KernelOutput, TableBuilder
from reconcile.money import Rounding

PIECE_COLUMNS, TRIP_COLUMNS, LOT_COLUMNS, KEY_COLUMNS = 12, 12, 9, 9


def fast_book(
    fills: pd.DataFrame,
    financing: pd.DataFrame | None,
    opening: pd.DataFrame | None,
    method: str,
    convention: str,
    rounding: Rounding,
    *,
    compiled: bool = True,
    release: Callable[[], None] | None = None,
    reread: Callable[[], InputFrames] | None = None,
) -> Book:
    """Match canonical inputs with the kernel; may raise ``prepare.NeedsReference``.

    ``release`` is called once the input frames are no longer needed, for a caller that can let
    go of them then: before the tables are built or, when the caller can also ``reread`` the same
    frames, as soon as the kernel's inputs are prepared and every key fits in 64 bits (the
    frames are read again only if a key overflows later, which real books almost never do).
    """
    prepared = prepare(fills, financing, opening, method)
    frames: InputFrames | None = (fills, financing, opening)
    del fills, financing, opening
    if release is not None and reread is not None and _every_key_fits(prepared):
        frames = None
        prepared.release_sources()
        release()
        release = None
        release_unused_memory()
    out = run_kernel(prepared, method, convention, compiled=compiled)
    prepared.release_kernel_inputs()
    average = method == "average"
    derived, bad = finish(out, prepared, rounding == "half-up", average)
    if bad.any():
        prepared.key["status"][bad] = kernel.OVERFLOW
        out = out.without(bad, prepared.sources["financing"].keys)
        derived, _ = finish(out, prepared, rounding == "half-up", average)
    fallback = np.flatnonzero(prepared.key["status"] != kernel.OK)
    reference = None
    trips = out.keys[:, 8].copy()
    if len(fallback):
        if frames is None:
            assert reread is not None
            frames = _same_frames(reread(), prepared)
        reference = _reference_book(prepared, fallback, *frames, method, convention, rounding)
        trips[fallback] = _trip_counts(reference, prepared, fallback)
    frames = None
    if release is not None:
        release()
    prepared.release_sources()
    prepared.sources["fills"].keys = np.zeros(0, np.int64)  # only a replay needed them
    release_unused_memory()
    offsets = np.concatenate([[0], np.cumsum(trips)[:-1]]).astype(np.int64)
    builder = TableBuilder(prepared, out, derived, offsets, merging=reference is not None)
    good = np.flatnonzero(prepared.key["status"] == kernel.OK)
    tables = builder.build_all(good, average)
    if reference is not None:
        tables = _merge(tables, reference, prepared, fallback, offsets)
    del builder, out, derived, prepared  # the kernel's arrays are not needed past this point
    release_unused_memory()  # what building the tables freed, before the caller writes them
    # The book holds the Arrow tables: a caller that asks for frames gets them converted then.
    arrow = {
        name: table.drop_columns([KEY]) if KEY in table.column_names else table
        for name, table in tables.items()
    }
    return Book(**arrow, method=method, commission=convention, rounding=rounding)


def _every_key_fits(prepared: Prepared) -> bool:
    return not bool((prepared.key["status"] != kernel.OK).any())


def _same_frames(frames: InputFrames, prepared: Prepared) -> InputFrames:
    """Frames read again for a key that overflowed, checked to be the ones first matched."""
    ids = prepared.sources["fills"].columns.get("fill_id")
    same = all(
        (0 if frame is None else len(frame)) == len(prepared.sources[name])
        for frame, name in zip(frames, ("fills", "financing", "opening"), strict=True)
    )
    if same and ids is not None:
        same = arrow_columns(frames[0], ("fill_id",))["fill_id"].equals(ids)
    if not same:
        raise InputError(
            "the input files changed while they were being matched: a key that overflowed 64 "
            "bits needed its fills read again, and they are no longer the fills first read"
        )
    return frames


def run_kernel(
    prepared: Prepared, method: str, convention: str, *, compiled: bool = True
) -> KernelOutput:
    fills, financing, opening, key = (
        prepared.fills,
        prepared.financing,
        prepared.opening,
        prepared.key,
    )
    n_fills, n_open, n_fin = len(fills["qty"]), len(opening["qty"]), len(financing["amount"])
    keys = prepared.key_count
    bound = n_fills + n_open + 1
    pieces = releasable_zeros((bound, PIECE_COLUMNS))
    piece_times = releasable_zeros((bound, 2))
    trips = releasable_zeros((n_fills + keys + 1, TRIP_COLUMNS))
    trip_times = releasable_zeros((n_fills + keys + 1, 2))
    lots = np.zeros((bound, LOT_COLUMNS), np.int64)
    lot_times = np.zeros(bound, np.int64)
    key_out = np.zeros((keys, KEY_COLUMNS), np.int64)
    unattributed = np.zeros(n_fin + 1, np.int64)
    counts = np.zeros(4, np.int64)
    replay = kernel.replay_keys if compiled else kernel.replay_keys.py_func  # type: ignore[attr-defined]
    replay(
        kernel.METHOD_CODES[method],
        convention == "at-close",
        key["fills_offsets"],
        key["financing_offsets"],
        key["opening_offsets"],
        key["minor"],
        key["qs"],
        key["ps"],
        key["ms"],
        key["ws"],
        key["mult"],
        key["status"],
        fills["time"],
        fills["sign"],
        fills["qty"],
        fills["price"],
        fills["comm"],
        fills["row"],
        financing["time"],
        financing["amount"],
        financing["row"],
        opening["time"],
        opening["dir"],
        opening["qty"],
        opening["price"],
        opening["cost"],
        opening["comm"],
        opening["fin"],
        opening["row"],
        len(prepared.sources["fills"]),
        pieces,
        piece_times,
        trips,
        trip_times,
        lots,
        lot_times,
        key_out,
        unattributed,
        counts,
    )
    n_p, n_t, n_l, n_u = (int(c) for c in counts)
    return KernelOutput(
        pieces[:n_p],
        piece_times[:n_p],
        trips[:n_t],
        trip_times[:n_t],
        lots[:n_l],
        lot_times[:n_l],
        key_out,
        unattributed[:n_u],
    )


def _reference_book(
    prepared: Prepared,
    fallback: np.ndarray,
    fills: pd.DataFrame,
    financing: pd.DataFrame | None,
    opening: pd.DataFrame | None,
    method: str,
    convention: str,
    rounding: Rounding,
) -> Book:
    """The reference engine's book for the keys the kernel could not hold in 64 bits."""
    chosen = np.zeros(prepared.key_count, bool)
    chosen[fallback] = True

    def subset(frame: pd.DataFrame | None, name: str) -> pd.DataFrame | None:
        if frame is None:
            return None
        rows: pd.DataFrame = frame[chosen[prepared.sources[name].keys]].reset_index(drop=True)
        return rows

    fills_subset = subset(fills, "fills")
    assert fills_subset is not None
    run = replay(
        fills_subset, subset(financing, "financing"), subset(opening, "opening"), method, convention
    )
    return build_book(run, method, rounding)


def _key_index(frame: pd.DataFrame, prepared: Prepared, fallback: np.ndarray) -> np.ndarray:
    names = {
        (a, i): int(k)
        for k, a, i in zip(
            fallback,
            prepared.accounts.take(pa.array(fallback)).to_pylist(),
            prepared.instruments.take(pa.array(fallback)).to_pylist(),
            strict=True,
        )
    }
    pairs = zip(frame["account"].tolist(), frame["instrument"].tolist(), strict=True)
    return np.array([names[p] for p in pairs], dtype=np.int64)


def _trip_counts(reference: Book, prepared: Prepared, fallback: np.ndarray) -> np.ndarray:
    """Trips per fallback key: its finished trips, and one more if a position is still open."""
    finished = _key_index(reference.round_trips, prepared, fallback)
    still_open = _key_index(reference.positions, prepared, fallback)[
        reference.positions["open_lots"].to_numpy() > 0
    ]
    counts = np.bincount(finished, minlength=prepared.key_count)
    counts += np.bincount(still_open, minlength=prepared.key_count)
    chosen: np.ndarray = counts[fallback]
    return chosen


def _merge(
    tables: dict[str, pa.Table],
    reference: Book,
    prepared: Prepared,
    fallback: np.ndarray,
    offsets: np.ndarray,
) -> dict[str, pa.Table]:
    """The reference rows of the fallback keys, renumbered and merged in key order."""
    counts = np.zeros(prepared.key_count, np.int64)
    counts[fallback] = _trip_counts(reference, prepared, fallback)
    local_offsets = np.zeros(prepared.key_count, np.int64)
    local_offsets[fallback] = np.concatenate([[0], np.cumsum(counts[fallback])[:-1]])
    merged = {}
    for name, table in tables.items():
        frame = reference.tables()[name]
        keys = _key_index(frame, prepared, fallback) if len(frame) else np.zeros(0, np.int64)
        extra = pa.Table.from_pandas(frame, preserve_index=False)
        if "trip_id" in extra.column_names and len(frame):
            shifted = frame["trip_id"].to_numpy() + (offsets - local_offsets)[keys]
            extra = extra.set_column(
                extra.column_names.index("trip_id"), "trip_id", pa.array(shifted, pa.int64())
            )
        extra = extra.append_column(KEY, pa.array(keys, pa.int64()))
        merged[name] = _concat_in_key_order(table, extra)
    return merged


def _concat_in_key_order(first: pa.Table, second: pa.Table) -> pa.Table:
    schema = pa.schema([_common(a, b) for a, b in zip(first.schema, second.schema, strict=True)])
    both = pa.concat_tables([first.cast(schema), second.cast(schema)])
    keys = np.asarray(both.column(KEY).to_numpy(), np.int64)
    return both.take(pa.array(np.argsort(keys, kind="stable")))


def _common(a: pa.Field, b: pa.Field) -> pa.Field:
    if pa.types.is_decimal(a.type) and pa.types.is_decimal(b.type):
        scale = max(a.type.scale, b.type.scale)
        digits = max(a.type.precision - a.type.scale, b.type.precision - b.type.scale)
        width = digits + scale
        kind = pa.decimal128(width, scale) if width <= 38 else pa.decimal256(width, scale)
        return pa.field(a.name, kind)
    if pa.types.is_large_string(a.type) or pa.types.is_large_string(b.type):
        return pa.field(a.name, pa.string())
    return a
