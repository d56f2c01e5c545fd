"""Statistics over round trips (or closed lots): how the trading did, per group and currency.

A *trade* is a round trip (one position episode, flat back to flat) or, with
``over="closed-lots"``, one closed lot. Trades are grouped by the ``by`` keys and always by
currency too: amounts in different currencies are never added. Within a group trades are taken in
the order they closed (ties by the order of the input table). The definitions, with their sources,
are in docs/statistics.md; in short:

- A trade is a win, a loss or a breakeven by the sign of its net P&L as reported (rounded to the
  minor unit); ``zero_pnl`` says whether a zero counts as a win, a loss or its own class
  (``breakeven``, the default). Sums and averages use the exact amounts and are rounded once.
- ``gross_profit`` and ``gross_loss`` are the sums of the net P&L of the winning and of the losing
  trades (a loss is negative); profit factor = gross profit / |gross loss|, blank when there is no
  loss; payoff = average win / |average loss|; expectancy = win rate x average win + loss rate x
  average loss (the average loss is negative), where the rates are shares of all trades.
- Drawdowns are measured on cumulative net P&L, which starts at zero at the group's first trade
  and moves at each instant a trade closes: from the running peak (``max_drawdown``) and from zero
  (``drawdown_from_zero``: how far it fell below where it started), each with start, trough and
  recovery, the first episode winning a tie.
- Fee drag = (commission - financing) / |gross P&L before costs| (financing is signed: a charge is
  negative, so it adds to the drag).
- Ratios are exact decimals rounded half-even to :data:`RATIO_PLACES` places.
- Months and weekdays are those of the close, in ``timezone``.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from functools import cached_property
from typing import Any, Generic, TypeVar

import pandas as pd

from reconcile import schema
from reconcile.core.book import Book
from reconcile.core.frames import build_frame
from reconcile.core.matching import check_choice
from reconcile.errors import ConfigError
from reconcile.money import (
    ZERO,
    Rounding,
    currency_places,
    exact_arithmetic,
    round_fraction,
    round_money,
)
from reconcile.timezones import zone

BY_KEYS = ("account", "instrument", "month", "side", "weekday")
OVER = ("round-trips", "closed-lots")
ZERO_PNL = ("breakeven", "win", "loss")
#: Decimal places of every ratio (win rate, payoff, profit factor, fee drag).
RATIO_PLACES = schema.RATIO_PLACES
WEEKDAYS = ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday")
MEASURES = ("largest win", "largest loss", "longest holding", "shortest holding")
NOT_RECOVERED = "not recovered"
RECOVERED = "recovered"
NO_DRAWDOWN = "no drawdown"

T = TypeVar("T")


@dataclass(frozen=True)
class Trade:
    """One round trip or closed lot, with its exact amounts and the net as reported."""

    ref: str
    order: int
    account: str
    instrument: str
    currency: str
    side: str
    open_time: pd.Timestamp
    close_time: pd.Timestamp
    net: Decimal
    reported_net: Decimal
    gross: Decimal
    commission: Decimal
    financing: Decimal
    holding: pd.Timedelta = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "holding", self.close_time - self.open_time)


@dataclass(frozen=True)
class Drawdown(Generic[T]):
    """The deepest fall of a cumulative series below a reference level.

    ``peak`` is the reference (the running peak, or zero), ``start`` when the series last stood at
    it before the fall, ``trough`` where the fall was deepest and ``recovery`` when the series
    first got back to the reference afterwards (None: not recovered). With no fall at all,
    ``depth`` is zero and the times are None.
    """

    depth: Decimal
    peak: Decimal
    start: T | None
    trough: T | None
    recovery: T | None

    @property
    def state(self) -> str:
        if self.depth == 0:
            return NO_DRAWDOWN
        return RECOVERED if self.recovery is not None else NOT_RECOVERED


@dataclass(frozen=True)
class Stats:
    """The statistics of one grouping: summary, extremes (every tie) and the cumulative series.

    ``summary`` has one row per group and currency in the columns ``by`` + ``currency`` +
    :data:`reconcile.schema.STATISTICS`; ``extremes`` lists every trade tied for the largest win,
    largest loss, longest and shortest holding; ``cumulative`` holds cumulative net P&L, its
    running peak and drawdown at each instant a trade closed, after a starting row at zero.
    """

    summary: pd.DataFrame
    extremes: pd.DataFrame
    cumulative: pd.DataFrame
    by: tuple[str, ...]
    over: str
    zero_pnl: str
    timezone: str
    rounding: Rounding
    ratio_places: int = RATIO_PLACES

    def tables(self) -> dict[str, pd.DataFrame]:
        """The tables by name: statistics, extremes, cumulative_pnl (+ ``_by_<keys>``)."""
        suffix = "".join(f"_by_{key}" if n == 0 else f"_{key}" for n, key in enumerate(self.by))
        return {
            f"statistics{suffix}": self.summary,
            f"extremes{suffix}": self.extremes,
            f"cumulative_pnl{suffix}": self.cumulative,
        }

    def settings(self) -> dict[str, Any]:
        return {
            "by": list(self.by),
            "over": self.over,
            "zero_pnl": self.zero_pnl,
            "timezone": self.timezone,
            "ratio_places": self.ratio_places,
            "rounding": self.rounding,
        }


@exact_arithmetic
def stats(
    book: Book,
    by: str | Sequence[str] = (),
    *,
    over: str = "round-trips",
    zero_pnl: str = "breakeven",
    timezone: str = "UTC",
) -> Stats:
    """Statistics of the book's round trips (or closed lots), per ``by`` group and currency.

    ``by`` is any of ``account``, ``instrument``, ``month``, ``side`` (long or short) and
    ``weekday``, in the order the group columns should appear; months and weekdays are those of
    the close in ``timezone`` (an IANA name). ``over`` is ``round-trips`` or ``closed-lots``;
    ``zero_pnl`` says how a trade with zero net P&L counts: ``breakeven`` (its own class, the
    default), ``win`` or ``loss``.
    """
    keys = check_by(by)
    check_choice("over", over, OVER)
    check_choice("zero_pnl", zero_pnl, ZERO_PNL)
    local = zone(timezone)
    groups: dict[tuple[str, ...], list[Trade]] = {}
    for trade in _trades(book, over):
        groups.setdefault(_group_of(trade, keys, local), []).append(trade)
    summary, extremes, cumulative = [], [], []
    for key in sorted(groups, key=_sort_key(keys)):
        labels = dict(zip((*keys, "currency"), key, strict=True))
        trades = sorted(groups[key], key=lambda t: (t.close_time, t.order))
        group = _Group(trades, key[-1], zero_pnl, book.rounding)
        summary.append({**labels, **group.summary()})
        extremes += [{**labels, **row} for row in group.extremes()]
        cumulative += [{**labels, **row} for row in group.cumulative()]
    columns = (*keys, "currency")
    return Stats(
        summary=build_frame(summary, (*columns, *schema.STATISTICS)),
        extremes=build_frame(extremes, (*columns, *(c for c in schema.EXTREMES if c not in keys))),
        cumulative=build_frame(cumulative, (*columns, *schema.CUMULATIVE_PNL)),
        by=keys,
        over=over,
        zero_pnl=zero_pnl,
        timezone=timezone,
        rounding=book.rounding,
    )


def peak_drawdown(points: Sequence[tuple[T, Decimal]], origin: T) -> Drawdown[T]:
    """Largest fall from the running peak of ``points`` (time, cumulative value).

    The series starts at zero at ``origin``, so a first fall below zero counts from there. The
    peak's time is the last time the series stood at the peak before the fall.
    """
    peak, peak_time = ZERO, origin
    best: tuple[Decimal, Decimal, T, T, int] | None = None
    for index, (time, value) in enumerate(points):
        if value >= peak:
            peak, peak_time = value, time
        elif best is None or peak - value > best[0]:
            best = (peak - value, peak, peak_time, time, index)
    return _with_recovery(points, best)


def zero_drawdown(points: Sequence[tuple[T, Decimal]], origin: T) -> Drawdown[T]:
    """Largest fall of ``points`` below zero, where the series starts at ``origin``."""
    level_time = origin
    best: tuple[Decimal, Decimal, T, T, int] | None = None
    for index, (time, value) in enumerate(points):
        if value >= 0:
            level_time = time
        elif best is None or -value > best[0]:
            best = (-value, ZERO, level_time, time, index)
    return _with_recovery(points, best)


def _with_recovery(
    points: Sequence[tuple[T, Decimal]], best: tuple[Decimal, Decimal, T, T, int] | None
) -> Drawdown[T]:
    if best is None:
        return Drawdown(ZERO, ZERO, None, None, None)
    depth, level, start, trough, index = best
    recovery = next((time for time, value in points[index + 1 :] if value >= level), None)
    return Drawdown(depth, level, start, trough, recovery)


def check_by(by: str | Sequence[str]) -> tuple[str, ...]:
    keys = (by,) if isinstance(by, str) else tuple(by)
    for key in keys:
        check_choice("by", key, BY_KEYS)
    repeated = sorted({key for key in keys if keys.count(key) > 1})
    if repeated:
        raise ConfigError(f"by: expected each key at most once, found {', '.join(repeated)} twice")
    return keys


def _sort_key(keys: tuple[str, ...]) -> Callable[[tuple[str, ...]], tuple[Any, ...]]:
    def order(key: tuple[str, ...]) -> tuple[Any, ...]:
        return tuple(
            WEEKDAYS.index(value) if name == "weekday" else value
            for name, value in zip((*keys, "currency"), key, strict=True)
        )

    return order


def _group_of(trade: Trade, keys: tuple[str, ...], local: Any) -> tuple[str, ...]:
    closed = trade.close_time.tz_convert(local)
    values = {
        "account": trade.account,
        "instrument": trade.instrument,
        "side": trade.side,
        "month": f"{closed.year:04d}-{closed.month:02d}",
        "weekday": WEEKDAYS[closed.weekday()],
    }
    return (*(values[key] for key in keys), trade.currency)


def _trades(book: Book, over: str) -> list[Trade]:
    if over == "closed-lots":
        return _lot_trades(book.closed_lots)
    return _trip_trades(book.round_trips, book.closed_lots)


def _columns(frame: pd.DataFrame, names: Iterable[str]) -> list[list[Any]]:
    return [frame[name].tolist() for name in names]


def _trip_trades(trips: pd.DataFrame, lots: pd.DataFrame) -> list[Trade]:
    """Round trips, with the exact gross summed from their closed lots' unrounded gross."""
    exact_gross: dict[int, Decimal] = {}
    for trip_id, gross in zip(
        lots["trip_id"].tolist(), lots["gross_pnl_unrounded"].tolist(), strict=True
    ):
        exact_gross[trip_id] = exact_gross.get(trip_id, ZERO) + gross
    names = (
        "trip_id",
        "account",
        "instrument",
        "currency",
        "direction",
        "open_time",
        "close_time",
        "gross_pnl",
        "commission",
        "financing",
        "net_pnl",
    )
    trades = []
    for order, row in enumerate(zip(*_columns(trips, names), strict=True)):
        trip_id, account, instrument, currency, side, opened, closed = row[:7]
        reported_gross, commission, financing, reported_net = row[7:]
        gross = exact_gross.get(trip_id, reported_gross)
        trades.append(
            Trade(
                str(trip_id),
                order,
                account,
                instrument,
                currency,
                side,
                opened,
                closed,
                gross - commission + financing,
                reported_net,
                gross,
                commission,
                financing,
            )
        )
    return trades


