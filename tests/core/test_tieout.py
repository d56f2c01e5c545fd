"""Tie-out against published figures, a slow reference matcher, and the statement shapes it reads.

Published figures: Hermanson, Edwards & Maher, "Accounting Principles: A Business Perspective"
(Global Text Project, CC BY 3.0), chapter 7, exhibits 51-58 (per-sale cost of goods sold under
perpetual FIFO, LIFO and moving average), the same case as tests/core/test_published_cases.py.
"""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

import reconcile
from reconcile.core.canon import canonical_fills
from reconcile.core.period import Period
from reconcile.core.tieout import derive_statement
from reconcile.errors import ConfigError, ValidationError
from reconcile.money import minor_unit, round_fraction
from reconcile.schema import Method
from tests import reference
from tests.builders import concat, fills
from tests.statements import causes, line, rates, statement
from tests.strategies import histories

D = Decimal
SALE_PRICE = "10.00"  # the exhibits give no sale price; COGS does not depend on it
HERMANSON = [
    ("beginning", "buy", 10, "8.00", "2026-01-01"),
    ("mar02", "buy", 10, "8.50", "2026-03-02"),
    ("mar10", "sell", 10, SALE_PRICE, "2026-03-10"),
    ("may28", "buy", 20, "8.40", "2026-05-28"),
    ("jul14", "sell", 20, SALE_PRICE, "2026-07-14"),
    ("aug12", "buy", 10, "9.00", "2026-08-12"),
    ("sep07", "sell", 10, SALE_PRICE, "2026-09-07"),
    ("oct12", "buy", 20, "8.80", "2026-10-12"),
    ("nov22", "sell", 20, SALE_PRICE, "2026-11-22"),
    ("dec21", "buy", 10, "9.10", "2026-12-21"),
]
Q3 = ("2026-07-01", "2026-09-30")


def _q3_statement(realized: str, average: str) -> pd.DataFrame:
    return statement(
        [
            {
                "account": "A",
                "instrument": "X",
                "currency": "USD",
                "realized_pnl": realized,
                "open_quantity": "10",
                "average_price": average,
            }
        ]
    )


def test_hermanson_third_quarter_ties_under_fifo() -> None:
    # Exhibits: FIFO COGS of the 14 July and 7 September sales 169.00 + 84.00 = 253.00, so 30
    # units sold at 10.00 realize 300.00 - 253.00 = 47.00; the 10 left are the 9.00 layer.
    result = reconcile.tie_out(fills(HERMANSON), _q3_statement("47.00", "9.00"), Q3)
    assert result.counts() == {"tied": 3, "within tolerance": 0, "break": 0}


def test_hermanson_lifo_statement_is_explained_by_the_lifo_method() -> None:
    # Exhibits: LIFO COGS 168.00 + 90.00 = 258.00, realized 42.00; the 10 left are the 8.00
    # layer. Our FIFO run breaks on realized P&L and average price; LIFO reproduces both
    # (highest-cost-first equals LIFO on this data, derived, so it ranks second).
    result = reconcile.tie_out(fills(HERMANSON), _q3_statement("42.00", "8.00"), Q3)
    realized = line(result, measure="realized_pnl")
    assert (realized["ours"], realized["theirs"], realized["difference"]) == (
        D("47.00"),
        D("42.00"),
        D("5.00"),
    )
    assert realized["status"] == "break"
    assert realized["top_cause"] == "relief_method"
    found = causes(result, realized["line"])
    assert "(lifo)" in found[0]["explanation"]
    assert "(hifo)" in found[1]["explanation"]
    assert line(result, measure="average_price")["top_cause"] == "relief_method"
    lifo = reconcile.tie_out(fills(HERMANSON), _q3_statement("42.00", "8.00"), Q3, method="lifo")
    assert lifo.counts()["break"] == 0


def test_hermanson_year_under_moving_average() -> None:
    # Exhibits: perpetual moving average COGS 511.42, ending inventory 178.58 for 20 units (the
    # book's unit cost 8.929): 60 units sold at 10.00 realize 600.00 - 511.42 = 88.58.
    year = statement(
        [
            {
                "account": "A",
                "instrument": "X",
                "currency": "USD",
                "realized_pnl": "88.58",
                "open_quantity": "20",
                "average_price": "8.929",
            }
        ]
    )
    result = reconcile.tie_out(
        fills(HERMANSON), year, ("2026-01-01", "2026-12-31"), method="average"
    )
    assert result.counts()["break"] == 0
    fifo = reconcile.tie_out(fills(HERMANSON), year, ("2026-01-01", "2026-12-31"))
    assert line(fifo, measure="realized_pnl")["ours"] == D("89.00")  # exhibits: FIFO COGS 511
    assert "(average)" in causes(fifo, line(fifo, measure="realized_pnl")["line"])[0]["explanation"]


