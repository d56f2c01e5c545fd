"""The ``reconcile`` command line: one short function per command, the same verbs as the API."""

from __future__ import annotations

import os

from reconcile.cli import check as _check  # noqa: F401  (registers the command)
from reconcile.cli import fees as _fees  # noqa: F401  (registers the command)
from reconcile.cli import match as _match  # noqa: F401  (registers the command)
from reconcile.cli import report as _report  # noqa: F401
from reconcile.cli import stats as _stats  # noqa: F401
from reconcile.cli import tieout as _tieout  # noqa: F401  (registers the command)
from reconcile.cli._app import app

__all__ = ["app", "main"]

#: Set for the command's own process before pyarrow loads (a user's own setting wins). Arrow's
#: allocator then asks the kernel for transparent huge pages: a large run touches gigabytes of
#: fresh memory, and faulting it in 4 KiB pages is a large share of a 10-million-fill match's
#: time on a virtual machine (DEVELOPERS.md, under "Checks", has the figures).
ALLOCATOR_SETTINGS = {"MIMALLOC_ALLOW_LARGE_OS_PAGES": "1"}


def tune_allocator() -> None:
    for name, value in ALLOCATOR_SETTINGS.items():
        os.environ.setdefault(name, value)


def main() -> None:
    tune_allocator()
    app()
