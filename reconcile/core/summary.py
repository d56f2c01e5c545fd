"""Totals across a book, summed exactly and rounded once."""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pyarrow as pa

from reconcile.core.book import Book
from reconcile.core.frames import build_frame
from reconcile.money import ZERO, exact_arithmetic, round_money

CURRENCY_TOTALS = ("currency", "realized_gross", "commission", "financing", "realized_net")


@exact_arithmetic
def currency_totals(book: Book) -> pd.DataFrame:
    """Realized gross, commission, financing and net per currency.

    Gross is the exact sum of every closed lot's unrounded gross, rounded once; commission and
    financing are what the positions realized under the run's commission convention.
    """
    gross = _sums(*book.arrow_columns("closed_lots", "currency", "gross_pnl_unrounded"))
    currencies, commission_column, financing_column = book.arrow_columns(
        "positions", "currency", "commission", "financing"
    )
    commission = _sums(currencies, commission_column)
    financing = _sums(currencies, financing_column)
    rows = []
    for code in sorted(set(gross) | set(commission)):
        g, c, f = gross.get(code, ZERO), commission.get(code, ZERO), financing.get(code, ZERO)
        rows.append(
            {
                "currency": code,
                "realized_gross": round_money(g, code, book.rounding),
                "commission": round_money(c, code, book.rounding),
                "financing": round_money(f, code, book.rounding),
                "realized_net": round_money(g - c + f, code, book.rounding),
            }
        )
    return build_frame(rows, CURRENCY_TOTALS)


def _sums(currencies: pa.Array, values: pa.Array) -> dict[str, Decimal]:
    """Exact sums per currency, over whole columns, typed so that no sum can wrap: n values of
    p digits sum to at most p + len(str(n)) digits, in decimal128 when that is 38 or fewer, else
    in 76-digit decimal256."""
    if not len(values):
        return {}
    scale = values.type.scale
    narrow = pa.types.is_decimal128(values.type) and values.type.precision + len(str(len(values)))
    wide = pa.decimal128(38, scale) if narrow and narrow <= 38 else pa.decimal256(76, scale)
    table = pa.table({"currency": currencies, "value": values.cast(wide)})
    sums = table.group_by("currency", use_threads=False).aggregate([("value", "sum")])
    codes, totals = sums.column("currency").to_pylist(), sums.column("value_sum").to_pylist()
    return {str(c): ZERO + t for c, t in zip(codes, totals, strict=True)}
