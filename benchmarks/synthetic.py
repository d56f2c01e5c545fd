"""Seeded synthetic fills for the benchmarks: an invented multi-desk book, written as CSV.

    python benchmarks/synthetic.py N [PATH]

Thousands of instruments over tens of accounts; orders arrive in bursts of partial fills; sides are
random, so positions scale in, reduce in parts and flip through zero; instruments come in classes
with their own decimal places (whole-share equities, five-place FX, eight-place crypto quantities,
futures with multipliers, yen and dinar prices). Fills are in time order, as a feed delivers them.
Everything is generated with numpy and written by pyarrow, so ten million rows take seconds.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pa_csv

#: (name, share of instruments, quantity places, price places, price range in units, multiplier
#: text, currencies): invented instrument classes, not any market's contract specifications.
CLASSES = (
    ("equity", 0.55, 0, 2, (500, 90_000), "1", ("USD", "EUR", "GBP")),
    ("fx", 0.10, 0, 5, (60_000, 190_000), "1", ("USD", "EUR")),
    ("crypto", 0.05, 6, 2, (2_000, 9_000_000), "1", ("USD",)),
    ("future", 0.15, 0, 2, (100_000, 600_000), "50", ("USD",)),
    ("yen", 0.10, 0, 0, (300, 40_000), "1", ("JPY",)),
    ("dinar", 0.05, 0, 3, (1_000, 50_000), "0.5", ("BHD",)),
)
ACCOUNTS = 40
INSTRUMENTS = 4000
BOOK_SIZE = 300
START_NS = 1_793_610_000_000_000_000  # 2026-11-02T09:00:00Z


def synthetic_table(count: int, seed: int = 20261102) -> pa.Table:
    rng = np.random.default_rng(seed)
    classes = _instrument_classes(rng)
    orders = _orders(rng, count)
    burst = rng.integers(1, 6, len(orders["key"]))  # partial fills per order
    order_of_fill = np.repeat(np.arange(len(burst)), burst)
    drawn = len(order_of_fill)
    first_of_order = np.r_[True, order_of_fill[1:] != order_of_fill[:-1]]
    account = orders["key"][order_of_fill] // INSTRUMENTS
    instrument = orders["key"][order_of_fill] % INSTRUMENTS
    cls = classes["class"][instrument]
    q_places = np.array([c[2] for c in CLASSES])[cls]
    p_places = np.array([c[3] for c in CLASSES])[cls]
    lot = classes["lot"][instrument]
    lots = np.abs(orders["lots"])[order_of_fill]
    parts = burst[order_of_fill]
    # Each order's quantity split over its partial fills; the first fill takes the remainder.
    share = lot * lots // parts
    q_units = np.where(first_of_order, lot * lots - share * (parts - 1), share)
    keep = q_units > 0
    spread = np.maximum(classes["price"][instrument] // 200, 1)
    p_units = classes["price"][instrument] + rng.integers(-1, 2, drawn) * rng.integers(0, spread)
    # Orders at least 10 ms apart, their partial fills a millisecond apart: a time-ordered feed.
    steps = (10_000_000 + rng.integers(0, 200_000_000, len(burst))).cumsum()
    in_order = np.arange(drawn) - (np.cumsum(burst) - burst)[order_of_fill]
    time = START_NS + steps[order_of_fill] + in_order * 1_000_000
    c_places = np.array([2, 2, 2, 2, 0, 3])[cls]
    commission = np.where(rng.random(drawn) < 0.2, 0, rng.integers(1, 900, drawn))
    side = (orders["lots"][order_of_fill] < 0).astype(np.int64)
    rows = np.flatnonzero(keep)[:count]
    return pa.table(
        {
            "fill_id": pc.binary_join_element_wise(
                "LK", pa.array(np.arange(len(rows))).cast(pa.string()), ""
            ),
            "account": pc.binary_join_element_wise(
                "ACC", pa.array(account[rows]).cast(pa.string()), ""
            ),
            "instrument": pc.binary_join_element_wise(
                pa.array(np.array([c[0][:2].upper() for c in CLASSES])[cls[rows]]),
                pa.array(instrument[rows]).cast(pa.string()),
                "",
            ),
            "side": pa.array(np.array(["buy", "sell"])[side[rows]]),
            "quantity": _decimal_text(q_units[rows], q_places[rows]),
            "price": _decimal_text(p_units[rows], p_places[rows]),
            "time": _iso(time[rows]),
            "commission": _decimal_text(commission[rows], c_places[rows]),
            "currency": pa.array(classes["currency"][instrument[rows]]),
            "multiplier": pa.array(np.array([c[5] for c in CLASSES])[cls[rows]]),
        }
    )


def _orders(rng: np.random.Generator, count: int) -> dict[str, np.ndarray]:
    """Orders per key that move its position to a random target: from flat they open, toward zero
    they reduce, through zero they flip; a target of zero ends a round trip."""
    drawn = count // 2 + 1000  # about 1.5 fills per requested fill, cut back to count later
    account = rng.integers(0, ACCOUNTS, drawn)
    book = _popular(rng, drawn, BOOK_SIZE)  # each account trades its own few hundred names
    key = account * INSTRUMENTS + (account * 97 + book) % INSTRUMENTS
    target = np.where(rng.random(drawn) < 0.3, 0, rng.integers(-4, 5, drawn))
    order = np.argsort(key, kind="stable")
    sorted_key, sorted_target = key[order], target[order]
    previous = np.r_[0, sorted_target[:-1]]
    previous[np.r_[True, sorted_key[1:] != sorted_key[:-1]]] = 0
    lots = np.empty(drawn, np.int64)
    lots[order] = sorted_target - previous
    moving = lots != 0
    return {"key": key[moving], "lots": lots[moving]}


def _instrument_classes(rng: np.random.Generator) -> dict[str, np.ndarray]:
    shares = np.array([c[1] for c in CLASSES])
    cls = rng.choice(len(CLASSES), INSTRUMENTS, p=shares / shares.sum())
    low = np.array([c[4][0] for c in CLASSES])[cls]
    high = np.array([c[4][1] for c in CLASSES])[cls]
    price = rng.integers(low, high)
    lot = np.array([100, 10_000, 1, 1, 100, 10])[cls] * np.where(cls == 2, 1234, 1)
    currency = np.array(
        [CLASSES[c][6][rng.integers(0, len(CLASSES[c][6]))] for c in cls], dtype=object
    )
    return {"class": cls, "price": price, "currency": currency, "lot": lot}


def _popular(rng: np.random.Generator, count: int, size: int) -> np.ndarray:
    """One of ``size`` names per order: a few far more often than most (a rough power law)."""
    weights = 1.0 / np.arange(1, size + 1) ** 0.8  # benchmark data only, not money
    ranked = rng.permutation(size)
    return ranked[rng.choice(size, count, p=weights / weights.sum())]


def _decimal_text(units: np.ndarray, places: np.ndarray) -> pa.Array:
    """Exact decimal text of ``units / 10**places``, each row at its own places."""
    units = np.asarray(units, np.int64)
    whole = pa.array(units // 10**places).cast(pa.string())
    fraction = pa.array(units % 10**places).cast(pa.string())
    padded = pc.utf8_lpad(fraction, width=int(places.max()), padding="0")
    trimmed = pc.utf8_slice_codeunits(padded, 0, 0)  # placeholder, replaced per places below
    for p in np.unique(places):
        if p == 0:
            continue
        mask = pa.array(places == p)
        cut = pc.utf8_slice_codeunits(padded, int(places.max()) - int(p))
        trimmed = pc.if_else(mask, pc.binary_join_element_wise(".", cut, ""), trimmed)
    return pc.binary_join_element_wise(whole, trimmed, "")


def _iso(ns: np.ndarray) -> pa.Array:
    stamps = pa.array(ns // 1_000_000).cast(pa.timestamp("ms", tz="UTC"))
    return pc.binary_join_element_wise(pc.strftime(stamps, format="%Y-%m-%dT%H:%M:%S"), "Z", "")


def write_fills(count: int, path: Path, seed: int = 20261102) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    table = synthetic_table(count, seed)
    pa_csv.write_csv(table, path, pa_csv.WriteOptions(quoting_style="none"))
    return path


def main() -> None:
    count = int(float(sys.argv[1])) if len(sys.argv) > 1 else 1_000_000
    default = Path(__file__).parent / "data" / f"fills-{count}.csv"
    path = Path(sys.argv[2]) if len(sys.argv) > 2 else default
    print(write_fills(count, path))


if __name__ == "__main__":
    main()