# -- against the slow reference matcher ------------------------------------------------------------

UNIT = D("0.5")


def _reference_statement(history: pd.DataFrame, method: str, span: Period) -> pd.DataFrame:
    """Realized in the period and open quantity at its end, by tests/reference.py (exact)."""
    ordered = canonical_fills(history).sort_values("time")
    rows = [{str(k): v for k, v in r.items()} for r in ordered.to_dict("records")]
    before = reference.replay([r for r in rows if r["time"] < span.start], method, UNIT)
    through = reference.replay([r for r in rows if r["time"] < span.end], method, UNIT)
    currency = {(r["account"], r["instrument"]): r["currency"] for r in rows}
    lines = []
    for key, result in through.items():
        gross = result.gross - (before[key].gross if key in before else Fraction(0))
        places = minor_unit(currency[key])
        assert places is not None
        lines.append(
            {
                "account": key[0],
                "instrument": key[1],
                "currency": currency[key],
                "realized_pnl": round_fraction(gross, places),
                "open_quantity": D(result.position.numerator) / D(result.position.denominator),
            }
        )
    return statement(lines)


@given(
    history=histories(step=UNIT),
    method=st.sampled_from(["fifo", "lifo", "hifo"]),
    bounds=st.tuples(st.integers(0, 60), st.integers(0, 60)),
)
def test_a_statement_from_the_reference_matcher_ties(
    history: pd.DataFrame, method: Method, bounds: tuple[int, int]
) -> None:
    # The reference matches unit by unit in exact rationals, sharing nothing with the engine.
    first, span_minutes = sorted(bounds)
    start = pd.Timestamp("2026-11-02T09:00Z") + pd.Timedelta(minutes=first)
    end = start + pd.Timedelta(minutes=span_minutes + 1)
    span = Period(start.date(), end.date(), "UTC", None, start, end, "test")
    theirs = _reference_statement(history, method, span)
    if theirs.empty:
        return
    result = reconcile.tie_out(history, theirs, span, method=method)
    assert set(result.lines["status"]) == {"tied"}, result.breaks.to_dict("records")


# -- statement shapes ---------------------------------------------------------------------------

TWO_KEYS = concat(
    fills(
        [
            ("b1", "buy", 10, "100.00", "2026-11-02", "1.00"),
            ("s1", "sell", 10, "105.50", "2026-11-03", "1.00"),
        ],
        instrument="KSTL",
    ),
    fills(
        [
            ("b2", "buy", 4, "20.00", "2026-11-02", "0.50"),
            ("s2", "sell", 2, "19.00", "2026-11-04", "0.50"),
        ],
        instrument="NORR",
    ),
)


KSTL_ONLY = TWO_KEYS[TWO_KEYS["instrument"] == "KSTL"]


def test_account_lines_sum_the_account_and_lines_of_one_key_add_up() -> None:
    # Derived: KSTL realizes 55.00 gross, NORR -2.00; the account line is their sum.
    theirs = statement(
        [
            {"account": "A", "instrument": "", "currency": "USD", "realized_pnl": "53.00"},
            {"account": "A", "instrument": "NORR", "currency": "USD", "open_quantity": "1"},
            {"account": "A", "instrument": "NORR", "currency": "USD", "open_quantity": "1"},
            {"account": "A", "instrument": "KSTL", "currency": "USD", "realized_pnl": "54.00"},
            {"account": "A", "instrument": "KSTL", "currency": "USD", "realized_pnl": "1.00"},
        ]
    )
    result = reconcile.tie_out(TWO_KEYS, theirs, "2026-11")
    assert result.counts() == {"tied": 3, "within tolerance": 0, "break": 0}
    assert line(result, instrument="", measure="realized_pnl")["ours"] == D("53.00")
    assert line(result, instrument="NORR")["statement_rows"] == "3;4"


def test_net_basis_takes_commissions_and_each_basis_is_its_own_line() -> None:
    # Derived: at close KSTL carries 2.00 of commission and NORR's sold half 0.75.
    theirs = statement(
        [
            {
                "account": "A",
                "instrument": "KSTL",
                "currency": "USD",
                "realized_pnl": "53.00",
                "basis": "net",
            },
            {
                "account": "A",
                "instrument": "KSTL",
                "currency": "USD",
                "realized_pnl": "55.00",
                "basis": "gross",
            },
            {
                "account": "A",
                "instrument": "NORR",
                "currency": "USD",
                "realized_pnl": "-2.75",
                "commission": "0.75",
                "basis": "net",
            },
        ]
    )
    result = reconcile.tie_out(TWO_KEYS, theirs, "2026-11")
    assert result.counts()["break"] == 0
    assert len(result.lines[result.lines["measure"] == "realized_pnl"]) == 3


