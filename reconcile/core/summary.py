"""Totals across a book, summed exactly and rounded once."""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal

import pandas as pd
import pyarrow as pa

from reconcile.core.book import TABLES, Book
from reconcile.core.frames import build_frame
from reconcile.money import ZERO, Rounding, exact_arithmetic, round_money

CURRENCY_TOTALS = ("currency", "realized_gross", "commission", "financing", "realized_net")

#: Exact sums per currency of what a book realized: gross, commission, financing.
Sums = dict[str, dict[str, Decimal]]


@exact_arithmetic
def currency_totals(book: Book) -> pd.DataFrame:
    """Realized gross, commission, financing and net per currency.

    Gross is the exact sum of every closed lot's unrounded gross, rounded once; commission and
    financing are what the positions realized under the run's commission convention.
    """
    return totals_frame(currency_sums(book), book.rounding)


def currency_sums(book: Book) -> Sums:
    gross = _sums(*book.arrow_columns("closed_lots", "currency", "gross_pnl_unrounded"))
    currencies, commission_column, financing_column = book.arrow_columns(
        "positions", "currency", "commission", "financing"
    )
    return {
        "gross": gross,
        "commission": _sums(currencies, commission_column),
        "financing": _sums(currencies, financing_column),
    }


@exact_arithmetic
def totals_frame(sums: Sums, rounding: Rounding) -> pd.DataFrame:
    """:func:`currency_totals` from exact sums, each rounded once."""
    gross, commission, financing = sums["gross"], sums["commission"], sums["financing"]
    rows = []
    for code in sorted(set(gross) | set(commission)):
        g, c, f = gross.get(code, ZERO), commission.get(code, ZERO), financing.get(code, ZERO)
        rows.append(
            {
                "currency": code,
                "realized_gross": round_money(g, code, rounding),
                "commission": round_money(c, code, rounding),
                "financing": round_money(f, code, rounding),
                "realized_net": round_money(g - c + f, code, rounding),
            }
        )
    return build_frame(rows, CURRENCY_TOTALS)


@dataclass
class BookTotals:
    """What a run's summary says of its book (row counts, totals by currency), added up over
    books of disjoint keys, so a run matched in batches reports what one whole run would."""

    method: str
    commission: str
    rounding: Rounding
    counts: dict[str, int] = field(default_factory=lambda: dict.fromkeys(TABLES, 0))
    sums: Sums = field(default_factory=lambda: {"gross": {}, "commission": {}, "financing": {}})

    @classmethod
    def of(cls, book: Book) -> BookTotals:
        totals = cls(book.method, book.commission, book.rounding)
        totals.add(book)
        return totals

    @exact_arithmetic
    def add(self, book: Book) -> None:
        for name in book.stored_tables():
            self.counts[name] += book.row_count(name)
        for measure, found in currency_sums(book).items():
            into = self.sums[measure]
            for code, value in found.items():
                into[code] = into.get(code, ZERO) + value

    def currency_totals(self) -> pd.DataFrame:
        return totals_frame(self.sums, self.rounding)


def _sums(currencies: pa.ChunkedArray, values: pa.ChunkedArray) -> dict[str, Decimal]:
    """Exact sums per currency, over whole columns, typed so that no sum can wrap: n values of
    p digits sum to at most p + len(str(n)) digits, in decimal128 when that is 38 or fewer, else
    in 76-digit decimal256."""
    if not len(values):
        return {}
    scale = values.type.scale
    narrow = pa.types.is_decimal128(values.type) and values.type.precision + len(str(len(values)))
    if narrow and narrow <= 38:
        # decimal128 lays out every precision alike: the wider type is a view, not a copy.
        wide = pa.decimal128(38, scale)
        widened = pa.chunked_array([c.view(wide) for c in values.chunks], wide)
    else:
        widened = values.cast(pa.decimal256(76, scale))
    table = pa.table({"currency": currencies, "value": widened})
    sums = table.group_by("currency", use_threads=False).aggregate([("value", "sum")])
    codes, totals = sums.column("currency").to_pylist(), sums.column("value_sum").to_pylist()
    return {str(c): ZERO + t for c, t in zip(codes, totals, strict=True)}
