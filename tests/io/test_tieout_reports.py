"""The tie-out reports: exact JSON, a workbook where no input runs as a formula, a safe page."""

from __future__ import annotations

import json
import re
from pathlib import Path

import openpyxl
import pytest

import reconcile
from reconcile.io.writers.tieout import write_tieout
from reconcile.notice import CAUTION
from reconcile.timezones import tz_database_version
from tests.builders import fills
from tests.statements import statement

TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
HOSTILE = [
    "<script>alert(1)</script>",
    '=HYPERLINK("http://example.invalid","x")',
    "+1+1",
    "@SUM(A1:A9)",
    "-2+3",
]


@pytest.fixture
def result() -> reconcile.TieOut:
    trades = fills(
        [
            ("b1", "buy", 10, "100.00", "2026-11-02", "1.00"),
            ("s1", "sell", 10, "104.25", "2026-11-03", "1.00"),
            ("y1", "buy", 3, "5.00", "2026-11-04"),
        ],
        instrument="KSTL",
    )
    lines = [
        {
            "account": "A",
            "instrument": "KSTL",
            "currency": "USD",
            "realized_pnl": "40.50",
            "open_quantity": "0",
        },
        *(
            {"account": "A", "instrument": name, "currency": "USD", "realized_pnl": "1"}
            for name in HOSTILE
        ),
    ]
    return reconcile.tie_out(trades, statement(lines), "2026-11")


def _write(result: reconcile.TieOut, tmp_path: Path) -> Path:
    manifest = {
        "command": "tie-out",
        "reconcile_version": "test",
        "period": {"describe": result.period.describe()},
        "tz_database": tz_database_version(),
        "method": result.method,
        "commission": result.commission,
        "rounding": result.rounding,
        "base": result.base,
        "tolerance_text": "0 minor units",
        "inputs": [{"source": "fills.csv", "accepted": 3, "kind": "fills"}],
        "left_out": {},
        "caution": CAUTION,
    }
    write_tieout(result, tmp_path, [], manifest)
    return tmp_path


def test_breaks_json_has_every_line_with_exact_amounts_and_its_causes(
    result: reconcile.TieOut, tmp_path: Path
) -> None:
    document = json.loads((_write(result, tmp_path) / "breaks.json").read_text())
    assert document["tz_database"] == tz_database_version()
    assert len(document["lines"]) == len(result.lines)
    kstl = next(
        x for x in document["lines"] if x["instrument"] == "KSTL" and x["measure"] == "realized_pnl"
    )
    # Derived: (104.25 - 100.00) x 10 = 42.50 realized; the statement says 40.50.
    assert (kstl["ours"], kstl["theirs"], kstl["difference"]) == ("42.50", "40.50", "2.00")
    assert kstl["status"] == "break"
    assert kstl["statement_rows"] == [2]
    first = kstl["causes"][0]
    assert set(first) == {"rank", "kind", "fill_ids", "fills", "amount", "residual", "explanation"}
    assert first["kind"] == "basis"  # 2.00 is exactly the commission at close
    assert document["caution"] == CAUTION


def test_the_workbook_keeps_numbers_numbers_and_input_text_inert(
    result: reconcile.TieOut, tmp_path: Path
) -> None:
    book = openpyxl.load_workbook(_write(result, tmp_path) / "tieout.xlsx")
    assert book.sheetnames == ["About", "summary", "compared lines", "breaks", "fills involved"]
    lines = book["compared lines"]
    header = [c.value for c in lines[1]]
    ours = header.index("ours") + 1
    assert all(
        isinstance(lines.cell(row, ours).value, int | float) for row in range(2, lines.max_row + 1)
    )
    seen = set()
    for sheet in book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.data_type == "s" and str(cell.value).startswith(TRIGGERS):
                    assert cell.quotePrefix, (sheet.title, cell.coordinate, cell.value)
                    seen.add(cell.value)
                assert cell.data_type != "f"  # nothing is ever a formula
    assert {h for h in HOSTILE if h.startswith(TRIGGERS)} <= seen


def test_the_page_escapes_input_and_names_the_time_zone_database(
    result: reconcile.TieOut, tmp_path: Path
) -> None:
    html = (_write(result, tmp_path) / "tieout.html").read_text()
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert f"Time-zone database {tz_database_version()}" in html
    assert CAUTION.replace("'", "&#39;") in html
    assert re.findall(r"""(?:src|href)\s*=\s*["']?(?!#)[^"'\s>]+""", html) == []
    assert "42.50" in html  # a money line in its minor unit


def test_only_the_reports_asked_for_are_written(result: reconcile.TieOut, tmp_path: Path) -> None:
    manifest_dir = tmp_path / "csv"
    manifest_dir.mkdir()
    document = {"tz_database": "x", "caution": CAUTION}
    written = write_tieout(result, manifest_dir, ["csv"], document)
    assert sorted(p.name for p in written) == [
        "causes.csv",
        "compared_lines.csv",
        "fills_involved.csv",
        "run.json",
    ]
    text = (manifest_dir / "compared_lines.csv").read_text()
    assert "\"'=HYPERLINK(" in text  # the CSV writer's apostrophe: inert in a spreadsheet
