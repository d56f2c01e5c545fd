"""Why a line breaks: trials that change one thing, kept when they explain the gap, ranked.

Each trial changes one thing on one (account, instrument) and replays only that key: a fill left
out (a repeat of another, or any one or two fills), the period's bound moved past a nearby fill,
another relief method or commission convention, a fill the statement has and we lack. Others
change how a line is read: another realized-P&L basis, each amount rounded before adding, FX
rates picked another way. A trial is a cause of a break only when, with it, our figure is within
the line's tolerance of the statement's.

Causes are ranked by how exactly they explain the line (reproducing the statement's figure before
being merely consistent with it), then by how many of the key's other lines would still break
with them, then by simplicity (the order of :data:`KINDS`, then fewer fills), then by what remains.
Once a cause explains every break of a key exactly, the costlier trials of that key are skipped.
The search over pairs of fills runs last, only for breaks nothing simpler explains, and is bounded
(:class:`SearchLimits`); the line says when it was cut short.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import timedelta
from decimal import Decimal
from fractions import Fraction
from itertools import combinations, pairwise

import pandas as pd

from reconcile.core.compare import (
    MONEY,
    Evaluator,
    Key,
    LineSpec,
    View,
    within,
)
from reconcile.core.fx import RateBook
from reconcile.core.keyfigures import Bounds, Figures, KeyCase, Row
from reconcile.core.period import Period, day_end, utc_text
from reconcile.money import ZERO, currency_places, quantum, round_fraction
from reconcile.schema import COMMISSION_CONVENTIONS, METHODS

#: Kinds of cause, simplest first (the order breaks ties in the ranking).
KINDS = (
    "naming",
    "unknown_key",
    "sign",
    "duplicate_fill",
    "cut_off",
    "relief_method",
    "commission_convention",
    "basis",
    "fee_charged_twice",
    "fx_rate",
    "rounding",
    "removed_fill",
    "missing_fill",
    "removed_fills",
    "fee_difference",
)


@dataclass(frozen=True)
class SearchLimits:
    """Bounds on the break search; the defaults suit a month of a busy account."""

    duplicate_window: timedelta = timedelta(minutes=5)
    boundary_fills: int = 3  # nearest fills tried on each side of each bound
    boundary_window: timedelta = timedelta(days=3)
    max_single_removals: int = 5_000  # per key
    max_pair_removals: int = 300  # per key, the nearest in time first
    max_causes: int = 5  # kept per line
    #: Skip a key's costlier trials once every break of it has an exact, consistent cause.
    stop_early: bool = True


@dataclass(frozen=True)
class Involved:
    item: str  # a fill_id, or a financing event_id
    role: str


@dataclass(frozen=True)
class Cause:
    kind: str
    explanation: str
    explained: Decimal  # ours - ours with this cause
    residual: Decimal  # ours with this cause - theirs
    involved: tuple[Involved, ...]
    rank_key: tuple[object, ...] = field(compare=False)


@dataclass(frozen=True)
class Finding:
    causes: tuple[Cause, ...]
    note: str


@dataclass(frozen=True)
class Trial:
    kind: str
    describe: str
    involved: tuple[Involved, ...] = ()
    figures: Mapping[Key, Figures] = field(default_factory=dict)
    view: View = field(default_factory=View)
    scope: tuple[Key, ...] = ()  # keys whose lines a view is read over (a statement-wide rule)
    only_line: int | None = None  # a trial about how one line reads, not about a key
    forced: Decimal | None = None  # what that line would read, when no figure changes
    consistent_only: bool = False  # consistent with the gap rather than reproducing it


@dataclass
class Search:
    """The break search of one tie-out."""

    specs: Sequence[LineSpec]
    base: Mapping[Key, Figures]
    values: Mapping[int, Decimal | None]
    allowed: Mapping[int, Decimal]
    broken: set[int]
    cases: Mapping[Key, KeyCase]
    evaluator: Evaluator
    period: Period
    rates: RateBook | None
    limits: SearchLimits
    found: dict[int, list[Cause]] = field(default_factory=dict)
    notes: dict[int, list[str]] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.by_number = {s.number: s for s in self.specs}
        self.by_key: dict[Key, list[LineSpec]] = {}
        for spec in self.specs:
            for key in spec.keys:
                self.by_key.setdefault(key, []).append(spec)

    # -- running -------------------------------------------------------------------------------

    def run(self) -> dict[int, Finding]:
        for number in sorted(self.broken):
            for trial in self._line_trials(self.by_number[number]):
                self._try(trial)
        keys = sorted({k for n in self.broken for k in self.by_number[n].keys})
        for key in keys:
            if self._on_statement(key):
                self._search_key(key)
            else:
                self._try(self._unknown_key(self.cases[key]))
        return {n: self._finding(n) for n in sorted(self.broken)}

    def _search_key(self, key: Key) -> None:
        case = self.cases[key]
        stages = (
            self._duplicates,
            self._cut_offs,
            self._methods,
            self._conventions,
            self._single_removals,
            self._missing_fill,
            self._pair_removals,
        )
        fill_stages = (self._duplicates, self._missing_fill)
        for stage in stages:
            if self.limits.stop_early and self._key_explained(key):
                return
            if stage in fill_stages and self._trades_agree(key):
                continue
            for trial in stage(case):
                self._try(trial)

    def _unknown_key(self, case: KeyCase) -> Trial:
        """A key the statement says nothing about: everything of ours on it is the difference."""
        fills = case.fills_before_end()
        events = [r for r in case.events.financing if r["time"] < case.bounds.end]
        held = self.base[case.key]
        nothing = Figures(
            held.account, held.instrument, held.currency, held.multiplier, (), (), (), ZERO, ZERO
        )
        return Trial(
            "unknown_key",
            f"the statement has nothing for {case.account} {case.instrument}, which our books "
            f"hold with {len(fills):,} fill{'s' if len(fills) != 1 else ''}"
            + (f" and {len(events):,} financing events" if events else "")
            + " up to the period end (an instrument the statement does not carry, or names "
            "differently)",
            tuple(Involved(r["fill_id"], "ours only") for r in fills)
            + tuple(Involved(r["event_id"], "ours only") for r in events),
            {case.key: nothing},
        )

    def _on_statement(self, key: Key) -> bool:
        return any(s.theirs is not None for s in self.by_key.get(key, []))

    def _key_explained(self, key: Key) -> bool:
        """Every break on this key has an exact cause that leaves none of its lines broken."""
        lines = [s.number for s in self.by_key.get(key, []) if s.number in self.broken]
        return all(any(c.rank_key[:2] == (0, 0) for c in self.found.get(n, [])) for n in lines)

    def _try(self, trial: Trial) -> None:
        if trial.only_line is not None:
            targets = [self.by_number[trial.only_line]]
        else:
            keys = [*trial.figures, *trial.scope]
            targets = _unique(s for k in keys for s in self.by_key.get(k, []))
        changed = {
            s.number: trial.forced if trial.forced is not None else self._ours(s, trial)
            for s in targets
        }
        for spec in targets:
            if spec.number not in self.broken:
                continue
            ours = changed[spec.number]
            theirs = _target(spec)
            if (
                ours is None
                or theirs is None
                or not within(ours, theirs, self.allowed[spec.number])
            ):
                continue
            self._keep(spec, trial, ours, theirs, changed)

    def _ours(self, spec: LineSpec, trial: Trial) -> Decimal | None:
        """The line's figure with the trial's figures in place of the base ones."""
        figures = {k: trial.figures.get(k) or self.base[k] for k in spec.keys}
        return self.evaluator.value(spec, figures, trial.view).ours

    def _keep(
        self,
        spec: LineSpec,
        trial: Trial,
        ours: Decimal,
        theirs: Decimal,
        changed: Mapping[int, Decimal | None],
    ) -> None:
        base = self.values[spec.number]
        assert base is not None or spec.measure == "average_price"
        explained = (base - ours) if base is not None else ZERO
        residual = ours - theirs
        still = self._still_broken(spec, changed)
        exact = residual == 0 and not trial.consistent_only
        rank_key = (
            0 if exact else 1,
            still,
            KINDS.index(trial.kind),
            len(trial.involved) if trial.kind in _COUNTED else 0,
            abs(residual),
        )
        joiner = ", " if trial.describe.endswith(("without it", "without them")) else "; "
        text = f"{trial.describe}{joiner}ours would be {self._show(spec, ours)}"
        if base is not None and explained and not trial.consistent_only:
            text += f", explaining {self._show(spec, explained)}"
        cause = Cause(trial.kind, text, explained, residual, trial.involved, rank_key)
        self.found.setdefault(spec.number, []).append(cause)

    def _still_broken(self, spec: LineSpec, changed: Mapping[int, Decimal | None]) -> int:
        related = _unique(s for k in spec.keys for s in self.by_key.get(k, []))
        count = 0
        for other in related:
            if other.number == spec.number:
                continue
            ours = changed.get(other.number, self.values[other.number])
            if not within(ours, _target(other), self.allowed[other.number]):
                count += 1
        return count

    def _finding(self, number: int) -> Finding:
        causes = sorted(self.found.get(number, []), key=lambda c: c.rank_key)
        notes = self.notes.get(number, [])
        if not causes and self.by_number[number].theirs is not None:
            notes = ["no cause found that explains the difference within tolerance", *notes]
        return Finding(tuple(_distinct(causes)[: self.limits.max_causes]), "; ".join(notes))

    def _note(self, key: Key, text: str) -> None:
        for spec in self.by_key.get(key, []):
            if spec.number in self.broken:
                self.notes.setdefault(spec.number, []).append(text)

    def _show(self, spec: LineSpec, value: Decimal) -> str:
        if spec.measure in MONEY:
            return f"{value:,.{currency_places(spec.currency)}f} {spec.currency}"
        return f"{value.normalize():,f}" if value else "0"

    # -- trials about how one line reads ----------------------------------------------------------

    def _line_trials(self, spec: LineSpec) -> Iterator[Trial]:
        yield from self._naming(spec)
        if not spec.keys and spec.theirs is not None:
            yield self._theirs_only(spec)
        ours = self.values[spec.number]
        if ours and spec.theirs is not None and spec.theirs == -ours:
            yield Trial(
                "sign",
                f"the statement shows {self._show(spec, spec.theirs)} where we have "
                f"{self._show(spec, ours)}: the same amount with the opposite sign",
                only_line=spec.number,
                forced=spec.theirs,
            )
        if spec.measure not in MONEY:
            return
        if spec.measure == "realized_pnl":
            for basis in ("gross", "net", "net+financing"):
                if basis != spec.basis:
                    yield Trial(
                        "basis",
                        f"the statement's realized P&L is {_BASIS_WORDS[basis]}, "
                        f"though the line says {spec.basis}",
                        self._items(spec, ("commission", "financing"), "charged"),
                        view=View(basis=basis),
                        scope=spec.keys,
                    )
        for mode in ("half-even", "half-up"):
            yield Trial(
                "rounding",
                f"the statement rounds each amount to the minor unit ({mode}) before adding",
                self._sub_minor_items(spec),
                view=View(round_each=mode),
                scope=spec.keys,
            )
        if self.rates is not None and self.evaluator.value(spec, self.base).conversions:
            for choice in self.rates.choices(self.period.end):
                yield Trial(
                    "fx_rate",
                    f"the statement converts at {choice.describe}",
                    self._items(spec, ("gross", "commission", "financing"), "converted"),
                    view=View(rates=choice),
                    scope=spec.keys,
                )
        yield from self._fee_trials(spec)
        yield from self._rounding_bound(spec)

    def _naming(self, spec: LineSpec) -> Iterator[Trial]:
        """A line only one side has, matched by a line only the other side has."""
        if spec.theirs is not None and spec.keys:
            return
        for other in self.specs:
            if other is spec or other.measure != spec.measure or other.currency != spec.currency:
                continue
            if (other.theirs is None) == (spec.theirs is None) or other.number not in self.broken:
                continue
            if bool(other.keys) == bool(spec.keys):
                continue
            ours_spec, theirs_spec = (spec, other) if spec.keys else (other, spec)
            ours, theirs = self.values[ours_spec.number], theirs_spec.theirs
            if (
                ours is None
                or theirs is None
                or ours != theirs
                or (spec.account != other.account and spec.instrument != other.instrument)
            ):
                continue
            yield Trial(
                "naming",
                f"our {ours_spec.account} {ours_spec.instrument or '(account)'} matches the "
                f"statement's {theirs_spec.account} {theirs_spec.instrument or '(account)'}: "
                "the same figure under another name",
                only_line=spec.number,
                forced=_target(spec),
            )

    def _theirs_only(self, spec: LineSpec) -> Trial:
        """A line of a key our books do not hold: a missing fill for a quantity, else the key."""
        what = f"{spec.account} {spec.instrument or '(account)'} in {spec.currency}"
        if spec.measure != "open_quantity" or spec.theirs is None:
            return Trial(
                "unknown_key",
                f"our books have nothing for {what}: its fills are missing from ours, or it has "
                "another name there",
                only_line=spec.number,
                forced=spec.theirs,
                consistent_only=True,
            )
        side = "buy" if spec.theirs > 0 else "sell"
        price = next(
            (
                s.theirs
                for s in self.specs
                if s.measure == "average_price"
                and (s.account, s.instrument, s.currency)
                == (spec.account, spec.instrument, spec.currency)
            ),
            None,
        )
        at = f" at {price.normalize():f} (the statement's average price)" if price else ""
        return Trial(
            "missing_fill",
            f"the statement holds {self._show(spec, spec.theirs)} of {what}, which our books do "
            f"not hold: a {side} of {abs(spec.theirs).normalize():,f}{at} at least is not in our "
            "fills",
            only_line=spec.number,
            forced=spec.theirs,
        )

    def _fee_trials(self, spec: LineSpec) -> Iterator[Trial]:
        if spec.measure != "commission" or spec.theirs is None:
            return
        ours = self.values[spec.number]
        assert ours is not None
        gap = spec.theirs - ours
        for key in spec.keys:
            for row in self.cases[key].fills_before_end():
                if (
                    row["commission"]
                    and self.period.contains(row["time"])
                    and abs(gap) == row["commission"]
                ):
                    twice = gap > 0
                    yield Trial(
                        "fee_charged_twice",
                        f"fill {row['fill_id']} (row {row['source_row']}) has commission "
                        f"{self._show(spec, row['commission'])}: the statement "
                        + ("charges it twice" if twice else "does not charge it"),
                        (Involved(row["fill_id"], "charged"),),
                        only_line=spec.number,
                        forced=spec.theirs,
                    )
        if self._others_agree(spec):
            yield Trial(
                "fee_difference",
                f"the statement charges {self._show(spec, abs(gap))} "
                f"{'more' if gap > 0 else 'less'} commission while P&L and positions agree: a "
                "fee difference on the statement's side (audit the charges against the schedule)",
                self._items(spec, ("commission",), "charged"),
                only_line=spec.number,
                forced=spec.theirs,
                consistent_only=True,
            )

    def _others_agree(self, spec: LineSpec) -> bool:
        """No line of the same keys breaks but commission (and realized P&L net of it)."""
        related = _unique(s for k in spec.keys for s in self.by_key.get(k, []))
        others = [s for s in related if s.measure != "commission" and s.basis != "net"]
        return all(s.number not in self.broken for s in others)

    def _rounding_bound(self, spec: LineSpec) -> Iterator[Trial]:
        ours, theirs = self.values[spec.number], spec.theirs
        if ours is None or theirs is None or ours == theirs:
            return
        count = self.evaluator.value(spec, self.base).contributing
        half = quantum(currency_places(spec.currency)) / 2
        if abs(ours - theirs) <= half * count:
            yield Trial(
                "rounding",
                f"the difference is no more than half a minor unit on each of the {count} "
                "amounts summed: consistent with rounding each line before adding",
                self._sub_minor_items(spec),
                only_line=spec.number,
                forced=theirs,
                consistent_only=True,
            )

    def _items(self, spec: LineSpec, parts: Sequence[str], role: str) -> tuple[Involved, ...]:
        items: dict[str, None] = {}
        for key in spec.keys:
            for part in parts:
                for p in getattr(self.base[key], part):
                    items[p.item] = None
        return tuple(Involved(item, role) for item in items)

    def _sub_minor_items(self, spec: LineSpec) -> tuple[Involved, ...]:
        step = quantum(currency_places(spec.currency))
        items: dict[str, None] = {}
        for key in spec.keys:
            for part in ("gross", "commission", "financing"):
                for p in getattr(self.base[key], part):
                    if p.amount % step:
                        items[p.item] = None
        return tuple(Involved(item, "rounded") for item in items)

    # -- trials on one key --------------------------------------------------------------------

    def _without(
        self, case: KeyCase, kind: str, describe: str, involved: Sequence[Involved]
    ) -> Trial:
        """Replay the key without the fills marked repeated or removed."""
        drop = frozenset(i.item for i in involved if i.role in ("repeat", "removed"))
        return Trial(kind, describe, tuple(involved), {case.key: case.figures(drop=drop)})

    def _trades_agree(self, key: Key) -> bool:
        """The statement states this key's open quantity and realized P&L and both agree."""
        lines = [s for s in self.by_key.get(key, []) if s.theirs is not None and len(s.keys) == 1]
        stated = {s.measure for s in lines}
        trades = [s for s in lines if s.measure in ("open_quantity", "realized_pnl")]
        return {"open_quantity", "realized_pnl"} <= stated and not any(
            s.number in self.broken for s in trades
        )

    def _quantity_allows(self, key: Key, change: Decimal) -> bool:
        """Whether changing our open quantity by ``change`` keeps (or brings) it within the
        statement's, when the statement states it: trials that would break an agreeing open
        quantity are not worth a replay."""
        for spec in self.by_key.get(key, []):
            if spec.measure == "open_quantity" and spec.theirs is not None and len(spec.keys) == 1:
                ours = self.values[spec.number]
                assert ours is not None
                return within(ours + change, spec.theirs, self.allowed[spec.number])
        return True

    def _duplicates(self, case: KeyCase) -> Iterator[Trial]:
        allowed = {r["fill_id"] for r in case.fills_before_end()}
        window = self.limits.duplicate_window
        by_terms: dict[tuple[object, ...], list[Row]] = {}
        for row in sorted(case.events.fills, key=lambda r: (r["time"], r["_order"])):
            by_terms.setdefault((row["side"], row["quantity"], row["price"]), []).append(row)
        for group in by_terms.values():
            for first, later in pairwise(group):
                gap = later["time"] - first["time"]
                repeat = later if later["fill_id"] in allowed else first
                if gap > window or repeat["fill_id"] not in allowed:
                    continue
                if not self._quantity_allows(case.key, -_signed(repeat)):
                    continue
                original = first if repeat is later else later
                yield self._without(
                    case,
                    "duplicate_fill",
                    f"fill {repeat['fill_id']} (row {repeat['source_row']}) repeats fill "
                    f"{original['fill_id']} (row {original['source_row']}): same side, quantity "
                    f"and price, {_duration(gap)} apart; without it",
                    (
                        Involved(repeat["fill_id"], "repeat"),
                        Involved(original["fill_id"], "original"),
                    ),
                )

    def _cut_offs(self, case: KeyCase) -> Iterator[Trial]:
        """The period's bounds moved just past each fill or financing event near them."""
        start, end = case.bounds.start, case.bounds.end
        rows = sorted(case.events.fills, key=lambda r: (r["time"], r["_order"]))
        events = sorted(case.events.financing, key=lambda r: (r["time"], r["_order"]))
        has_history = any(r["time"] < start for r in rows) or bool(case.events.opening)
        window = pd.Timedelta(self.limits.boundary_window)
        count = self.limits.boundary_fills
        for edge, name in ((end, "end"), (start, "start")):
            if name == "start" and not has_history:
                continue
            for candidates in (rows, events):
                before = [r for r in candidates if r["time"] < edge]
                after = [r for r in candidates if r["time"] >= edge]
                for row in [*before[-count:], *after[:count]]:
                    if abs(row["time"] - edge) <= window:
                        trial = self._cut_off(case, name, edge, row, rows)
                        if trial is not None:
                            yield trial

    def _cut_off(
        self, case: KeyCase, name: str, edge: pd.Timestamp, row: Row, rows: list[Row]
    ) -> Trial | None:
        """The period's ``name`` bound moved just past ``row``, so it changes sides."""
        moment = row["time"]
        new_edge = moment if moment < edge else moment + pd.Timedelta(1, "ns")
        if name == "end":
            bounds = Bounds(case.bounds.start, new_edge)
        else:
            bounds = Bounds(new_edge, case.bounds.end)
        low, high = sorted((edge, new_edge))
        moved = [r for r in rows if low <= r["time"] < high]
        if moved and self._trades_agree(case.key):
            return None
        if name == "end":
            change = sum((_signed(r) for r in moved), ZERO)
            if not self._quantity_allows(case.key, change if new_edge > edge else -change):
                return None
        inside = (moment < edge) == (name == "end")
        where = ("the next" if name == "end" else "the previous") if inside else "this"
        what = (
            f"fill {row['fill_id']}"
            if row.get("fill_id")
            else (f"financing event {row['event_id']}")
        )
        text = (
            f"{what} at {utc_text(moment)} ({self._local(moment)}), "
            f"{_duration(abs(moment - edge))} {'before' if moment < edge else 'after'} the "
            f"period {name}, is counted in {where} period"
        )
        others = [r for r in moved if r is not row]
        if others:
            text += f", with {len(others)} fill{'s' if len(others) > 1 else ''} as near"
        text += self._zone_hint(name, edge, moved, rows)
        involved = [Involved(r["fill_id"], "moved") for r in moved]
        involved += [
            Involved(r["event_id"], "moved financing")
            for r in case.events.financing
            if low <= r["time"] < high
        ]
        return Trial("cut_off", text, tuple(involved), {case.key: case.figures(bounds=bounds)})

    def _zone_hint(self, name: str, edge: pd.Timestamp, moved: list[Row], rows: list[Row]) -> str:
        """A plain day end (midnight UTC, or in the period's zone) that moves the same fills."""
        day = self.period.last_day if name == "end" else self.period.first_day - timedelta(days=1)
        wanted = {r["fill_id"] for r in moved}
        for zone_name in dict.fromkeys(("UTC", self.period.timezone)):
            other = day_end(day, zone_name, None)
            low, high = sorted((edge, other))
            if other != edge and {r["fill_id"] for r in rows if low <= r["time"] < high} == wanted:
                return f", as a statement day ending at midnight {zone_name} would count it"
        return ""

    def _local(self, moment: pd.Timestamp) -> str:
        local = moment.tz_convert(self.period.timezone)
        return f"{local:%Y-%m-%d %H:%M:%S} {self.period.timezone}"

    def _methods(self, case: KeyCase) -> Iterator[Trial]:
        base = self.base[case.key]
        for method in METHODS:
            if method == case.method:
                continue
            trial = case.figures(method=method)
            changed = _changed_items(base.gross, trial.gross)
            yield Trial(
                "relief_method",
                f"the statement relieves lots by {_METHOD_WORDS[method]} ({method}): that method "
                "reproduces it",
                tuple(Involved(item, "closing") for item in changed),
                {case.key: trial},
            )

    def _conventions(self, case: KeyCase) -> Iterator[Trial]:
        base = self.base[case.key]
        for convention in COMMISSION_CONVENTIONS:
            if convention == case.convention:
                continue
            trial = case.figures(convention=convention)
            changed = _changed_items(base.commission, trial.commission)
            changed += _changed_items(base.financing, trial.financing)
            yield Trial(
                "commission_convention",
                f"the statement realizes commissions and financing {convention} "
                f"(we use {case.convention})",
                tuple(Involved(item, "charged") for item in dict.fromkeys(changed)),
                {case.key: trial},
            )

    def _missing_fill(self, case: KeyCase) -> Iterator[Trial]:
        """A fill the statement has and we lack, sized by the open quantity difference."""
        quantity = self._broken_line(case.key, "open_quantity")
        if quantity is None or quantity.theirs is None:
            return
        ours = self.values[quantity.number]
        assert ours is not None
        size = quantity.theirs - ours
        side = "buy" if size > 0 else "sell"
        fee = self._missing_fee(case, abs(size), side)
        price, solved = self._missing_price(case, abs(size), side, fee)
        text = (
            f"the statement holds {self._show(quantity, quantity.theirs)} where we hold "
            f"{self._show(quantity, ours)}: a {side} of {abs(size).normalize():,f} at "
            f"{price.normalize():f}"
        )
        if fee:
            text += f" with commission {fee:.{currency_places(self.base[case.key].currency)}f}"
        text += " near the period end, not in our fills"
        if not solved:
            text += " (no price in the period's range explains the P&L as well)"
        extra = self._synthetic(case, abs(size), side, price, fee)
        yield Trial("missing_fill", text, (), {case.key: case.figures(extra=[extra])})

    def _broken_line(self, key: Key, measure: str) -> LineSpec | None:
        return next(
            (
                s
                for s in self.by_key.get(key, [])
                if s.measure == measure and s.number in self.broken and len(s.keys) == 1
            ),
            None,
        )

    def _missing_fee(self, case: KeyCase, size: Decimal, side: str) -> Decimal:
        """The missing fill's commission that explains the key's commission break, if any.

        Our commission is affine in it (at close, only the share of the fill that closes lots is
        realized), so two replays give the fee; a fee below zero explains nothing."""
        line = self._broken_line(case.key, "commission")
        base = self.base[case.key]
        if line is None or line.theirs is None or base.currency != line.currency:
            return ZERO
        price = case.fills_before_end()[-1]["price"] if case.fills_before_end() else ZERO
        zero, one = (
            Fraction(
                case.figures(extra=[self._synthetic(case, size, side, price, Decimal(v))]).total(
                    "commission"
                )
            )
            for v in (0, 1)
        )
        if one == zero:
            return ZERO
        gap = Fraction(line.theirs) - Fraction(self.values[line.number] or 0)
        fee = round_fraction(
            (Fraction(base.total("commission")) + gap - zero) / (one - zero),
            currency_places(base.currency),
        )
        return max(ZERO, fee)

    def _synthetic(
        self, case: KeyCase, size: Decimal, side: str, price: Decimal, fee: Decimal
    ) -> Row:
        template = case.events.fills[-1] if case.events.fills else {}
        return {
            **template,
            "fill_id": "(missing)",
            "side": side,
            "quantity": size,
            "price": price,
            "commission": fee,
            "time": case.bounds.end - pd.Timedelta(1, "us"),
            "_order": 10**12,
            "source_row": None,
        }

    def _missing_price(
        self, case: KeyCase, size: Decimal, side: str, fee: Decimal
    ) -> tuple[Decimal, bool]:
        """The price at which the missing fill explains the realized P&L (or average) gap."""
        in_period = [r["price"] for r in case.fills_before_end() if self.period.contains(r["time"])]
        prices = in_period or [r["price"] for r in case.events.fills] or [ZERO]
        places = max(max(0, -int(p.as_tuple().exponent)) for p in prices)
        low, high = min(prices), max(prices)
        at = [
            case.figures(extra=[self._synthetic(case, size, side, Decimal(v), fee)]) for v in (0, 1)
        ]
        for spec in self.by_key.get(case.key, []):
            solved = self._solve(spec, at, places)
            if solved is not None and low <= solved <= high:
                return solved, True
        return prices[-1], False

    def _solve(self, spec: LineSpec, at: list[Figures], places: int) -> Decimal | None:
        """Our figure is affine in the missing fill's price: solve it for the statement's."""
        if spec.number not in self.broken or spec.theirs is None or len(spec.keys) != 1:
            return None
        base = self.base[spec.keys[0]]
        if base.currency != spec.currency:
            return None
        if spec.measure == "realized_pnl":
            gap = Fraction(spec.theirs) - Fraction(self.values[spec.number] or 0)
            target = Fraction(base.total("gross")) + gap
            zero, one = Fraction(at[0].total("gross")), Fraction(at[1].total("gross"))
        elif spec.measure == "average_price" and at[0].quantity:
            scale = Fraction(abs(at[0].quantity)) * Fraction(at[0].multiplier)
            target = Fraction(spec.theirs) * scale
            zero, one = Fraction(at[0].cost), Fraction(at[1].cost)
        else:
            return None
        if one == zero:
            return None
        return round_fraction((target - zero) / (one - zero), places)

    def _removable(self, case: KeyCase) -> list[Row]:
        """Fills a removal trial may leave out, the latest first (statements lag, not lead)."""
        return sorted(case.fills_before_end(), key=lambda r: (r["time"], r["_order"]))[::-1]

    def _single_removals(self, case: KeyCase) -> Iterator[Trial]:
        if self._trades_agree(case.key):
            return
        rows = [r for r in self._removable(case) if self._quantity_allows(case.key, -_signed(r))]
        limit = self.limits.max_single_removals
        if len(rows) > limit:
            self._note(
                case.key, f"search over single fills cut short after {limit:,} of {len(rows):,}"
            )
        for row in rows[:limit]:
            yield self._without(
                case,
                "removed_fill",
                f"fill {row['fill_id']} (row {row['source_row']}), {row['side']} "
                f"{row['quantity'].normalize():,f} at {row['price'].normalize():f} on "
                f"{utc_text(row['time'])}, is not on the statement; without it",
                (Involved(row["fill_id"], "removed"),),
            )

    def _pair_removals(self, case: KeyCase) -> Iterator[Trial]:
        """The last resort, for breaks of the key that nothing simpler explains."""
        broken = [s.number for s in self.by_key.get(case.key, []) if s.number in self.broken]
        if self._trades_agree(case.key) or all(self.found.get(n) for n in broken):
            return
        rows = self._removable(case)
        pairs = [
            (one, two)
            for one, two in combinations(rows, 2)
            if self._quantity_allows(case.key, -_signed(one) - _signed(two))
        ]
        pairs.sort(key=lambda pair: abs(pair[0]["time"] - pair[1]["time"]))  # near ones first
        limit = self.limits.max_pair_removals
        if len(pairs) > limit:
            self._note(
                case.key,
                f"search over pairs of fills cut short after {limit:,} of {len(pairs):,} pairs "
                "(the nearest in time first)",
            )
        for one, two in pairs[:limit]:
            yield self._without(
                case,
                "removed_fills",
                f"fills {one['fill_id']} (row {one['source_row']}) and {two['fill_id']} (row "
                f"{two['source_row']}) are not on the statement; without them",
                (Involved(one["fill_id"], "removed"), Involved(two["fill_id"], "removed")),
            )


