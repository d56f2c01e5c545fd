"""How numbers look to a person: exact digits, thousands grouped, minor units kept."""

from __future__ import annotations

from decimal import Decimal
from typing import Any

import pandas as pd

from reconcile.io.writers.tables import decimal_text


def grouped(value: Decimal | None, currency: str | None = None) -> str:
    """``1234567.5`` in USD -> ``1,234,567.50``; exact, never through a float."""
    text = decimal_text(value, currency)
    if text is None:
        return ""
    whole, dot, fraction = text.partition(".")
    sign = "-" if whole.startswith("-") else ""
    return f"{sign}{int(whole.lstrip('-')):,}{dot}{fraction}"


def cell_text(value: Any, money_currency: str | None = None) -> str:
    """A table cell as text for a page: decimals grouped, times in UTC, blanks empty."""
    if value is None or (not isinstance(value, str) and pd.isna(value)):
        return ""
    if isinstance(value, Decimal):
        return grouped(value, money_currency)
    if isinstance(value, pd.Timestamp):
        return value.tz_convert("UTC").strftime("%Y-%m-%d %H:%M:%S") if value.tzinfo else str(value)
    if isinstance(value, pd.Timedelta):
        return _duration(value)
    return str(value)


def _duration(value: pd.Timedelta) -> str:
    seconds = int(value.total_seconds())
    days, rest = divmod(seconds, 86_400)
    hours, rest = divmod(rest, 3_600)
    minutes, seconds = divmod(rest, 60)
    clock = f"{hours:02d}:{minutes:02d}:{seconds:02d}"
    return f"{days}d {clock}" if days else clock
