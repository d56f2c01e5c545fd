"""What one account and instrument contributes to a statement period, from a replay of its rows.

Realized in the period is what lots closed inside it realized: each closed piece's exact gross,
summed exactly and rounded once by the caller. Commission and financing follow the commission
convention: ``at-close`` takes what the lots closed in the period carried (their share of the
opening and closing commissions and of the financing they accrued) plus financing booked in the
period while the position was flat; ``at-fill`` takes the commissions of the fills in the period
and the financing booked in it. Open quantity and cost are as of the period's end.

A :class:`KeyCase` replays its key's rows under any variation the break search needs (a fill
left out or added, the period's bounds moved, another relief method or convention), so each
trial replays one key only.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd

from reconcile.core.engine import KeyEvents, KeyRun, replay_key
from reconcile.money import ZERO

Row = dict[str, Any]


@dataclass(frozen=True)
class Part:
    """One dated amount a measure adds up: a piece's gross, a commission or a financing amount."""

    time: pd.Timestamp
    amount: Decimal
    item: str  # the fill (or financing event) that realized it
    part: str  # "gross", "commission" or "financing"


@dataclass(frozen=True)
class Figures:
    """One key's exact, unrounded contribution to the measures of a period."""

    account: str
    instrument: str
    currency: str
    multiplier: Decimal
    gross: tuple[Part, ...]
    commission: tuple[Part, ...]
    financing: tuple[Part, ...]
    quantity: Decimal  # signed, at the period end
    cost: Decimal  # basis of what is open at the period end (quantity x price x multiplier)

    def total(self, part: str) -> Decimal:
        return sum((p.amount for p in getattr(self, part)), ZERO)

    def average(self) -> Fraction | None:
        """Exact average open price at the period end, or None when flat."""
        if not self.quantity:
            return None
        return Fraction(self.cost) / (Fraction(abs(self.quantity)) * Fraction(self.multiplier))

    def is_idle(self) -> bool:
        """Nothing realized, charged or held in the period."""
        return not (self.gross or self.commission or self.financing or self.quantity)


@dataclass(frozen=True)
class Bounds:
    start: pd.Timestamp  # included
    end: pd.Timestamp  # excluded


@dataclass
class KeyCase:
    """The rows of one (account, instrument) and how to replay them for a period."""

    account: str
    instrument: str
    events: KeyEvents
    bounds: Bounds
    method: str
    convention: str
    _cache: dict[tuple[Any, ...], Figures] = field(default_factory=dict, repr=False)

    @property
    def key(self) -> tuple[str, str]:
        return (self.account, self.instrument)

    def fills_before_end(self) -> list[Row]:
        return [r for r in self.events.fills if r["time"] < self.bounds.end]

    def figures(
        self,
        *,
        drop: frozenset[str] = frozenset(),
        extra: Sequence[Row] = (),
        bounds: Bounds | None = None,
        method: str | None = None,
        convention: str | None = None,
    ) -> Figures:
        """Replay this key with fills dropped or added, other bounds, method or convention."""
        bounds = bounds or self.bounds
        method = method or self.method
        convention = convention or self.convention
        terms = ("fill_id", "side", "quantity", "price", "commission", "time")
        added = tuple(tuple(row[t] for t in terms) for row in extra)
        cache_key = (drop, added, bounds, method, convention)
        if cache_key in self._cache:
            return self._cache[cache_key]
        fills = [
            r for r in self.events.fills if r["time"] < bounds.end and r["fill_id"] not in drop
        ]
        fills += list(extra)
        financing = [r for r in self.events.financing if r["time"] < bounds.end]
        events = replace(self.events, fills=fills, financing=financing)
        if fills or financing or events.opening:
            run = replay_key(self.account, self.instrument, events, method)
            result = _figures(run, fills, financing, bounds, convention)
        else:
            result = self._nothing()
        self._cache[cache_key] = result
        return result

    def _nothing(self) -> Figures:
        """The figures of a key whose every row lies beyond the period's end."""
        first = (self.events.fills or self.events.financing)[0]
        multiplier = first.get("multiplier") or Decimal(1)
        return Figures(
            self.account, self.instrument, first["currency"], multiplier, (), (), (), ZERO, ZERO
        )


def _figures(
    run: KeyRun, fills: list[Row], financing: list[Row], bounds: Bounds, convention: str
) -> Figures:
    pieces = [p for p in run.pieces if p.close.time >= bounds.start]
    gross = tuple(Part(p.close.time, p.gross, p.close.fill_id, "gross") for p in pieces)
    booked = [r for r in financing if r["time"] >= bounds.start]
    if convention == "at-close":
        commission = tuple(
            Part(
                p.close.time, p.open_commission + p.close_commission, p.close.fill_id, "commission"
            )
            for p in pieces
            if p.open_commission or p.close_commission
        )
        flat_ids = {row["event_id"] for row in run.unattributed}
        financing_parts = tuple(
            Part(p.close.time, p.financing, p.close.fill_id, "financing")
            for p in pieces
            if p.financing
        ) + tuple(
            Part(r["time"], r["amount"], r["event_id"], "financing")
            for r in booked
            if r["event_id"] in flat_ids
        )
    else:
        commission = tuple(
            Part(r["time"], r["commission"], r["fill_id"], "commission")
            for r in fills
            if r["time"] >= bounds.start and r["commission"]
        )
        financing_parts = tuple(
            Part(r["time"], r["amount"], r["event_id"], "financing") for r in booked
        )
    cost = sum((lot.cost for lot in run.lots), ZERO)
    return Figures(
        run.account,
        run.instrument,
        run.currency,
        run.multiplier,
        gross,
        commission,
        financing_parts,
        run.position(),
        cost,
    )
