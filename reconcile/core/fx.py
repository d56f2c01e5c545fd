"""FX for the tie-out: which rate is in force at an instant, and exactly converted amounts.

A rate row says one unit of ``base`` is worth ``rate`` units of ``quote`` from its ``time`` on.
The rate in force at an instant is the pair's latest quote at or before that instant (a quote at
exactly that instant is in force), in either direction: to turn EUR into USD a EUR/USD quote is
multiplied, a USD/EUR quote divided; when both directions have a quote at the same latest time,
the direct one wins. A converted amount is exact until it is rounded once to the target
currency's minor unit.
"""

from __future__ import annotations

import bisect
from collections.abc import Callable
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction

import pandas as pd

from reconcile import schema
from reconcile.errors import ConfigError
from reconcile.money import Rounding, currency_places, round_fraction


@dataclass(frozen=True)
class Quote:
    time: pd.Timestamp
    base: str
    quote: str
    rate: Decimal
    source: str
    row: int

    @property
    def pair(self) -> str:
        return f"{self.base}/{self.quote}"

    def factor(self, from_currency: str) -> Fraction:
        """What one unit of ``from_currency`` is worth in the other currency of the pair."""
        rate = Fraction(self.rate)
        return rate if self.base == from_currency else 1 / rate


#: Picks the quote to convert ``from -> to`` at an instant, or None when there is none.
Picker = Callable[[str, str, pd.Timestamp], Quote | None]


@dataclass(frozen=True)
class RateChoice:
    """A rule for picking rates, with the words that explain it."""

    name: str
    describe: str
    pick: Picker


class RateBook:
    """Canonical rates indexed by pair and source, for as-of look-ups."""

    def __init__(self, rates: pd.DataFrame, source: str | None = None, label: str = "rates"):
        self.label = label
        self._series: dict[tuple[str, str, str], tuple[list[int], list[Quote]]] = {}
        ordered = rates.sort_values("time", kind="stable")
        for row in ordered.to_dict(orient="records"):
            quote = Quote(
                row["time"],
                row["base"],
                row["quote"],
                row["rate"],
                row["source"],
                int(row[schema.SOURCE_ROW]),
            )
            times, quotes = self._series.setdefault(
                (quote.base, quote.quote, quote.source), ([], [])
            )
            times.append(quote.time.value)
            quotes.append(quote)
        self.sources = sorted({key[2] for key in self._series})
        self.source = self._primary(source)

    def _primary(self, chosen: str | None) -> str:
        if chosen is not None:
            if chosen not in self.sources:
                raise ConfigError(
                    f"fx source: expected one of the sources in {self.label} "
                    f"({', '.join(self.sources) or 'none'}), found {chosen!r}"
                )
            return chosen
        if len(self.sources) > 1:
            raise ConfigError(
                f"{self.label} holds rates from several sources ({', '.join(self.sources)}): "
                "choose one with [fx] source in the config file"
            )
        return self.sources[0] if self.sources else ""

    def in_force(
        self, from_currency: str, to_currency: str, at: pd.Timestamp, source: str | None = None
    ) -> Quote | None:
        """The latest quote at or before ``at``, direct preferred at equal times."""
        found = [
            self._before(key, at.value, inclusive=True)
            for key in self._keys(from_currency, to_currency, source)
        ]
        return _latest(found)

    def preceding(self, from_currency: str, to_currency: str, at: pd.Timestamp) -> Quote | None:
        """The quote before the one in force at ``at`` (a rate one step stale)."""
        current = self.in_force(from_currency, to_currency, at)
        if current is None:
            return None
        return _latest(
            [
                self._before(key, current.time.value, inclusive=False)
                for key in self._keys(from_currency, to_currency, None)
            ]
        )

    def following(self, from_currency: str, to_currency: str, at: pd.Timestamp) -> Quote | None:
        """The first quote after ``at`` (a rate taken a step late)."""
        found = []
        for key in self._keys(from_currency, to_currency, None):
            times, quotes = self._series[key]
            index = bisect.bisect_right(times, at.value)
            found.append(quotes[index] if index < len(quotes) else None)
        candidates = [q for q in found if q is not None]
        return min(candidates, key=lambda q: q.time) if candidates else None

    def _keys(
        self, from_currency: str, to_currency: str, source: str | None
    ) -> list[tuple[str, str, str]]:
        source = self.source if source is None else source
        keys = [(from_currency, to_currency, source), (to_currency, from_currency, source)]
        return [key for key in keys if key in self._series]

    def _before(self, key: tuple[str, str, str], at: int, *, inclusive: bool) -> Quote | None:
        times, quotes = self._series[key]
        index = (bisect.bisect_right if inclusive else bisect.bisect_left)(times, at) - 1
        return quotes[index] if index >= 0 else None

    def choices(self, period_end: pd.Timestamp) -> list[RateChoice]:
        """Other ways a statement may have picked its rates, tried when a converted line breaks."""
        last = period_end - pd.Timedelta(1, "ns")
        others = [
            RateChoice(
                "previous",
                "the quote before the one in force at each close (a rate a step stale)",
                self.preceding,
            ),
            RateChoice(
                "next",
                "the first quote after each close (a rate taken a step late)",
                self.following,
            ),
            RateChoice(
                "period end",
                "the rate in force at the period end for every line",
                lambda f, t, _at: self.in_force(f, t, last),
            ),
        ]
        others += [self._other_source(s) for s in self.sources if s != self.source]
        return others

    def _other_source(self, source: str) -> RateChoice:
        def pick(from_currency: str, to_currency: str, at: pd.Timestamp) -> Quote | None:
            return self.in_force(from_currency, to_currency, at, source)

        return RateChoice(
            f"source {source}", f"rates from source {source!r} (in force at each close)", pick
        )


def _latest(found: list[Quote | None]) -> Quote | None:
    present = [q for q in found if q is not None]
    if not present:
        return None
    return max(present, key=lambda q: q.time)  # max keeps the first (direct) at equal times


def convert(
    amount: Decimal, from_currency: str, to_currency: str, quote: Quote, rounding: Rounding
) -> Decimal:
    """``amount`` in ``to_currency``, rounded once to its minor unit."""
    exact = Fraction(amount) * quote.factor(from_currency)
    return round_fraction(exact, currency_places(to_currency), rounding)
