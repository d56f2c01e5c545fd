"""Canonical frames to the kernel's arrays: keys coded in sorted order, rows grouped by key and
time, every decimal an integer at its key's own scale.

Per-key scales keep the integers small: a key's quantities are held at the places its own
quantities need, not at the widest places of the whole column. A key whose values still do not fit
in 64 bits is flagged for the reference engine. Inputs that the reference engine would reject
(a key with two currencies or multipliers across inputs, carried lots on both sides, a carried
basis that does not match its lot) raise :class:`NeedsReference`, so the reference engine reports
them in its own words.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from reconcile.core.threads import concurrently
from reconcile.fast import kernel
from reconcile.fast._jit import numba_available
from reconcile.fast.scaled import (
    POW10,
    checked_mul,
    ints_of,
    rescale,
    significant_places,
    unscaled_in_order,
)
from reconcile.money import minor_unit


class NeedsReference(Exception):  # noqa: N818 - a signal, not an error a user sees
    """The inputs hold something only the reference engine reports properly."""


@dataclass
class Source:
    """One input's columns as Arrow arrays in input order, each row's key, and the order that
    sorts the rows by key, time and input order (``sorted_keys`` is ``keys[order]``)."""

    columns: dict[str, pa.Array]
    keys: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))
    order: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))

    def __len__(self) -> int:
        return len(self.keys)

    @property
    def sorted_keys(self) -> np.ndarray:
        keys: np.ndarray = self.keys[self.order]
        return keys

    def sorted_ints(self, name: str) -> np.ndarray:
        if not self.columns:
            return np.zeros(0, np.int64)
        values: np.ndarray = ints_of(self.columns[name])[self.order]
        return values


@dataclass
class Prepared:
    """Everything the kernel needs, and what the tables are built from."""

    accounts: pa.Array
    instruments: pa.Array
    currencies: pa.Array
    multipliers: pa.Array
    key: dict[str, np.ndarray]
    fills: dict[str, np.ndarray]
    financing: dict[str, np.ndarray]
    opening: dict[str, np.ndarray]
    sources: dict[str, Source]

    @property
    def key_count(self) -> int:
        return len(self.key["minor"])

    def release_kernel_inputs(self) -> None:
        """Drop the sorted integer columns once the kernel has run: only the tables' sources and
        the per-key arrays are needed after it (tens of megabytes per million rows)."""
        self.fills, self.financing, self.opening = {}, {}, {}

    def release_sources(self) -> None:
        """Drop the fills' input columns the tables do not take values from (the tables take
        ids and prices from the fills, and every column of financing events and carried lots)."""
        fills = self.sources["fills"]
        fills.columns = {n: c for n, c in fills.columns.items() if n in ("fill_id", "price")}
        fills.order = np.zeros(0, np.int64)


def arrow_columns(frame: pd.DataFrame | None, names: tuple[str, ...]) -> dict[str, pa.Array]:
    if frame is None or frame.empty:
        return {}
    out = {}
    for name in names:
        series = frame[name]
        if isinstance(series.dtype, pd.DatetimeTZDtype):
            out[name] = pa.array(series.dt.as_unit("ns").array.asi8, pa.int64())
        else:
            array = pa.array(series.array)
            out[name] = array.combine_chunks() if isinstance(array, pa.ChunkedArray) else array
    return out


FILL_NAMES: tuple[str, ...] = (
    *("fill_id", "account", "instrument", "side", "quantity", "price", "time"),
    *("commission", "currency", "multiplier"),
)
FIN_NAMES: tuple[str, ...] = ("event_id", "account", "instrument", "time", "amount", "currency")
FIN_NAMES += ("kind",)
OPEN_NAMES: tuple[str, ...] = (
    *("account", "instrument", "currency", "direction", "open_fill_id", "open_time"),
    *("quantity", "open_price", "commission", "financing", "multiplier", "cost_basis"),
)


def prepare(
    fills: pd.DataFrame,
    financing: pd.DataFrame | None,
    opening: pd.DataFrame | None,
    method: str,
) -> Prepared:
    sources = {
        "fills": Source(arrow_columns(fills, FILL_NAMES)),
        "financing": Source(arrow_columns(financing, FIN_NAMES)),
        "opening": Source(arrow_columns(opening, OPEN_NAMES)),
    }
    accounts, instruments = _code_keys(sources)
    key_count = len(accounts)
    orders = {
        "fills": _fill_order(sources["fills"], key_count),
        "financing": _event_order(sources["financing"], "time"),
        "opening": _event_order(sources["opening"], "open_time"),
    }
    for name, order in orders.items():
        sources[name].order = order
    currencies, minor = _key_currencies(sources, key_count)
    builder = _Scales(sources, key_count, minor)
    prepared = builder.build(method)
    prepared.accounts, prepared.instruments, prepared.currencies = accounts, instruments, currencies
    return prepared


def _code_keys(sources: dict[str, Source]) -> tuple[pa.Array, pa.Array]:
    """Code (account, instrument) so that code order is the sorted order of the pairs."""
    present = [s for s in sources.values() if s.columns]
    ranks = []
    names = []
    for column in ("account", "instrument"):
        encoded = pc.dictionary_encode(_text_chunks([s.columns[column] for s in present]))
        dictionary = (
            encoded.chunk(0).dictionary if encoded.num_chunks else pa.array([], pa.string())
        )
        order = np.asarray(pc.sort_indices(dictionary).to_numpy(), dtype=np.int64)
        rank = np.empty(len(order), dtype=np.int64)
        rank[order] = np.arange(len(order))
        codes = [
            np.asarray(c.indices.to_numpy(zero_copy_only=False), np.int64) for c in encoded.chunks
        ]
        ranks.append([rank[c] for c in codes])
        names.append(dictionary.take(pa.array(order)))
    width = max(len(names[1]), 1)
    combined = [a * width + i for a, i in zip(ranks[0], ranks[1], strict=True)]
    used, places = _used_pairs(combined, len(names[0]) * width)
    for source, coded in zip(present, combined, strict=True):
        source.keys = places(coded)
    for source in sources.values():
        if not source.columns:
            source.keys = np.zeros(0, np.int64)
    accounts = names[0].take(pa.array(used // width)).cast(pa.string())
    instruments = names[1].take(pa.array(used % width)).cast(pa.string())
    return accounts, instruments


def _used_pairs(
    combined: list[np.ndarray], pairs: int
) -> tuple[np.ndarray, Callable[[np.ndarray], np.ndarray]]:
    """The pair codes in use, sorted, and a map from a pair code to its place among them.

    When the pair space is not much larger than the rows, a table of every pair answers both in
    linear time; otherwise a sort does.
    """
    rows = sum(len(c) for c in combined)
    if pairs <= 4 * rows + 1024:
        seen = np.zeros(pairs, bool)
        for coded in combined:
            seen[coded] = True
        place = np.cumsum(seen) - 1
        return np.flatnonzero(seen), lambda coded: place[coded]
    flat = np.concatenate(combined) if combined else np.zeros(0, np.int64)
    used = np.unique(flat)
    return used, lambda coded: np.searchsorted(used, coded)


def _text_chunks(arrays: list[pa.Array]) -> pa.ChunkedArray:
    """One chunked text column of several inputs; cast (a copy) only when their types differ."""
    if len({a.type for a in arrays}) > 1:
        arrays = [a.cast(pa.large_string()) for a in arrays]
    return pa.chunked_array(arrays)


def _fill_order(source: Source, key_count: int) -> np.ndarray:
    """Rows by (key, time, input order): one linear pass when the feed is already in time order."""
    if not len(source):
        return np.zeros(0, np.int64)
    times = ints_of(source.columns["time"])
    if bool(np.all(times[1:] >= times[:-1])):
        return _group(source.keys, key_count)
    by_time = np.argsort(times, kind="stable")
    order: np.ndarray = by_time[_group(source.keys[by_time], key_count)]
    return order


def _group(keys: np.ndarray, key_count: int) -> np.ndarray:
    if numba_available():
        order: np.ndarray = kernel.group_by_key(keys, key_count)
        return order
    return np.argsort(keys, kind="stable")


def _event_order(source: Source, time: str) -> np.ndarray:
    if not len(source):
        return np.zeros(0, np.int64)
    times = ints_of(source.columns[time])
    return np.lexsort((np.arange(len(times)), times, source.keys))


def _key_currencies(sources: dict[str, Source], key_count: int) -> tuple[pa.Array, np.ndarray]:
    present = [s for s in sources.values() if s.columns]
    encoded = pc.dictionary_encode(_text_chunks([s.columns["currency"] for s in present]))
    codes = np.concatenate(
        [np.asarray(c.indices.to_numpy(zero_copy_only=False), np.int64) for c in encoded.chunks]
    )
    keys = np.concatenate([s.keys for s in present])
    # Any one row's currency stands for its key; every row agrees with it only if all are equal.
    chosen = np.zeros(key_count, np.int64)  # every key has rows in some source
    chosen[keys] = codes
    if not np.array_equal(chosen[keys], codes):
        raise NeedsReference("a key with two currencies")
    dictionary = encoded.chunk(0).dictionary
    places = np.array([minor_unit(str(c)) or 0 for c in dictionary.to_pylist()], dtype=np.int64)
    return dictionary.take(pa.array(chosen)).cast(pa.string()), places[chosen]


OPENING_DECIMALS = ("quantity", "open_price", "commission", "financing", "multiplier")
#: Every decimal input column the kernel reads, as (source, column).
DECIMALS: tuple[tuple[str, str], ...] = (
    *(("fills", n) for n in ("quantity", "price", "commission", "multiplier")),
    ("financing", "amount"),
    *(("opening", n) for n in (*OPENING_DECIMALS, "cost_basis")),
)


class _Scales:
    """Per-key scales, and every decimal at its key's scale."""

    def __init__(self, sources: dict[str, Source], key_count: int, minor: np.ndarray) -> None:
        self.sources = sources
        self.key_count = key_count
        self.minor = minor
        self.status = np.zeros(key_count, dtype=np.int64)
        self.keys = {name: s.sorted_keys for name, s in sources.items()}

    def _decimals(self, source: str, name: str) -> tuple[np.ndarray, int]:
        return self.column(source, name) if len(self.sources[source]) else (_none(), 0)

    def column(self, source: str, name: str) -> tuple[np.ndarray, int]:
        """A decimal column in sorted order, as integers at the column's scale."""
        ints, scale, fits = unscaled_in_order(
            self.sources[source].columns[name], self.sources[source].order
        )
        self.flag(self.sources[source].keys[~fits])
        return ints, scale

    def flag(self, keys: np.ndarray) -> None:
        self.status[keys] = kernel.OVERFLOW

    def key_max(self, parts: list[tuple[str, np.ndarray]], floor: np.ndarray | None = None) -> Any:
        out = np.zeros(self.key_count, np.int64) if floor is None else floor.copy()
        for source, values in parts:
            if len(values):
                np.maximum(out, _segment_max(values, self.keys[source], self.key_count), out=out)
        return out

    def key_places(self, parts: list[tuple[str, tuple[np.ndarray, int]]]) -> Any:
        """Per key, the most places any of its values needs: 10**d divides every value of a key
        exactly when it divides their greatest common divisor, so one gcd per key tells."""
        out = np.zeros(self.key_count, np.int64)
        for source, (values, scale) in parts:
            if len(values):
                divisor = _segment_gcd(values, self.keys[source], self.key_count)
                np.maximum(out, significant_places(divisor, scale), out=out)
        return out

    def at(
        self,
        source: str,
        ints: np.ndarray,
        scale: int,
        target: np.ndarray,
        consume: bool = False,
    ) -> np.ndarray:
        """``ints`` at each row's key scale; with ``consume`` they may be overwritten."""
        keys = self.keys[source]
        out, bad = rescale(ints, scale, keys, target, in_place=consume)
        self.flag(keys[bad])
        return out

    def build(self, method: str) -> Prepared:
        read = concurrently(
            {f"{source}/{name}": partial(self._decimals, source, name) for source, name in DECIMALS}
        )
        f_qty, fq_s = read["fills/quantity"]
        f_price, fp_s = read["fills/price"]
        f_comm, fc_s = read["fills/commission"]
        f_mult, fm_s = read["fills/multiplier"]
        e_amt, e_s = read["financing/amount"]
        o = {name: read[f"opening/{name}"] for name in OPENING_DECIMALS}
        o_basis = read["opening/cost_basis"]
        qs = self.key_places([("fills", (f_qty, fq_s)), ("opening", o["quantity"])])
        ps = self.key_places([("fills", (f_price, fp_s)), ("opening", o["open_price"])])
        ms = self.key_places([("fills", (f_mult, fm_s)), ("opening", o["multiplier"])])
        charges = self.key_places(
            [
                ("fills", (f_comm, fc_s)),
                ("financing", (e_amt, e_s)),
                ("opening", o["commission"]),
                ("opening", o["financing"]),
                ("opening", o_basis),
            ]
        )
        ws = np.maximum(charges, np.maximum(self.minor, qs + ps + ms))
        mult = self._multipliers(f_mult, fm_s, o["multiplier"], ms)
        fills = self._fills(f_qty, fq_s, f_price, fp_s, f_comm, fc_s, qs, ps, ws)
        opening = self._opening(o, o_basis, qs, ps, ms, ws, mult, method)
        financing = {
            "time": self.sources["financing"].sorted_ints("time"),
            "amount": self.at("financing", e_amt, e_s, ws),
            "row": self.sources["financing"].order,
        }
        key = {
            "minor": self.minor,
            "qs": qs,
            "ps": ps,
            "ms": ms,
            "ws": ws,
            "mult": mult,
            "status": self.status,
            **{f"{n}_offsets": self._offsets(n) for n in self.sources},
        }
        self._check_ranges(ws)
        return Prepared(
            pa.array([]),
            pa.array([]),
            pa.array([]),
            pa.array([]),
            key,
            fills,
            financing,
            opening,
            self.sources,
        )

    def _offsets(self, source: str) -> np.ndarray:
        counts = np.bincount(self.keys[source], minlength=self.key_count)
        return np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)

    def _check_ranges(self, ws: np.ndarray) -> None:
        # Scales above 18 cannot be reached by a power of ten in int64.
        self.status[ws > 18] = kernel.OVERFLOW

    def _multipliers(
        self,
        f_mult: np.ndarray,
        fm_s: int,
        o_mult: tuple[np.ndarray, int],
        ms: np.ndarray,
    ) -> np.ndarray:
        """Each key's multiplier at its scale; every fill and carried lot of a key must agree."""
        mult = np.ones(self.key_count, np.int64)
        low = np.full(self.key_count, np.iinfo(np.int64).max)
        high = np.full(self.key_count, np.iinfo(np.int64).min)
        for source, (values, scale) in (("fills", (f_mult, fm_s)), ("opening", o_mult)):
            if len(values):
                # Rows are in key order: each key's least and greatest over its segment.
                scaled = self.at(source, values, scale, ms)
                keys = self.keys[source]
                np.minimum(low, _segment_reduce(np.minimum, scaled, keys, low), out=low)
                np.maximum(high, _segment_reduce(np.maximum, scaled, keys, high), out=high)
        seen = high >= low
        if np.any(low[seen] != high[seen]):
            raise NeedsReference("a key with two multipliers")
        mult[seen] = low[seen]
        return mult

    def _fills(
        self,
        qty: np.ndarray,
        q_s: int,
        price: np.ndarray,
        p_s: int,
        comm: np.ndarray,
        c_s: int,
        qs: np.ndarray,
        ps: np.ndarray,
        ws: np.ndarray,
    ) -> dict[str, np.ndarray]:
        columns = self.sources["fills"].columns
        if not columns:
            return {n: _none() for n in ("time", "sign", "qty", "price", "comm", "row")}
        order = self.sources["fills"].order
        buys = np.asarray(pc.equal(columns["side"], "buy").to_numpy(zero_copy_only=False), bool)
        scaled = concurrently(
            {
                "time": lambda: self.sources["fills"].sorted_ints("time"),
                "sign": lambda: np.where(buys[order], 1, -1).astype(np.int64, copy=False),
                # The unscaled columns are not needed after: rescaled over themselves.
                "qty": lambda: self.at("fills", qty, q_s, qs, consume=True),
                "price": lambda: self.at("fills", price, p_s, ps, consume=True),
                "comm": lambda: self.at("fills", comm, c_s, ws, consume=True),
            }
        )
        return {**scaled, "row": order}

    def _opening(
        self,
        o: dict[str, tuple[np.ndarray, int]],
        basis: tuple[np.ndarray, int],
        qs: np.ndarray,
        ps: np.ndarray,
        ms: np.ndarray,
        ws: np.ndarray,
        mult: np.ndarray,
        method: str,
    ) -> dict[str, np.ndarray]:
        columns = self.sources["opening"].columns
        names = ("time", "dir", "qty", "price", "cost", "comm", "fin", "row")
        if not columns:
            return {n: _none() for n in names}
        keys = self.keys["opening"]
        order = self.sources["opening"].order
        longs = np.asarray(pc.equal(columns["direction"], "long").to_numpy(zero_copy_only=False))
        direction = np.where(longs[order], 1, -1)
        low = np.full(self.key_count, 2)
        high = np.full(self.key_count, -2)
        np.minimum.at(low, keys, direction)
        np.maximum.at(high, keys, direction)
        if np.any((high >= low) & (low != high)):
            raise NeedsReference("carried lots on both sides")
        qty = self.at("opening", *o["quantity"], qs)
        price = self.at("opening", *o["open_price"], ps)
        expected, bad1 = checked_mul(qty, price)
        expected, bad2 = checked_mul(expected, mult[keys])
        expected = self._value_at_money_scale(expected, qs + ps + ms, ws, keys)
        self.flag(keys[bad1 | bad2])
        given = np.asarray(columns["cost_basis"].is_valid().to_numpy(zero_copy_only=False), bool)
        given = given[order]
        cost_given = self.at("opening", *basis, ws)
        if method != "average" and np.any(given & (cost_given != expected)):
            raise NeedsReference("a carried basis that does not match its lot")
        return {
            "time": self.sources["opening"].sorted_ints("open_time"),
            "dir": direction.astype(np.int64),
            "qty": qty,
            "price": price,
            "cost": np.where(given, cost_given, expected),
            "comm": self.at("opening", *o["commission"], ws),
            "fin": self.at("opening", *o["financing"], ws),
            "row": order,
        }

    def _value_at_money_scale(
        self, values: np.ndarray, scales: np.ndarray, ws: np.ndarray, keys: np.ndarray
    ) -> np.ndarray:
        shift = (ws - scales)[keys]
        out, bad = checked_mul(values, POW10[np.clip(shift, 0, 18)])
        self.flag(keys[bad | (shift > 18)])
        return out


def _segments(keys: np.ndarray, key_count: int) -> tuple[np.ndarray, np.ndarray]:
    """Start of each non-empty key's run in ``keys`` (sorted), and those keys."""
    counts = np.bincount(keys, minlength=key_count)
    present = np.flatnonzero(counts)
    starts = (np.cumsum(counts) - counts)[present]
    return starts, present


def _segment_reduce(
    reduce: np.ufunc, values: np.ndarray, keys: np.ndarray, absent: np.ndarray
) -> np.ndarray:
    """``reduce`` over each key's rows (rows in key order); ``absent`` for a key with none."""
    out = absent.copy()  # the caller's array is left as it is
    starts, present = _segments(keys, len(absent))
    out[present] = reduce.reduceat(values, starts)
    return out


def _segment_max(values: np.ndarray, keys: np.ndarray, key_count: int) -> np.ndarray:
    return _segment_reduce(np.maximum, values, keys, np.zeros(key_count, np.int64))


def _segment_gcd(values: np.ndarray, keys: np.ndarray, key_count: int) -> np.ndarray:
    return _segment_reduce(np.gcd, values, keys, np.zeros(key_count, np.int64))


def _none() -> np.ndarray:
    return np.zeros(0, np.int64)
