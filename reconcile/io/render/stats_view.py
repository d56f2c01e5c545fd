"""The statistics as a person reads them: one labelled row per statistic, one column per group.

The terminal and the HTML page show the same rows, so they are built once here. Every figure is
exact text from the decimals (amounts in the currency's minor unit, ratios with their 4 places,
rates as percentages); nothing passes through a float.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from decimal import Decimal
from typing import Any

import pandas as pd

from reconcile.core.stats import NOT_RECOVERED, Stats
from reconcile.io.render.numbers import cell_text, grouped
from reconcile.money import round_to

#: Trades named beside a tied extreme before the rest are only counted.
TIES_SHOWN = 3
BLANK = "n/a"

Row = Mapping[str, Any]


@dataclass(frozen=True)
class StatsView:
    """Headers name the groups (keys and currency); each row is a label and a value per group."""

    headers: list[str]
    rows: list[tuple[str, list[str]]]

    def frame(self, first: str = "statistic") -> pd.DataFrame:
        """The view as a table of text, for a page (an indented label keeps its indent)."""
        data = {first: [_keep_indent(label) for label, _ in self.rows]}
        for n, header in enumerate(self.headers):
            data[header] = [values[n] for _, values in self.rows]
        return pd.DataFrame(data, dtype="str")


def _keep_indent(label: str) -> str:
    stripped = label.lstrip(" ")
    return "\u2003" * ((len(label) - len(stripped)) // 2) + stripped


def view(stats: Stats) -> StatsView:
    summary = stats.summary.astype(object)
    records = [
        {str(k): v for k, v in r.items()}
        for r in summary.where(summary.notna(), None).to_dict("records")
    ]
    keys = (*stats.by, "currency")
    headers = [" ".join(str(r[k]) for k in keys) for r in records]
    noun = "lot" if stats.over == "closed-lots" else "trip"
    rows = [(label, [show(r, noun) for r in records]) for label, show in _rows()]
    return StatsView(headers, rows)


def percent(value: Decimal | None) -> str:
    """A 4-place ratio as a percentage with 2 places, exactly: ``0.4773`` -> ``47.73%``."""
    return BLANK if value is None else f"{round_to(value.scaleb(2), 2)}%"


def ratio(value: Decimal | None, missing: str = BLANK) -> str:
    return missing if value is None else str(round_to(value, 4))


def _money(name: str) -> Callable[[Row, str], str]:
    return lambda r, _noun: BLANK if r[name] is None else grouped(r[name], r["currency"])


def _plain(name: str) -> Callable[[Row, str], str]:
    return lambda r, _noun: BLANK if r[name] is None else cell_text(r[name])


def _tied(name: str, money: bool) -> Callable[[Row, str], str]:
    def show(r: Row, noun: str) -> str:
        value = r[name]
        if value is None:
            return BLANK
        shown = grouped(value, r["currency"]) if money else cell_text(value)
        refs = str(r[f"{name}_trades"]).split(", ")
        listed = ", ".join(refs[:TIES_SHOWN])
        more = f" and {len(refs) - TIES_SHOWN} more" if len(refs) > TIES_SHOWN else ""
        return f"{shown} ({noun}{'s' if len(refs) > 1 else ''} {listed}{more})"

    return show


def _recovery(prefix: str) -> Callable[[Row, str], str]:
    def show(r: Row, _noun: str) -> str:
        state = r[f"{prefix}_state"]
        if state == NOT_RECOVERED:
            return NOT_RECOVERED
        recovered = r[f"{prefix}_recovery"]
        return BLANK if recovered is None else cell_text(recovered)

    return show


def _outcomes(r: Row, _noun: str) -> str:
    return f"{r['wins']} / {r['losses']} / {r['breakevens']}"


def _rows() -> list[tuple[str, Callable[[Row, str], str]]]:
    return [
        ("Trades", _plain("trades")),
        ("Wins / losses / breakevens", _outcomes),
        ("Net P&L", _money("net_pnl")),
        ("Gross profit", _money("gross_profit")),
        ("Gross loss", _money("gross_loss")),
        ("First trade opened", _plain("first_trade")),
        ("Last trade closed", _plain("last_trade")),
        ("Largest win", _tied("largest_win", money=True)),
        ("Largest loss", _tied("largest_loss", money=True)),
        ("Longest holding", _tied("longest_holding", money=False)),
        ("Shortest holding", _tied("shortest_holding", money=False)),
        ("Average win", _money("average_win")),
        ("Average loss", _money("average_loss")),
        ("Win rate", lambda r, _n: percent(r["win_rate"])),
        ("Payoff (avg win / avg loss)", lambda r, _n: ratio(r["payoff"])),
        ("Profit factor", lambda r, _n: ratio(r["profit_factor"], f"{BLANK} (no loss)")),
        ("Expectancy per trade", _money("expectancy")),
        ("Max drawdown from peak", _money("max_drawdown")),
        ("  peak", _money("max_drawdown_peak")),
        ("  peak reached", _plain("max_drawdown_start")),
        ("  trough", _plain("max_drawdown_trough")),
        ("  recovered", _recovery("max_drawdown")),
        ("Drawdown from zero", _money("drawdown_from_zero")),
        ("  last at zero", _plain("drawdown_from_zero_start")),
        ("  trough", _plain("drawdown_from_zero_trough")),
        ("  recovered", _recovery("drawdown_from_zero")),
        ("Longest winning streak", _plain("longest_win_streak")),
        ("Longest losing streak", _plain("longest_loss_streak")),
        ("Gross P&L before costs", _money("gross_pnl")),
        ("Commission", _money("commission")),
        ("Financing", _money("financing")),
        ("Fee drag (costs / gross)", lambda r, _n: percent(r["fee_drag"])),
        ("  commission", lambda r, _n: percent(r["commission_drag"])),
        ("  financing", lambda r, _n: percent(r["financing_drag"])),
    ]
