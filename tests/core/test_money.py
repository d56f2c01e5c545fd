"""Minor units, rounding and allocation."""

from __future__ import annotations

import decimal
from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from reconcile.money import (
    EXACT,
    allocate,
    charge_places,
    minor_unit,
    prorata,
    round_money,
    round_to,
)

D = Decimal

# ISO 4217 minor units as published in the ISO 4217 list (table A.1), read here through the
# maintained `iso4217` package rather than a hand-typed table.
ISO_4217_MINOR_UNITS = {
    "USD": 2,
    "EUR": 2,
    "GBP": 2,
    "CHF": 2,
    "HUF": 2,
    "IDR": 2,
    "JPY": 0,
    "KRW": 0,
    "CLP": 0,
    "ISK": 0,
    "BHD": 3,
    "KWD": 3,
    "OMR": 3,
    "JOD": 3,
    "TND": 3,
    "CLF": 4,
}


@pytest.mark.parametrize(("code", "places"), sorted(ISO_4217_MINOR_UNITS.items()))
def test_iso_4217_minor_units(code: str, places: int) -> None:
    assert minor_unit(code) == places


@pytest.mark.parametrize("code", ["XAU", "XAG", "XDR"])
def test_iso_4217_codes_without_a_minor_unit(code: str) -> None:
    # ISO 4217 lists these with minor unit "N.A." (not applicable).
    assert minor_unit(code) is None


def test_unknown_code_has_no_minor_unit() -> None:
    assert minor_unit("ZZZ") is None


def test_round_half_even_is_the_default_and_half_up_is_available() -> None:
    assert round_money(D("0.125"), "USD") == D("0.12")
    assert round_money(D("0.135"), "USD") == D("0.14")
    assert round_money(D("0.125"), "USD", "half-up") == D("0.13")
    assert round_money(D("-0.125"), "USD", "half-up") == D("-0.13")
    assert round_money(D("2.5"), "JPY") == D("2")
    assert round_money(D("1.0005"), "BHD") == D("1.000")
    assert str(round_money(D("3"), "USD")) == "3.00"


@pytest.mark.parametrize("value", ["2.5", "-2.5", "3.5", "-3.5", "0.05", "-0.0149", "7.77777"])
@pytest.mark.parametrize("rounding", ["half-even", "half-up"])
def test_round_to_agrees_with_the_decimal_module(value: str, rounding: str) -> None:
    # Python's decimal module (General Decimal Arithmetic specification) is the reference.
    mode = decimal.ROUND_HALF_EVEN if rounding == "half-even" else decimal.ROUND_HALF_UP
    assert round_to(D(value), 1, rounding) == D(value).quantize(D("0.1"), rounding=mode)  # type: ignore[arg-type]


def test_exact_context_refuses_to_round() -> None:
    with pytest.raises(decimal.Inexact):
        EXACT.divide(D(1), D(3))


def test_allocate_splits_by_largest_remainder() -> None:
    # 10.00 over weights 1:1:1 -> 3.34, 3.33, 3.33 (the extra cent to the first of equal remainders)
    assert allocate(D("10.00"), [D(1), D(1), D(1)], 2) == [D("3.34"), D("3.33"), D("3.33")]
    # 1.00 over 10:5:5 -> 0.50, 0.25, 0.25
    assert allocate(D("1.00"), [D(10), D(5), D(5)], 2) == [D("0.50"), D("0.25"), D("0.25")]
    # Largest remainder, not first: 0.05 over 1:2:7 -> quotas 0.5, 1, 3.5 cents
    assert allocate(D("0.05"), [D(1), D(2), D(7)], 2) == [D("0.01"), D("0.01"), D("0.03")]
    assert allocate(D("-10.00"), [D(1), D(1), D(1)], 2) == [D("-3.34"), D("-3.33"), D("-3.33")]


@given(
    amount=st.decimals(
        min_value=-10_000, max_value=10_000, places=2, allow_nan=False, allow_infinity=False
    ),
    weights=st.lists(
        st.decimals(
            min_value="0.01", max_value=1000, places=2, allow_nan=False, allow_infinity=False
        ),
        min_size=1,
        max_size=8,
    ),
)
def test_allocate_pieces_sum_exactly_and_stay_near_their_quota(
    amount: Decimal, weights: list[Decimal]
) -> None:
    pieces = allocate(amount, weights, 2)
    assert sum(pieces) == amount
    total = sum(weights)
    for piece, weight in zip(pieces, weights, strict=True):
        assert abs(piece - amount * weight / total) < D("0.01")


def test_prorata_gives_the_whole_balance_on_the_last_part() -> None:
    balance = D("1.00")
    first = prorata(balance, D(1), D(3), 2)
    second = prorata(balance - first, D(1), D(2), 2)
    third = prorata(balance - first - second, D(1), D(1), 2)
    assert (first, second, third) == (D("0.33"), D("0.34"), D("0.33"))
    assert first + second + third == balance


def test_a_charge_finer_than_the_minor_unit_is_split_at_its_own_places() -> None:
    assert charge_places(D("1.0035"), "USD") == 4
    assert charge_places(D("1.00"), "USD") == 2
    assert charge_places(D("100"), "JPY") == 0


def test_trailing_zeros_do_not_make_a_charge_finer() -> None:
    assert charge_places(D("1.000"), "JPY") == 0
    assert charge_places(D("2.5000"), "USD") == 2
    assert charge_places(D("0E-7"), "USD") == 2
