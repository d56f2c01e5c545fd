"""Expected commissions under a schedule: minimums, rates, caps, tiers, rounding, rule choice.

Each case is worked by hand. The charge formulas are common practice for broker schedules (a rate
per share or contract, basis points of notional, a minimum per order); splitting one order's
charge over its fills uses the largest-remainder (Hamilton) method, a derived convention of ours
(docs/conventions.md).
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest

from reconcile.core.fees.audit import audit_fees
from tests.builders import concat
from tests.fee_cases import order_fills, schedule

D = Decimal
EQUITY = """
[[commission]]
name = "equities"
currency = "USD"
per_unit = "0.0035"
minimum = "1.00"
"""


def _expected(frame: pd.DataFrame) -> list[Decimal]:
    return [D(v) for v in frame["expected"]]


def test_a_per_order_minimum_applies_once_and_is_split_by_largest_remainder() -> None:
    # 3 partial fills of 100 shares: 300 x 0.0035 = 1.05 > 1.00; but 3 x 50 shares = 0.525 < 1.00,
    # so the minimum 1.00 applies once and splits 0.34 / 0.33 / 0.33 (equal remainders: earliest).
    fills = order_fills(
        [
            ("f1", "O1", "buy", 50, "10", "2026-11-02T14:00:00Z", "0.34"),
            ("f2", "O1", "buy", 50, "10", "2026-11-02T14:00:01Z", "0.33"),
            ("f3", "O1", "buy", 50, "10", "2026-11-02T14:00:02Z", "0.33"),
        ]
    )
    audit = audit_fees(fills, schedule(EQUITY))
    assert _expected(audit.commission_fills) == [D("0.34"), D("0.33"), D("0.33")]
    order = audit.commission_orders.iloc[0]
    assert (order["expected"], order["charged"], order["status"]) == (D("1.00"), D("1.00"), "ok")
    assert audit.findings.empty


def test_a_minimum_charged_on_every_partial_fill_is_found_and_named() -> None:
    fills = order_fills(
        [
            ("f1", "O1", "buy", 100, "10", "2026-11-02T14:00:00Z", "1.00"),
            ("f2", "O1", "buy", 100, "10", "2026-11-02T14:00:01Z", "1.00"),
        ]
    )
    audit = audit_fees(fills, schedule(EQUITY))
    finding = audit.findings.iloc[0]
    assert (finding["reference"], finding["expected"], finding["charged"]) == (
        "O1",
        D("1.00"),
        D("2.00"),
    )
    assert finding["overcharge"] == D("1.00")
    assert finding["cause"].startswith("every partial fill charged as an order of its own")
    assert audit.leakage() == {"USD": D("1.00")}


def test_charged_per_fill_applies_the_minimum_to_each_fill() -> None:
    text = EQUITY + 'charged_per = "fill"\n'
    fills = order_fills(
        [
            ("f1", "O1", "buy", 100, "10", "2026-11-02T14:00:00Z", "1.00"),
            ("f2", "O1", "buy", 400, "10", "2026-11-02T14:00:01Z", "1.40"),
        ]
    )
    audit = audit_fees(fills, schedule(text))
    assert _expected(audit.commission_fills) == [D("1.00"), D("1.40")]
    assert audit.findings.empty


def test_basis_points_of_notional_include_the_multiplier() -> None:
    # 2 bps on 10 contracts x 5,120 x multiplier 20 = 1,024,000 notional -> 204.80.
    text = """
[[commission]]
currency = "USD"
bps = "2"
"""
    fills = order_fills(
        [("f1", "O1", "sell", 10, "5120", "2026-11-02T14:00:00Z", "204.80")], multiplier="20"
    )
    audit = audit_fees(fills, schedule(text))
    assert audit.commission_fills["notional"].tolist() == [D(1_024_000)]
    assert _expected(audit.commission_fills) == [D("204.80")]


def test_fixed_fees_per_fill_and_per_order_and_a_cap_in_basis_points() -> None:
    # 2 fills: 0.25 per fill + 1.50 per order + 0.01/share x 300 = 0.50 + 1.50 + 3.00 = 5.00;
    # capped at 10 bps of 300 x 12.00 = 3,600 notional -> 3.60.
    text = """
[[commission]]
currency = "USD"
per_unit = "0.01"
per_fill = "0.25"
per_order = "1.50"
maximum_bps = "10"
"""
    fills = order_fills(
        [
            ("f1", "O1", "buy", 100, "12", "2026-11-02T14:00:00Z"),
            ("f2", "O1", "buy", 200, "12", "2026-11-02T14:00:01Z"),
        ]
    )
    order = audit_fees(fills, schedule(text)).commission_orders.iloc[0]
    assert order["expected"] == D("3.60")


@pytest.mark.parametrize(("rounding", "charge"), [("half-even", "0.02"), ("half-up", "0.03")])
def test_rounding_follows_the_schedule(rounding: str, charge: str) -> None:
    # 2 x 0.0125 = 0.025 exactly: half-even keeps the even cent, half-up goes away from zero.
    text = f"""
