"""``reconcile report --schedule`` adds the fee audit to the page, the workbook and the tables."""

from __future__ import annotations

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
    assert result.exit_code == 0, result.output
    html = (workdir / "out" / "report.html").read_text()
    assert 'id="fees-summary"' in html
    assert 'id="fees-findings"' in html
    assert (workdir / "out" / "fees_commission_orders.csv").exists()
    sheets = openpyxl.load_workbook(workdir / "out" / "report.xlsx").sheetnames
    assert "fees commission orders" in sheets


def test_marks_without_a_schedule_is_refused(workdir: Path) -> None:
    result = CliRunner().invoke(
        app, ["report", "fills.csv", "--marks", "fills.csv"], env={"COLUMNS": "100"}
    )
    assert result.exit_code == 2
    assert "needs --schedule" in result.stderr
    assert not (workdir / "reconcile-report").exists()
