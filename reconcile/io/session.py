"""What a command does between its options and its output: read, compute, write, show.

The CLI commands are a few lines each because the steps live here, where the Python API can use
them too.
"""

from __future__ import annotations

import functools
import json
import sys
from collections.abc import Callable
from dataclasses import dataclass, field
from decimal import Decimal
from importlib.metadata import version
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pandas as pd

from reconcile.core.book import Book
from reconcile.core.frames import InputFrames
from reconcile.core.matching import HeldFrames, match_canonical, match_held
from reconcile.core.summary import BookTotals
from reconcile.errors import EXIT_FOUND, EXIT_OK, ConfigError, InputError
from reconcile.io import readers
from reconcile.io.readers import read_marks, read_opening
from reconcile.io.readers.sources import ProfileLike, Source, nothing_usable, read_source
from reconcile.io.render import terminal
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import decimal_text, text_table, write_tables
from reconcile.money import ZERO

if TYPE_CHECKING:  # the fee audit's and tie-out's modules load with their first use (pydantic,
    # xlsxwriter and the tie-out's page are slow to import, and match needs none of them)
    from reconcile.core.compare import Tolerance
    from reconcile.core.fees.audit import FeeAudit
    from reconcile.core.fees.rules import Schedule
    from reconcile.core.tieout import TieOut
    from reconcile.io.config import TieOutConfig
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

    def record(self) -> InputsRecord:
        """What the outputs say about these inputs, without the frames."""
        return InputsRecord(tuple(self.summaries()), self.timezone, self.rejected, self.warnings)


@dataclass(frozen=True)
class InputsRecord:
    """What results say about their inputs (sources, counts, time zone, rejected rows and
    warnings), kept when the input frames themselves have been let go of."""

    found: tuple[dict[str, Any], ...]
    timezone: str | None
    rejected: pd.DataFrame | None
    warnings: tuple[str, ...]

    def summaries(self) -> list[dict[str, Any]]:
        return [dict(summary) for summary in self.found]


#: Inputs as the writers and the terminal describe them: read, or only recorded.
Described = Inputs | InputsRecord


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
    inputs = Inputs(
        fills=read.frame,
        financing=events,
        opening=None if opening is None else _opening(opening, timezone),
        timezone=timezone,
        rejected=_all_rejects(sources) if keep_rejects else None,
        warnings=tuple(w for s in sources for w in s.warnings),
    )
    check_usable(inputs)
    return inputs


def check_usable(inputs: Inputs) -> None:
    """A file that had rows but gave not one usable row is the wrong file or format, not a quiet
    day (see :func:`~reconcile.io.readers.sources.nothing_usable`)."""
    for summary in inputs.summaries():
        reason = nothing_usable(summary, summary["kind"])
        if reason is not None:
            raise InputError(f"{reason}; `reconcile check` lists the problems")


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


def finish_rejects(inputs: Described, path: Path | None) -> None:
    """Write the rows set aside, when ``--rejects`` asked for them."""
    if path is not None and inputs.rejected is not None:
        write_rejects(inputs.rejected, path)


def show_warnings(inputs: Described) -> None:
    terminal.warnings(terminal.console(stderr=True), inputs.warnings)


def _opening(path: Path, timezone: str | None) -> pd.DataFrame:
    frame = read_opening(path, timezone=timezone)
    frame.attrs["read_summary"] = {"source": str(path), "accepted": len(frame)}
    return frame


def match_inputs(inputs: Inputs, **options: Any) -> Book:
    with terminal.progress_bar("matching") as progress:
        return match_canonical(
            inputs.fills, inputs.financing, opening=inputs.opening, progress=progress, **options
        )


def read_and_match(read: Callable[[], Inputs], **options: Any) -> tuple[Book, InputsRecord]:
    """``read()`` then :func:`match_inputs`, letting go of the input frames as soon as the
    match has taken what it needs from them: only their record is kept, so a run over millions
    of fills does not hold them beside the tables built from them."""
    inputs = read()
    record = inputs.record()
    held = HeldFrames(
        inputs.fills,
        inputs.financing,
        inputs.opening,
        releasable=True,
        reread=lambda: _frames(read()),
    )
    del inputs
    with terminal.progress_bar("matching") as progress:
        return match_held(held, progress=progress, **options), record


def _frames(inputs: Inputs) -> InputFrames:
    return inputs.fills, inputs.financing, inputs.opening


