"""Independent whole-column steps run on every core.

Arrow's compute functions, large numpy operations and the compiled loops (``nogil``) release the
interpreter lock, so a table's columns, each built from the same read-only arrays, build in
parallel threads. Results come back under their names, in the order given. Each maker runs in a
copy of the caller's context, so the decimal context (a context variable) goes with it.
"""

from __future__ import annotations

import contextvars
import os
from collections.abc import Callable, Mapping
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

T = TypeVar("T")


def concurrently(makers: Mapping[str, Callable[[], T]]) -> dict[str, T]:
    """Each maker's result under its name; a maker's exception is raised here."""
    workers = min(len(makers), os.cpu_count() or 1)
    if workers <= 1:
        return {name: make() for name, make in makers.items()}
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = {
            name: pool.submit(contextvars.copy_context().run, make) for name, make in makers.items()
        }
    return {name: future.result() for name, future in futures.items()}
