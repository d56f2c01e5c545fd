"""Statement and FX-rate files: values arrive exactly, every problem names its file, row, column."""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path

import pandas as pd
import pytest

import reconcile
from reconcile.errors import MissingColumnsError, ValidationError

D = Decimal
HEADER = "account,instrument,currency,realized_pnl,commission,open_quantity,average_price,basis\n"


def _write(tmp_path: Path, text: str, name: str = "statement.csv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _problems(error: pytest.ExceptionInfo[ValidationError]) -> list[str]:
    return [str(p) for p in error.value.problems]


def test_a_statement_reads_exactly_with_its_average_price_places(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        HEADER
        + "ACC1,KSTL-DEC26,USD,1687.50,4.50,5,1234.5,net\n"
        + "ACC1,,USD,1687.5,,,,\n"
        + "ACC2,NORR,JPY,3400,100,-100,1234.25,GROSS\n",
    )
    statement = reconcile.read_statement(path)
    assert statement["realized_pnl"].tolist() == [D("1687.50"), D("1687.50"), D("3400")]
    assert statement["basis"].tolist() == ["net", "gross", "gross"]
    assert statement["instrument"].tolist() == ["KSTL-DEC26", "", "NORR"]
    assert statement["average_price_places"].tolist() == [1, 0, 2]
    assert pd.isna(statement["commission"].iloc[1])
    assert statement.attrs["measures"] == [
        "realized_pnl",
        "commission",
        "open_quantity",
        "average_price",
    ]
    assert statement["source_row"].tolist() == [2, 3, 4]


def test_every_statement_problem_is_reported_together(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        HEADER
        + "ACC1,KSTL,USD,12.5O,,,,\n"  # letter O, not a zero
        + ",KSTL,USD,1,,,,\n"
        + "ACC1,KSTL,ABC,1,,,,\n"
        + "ACC1,KSTL,USD,1,,,,after\n"
        + "ACC1,,USD,,,5,,\n"
        + "ACC1,NORR,JPY,,,,,\n"
        + "ACC1,NORR,JPY,,,1,10.5,\n"
        + "ACC1,NORR,JPY,,,1,10.6,\n",
    )
    with pytest.raises(ValidationError) as caught:
        reconcile.read_statement(path)
    source = str(path)
    assert _problems(caught) == [
        f"{source} row 2, column realized_pnl: expected a decimal number (finite, plain digits), "
        "found '12.5O'",
        f"{source} row 3, column account: expected a non-empty value, found ''",
        f"{source} row 4, column currency: expected an ISO 4217 currency code such as USD, "
        "found 'ABC'",
        f"{source} row 5, column basis: expected gross or net (blank is gross), found 'after'",
        f"{source} row 6, column open_quantity: expected blank on an account-level line (blank "
        "instrument): amounts of different instruments add up, their quantities and prices do "
        "not, found '5'",
        f"{source} row 7: expected a value in at least one of realized_pnl, commission, "
        "open_quantity, average_price",
        f"{source} row 9, column average_price: expected one average_price per account, "
        "instrument and currency (row 8 gives one for ACC1 NORR), found '10.6'",
    ]


def test_a_statement_needs_an_account_a_currency_and_a_measure(tmp_path: Path) -> None:
    with pytest.raises(MissingColumnsError, match="missing required column: currency"):
        reconcile.read_statement(_write(tmp_path, "account,instrument,realized_pnl\nA,X,1\n"))
    with pytest.raises(MissingColumnsError, match="expected at least one of the columns"):
        reconcile.read_statement(_write(tmp_path, "account,instrument,currency\nA,X,USD\n"))


def test_rates_read_exactly_from_pairs_or_base_and_quote(tmp_path: Path) -> None:
    pairs = _write(
        tmp_path,
        "time,pair,rate\n2026-11-02T16:00:00Z,EURUSD,1.0842\n2026-11-02T16:00:00Z,USD/JPY,151.37\n"
        "2026-11-02T16:00:00Z,EURUSD,1.0842\n",
        "rates.csv",
    )
    rates = reconcile.read_rates(pairs)
    assert rates[["base", "quote"]].values.tolist() == [["EUR", "USD"], ["USD", "JPY"]]
    assert rates["rate"].tolist() == [D("1.0842"), D("151.37")]  # the exact repeat dropped
    columns = _write(
        tmp_path, "time,base,quote,rate,source\n2026-11-02,eur,usd,1.08,desk\n", "other.csv"
    )
    with pytest.raises(ValidationError, match="a UTC offset"):
        reconcile.read_rates(columns)
    placed = reconcile.read_rates(columns, timezone="Europe/Paris")
    assert placed["time"].iloc[0] == pd.Timestamp("2026-11-01T23:00Z")
    assert placed["source"].iloc[0] == "desk"


def test_every_rate_problem_is_reported_together(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        "time,pair,rate\n"
        "2026-11-02T16:00:00Z,EUR-USD,1.0842\n"
        "2026-11-02T16:00:00Z,EURUSD,1.0843\n"
        "2026-11-02T16:00:00Z,EUROS,1\n"
        "2026-11-02T16:00:00Z,USDUSD,1\n"
        "2026-11-02T16:00:00Z,GBPUSD,0\n",
        "rates.csv",
    )
    with pytest.raises(ValidationError) as caught:
        reconcile.read_rates(path)
    source = str(path)
    assert _problems(caught) == [
        f"{source} row 3, column rate: expected one rate per pair, source and time (row 2 gives "
        "1.0842 for EUR/USD at that time), found '1.0843'",
        f"{source} row 4, column pair: expected a currency pair such as EURUSD or EUR/USD, "
        "found 'EUROS'",
        f"{source} row 5, column quote: expected a currency other than the base, found 'USD'",
        f"{source} row 6, column rate: expected a decimal > 0, found '0'",
    ]
