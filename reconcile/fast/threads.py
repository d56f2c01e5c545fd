"""Independent whole-column steps run on every core.

Arrow's compute functions, large numpy operations and the compiled loops (``nogil``) release the
interpreter lock, so a table's columns, each built from the same read-only arrays, build in
parallel threads. Results come back under their names, in the order given.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

T = TypeVar("T")


def concurrently(makers: dict[str, Callable[[], T]]) -> dict[str, T]:
    """Each maker's result under its name; a maker's exception is raised here."""
    workers = min(len(makers), os.cpu_count() or 1)
    if workers <= 1:
        return {name: make() for name, make in makers.items()}
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = {name: pool.submit(make) for name, make in makers.items()}
    return {name: future.result() for name, future in futures.items()}
