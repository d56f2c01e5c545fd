"""Overnight financing against the schedule, worked by hand night by night.

The charge per night is notional x annual rate x day-count fraction (ISDA 2006 Definitions, 4.16,
from memory) or units x swap points x point size (common practice for spot FX and CFDs). Which
nights a day carries, and a triple charge on the configured weekday, are common practice.
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest

from reconcile.core.fees.audit import audit_fees
from reconcile.errors import ScheduleError, ValidationError
from tests.builders import concat, financing
from tests.fee_cases import order_fills, schedule

D = Decimal
RULE = """
[schedule]
timezone = "America/New_York"
[[commission]]
currency = "USD"
[[commission]]
currency = "JPY"
[[financing]]
name = "overnight"
long_rate = "3.6%"
short_rate = "1.8%"
day_count = "ACT/360"
cutoff = "17:00"
"""
# 1,000 at 50.00 long: 50,000 x 3.6% / 360 = 5.00 a night. New York is UTC-5 from 1 Nov 2026.
LONG_WEEK = order_fills(
    [
        ("open", "O1", "buy", 1000, "50", "2026-11-02T15:00:00Z"),
        ("close", "O2", "sell", 1000, "50", "2026-11-09T15:00:00Z"),
    ]
)


COLUMNS = ["event_id", "account", "instrument", "time", "amount", "currency", "kind"]


def _events(*rows: tuple[str, str, str]) -> pd.DataFrame:
    """Swaps on A/X in USD from (time, amount, why) triples; none at all is an empty table."""
    if not rows:
        return pd.DataFrame(columns=COLUMNS, dtype="str")
    return financing([(f"E{n}", time, amount) for n, (time, amount, _) in enumerate(rows)])


def _day(audit_days: pd.DataFrame, day: str) -> pd.Series:
    return audit_days[audit_days["date"] == day].iloc[0]


def test_every_kind_of_financing_break_is_found_and_named() -> None:
    events = _events(
        ("2026-11-02T22:00:00Z", "-5.00", "ok"),
        ("2026-11-03T22:00:00Z", "-5.00", "ok"),
        ("2026-11-04T22:00:00Z", "-15.00", "triple on a Wednesday"),
        # Thursday: nothing booked
        ("2026-11-06T22:00:00Z", "-15.00", "Friday carries the weekend"),
        ("2026-11-07T22:00:00Z", "-5.00", "a Saturday charge"),
        ("2026-11-09T22:00:00Z", "-5.00", "flat at Monday's cut-off"),
    )
    audit = audit_fees(LONG_WEEK, schedule(RULE), events)
    days = audit.financing_days
    assert days["date"].tolist() == [
        "2026-11-02",
        "2026-11-03",
        "2026-11-04",
        "2026-11-05",
        "2026-11-06",
        "2026-11-07",
        "2026-11-09",
    ]
    assert [D(v) for v in days["expected"]] == [D(-5), D(-5), D(-5), D(-5), D(-15), D(0), D(0)]
    causes = dict(zip(days["date"], days["cause"], strict=True))
    assert causes["2026-11-04"] == "3 nights charged, 1 expected"
    assert causes["2026-11-05"] == "no charge booked"
    assert causes["2026-11-07"] == "charged on a day that carries no nights (weekend or holiday)"
    assert causes["2026-11-09"] == "charged while the position was flat"
    totals = audit.leakage_totals.iloc[0]
    assert (totals["financing_overcharge"], totals["financing_undercharge"]) == (D(20), D(5))
    assert audit.leakage() == {"USD": D(20)}


def test_a_short_receives_its_rate_and_a_missing_credit_is_leakage() -> None:
    # 1,000 short at 50.00: 50,000 x 1.8% / 360 = 2.50 credited a night.
    fills = order_fills([("s", "O1", "sell", 1000, "50", "2026-11-02T15:00:00Z")])
    events = _events(("2026-11-02T22:00:00Z", "2.50", ""))
    audit = audit_fees(fills, schedule(RULE), events, period="2026-11-02..2026-11-03")
    days = audit.financing_days
    assert [D(v) for v in days["expected"]] == [D("2.50"), D("2.50")]
    assert days["annual_rate"].tolist() == [D("0.018"), D("0.018")]
    assert days["cause"].tolist() == ["", "no charge booked"]
    assert audit.leakage() == {"USD": D("2.50")}


def test_the_cut_off_follows_daylight_saving_time_in_its_zone() -> None:
    # 17:00 in New York is 21:00 UTC on Friday 30 Oct 2026 (EDT) and 22:00 UTC on 2 Nov (EST).
    fills = order_fills([("b", "O1", "buy", 1000, "50", "2026-10-30T15:00:00Z")])
    audit = audit_fees(fills, schedule(RULE), _events(), period="2026-10-30..2026-11-02")
    cutoffs = [t.isoformat() for t in audit.financing_days["cutoff"]]
    assert cutoffs == ["2026-10-30T21:00:00+00:00", "2026-11-02T22:00:00+00:00"]


def test_a_fill_at_the_cut_off_counts_from_the_next_day() -> None:
    fills = order_fills([("b", "O1", "buy", 1000, "50", "2026-11-02T22:00:00Z")])
    audit = audit_fees(fills, schedule(RULE), _events(), period="2026-11-02..2026-11-03")
    assert audit.financing_days["date"].tolist() == ["2026-11-03"]


def test_an_event_booked_after_midnight_belongs_to_the_previous_cut_off() -> None:
    events = _events(("2026-11-04T07:00:00Z", "-5.00", "02:00 Wednesday in New York"))
    audit = audit_fees(LONG_WEEK, schedule(RULE), events, period="2026-11-03")
    assert audit.financing_days["status"].tolist() == ["ok"]


def test_the_latest_mark_prices_the_position_and_the_accounts_own_wins_a_tie() -> None:
    marks = pd.DataFrame(
        {
            "time": ["2026-11-03T21:00:00Z", "2026-11-03T21:00:00Z", "2026-11-04T21:00:00Z"],
            "account": ["", "A", ""],
            "instrument": ["X", "X", "X"],
            "price": ["60", "55", "62"],
        }
    )
    audit = audit_fees(LONG_WEEK, schedule(RULE), _events(), marks=marks.iloc[:1])
    tuesday = _day(audit.financing_days, "2026-11-03")
    assert (tuesday["price"], tuesday["price_source"], tuesday["expected"]) == (
        D(60),
        "mark",
        D("-6.00"),
    )
    monday = _day(audit.financing_days, "2026-11-02")
    assert (monday["price"], monday["price_source"]) == (D(50), "last fill")
    audit = audit_fees(LONG_WEEK, schedule(RULE), _events(), marks=marks)
    assert _day(audit.financing_days, "2026-11-03")["expected"] == D("-5.50")  # same instant
    # A newer general mark beats an older account mark: a stale price is not a better one.
    assert _day(audit.financing_days, "2026-11-04")["expected"] == D("-6.20")


BENCHMARK = """
[schedule]
timezone = "America/New_York"
[[benchmark]]
name = "REF-ON"
fixings = [{{ date = {first}, rate = "3.0%" }}, {{ date = 2026-11-04, rate = "3.5%" }}]
[[commission]]
currency = "USD"
[[financing]]
benchmark = "REF-ON"
long_spread = "0.6%"
"""


def test_a_benchmark_plus_spread_uses_the_latest_fixing() -> None:
    # Monday 3.0% + 0.6% = 3.6% -> 5.00; Wednesday 3.5% + 0.6% = 4.1% of 50,000 / 360 = 5.694...
    audit = audit_fees(
        LONG_WEEK, schedule(BENCHMARK.format(first="2026-11-01")), _events(), period="2026-11"
    )
    days = audit.financing_days
    assert _day(days, "2026-11-02")["expected"] == D("-5.00")
    assert _day(days, "2026-11-04")["expected"] == D("-5.69")
    assert _day(days, "2026-11-04")["annual_rate"] == D("0.041")


def test_a_missing_fixing_names_the_benchmark() -> None:
    with pytest.raises(ScheduleError, match=r"benchmark 'REF-ON': expected a fixing on or before"):
        audit_fees(LONG_WEEK, schedule(BENCHMARK.format(first="2026-11-03")), _events())


def test_swap_points_worked_example() -> None:
    # Common practice (no single published source): swap = units x points x pip size x nights,
    # in the quote currency; spot FX charges three nights on Wednesday. Long 100,000 EUR/USD at
    # -0.52 points, pip 0.0001: Tuesday 100,000 x -0.52 x 0.0001 = -5.20 USD, Wednesday x 3 =
    # -15.60. Short 50,000 USD/JPY at +0.35 points, pip 0.01: 50,000 x 0.35 x 0.01 = 175 JPY.
    text = """
