"""reconcile: exact lot matching, statement tie-out and fee audit for trading books.

The public API is what ``__all__`` lists; everything else is private and may change. Names are
imported on first use, so importing the package (and starting the command line) stays fast.

>>> import reconcile
>>> fills = reconcile.read_fills("sample_data/fills.csv")          # doctest: +SKIP
>>> book = reconcile.match(fills, method="fifo")                     # doctest: +SKIP
>>> book.positions                                                   # doctest: +SKIP

Errors are documented in :mod:`reconcile.errors`. The output is not tax, accounting or legal
advice; local rules and a licensed professional prevail.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from reconcile import errors
    from reconcile.core.book import Book
    from reconcile.core.compare import Tolerance
    from reconcile.core.explain import SearchLimits
    from reconcile.core.fees.audit import FeeAudit, audit_fees
    from reconcile.core.matching import match
    from reconcile.core.stats import Stats, stats
    from reconcile.core.summary import currency_totals
    from reconcile.core.tieout import TieOut, tie_out
    from reconcile.io.batches import match_in_batches
    from reconcile.io.readers import (
        check,
        load_profile,
        read_fills,
        read_financing,
        read_marks,
        read_opening,
        read_rates,
        read_statement,
    )
    from reconcile.io.readers.schedule import read_schedule
    from reconcile.io.writers.tables import write_tables
    from reconcile.money import allocate, minor_unit, round_money

__all__ = [
    "Book",
    "FeeAudit",
    "SearchLimits",
    "Stats",
    "TieOut",
    "Tolerance",
    "allocate",
    "audit_fees",
    "check",
    "currency_totals",
    "errors",
    "load_profile",
    "match",
    "match_in_batches",
    "minor_unit",
    "read_fills",
    "read_financing",
    "read_marks",
    "read_opening",
    "read_rates",
    "read_schedule",
    "read_statement",
    "round_money",
    "stats",
    "tie_out",
    "write_tables",
]

_HOMES = {
    "Book": "reconcile.core.book",
    "allocate": "reconcile.money",
    "currency_totals": "reconcile.core.summary",
    "errors": "reconcile.errors",
    "match": "reconcile.core.matching",
    "minor_unit": "reconcile.money",
    "read_financing": "reconcile.io.readers",
    "read_fills": "reconcile.io.readers",
    "read_opening": "reconcile.io.readers",
    "round_money": "reconcile.money",
    "write_tables": "reconcile.io.writers.tables",
    "check": "reconcile.io.readers",
    "load_profile": "reconcile.io.readers",
    "Stats": "reconcile.core.stats",
    "stats": "reconcile.core.stats",
    "FeeAudit": "reconcile.core.fees.audit",
    "audit_fees": "reconcile.core.fees.audit",
    "read_marks": "reconcile.io.readers",
    "read_schedule": "reconcile.io.readers.schedule",
    "SearchLimits": "reconcile.core.explain",
    "TieOut": "reconcile.core.tieout",
    "Tolerance": "reconcile.core.compare",
    "read_rates": "reconcile.io.readers",
    "read_statement": "reconcile.io.readers",
    "tie_out": "reconcile.core.tieout",
    "match_in_batches": "reconcile.io.batches",
}


def __getattr__(name: str) -> Any:
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'reconcile' has no attribute {name!r}")
    module = importlib.import_module(home)
    value = module if name == "errors" else getattr(module, name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