def _lot_trades(lots: pd.DataFrame) -> list[Trade]:
    names = (
        "open_fill_id",
        "close_fill_id",
        "account",
        "instrument",
        "currency",
        "direction",
        "open_time",
        "close_time",
        "gross_pnl_unrounded",
        "commission",
        "financing",
        "net_pnl",
    )
    trades = []
    for order, row in enumerate(zip(*_columns(lots, names), strict=True)):
        opened_by, closed_by, account, instrument, currency, side, opened, closed = row[:8]
        gross, commission, financing, reported_net = row[8:]
        trades.append(
            Trade(
                f"{opened_by}/{closed_by}",
                order,
                account,
                instrument,
                currency,
                side,
                opened,
                closed,
                gross - commission + financing,
                reported_net,
                gross,
                commission,
                financing,
            )
        )
    return trades


class _Group:
    """The trades of one group and currency, in close order."""

    def __init__(
        self, trades: list[Trade], currency: str, zero_pnl: str, rounding: Rounding
    ) -> None:
        self.trades = trades
        self.currency = currency
        self.rounding = rounding
        self.outcomes = [_outcome(t.reported_net, zero_pnl) for t in trades]
        self.wins = [t for t, o in zip(trades, self.outcomes, strict=True) if o > 0]
        self.losses = [t for t, o in zip(trades, self.outcomes, strict=True) if o < 0]

    def money(self, value: Decimal | Fraction | None) -> Decimal | None:
        if value is None:
            return None
        if isinstance(value, Fraction):
            return round_fraction(value, currency_places(self.currency), self.rounding)
        return round_money(value, self.currency, self.rounding)

    def summary(self) -> dict[str, Any]:
        trades = self.trades
        profit = _total(t.net for t in self.wins)
        loss = _total(t.net for t in self.losses)
        row: dict[str, Any] = {
            "trades": len(trades),
            "wins": len(self.wins),
            "losses": len(self.losses),
            "breakevens": len(trades) - len(self.wins) - len(self.losses),
            "net_pnl": self.money(_total(t.net for t in trades)),
            "gross_profit": self.money(profit),
            "gross_loss": self.money(loss),
            "first_trade": min(t.open_time for t in trades),
            "last_trade": max(t.close_time for t in trades),
        }
        row |= self._extreme_columns()
        row |= self._ratios(profit, loss)
        row |= self._drawdowns()
        row |= {
            "longest_win_streak": _longest_run(self.outcomes, 1),
            "longest_loss_streak": _longest_run(self.outcomes, -1),
        }
        return row | self._costs()

    def _ratios(self, profit: Decimal, loss: Decimal) -> dict[str, Any]:
        count, wins, losses = len(self.trades), len(self.wins), len(self.losses)
        average_win = Fraction(profit) / wins if wins else None
        average_loss = Fraction(loss) / losses if losses else None
        expectancy = Fraction(wins, count) * (average_win or 0) + Fraction(losses, count) * (
            average_loss or 0
        )
        payoff = None
        if average_win is not None and average_loss:
            payoff = average_win / abs(average_loss)
        return {
            "average_win": self.money(average_win),
            "average_loss": self.money(average_loss),
            "win_rate": _ratio(Fraction(wins, count)),
            "payoff": _ratio(payoff),
            "profit_factor": _ratio(Fraction(profit) / abs(Fraction(loss)) if loss else None),
            "expectancy": self.money(expectancy),
        }

    def _extreme_columns(self) -> dict[str, Any]:
        row: dict[str, Any] = {}
        for measure, (value, tied) in self._extremes.items():
            name = measure.replace(" ", "_")
            row[name] = value
            row[f"{name}_trades"] = ", ".join(t.ref for t in tied) if tied else None
        return row

    @cached_property
    def _extremes(self) -> dict[str, tuple[Any, list[Trade]]]:
        largest_win = max((t.reported_net for t in self.wins), default=None)
        largest_loss = min((t.reported_net for t in self.losses), default=None)
        longest = max(t.holding for t in self.trades)
        shortest = min(t.holding for t in self.trades)
        return {
            "largest win": (largest_win, [t for t in self.wins if t.reported_net == largest_win]),
            "largest loss": (
                largest_loss,
                [t for t in self.losses if t.reported_net == largest_loss],
            ),
            "longest holding": (longest, [t for t in self.trades if t.holding == longest]),
            "shortest holding": (shortest, [t for t in self.trades if t.holding == shortest]),
        }

    def extremes(self) -> list[dict[str, Any]]:
        rows = []
        for measure, (_value, tied) in self._extremes.items():
            rows += [
                {
                    "measure": measure,
                    "trade": t.ref,
                    "account": t.account,
                    "instrument": t.instrument,
                    "side": t.side,
                    "open_time": t.open_time,
                    "close_time": t.close_time,
                    "net_pnl": t.reported_net,
                    "holding_time": t.holding,
                }
                for t in tied
            ]
        return rows

    @cached_property
    def points(self) -> list[tuple[pd.Timestamp, Decimal, int, Decimal]]:
        """(close instant, cumulative exact net, trades closed then, net of the instant)."""
        points: list[tuple[pd.Timestamp, Decimal, int, Decimal]] = []
        running = ZERO
        for trade in self.trades:
            running += trade.net
            if points and points[-1][0] == trade.close_time:
                _, _, count, pnl = points[-1]
                points[-1] = (trade.close_time, running, count + 1, pnl + trade.net)
            else:
                points.append((trade.close_time, running, 1, trade.net))
        return points

    @cached_property
    def origin(self) -> pd.Timestamp:
        return min(t.open_time for t in self.trades)

    def _drawdowns(self) -> dict[str, Any]:
        series = [(time, value) for time, value, _, _ in self.points]
        row: dict[str, Any] = {}
        for prefix, found in (
            ("max_drawdown", peak_drawdown(series, self.origin)),
            ("drawdown_from_zero", zero_drawdown(series, self.origin)),
        ):
            row[prefix] = self.money(found.depth)
            if prefix == "max_drawdown":
                row["max_drawdown_peak"] = self.money(found.peak) if found.depth else None
            row[f"{prefix}_start"] = found.start
            row[f"{prefix}_trough"] = found.trough
            row[f"{prefix}_recovery"] = found.recovery
            row[f"{prefix}_state"] = found.state
        return row

    def cumulative(self) -> list[dict[str, Any]]:
        rows = [_curve_row(self.origin, 0, ZERO, ZERO, ZERO)]
        peak = ZERO
        for time, value, count, pnl in self.points:
            peak = max(peak, value)
            rows.append(_curve_row(time, count, pnl, value, peak))
        return [{**row, **{k: self.money(row[k]) for k in _CURVE_MONEY}} for row in rows]

    def _costs(self) -> dict[str, Any]:
        gross = _total(t.gross for t in self.trades)
        commission = _total(t.commission for t in self.trades)
        financing = _total(t.financing for t in self.trades)
        size = abs(Fraction(gross))
        return {
            "gross_pnl": self.money(gross),
            "commission": self.money(commission),
            "financing": self.money(financing),
            "commission_drag": _ratio(Fraction(commission) / size if size else None),
            "financing_drag": _ratio(-Fraction(financing) / size if size else None),
            "fee_drag": _ratio(Fraction(commission - financing) / size if size else None),
        }


_CURVE_MONEY = ("pnl", "cumulative_pnl", "peak_pnl", "drawdown")


def _curve_row(
    time: pd.Timestamp, count: int, pnl: Decimal, value: Decimal, peak: Decimal
) -> dict[str, Any]:
    return {
        "time": time,
        "trades": count,
        "pnl": pnl,
        "cumulative_pnl": value,
        "peak_pnl": peak,
        "drawdown": peak - value,
    }


def _outcome(net: Decimal, zero_pnl: str) -> int:
    if net > 0:
        return 1
    if net < 0:
        return -1
    return {"win": 1, "loss": -1, "breakeven": 0}[zero_pnl]


def _longest_run(outcomes: Sequence[int], wanted: int) -> int:
    best = current = 0
    for outcome in outcomes:
        current = current + 1 if outcome == wanted else 0
        best = max(best, current)
    return best


def _total(values: Iterable[Decimal]) -> Decimal:
    return sum(values, ZERO)


def _ratio(value: Fraction | None) -> Decimal | None:
    return None if value is None else round_fraction(value, RATIO_PLACES)