[schedule]
rounding = "{rounding}"
[[commission]]
currency = "USD"
per_unit = "0.0125"
"""
    fills = order_fills([("f1", "O1", "buy", 2, "1", "2026-11-02T14:00:00Z", charge)])
    audit = audit_fees(fills, schedule(text))
    assert _expected(audit.commission_fills) == [D(charge)]


TIERED = """
[schedule]
timezone = "America/New_York"
[[commission]]
name = "futures"
currency = "USD"
per_unit = "1.10"
tier_basis = "{basis}"
[[commission.tiers]]
from = "0"
[[commission.tiers]]
from = "100"
per_unit = "0.90"
"""


def _futures(*quantities: int, charges: tuple[str, ...] = ()) -> pd.DataFrame:
    rows = [
        (f"f{n}", f"O{n}", "buy", q, "5000", f"2026-11-{n + 2:02d}T15:00:00Z", charge)
        for n, (q, charge) in enumerate(zip(quantities, charges or ("0",) * 3, strict=True))
    ]
    return order_fills(rows)


def test_a_tier_reached_so_far_applies_to_later_orders_only() -> None:
    # 60 + 50 contracts: the second order starts at 60 (< 100), tier 1; the third starts at 110.
    audit = audit_fees(_futures(60, 50, 10), schedule(TIERED.format(basis="reached")))
    orders = audit.commission_orders
    assert orders["tier"].tolist() == ["1", "1", "2"]
    assert [D(v) for v in orders["tier_volume"]] == [D(0), D(60), D(110)]
    assert _expected(orders) == [D("66.00"), D("55.00"), D("9.00")]


def test_the_final_tier_of_the_month_applies_to_every_order() -> None:
    audit = audit_fees(_futures(60, 50, 10), schedule(TIERED.format(basis="final")))
    assert _expected(audit.commission_orders) == [D("54.00"), D("45.00"), D("9.00")]


def test_tier_volume_restarts_each_month_in_the_schedule_zone() -> None:
    # 2026-11-01T03:00Z is still 31 October in New York: it counts towards October's volume.
    fills = order_fills(
        [
            ("oct", "O1", "buy", 150, "5000", "2026-11-01T03:00:00Z"),
            ("nov", "O2", "buy", 10, "5000", "2026-11-02T15:00:00Z"),
        ]
    )
    audit = audit_fees(fills, schedule(TIERED.format(basis="reached")))
    assert audit.commission_orders["month"].tolist() == ["2026-10", "2026-11"]
    assert audit.commission_orders["tier"].tolist() == ["1", "1"]


def test_a_tier_not_applied_is_named() -> None:
    # 10 x 1.10 = 11.00: the first tier's rate after the threshold.
    fills = _futures(60, 50, 10, charges=("66.00", "55.00", "11.00"))
    audit = audit_fees(fills, schedule(TIERED.format(basis="reached")))
    assert len(audit.findings) == 1
    finding = audit.findings.iloc[0]
    assert (finding["reference"], finding["overcharge"]) == ("O2", D("2.00"))
    assert finding["cause"] == "tier 1 rates charged; tier 2 applies"


def test_a_per_unit_rate_charged_as_a_percentage_is_named() -> None:
    # 0.4 JPY a share read as 0.4% of 200 x 3,467 = 693,400 -> 2,773.6 -> 2,774 JPY.
    text = """
[[commission]]
currency = "JPY"
per_unit = "0.4"
minimum = "100"
"""
    fills = order_fills(
        [("f1", "O1", "buy", 200, "3467", "2026-11-02T01:00:00Z", "2774")], currency="JPY"
    )
    finding = audit_fees(fills, schedule(text)).findings.iloc[0]
    assert (finding["expected"], finding["overcharge"]) == (D(100), D(2674))
    assert finding["cause"] == "per-unit rate charged as a percentage of notional"


def test_the_first_rule_that_covers_a_fill_applies_and_globs_match() -> None:
    text = """
[[commission]]
name = "index futures"
instrument = "VLT*"
currency = "USD"
per_unit = "1.10"
[[commission]]
name = "everything else in USD"
currency = "USD"
per_unit = "2"
"""
    fills = concat(
        order_fills([("a", "O1", "buy", 1, "1", "2026-11-02T15:00:00Z")], instrument="VLT50-Z26"),
        order_fills([("b", "O2", "buy", 1, "1", "2026-11-02T15:00:00Z")], instrument="KELP"),
    )
    rows = audit_fees(fills, schedule(text)).commission_fills
    assert rows["rule"].tolist() == ["index futures", "everything else in USD"]


def test_a_fill_no_rule_covers_is_listed_and_never_priced() -> None:
    text = """