[[commission]]
currency = "USD"
[[commission]]
currency = "JPY"
[[financing]]
name = "EURUSD"
instrument = "EURUSD"
long_points = "-0.52"
point_size = "0.0001"
triple_weekday = "wednesday"
[[financing]]
name = "USDJPY"
instrument = "USDJPY"
short_points = "0.35"
point_size = "0.01"
triple_weekday = "wednesday"
"""
    fills = concat(
        order_fills(
            [("eur", "O1", "buy", 100000, "1.16", "2026-11-02T12:00:00Z")], instrument="EURUSD"
        ),
        order_fills(
            [("jpy", "O2", "sell", 50000, "154.2", "2026-11-02T12:00:00Z")],
            instrument="USDJPY",
            currency="JPY",
        ),
    )
    audit = audit_fees(fills, schedule(text), _events(), period="2026-11-03..2026-11-04")
    days = audit.financing_days
    eur = days[days["instrument"] == "EURUSD"]
    assert [D(v) for v in eur["expected"]] == [D("-5.20"), D("-15.60")]
    jpy = days[days["instrument"] == "USDJPY"]
    assert [D(v) for v in jpy["expected"]] == [D(175), D(525)]


def test_a_kind_no_rule_covers_is_listed_not_priced() -> None:
    events = financing([("div", "2026-11-03T22:00:00Z", "-66.00", "dividend")])
    audit = audit_fees(LONG_WEEK, schedule(RULE), events, period="2026-11")
    assert audit.unmatched["id"].tolist() == ["div"]
    assert "no financing rule covers kind dividend" in audit.unmatched["reason"].iloc[0]
    assert audit.findings["charge"].tolist() == ["financing"] * 5  # the charges never booked


def test_a_charge_on_a_side_the_rule_does_not_finance_is_named() -> None:
    # A borrow fee rule finances shorts only: a borrow charge on a long position is leakage.
    text = """
