"""Statement periods against the published daylight-saving rules, at month ends and cut-offs.

US rule (Energy Policy Act of 2005, 15 U.S.C. 260a): daylight time from 02:00 local on the second
Sunday of March to 02:00 local on the first Sunday of November. EU rule (Directive 2000/84/EC):
summer time from 01:00 UTC on the last Sunday of March to 01:00 UTC on the last Sunday of
October. The Sundays are computed here from those rules, not taken from the time-zone database.
"""

from __future__ import annotations

import calendar
from datetime import date, time, timedelta

import pandas as pd
import pytest

from reconcile.core.period import Period, make_period
from reconcile.errors import ConfigError

HOUR = pd.Timedelta(hours=1)


def _sundays(year: int, month: int) -> list[date]:
    days = calendar.Calendar().itermonthdates(year, month)
    return [d for d in days if d.month == month and d.weekday() == calendar.SUNDAY]


def us_changes(year: int) -> tuple[date, date]:
    """Second Sunday of March and first Sunday of November (the US rule)."""
    return _sundays(year, 3)[1], _sundays(year, 11)[0]


def eu_changes(year: int) -> tuple[date, date]:
    """Last Sunday of March and last Sunday of October (the EU rule)."""
    return _sundays(year, 3)[-1], _sundays(year, 10)[-1]


def _utc(text: str) -> pd.Timestamp:
    return pd.Timestamp(text).tz_convert("UTC")


def _length(period: Period) -> pd.Timedelta:
    return period.end - period.start


def test_the_rules_give_the_2026_dates() -> None:
    # Published rules applied to 2026 (calendar arithmetic above): US 8 March and 1 November,
    # EU 29 March and 25 October.
    assert us_changes(2026) == (date(2026, 3, 8), date(2026, 11, 1))
    assert eu_changes(2026) == (date(2026, 3, 29), date(2026, 10, 25))


def test_a_utc_month_runs_midnight_to_midnight() -> None:
    november = make_period("2026-11")
    assert (november.start, november.end) == (_utc("2026-11-01T00:00Z"), _utc("2026-12-01T00:00Z"))
    assert november.contains(_utc("2026-11-30T23:59:59.999999999Z"))
    assert not november.contains(november.end)


def test_new_york_november_with_a_17_00_cut_off_is_30_days_and_one_hour() -> None:
    # US rule: the clocks go back on 1 November 2026, inside the period, so it gains an hour.
    # 31 October 17:00 EDT (UTC-4) is 21:00 UTC; 30 November 17:00 EST (UTC-5) is 22:00 UTC.
    november = make_period("2026-11", timezone="America/New_York", cutoff="17:00")
    assert november.start == _utc("2026-10-31T21:00Z")
    assert november.end == _utc("2026-11-30T22:00Z")
    assert _length(november) == pd.Timedelta(days=30) + HOUR


def test_new_york_march_loses_the_hour_the_clocks_spring_forward() -> None:
    # US rule: second Sunday of March 2026 is 8 March. 28 February 17:00 EST is 22:00 UTC,
    # 31 March 17:00 EDT is 21:00 UTC.
    march = make_period("2026-03", timezone="America/New_York", cutoff="17:00")
    assert (march.start, march.end) == (_utc("2026-02-28T22:00Z"), _utc("2026-03-31T21:00Z"))
    assert _length(march) == pd.Timedelta(days=31) - HOUR


def test_the_october_november_boundary_in_new_york_falls_before_the_change() -> None:
    # US rule: the change is at 02:00 local on 1 November 2026, two hours after midnight, so
    # October ends at midnight EDT (04:00 UTC) and the repeated hour belongs to November.
    october = make_period("2026-10", timezone="America/New_York")
    november = make_period("2026-11", timezone="America/New_York")
    assert october.end == november.start == _utc("2026-11-01T04:00Z")
    assert november.contains(_utc("2026-11-01T06:30Z"))  # 01:30 EST, the second 01:30


@pytest.mark.parametrize(
    ("month", "start", "end", "change"),
    [
        # EU rule: last Sunday of October 2026 is the 25th; CEST (UTC+2) -> CET (UTC+1).
        ("2026-10", "2026-09-30T22:00Z", "2026-10-31T23:00Z", HOUR),
        # EU rule: last Sunday of March 2026 is the 29th; CET -> CEST.
        ("2026-03", "2026-02-28T23:00Z", "2026-03-31T22:00Z", -HOUR),
        ("2026-11", "2026-10-31T23:00Z", "2026-11-30T23:00Z", pd.Timedelta(0)),
    ],
)
def test_berlin_months_at_the_eu_changes(
    month: str, start: str, end: str, change: pd.Timedelta
) -> None:
    period = make_period(month, timezone="Europe/Berlin")
    assert (period.start, period.end) == (_utc(start), _utc(end))
    days = calendar.monthrange(*map(int, month.split("-")))[1]
    assert _length(period) == pd.Timedelta(days=days) + change


