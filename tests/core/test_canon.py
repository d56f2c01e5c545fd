"""Validation of canonical inputs: every bad value is reported with its row and column."""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest

from reconcile.core.canon import canonical_fills, canonical_financing
from reconcile.errors import MissingColumnsError, ValidationError
from tests.builders import fills

GOOD = [
    ("f1", "buy", 10, "100.5", "2026-11-02T14:30:00Z", "1.25"),
    ("f2", "sell", 4, "101", "2026-11-02T15:00:00-05:00", "0.50"),
]


def _problems(frame: pd.DataFrame, **options: object) -> list[str]:
    with pytest.raises(ValidationError) as caught:
        canonical_fills(frame, source="fills.csv", **options)  # type: ignore[arg-type]
    return [str(p) for p in caught.value.problems]


def _with(column: str, value: str, row: int = 1) -> pd.DataFrame:
    frame = fills(GOOD)
    frame.loc[row, column] = value
    return frame


def test_good_fills_become_exact_typed_columns() -> None:
    frame = canonical_fills(fills(GOOD))
    assert frame["quantity"].tolist() == [Decimal(10), Decimal(4)]
    assert frame["price"].tolist() == [Decimal("100.5"), Decimal(101)]
    assert str(frame["time"].iloc[1]) == "2026-11-02 20:00:00+00:00"
    assert frame["source_row"].tolist() == [2, 3]
    assert frame.attrs["read_summary"]["accepted"] == 2


def test_missing_required_column_names_it_and_suggests_a_close_header() -> None:
    frame = fills(GOOD).rename(columns={"quantity": "qty"})
    with pytest.raises(MissingColumnsError) as caught:
        canonical_fills(frame, source="fills.csv")
    assert str(caught.value) == (
        "fills.csv: missing required column: quantity (a column 'qty' exists: rename it or use a "
        "profile); the header has: fill_id, account, instrument, side, qty, price, time, "
        "commission, currency, multiplier"
    )


def test_side_must_be_buy_or_sell_in_any_case() -> None:
    assert canonical_fills(_with("side", "S"))["side"].tolist() == ["buy", "sell"]
    assert canonical_fills(_with("side", "Buy"))["side"].tolist() == ["buy", "buy"]
    assert _problems(_with("side", "short")) == [
        "fills.csv row 3, column side: expected buy or sell (also B or S, any case), found 'short'"
    ]


@pytest.mark.parametrize("value", ["0", "-5", "-0.01"])
def test_quantity_must_be_positive(value: str) -> None:
    assert _problems(_with("quantity", value)) == [
        f"fills.csv row 3, column quantity: expected a decimal > 0, found '{value}'"
    ]


@pytest.mark.parametrize("value", ["abc", "NaN", "inf", "-Infinity", "1,5", "1.2.3", "$4"])
def test_non_numeric_nan_and_infinite_values_are_rejected(value: str) -> None:
    problems = _problems(_with("price", value))
    assert problems == [
        f"fills.csv row 3, column price: expected a decimal number (finite, plain "
        f"digits), found '{value}'"
    ]


def test_exponent_notation_is_read_exactly() -> None:
    assert canonical_fills(_with("price", "1.015E+2"))["price"].tolist()[1] == Decimal("101.5")


def test_more_than_38_digits_is_rejected_not_wrapped() -> None:
    problems = _problems(_with("price", "1" * 39))
    assert len(problems) == 1
    assert "at most 38 digits" in problems[0]


def test_commission_must_not_be_negative_and_defaults_to_zero() -> None:
    assert _problems(_with("commission", "-1")) == [
        "fills.csv row 3, column commission: expected a decimal >= 0, found '-1'"
    ]
    frame = fills(GOOD).drop(columns="commission")
    assert canonical_fills(frame)["commission"].tolist() == [Decimal(0), Decimal(0)]


def test_time_without_offset_needs_a_timezone() -> None:
    assert _problems(_with("time", "2026-11-02T10:00:00")) == [
        "fills.csv row 3, column time: expected a UTC offset (e.g. +00:00 or Z), or --timezone "
        "ZONE, found '2026-11-02T10:00:00'"
    ]
    placed = canonical_fills(_with("time", "2026-11-02T10:00:00"), timezone="America/New_York")
    assert str(placed["time"].iloc[1]) == "2026-11-02 15:00:00+00:00"


def test_local_times_that_do_not_exist_or_repeat_are_rejected() -> None:
    # 2026-03-08 02:30 does not exist in New York (clocks skip 02:00-03:00); 2026-11-01 01:30
    # happens twice (clocks go back at 02:00). Dates from the US daylight-saving rule.
    frame = fills(GOOD)
    frame["time"] = ["2026-03-08T02:30:00", "2026-11-01T01:30:00"]
    problems = _problems(frame, timezone="America/New_York")
    assert len(problems) == 2
    assert all("occurs exactly once in America/New_York" in p for p in problems)


@pytest.mark.parametrize("value", ["yesterday", "2026-02-30T10:00:00Z", "2026-11-02T25:00:00Z"])
def test_impossible_or_unreadable_times_are_rejected(value: str) -> None:
    problems = _problems(_with("time", value))
    assert len(problems) == 1
    assert "column time" in problems[0]


def test_unknown_currency_code() -> None:
    assert _problems(_with("currency", "USX"))[0] == (
        "fills.csv row 3, column currency: expected an ISO 4217 currency code such as USD, "
        "found 'USX'"
    )


