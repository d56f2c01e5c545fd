"""``reconcile stats`` tested by its exact output at a fixed width, and by its exit codes."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

# Derived: three USD round trips (+100, -40, +100 after 1.00 commission a fill) on a future of
# multiplier 1, and one JPY round trip of -500 (commission 0), all closing on different days.
FILLS = """fill_id,account,instrument,side,quantity,price,time,commission,currency
u1,DESK-A,ALPH,buy,10,50.00,2026-11-02T14:00:00Z,1.00,USD
u2,DESK-A,ALPH,sell,10,60.20,2026-11-02T16:00:00Z,1.00,USD
u3,DESK-A,ALPH,sell,5,40.00,2026-11-03T14:00:00Z,1.00,USD
u4,DESK-A,ALPH,buy,5,47.60,2026-11-04T14:00:00Z,1.00,USD
u5,DESK-A,ALPH,buy,20,10.00,2026-11-05T14:00:00Z,1.00,USD
u6,DESK-A,ALPH,sell,20,15.10,2026-11-05T16:00:00Z,1.00,USD
y1,DESK-B,KOMA,buy,100,1500,2026-11-04T01:00:00Z,0,JPY
y2,DESK-B,KOMA,sell,100,1495,2026-11-06T01:00:00Z,0,JPY
"""


def run(*args: str) -> Result:
    return CliRunner().invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def lines(text: str) -> list[str]:
    return [line.rstrip() for line in text.splitlines()]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    (tmp_path / "fills.csv").write_text(FILLS)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_stats_prints_one_column_per_currency(workdir: Path) -> None:
    result = run("stats", "fills.csv")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout) == [
        "Statistics of 4 round trips by currency",
        "Times in UTC; months and weekdays in UTC; a zero-P&L trade counts as a breakeven.",
        "",
        "                                               JPY                     USD",
        "──────────────────────────────────────────────────────────────────────────",
        "Trades                                           1                       3",
        "Wins / losses / breakevens               0 / 1 / 0               2 / 1 / 0",
        "Net P&L                                       -500                  160.00",
        "Gross profit                                     0                  200.00",
        "Gross loss                                    -500                  -40.00",
        "First trade opened             2026-11-04 01:00:00     2026-11-02 14:00:00",
        "Last trade closed              2026-11-06 01:00:00     2026-11-05 16:00:00",
        "Largest win                                    n/a     100.00 (trips 1, 3)",
        "Largest loss                         -500 (trip 4)         -40.00 (trip 2)",
        "Longest holding               2d 00:00:00 (trip 4)    1d 00:00:00 (trip 2)",
        "Shortest holding              2d 00:00:00 (trip 4)   02:00:00 (trips 1, 3)",
        "Average win                                    n/a                  100.00",
        "Average loss                                  -500                  -40.00",
        "Win rate                                     0.00%                  66.67%",
        "Payoff (avg win / avg loss)                    n/a                  2.5000",
        "Profit factor                               0.0000                  5.0000",
        "Expectancy per trade                          -500                   53.33",
        "Max drawdown from peak                         500                   40.00",
        "  peak                                           0                  100.00",
        "  peak reached                 2026-11-04 01:00:00     2026-11-02 16:00:00",
        "  trough                       2026-11-06 01:00:00     2026-11-04 14:00:00",
        "  recovered                          not recovered     2026-11-05 16:00:00",
        "Drawdown from zero                             500                    0.00",
        "  last at zero                 2026-11-04 01:00:00                     n/a",
        "  trough                       2026-11-06 01:00:00                     n/a",
        "  recovered                          not recovered                     n/a",
        "Longest winning streak                           0                       1",
        "Longest losing streak                            1                       1",
        "Gross P&L before costs                        -500                  166.00",
        "Commission                                       0                    6.00",
        "Financing                                        0                    0.00",
        "Fee drag (costs / gross)                     0.00%                   3.61%",
        "  commission                                 0.00%                   3.61%",
        "  financing                                  0.00%                   0.00%",
        "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
        "professional",
        "prevail.",
    ]


def test_stats_by_key_as_csv_lists_every_group(workdir: Path) -> None:
    result = run("stats", "fills.csv", "--by", "account", "--by", "side", "--format", "csv")
    assert result.exit_code == 0, result.output
    header, *rows = lines(result.stdout)
    assert header.startswith('"account","side","currency","trades","wins","losses"')
    assert [row.split(",")[:4] for row in rows] == [
        ['"DESK-A"', '"long"', '"USD"', "2"],
        ['"DESK-A"', '"short"', '"USD"', "1"],
        ['"DESK-B"', '"long"', '"JPY"', "1"],
    ]


def test_stats_as_json_carries_settings_extremes_and_the_caution(workdir: Path) -> None:
    result = run("stats", "fills.csv", "--by", "month", "--format", "json", "--zero-pnl", "loss")
    assert result.exit_code == 0, result.output
    document = json.loads(result.stdout)
    assert document["settings"]["zero_pnl"] == "loss"
    assert [row["month"] for row in document["statistics"]] == ["2026-11", "2026-11"]
    usd = document["statistics"][1]
    assert (usd["net_pnl"], usd["largest_win_trades"], usd["profit_factor"]) == (
        "160.00",
        "1, 3",
        "5",
    )
    assert usd["max_drawdown_recovery"] == "2026-11-05T16:00:00+00:00"
    assert document["statistics"][0]["max_drawdown_recovery"] is None
    assert [e["trade"] for e in document["extremes"] if e["measure"] == "largest win"] == ["1", "3"]
    assert document["caution"].startswith("reconcile's output is not tax")


def test_stats_out_writes_the_file_and_prints_nothing(workdir: Path) -> None:
    result = run("stats", "fills.csv", "--format", "csv", "--out", "stats.csv")
    assert result.exit_code == 0, result.output
    assert result.stdout == ""
    written = (workdir / "stats.csv").read_text()
    assert written.splitlines()[0].startswith('"currency","trades"')
    table = run("stats", "fills.csv", "--out", "stats.txt")
    assert table.exit_code == 0
    assert (workdir / "stats.txt").read_text().startswith("Statistics of 4 round trips")


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (
            ["--by", "desk"],
            "error: by: expected one of account, instrument, month, side, weekday, found 'desk'",
        ),
        (["--by", "month,month"], "error: by: expected each key at most once, found month twice"),
        (["--format", "xml"], "error: format: expected one of table, csv, json, found 'xml'"),
        (
            ["--zero-pnl", "skip"],
            "error: zero-pnl: expected one of breakeven, win, loss, found 'skip'",
        ),
        (
            ["--over", "fills"],
            "error: over: expected one of round-trips, closed-lots, found 'fills'",
        ),
    ],
)
def test_bad_options_exit_2_before_reading_anything(
    workdir: Path, args: list[str], message: str
) -> None:
    result = run("stats", "missing.csv", *args, "--out", "stats.csv")
    assert result.exit_code == 2
    assert lines(result.stderr) == [message]
    assert not (workdir / "stats.csv").exists()


def test_out_naming_a_directory_exits_2(workdir: Path) -> None:
    (workdir / "folder").mkdir()
    result = run("stats", "fills.csv", "--out", "folder")
    assert result.exit_code == 2
    assert lines(result.stderr) == ["error: --out folder: expected a file name, found a directory"]