def write_book(book: Book, inputs: Described, out: Path, fmt: str) -> list[Path]:
    manifest = run_manifest("match", book, inputs)
    return write_tables(book.stored_tables(), out, fmt, {"run.json": manifest})


def match_file_in_batches(
    fills: Path, out: Path, *, profile: ProfileLike = None, **options: Any
) -> None:
    """``match --batch-rows``: stream the fills batch by batch, then the usual summary."""
    from reconcile.io.batches import match_in_batches

    if profile is not None:
        raise ConfigError(
            "--batch-rows: reads fills in the canonical columns; --profile is "
            "not supported with it (map the file first, or match it whole)"
        )
    with terminal.progress_bar("matching batches") as progress:
        run = match_in_batches(fills, out, progress=progress, **options)
    show_match(run.totals, run.inputs, run.written, options.get("rejects"))


def run_manifest(command: str, book: Book | BookTotals, inputs: Described) -> dict[str, Any]:
    """What produced a set of results: enough to reproduce them, nothing machine-specific."""
    if isinstance(book, BookTotals):
        counts = book.counts
    else:
        counts = {name: book.row_count(name) for name in book.stored_tables()}
    return {
        "command": command,
        "reconcile_version": version("reconcile"),
        "method": book.method,
        "commission": book.commission,
        "rounding": book.rounding,
        "timezone_for_naive_times": inputs.timezone,
        "tz_database": tz_database_version(),
        "inputs": inputs.summaries(),
        "tables": counts,
        "caution": CAUTION,
    }