def test_keys_only_one_side_has_are_breaks_and_a_renamed_one_is_named() -> None:
    theirs = statement(
        [
            {"account": "A", "instrument": "KSTL.X", "currency": "USD", "realized_pnl": "55.00"},
            {"account": "A", "instrument": "NORR", "currency": "USD", "realized_pnl": "-2.00"},
            {"account": "B", "instrument": "NORR", "currency": "USD", "realized_pnl": "0"},
        ]
    )
    result = reconcile.tie_out(TWO_KEYS, theirs, "2026-11")
    unknown = line(result, instrument="KSTL.X")
    assert (unknown["ours"], unknown["status"], unknown["note"]) == (
        D("0"),
        "break",
        "not in our books",
    )
    assert unknown["top_cause"] == "naming"
    assert "our A KSTL matches the statement's A KSTL.X" in unknown["explanation"]
    ours_only = line(result, instrument="KSTL", measure="realized_pnl")
    assert (ours_only["theirs"], ours_only["note"]) == (None, "not on the statement")
    # Leaving KSTL out ties both its lines; the rename explains the realized P&L only.
    assert [c["kind"] for c in causes(result, ours_only["line"])] == ["unknown_key", "naming"]
    charged = line(result, instrument="KSTL", measure="commission")  # 2.00 USD, no match
    assert charged["top_cause"] == "unknown_key"
    assert causes(result, charged["line"])[0]["fill_ids"] == "b1;s1"
    nothing = line(result, account="B")
    assert (nothing["status"], nothing["note"]) == ("tied", "account not in our books")


def test_tolerances_absolute_relative_and_per_measure() -> None:
    theirs = statement(
        [
            {
                "account": "A",
                "instrument": "KSTL",
                "currency": "USD",
                "realized_pnl": "55.03",
                "commission": "2.10",
                "open_quantity": "0",
            },
        ]
    )
    strict = reconcile.tie_out(KSTL_ONLY, theirs, "2026-11")
    assert set(strict.breaks["measure"]) == {"realized_pnl", "commission"}
    loose = reconcile.tie_out(KSTL_ONLY, theirs, "2026-11", tolerance=3)
    assert line(loose, measure="realized_pnl")["status"] == "within tolerance"
    assert line(loose, measure="realized_pnl")["allowed"] == D("0.03")
    assert line(loose, measure="commission")["status"] == "break"
    relative = reconcile.tie_out(KSTL_ONLY, theirs, "2026-11", relative_tolerance="0.05")
    assert line(relative, measure="commission")["status"] == "within tolerance"  # 0.105 >= 0.10
    by_measure = reconcile.tie_out(
        KSTL_ONLY, theirs, "2026-11", tolerances={"commission": reconcile.Tolerance(D(10))}
    )
    assert line(by_measure, measure="commission")["status"] == "within tolerance"
    assert line(by_measure, measure="realized_pnl")["status"] == "break"


def test_the_sign_cause_names_an_amount_shown_with_the_other_sign() -> None:
    theirs = statement(
        [{"account": "A", "instrument": "KSTL", "currency": "USD", "commission": "-2.00"}]
    )
    result = reconcile.tie_out(KSTL_ONLY, theirs, "2026-11")
    assert line(result, measure="commission")["top_cause"] == "sign"


def test_an_opening_file_stands_for_the_history_before_the_period() -> None:
    # Derived: carrying NORR's open lot into December and replaying from there gives the same
    # December figures as replaying the whole history.
    history = concat(
        TWO_KEYS,
        fills([("s3", "sell", 2, "21.00", "2026-12-01")], instrument="NORR"),
    )
    book = reconcile.match(TWO_KEYS)
    theirs = derive_statement(history, "2026-12")
    with_opening = reconcile.tie_out(history, theirs, "2026-12", opening=book.open_lots)
    assert with_opening.counts()["break"] == 0
    assert with_opening.left_out == {"fills before the period (the opening lots stand for them)": 4}


# -- FX -------------------------------------------------------------------------------------------

EURO_TRADES = concat(
    fills(
        [
            ("e1", "buy", 10, "50.00", "2026-11-02T10:00:00Z"),
            ("e2", "sell", 5, "60.00", "2026-11-03T16:00:00Z"),
            ("e3", "sell", 5, "40.00", "2026-11-04T10:00:00Z"),
        ],
        instrument="OSTB",
        currency="EUR",
    ),
    fills(
        [("u1", "buy", 1, "10.00", "2026-11-02"), ("u2", "sell", 1, "12.00", "2026-11-05")],
        instrument="CRVN",
    ),
)
EUR_USD = rates(
    [
        ("2026-11-02T16:00:00Z", "EUR", "USD", "1.0800"),
        ("2026-11-03T16:00:00Z", "EUR", "USD", "1.0900"),  # at the very instant of e2's close
        ("2026-11-04T16:00:00Z", "USD", "EUR", "0.9000"),  # the inverse quote, after e3
        ("2026-11-30T16:00:00Z", "EUR", "USD", "1.1000"),
    ]
)


