"""Builders for tie-out inputs: statements and FX rates as raw text, as a reader gives them."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

import pandas as pd

STATEMENT_FIELDS = (
    "account",
    "instrument",
    "currency",
    "realized_pnl",
    "commission",
    "financing",
    "open_quantity",
    "average_price",
    "basis",
)


def statement(lines: Iterable[Mapping[str, Any]]) -> pd.DataFrame:
    """A statement from dicts of its columns; what a line leaves out is blank."""
    records = [{f: str(line.get(f, "")) for f in STATEMENT_FIELDS} for line in lines]
    return pd.DataFrame(records, columns=list(STATEMENT_FIELDS), dtype="str")


def rates(rows: Iterable[tuple[str, str, str, str]]) -> pd.DataFrame:
    """Rates from (time, base, quote, rate) tuples."""
    records = [{"time": t, "base": b, "quote": q, "rate": r} for t, b, q, r in rows]
    return pd.DataFrame(records, columns=["time", "base", "quote", "rate"], dtype="str")


def line(result: Any, **match: str) -> dict[str, Any]:
    """The one compared line of a tie-out whose columns equal ``match``."""
    lines = result.lines
    chosen = lines
    for column, value in match.items():
        chosen = chosen[chosen[column] == value]
    assert len(chosen) == 1, (match, lines[list(match)].to_dict("records"))
    record: dict[str, Any] = chosen.astype(object).where(chosen.notna(), None).iloc[0].to_dict()
    return record


def causes(result: Any, number: int) -> list[dict[str, Any]]:
    found = result.causes[result.causes["line"] == number]
    records: list[dict[str, Any]] = (
        found.astype(object).where(found.notna(), None).to_dict("records")
    )
    return records
