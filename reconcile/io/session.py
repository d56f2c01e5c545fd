"""What a command does between its options and its output: read, compute, write, show.

The CLI commands are a few lines each because the steps live here, where the Python API can use
them too.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from importlib.metadata import version
from pathlib import Path
from typing import Any

import pandas as pd

from reconcile.core.book import Book
from reconcile.core.matching import match
from reconcile.io.readers import read_opening
from reconcile.io.readers.sources import ProfileLike, Source, read_source
from reconcile.io.render import terminal
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import text_table, write_tables
from reconcile.notice import CAUTION
from reconcile.timezones import tz_database_version


@dataclass(frozen=True)
class Inputs:
    fills: pd.DataFrame
    financing: pd.DataFrame | None = None
    opening: pd.DataFrame | None = None
    timezone: str | None = None
    rejected: pd.DataFrame | None = None
    warnings: tuple[str, ...] = field(default=())

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
    profile: ProfileLike = None,
    input_format: str | None = None,
    keep_rejects: bool = False,
    fix_lenient: bool = False,
) -> Inputs:
    """Read every input, so that one bad file stops the run before anything is written.

    ``profile`` and ``input_format`` apply to the fills; ``keep_rejects`` sets bad rows aside (in
    ``Inputs.rejected``) instead of failing; ``fix_lenient`` keeps FIX messages whose BodyLength or
    CheckSum is wrong, with a warning. Every command reads its inputs through here.
    """
    options = functools.partial(
        read_source, timezone=timezone, dedupe=dedupe, keep_rejects=keep_rejects
    )
    read = options(
        fills, "fills", profile=profile, input_format=input_format, fix_lenient=fix_lenient
    )
    sources = [read]
    events = None
    if financing is not None:
        events_read = options(financing, "financing")
        sources.append(events_read)
        events = events_read.frame
    return Inputs(
        fills=read.frame,
        financing=events,
        opening=None if opening is None else _opening(opening, timezone),
        timezone=timezone,
        rejected=_all_rejects(sources) if keep_rejects else None,
        warnings=tuple(w for s in sources for w in s.warnings),
    )


def _all_rejects(sources: list[Source]) -> pd.DataFrame:
    frames = [s.rejected for s in sources if not s.rejected.empty]
    return pd.concat(frames, ignore_index=True) if frames else sources[0].rejected


def write_rejects(rejected: pd.DataFrame, path: Path) -> Path:
    """Every rejected row with its source row, reasons and raw values, as CSV (atomically)."""
    import pyarrow as pa
    import pyarrow.csv as pa_csv

    def write(target: Path) -> None:
        text = text_table(rejected).fillna("")
        table = pa.Table.from_pandas(text, preserve_index=False)
        pa_csv.write_csv(table, target, pa_csv.WriteOptions(quoting_style="needed"))

    with file_set(path.parent) as files:
        files.add(path.name, write)
    return path


def finish_rejects(inputs: Inputs, path: Path | None) -> None:
    """Write the rows set aside, when ``--rejects`` asked for them."""
    if path is not None and inputs.rejected is not None:
        write_rejects(inputs.rejected, path)


def show_warnings(inputs: Inputs) -> None:
    terminal.warnings(terminal.console(stderr=True), inputs.warnings)


def _opening(path: Path, timezone: str | None) -> pd.DataFrame:
    frame = read_opening(path, timezone=timezone)
    frame.attrs["read_summary"] = {"source": str(path), "accepted": len(frame)}
    return frame


def match_inputs(inputs: Inputs, **options: Any) -> Book:
    with terminal.progress_bar("matching") as progress:
        return match(
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


def show_match(
    book: Book, inputs: Inputs, written: list[Path], rejects: Path | None = None
) -> None:
    show_warnings(inputs)
    terminal.match_summary(terminal.console(), book, inputs.summaries(), written, rejects)


def check_file(
    path: Path,
    *,
    kind: str = "fills",
    profile: ProfileLike = None,
    input_format: str | None = None,
    timezone: str | None = None,
    dedupe: bool = False,
    fix_lenient: bool = False,
    rejects: Path | None = None,
) -> int:
    """Validate one file without matching, show its counts and first problems; the exit code."""
    from reconcile.errors import EXIT_BAD_INPUT, EXIT_OK

    read = read_source(
        path,
        kind,
        profile=profile,
        input_format=input_format,
        timezone=timezone,
        dedupe=dedupe,
        keep_rejects=True,
        fix_lenient=fix_lenient,
    )
    if rejects is not None:
        write_rejects(read.rejected, rejects)
    terminal.warnings(terminal.console(stderr=True), read.warnings)
    terminal.check_summary(terminal.console(), read.summary, read.problems, rejects)
    return EXIT_BAD_INPUT if len(read.rejected) else EXIT_OK
