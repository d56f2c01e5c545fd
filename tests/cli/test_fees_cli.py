"""``reconcile fees`` tested by its exact output at a fixed width, its files and exit codes."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "fees-small"
ARGS = ["fills.csv", "--schedule", "schedule.toml", "--financing", "financing.csv"]


def run(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def lines(text: str) -> list[str]:
    return [line.rstrip() for line in text.splitlines()]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    for name in ("fills.csv", "financing.csv", "marks.csv", "schedule.toml"):
        shutil.copy(CASE / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_leakage_prints_a_summary_writes_every_table_and_exits_1(workdir: Path) -> None:
    result = run("fees", *ARGS, "--marks", "marks.csv", "--out", "out")
    assert result.exit_code == 1, result.output
    assert lines(result.stdout) == [
        "Audited 9 fills from fills.csv against schedule.toml",
        "  with 6 financing events from financing.csv",
        "  with 1 marks from marks.csv",
        "Every date in the inputs (America/New_York), tolerance 0, rounding half-even",
        "Overcharged beyond the tolerance, by currency",
        "currency   commission   financing   leakage   undercharged   findings",
        "─────────────────────────────────────────────────────────────────────",
        "USD              6.00       25.50     31.50           0.00          4",
        "Largest overcharges",
        "charge       reference    instrument   overcharge   cause",
        "─" * 100,
        "financing    2026-11-06   SLV-CFD       15.30 USD   charged while the position was flat",
        "financing    2026-11-04   SLV-CFD       10.20 USD   3 nights charged, 1 expected",
        "commission   F3           QRX-Z26        5.00 USD   tier 1 rates charged; tier 2 applies",
        "commission   E1           TARN           1.00 USD   every partial fill charged as an "
        "order of its",
        "                                                    own (minimum and fixed fees)",
        "1 fill and 1 financing event matched no rule and were not priced (see unmatched)",
        "Results in out/: findings.csv, leakage_totals.csv, top_offenders.csv, "
        "commission_orders.csv,",
        "commission_fills.csv, financing_days.csv, unmatched.csv, fee_drag.csv, run.json",
        "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
        "professional",
        "prevail.",
    ]
    assert len(list((workdir / "out").iterdir())) == 9


def test_within_the_tolerance_exits_0(workdir: Path) -> None:
    result = run("fees", *ARGS, "--marks", "marks.csv", "--tolerance", "20", "--out", "out")
    assert result.exit_code == 0, result.output
    assert "USD              0.00        0.00      0.00           0.00          0" in result.stdout


def test_json_without_out_goes_to_stdout_alone(workdir: Path) -> None:
    result = run("fees", *ARGS, "--marks", "marks.csv", "--format", "json", "--period", "2026-11")
    assert result.exit_code == 1
    document = json.loads(result.stdout)
    assert document["leakage"] == {"USD": "31.50"}
    assert document["period"] == "2026-11-01..2026-11-30"
    findings = document["results"]["findings"]
    assert [f["overcharge"] for f in findings] == ["1.00", "5.00", "10.20", "15.30"]
    assert document["caution"].startswith("reconcile's output is not tax")
    assert not (workdir / "reconcile-out").exists()


def test_a_workbook_and_a_page(workdir: Path) -> None:
    assert run("fees", *ARGS, "--format", "xlsx", "--out", "book").exit_code == 1
    workbook = openpyxl.load_workbook(workdir / "book" / "fees.xlsx")
    assert workbook.sheetnames[:3] == ["About", "findings", "leakage totals"]
    assert run("fees", *ARGS, "--format", "html", "--out", "page").exit_code == 1
    html = (workdir / "page" / "fees.html").read_text(encoding="utf-8")
    assert "Brackwater Trading / Fenmoor Clearing (invented)" in html
    assert "charged while the position was flat" in html
    assert "licensed professional prevail" in html
    assert (workdir / "page" / "findings.csv").exists()


def test_a_bad_schedule_exits_2_names_every_key_and_writes_nothing(workdir: Path) -> None:
    text = (workdir / "schedule.toml").read_text()
    text = text.replace('per_unit = "0.005"', "per_unit = 0.005").replace(
        'per_unit = "1.50"', 'per_unit = "-1.50"'
    )
    (workdir / "schedule.toml").write_text(text)
    result = run("fees", *ARGS, "--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: schedule.toml: 2 problems found",
        '  schedule.toml commission[1].per_unit: expected a decimal in quotes such as "0.0035", '
        "or an integer (a TOML float is binary floating point and cannot be exact: write it in "
        "quotes), found '0.005'",
        "  schedule.toml commission[2].tiers[2].per_unit: expected a decimal >= 0, found '-1.50'",
    ]
    assert not (workdir / "out").exists()


@pytest.mark.parametrize(
    ("option", "value", "message"),
    [
        (
            "--period",
            "November",
            "error: period: expected YYYY-MM (a month), YYYY-MM-DD (a day) or "
            "YYYY-MM-DD..YYYY-MM-DD (both days included), found 'November'",
        ),
        (
            "--tolerance",
            "-1",
            "error: tolerance: expected an amount >= 0 such as 0.01, found '-1'",
        ),
        ("--format", "pdf", "error: format: expected one of csv, json, xlsx, html, found 'pdf'"),
    ],
)
def test_bad_options_exit_2(workdir: Path, option: str, value: str, message: str) -> None:
    result = run("fees", *ARGS, option, value, "--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [message]
    assert not (workdir / "out").exists()


def test_bad_marks_name_the_row(workdir: Path) -> None:
    (workdir / "marks.csv").write_text("time,instrument,price\n2026-11-03T16:30:00Z,SLV-CFD,abc\n")
    result = run("fees", *ARGS, "--marks", "marks.csv")
    assert result.exit_code == 2
    assert (
        "marks.csv row 2, column price: expected a decimal number (finite, plain digits), "
        "found 'abc'" in result.stderr
    )


def test_the_schedule_is_required(workdir: Path) -> None:
    result = run("fees", "fills.csv")
    assert result.exit_code == 2
    assert "--schedule" in result.output
