"""``reconcile check`` and ``match --rejects`` tested by their exact output at a fixed width."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "flip-and-yen"
SAMPLES = Path(__file__).parents[2] / "sample_data" / "profiles"
CAUTION = [
    "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
    "professional",
    "prevail.",
]


def run(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def lines(text: str) -> list[str]:
    return [line.rstrip() for line in text.splitlines()]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    text = (CASE / "fills.csv").read_text()
    text = text.replace("F2,ACC1,KSTL-DEC26,buy,5,", "F2,ACC1,KSTL-DEC26,hold,-5,")
    text = text.replace("F6,ACC2,NORR,buy,100,1200,", "F6,ACC2,NORR,buy,100,12x0,")
    (tmp_path / "fills.csv").write_text(text)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_check_counts_rows_lists_problems_and_exits_2(workdir: Path) -> None:
    result = run("check", "fills.csv", "--rejects", "rejects.csv")
    assert result.exit_code == 2
    assert lines(result.stdout) == [
        "Checked fills.csv",
        "  6 rows read = 4 accepted + 2 rejected",
        "Rejected by reason",
        "reason          rows",
        "────────────────────",
        "not a number       1",
        "out of range       1",
        "unknown value      1",
        "Problems:",
        "  fills.csv row 3, column quantity: expected a decimal > 0, found '-5'",
        "  fills.csv row 3, column side: expected buy or sell (also B or S, any case), "
        "found 'hold'",
        "  fills.csv row 7, column price: expected a decimal number (finite, plain digits), found "
        "'12x0'",
        "Rejected rows in rejects.csv",
        *CAUTION,
    ]
    rejected = (workdir / "rejects.csv").read_text().splitlines()
    assert rejected[0].startswith('"source","source_row","reason","problems","fill_id",')
    assert rejected[1].startswith('"fills.csv",3,"out of range; unknown value",')
    assert '"F6","ACC2","NORR","buy","100","12x0"' in rejected[2]


def test_check_of_a_clean_file_exits_0(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    shutil.copy(CASE / "fills.csv", tmp_path / "fills.csv")
    monkeypatch.chdir(tmp_path)
    result = run("check", "fills.csv")
    assert result.exit_code == 0
    assert lines(result.stdout) == [
        "Checked fills.csv",
        "  6 rows read = 6 accepted + 0 rejected",
        *CAUTION,
    ]


def test_match_with_rejects_goes_on_and_prints_the_equation(workdir: Path) -> None:
    result = run("match", "fills.csv", "--rejects", "rejects.csv", "--out", "out")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout)[:2] == [
        "Matched 4 fills from fills.csv",
        "    6 rows read = 4 accepted + 2 rejected",
    ]
    assert "Rejected rows in rejects.csv" in lines(result.stdout)
    manifest = json.loads((workdir / "out" / "run.json").read_text())
    assert manifest["inputs"][0]["rejected"] == 2
    assert (workdir / "rejects.csv").exists()


def test_match_without_rejects_still_fails_on_any_bad_row(workdir: Path) -> None:
    result = run("match", "fills.csv", "--out", "out")
    assert result.exit_code == 2
    assert not (workdir / "out").exists()


def test_check_of_the_sample_fix_log_counts_every_line(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # FIX 4.4 drop copy: 2 fills stand, 1 corrected (its original superseded), 1 busted (the
    # fill superseded, the cancel counted), 1 resend, a logon and a heartbeat skipped.
    monkeypatch.chdir(SAMPLES)
    result = run("check", "kestrel-dropcopy.fix", "--profile", "kestrel.toml")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout) == [
        "Checked kestrel-dropcopy.fix",
        "  9 rows read = 3 accepted + 0 rejected + 2 superseded + 1 cancel messages + 1 resent + "
        "2 skipped",
        "  skipped: MsgType A 1, MsgType 0 1",
        *CAUTION,
    ]


def test_fix_lenient_warns_on_stderr(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    text = (SAMPLES / "kestrel-dropcopy.fix").read_text().replace("|10=175|", "|10=176|")
    (tmp_path / "log.fix").write_text(text)
    monkeypatch.chdir(tmp_path)
    assert run("check", "log.fix").exit_code == 2
    result = run("check", "log.fix", "--fix-lenient")
    assert result.exit_code == 0
    assert lines(result.stderr) == [
        "warning: log.fix row 2, column 10 (CheckSum): expected 175, found '176'; kept "
        "(--fix-lenient)"
    ]


def test_help_lists_check() -> None:
    assert "check" in run("--help").stdout


def test_an_unknown_kind_is_refused_before_reading(workdir: Path) -> None:
    result = run("check", "missing.csv", "--kind", "statement")
    assert result.exit_code == 2
    assert result.stderr == "error: kind: expected one of fills, financing, found 'statement'\n"


def test_a_semicolon_header_gets_a_hint(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(tmp_path)
    Path("semi.csv").write_text("fill_id;account;instrument\nF1;A;X\n")
    result = run("check", "semi.csv")
    assert result.exit_code == 2
    assert result.stderr.endswith(
        "the header has: fill_id;account;instrument (the header looks ';'-separated: "
        'declare delimiter = ";" under [source] in a profile)\n'
    )


def test_a_file_with_no_usable_row_is_an_error_even_with_rejects(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    Path("bad.csv").write_text(
        "fill_id,account,instrument,side,quantity,price,time,currency\n"
        "F1,A,X,hold,1,2,2026-11-02T10:00:00Z,USD\n"
        "F2,A,X,buy,-1,2,2026-11-02T10:00:00Z,USD\n"
    )
    result = run("match", "bad.csv", "--rejects", "rejects.csv", "--out", "out")
    assert result.exit_code == 2
    assert result.stderr == (
        "error: bad.csv: expected at least one usable row of fills, found none (2 rows read: 2 "
        "rejected); `reconcile check` lists the problems\n"
    )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.csv"]


def test_a_log_that_holds_no_fix_message_is_not_a_quiet_day(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    Path("fills.log").write_text("fill_id,account\nF1,A\n")
    result = run("check", "fills.log")
    assert result.exit_code == 2
    assert result.stderr == (
        "error: fills.log: expected at least one usable row of fills, found none (2 rows read: "
        "2 not a FIX message)\n"
    )


def test_a_header_only_file_is_a_day_without_trades(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    Path("fills.csv").write_text("fill_id,account,instrument,side,quantity,price,time,currency\n")
    assert run("check", "fills.csv").exit_code == 0
    assert run("match", "fills.csv", "--out", "out").exit_code == 0


@pytest.mark.parametrize(
    ("args", "shown"),
    [
        (["match", "fills.csv", "--rejects", "fills.csv"], "--rejects fills.csv"),
        (["stats", "fills.csv", "--format", "csv", "--out", "fills.csv"], "--out fills.csv"),
        (["match", "closed_lots.csv", "--out", "."], "closed_lots.csv (to be written)"),
    ],
    ids=["rejects", "stats out", "a table over its input"],
)
def test_an_output_never_replaces_an_input(
    args: list[str], shown: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    text = (CASE / "fills.csv").read_text()
    for name in ("fills.csv", "closed_lots.csv"):
        Path(name).write_text(text)
    result = run(*args)
    assert result.exit_code == 2, result.output
    assert result.stderr == (
        f"error: {shown}: expected a path that is not one of this run's inputs, found the input "
        "itself; nothing was written\n"
    )
    assert sorted(p.name for p in tmp_path.iterdir()) == ["closed_lots.csv", "fills.csv"]
    assert Path("fills.csv").read_text() == text
    assert Path("closed_lots.csv").read_text() == text
