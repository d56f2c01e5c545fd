"""What a command does between its options and its output: read, compute, write, show.

The CLI commands are a few lines each because the steps live here, where the Python API can use
them too.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib.metadata import version
from pathlib import Path
from typing import Any

import pandas as pd

from reconcile.core.book import Book
from reconcile.core.matching import match_canonical
from reconcile.io.readers import read_fills, read_financing, read_opening
from reconcile.io.render import terminal
from reconcile.io.writers.tables import write_tables
from reconcile.notice import CAUTION
from reconcile.timezones import tz_database_version


@dataclass(frozen=True)
class Inputs:
    fills: pd.DataFrame
    financing: pd.DataFrame | None = None
    opening: pd.DataFrame | None = None
    timezone: str | None = None

    def summaries(self) -> list[dict[str, Any]]:
        found = []
        for kind, frame in (
            ("fills", self.fills),
            ("financing events", self.financing),
            ("open lots", self.opening),
        ):
            if frame is not None:
                summary = dict(frame.attrs.get("read_summary") or {"accepted": len(frame)})
                summary.setdefault("source", kind)
                summary.setdefault("accepted", len(frame))
                found.append({**summary, "kind": kind})
        return found


def read_inputs(
    fills: Path,
    financing: Path | None = None,
    opening: Path | None = None,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
) -> Inputs:
    """Read every input, so that one bad file stops the run before anything is written."""
    return Inputs(
        fills=read_fills(fills, timezone=timezone, dedupe=dedupe),
        financing=None
        if financing is None
        else read_financing(financing, timezone=timezone, dedupe=dedupe),
        opening=None if opening is None else _opening(opening, timezone),
        timezone=timezone,
    )


def _opening(path: Path, timezone: str | None) -> pd.DataFrame:
    frame = read_opening(path, timezone=timezone)
    frame.attrs["read_summary"] = {"source": str(path), "accepted": len(frame)}
    return frame


def match_inputs(inputs: Inputs, **options: Any) -> Book:
    with terminal.progress_bar("matching") as progress:
        return match_canonical(
            inputs.fills, inputs.financing, opening=inputs.opening, progress=progress, **options
        )


def write_book(book: Book, inputs: Inputs, out: Path, fmt: str) -> list[Path]:
    manifest = run_manifest("match", book, inputs)
    return write_tables(book.tables(), out, fmt, {"run.json": manifest})


def run_manifest(command: str, book: Book, inputs: Inputs) -> dict[str, Any]:
    """What produced a set of results: enough to reproduce them, nothing machine-specific."""
    return {
        "command": command,
        "reconcile_version": version("reconcile"),
        "method": book.method,
        "commission": book.commission,
        "rounding": book.rounding,
        "timezone_for_naive_times": inputs.timezone,
        "tz_database": tz_database_version(),
        "inputs": inputs.summaries(),
        "tables": {name: len(frame) for name, frame in book.tables().items()},
        "caution": CAUTION,
    }


def show_match(book: Book, inputs: Inputs, written: list[Path]) -> None:
    terminal.match_summary(terminal.console(), book, inputs.summaries(), written)
