"""``reconcile tie-out`` tested by its exact output at a fixed width, its files and exit codes."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "tieout-cutoff"
PERIOD = ["--period", "2026-11", "--timezone", "America/New_York", "--cutoff", "17:00"]


def run(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def lines(text: str) -> list[str]:
    return [line.rstrip() for line in text.splitlines()]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    for name in ("fills.csv", "statement.csv"):
        shutil.copy(CASE / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def tie_out(*extra: str) -> Result:
    return run("tie-out", "fills.csv", "--statement", "statement.csv", *PERIOD, *extra)


def test_breaks_are_listed_with_their_top_cause_and_exit_1(workdir: Path) -> None:
    # The case of tests/golden/tieout-cutoff (README.md there works the figures out).
    result = tie_out("--out", "out")
    assert result.exit_code == 1, result.output
    assert lines(result.stdout) == [
        "Tied out 5 fills from fills.csv",
        "  with 3 statement rows from statement.csv",
        "Period 2026-11 in America/New_York, days ending 17:00: from 2026-10-31T21:00:00Z"
        " (included) to",
        "2026-11-30T22:00:00Z (excluded); time-zone database 2026f",
        "Relief FIFO, commission at-close, rounding half-even",
        "tied   within tolerance   break",
        "───────────────────────────────",
        "   4                  0       4",
        "Breaks",
        "#   account   instrument   measure         ccy     ours   theirs   difference",
        "─────────────────────────────────────────────────────────────────────────────",
        "1   HRB-1     TALC         realized pnl    USD   133.60    84.30        49.30",
        "2   HRB-1     TALC         commission      USD     1.40     0.70         0.70",
        "3   HRB-1     TALC         open quantity   USD      100      200         -100",
        "8   HRB-1     (account)    realized pnl    USD   133.60    84.30        49.30",
        "#1 cut_off: fill T3 at 2026-11-30T21:45:00Z (2026-11-30 16:45:00 America/New_York), 15"
        " min before",
        "the period end, is counted in the next period; ours would be 84.30 USD, explaining"
        " 49.30 USD",
        "#2 cut_off: fill T3 at 2026-11-30T21:45:00Z (2026-11-30 16:45:00 America/New_York), 15"
        " min before",
        "the period end, is counted in the next period; ours would be 0.70 USD, explaining 0.70"
        " USD",
        "#3 cut_off: fill T3 at 2026-11-30T21:45:00Z (2026-11-30 16:45:00 America/New_York), 15"
        " min before",
        "the period end, is counted in the next period; ours would be 200, explaining -100",
        "#8 cut_off: fill T3 at 2026-11-30T21:45:00Z (2026-11-30 16:45:00 America/New_York), 15"
        " min before",
        "the period end, is counted in the next period; ours would be 84.30 USD, explaining"
        " 49.30 USD",
        "Results in out/: compared_lines.csv, causes.csv, fills_involved.csv, breaks.json,"
        " tieout.xlsx,",
        "tieout.html, run.json",
        "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed"
        " professional",
        "prevail.",
    ]
    assert sorted(p.name for p in (workdir / "out").iterdir()) == [
        "breaks.json",
        "causes.csv",
        "compared_lines.csv",
        "fills_involved.csv",
        "run.json",
        "tieout.html",
        "tieout.xlsx",
    ]


def test_a_statement_that_ties_exits_0(workdir: Path) -> None:
    # Derived (see the case's README.md): with T3 in November the statement reads as ours.
    (workdir / "statement.csv").write_text(
        "account,instrument,currency,realized_pnl,commission,open_quantity,basis\n"
        "HRB-1,TALC,USD,133.60,1.40,100,net\n"
        "HRB-1,VRMN-F27,EUR,166.60,3.40,0,net\n"
    )
    result = tie_out("--out", "out", "--format", "json")
    assert result.exit_code == 0, result.output
    assert "Every compared line ties within tolerance." in result.stdout
    assert sorted(p.name for p in (workdir / "out").iterdir()) == ["breaks.json", "run.json"]
    document = json.loads((workdir / "out" / "breaks.json").read_text())
    assert document["counts"] == {"tied": 6, "within tolerance": 0, "break": 0}
    assert document["tz_database"] == "2026f"


def test_a_later_cut_off_ties_the_same_statement_differently(workdir: Path) -> None:
    # A 16:30 cut-off puts T3 (16:45) in December, as the statement does: everything ties.
    result = run(
        "tie-out",
        "fills.csv",
        "--statement",
        "statement.csv",
        "--period",
        "2026-11",
        "--timezone",
        "America/New_York",
        "--cutoff",
        "16:30",
        "--out",
        "out",
    )
    assert result.exit_code == 0, result.output


def test_tolerance_options_and_the_config_file(workdir: Path) -> None:
    (workdir / "desk.toml").write_text(
        "[tolerance]\nabsolute = 0\n[tolerance.commission]\nabsolute = 70\n"
        "[tolerance.open_quantity]\nabsolute = 100\n"
    )
    result = tie_out("--config", "desk.toml", "--format", "csv", "--out", "out")
    assert result.exit_code == 1
    compared = (workdir / "out" / "compared_lines.csv").read_text().splitlines()
    commission = next(row for row in compared if ',"commission",' in row)
    assert '"within tolerance"' in commission
    loose = tie_out("--config", "desk.toml", "--tolerance", "4930", "--out", "out2")
    assert loose.exit_code == 0, loose.output


def test_a_bad_statement_exits_2_with_every_problem_and_writes_nothing(workdir: Path) -> None:
    (workdir / "statement.csv").write_text(
        "account,instrument,currency,realized_pnl,open_quantity,basis\n"
        "HRB-1,TALC,USD,84.3O,200,net\n"
        "HRB-1,,USD,84.30,5,sideways\n"
    )
    result = tie_out("--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: statement.csv: 3 problems found",
        "  statement.csv row 2, column realized_pnl: expected a decimal number (finite, plain "
        "digits), found '84.3O'",
        "  statement.csv row 3, column basis: expected gross or net (blank is gross), found "
        "'sideways'",
        "  statement.csv row 3, column open_quantity: expected blank on an account-level line "
        "(blank instrument): amounts of different instruments add up, their quantities and prices "
        "do not, found '5'",
    ]
    assert not (workdir / "out").exists()


@pytest.mark.parametrize(
    ("options", "message"),
    [
        (["--period", "2026-13"], "error: period: expected a month YYYY-MM (e.g. 2026-11)"),
        (["--period", "2026-11", "--cutoff", "25:00"], "error: cutoff: expected a local time"),
        (["--period", "2026-11", "--format", "pdf"], "error: format: expected one or more of"),
        (["--period", "2026-11", "--timezone", "Mars/Olympus"], "expected an IANA name"),
        (["--period", "2026-11", "--base", "USD"], "error: base: converting into a base"),
        (["--period", "2026-11", "--tolerance", "a lot"], "error: tolerance: expected a decimal"),
        (
            ["--period", "2026-11", "--relative-tolerance", "1"],
            "error: relative tolerance: expected a fraction of the statement's figure from 0 up",
        ),
        (["--from", "2026-11-01"], "error: period: expected a month YYYY-MM, a day YYYY-MM-DD"),
    ],
)
def test_bad_options_exit_2_without_a_traceback(
    workdir: Path, options: list[str], message: str
) -> None:
    result = run("tie-out", "fills.csv", "--statement", "statement.csv", *options, "--out", "o")
    assert result.exit_code == 2, result.output
    assert lines(result.stderr)[0].startswith(message) or message in result.stderr
    assert "Traceback" not in result.output
    assert not (workdir / "o").exists()


def test_a_bad_config_file_lists_every_problem(workdir: Path) -> None:
    (workdir / "desk.toml").write_text(
        "[tolerance]\nabsolute = -1\n[tolerance.comission]\nabsolute = 5\n"
        "[search]\nmax_pair_removals = 1.5\n"
    )
    result = tie_out("--config", "desk.toml", "--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: desk.toml: 3 problems found",
        "  desk.toml, tolerance.comission: expected one of tolerance.absolute, tolerance.relative, "
        "tolerance.realized_pnl, tolerance.commission, tolerance.financing, "
        "tolerance.open_quantity, tolerance.average_price, found 'comission'",
        "  desk.toml, tolerance.absolute: expected a decimal >= 0, found '-1'",
        "  desk.toml, search.max_pair_removals: expected a whole number >= 0, found '1.5'",
    ]


def test_the_command_is_listed_in_the_help() -> None:
    result = run("--help")
    assert "tie-out" in result.stdout
    assert run("tie-out", "--help").exit_code == 0
