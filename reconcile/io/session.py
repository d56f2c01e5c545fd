"""What a command does between its options and its output: read, compute, write, show.

The CLI commands are a few lines each because the steps live here, where the Python API can use
them too.
"""

from __future__ import annotations

from dataclasses import dataclass
from decimal import Decimal
from importlib.metadata import version
from pathlib import Path
from typing import Any

import pandas as pd

from reconcile.core.book import Book
from reconcile.core.compare import MONEY, Tolerance
from reconcile.core.matching import match
from reconcile.core.period import make_period, utc_text
from reconcile.core.tieout import TieOut, decimal_option, tie_out
from reconcile.io import readers
from reconcile.io.config import TieOutConfig, read_config
from reconcile.io.readers import read_fills, read_financing, read_opening
from reconcile.io.render import terminal
from reconcile.io.writers.tables import write_tables
from reconcile.io.writers.tieout import write_tieout
from reconcile.money import ZERO
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


def show_match(book: Book, inputs: Inputs, written: list[Path]) -> None:
    terminal.match_summary(terminal.console(), book, inputs.summaries(), written)


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
) -> TieOutInputs:
    """Read every input of a tie-out first, so one bad file stops it before anything is written."""
    return TieOutInputs(
        inputs=read_inputs(fills, financing, opening, timezone=timezone, dedupe=dedupe),
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
    manifest = tieout_manifest(result, read, "tie-out")
    return write_tieout(result, out, formats, manifest)


def show_tieout(result: TieOut, read: TieOutInputs, written: list[Path]) -> None:
    terminal.tieout_summary(
        terminal.console(), result, read.summaries(), written, tz_database_version()
    )
