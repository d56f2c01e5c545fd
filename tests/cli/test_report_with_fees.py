"""``reconcile report --schedule`` adds the fee audit to the page, the workbook and the tables."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "fees-small"


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    for item in CASE.iterdir():
        if item.is_file():
            shutil.copy(item, tmp_path / item.name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _schedule(workdir: Path) -> str:
    return next(p.name for p in workdir.iterdir() if p.suffix == ".toml")


def test_report_carries_the_fee_audit(workdir: Path) -> None:
    result = CliRunner().invoke(
        app,
        ["report", "fills.csv", "--schedule", _schedule(workdir), "--out", "out"],
        env={"COLUMNS": "100"},
    )
    assert result.exit_code == 1, result.output  # the case leaks 31.50 USD (its README)
    # Without the financing file only the commission part of it: 6.00 USD.
    assert "Fee audit: leakage 6.00 USD\n" in result.stdout
    manifest = json.loads((workdir / "out" / "run.json").read_text())
    assert manifest["fees"]["schedule"]["source"] == _schedule(workdir)
    assert manifest["fees"]["leakage"] == {"USD": "6.00"}
    assert manifest["fees"]["period"] is None
    html = (workdir / "out" / "report.html").read_text()
    assert 'id="fees-summary"' in html
    assert 'id="fees-findings"' in html
    assert (workdir / "out" / "fees_commission_orders.csv").exists()
    sheets = openpyxl.load_workbook(workdir / "out" / "report.xlsx").sheetnames
    assert "fees commission orders" in sheets


def test_the_reports_period_bounds_the_fee_audit(workdir: Path) -> None:
    args = ["report", "fills.csv", "--schedule", _schedule(workdir), "--out", "out"]
    result = CliRunner().invoke(app, [*args, "--period", "2026-10"], env={"COLUMNS": "100"})
    assert result.exit_code == 0, result.output  # every fill of the case is in November
    assert "Fee audit: no leakage\n" in result.stdout
    manifest = json.loads((workdir / "out" / "run.json").read_text())
    assert manifest["fees"]["period"] == "2026-10-01..2026-10-31"
    assert manifest["fees"]["tables"]["commission_orders"] == 0


def test_marks_without_a_schedule_is_refused(workdir: Path) -> None:
    result = CliRunner().invoke(
        app, ["report", "fills.csv", "--marks", "fills.csv"], env={"COLUMNS": "100"}
    )
    assert result.exit_code == 2
    assert "needs --schedule" in result.stderr
    assert not (workdir / "reconcile-report").exists()


def test_report_carries_the_tie_out_and_exits_1_on_breaks(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    case = Path(__file__).parents[1] / "golden" / "tieout-cutoff"
    for name in ("fills.csv", "statement.csv"):
        shutil.copy(case / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    args = [
        "report",
        "fills.csv",
        "--statement",
        "statement.csv",
        "--period",
        "2026-11",
        "--timezone",
        "America/New_York",
        "--cutoff",
        "17:00",
        "--out",
        "out",
    ]
    result = CliRunner().invoke(app, args, env={"COLUMNS": "100"})
    assert result.exit_code == 1, result.output  # the golden case holds a cut-off break
    html = (tmp_path / "out" / "report.html").read_text()
    assert 'id="tieout-breaks"' in html
    assert (tmp_path / "out" / "tieout_compared_lines.csv").exists()
    manifest = json.loads((tmp_path / "out" / "run.json").read_text())
    entry = manifest["tie_out"]
    assert entry["period"]["label"] == "2026-11"
    assert [i["source"] for i in entry["inputs"]][-1] == "statement.csv"
    breaks = entry["counts"]["break"]
    assert breaks > 0
    assert f"Tie-out of 2026-11: {breaks} break" in result.stdout


def test_a_period_needs_a_statement_or_a_schedule(workdir: Path) -> None:
    result = CliRunner().invoke(
        app, ["report", "fills.csv", "--period", "2026-11"], env={"COLUMNS": "100"}
    )
    assert result.exit_code == 2
    assert result.stderr == (
        "error: --period: bounds the tie-out (--statement) and the fee audit (--schedule); "
        "give one\n"
    )
    assert not (workdir / "reconcile-report").exists()


def test_a_statement_needs_a_period(workdir: Path) -> None:
    result = CliRunner().invoke(
        app, ["report", "fills.csv", "--statement", "fills.csv"], env={"COLUMNS": "100"}
    )
    assert result.exit_code == 2
    assert "needs --period" in result.stderr