def test_a_currency_without_minor_unit_cannot_carry_money() -> None:
    assert "minor unit" in _problems(_with("currency", "XAU"))[0]


def test_two_currencies_for_one_instrument() -> None:
    problems = _problems(_with("currency", "EUR"))
    assert problems == [
        "fills.csv row 3, column currency: expected one currency per account and "
        "instrument (A X has USD at row 2), found 'EUR'"
    ]


def test_two_multipliers_for_one_instrument() -> None:
    problems = _problems(_with("multiplier", "50"))
    assert problems == [
        "fills.csv row 3, column multiplier: expected one multiplier per account "
        "and instrument (A X has 1 at row 2), found '50'"
    ]


def test_duplicate_fill_id_with_different_content_names_both_rows() -> None:
    frame = _with("fill_id", "f1")
    assert _problems(frame) == [
        "fills.csv row 3, column fill_id: expected a unique fill_id (row 2 has the same id with "
        "different content: side 'buy' vs 'sell', quantity '10' vs '4', price '100.5' vs '101'),"
        " found 'f1'"
    ]


def test_an_exact_repeat_is_an_error_unless_deduped() -> None:
    frame = pd.concat([fills(GOOD), fills(GOOD[:1])], ignore_index=True)
    assert _problems(frame) == [
        "fills.csv row 4: expected no exact repeat of row 2 (a repeated fill is usually a break; "
        "--dedupe drops exact repeats)"
    ]
    deduped = canonical_fills(frame, dedupe=True)
    assert deduped["fill_id"].tolist() == ["f1", "f2"]
    assert deduped.attrs["read_summary"]["duplicates_dropped"] == 1


def test_every_problem_is_reported_together() -> None:
    frame = fills(GOOD)
    frame.loc[0, "quantity"] = "-1"
    frame.loc[1, "side"] = "hold"
    frame.loc[1, "currency"] = "ZZZ"
    assert len(_problems(frame)) == 3


def test_binary_float_columns_are_refused() -> None:
    frame = fills(GOOD)
    frame["price"] = [100.5, 101.0]
    assert _problems(frame) == [
        "fills.csv column price: expected exact decimal values (text or a decimal type), "
        "found 'float64'"
    ]


def test_blank_required_values() -> None:
    assert _problems(_with("account", "  ")) == [
        "fills.csv row 3, column account: expected a non-empty value, found ''"
    ]


def test_extra_columns_are_carried_through_untouched() -> None:
    frame = fills(GOOD).assign(strategy=["mean-rev", "=SUM(A1)"])
    assert canonical_fills(frame)["strategy"].tolist() == ["mean-rev", "=SUM(A1)"]


def test_financing_kind_and_amount() -> None:
    frame = pd.DataFrame(
        {
            "event_id": ["e1", "e2"],
            "account": "A",
            "instrument": "X",
            "time": "2026-11-02T22:00:00Z",
            "amount": ["-1.25", "x"],
            "currency": "USD",
            "kind": ["swap", "rebate"],
        }
    )
    with pytest.raises(ValidationError) as caught:
        canonical_financing(frame, source="financing.csv")
    assert [str(p) for p in caught.value.problems] == [
        "financing.csv row 3, column amount: expected a signed decimal (negative is a charge) "
        "(finite, plain digits), found 'x'",
        "financing.csv row 3, column kind: expected one of swap, financing, borrow, dividend, "
        "fee, other, found 'rebate'",
    ]


def test_a_column_of_ours_is_not_suggested_as_a_misspelling_of_another() -> None:
    frame = fills(GOOD)  # read as financing: account is not a misspelt amount, side not kind
    with pytest.raises(MissingColumnsError) as caught:
        canonical_financing(frame, source="fills.csv")
    assert str(caught.value).startswith(
        "fills.csv: missing required columns: event_id, amount, kind; the header has: fill_id"
    )


def test_a_lower_case_z_is_utc() -> None:
    # RFC 3339 section 5.6 notes that "T" and "Z" may be written lower case (quoted from memory).
    frame = canonical_fills(_with("time", "2026-11-02T10:00:00z", row=0))
    assert str(frame["time"].iloc[0]) == "2026-11-02 10:00:00+00:00"


def test_a_long_file_is_checked_as_strictly_as_a_short_one() -> None:
    """Past the size where the compiled scans take over, the same values are refused or fixed:
    a padded account is trimmed, an hour without minutes and a repeated fill id are reported."""
    from reconcile.core.vectorised import COMPILED_SCAN_ROWS

    rows = [
        (f"f{n}", "buy", 1, "100", f"2026-11-02T14:{n % 60:02d}:00Z", "0")
        for n in range(COMPILED_SCAN_ROWS + 10)
    ]
    frame = fills(rows)
    frame.loc[5, "account"] = "  " + str(frame.loc[5, "account"]) + "\t"
    clean = canonical_fills(frame)
    accounts = clean["account"].tolist()
    assert accounts[5] == accounts[6]
    frame.loc[7, "time"] = "2026-11-02T14Z"
    frame.loc[9, "fill_id"] = "f8"
    problems = _problems(frame)
    assert any("row 9" in p and "time" in p for p in problems)
    assert any("row 10" in p and "fill_id" in p for p in problems)
