"""``reconcile report`` end to end: its output, its folder, and input that tries to be code."""

from __future__ import annotations

import csv
import re
import shutil
from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner, Result

from reconcile.cli import app

CASE = Path(__file__).parents[1] / "golden" / "flip-and-yen"
HOSTILE = {
    "script": "<script>alert(1)</script>",
    "formula": '=HYPERLINK("http://example.invalid","x")',
    "plus": "+1+1",
    "at": "@SUM(A1:A9)",
}


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


def test_report_writes_one_folder_and_says_where_to_look(workdir: Path) -> None:
    result = run("report", "fills.csv", "--financing", "financing.csv", "--out", "month-end")
    assert result.exit_code == 0, result.output
    assert lines(result.stdout) == [
        "Report of 2 round trips from 6 fills in fills.csv",
        "Open month-end/report.html",
        "Workbook month-end/report.xlsx; 13 tables and run.json beside them",
        "reconcile's output is not tax, accounting or legal advice. Local rules and a licensed "
        "professional",
        "prevail.",
    ]
    files = sorted(p.name for p in (workdir / "month-end").iterdir())
    assert files == sorted(
        [
            "report.html",
            "report.xlsx",
            "run.json",
            "statistics.csv",
            "statistics_by_month.csv",
            "statistics_by_instrument.csv",
            "statistics_by_account.csv",
            "statistics_by_side.csv",
            "statistics_by_weekday.csv",
            "extremes.csv",
            "cumulative_pnl.csv",
            "closed_lots.csv",
            "round_trips.csv",
            "open_lots.csv",
            "positions.csv",
            "unattributed.csv",
        ]
    )
    html = (workdir / "month-end" / "report.html").read_text()
    assert "<title>Trading report</title>" in html
    assert "reconcile&#39;s output is not tax, accounting or legal advice." in html


def test_the_tables_can_be_json_and_the_title_is_ours(workdir: Path) -> None:
    result = run(
        "report", "fills.csv", "--format", "json", "--title", "Desk <A> November", "--out", "r"
    )
    assert result.exit_code == 0, result.output
    assert (workdir / "r" / "statistics.json").exists()
    assert "<h1>Desk &lt;A&gt; November</h1>" in (workdir / "r" / "report.html").read_text()


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--format", "xlsx"], "error: format: expected one of csv, parquet, json, found 'xlsx'"),
        (["--title", " "], "error: title: expected some text, found an empty title"),
        (
            ["--zero-pnl", "none"],
            "error: zero-pnl: expected one of breakeven, win, loss, found 'none'",
        ),
    ],
)
def test_bad_options_exit_2_and_write_nothing(workdir: Path, args: list[str], message: str) -> None:
    result = run("report", "fills.csv", *args, "--out", "r")
    assert result.exit_code == 2
    assert lines(result.stderr) == [message]
    assert not (workdir / "r").exists()


def test_bad_input_exits_2_and_writes_nothing(workdir: Path) -> None:
    text = (workdir / "fills.csv").read_text().replace(",buy,5,101.00,", ",buy,-5,101.00,")
    (workdir / "fills.csv").write_text(text)
    result = run("report", "fills.csv", "--out", "r")
    assert result.exit_code == 2
    assert lines(result.stderr)[1] == (
        "  fills.csv row 3, column quantity: expected a decimal > 0, found '-5'"
    )
    assert not (workdir / "r").exists()


def _hostile_fills(path: Path) -> None:
    rows = ["fill_id,account,instrument,side,quantity,price,time,commission,currency"]
    for n, name in enumerate(HOSTILE.values()):
        quoted = '"' + name.replace('"', '""') + '"'
        rows += [
            f"b{n},{quoted},{quoted},buy,1,100,2026-11-0{n + 2}T14:00:00Z,1.00,USD",
            f"s{n},{quoted},{quoted},sell,1,10{n},2026-11-0{n + 2}T16:00:00Z,1.00,USD",
        ]
    path.write_text("\n".join(rows) + "\n")


def test_names_that_look_like_code_stay_inert_text_everywhere(workdir: Path) -> None:
    _hostile_fills(workdir / "hostile.csv")
    result = run("report", "hostile.csv", "--out", "r")
    assert result.exit_code == 0, result.output
    out = workdir / "r"

    html = (out / "report.html").read_text()
    assert "<script" not in html
    assert html.count("&lt;script&gt;alert(1)&lt;/script&gt;") >= 5  # tables and the chart
    assert re.findall(r"""(?:src|href)\s*=\s*["']?(?!#)[^"'\s>]+""", html) == []

    for table in ("round_trips", "statistics_by_instrument", "statistics_by_account", "extremes"):
        with (out / f"{table}.csv").open(newline="") as handle:
            cells = {cell for row in csv.reader(handle) for cell in row}
        for name in HOSTILE.values():
            expected = "'" + name if name[0] in "=+-@" else name
            assert expected in cells, (table, name)

    book = openpyxl.load_workbook(out / "report.xlsx")
    found = 0
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.value in HOSTILE.values():
                    found += 1
                    assert cell.data_type == "s", (sheet.title, cell.coordinate)
                    assert cell.quotePrefix == (str(cell.value)[0] in "=+-@")
    assert found >= 4 * 8  # each name in several sheets, as account and as instrument
