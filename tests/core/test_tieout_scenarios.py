"""Planted breaks on the sample scenario: each is found and its planted cause ranked first.

Derived checks (our own construction): the statement is what reconcile itself derives for
November 2026 (New York days ending 17:00), then one thing is changed on one side. The sample
scenario is the invented demo data in sample_data/.
"""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import pytest

import reconcile
from reconcile.core.tieout import derive_statement
from tests.statements import causes, rates

D = Decimal
SAMPLE = Path(__file__).parents[2] / "sample_data"
PERIOD = "2026-11"
ZONE, CUTOFF = "America/New_York", "17:00"  # the statement day ends 17:00 New York


@pytest.fixture(scope="module")
def sample() -> dict[str, pd.DataFrame]:
    return {
        "fills": reconcile.read_fills(SAMPLE / "fills.csv"),
        "financing": reconcile.read_financing(SAMPLE / "financing.csv"),
    }


@pytest.fixture(scope="module")
def statement(sample: dict[str, pd.DataFrame]) -> pd.DataFrame:
    return derive_statement(
        sample["fills"], PERIOD, financing=sample["financing"], timezone=ZONE, cutoff=CUTOFF
    )


def _tie_out(
    fills: pd.DataFrame, theirs: pd.DataFrame, sample: dict[str, pd.DataFrame], **options: Any
) -> reconcile.TieOut:
    options.setdefault("timezone", ZONE)
    options.setdefault("cutoff", CUTOFF)
    return reconcile.tie_out(fills, theirs, PERIOD, financing=sample["financing"], **options)


def _top(result: reconcile.TieOut) -> list[dict[str, Any]]:
    """The best cause of every break."""
    return [causes(result, n)[0] for n in result.breaks["line"]]


@pytest.mark.parametrize(
    ("method", "commission"),
    [("fifo", "at-close"), ("lifo", "at-close"), ("hifo", "at-fill"), ("average", "at-close")],
)
def test_an_unperturbed_statement_ties_exactly(
    sample: dict[str, pd.DataFrame], method: str, commission: str
) -> None:
    theirs = derive_statement(
        sample["fills"],
        PERIOD,
        financing=sample["financing"],
        method=method,  # type: ignore[arg-type]
        commission=commission,  # type: ignore[arg-type]
        timezone=ZONE,
        cutoff=CUTOFF,
    )
    result = _tie_out(sample["fills"], theirs, sample, method=method, commission=commission)
    assert result.counts() == {"tied": len(result.lines), "within tolerance": 0, "break": 0}


def test_a_duplicate_fill_the_statement_lacks(
    sample: dict[str, pd.DataFrame], statement: pd.DataFrame
) -> None:
    fills = sample["fills"]
    copy = fills[fills["fill_id"] == "ORD-00430-3"].copy()
    copy["fill_id"] = "ORD-00430-3-R"
    copy["time"] += pd.Timedelta(seconds=2)
    result = _tie_out(pd.concat([fills, copy], ignore_index=True), statement, sample)
    assert set(result.breaks["instrument"]) == {"CRVN"}
    for top in _top(result):
        assert top["kind"] == "duplicate_fill"
        assert top["fill_ids"] == "ORD-00430-3-R;ORD-00430-3"
        assert top["residual"] == 0


def test_a_fill_missing_from_our_records(
    sample: dict[str, pd.DataFrame], statement: pd.DataFrame
) -> None:
    # ORD-00570-1: buy 200 HLVD at 15.720 with commission 1.00, the key's last November fill.
    fills = sample["fills"]
    result = _tie_out(fills[fills["fill_id"] != "ORD-00570-1"], statement, sample)
    assert set(result.breaks["instrument"]) == {"HLVD"}
    for top in _top(result):
        assert top["kind"] == "missing_fill"
        assert "a buy of 200 at 15.72 with commission 1.00" in top["explanation"]


