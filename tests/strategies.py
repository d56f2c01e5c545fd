"""Hypothesis strategies: random fill histories and financing that exercise the engine."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from decimal import Decimal

import pandas as pd
from hypothesis import strategies as st

from tests.builders import FILL_FIELDS

T0 = datetime(2026, 11, 2, 9, 0, tzinfo=UTC)
PLACES = {"USD": 2, "JPY": 0, "BHD": 3}


def _stamp(index: int) -> str:
    return (T0 + timedelta(minutes=index)).isoformat()


@st.composite
def histories(
    draw: st.DrawFn, max_keys: int = 3, max_fills: int = 25, step: Decimal | None = None
) -> pd.DataFrame:
    """Fills for a few keys, interleaved in time with strictly increasing, distinct times.

    Quantities are whole multiples of ``step`` (drawn if not given) so the unit-by-unit reference
    can follow them; prices may be zero or negative; commissions are in the currency's minor unit.
    """
    step = step if step is not None else draw(st.sampled_from([Decimal(1), Decimal("0.5")]))
    keys = draw(st.integers(1, max_keys))
    per_key: list[list[dict[str, str]]] = []
    for k in range(keys):
        currency = draw(st.sampled_from(sorted(PLACES)))
        multiplier = draw(st.sampled_from(["1", "10", "0.5"]))
        count = draw(st.integers(1, max_fills))
        rows = []
        for _ in range(count):
            units = draw(st.integers(1, 12))
            price = draw(
                st.decimals(
                    min_value=-5, max_value=250, places=2, allow_nan=False, allow_infinity=False
                )
            )
            commission = draw(
                st.decimals(
                    min_value=0,
                    max_value=9,
                    places=PLACES[currency],
                    allow_nan=False,
                    allow_infinity=False,
                )
            )
            rows.append(
                {
                    "account": f"ACC{k % 2}",
                    "instrument": f"INS{k}",
                    "side": draw(st.sampled_from(["buy", "sell"])),
                    "quantity": str(units * step),
                    "price": str(price),
                    "commission": str(commission),
                    "currency": currency,
                    "multiplier": multiplier,
                }
            )
        per_key.append(rows)
    order = draw(st.permutations([k for k, rows in enumerate(per_key) for _ in rows]))
    cursors = [0] * keys
    records = []
    for index, k in enumerate(order):
        row = per_key[k][cursors[k]]
        cursors[k] += 1
        records.append({**row, "fill_id": f"F{index:03d}", "time": _stamp(index * 2 + 1)})
    return pd.DataFrame(records, columns=list(FILL_FIELDS), dtype="str")


@st.composite
def financing_for(draw: st.DrawFn, fills: pd.DataFrame, max_events: int = 8) -> pd.DataFrame:
    """Financing events at even minutes (never at a fill's instant) on keys the fills use."""
    keys = fills[["account", "instrument", "currency"]].drop_duplicates().to_dict("records")
    count = draw(st.integers(0, max_events))
    span = 2 * len(fills) + 2
    records = []
    for n in range(count):
        key = draw(st.sampled_from(keys))
        amount = draw(
            st.decimals(
                min_value=-20,
                max_value=20,
                places=PLACES[key["currency"]],
                allow_nan=False,
                allow_infinity=False,
            )
        )
        records.append(
            {
                "event_id": f"E{n:03d}",
                **key,
                "time": _stamp(2 * draw(st.integers(0, span // 2))),
                "amount": str(amount),
                "kind": "swap",
            }
        )
    columns = ["event_id", "account", "instrument", "currency", "time", "amount", "kind"]
    return pd.DataFrame(records, columns=columns, dtype="str")
