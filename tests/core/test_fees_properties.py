"""Properties of the fee audit over random fill histories (hypothesis).

The commissions a fill "should" carry come from a slow, obviously correct reference written here
without the package's money helpers: exact rationals, Python's own half-even ``round`` and a
unit-by-unit largest-remainder split.
"""

from __future__ import annotations

from collections import defaultdict
from decimal import Decimal
from fractions import Fraction

import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

import reconcile
from reconcile.core.fees.audit import audit_fees
from reconcile.core.fees.rules import Schedule
from tests.fee_cases import schedule
from tests.strategies import PLACES, histories

D = Decimal
#: Each example runs the whole audit (and the engine): a third of the profile's examples.
FEWER = settings(max_examples=max(10, settings().max_examples // 3))
TERMS = st.tuples(
    st.sampled_from(["0", "0.0035", "0.5", "1.10"]),  # per unit
    st.sampled_from(["0", "0.5", "2"]),  # basis points
    st.sampled_from(["0", "1", "2.50"]),  # minimum per order
    st.sampled_from(["0", "0.25"]),  # per order
)


def _schedule(per_unit: str, bps: str, minimum: str, per_order: str) -> Schedule:
    rules = "".join(
        f"""
[[commission]]
currency = "{code}"
per_unit = "{per_unit}"
bps = "{bps}"
minimum = "{minimum}"
per_order = "{per_order}"
"""
        for code in PLACES
    )
    return schedule(rules)


@st.composite
def orders_of(draw: st.DrawFn, history: pd.DataFrame) -> pd.DataFrame:
    """Group each key's consecutive same-side fills into orders (some fills carry no order id)."""
    ids: list[str] = []
    last: dict[tuple[str, str, str], str] = {}
    for n, row in history.iterrows():
        key = (row["account"], row["instrument"], row["side"])
        if key in last and draw(st.booleans()):
            ids.append(last[key])
        elif draw(st.integers(0, 5)) == 0:
            ids.append("")
            last.pop(key, None)
            continue
        else:
            ids.append(f"O{n}")
        last = {k: v for k, v in last.items() if k[:2] != key[:2]}
        last[key] = ids[-1]
    return history.assign(order_id=ids)


def reference_charges(fills: pd.DataFrame, terms: tuple[str, ...]) -> list[Decimal]:
    """Each fill's commission, charged per order and split by largest remainder, from scratch."""
    per_unit, bps, minimum, per_order = (Fraction(t) for t in terms)
    records: list[dict[str, str]] = [
        {str(k): str(v) for k, v in r.items()} for r in fills.to_dict(orient="records")
    ]
    groups: dict[tuple[str, str], list[int]] = defaultdict(list)
    for n, row in enumerate(records):
        groups[(row["account"], row["order_id"] or f"fill {row['fill_id']}")].append(n)
    charges: dict[int, Decimal] = {}
    for members in groups.values():
        rows = [records[n] for n in members]
        places = PLACES[rows[0]["currency"]]
        quantities = [Fraction(r["quantity"]) for r in rows]
        notional = sum(
            (
                q * abs(Fraction(r["price"]) * Fraction(r["multiplier"]))
                for q, r in zip(quantities, rows, strict=True)
            ),
            Fraction(0),
        )
        raw = max(per_unit * sum(quantities) + bps * notional / 10_000 + per_order, minimum)
        units = int(round(raw, places) * 10**places)  # Fraction rounds half to even
        quotas = [units * q / sum(quantities) for q in quantities]
        shares = [int(q) for q in quotas]
        by_remainder = sorted(range(len(rows)), key=lambda i: (-(quotas[i] - shares[i]), i))
        for i in by_remainder[: units - sum(shares)]:
            shares[i] += 1
        for n, share in zip(members, shares, strict=True):
            charges[n] = D(share).scaleb(-places)
    return [charges[n] for n in range(len(records))]


@FEWER
@given(data=st.data(), history=histories(max_fills=12), terms=TERMS)
def test_fills_charged_exactly_by_the_schedule_show_zero_leakage(
    data: st.DataObject, history: pd.DataFrame, terms: tuple[str, str, str, str]
) -> None:
    fills = data.draw(orders_of(history))
    fills["commission"] = [str(c) for c in reference_charges(fills, terms)]
    audit = audit_fees(fills, _schedule(*terms))
    assert audit.findings.empty
    assert not audit.has_leakage
    assert set(audit.commission_fills["status"]) == {"ok"}


@FEWER
@given(
    data=st.data(),
    history=histories(max_fills=12),
    terms=TERMS,
    units=st.integers(1, 10_000),
)
def test_adding_x_to_one_fill_shows_leakage_x_on_that_fill_alone(
    data: st.DataObject, history: pd.DataFrame, terms: tuple[str, str, str, str], units: int
) -> None:
    fills = data.draw(orders_of(history))
    charges = reference_charges(fills, terms)
    victim = data.draw(st.integers(0, len(fills) - 1))
    currency = str(fills["currency"].iloc[victim])
    extra = D(units).scaleb(-PLACES[currency])
    charges[victim] += extra
    fills["commission"] = [str(c) for c in charges]
    audit = audit_fees(fills, _schedule(*terms))
    differences = [D(v) for v in audit.commission_fills["difference"]]
    assert differences == [extra if n == victim else D(0) for n in range(len(fills))]
    assert audit.leakage() == {
        code: D(0) if code != currency else extra for code in audit.leakage()
    }
    assert len(audit.findings) == 1
    assert audit.findings["overcharge"].tolist() == [extra]


@FEWER
@given(history=histories(max_keys=2, max_fills=15), cut=st.integers(0, 40))
def test_positions_at_a_cut_off_are_the_engines_positions(history: pd.DataFrame, cut: int) -> None:
    # Derived: the position financed at a cut-off equals what reconcile.match reports for the
    # fills before that instant. Fill times are odd minutes from 09:00 UTC; cut-offs fall between.
    # 1,000 points a unit keep the smallest position (0.25 units) from rounding to nothing.
    cutoff = pd.Timestamp("2026-11-02T09:00:00Z") + pd.Timedelta(minutes=2 * cut)
    before = history[pd.to_datetime(history["time"]) < cutoff]
    text = f"""
[[financing]]
long_points = "1000"
short_points = "1000"
cutoff = "{cutoff.strftime("%H:%M")}"
"""
    events = pd.DataFrame(
        columns=["event_id", "account", "instrument", "time", "amount", "currency", "kind"]
    )
    audit = audit_fees(history, schedule(text), events, period="2026-11-02")
    financed = {
        (row["account"], row["instrument"]): row["position"]
        for _, row in audit.financing_days.iterrows()
    }
    expected = {}
    if len(before):
        positions = reconcile.match(before).positions
        expected = {
            (row["account"], row["instrument"]): row["quantity"]
            for _, row in positions.iterrows()
            if row["quantity"] != 0
        }
    assert financed == expected