def test_converted_lines_use_the_rate_in_force_at_each_close() -> None:
    # Common practice: EUR/USD 1.09 means 1 EUR = 1.09 USD. e2 realizes 50.00 EUR at the instant
    # a 1.09 quote appears (a quote at the close is in force): 54.50 USD. e3 realizes -50.00 EUR
    # while 1.09 is still in force: -54.50 USD. The USD instrument adds 2.00 to the account line.
    theirs = statement(
        [
            {"account": "A", "instrument": "OSTB", "currency": "USD", "realized_pnl": "0.00"},
            {"account": "A", "instrument": "", "currency": "USD", "realized_pnl": "2.00"},
        ]
    )
    result = reconcile.tie_out(EURO_TRADES, theirs, "2026-11", rates=EUR_USD, base="usd")
    assert result.counts()["break"] == 0
    converted = result.conversions
    assert converted["rate"].tolist() == [D("1.09"), D("1.09")]
    assert converted["converted"].tolist() == [D("54.50"), D("-54.50")]
    assert line(result, instrument="OSTB")["fx_rate"] == D("1.09")


def test_an_inverse_quote_divides_and_rounds_once() -> None:
    # A sale after the 0.90 USD/EUR quote: 1 EUR = 1/0.9 USD; 50.00 EUR is 55.555... USD,
    # rounded once half-even to 55.56.
    late = fills(
        [
            ("e1", "buy", 10, "50.00", "2026-11-02T10:00:00Z"),
            ("e2", "sell", 10, "55.00", "2026-11-05T10:00:00Z"),
        ],
        instrument="OSTB",
        currency="EUR",
    )
    theirs = statement(
        [{"account": "A", "instrument": "OSTB", "currency": "USD", "realized_pnl": "55.56"}]
    )
    result = reconcile.tie_out(late, theirs, "2026-11", rates=EUR_USD, base="USD")
    assert result.counts()["break"] == 0
    assert result.conversions["pair"].tolist() == ["USD/EUR"]


def test_a_statement_converted_at_the_period_end_rate_is_explained() -> None:
    # Derived: 100.00 EUR realized on 3 November is 109.00 USD at the 1.09 in force then, and
    # 110.00 USD at 1.10, the rate in force at the end of November.
    one_close = fills(
        [
            ("e1", "buy", 10, "50.00", "2026-11-02T10:00:00Z"),
            ("e2", "sell", 10, "60.00", "2026-11-03T16:00:00Z"),
        ],
        instrument="OSTB",
        currency="EUR",
    )
    theirs = statement(
        [{"account": "A", "instrument": "OSTB", "currency": "USD", "realized_pnl": "110.00"}]
    )
    result = reconcile.tie_out(one_close, theirs, "2026-11", rates=EUR_USD, base="USD")
    broken = line(result, instrument="OSTB")
    assert (broken["ours"], broken["status"]) == (D("109.00"), "break")
    assert broken["top_cause"] == "fx_rate"
    assert "the rate in force at the period end" in broken["explanation"]


def test_a_missing_rate_is_an_error_naming_what_was_needed() -> None:
    early = rates([("2026-11-20T16:00:00Z", "EUR", "USD", "1.08")])
    theirs = statement(
        [{"account": "A", "instrument": "OSTB", "currency": "USD", "realized_pnl": "1"}]
    )
    with pytest.raises(ValidationError) as caught:
        reconcile.tie_out(EURO_TRADES, theirs, "2026-11", rates=early, base="USD")
    assert [str(p) for p in caught.value.problems] == [
        "rates: expected a EUR/USD or USD/EUR rate at or before 2026-11-03T16:00:00Z, to convert "
        "A OSTB gross of e2 into USD (2 amounts lack a rate)"
    ]


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"base": "USD"}, "base: converting into a base currency needs FX rates"),
        ({"rates": EUR_USD}, "rates: FX rates are used only with a base currency"),
        ({"base": "DOLLARS", "rates": EUR_USD}, "base: expected an ISO 4217 currency code"),
        ({"tolerance": "-1"}, "tolerance: expected a decimal >= 0, found '-1'"),
        ({"relative_tolerance": 0.01}, "not a binary float), found 0.01"),
        ({"method": "random"}, "method: expected one of fifo, lifo, hifo, average"),
    ],
)
def test_bad_options_are_config_errors(options: dict[str, object], message: str) -> None:
    theirs = statement([{"account": "A", "currency": "USD", "realized_pnl": "1"}])
    with pytest.raises(ConfigError) as caught:
        reconcile.tie_out(EURO_TRADES, theirs, "2026-11", **options)  # type: ignore[arg-type]
    assert message in str(caught.value)
