"""The fee audit shown to a person: a short terminal summary and a self-contained HTML page."""

from __future__ import annotations

import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import pandas as pd
from rich import box
from rich.console import Console
from rich.table import Table as RichTable

from reconcile.core.fees.audit import FeeAudit
from reconcile.core.fees.findings import OVERCHARGE, UNDERCHARGE
from reconcile.io.render.html import Fact, Page, Section, Table
from reconcile.io.render.numbers import grouped
from reconcile.notice import CAUTION

#: Columns of the terminal's totals table, and their headings.
TOTAL_COLUMNS = {
    "commission_overcharge": "commission",
    "financing_overcharge": "financing",
    "leakage": "leakage",
}
SHOWN_OFFENDERS = 5
MORE_COLUMNS = "More columns in commission_orders.csv and financing_days.csv beside this page."
#: Columns the page shows first; every column is in the tables written beside it.
PAGE_COLUMNS = {
    "leakage_totals": (
        "dimension",
        "value",
        "currency",
        "leakage",
        "findings",
        "commission_overcharge",
        "financing_overcharge",
        "commission_undercharge",
        "financing_undercharge",
    ),
    "top_offenders": (
        "rank",
        "charge",
        "reference",
        "account",
        "instrument",
        "currency",
        "expected",
        "charged",
        "overcharge",
        "cause",
    ),
    "commission_orders": (
        "account",
        "order_id",
        "instrument",
        "venue",
        "currency",
        "rule",
        "fills",
        "quantity",
        "tier",
        "expected",
        "charged",
        "overcharge",
        "undercharge",
        "cause",
    ),
    "financing_days": (
        "account",
        "instrument",
        "currency",
        "rule",
        "date",
        "weekday",
        "position",
        "price",
        "nights",
        "expected",
        "charged",
        "overcharge",
        "undercharge",
        "cause",
    ),
}


def describe(audit: FeeAudit, inputs: Sequence[Mapping[str, Any]], schedule_path: str) -> list[str]:
    """What was audited against what, in a few lines (the summary and the page share them)."""
    lines = []
    for n, read in enumerate(inputs):
        if n == 0:
            lines.append(
                f"Audited {read['accepted']:,} fills from {read['source']} against {schedule_path}"
            )
        else:
            lines.append(f"  with {read['accepted']:,} {read['kind']} from {read['source']}")
        if read.get("duplicates_dropped"):
            lines[-1] += f" ({read['duplicates_dropped']:,} exact repeats dropped)"
    schedule = audit.schedule
    period = f"Period {audit.period}" if audit.period else "Every date in the inputs"
    lines.append(
        f"{period} ({schedule.timezone}), tolerance {audit.tolerance}, rounding {schedule.rounding}"
    )
    if not audit.financing_audited:
        lines.append("Financing not audited (no --financing file)")
    return lines


def fee_summary(
    out: Console,
    audit: FeeAudit,
    inputs: Sequence[Mapping[str, Any]],
    schedule_path: str,
    written: Sequence[Path],
) -> None:
    for line in describe(audit, inputs, schedule_path):
        out.print(line)
    out.print(_totals(audit.leakage_totals))
    if len(audit.top_offenders):
        out.print(_offenders(audit.top_offenders.head(SHOWN_OFFENDERS)))
    if len(audit.unmatched):
        out.print(_unmatched_line(audit.unmatched))
    if written:
        folder = written[0].parent
        out.print(f"Results in {folder}{os.sep}: " + ", ".join(p.name for p in written))
    out.print(CAUTION, style="dim")


def _rich_table(title: str) -> RichTable:
    return RichTable(
        title=title, title_justify="left", box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False
    )


def _totals(totals: pd.DataFrame) -> RichTable:
    table = _rich_table("Overcharged beyond the tolerance, by currency")
    table.add_column("currency")
    for heading in (*TOTAL_COLUMNS.values(), "undercharged", "findings"):
        table.add_column(heading, justify="right")
    for row in totals[totals["dimension"] == "total"].to_dict(orient="records"):
        code = row["currency"]
        under = row["commission_undercharge"] + row["financing_undercharge"]
        table.add_row(
            code,
            *(grouped(row[c], code) for c in TOTAL_COLUMNS),
            grouped(under, code),
            f"{row['findings']:,}",
        )
    return table


