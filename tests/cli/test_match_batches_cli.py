"""``reconcile match --batch-rows`` tested by its exact output at a fixed width, and exit codes."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.cli.test_match_cli import CASE, lines, run


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    for name in ("fills.csv", "financing.csv"):
        shutil.copy(CASE / name, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_batched_match_prints_the_whole_runs_summary(workdir: Path) -> None:
    result = run(
        "match", "fills.csv", "--financing", "financing.csv", "--out", "out", "--batch-rows", "2"
    )
    assert result.exit_code == 0, result.output
    # the figures of test_match_cli's whole run of the same case
    assert lines(result.stdout) == [
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
    assert sorted(p.name for p in (workdir / "out").iterdir()) == [
        "closed_lots.csv",
        "open_lots.csv",
        "positions.csv",
        "round_trips.csv",
        "run.json",
        "unattributed.csv",
    ]


def test_batched_and_whole_runs_write_the_same_files(workdir: Path) -> None:
    for out, extra in (("whole", []), ("batched", ["--batch-rows", "1"])):
        result = run("match", "fills.csv", "--format", "parquet", "--out", out, *extra)
        assert result.exit_code == 0, result.output
    for path in sorted((workdir / "whole").iterdir()):
        assert (workdir / "batched" / path.name).read_bytes() == path.read_bytes(), path.name


def test_a_format_read_only_whole_is_refused_with_exit_2(workdir: Path) -> None:
    (workdir / "fills.jsonl").write_text('{"fill_id": "F1"}\n')
    result = run("match", "fills.jsonl", "--batch-rows", "10", "--out", "out")
    assert result.exit_code == 2
    assert lines(result.stderr) == [
        "error: --batch-rows: expected fills as csv, tsv or parquet, found jsonl (fills.jsonl); "
        "match this file without --batch-rows"
    ]
    assert not (workdir / "out").exists()


def test_a_profile_is_refused_with_exit_2(workdir: Path) -> None:
    (workdir / "p.toml").write_text("")
    result = run("match", "fills.csv", "--profile", "p.toml", "--batch-rows", "10")
    assert result.exit_code == 2
    assert "error: --batch-rows: reads fills in the canonical columns" in result.stderr


def test_batch_rows_below_one_is_a_usage_error(workdir: Path) -> None:
    result = run("match", "fills.csv", "--batch-rows", "0")
    assert result.exit_code == 2
    assert "--batch-rows" in result.output
