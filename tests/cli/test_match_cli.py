"""``reconcile match`` tested by its exact output at a fixed width, and by its exit codes."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "flip-and-yen"


#: The terminal summary of matching the case with its financing (at COLUMNS=100).
SUMMARY = [
    "Matched 6 fills from fills.csv",
    "  with 3 financing events from financing.csv",
    "Relief FIFO, commission at-close, rounding half-even",
    "closed lots   round trips   open lots   positions   unattributed",
    "────────────────────────────────────────────────────────────────",
    "          4             2           1           2              1",
    "Realized by currency",
    "currency   realized gross   commission   financing   realized net",
    "─────────────────────────────────────────────────────────────────",
    "JPY                 3,400          100          -3          3,297",
    "USD              1,687.50         4.50       -1.90       1,681.10",
    "Results in out/: closed_lots.csv, round_trips.csv, open_lots.csv, positions.csv, "
    "unattributed.csv,",
    "run.json",
    "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
    "professional",
    "prevail.",
]
#: The files a CSV match writes.
TABLE_FILES = [
    "closed_lots.csv",
    "open_lots.csv",
    "positions.csv",
    "round_trips.csv",
    "run.json",
    "unattributed.csv",
]


def run(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def lines(text: str) -> list[str]:
    return [line.rstrip() for line in text.splitlines()]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    for name in ("fills.csv", "financing.csv"):
        shutil.copy(CASE / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_match_prints_a_summary_and_writes_every_table(workdir: Path) -> None:
    result = run("match", "fills.csv", "--financing", "financing.csv", "--out", "out")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout) == SUMMARY
    assert sorted(p.name for p in (workdir / "out").iterdir()) == TABLE_FILES


def test_method_and_convention_are_named_in_the_summary(workdir: Path) -> None:
    result = run(
        "match",
        "fills.csv",
        "--method",
        "average",
        "--commission",
        "at-fill",
        "--out",
        "out",
        "--format",
        "parquet",
    )
    assert result.exit_code == 0, result.output
    assert "Relief average cost, commission at-fill, rounding half-even" in result.stdout
    assert (workdir / "out" / "positions.parquet").exists()


def test_bad_input_exits_2_with_the_problem_and_writes_nothing(workdir: Path) -> None:
    text = (
        (workdir / "fills.csv")
        .read_text()
        .replace("F2,ACC1,KSTL-DEC26,buy,5,", "F2,ACC1,KSTL-DEC26,hold,-5,")
    )
    (workdir / "fills.csv").write_text(text)
    result = run("match", "fills.csv", "--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: fills.csv: 2 problems found",
        "  fills.csv row 3, column quantity: expected a decimal > 0, found '-5'",
        "  fills.csv row 3, column side: expected buy or sell (also B or S, any case), found "
        "'hold'",
    ]
    assert not (workdir / "out").exists()


def test_missing_file_exits_2(workdir: Path) -> None:
    result = run("match", "nothing.csv")
    assert result.exit_code == 2
    assert lines(result.stderr) == ["error: nothing.csv: no such file"]


def test_unknown_method_exits_2(workdir: Path) -> None:
    result = run("match", "fills.csv", "--method", "random")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: method: expected one of fifo, lifo, hifo, average, found 'random'"
    ]


def test_unknown_time_zone_exits_2(workdir: Path) -> None:
    result = run("match", "fills.csv", "--timezone", "Mars/Olympus")
    assert result.exit_code == 2
    assert "expected an IANA name such as 'Europe/London', found 'Mars/Olympus'" in result.stderr


def test_dedupe_drops_exact_repeats_and_says_so(workdir: Path) -> None:
    text = (workdir / "fills.csv").read_text()
    (workdir / "fills.csv").write_text(text + text.splitlines()[1] + "\n")
    assert run("match", "fills.csv", "--out", "out").exit_code == 2
    result = run("match", "fills.csv", "--dedupe", "--out", "out")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout)[0] == "Matched 6 fills from fills.csv (1 exact repeats dropped)"


def test_python_dash_m_runs_the_same_app() -> None:
    import subprocess
    import sys

    result = subprocess.run(
        [sys.executable, "-m", "reconcile", "--version"], capture_output=True, text=True, check=True
    )
    assert result.stdout.startswith("reconcile ")


def test_the_command_asks_for_huge_pages_unless_the_user_chose(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    from reconcile.cli import tune_allocator

    monkeypatch.setenv("MIMALLOC_ALLOW_LARGE_OS_PAGES", "")  # so the teardown restores it
    monkeypatch.delenv("MIMALLOC_ALLOW_LARGE_OS_PAGES")
    tune_allocator()
    assert os.environ["MIMALLOC_ALLOW_LARGE_OS_PAGES"] == "1"
    monkeypatch.setenv("MIMALLOC_ALLOW_LARGE_OS_PAGES", "0")
    tune_allocator()
    assert os.environ["MIMALLOC_ALLOW_LARGE_OS_PAGES"] == "0"


def test_help_lists_the_commands() -> None:
    result = run("--help")
    assert result.exit_code == 0
    assert "match" in result.stdout


@pytest.mark.parametrize("engine", ["reference", "fast"])
def test_both_engines_write_the_same_files(workdir: Path, engine: str) -> None:
    # derived: the fast path must reproduce the reference engine byte for byte
    result = run(
        "match", "fills.csv", "--financing", "financing.csv", "--engine", engine, "--out", engine
    )
    assert result.exit_code == 0, result.output
    expected = CASE / "expected"
    for name in ("closed_lots.csv", "round_trips.csv", "open_lots.csv", "positions.csv"):
        assert (workdir / engine / name).read_bytes() == (expected / name).read_bytes(), name


def test_unknown_engine_exits_2(workdir: Path) -> None:
    result = run("match", "fills.csv", "--engine", "turbo")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: engine: expected one of auto, reference, fast, found 'turbo'"
    ]
