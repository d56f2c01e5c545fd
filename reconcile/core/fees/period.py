"""The audit period: local dates in the schedule's time zone, both ends included."""

from __future__ import annotations

import calendar
import re
from dataclasses import dataclass
from datetime import date

from reconcile.errors import ConfigError

_MONTH = re.compile(r"^(\d{4})-(\d{2})$")
_RANGE = re.compile(r"^(\d{4}-\d{2}-\d{2})(?:\.\.(\d{4}-\d{2}-\d{2}))?$")
EXPECTED = "YYYY-MM (a month), YYYY-MM-DD (a day) or YYYY-MM-DD..YYYY-MM-DD (both days included)"


@dataclass(frozen=True)
class Period:
    start: date
    end: date

    def __contains__(self, day: object) -> bool:
        return isinstance(day, date) and self.start <= day <= self.end

    def __str__(self) -> str:
        return f"{self.start.isoformat()}..{self.end.isoformat()}"


def parse_period(text: str) -> Period:
    """``2026-11`` is November 2026, ``2026-11-03`` one day, ``2026-10-01..2026-11-15`` a range."""
    text = text.strip()
    try:
        if month := _MONTH.match(text):
            year, number = int(month[1]), int(month[2])
            last = calendar.monthrange(year, number)[1]
            return Period(date(year, number, 1), date(year, number, last))
        if span := _RANGE.match(text):
            start = date.fromisoformat(span[1])
            end = date.fromisoformat(span[2] or span[1])
            if start <= end:
                return Period(start, end)
    except ValueError:
        pass  # not a real calendar date: reported below
    raise ConfigError(f"period: expected {EXPECTED}, found {text!r}")
