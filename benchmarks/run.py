"""Time the fast path against a bare CSV parse, the reference engine and a row-by-row loop.

    python benchmarks/run.py [--quick] [N ...]        (default: 1e6 1e7)

For each N it generates (once, into benchmarks/data/) seeded synthetic fills and prints, in one run:
(a) a bare pyarrow CSV parse of the file with default typing, here and in a fresh process (which,
as (b) does, pays for faulting in fresh memory); (b) ``reconcile match`` end to end (CSV in, every
table out as Parquet) in a fresh process, best of two runs, with the higher peak memory of the two
(each run is forked from a small launcher, so its peak is its own); the I/O floor (the parse plus
writing the same output tables); the kernel alone per relief method; (c) the reference
engine on a subset, and a row-by-row pandas loop on a subset, both extrapolated to N. For files of
at most 1e6 fills it also runs the reference engine on the whole file and says whether every table
it writes is byte-identical to the fast path's. ``--quick`` leaves out (c) and that check (the
slow parts), for comparing changes to the fast path; a full run prints everything.

Figures, not tests: speed targets live here, never in the test suite. On a shared machine, run it
when the machine is quiet; times are wall-clock, best of the repeats where there are repeats.
"""

from __future__ import annotations

import functools
import os
import shutil
import subprocess
import sys
import tempfile
import time
from collections import deque
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow.csv as pa_csv
import pyarrow.parquet as pq

sys.path.insert(0, str(Path(__file__).parent))

from synthetic import write_fills

DATA = Path(__file__).parent / "data"
SUBSET = 20_000
EQUALITY_LIMIT = 1_000_000
RECONCILE = Path(sys.executable).with_name("reconcile")


def main() -> None:
    if {"-h", "--help"} & set(sys.argv[1:]):
        print(__doc__)
        return
    quick = "--quick" in sys.argv
    counts = [int(float(a)) for a in sys.argv[1:] if a != "--quick"] or [1_000_000, 10_000_000]
    load = os.getloadavg()[0]
    print(
        f"reconcile benchmark on {os.cpu_count()} cores (load average {load:.1f} at the start); "
        f"kernel compiled: {_compiled()}"
    )
    _warm_up()
    for count in counts:
        print(f"\n== {count:,} fills ==")
        measure(count, quick)


def measure(count: int, quick: bool = False) -> None:
    path = DATA / f"fills-{count}.csv"
    if not path.exists():
        started = time.perf_counter()
        write_fills(count, path)
        print(f"generated {path} in {time.perf_counter() - started:.1f} s")
    size = path.stat().st_size / 2**20
    parse = _best(lambda: pa_csv.read_csv(path), 2)
    print(f"(a) bare pyarrow parse, default typing: {parse:7.2f} s  ({size:,.0f} MiB)")
    fresh = min(_fresh_parse(path) for _ in range(2))
    print(
        f"    the same parse in a fresh process:  {fresh:7.2f} s  (pays for fresh memory, "
        f"as (b) does)"
    )
    with tempfile.TemporaryDirectory() as out:
        runs = [_run([str(path), "--format", "parquet", "--out", out]) for _ in range(2)]
        write = _rewrite_outputs(Path(out))
    wall, peak = min(w for w, _ in runs), max(p for _, p in runs)
    floor = parse + write
    print(
        f"(b) reconcile match end to end:        {wall:7.2f} s  {count / wall:12,.0f} fills/s  "
        f"peak {peak / 2**30:.2f} GiB"
    )
    walls = ", ".join(f"{w:.2f}" for w, _ in runs)
    print(f"    (best of {len(runs)} runs: {walls} s; the peak is the higher of the two)")
    print(f"    I/O floor (parse + write outputs):   {floor:7.2f} s  (write {write:.2f} s)")
    print(
        f"    ratio (b)/(a): {wall / parse:.2f}x   (b)/fresh parse: {wall / fresh:.2f}x   "
        f"(b)/floor: {wall / floor:.2f}x"
    )
    _kernel_alone(path)
    if quick:
        return
    reference = _reference_rate(path)
    baseline = _row_by_row_rate(path)
    print(
        f"(c) reference engine on {SUBSET:,} fills: {reference:9,.0f} fills/s, "
        f"extrapolated {count / reference / 60:8.1f} min"
    )
    print(
        f"    row-by-row pandas loop on {SUBSET:,}: {baseline:9,.0f} fills/s, extrapolated "
        f"{count / baseline / 60:8.1f} min; end to end is {count / baseline / wall:,.0f}x faster"
    )
    if count <= EQUALITY_LIMIT:
        _equality(path)


def _compiled() -> bool:
    from reconcile.fast._jit import numba_available

    return numba_available()


def _warm_up() -> None:
    """Compile (or load from the on-disk cache) the kernel, and say what that cost."""
    from reconcile.core.matching import AUTO_FAST_ROWS  # the smallest input the kernel takes

    with tempfile.TemporaryDirectory() as folder:
        small = write_fills(AUTO_FAST_ROWS, Path(folder) / "warm.csv")
        for label in ("first run (compiles unless cached)", "second run (from the cache)"):
            wall, _ = _run([str(small), "--out", str(Path(folder) / "out")])
            print(f"{AUTO_FAST_ROWS:,} fills, {label}: {wall:.2f} s")
    started = time.perf_counter()
    subprocess.run([str(RECONCILE), "--help"], check=True, capture_output=True)
    print(f"reconcile --help: {time.perf_counter() - started:.2f} s")


