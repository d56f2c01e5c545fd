"""The report: what the page holds, how other work adds to it, and how its folder is written."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

import reconcile
from reconcile.io import reporting
from reconcile.io.render import report as report_module
from reconcile.io.render.html import Fact, Section, Table, render_page
from reconcile.io.render.report import ReportPart, build_report
from reconcile.io.session import Inputs
from reconcile.io.writers import report as report_writer
from reconcile.io.writers.report import write_report
from tests.builders import concat, fills, financing

CHARTS = ["cumulative-pnl", "pnl-by-month", "fees-by-month", "pnl-by-instrument", "holding-time"]


def _book() -> reconcile.Book:
    history = concat(
        fills(
            [
                ("b1", "buy", 2, "100", "2026-10-05T14:00:00Z", "1.00"),
                ("s1", "sell", 2, "104", "2026-10-06T14:00:00Z", "1.00"),
                ("b2", "buy", 1, "100", "2026-11-02T14:00:00Z", "1.00"),
                ("s2", "sell", 1, "97", "2026-11-03T14:00:00Z", "1.00"),
                ("b3", "buy", 1, "100", "2026-11-20T14:00:00Z", "1.00"),
            ]
        ),
        fills(
            [("y1", "sell", 10, "1500", "2026-10-05"), ("y2", "buy", 10, "1480", "2026-10-09")],
            instrument="KOMA",
            account="B",
            currency="JPY",
        ),
    )
    late = financing([("e1", "2026-11-10", "-0.25", "fee")])
    return reconcile.match(history, late)


def _report(book: reconcile.Book, parts: tuple[ReportPart, ...] = ()) -> report_module.Report:
    request = reporting.report_request(timezone="Europe/London")
    statistics = reporting.report_statistics(book, request.statistics)
    return build_report(book, statistics, parts=parts, provenance=["made in a test"])


def test_the_page_has_every_section_and_chart_in_order() -> None:
    page = _report(_book()).page
    assert [s.heading for s in page.sections] == [
        "Overview",
        "Cumulative P&L and drawdown",
        "Statistics",
        "By month",
        "Costs",
        "By instrument",
        "By account",
        "By side",
        "By weekday",
        "Holding time",
        "Extremes",
        "Open positions",
        "Round trips",
        "Unattributed financing",
        "How these figures were made",
    ]
    assert [f.name for s in page.sections for f in s.figures] == CHARTS
    assert page.subtitle == (
        "2026-10-05 to 2026-11-03 (UTC) · relief FIFO · commission at-close · months in "
        "Europe/London"
    )
    html = render_page(page)
    for name in CHARTS:
        assert f'<figure data-chart="{name}"><svg role="img"' in html


def test_the_overview_shows_each_currency_on_its_own() -> None:
    overview = _report(_book()).page.sections[0]
    assert [(f.label, f.value) for f in overview.facts] == [
        ("Round trips", "3"),
        ("Accounts", "2"),
        ("Instruments", "2"),
        ("Positions still open", "1"),
        ("Currencies", "JPY, USD"),
    ]
    table = overview.tables[0].frame
    # Derived: USD +8 - 2 and -3 - 2 -> net 1.00; JPY short 10 @ 1500 covered @ 1480 -> +200.
    assert table[["currency", "trades", "net P&L"]].values.tolist() == [
        ["JPY", "1", "200"],
        ["USD", "2", "1.00"],
    ]


def test_the_report_tables_are_the_statistics_then_the_book() -> None:
    tables = _report(_book()).tables
    assert list(tables) == [
        "statistics",
        "statistics_by_month",
        "statistics_by_instrument",
        "statistics_by_account",
        "statistics_by_side",
        "statistics_by_weekday",
        "extremes",
        "cumulative_pnl",
        "closed_lots",
        "round_trips",
        "open_lots",
        "positions",
        "unattributed",
    ]


def test_parts_handed_in_go_after_the_overview_with_their_tables_and_facts() -> None:
    breaks = pd.DataFrame({"measure": ["realized net"], "status": ["break"]}, dtype="str")
    part = ReportPart(
        sections=[
            Section("Statement tie-out", "tie-out", ["One break."], tables=[Table("B", breaks)])
        ],
        tables={"breaks": breaks},
        facts=[Fact("Breaks", "1", "bad")],
    )
    report = _report(_book(), (part,))
    headings = [s.heading for s in report.page.sections]
    assert headings[:3] == ["Overview", "Statement tie-out", "Cumulative P&L and drawdown"]
    assert report.page.sections[0].facts[-1] == Fact("Breaks", "1", "bad")
    assert list(report.tables).index("breaks") == list(report.tables).index("closed_lots") - 1


def test_a_book_with_nothing_closed_still_makes_a_page() -> None:
    book = reconcile.match(fills([("b", "buy", 1, "100", "2026-10-05")]))
    page = _report(book).page
    assert [s.heading for s in page.sections] == [
        "Overview",
        "Open positions",
        "Round trips",
        "How these figures were made",
    ]
    assert "No round trip has closed yet" in page.sections[0].paragraphs[-1]
    render_page(page)


def test_the_folder_holds_page_workbook_tables_and_manifest(tmp_path: Path) -> None:
    report = _report(_book())
    written = write_report(report, tmp_path / "out", "csv", {"command": "report"})
    names = [p.name for p in written]
    assert names[:2] == ["report.html", "report.xlsx"]
    assert names[2:] == [f"{name}.csv" for name in report.tables] + ["run.json"]
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == sorted(names)
    assert json.loads((tmp_path / "out" / "run.json").read_text()) == {"command": "report"}
    sheets = openpyxl.load_workbook(tmp_path / "out" / "report.xlsx").sheetnames
    assert sheets[:3] == ["About", "statistics", "statistics by month"]
    assert len(sheets) == 1 + len(report.tables)


def test_a_failure_while_writing_leaves_nothing_behind(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    def broken(*_args: object, **_kwargs: object) -> None:
        raise RuntimeError("disk trouble")

    monkeypatch.setattr(report_writer, "write_workbook", broken)
    with pytest.raises(RuntimeError):
        write_report(_report(_book()), tmp_path, "csv")
    assert list(tmp_path.iterdir()) == []


def test_the_manifest_says_how_the_statistics_were_made(tmp_path: Path) -> None:
    book = _book()
    request = reporting.report_request(zero_pnl="loss", timezone="Asia/Tokyo")
    inputs = Inputs(fills=pd.DataFrame(), timezone="Asia/Tokyo")
    report = reporting.make_report(book, inputs, request)
    reporting.write_report_folder(report, book, inputs, request, tmp_path)
    manifest = json.loads((tmp_path / "run.json").read_text())
    assert manifest["command"] == "report"
    assert manifest["statistics"] == {
        "over": "round-trips",
        "zero_pnl": "loss",
        "timezone": "Asia/Tokyo",
    }
    assert manifest["tables"]["round_trips"] == 3


def test_workbook_statistics_are_numbers_with_their_places(tmp_path: Path) -> None:
    write_report(_report(_book()), tmp_path, "csv")
    sheet = openpyxl.load_workbook(tmp_path / "report.xlsx")["statistics"]
    header = [c.value for c in sheet[1]]
    rows = {sheet.cell(r, 1).value: r for r in range(2, sheet.max_row + 1)}

    def cell(currency: str, column: str) -> tuple[object, str]:
        found = sheet.cell(rows[currency], header.index(column) + 1)
        return found.value, found.number_format

    assert cell("USD", "net_pnl") == (1.0, "#,##0.00")
    assert cell("JPY", "net_pnl") == (200, "#,##0")
    assert cell("USD", "win_rate") == (0.5, "#,##0.0000")  # 1 win of 2, four places always
    assert cell("USD", "largest_win_trades") == ("1", "General")
    assert sheet.freeze_panes == "A2"
