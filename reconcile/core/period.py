"""Statement periods: the instants a month, a day or a range of days covers in a time zone.

A statement day ends at its cut-off, a local clock time in the period's IANA zone: midnight by
default, or e.g. 17:00 in New York. The period of the days ``first`` to ``last`` runs from the
end of the day before ``first`` (included) to the end of ``last`` (excluded), ``[start, end)``:
an event exactly at a cut-off belongs to the next day.

With ``--cutoff 17:00`` in America/New_York, November 2026 runs from 31 October 17:00 EDT
(21:00 UTC) to 30 November 17:00 EST (22:00 UTC): 30 days and one hour, because the clocks went
back on 1 November. A cut-off the zone skips that day (inside a spring-forward gap) is read with
the offset in force before the change, and one the zone repeats (inside a fall-back overlap) is
its first occurrence: Python's ``fold=0`` (PEP 495).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta

import pandas as pd

from reconcile.errors import ConfigError
from reconcile.timezones import zone

_MONTH = re.compile(r"^(\d{4})-(\d{2})$")
_CUTOFF = re.compile(r"^(\d{1,2}):(\d{2})$")


@dataclass(frozen=True)
class Period:
    """A statement period: its days, where and when its days end, and its UTC bounds."""

    first_day: date
    last_day: date
    timezone: str
    cutoff: time | None
    start: pd.Timestamp  # UTC, included
    end: pd.Timestamp  # UTC, excluded
    label: str

    def contains(self, moment: pd.Timestamp) -> bool:
        return bool(self.start <= moment < self.end)

    def describe(self) -> str:
        """``2026-11 in America/New_York, days ending 17:00: 2026-10-31T21:00Z to ...``."""
        ends = f"days ending {self.cutoff:%H:%M}" if self.cutoff else "days ending at midnight"
        return (
            f"{self.label} in {self.timezone}, {ends}: from {utc_text(self.start)} "
            f"(included) to {utc_text(self.end)} (excluded)"
        )


def utc_text(moment: pd.Timestamp) -> str:
    """``2026-11-30T22:00:00Z``, with as many decimals of a second as the instant has."""
    moment = moment.tz_convert("UTC")
    fraction = moment.microsecond * 1000 + moment.nanosecond
    if not fraction:
        text: str = moment.isoformat(timespec="seconds")
    elif fraction % 10**6 == 0:
        text = moment.isoformat(timespec="milliseconds")
    else:
        text = moment.isoformat()
    return text.replace("+00:00", "Z")


def make_period(
    period: str | None = None,
    *,
    first: str | date | None = None,
    last: str | date | None = None,
    timezone: str = "UTC",
    cutoff: str | time | None = None,
) -> Period:
    """A month (``2026-11``), a day (``2026-11-30``) or the days ``first`` to ``last`` inclusive."""
    if period is not None and (first is not None or last is not None):
        raise ConfigError("period: give a period or first and last days, not both")
    if period is not None:
        first_day, last_day, label = _parse_period(period)
    elif first is not None and last is not None:
        first_day, last_day = _day(first, "from"), _day(last, "to")
        if last_day < first_day:
            raise ConfigError(f"period: the last day {last_day} is before the first {first_day}")
        label = str(first_day) if first_day == last_day else f"{first_day} to {last_day}"
    else:
        raise ConfigError("period: expected a month YYYY-MM, a day YYYY-MM-DD or both from and to")
    clock = parse_cutoff(cutoff)
    start = day_end(first_day - timedelta(days=1), timezone, clock)
    end = day_end(last_day, timezone, clock)
    return Period(first_day, last_day, zone(timezone).key, clock, start, end, label)


def day_end(day: date, timezone: str, cutoff: time | None) -> pd.Timestamp:
    """The UTC instant the statement day ``day`` ends: its cut-off, or the midnight after it."""
    if cutoff is None:
        day, cutoff = day + timedelta(days=1), time(0, 0)
    local = datetime.combine(day, cutoff, tzinfo=zone(timezone))  # fold=0, see the module doc
    return pd.Timestamp(local.astimezone(UTC))


def parse_cutoff(cutoff: str | time | None) -> time | None:
    """``17:00`` -> 17:00; none, ``00:00`` and ``24:00`` all mean the day ends at midnight."""
    if cutoff is None or isinstance(cutoff, time):
        return None if cutoff == time(0, 0) else cutoff
    found = _CUTOFF.match(cutoff.strip())
    hours, minutes = (int(found[1]), int(found[2])) if found else (99, 99)
    if (hours, minutes) == (24, 0):
        return None
    if hours > 23 or minutes > 59:
        raise ConfigError(f"cutoff: expected a local time HH:MM such as 17:00, found {cutoff!r}")
    return None if (hours, minutes) == (0, 0) else time(hours, minutes)


def _parse_period(text: str) -> tuple[date, date, str]:
    expected = (
        f"period: expected a month YYYY-MM (e.g. 2026-11) or a day YYYY-MM-DD, found {text!r}"
    )
    month = _MONTH.match(text.strip())
    if month:
        year, number = int(month[1]), int(month[2])
        if not 1 <= number <= 12:
            raise ConfigError(expected)
        first = date(year, number, 1)
        following = date(year + number // 12, number % 12 + 1, 1)
        return first, following - timedelta(days=1), f"{year:04d}-{number:02d}"
    try:
        day = date.fromisoformat(text.strip())
    except ValueError:
        raise ConfigError(expected) from None
    return day, day, str(day)


def _day(value: str | date, option: str) -> date:
    if isinstance(value, date):
        return value
    try:
        return date.fromisoformat(value.strip())
    except ValueError:
        raise ConfigError(f"{option}: expected a date YYYY-MM-DD, found {value!r}") from None