def _offenders(top: pd.DataFrame) -> RichTable:
    table = _rich_table("Largest overcharges")
    for name in ("charge", "reference", "instrument", "overcharge", "cause"):
        table.add_column(name, justify="right" if name == "overcharge" else "left")
    for row in top.to_dict(orient="records"):
        table.add_row(
            row["charge"],
            row["reference"],
            row["instrument"],
            f"{grouped(row['overcharge'], row['currency'])} {row['currency']}",
            row["cause"],
        )
    return table


def _unmatched_line(unmatched: pd.DataFrame) -> str:
    counts = unmatched["source"].value_counts()
    parts = []
    for source, noun in (("fills", "fill"), ("financing", "financing event")):
        count = int(counts.get(source, 0))
        if count:
            parts.append(f"{count:,} {noun}{'s' if count != 1 else ''}")
    verb = "was" if sum(int(n) for n in counts) == 1 else "were"
    return " and ".join(parts) + f" matched no rule and {verb} not priced (see unmatched)"


def fee_page(
    audit: FeeAudit,
    inputs: Sequence[Mapping[str, Any]],
    schedule_path: str,
    provenance: Sequence[str],
) -> Page:
    """The audit as an HTML page: summary, totals, offenders, findings, unmatched, fee drag."""
    off = audit.findings
    flagged = (OVERCHARGE, UNDERCHARGE)
    orders = audit.commission_orders
    orders = orders[orders["status"].isin(flagged)][list(PAGE_COLUMNS["commission_orders"])]
    days = audit.financing_days
    days = days[days["status"].isin(flagged)][list(PAGE_COLUMNS["financing_days"])]
    top = audit.top_offenders[list(PAGE_COLUMNS["top_offenders"])]
    totals = audit.leakage_totals[list(PAGE_COLUMNS["leakage_totals"])]
    return Page(
        title="Fee audit",
        subtitle=audit.schedule.name or schedule_path,
        sections=[
            Section(
                "Summary",
                "summary",
                paragraphs=describe(audit, inputs, schedule_path),
                facts=_facts(audit),
                tone="bad" if audit.has_leakage else "good",
            ),
            Section(
                "Leakage by account, venue, instrument and month",
                "totals",
                tables=[Table("Over- and undercharges beyond the tolerance", totals)],
            ),
            Section(
                "Top offenders",
                "offenders",
                tables=[Table("The largest overcharges in each currency", top)],
            ),
            Section(
                "Findings",
                "findings",
                paragraphs=[
                    "Every order, fill or financing day charged differently from the schedule "
                    "by more than the tolerance, with the likely cause where a known "
                    "misapplication of the schedule reproduces the charge exactly."
                ],
                tables=[
                    Table("Commission orders off the schedule", orders, note=MORE_COLUMNS),
                    Table("Financing days off the schedule", days, note=MORE_COLUMNS),
                ],
                tone="bad" if len(off) else "good",
            ),
            Section(
                "Not covered by the schedule",
                "unmatched",
                paragraphs=["Fills and financing events no rule covers: listed, never priced."],
                tables=[Table("Unmatched", audit.unmatched)],
                tone="warn" if len(audit.unmatched) else "",
            ),
            Section(
                "Fee drag",
                "drag",
                paragraphs=[
                    "Commissions and financing paid as a percentage of gross realized P&L "
                    f"({audit.method.upper()} relief), as charged and at the schedule's rates; "
                    "blank where gross realized P&L is not positive."
                ],
                tables=[Table("Fee drag by account", audit.fee_drag)],
            ),
        ],
        provenance=provenance,
    )


def _facts(audit: FeeAudit) -> list[Fact]:
    facts = [
        Fact(f"Leakage {code}", grouped(amount, code), "bad" if amount > 0 else "good")
        for code, amount in audit.leakage().items()
    ]
    facts.append(Fact("Findings", f"{len(audit.findings):,}", "bad" if len(audit.findings) else ""))
    facts.append(Fact("Orders audited", f"{len(audit.commission_orders):,}"))
    facts.append(Fact("Financing days", f"{len(audit.financing_days):,}"))
    facts.append(
        Fact("Unmatched", f"{len(audit.unmatched):,}", "warn" if len(audit.unmatched) else "")
    )
    return facts
