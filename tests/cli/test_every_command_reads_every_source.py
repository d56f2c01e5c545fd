"""Every command that reads fills takes the same source options as ``match`` (issue: real-world
ingest applies to every later command): here a FIX drop copy read through its profile."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from reconcile.cli import app

SAMPLE = Path(__file__).parents[2] / "sample_data"
FIX = SAMPLE / "profiles" / "kestrel-dropcopy.fix"
PROFILE = SAMPLE / "profiles" / "kestrel.toml"

COMMANDS = {
    "match": ["match"],
    "stats": ["stats"],
    "report": ["report"],
    "fees": ["fees", "--schedule", str(SAMPLE / "larkmoor-schedule.toml")],
    "tie-out": ["tie-out", "--statement", str(SAMPLE / "statement.csv"), "--period", "2026-11"],
}


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_a_profiled_fix_log_feeds_every_command(command: str, tmp_path: Path) -> None:
    args = [*COMMANDS[command], str(FIX), "--profile", str(PROFILE), "--input-format", "fix"]
    out = tmp_path / ("stats.txt" if command == "stats" else "out")
    result = CliRunner().invoke(app, [*args, "--out", str(out)], env={"COLUMNS": "100"})
    # 0, or 1 where the command found breaks or leakage (the statement is another desk's): never 2
    assert result.exit_code in (0, 1), result.output
    assert "error:" not in result.stderr


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_an_unknown_input_format_is_refused_by_every_command(command: str, tmp_path: Path) -> None:
    args = [*COMMANDS[command], str(FIX), "--input-format", "telex", "--out", str(tmp_path / "o")]
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100"})
    assert result.exit_code == 2
    assert "input format: expected one of" in result.stderr
