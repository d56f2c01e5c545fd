"""Time ``reconcile match --batch-rows`` beside the whole-file run, with the peak memory of each.

    python benchmarks/streaming.py [N[:BATCH] ...]     (default: 1e6:1e5 1e7:1e6)

For each N it generates (once, into benchmarks/data/) the seeded synthetic fills of
benchmarks/synthetic.py, then runs ``reconcile match`` on them in a fresh process, CSV in and every
table out as Parquet, once whole and once with ``--batch-rows BATCH``, and prints wall time and peak
resident memory of both. For files of at most 1e6 fills it also says whether every file the
batched run wrote (tables and run.json) is byte-identical to the whole run's.

Figures, not tests. On a shared machine, run it when the machine is quiet.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))

from run import DATA, _run, _warm_up
from synthetic import write_fills

EQUALITY_LIMIT = 1_000_000


def main() -> None:
    plans = [_plan(a) for a in sys.argv[1:]] or [(1_000_000, 100_000), (10_000_000, 1_000_000)]
    load = os.getloadavg()[0]
    print(f"batched match on {os.cpu_count()} cores (load average {load:.1f} at the start)")
    _warm_up()
    for count, batch in plans:
        measure(count, batch)


def _plan(argument: str) -> tuple[int, int]:
    count, _, batch = argument.partition(":")
    n = int(float(count))
    return n, int(float(batch)) if batch else max(1, n // 10)


def measure(count: int, batch: int) -> None:
    path = DATA / f"fills-{count}.csv"
    if not path.exists():
        write_fills(count, path)
    size = path.stat().st_size / 2**20
    print(f"\nN = {count:,} fills ({size:,.0f} MiB of CSV), batches of about {batch:,} fills")
    folder = Path(tempfile.mkdtemp(prefix="reconcile-streaming-"))
    try:
        outs = {}
        for label, extra in (("whole", []), ("batched", ["--batch-rows", str(batch)])):
            out = folder / label
            wall, peak = _run([str(path), "--format", "parquet", "--out", str(out), *extra])
            outs[label] = out
            print(
                f"    {label:8} {wall:8.1f} s  {count / wall / 1e6:5.2f} M fills/s  "
                f"peak {peak / 2**30:5.2f} GiB"
            )
        if count <= EQUALITY_LIMIT:
            names = sorted(p.name for p in outs["whole"].iterdir())
            same = all(
                (outs["batched"] / name).read_bytes() == (outs["whole"] / name).read_bytes()
                for name in names
            )
            listed = ", ".join(names)
            print(f"    batched outputs byte-identical to the whole run's ({listed}): {same}")
    finally:
        shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    main()