def _run(args: list[str]) -> tuple[float, int]:
    """Wall time and peak resident memory (bytes) of one ``reconcile match`` process.

    A child's ``ru_maxrss`` starts from the high-water mark of the process it was forked from
    (Linux carries it across the exec), so a command spawned from this process, which may hold
    gigabytes, would report this process's peak as its own. A small launcher forks the command
    instead and reports its time and peak.
    """
    done = subprocess.run(
        [sys.executable, "-c", _LAUNCHER, str(RECONCILE), "match", *args],
        capture_output=True,
        text=True,
    )
    if done.returncode != 0:
        raise SystemExit(f"reconcile match failed: {done.stderr[-2000:]}")
    wall, peak = done.stdout.split()[-2:]
    return float(wall), int(peak)


_LAUNCHER = """
import os, sys, time
started = time.perf_counter()
pid = os.fork()
if pid == 0:
    os.dup2(os.open(os.devnull, os.O_WRONLY), 1)
    os.execv(sys.argv[1], sys.argv[1:])
_, status, usage = os.wait4(pid, 0)
print(time.perf_counter() - started, usage.ru_maxrss * 1024)
sys.exit(os.waitstatus_to_exitcode(status))
"""


def _fresh_parse(path: Path) -> float:
    """(a) in a new interpreter: its time includes faulting in the memory the table needs, which
    a repeat in this process (whose Arrow pool has the pages already) does not pay."""
    code = (
        "import sys, time, pyarrow.csv as c; s = time.perf_counter(); c.read_csv(sys.argv[1]); "
        "print(time.perf_counter() - s)"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, str(path)], check=True, capture_output=True, text=True
    )
    return float(done.stdout)


def _rewrite_outputs(folder: Path) -> float:
    """Writing the command's output tables again, as the command writes them (its Parquet
    options, its threads): plain ``write_table`` with pyarrow's defaults takes twice as long."""
    from reconcile.io.writers.tables import write_tables

    tables = {p.stem: pq.read_table(p) for p in folder.glob("*.parquet")}
    with tempfile.TemporaryDirectory() as again:
        started = time.perf_counter()
        write_tables(tables, again, "parquet")
        return time.perf_counter() - started


def _kernel_alone(path: Path) -> None:
    import reconcile
    from reconcile.fast.prepare import prepare

    fills = reconcile.read_fills(path)
    for method in ("fifo", "lifo", "hifo", "average"):
        prepared = prepare(fills, None, None, method)
        status = prepared.key["status"].copy()
        _kernel_once(prepared, status, method)  # untimed: loads the compiled kernel first
        best = _best(
            functools.partial(_kernel_once, prepared, status, method), 3, time.process_time
        )
        print(
            f"    kernel alone, {method:7}: {best:6.3f} s CPU {len(fills) / best:12,.0f} fills/s "
            "on one core"
        )
    del fills


def _kernel_once(prepared: Any, status: Any, method: str) -> None:
    from reconcile.fast.engine import run_kernel

    prepared.key["status"][:] = status
    run_kernel(prepared, method, "at-close")


def _reference_rate(path: Path) -> float:
    import reconcile
    from reconcile.core.matching import match_canonical

    subset = reconcile.read_fills(path).iloc[:SUBSET].reset_index(drop=True)
    started = time.perf_counter()
    match_canonical(subset, engine="reference")
    return SUBSET / (time.perf_counter() - started)


def _row_by_row_rate(path: Path) -> float:
    """A plain pandas loop, row by row: the way a spreadsheet user first writes FIFO."""
    frame = pd.read_csv(path, nrows=SUBSET, dtype=str)
    started = time.perf_counter()
    books: dict[tuple[str, str], deque[list[Decimal]]] = {}
    realized: dict[tuple[str, str], Decimal] = {}
    for _, row in frame.iterrows():
        key = (row["account"], row["instrument"])
        lots = books.setdefault(key, deque())
        signed = Decimal(row["quantity"]) * (1 if row["side"] == "buy" else -1)
        price, multiplier = Decimal(row["price"]), Decimal(row["multiplier"])
        while signed and lots and (lots[0][0] > 0) != (signed > 0):
            take = min(abs(signed), abs(lots[0][0]))
            sign = 1 if lots[0][0] > 0 else -1
            gain = (price - lots[0][1]) * take * multiplier * sign
            realized[key] = realized.get(key, Decimal(0)) + gain
            lots[0][0] -= take * sign
            signed += take * sign
            if lots[0][0] == 0:
                lots.popleft()
        if signed:
            lots.append([signed, price])
    return SUBSET / (time.perf_counter() - started)


def _equality(path: Path) -> None:
    """The reference engine and the fast path on the whole file: are the tables identical?"""
    with tempfile.TemporaryDirectory() as folder:
        outs = {}
        for engine in ("fast", "reference"):
            out = Path(folder) / engine
            wall, _ = _run([str(path), "--engine", engine, "--out", str(out)])
            outs[engine] = out
            print(f"    {engine:9} engine, CSV out: {wall:8.1f} s")
        same = all(
            (outs["fast"] / p.name).read_bytes() == p.read_bytes()
            for p in sorted(outs["reference"].glob("*.csv"))
        )
        names = sorted(p.name for p in outs["fast"].glob("*.csv"))
        print(f"    outputs identical to the reference engine ({', '.join(names)}): {same}")
        shutil.rmtree(folder, ignore_errors=True)


def _best(action: object, repeats: int, clock: Any = time.perf_counter) -> float:
    """The best of ``repeats`` runs, by wall clock or (for one thread) the process's CPU time."""
    times: list[float] = []
    for _ in range(repeats):
        started = clock()
        action()  # type: ignore[operator]
        times.append(clock() - started)
    return min(times)


if __name__ == "__main__":
    main()
