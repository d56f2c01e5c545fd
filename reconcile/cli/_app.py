"""The typer application and what every command shares: error handling and common options."""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Annotated, ParamSpec, TypeVar

import typer

from reconcile.errors import ReconcileError

app = typer.Typer(
    name="reconcile",
    help="Match fills into lots and round trips, tie them out against statements, audit fees.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_show_locals=False,  # a traceback must never print account data
    rich_markup_mode=None,
)

P = ParamSpec("P")
T = TypeVar("T")


#: Options that name what a command writes; every other path option is an input it reads.
OUTPUTS = ("out", "rejects")


def reports_errors(command: Callable[P, T]) -> Callable[P, T]:
    """Turn a deliberate error into a message on stderr and its exit code, never a traceback."""

    @functools.wraps(command)
    def wrapper(*args: P.args, **kwargs: P.kwargs) -> T:
        from reconcile.io.writers.atomic import check_not_an_input, protecting

        inputs = [v for k, v in kwargs.items() if isinstance(v, Path) and k not in OUTPUTS]
        try:
            with protecting(inputs):
                for name in OUTPUTS:
                    if isinstance(kwargs.get(name), Path):
                        check_not_an_input(kwargs[name], f"--{name}")  # type: ignore[arg-type]
                return command(*args, **kwargs)
        except ReconcileError as error:
            print(f"error: {error}", file=sys.stderr)
            raise typer.Exit(error.exit_code) from None

    return wrapper


Timezone = Annotated[
    str | None,
    typer.Option(
        "--timezone",
        metavar="ZONE",
        help="IANA zone for times written without a UTC offset, e.g. America/New_York.",
    ),
]
Dedupe = Annotated[
    bool,
    typer.Option(
        "--dedupe", help="Drop exact repeated rows (counted in the summary) instead of failing."
    ),
]
Method = Annotated[
    str, typer.Option("--method", metavar="fifo|lifo|hifo|average", help="Lot relief method.")
]
Commission = Annotated[
    str,
    typer.Option(
        "--commission",
        metavar="at-close|at-fill",
        help="When commissions are realized: with the lot's close, or when paid.",
    ),
]
Rounding = Annotated[
    str,
    typer.Option(
        "--rounding", metavar="half-even|half-up", help="Rounding of amounts to minor units."
    ),
]
Engine = Annotated[
    str,
    typer.Option(
        "--engine",
        metavar="auto|reference|fast",
        help="How to match: the compiled kernel (fast), the readable engine (reference), or "
        "the fastest available (auto). All give the same results.",
    ),
]
OutDir = Annotated[Path, typer.Option("--out", metavar="DIR", help="Folder for the results.")]
InputFile = Annotated[
    Path,
    typer.Argument(
        metavar="FILLS",
        help="Fills file: CSV/TSV, Parquet, Excel, JSON lines or a FIX log.",
        show_default=False,
    ),
]
ProfileFile = Annotated[
    Path | None,
    typer.Option(
        "--profile", metavar="FILE", help="Column profile (TOML) mapping the source to our columns."
    ),
]
InputFormat = Annotated[
    str | None,
    typer.Option(
        "--input-format",
        metavar="csv|tsv|parquet|excel|jsonl|fix",
        help="Format of the input, when its extension does not say.",
    ),
]
RejectsFile = Annotated[
    Path | None,
    typer.Option(
        "--rejects",
        metavar="FILE",
        help="Set bad rows aside in this CSV (with every reason) and go on with the rest.",
    ),
]
FixLenient = Annotated[
    bool,
    typer.Option(
        "--fix-lenient",
        help="Keep FIX messages with a wrong BodyLength or CheckSum, with a warning.",
    ),
]


def _show_version(value: bool) -> None:
    if value:
        from importlib.metadata import version

        print(f"reconcile {version('reconcile')}")
        raise typer.Exit()


@app.callback()
def _root(
    show_version: Annotated[
        bool,
        typer.Option(
            "--version", callback=_show_version, is_eager=True, help="Print the version and exit."
        ),
    ] = False,
) -> None:
    """Match fills into lots and round trips, tie them out against statements, audit fees.

    Exit codes: 0 all good, 1 breaks or fee leakage found, 2 bad input or options.
    """


FinancingFile = Annotated[
    Path | None,
    typer.Option(
        "--financing", metavar="FILE", help="Financing events (swaps, borrow, dividends...)."
    ),
]
OpeningFile = Annotated[
    Path | None,
    typer.Option("--opening", metavar="FILE", help="Open lots carried in from an earlier period."),
]
StatementPeriod = Annotated[
    str | None,
    typer.Option("--period", metavar="YYYY-MM", help="A month (2026-11) or a day (2026-11-30)."),
]
Cutoff = Annotated[
    str | None,
    typer.Option("--cutoff", metavar="HH:MM", help="Local time a statement day ends."),
]
Tolerance = Annotated[
    str | None,
    typer.Option("--tolerance", metavar="N", help="Allowed tie-out difference in minor units."),
]
TieOutConfig = Annotated[
    Path | None,
    typer.Option("--config", metavar="FILE", help="Tie-out tolerances per measure, search bounds."),
]