@pytest.mark.parametrize(
    ("zone", "changes"), [("America/New_York", us_changes), ("Europe/Paris", eu_changes)]
)
@pytest.mark.parametrize("year", [2026, 2027, 2028])
def test_every_month_is_its_days_plus_or_minus_the_published_change(
    zone: str, changes: object, year: int
) -> None:
    # A month gains an hour when the clocks go back inside it and loses one when they go forward
    # (the published rules above); with a 17:00 cut-off the month is the days from the day
    # before its first to its last, which holds the same changes as long as none falls on the
    # last day of the previous month after 17:00 (none does in these years: derived).
    assert callable(changes)
    spring, autumn = changes(year)
    for month in range(1, 13):
        first = date(year, month, 1)
        last = date(year, month, calendar.monthrange(year, month)[1])
        expected = pd.Timedelta(days=(last - first).days + 1)
        expected += HOUR if first <= autumn <= last else pd.Timedelta(0)
        expected -= HOUR if first <= spring <= last else pd.Timedelta(0)
        assert _length(make_period(f"{year}-{month:02d}", timezone=zone)) == expected
        assert _length(make_period(f"{year}-{month:02d}", timezone=zone, cutoff="17:00")) == (
            expected
        )


def test_a_fill_in_the_period_in_one_zone_and_not_in_another() -> None:
    # 30 November 2026 18:30 in New York (23:30 UTC): November in UTC days, December for a
    # New York statement day ending at 17:00 (derived from the bounds above).
    fill = _utc("2026-11-30T18:30-05:00")
    assert make_period("2026-11").contains(fill)
    assert not make_period("2026-11", timezone="America/New_York", cutoff="17:00").contains(fill)


def test_an_event_at_the_cut_off_belongs_to_the_next_day() -> None:
    day = make_period("2026-11-30", timezone="America/New_York", cutoff="17:00")
    assert day.start == _utc("2026-11-29T22:00Z")
    assert not day.contains(_utc("2026-11-30T17:00-05:00"))
    assert day.contains(_utc("2026-11-30T16:59:59.999-05:00"))


def test_a_cut_off_the_zone_skips_reads_with_the_offset_before_the_change() -> None:
    # US rule: 02:00-03:00 does not exist on 8 March 2026 in New York. 02:30 read with the
    # offset before the change (EST, UTC-5; Python's fold=0, PEP 495) is 07:30 UTC.
    day = make_period("2026-03-08", timezone="America/New_York", cutoff="02:30")
    assert day.end == _utc("2026-03-08T07:30Z")
    assert _length(day) == pd.Timedelta(hours=24)


def test_a_cut_off_the_zone_repeats_is_its_first_occurrence() -> None:
    # US rule: 01:00-02:00 happens twice on 1 November 2026; the first 01:30 is EDT (05:30 UTC).
    day = make_period("2026-11-01", timezone="America/New_York", cutoff="01:30")
    assert day.end == _utc("2026-11-01T05:30Z")


def test_a_range_of_days_and_the_midnight_spellings() -> None:
    span = make_period(first="2026-11-02", last="2026-11-06", timezone="Europe/London")
    assert (span.start, span.end) == (_utc("2026-11-02T00:00Z"), _utc("2026-11-07T00:00Z"))
    assert span.label == "2026-11-02 to 2026-11-06"
    for midnight in ("00:00", "24:00", time(0, 0)):
        assert make_period("2026-11", cutoff=midnight) == make_period("2026-11")
    assert make_period(first=date(2026, 11, 1), last=date(2026, 11, 30)).end == span.end + (
        pd.Timedelta(days=24)
    )


@pytest.mark.parametrize(
    ("arguments", "message"),
    [
        ({"period": "2026-13"}, "period: expected a month YYYY-MM (e.g. 2026-11) or a day"),
        ({"period": "November"}, "found 'November'"),
        ({"period": "2026-11", "cutoff": "25:00"}, "cutoff: expected a local time HH:MM"),
        ({"period": "2026-11", "cutoff": "5pm"}, "found '5pm'"),
        ({"first": "2026-11-30", "last": "2026-11-01"}, "the last day 2026-11-01 is before"),
        ({"first": "2026-11-31", "last": "2026-12-01"}, "from: expected a date YYYY-MM-DD"),
        ({"period": "2026-11", "first": "2026-11-01"}, "not both"),
        ({}, "expected a month YYYY-MM, a day YYYY-MM-DD or both from and to"),
        ({"period": "2026-11", "timezone": "Mars/Olympus"}, "expected an IANA name"),
    ],
)
def test_bad_periods_are_config_errors(arguments: dict[str, str], message: str) -> None:
    with pytest.raises(ConfigError) as caught:
        make_period(**arguments)
    assert message in str(caught.value)


def test_describe_names_the_zone_the_cut_off_and_both_bounds() -> None:
    november = make_period("2026-11", timezone="America/New_York", cutoff="17:00")
    assert november.describe() == (
        "2026-11 in America/New_York, days ending 17:00: from 2026-10-31T21:00:00Z (included) "
        "to 2026-11-30T22:00:00Z (excluded)"
    )
    assert november.first_day == date(2026, 11, 1)
    assert november.last_day - november.first_day == timedelta(days=29)