[[commission]]
currency = "USD"
[[financing]]
kinds = ["borrow"]
short_rate = "-3%"
"""
    events = financing([("b", "2026-11-03T17:00:00Z", "-4.17", "borrow")])
    audit = audit_fees(LONG_WEEK, schedule(text), events, period="2026-11")
    assert audit.financing_days["cause"].tolist() == [
        "charged, but the rule does not finance a long position"
    ]
    assert audit.leakage() == {"USD": D("4.17")}


def test_a_holiday_calendar_moves_its_night_to_the_day_before() -> None:
    # Thursday 26 Nov 2026 a holiday: Wednesday charges two nights (10.00), Thursday nothing.
    text = RULE + 'calendar = "exchange"\n[calendars]\nexchange = [2026-11-26]\n'
    fills = order_fills([("b", "O1", "buy", 1000, "50", "2026-11-24T15:00:00Z")])
    audit = audit_fees(fills, schedule(text), _events(), period="2026-11-25..2026-11-26")
    days = audit.financing_days
    assert days["date"].tolist() == ["2026-11-25"]
    assert (days["nights"].iloc[0], days["expected"].iloc[0]) == (2, D("-10.00"))


def test_financing_booked_where_nothing_was_ever_traded_is_charged_while_flat() -> None:
    events = financing([("ghost", "2026-11-03T22:00:00Z", "-7.00")], instrument="NEVER")
    audit = audit_fees(LONG_WEEK, schedule(RULE), events, period="2026-11-03")
    ghost = audit.financing_days[audit.financing_days["instrument"] == "NEVER"].iloc[0]
    assert (ghost["cause"], ghost["overcharge"]) == ("charged while the position was flat", D(7))


def test_an_event_in_another_currency_than_its_position_is_an_input_error() -> None:
    events = financing([("eur", "2026-11-03T22:00:00Z", "-5.00")], currency="EUR")
    with pytest.raises(ValidationError) as caught:
        audit_fees(LONG_WEEK, schedule(RULE), events)
    assert [str(p) for p in caught.value.problems] == [
        "financing row 2, column currency: expected currency USD, the currency of A X in the "
        "fills, found 'EUR'"
    ]
