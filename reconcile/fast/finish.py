"""What the kernel leaves to whole columns: rounding to the minor unit and averaged prices.

The kernel writes exact integers (gross at the money scale, a pool's cost and quantity); rounding
each amount to its currency's minor unit and dividing out averages are elementwise, so they run
here over whole columns. A value that would leave the int64 range flags its key for the reference
engine, like an overflow inside the kernel.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from reconcile.core.threads import concurrently
from reconcile.fast import kernel
from reconcile.fast.prepare import Prepared
from reconcile.fast.scaled import checked_add, checked_mul, ratio, round_to_places
from reconcile.fast.tables import KernelOutput

AVERAGE = kernel.AVERAGE_PLACES


@dataclass
class Finisher:
    prepared: Prepared
    half_up: bool
    average: bool
    bad_keys: list[np.ndarray] = field(default_factory=list)

    def _flag(self, keys: np.ndarray, bad: np.ndarray) -> None:
        if bad.any():
            self.bad_keys.append(keys[bad])

    def money(self, values: np.ndarray, keys: np.ndarray) -> np.ndarray:
        key = self.prepared.key
        out, bad = round_to_places(values, key["ws"][keys], key["minor"][keys], self.half_up)
        self._flag(keys, bad)
        return out

    def net(
        self, gross: np.ndarray, charges: np.ndarray, financing: np.ndarray, keys: np.ndarray
    ) -> np.ndarray:
        less, bad1 = checked_add(gross, -charges)
        total, bad2 = checked_add(less, financing)
        self._flag(keys, bad1 | bad2)
        return self.money(total, keys)

    def average_price(self, cost: np.ndarray, quantity: np.ndarray, keys: np.ndarray) -> np.ndarray:
        key = self.prepared.key
        den, bad = checked_mul(quantity, key["mult"][keys])
        self._flag(keys, bad)
        out, bad = ratio(
            cost,
            key["ws"][keys],
            np.where(den > 0, den, 1),
            key["qs"][keys] + key["ms"][keys],
            AVERAGE,
        )
        self._flag(keys, bad & (den > 0))
        return out

    def mean_price(self, value: np.ndarray, quantity: np.ndarray, keys: np.ndarray) -> np.ndarray:
        key = self.prepared.key
        out, bad = ratio(
            value, key["qs"][keys] + key["ps"][keys], quantity, key["qs"][keys], AVERAGE
        )
        self._flag(keys, bad)
        return out


def finish(
    out: KernelOutput, prepared: Prepared, half_up: bool, average: bool
) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Derived columns of every table, and the keys whose numbers did not fit."""
    f = Finisher(prepared, half_up, average)
    p, t, lots, k = out.pieces, out.trips, out.lots, out.keys
    pk, tk, lk = p[:, 0], t[:, 0], lots[:, 0]
    keys = np.arange(len(k))
    derived = concurrently(
        {
            "piece_gross": lambda: f.money(p[:, 5], pk),
            "piece_net": lambda: f.net(p[:, 5], p[:, 7], p[:, 8], pk),
            "piece_open_price": lambda: (
                f.average_price(p[:, 4], p[:, 6], pk) if average else p[:, 4]
            ),
            "trip_entry": lambda: f.mean_price(t[:, 3], t[:, 9], tk),
            "trip_exit": lambda: f.mean_price(t[:, 4], t[:, 11], tk),
            "trip_gross": lambda: f.money(t[:, 6], tk),
            "trip_commission": lambda: f.money(t[:, 7], tk),
            "trip_financing": lambda: f.money(t[:, 8], tk),
            "trip_net": lambda: f.net(t[:, 6], t[:, 7], t[:, 8], tk),
            "lot_open_price": lambda: (
                f.average_price(lots[:, 6], lots[:, 2], lk) if average else lots[:, 3]
            ),
            "key_average": lambda: f.average_price(k[:, 1], k[:, 2], keys),
            "key_gross": lambda: f.money(k[:, 3], keys),
            "key_commission": lambda: f.money(k[:, 4], keys),
            "key_financing": lambda: f.money(k[:, 5], keys),
            "key_net": lambda: f.net(k[:, 3], k[:, 4], k[:, 5], keys),
        }
    )
    bad = np.zeros(len(k), bool)
    for flagged in f.bad_keys:
        bad[flagged] = True
    return derived, bad
