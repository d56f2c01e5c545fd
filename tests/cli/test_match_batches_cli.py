"""``reconcile match --batch-rows`` tested by its exact output at a fixed width, and exit codes."""

from __future__ import annotations

from pathlib import Path

from tests.cli.test_match_cli import SUMMARY, TABLE_FILES, lines, run, workdir

__all__ = ["workdir"]  # the whole run's fixture, so both runs start from the same folder


def test_batched_match_prints_the_whole_runs_summary(workdir: Path) -> None:
    result = run(
        "match", "fills.csv", "--financing", "financing.csv", "--out", "out", "--batch-rows", "2"
    )
    assert result.exit_code == 0, result.output
    assert lines(result.stdout) == SUMMARY  # the whole run's summary of the same case
    assert sorted(p.name for p in (workdir / "out").iterdir()) == TABLE_FILES


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
