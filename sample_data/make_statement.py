"""Write the demo broker statement for November 2026, with one planted break.

The statement is what the (fictional) prime broker of Larkmoor Capital would send for November
2026: a line per account and instrument (realized P&L net of commissions, commission, financing,
open quantity and average price) and a realized total per account and currency, on New York
statement days ending 17:00. It is computed with reconcile itself from ``fills.csv`` and
``financing.csv``, then perturbed once: the broker never had fill ORD-00878-2, a second report of
the CFD sale ORD-00878-1 (same side, quantity and price, a second later) that our blotter kept.
``make demo`` ties the fills out against it and shows that explanation.

Run ``python sample_data/make_statement.py`` (``make sample-data`` runs it after generate.py);
the output is identical on every run. Every number is made up.
"""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path

import pandas as pd

import reconcile
from reconcile.core.tieout import derive_statement

HERE = Path(__file__).parent
PLANTED = "ORD-00878-2"  # the repeated report the broker never had
ZONE, CUTOFF = "America/New_York", "17:00"  # statement days end 17:00 New York


def statement() -> pd.DataFrame:
    fills = reconcile.read_fills(HERE / "fills.csv")
    financing = reconcile.read_financing(HERE / "financing.csv")
    theirs = fills[fills["fill_id"] != PLANTED]
    lines = derive_statement(
        theirs, "2026-11", financing=financing, basis="net", timezone=ZONE, cutoff=CUTOFF
    )
    return pd.concat([lines, _account_totals(lines)], ignore_index=True)


def _account_totals(lines: pd.DataFrame) -> pd.DataFrame:
    """Realized P&L per account and currency, as a statement's summary block shows it."""
    totals = []
    for (account, currency), block in lines.groupby(["account", "currency"], sort=True):
        realized = sum((Decimal(v) for v in block["realized_pnl"]), Decimal(0))
        totals.append(
            {
                **dict.fromkeys(lines.columns, ""),
                "account": account,
                "instrument": "",
                "currency": currency,
                "realized_pnl": format(realized, "f"),
                "basis": "net",
            }
        )
    return pd.DataFrame(totals, columns=lines.columns, dtype="str")


def main() -> None:
    path = HERE / "statement.csv"
    statement().to_csv(path, index=False, lineterminator="\n")
    print(f"wrote {path} (one planted break: {PLANTED} is not on it)")


if __name__ == "__main__":
    main()
