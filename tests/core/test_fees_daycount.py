"""Day counts and nights of overnight financing, against their published definitions.

ISDA 2006 Definitions, section 4.16 (quoted from memory; the text was not re-opened here):
(b) "Actual/Actual (ISDA)": the actual number of days in the period falling in a leap year divided
by 366 plus the number falling in a non-leap year divided by 365; (d) "Actual/365 (Fixed)": the
actual number of days divided by 365; (e) "Actual/360": the actual number of days divided by 360.
The worked values below are computed by hand from those definitions.
"""

from __future__ import annotations

from datetime import date, timedelta
from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from reconcile.core.fees.daycount import nights_charged, year_fraction
from reconcile.money import round_fraction

WEDNESDAY, FRIDAY = 2, 4


def test_act_360_divides_actual_days_by_360() -> None:
    # ISDA 2006, 4.16(e). 15 Jan 2026 to 15 Jul 2026 is 181 actual days; 1,000,000 at 5%:
    # 1,000,000 x 0.05 x 181 / 360 = 25,138.888... -> 25,138.89.
    days = (date(2026, 7, 15) - date(2026, 1, 15)).days
    assert days == 181
    fraction = year_fraction("ACT/360", date(2026, 1, 15), days)
    assert fraction == Fraction(181, 360)
    assert str(round_fraction(1_000_000 * Fraction(5, 100) * fraction, 2)) == "25138.89"


def test_act_365_fixed_divides_by_365_even_in_a_leap_year() -> None:
    # ISDA 2006, 4.16(d): 365 whatever the year. 1 Feb 2028 to 1 Mar 2028 spans 29 Feb: 29 days,
    # 29/365 (Actual/Actual (ISDA) would give 29/366). 1,000,000 at 5% over 181 days of 2026:
    # 1,000,000 x 0.05 x 181 / 365 = 24,794.5205... -> 24,794.52.
    assert year_fraction("ACT/365F", date(2028, 2, 1), 29) == Fraction(29, 365)
    interest = 1_000_000 * Fraction(5, 100) * year_fraction("ACT/365F", date(2026, 1, 15), 181)
    assert str(round_fraction(interest, 2)) == "24794.52"


def test_act_act_isda_splits_nights_at_the_year_end() -> None:
    # ISDA 2006, 4.16(b): a weekend roll from Fri 31 Dec 2027 (non-leap year) covers the nights of
    # 31 Dec 2027, 1 and 2 Jan 2028 (a leap year): 1/365 + 2/366.
    assert year_fraction("ACT/ACT-ISDA", date(2027, 12, 31), 3) == Fraction(1, 365) + Fraction(
        2, 366
    )
    assert year_fraction("ACT/ACT-ISDA", date(2026, 3, 2), 1) == Fraction(1, 365)


@pytest.mark.parametrize(
    ("day", "nights"),
    [
        (date(2026, 11, 2), 1),  # Monday
        (date(2026, 11, 4), 1),  # Wednesday
        (date(2026, 11, 6), 3),  # Friday carries Saturday and Sunday
        (date(2026, 11, 7), 0),  # Saturday: no charge of its own
        (date(2026, 11, 8), 0),  # Sunday
    ],
)
def test_friday_carries_the_weekend(day: date, nights: int) -> None:
    # Common practice for cash equities and CFDs: the Friday charge covers three nights.
    assert nights_charged(day, FRIDAY, frozenset()) == nights


@pytest.mark.parametrize(
    ("day", "nights"),
    [(date(2026, 11, 3), 1), (date(2026, 11, 4), 3), (date(2026, 11, 6), 1)],
)
def test_spot_fx_charges_three_nights_on_wednesday(day: date, nights: int) -> None:
    # Common practice for spot FX settled T+2: Wednesday's roll moves value from Friday to Monday.
    assert nights_charged(day, WEDNESDAY, frozenset()) == nights


def test_a_holiday_is_charged_on_the_business_day_before_it() -> None:
    # Common practice: Thursday 26 Nov 2026 a holiday; Wednesday carries its night, Friday three.
    holidays = frozenset({date(2026, 11, 26)})
    assert nights_charged(date(2026, 11, 25), FRIDAY, holidays) == 2
    assert nights_charged(date(2026, 11, 26), FRIDAY, holidays) == 0
    assert nights_charged(date(2026, 11, 27), FRIDAY, holidays) == 3


def test_a_holiday_on_the_triple_day_moves_all_three_nights() -> None:
    # Derived: a Friday holiday under a Friday triple puts four nights on Thursday; a Monday
    # holiday adds its night to the Friday before (four nights).
    friday = frozenset({date(2026, 11, 27)})
    assert nights_charged(date(2026, 11, 26), FRIDAY, friday) == 4
    monday = frozenset({date(2026, 11, 30)})
    assert nights_charged(date(2026, 11, 27), FRIDAY, monday) == 4


@given(
    triple=st.sampled_from([WEDNESDAY, FRIDAY]),
    holidays=st.sets(st.integers(7, 27), max_size=6),
)
def test_every_week_carries_seven_nights(triple: int, holidays: set[int]) -> None:
    # Derived: however holidays fall inside the window, every night is charged exactly once.
    start = date(2026, 11, 2)  # a Monday; holidays fall in the middle weeks only
    days = [start + timedelta(days=n) for n in range(35)]
    off = frozenset(start + timedelta(days=n) for n in holidays)
    assert sum(nights_charged(day, triple, off) for day in days) == 35
