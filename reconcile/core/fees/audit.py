"""``audit_fees``: every commission and financing charge against the schedule the user agreed."""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal

import pandas as pd

from reconcile import schema
from reconcile.core.canon import canonical_fills, canonical_financing, canonical_marks
from reconcile.core.engine import replay
from reconcile.core.fees.commissions import audit_commissions
from reconcile.core.fees.facts import fill_facts
from reconcile.core.fees.financing import FinancingAudit, audit_financing
from reconcile.core.fees.findings import Finding
from reconcile.core.fees.period import Period, parse_period
from reconcile.core.fees.rules import Schedule
from reconcile.core.fees.totals import fee_drag, leakage_totals, realized_gross, top_offenders
from reconcile.core.frames import build_frame
from reconcile.core.matching import _label, check_choice
from reconcile.errors import ConfigError
from reconcile.money import ZERO, exact_arithmetic

TABLES = {
    "findings": schema.FINDINGS,
    "leakage_totals": schema.LEAKAGE_TOTALS,
    "top_offenders": schema.TOP_OFFENDERS,
    "commission_orders": schema.COMMISSION_ORDERS,
    "commission_fills": schema.COMMISSION_FILLS,
    "financing_days": schema.FINANCING_DAYS,
    "unmatched": schema.FEE_UNMATCHED,
    "fee_drag": schema.FEE_DRAG,
}


@dataclass(frozen=True)
class FeeAudit:
    """What the fee audit found; every table is a DataFrame in the columns of :mod:`schema`.

    ``findings`` lists every charge unit (an order, a fill charged on its own, a financing day)
    that is off by more than the tolerance; ``leakage_totals`` sums them by account, venue,
    instrument and month per currency; ``commission_fills``, ``commission_orders`` and
    ``financing_days`` hold every line audited; ``unmatched`` the fills and financing events no
    rule covers (listed, never priced); ``fee_drag`` commissions and financing as a share of
    gross realized P&L.
    """

    findings: pd.DataFrame
    leakage_totals: pd.DataFrame
    top_offenders: pd.DataFrame
    commission_orders: pd.DataFrame
    commission_fills: pd.DataFrame
    financing_days: pd.DataFrame
    unmatched: pd.DataFrame
    fee_drag: pd.DataFrame
    schedule: Schedule
    period: Period | None
    tolerance: Decimal
    financing_audited: bool
    method: str

    def tables(self) -> dict[str, pd.DataFrame]:
        """The tables by name, in the order writers emit them."""
        return {name: getattr(self, name) for name in TABLES}

    def leakage(self) -> dict[str, Decimal]:
        """Overcharge beyond the tolerance per currency (commission and financing together)."""
        totals = self.leakage_totals[self.leakage_totals["dimension"] == "total"]
        return dict(zip(totals["currency"].tolist(), totals["leakage"].tolist(), strict=True))

    @property
    def has_leakage(self) -> bool:
        return any(amount > 0 for amount in self.leakage().values())


@exact_arithmetic
def audit_fees(
    fills: pd.DataFrame,
    schedule: Schedule,
    financing: pd.DataFrame | None = None,
    *,
    marks: pd.DataFrame | None = None,
    period: Period | str | None = None,
    tolerance: Decimal | str | int = 0,
    method: schema.Method = "fifo",
    timezone: str | None = None,
) -> FeeAudit:
    """Audit every commission (and, given ``financing``, every financing day) against a schedule.

    ``fills``, ``financing`` and ``marks`` are DataFrames in the canonical columns (what the
    readers return; raw text is validated too). ``period`` (``2026-11`` or
    ``2026-10-01..2026-11-15``, local dates in the schedule's zone) limits the lines audited;
    earlier fills still build positions and monthly tier volumes. A line off by no more than
    ``tolerance`` (an amount, in each currency) is not a finding. ``method`` is the relief
    method of the gross realized P&L that fee drag divides by. ``timezone`` places input times
    that carry no UTC offset.
    """
    check_choice("method", method, schema.METHODS)
    allowance = _tolerance(tolerance)
    window = parse_period(period) if isinstance(period, str) else period
    fills = canonical_fills(fills, source=_label(fills, "fills"), timezone=timezone)
    if financing is not None:
        financing = canonical_financing(
            financing, source=_label(financing, "financing"), timezone=timezone
        )
    if marks is not None:
        marks = canonical_marks(marks, source=_label(marks, "marks"), timezone=timezone)
    facts = fill_facts(fills, schedule.timezone)
    commissions = audit_commissions(facts, schedule, window, allowance)
    nightly = FinancingAudit([], [], [])
    if financing is not None:
        nightly = audit_financing(facts, financing, marks, schedule, window, allowance)
    findings = sorted(
        commissions.findings + nightly.findings, key=lambda f: (f.time, f.charge, f.reference)
    )
    gross = realized_gross(replay(fills, None, None, method, "at-fill"), window, schedule.timezone)
    currencies = [*fills["currency"].tolist(), *(row["currency"] for row in nightly.days)]
    return FeeAudit(
        findings=build_frame([f.row() for f in findings], schema.FINDINGS),
        leakage_totals=build_frame(leakage_totals(findings, currencies), schema.LEAKAGE_TOTALS),
        top_offenders=build_frame(top_offenders(findings), schema.TOP_OFFENDERS),
        commission_orders=build_frame(commissions.orders, schema.COMMISSION_ORDERS),
        commission_fills=build_frame(commissions.fills, schema.COMMISSION_FILLS),
        financing_days=build_frame(nightly.days, schema.FINANCING_DAYS),
        unmatched=build_frame(commissions.unmatched + nightly.unmatched, schema.FEE_UNMATCHED),
        fee_drag=build_frame(
            fee_drag(gross, commissions.fills, nightly.days, schedule.rounding),
            schema.FEE_DRAG,
        ),
        schedule=schedule,
        period=window,
        tolerance=allowance,
        financing_audited=financing is not None,
        method=method,
    )


def _tolerance(value: Decimal | str | int) -> Decimal:
    try:
        amount = value if isinstance(value, Decimal) else Decimal(str(value).strip())
    except ArithmeticError:
        amount = Decimal("NaN")
    if isinstance(value, float) or not amount.is_finite() or amount < ZERO:
        raise ConfigError(f"tolerance: expected an amount >= 0 such as 0.01, found {value!r}")
    return amount


__all__ = ["FeeAudit", "Finding", "audit_fees"]