[[commission]]
venue = "XNMS"
currency = "USD"
per_unit = "0.01"
valid_until = 2026-11-30
"""
    fills = concat(
        order_fills([("late", "O1", "buy", 100, "1", "2026-12-01T15:00:00Z", "1")], venue="XNMS"),
        order_fills([("away", "O2", "buy", 100, "1", "2026-11-02T15:00:00Z", "1")], venue="XBOS"),
    )
    audit = audit_fees(fills, schedule(text))
    assert audit.unmatched["id"].tolist() == ["late", "away"]
    assert audit.commission_fills["status"].tolist() == ["no rule", "no rule"]
    assert audit.commission_fills["expected"].isna().all()
    assert audit.findings.empty
    assert not audit.has_leakage


def test_a_split_that_differs_from_ours_is_not_leakage() -> None:
    # A broker that puts the odd cent on the last fill: the order ties, the fills show the split.
    fills = order_fills(
        [
            ("f1", "O1", "buy", 50, "10", "2026-11-02T14:00:00Z", "0.33"),
            ("f2", "O1", "buy", 50, "10", "2026-11-02T14:00:01Z", "0.33"),
            ("f3", "O1", "buy", 50, "10", "2026-11-02T14:00:02Z", "0.34"),
        ]
    )
    audit = audit_fees(fills, schedule(EQUITY))
    assert audit.commission_fills["status"].tolist() == ["split differs", "ok", "split differs"]
    assert audit.commission_orders["status"].tolist() == ["ok"]
    assert audit.findings.empty


def test_a_tolerance_keeps_small_differences_out_of_the_findings() -> None:
    fills = order_fills([("f1", "O1", "buy", 400, "10", "2026-11-02T14:00:00Z", "1.41")])
    strict = audit_fees(fills, schedule(EQUITY))
    lenient = audit_fees(fills, schedule(EQUITY), tolerance="0.01")
    assert strict.leakage() == {"USD": D("0.01")}
    assert lenient.leakage() == {"USD": D("0.00")}
    assert lenient.commission_orders["status"].tolist() == ["within tolerance"]


def test_the_period_limits_the_lines_but_not_the_tier_volume() -> None:
    audit = audit_fees(
        _futures(60, 50, 10),
        schedule(TIERED.format(basis="reached")),
        period="2026-11-04..2026-11-30",
    )
    assert audit.commission_orders["order_id"].tolist() == ["O2"]
    assert audit.commission_orders["tier"].tolist() == ["2"]


def test_notional_tiers_counted_across_accounts() -> None:
    # 5 bps until the month's notional across every account reaches 1,000,000, then 3 bps:
    # A trades 800,000 (400.00), B 300,000 (starts at 800,000: 150.00), A 100,000 (at 1,100,000:
    # 30.00).
    text = """
[[commission]]
currency = "USD"
bps = "5"
tier_measure = "notional"
tier_volume = "all"
[[commission.tiers]]
from = "0"
[[commission.tiers]]
from = "1000000"
bps = "3"
"""
    fills = concat(
        order_fills([("a1", "O1", "buy", 8000, "100", "2026-11-02T15:00:00Z")], account="A"),
        order_fills([("b1", "O2", "buy", 3000, "100", "2026-11-03T15:00:00Z")], account="B"),
        order_fills([("a2", "O3", "sell", 1000, "100", "2026-11-04T15:00:00Z")], account="A"),
    )
    orders = audit_fees(fills, schedule(text)).commission_orders
    assert _expected(orders) == [D("400.00"), D("150.00"), D("30.00")]
    assert orders["tier"].tolist() == ["1", "1", "2"]


def test_a_rule_stops_applying_after_its_last_valid_day() -> None:
    # The schedule changed on 16 November: one rule until the 15th, another from the 16th.
    text = """
[schedule]
timezone = "America/New_York"
[[commission]]
name = "until 15 November"
currency = "USD"
per_unit = "0.01"
valid_until = 2026-11-15
[[commission]]
name = "from 16 November"
currency = "USD"
per_unit = "0.008"
valid_from = 2026-11-16
"""
    fills = order_fills(
        [
            ("f1", "O1", "buy", 100, "10", "2026-11-16T04:00:00Z"),  # 15 Nov, 23:00 in New York
            ("f2", "O2", "buy", 100, "10", "2026-11-16T15:00:00Z"),
        ]
    )
    rows = audit_fees(fills, schedule(text)).commission_fills
    assert rows["rule"].tolist() == ["until 15 November", "from 16 November"]
    assert _expected(rows) == [D("1.00"), D("0.80")]
