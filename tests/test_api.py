"""The public API is exactly what ``__all__`` says, and importing it stays cheap."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import reconcile

PUBLIC = [
    "Book",
    "allocate",
    "currency_totals",
    "errors",
    "match",
    "minor_unit",
    "read_financing",
    "read_fills",
    "read_opening",
    "round_money",
    "write_tables",
    "check",
    "load_profile",
    "Stats",
    "stats",
    "FeeAudit",
    "audit_fees",
    "read_marks",
    "read_schedule",
    "SearchLimits",
    "TieOut",
    "Tolerance",
    "read_rates",
    "read_statement",
    "tie_out",
    "match_in_batches",
]


def test_public_names_are_pinned() -> None:
    assert sorted(reconcile.__all__) == sorted(PUBLIC)
    for name in PUBLIC:
        assert getattr(reconcile, name) is not None


def test_importing_the_package_does_not_import_pandas() -> None:
    code = "import sys, reconcile, reconcile.cli; print('pandas' in sys.modules)"
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == "False"


def test_every_error_maps_to_an_exit_code() -> None:
    from reconcile import errors

    for name in (
        "InputError",
        "SourceNotFoundError",
        "SourceEmptyError",
        "MissingColumnsError",
        "ValidationError",
        "ConfigError",
        "OutputError",
    ):
        error_class = getattr(errors, name)
        assert issubclass(error_class, errors.ReconcileError)
        assert error_class.exit_code == errors.EXIT_BAD_INPUT


def test_every_public_name_is_documented() -> None:
    text = (Path(__file__).parents[1] / "docs" / "api.md").read_text()
    missing = [name for name in reconcile.__all__ if f"`{name}" not in text]
    assert missing == []
