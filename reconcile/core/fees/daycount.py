"""Nights and day counts for overnight financing, exactly (as rationals, never floats).

Day counts follow the ISDA 2006 Definitions, section 4.16: Actual/360 divides the actual number of
days by 360; Actual/365 (Fixed) by 365 whatever the year; Actual/Actual (ISDA) divides the days
falling in a leap year by 366 and the others by 365. A bare "Actual/365" is ambiguous (ISDA reads
it as Actual/Actual), so schedules must say which they mean.

Which nights a day's charge covers is common practice rather than a published rule: every
business day carries its own night, the configured weekday carries three (the weekend: Friday for
most cash products, Wednesday for spot FX settled T+2), and the nights of a holiday are charged on
the business day before it. A week always carries seven nights in all.
"""

from __future__ import annotations

import calendar
from collections.abc import Collection
from datetime import date, timedelta
from fractions import Fraction

from reconcile.core.fees.rules import DayCount

WEEKDAYS = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
SATURDAY = 5
ONE_DAY = timedelta(days=1)


def year_fraction(day_count: DayCount, first_night: date, nights: int) -> Fraction:
    """The day-count fraction of ``nights`` consecutive nights starting on ``first_night``."""
    if day_count == "ACT/360":
        return Fraction(nights, 360)
    if day_count == "ACT/365F":
        return Fraction(nights, 365)
    return sum(
        (
            Fraction(1, 366 if calendar.isleap((first_night + k * ONE_DAY).year) else 365)
            for k in range(nights)
        ),
        Fraction(0),
    )


def is_business_day(day: date, holidays: Collection[date]) -> bool:
    return day.weekday() < SATURDAY and day not in holidays


def nights_charged(day: date, triple_weekday: int, holidays: Collection[date]) -> int:
    """Nights the charge booked for ``day`` covers (0 on a weekend or a holiday)."""
    if not is_business_day(day, holidays):
        return 0
    nights = _weight(day, triple_weekday)
    following = day + ONE_DAY
    while not is_business_day(following, holidays):
        if following in holidays and following.weekday() < SATURDAY:
            nights += _weight(following, triple_weekday)
        following += ONE_DAY
    return nights


def _weight(day: date, triple_weekday: int) -> int:
    return 3 if day.weekday() == triple_weekday else 1
