"""The demo scenario: the audit finds exactly the overcharges planted, to the minor unit.

``sample_data/fees_scenario.py`` plants one overcharge of each kind into a copy of the sample
fills and financing and writes the answer key (``planted.csv``). Derived: the key is our own
construction, written from the generator's arithmetic, not from the audit.
"""

from __future__ import annotations

import csv
from decimal import Decimal
from pathlib import Path

import pytest

import reconcile

SAMPLE = Path(__file__).parents[2] / "sample_data"
KEY = ("charge", "reference", "instrument", "currency", "overcharge", "undercharge", "cause")


def _audit(folder: Path) -> reconcile.FeeAudit:
    return reconcile.audit_fees(
        reconcile.read_fills(folder / "fills.csv"),
        reconcile.read_schedule(SAMPLE / "larkmoor-schedule.toml"),
        reconcile.read_financing(folder / "financing.csv"),
        marks=reconcile.read_marks(SAMPLE / "marks.csv"),
    )


AMOUNTS = ("overcharge", "undercharge")
Key = tuple[str | Decimal, ...]


def _key(row: dict[str, object]) -> Key:
    return tuple(Decimal(str(row[k])) if k in AMOUNTS else str(row[k]) for k in KEY)


def _found(audit: reconcile.FeeAudit) -> list[Key]:
    records = [{str(k): v for k, v in r.items()} for r in audit.findings.to_dict(orient="records")]
    return sorted((_key(r) for r in records), key=str)


def _planted() -> list[dict[str, str]]:
    with (SAMPLE / "fees-planted" / "planted.csv").open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


@pytest.fixture(scope="module")
def planted_audit() -> reconcile.FeeAudit:
    return _audit(SAMPLE / "fees-planted")


def test_the_audit_finds_exactly_the_planted_overcharges(planted_audit: reconcile.FeeAudit) -> None:
    expected = sorted((_key(dict(row)) for row in _planted()), key=str)
    assert _found(planted_audit) == expected


def test_the_leakage_is_the_sum_of_the_plants_to_the_minor_unit(
    planted_audit: reconcile.FeeAudit,
) -> None:
    sums: dict[str, Decimal] = {"EUR": Decimal(0), "JPY": Decimal(0), "USD": Decimal(0)}
    for row in _planted():
        sums[row["currency"]] += Decimal(row["overcharge"])
    assert planted_audit.leakage() == sums
    assert planted_audit.has_leakage


def test_fills_no_rule_covers_are_listed_and_not_priced(planted_audit: reconcile.FeeAudit) -> None:
    unmatched = planted_audit.unmatched
    assert unmatched[unmatched["source"] == "fills"]["instrument"].tolist() == ["KELP", "KELP"]


def test_the_sample_as_generated_is_charged_by_the_schedule() -> None:
    # Every commission of sample_data/ ties; the one finding is generate.py's own late borrow fee.
    audit = _audit(SAMPLE)
    assert audit.commission_orders["status"].eq("ok").all()
    (own,) = [row for row in _planted() if row["planted"].startswith("generate.py")]
    assert _found(audit) == [_key(dict(own))]
