"""The ``reconcile`` command line: one short function per command, the same verbs as the API."""

from __future__ import annotations

from reconcile.cli import check as _check  # noqa: F401  (registers the command)
from reconcile.cli import fees as _fees  # noqa: F401  (registers the command)
from reconcile.cli import match as _match  # noqa: F401  (registers the command)
from reconcile.cli import report as _report  # noqa: F401
from reconcile.cli import stats as _stats  # noqa: F401
from reconcile.cli import tieout as _tieout  # noqa: F401  (registers the command)
from reconcile.cli._app import app

__all__ = ["app", "main"]


def main() -> None:
    app()