def test_a_fee_overcharge(sample: dict[str, pd.DataFrame], statement: pd.DataFrame) -> None:
    theirs = statement.copy()
    crvn = theirs["instrument"] == "CRVN"
    theirs.loc[crvn, "commission"] = str(D(theirs.loc[crvn, "commission"].iloc[0]) + D("5.00"))
    result = _tie_out(sample["fills"], theirs, sample)
    assert result.breaks["measure"].tolist() == ["commission"]
    (top,) = _top(result)
    assert (top["kind"], top["explained"]) == ("fee_difference", D("-5.00"))
    assert "charges 5.00 USD more commission" in top["explanation"]


def test_a_fill_moved_across_the_cut_off_by_the_time_zone(sample: dict[str, pd.DataFrame]) -> None:
    # The last HLVD fill placed at 18:30 New York on 30 November: after our 17:00 cut-off,
    # before midnight UTC, where a statement in UTC days counts it.
    fills = sample["fills"].copy()
    late = fills["fill_id"] == "ORD-00570-1"
    fills.loc[late, "time"] = pd.Timestamp("2026-11-30T18:30:00-05:00").tz_convert("UTC")
    utc_days = derive_statement(fills, PERIOD, financing=sample["financing"], timezone="UTC")
    result = _tie_out(fills, utc_days, sample)
    assert set(result.breaks["instrument"]) == {"HLVD"}
    for top in _top(result):
        assert top["kind"] == "cut_off"
        # The borrow fee booked at the 17:00 cut-off (FIN-00038) moves across with it.
        assert top["fill_ids"] == "ORD-00570-1;FIN-00038"
        assert "as a statement day ending at midnight UTC would count it" in top["explanation"]


def test_a_statement_under_another_relief_method(sample: dict[str, pd.DataFrame]) -> None:
    lifo = derive_statement(
        sample["fills"],
        PERIOD,
        financing=sample["financing"],
        method="lifo",
        timezone=ZONE,
        cutoff=CUTOFF,
    )
    result = _tie_out(sample["fills"], lifo, sample)
    assert len(result.breaks) >= 5
    for top in _top(result):
        assert top["kind"] == "relief_method"
        assert "(lifo)" in top["explanation"]


def test_a_rounding_only_difference(
    sample: dict[str, pd.DataFrame], statement: pd.DataFrame
) -> None:
    theirs = statement.copy()
    crvn = theirs["instrument"] == "CRVN"
    theirs.loc[crvn, "realized_pnl"] = str(D(theirs.loc[crvn, "realized_pnl"].iloc[0]) + D("0.01"))
    result = _tie_out(sample["fills"], theirs, sample)
    (top,) = _top(result)
    assert top["kind"] == "rounding"
    assert "no more than half a minor unit on each of the" in top["explanation"]


def _daily_eur_usd() -> pd.DataFrame:
    """An invented EUR/USD fixing at 16:00 UTC each day of October and November 2026."""
    days = pd.date_range("2026-10-01T16:00Z", "2026-11-30T16:00Z", freq="D")
    return rates(
        (day.isoformat(), "EUR", "USD", str(D("1.0800") + D("0.0007") * n))
        for n, day in enumerate(days)
    )


def test_an_fx_rate_difference(sample: dict[str, pd.DataFrame]) -> None:
    daily = _daily_eur_usd()
    last = daily.iloc[-1]
    month_end = rates([("2026-09-30T00:00:00Z", "EUR", "USD", str(last["rate"]))])
    euro = pd.DataFrame(
        [
            {"account": "LMC-EQ", "instrument": "OSTB", "currency": "USD", m: "0"}
            for m in ("realized_pnl", "commission", "financing")
        ]
    ).fillna("")
    ostb = {k: v[v["instrument"] == "OSTB"] for k, v in sample.items()}
    converted = _tie_out(ostb["fills"], euro, ostb, rates=month_end, base="USD").lines
    theirs = euro.copy()
    for n, measure in enumerate(("realized_pnl", "commission", "financing")):
        theirs.loc[n, measure] = str(converted.loc[converted["measure"] == measure, "ours"].iloc[0])
    result = _tie_out(ostb["fills"], theirs, ostb, rates=daily, base="USD")
    assert len(result.breaks) >= 2
    for top in _top(result):
        assert top["kind"] == "fx_rate"
        assert "the rate in force at the period end" in top["explanation"]
    assert (result.conversions["pair"] == "EUR/USD").all()