def show_match(
    book: Book | BookTotals, inputs: Described, written: list[Path], rejects: Path | None = None
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
    unusable = nothing_usable(read.summary, kind)
    if unusable is not None:
        print(f"error: {unusable}", file=sys.stderr)  # unwrapped, as every other error
    return EXIT_BAD_INPUT if len(read.rejected) or unusable else EXIT_OK


# The fee audit (reconcile fees).

FEE_FORMATS = ("csv", "json", "xlsx", "html")
DEFAULT_FEES_OUT = Path("reconcile-out") / "fees"


@dataclass(frozen=True)
class FeeInputs:
    inputs: Inputs
    schedule: Schedule
    schedule_path: Path
    marks: pd.DataFrame | None = None

    def summaries(self) -> list[dict[str, Any]]:
        found = self.inputs.summaries()
        if self.marks is not None:
            found.append(self.marks.attrs["read_summary"])
        return found


def read_fee_inputs(
    fills: Path,
    schedule: Path,
    financing: Path | None = None,
    marks: Path | None = None,
    *,
    timezone: str | None = None,
    dedupe: bool = False,
    **source: Any,
) -> FeeInputs:
    """Read the schedule first (a bad schedule stops the run before any large file is read).

    ``source`` options (profile, input_format, fix_lenient) go to :func:`read_inputs`.
    """
    from reconcile.io.readers.schedule import read_schedule

    rules = read_schedule(schedule)
    inputs = read_inputs(fills, financing, timezone=timezone, dedupe=dedupe, **source)
    return fee_inputs_for(inputs, schedule, marks, rules)


def fee_inputs_for(
    inputs: Inputs, schedule: Path, marks: Path | None, rules: Schedule | None = None
) -> FeeInputs:
    """The fee audit's inputs beside fills already read: the schedule and optional marks."""
    from reconcile.io.readers.schedule import read_schedule

    priced = None
    if marks is not None:
        priced = read_marks(marks, timezone=inputs.timezone)
        priced.attrs["read_summary"] = {
            "source": str(marks),
            "accepted": len(priced),
            "kind": "marks",
        }
    return FeeInputs(inputs, rules or read_schedule(schedule), schedule, priced)


def audit_fee_inputs(inputs: FeeInputs, **options: Any) -> FeeAudit:
    from reconcile.core.fees.audit import audit_fees

    return audit_fees(
        inputs.inputs.fills,
        inputs.schedule,
        inputs.inputs.financing,
        marks=inputs.marks,
        timezone=inputs.inputs.timezone,
        **options,
    )


def check_fee_format(fmt: str) -> None:
    if fmt not in FEE_FORMATS:
        raise ConfigError(f"format: expected one of {', '.join(FEE_FORMATS)}, found {fmt!r}")


def report_fee_audit(audit: FeeAudit, inputs: FeeInputs, out: Path | None, fmt: str) -> None:
    """Write the results (or, as JSON with no folder, print them) and show the summary."""
    from reconcile.io.render import fees as fees_render

    if out is None and fmt == "json":
        sys.stdout.write(json.dumps(fee_document(audit, inputs), indent=1) + "\n")
        return
    written = write_fee_audit(audit, inputs, out or DEFAULT_FEES_OUT, fmt)
    fees_render.fee_summary(
        terminal.console(), audit, inputs.summaries(), str(inputs.schedule_path), written
    )


def write_fee_audit(audit: FeeAudit, inputs: FeeInputs, out: Path, fmt: str) -> list[Path]:
    from reconcile.io.render import fees as fees_render
    from reconcile.io.render.html import render_page
    from reconcile.io.writers.xlsx import write_workbook

    check_fee_format(fmt)
    manifest = {"run.json": fee_manifest(audit, inputs)}
    tables = audit.tables()
    if fmt in ("csv", "json"):
        return write_tables(tables, out, fmt, manifest)
    if fmt == "xlsx":
        about = [*_fee_lines(audit, inputs), CAUTION]
        workbook = functools.partial(write_workbook, sheets=tables, title="Fee audit", about=about)
        return write_tables({}, out, "csv", manifest, {"fees.xlsx": workbook})
    page = fees_render.fee_page(
        audit, inputs.summaries(), str(inputs.schedule_path), _provenance(audit, inputs)
    )
    html = render_page(page)

    def write_page(path: Path) -> None:
        path.write_text(html, encoding="utf-8")

    return write_tables(tables, out, "csv", manifest, {"fees.html": write_page})


def fee_exit_code(audit: FeeAudit) -> int:
    return EXIT_FOUND if audit.has_leakage else EXIT_OK


def fee_manifest(audit: FeeAudit, inputs: FeeInputs) -> dict[str, Any]:
    """What produced a fee audit: the schedule, the options, the inputs and what was found."""
    schedule = audit.schedule
    return {
        "command": "fees",
        "reconcile_version": version("reconcile"),
        "schedule": {
            "source": str(inputs.schedule_path),
            "name": schedule.name,
            "timezone": schedule.timezone,
            "rounding": schedule.rounding,
            "commission_rules": len(schedule.commission),
            "financing_rules": len(schedule.financing),
        },
        "period": None if audit.period is None else str(audit.period),
        "tolerance": decimal_text(audit.tolerance),
        "gross_realized_method": audit.method,
        "timezone_for_naive_times": inputs.inputs.timezone,
        "tz_database": tz_database_version(),
        "inputs": inputs.summaries(),
        "tables": {name: len(frame) for name, frame in audit.tables().items()},
        "leakage": {code: decimal_text(v, code) for code, v in audit.leakage().items()},
        "caution": CAUTION,
    }


# --- reconcile tie-out -------------------------------------------------------------------------


@dataclass(frozen=True)
class TieOutInputs:
    inputs: Inputs
    statement: pd.DataFrame
    rates: pd.DataFrame | None
    config: TieOutConfig

    def summaries(self) -> list[dict[str, Any]]:
        found = self.inputs.summaries()
        found.append(
            {
                "source": _source(self.statement, "statement"),
                "accepted": len(self.statement),
                "kind": "statement rows",
            }
        )
        if self.rates is not None:
            found.append(
                {
                    "source": _source(self.rates, "rates"),
                    "accepted": len(self.rates),
                    "kind": "FX rates",
                }
            )
        return found


def _source(frame: pd.DataFrame, default: str) -> str:
    summary = frame.attrs.get("read_summary")
    return str(summary["source"]) if isinstance(summary, dict) else default


def read_tieout_inputs(
    fills: Path,
    statement: Path,
    *,
    financing: Path | None = None,
    opening: Path | None = None,
    rates: Path | None = None,
    config: Path | None = None,
    timezone: str | None = None,
    dedupe: bool = False,
    **source: Any,
) -> TieOutInputs:
    """Read every input of a tie-out first, so one bad file stops it before anything is written.

    ``source`` options (profile, input_format, fix_lenient) go to :func:`read_inputs`.
    """
    from reconcile.io.config import read_config

    return TieOutInputs(
        inputs=read_inputs(fills, financing, opening, timezone=timezone, dedupe=dedupe, **source),
        statement=readers.read_statement(statement),
        rates=None if rates is None else readers.read_rates(rates, timezone=timezone),
        config=read_config(config),
    )


def run_tieout(
    read: TieOutInputs,
    period: str | None,
    *,
    first: str | None = None,
    last: str | None = None,
    tolerance: str | None = None,
    relative_tolerance: str | None = None,
    cutoff: str | None = None,
    **options: Any,
) -> TieOut:
    """Tie out with options from the command line over those of the config file."""
    from reconcile.core.period import make_period
    from reconcile.core.tieout import decimal_option, tie_out

    zone_name = read.inputs.timezone or "UTC"
    span = make_period(period, first=first, last=last, timezone=zone_name, cutoff=cutoff)
    config = read.config
    absolute = config.absolute if tolerance is None else decimal_option(tolerance, "tolerance")
    relative = (
        config.relative
        if relative_tolerance is None
        else decimal_option(relative_tolerance, "relative tolerance")
    )
    with terminal.progress_bar("tying out"):
        return tie_out(
            read.inputs.fills,
            read.statement,
            span,
            financing=read.inputs.financing,
            opening=read.inputs.opening,
            timezone=read.inputs.timezone,
            tolerance=absolute if absolute is not None else 0,
            relative_tolerance=relative if relative is not None else 0,
            tolerances=measure_tolerances(config, absolute, relative),
            rates=read.rates,
            rate_source=config.fx_source,
            limits=config.limits,
            **options,
        )


def measure_tolerances(
    config: TieOutConfig, absolute: Decimal | None, relative: Decimal | None
) -> dict[str, Tolerance]:
    """Per-measure tolerances; a money measure's unset field takes the general money one."""
    from reconcile.core.compare import MONEY, Tolerance

    general = Tolerance(absolute or ZERO, relative or ZERO)
    rules = {}
    for measure, given in config.by_measure.items():
        money = measure in MONEY
        rules[measure] = Tolerance(
            given.get("absolute", general.absolute if money else ZERO),
            given.get("relative", general.relative if money else ZERO),
        )
    return rules


def tieout_manifest(result: TieOut, read: TieOutInputs, command: str) -> dict[str, Any]:
    """What produced a tie-out: enough to reproduce it, nothing machine-specific."""
    from reconcile.core.period import utc_text

    span = result.period
    return {
        "command": command,
        "reconcile_version": version("reconcile"),
        "period": {
            "label": span.label,
            "timezone": span.timezone,
            "cutoff": None if span.cutoff is None else f"{span.cutoff:%H:%M}",
            "start": utc_text(span.start),
            "end": utc_text(span.end),
            "describe": span.describe(),
        },
        "tz_database": tz_database_version(),
        "method": result.method,
        "commission": result.commission,
        "rounding": result.rounding,
        "base": result.base,
        "tolerance_text": tolerance_text(result),
        "inputs": read.summaries(),
        "left_out": dict(result.left_out),
        "counts": result.counts(),
        "caution": CAUTION,
    }


def fee_document(audit: FeeAudit, inputs: FeeInputs) -> dict[str, Any]:
    """The whole audit as one JSON document: the manifest and every table as exact text."""
    tables = {
        name: text_table(frame).to_dict(orient="records") for name, frame in audit.tables().items()
    }
    return {**fee_manifest(audit, inputs), "results": tables}


def _fee_lines(audit: FeeAudit, inputs: FeeInputs) -> list[str]:
    from reconcile.io.render import fees as fees_render

    return fees_render.describe(audit, inputs.summaries(), str(inputs.schedule_path))


def _provenance(audit: FeeAudit, inputs: FeeInputs) -> list[str]:
    return [
        f"reconcile {version('reconcile')}; time-zone database {tz_database_version()}.",
        f"Schedule {inputs.schedule_path}; the tables beside this page hold every row exactly.",
    ]


def tolerance_text(result: TieOut) -> str:
    rules = result.tolerances
    text = f"{rules.money.absolute.normalize():f} minor units"
    if rules.money.relative:
        text += f" or {rules.money.relative.normalize():f} of the statement's figure"
    for measure, rule in rules.by_measure.items():
        text += f"; {measure} {rule.absolute.normalize():f}"
        if rule.relative:
            text += f" or {rule.relative.normalize():f} relative"
    return text


def write_tieout_results(
    result: TieOut, read: TieOutInputs, out: Path, formats: list[str]
) -> list[Path]:
    from reconcile.io.writers.tieout import write_tieout

    manifest = tieout_manifest(result, read, "tie-out")
    return write_tieout(result, out, formats, manifest)


def show_tieout(result: TieOut, read: TieOutInputs, written: list[Path]) -> None:
    terminal.tieout_summary(
        terminal.console(), result, read.summaries(), written, tz_database_version()
    )
