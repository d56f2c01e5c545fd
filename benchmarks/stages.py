"""Where the time and the memory of ``reconcile match`` go, stage by stage, in one process.

    python benchmarks/stages.py PATH [--format parquet|csv]

Runs the steps the command runs (read and validate, match, write, summary) and prints, after each,
its wall time, CPU time (user and system, all threads) and the process's resident memory and
peak so far (from /proc, so Arrow's buffers count too). Inside the match it also times the fast
path's own steps. Figures, not tests.
"""

from __future__ import annotations

import resource
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

started = time.perf_counter()


def _memory() -> tuple[float, float]:
    fields = {}
    for line in Path("/proc/self/status").read_text().splitlines():
        name, _, value = line.partition(":")
        fields[name] = value.strip()
    return (int(fields["VmRSS"].split()[0]) / 2**20, int(fields["VmHWM"].split()[0]) / 2**20)


def _cpu() -> tuple[float, float]:
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime, usage.ru_stime


@contextmanager
def stage(name: str) -> Iterator[None]:
    began, (user, system) = time.perf_counter(), _cpu()
    yield
    rss, peak = _memory()
    took = time.perf_counter() - began
    user, system = (now - then for now, then in zip(_cpu(), (user, system), strict=True))
    print(
        f"{name:34} {took:6.2f} s (cpu {user:5.2f} + sys {system:5.2f})   rss {rss:5.2f} GiB   "
        f"peak {peak:5.2f} GiB",
        flush=True,
    )


def _timed(module: Any, name: str) -> None:
    """Wrap ``module.name`` so each call prints as a stage."""
    original: Callable[..., Any] = getattr(module, name)

    def wrapper(*args: Any, **kwargs: Any) -> Any:
        with stage(f"  {module.__name__.rsplit('.', 1)[-1]}.{name}"):  # a module or a class
            return original(*args, **kwargs)

    setattr(module, name, wrapper)


def main() -> None:
    path = Path(sys.argv[1])
    fmt = sys.argv[sys.argv.index("--format") + 1] if "--format" in sys.argv else "parquet"
    with stage("imports"):
        from reconcile.core import canon
        from reconcile.fast import engine, tables
        from reconcile.io import session
        from reconcile.io.readers import delimited, sources

    for module, name in (
        (delimited, "read_typed_csv"),
        (engine, "prepare"),
        (engine, "run_kernel"),
        (engine, "finish"),
        (tables.TableBuilder, "build_all"),
    ):
        _timed(module, name)
    _timed(canon, "canonical_fills")
    sources._CANON["fills"] = canon.canonical_fills
    with stage("read, validate and match"):
        book, inputs = session.read_and_match(lambda: session.read_inputs(path))
    with tempfile.TemporaryDirectory() as out, stage(f"write ({fmt})"):
        session.write_book(book, inputs, Path(out), fmt)
    with stage("summary"):
        session.run_manifest("match", book, inputs)
        from reconcile.core.summary import currency_totals

        currency_totals(book)
    print(f"{'total':34} {time.perf_counter() - started:7.2f} s")


if __name__ == "__main__":
    main()
