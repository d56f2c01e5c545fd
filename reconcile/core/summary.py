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
    gross = _sums(book.closed_lots, "gross_pnl_unrounded")
    commission = _sums(book.positions, "commission")
    financing = _sums(book.positions, "financing")
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


def _sums(frame: pd.DataFrame, column: str) -> dict[str, Decimal]:
    """Exact sums per currency, over whole columns: 76 digits leave no room for a wrap."""
    if frame.empty:
        return {}
    values = pa.array(frame[column].array)
    wide = pa.decimal256(76, values.type.scale)
    table = pa.table({"currency": pa.array(frame["currency"].array), "value": values.cast(wide)})
    sums = table.group_by("currency", use_threads=False).aggregate([("value", "sum")])
    codes, totals = sums.column("currency").to_pylist(), sums.column("value_sum").to_pylist()
    return {str(c): ZERO + t for c, t in zip(codes, totals, strict=True)}
