"""``reconcile check``: validate a file without matching, count what was accepted and rejected."""

from __future__ import annotations

from typing import Annotated

import typer

from reconcile.cli._app import (
    Dedupe,
    FixLenient,
    InputFile,
    InputFormat,
    ProfileFile,
    RejectsFile,
    Timezone,
    app,
    reports_errors,
)


@app.command("check")
@reports_errors
def check_command(
    source: InputFile,
    profile: ProfileFile = None,
    input_format: InputFormat = None,
    rejects: RejectsFile = None,
    fix_lenient: FixLenient = False,
    timezone: Timezone = None,
    dedupe: Dedupe = False,
    kind: Annotated[
        str, typer.Option("--kind", metavar="fills|financing", help="What the file holds.")
    ] = "fills",
) -> None:
    """Validate a file: rows read, accepted and rejected by reason, and the first problems.

    Exits 0 when every row is accepted, 2 when any is rejected, none is usable or the file cannot
    be read.
    """
    from reconcile.io import session

    code = session.check_file(
        source,
        kind=kind,
        profile=profile,
        input_format=input_format,
        timezone=timezone,
        dedupe=dedupe,
        fix_lenient=fix_lenient,
        rejects=rejects,
    )
    raise typer.Exit(code)