def _signed(row: Row) -> Decimal:
    quantity: Decimal = row["quantity"]
    return quantity if row["side"] == "buy" else -quantity


def _changed_items(before: Sequence[object], after: Sequence[object]) -> list[str]:
    def totals(parts: Sequence[object]) -> dict[str, Decimal]:
        sums: dict[str, Decimal] = {}
        for part in parts:
            sums[part.item] = sums.get(part.item, ZERO) + part.amount  # type: ignore[attr-defined]
        return sums

    one, two = totals(before), totals(after)
    return [
        item for item in dict.fromkeys([*one, *two]) if one.get(item, ZERO) != two.get(item, ZERO)
    ]


def _target(spec: LineSpec) -> Decimal | None:
    """What the statement says; a line it lacks counts as zero (except an average price)."""
    if spec.theirs is not None or spec.measure == "average_price":
        return spec.theirs
    return ZERO


def _unique(specs: Iterator[LineSpec]) -> list[LineSpec]:
    return list({s.number: s for s in specs}.values())


def _distinct(causes: list[Cause]) -> list[Cause]:
    """Drop a cause that repeats a better-ranked one word for word."""
    seen: set[tuple[str, str]] = set()
    kept = []
    for cause in causes:
        if (cause.kind, cause.explanation) not in seen:
            seen.add((cause.kind, cause.explanation))
            kept.append(cause)
    return kept


def _duration(delta: pd.Timedelta | timedelta) -> str:
    """``0.412 s``, ``45 s``, ``1 h 30 min``, ``2 d 3 h``: how far apart two instants are."""
    milliseconds = pd.Timedelta(delta).value // 10**6
    if milliseconds < 60_000:
        return f"{Decimal(milliseconds).scaleb(-3).normalize():f} s"
    minutes = milliseconds // 60_000
    hours, minutes = divmod(minutes, 60)
    days, hours = divmod(hours, 24)
    parts = [(days, "d"), (hours, "h"), (minutes, "min")]
    return " ".join(f"{n} {unit}" for n, unit in parts if n)


#: Kinds where fewer fills make a simpler cause (the others change a rule, not fills).
_COUNTED = ("duplicate_fill", "cut_off", "removed_fill", "removed_fills")

_BASIS_WORDS = {
    "gross": "before commissions",
    "net": "after commissions",
    "net+financing": "after commissions and with financing included",
}
_METHOD_WORDS = {
    "fifo": "first in, first out",
    "lifo": "last in, first out",
    "hifo": "highest cost first",
    "average": "average cost",
}
