"""The workbook and the HTML page: numbers stay numbers, input stays inert text."""

from __future__ import annotations

import re
from decimal import Decimal
from pathlib import Path

import openpyxl
import pandas as pd
import pyarrow as pa

import reconcile
from reconcile.io.render.html import Fact, Figure, Page, Section, Table, render_page
from reconcile.io.writers.xlsx import write_workbook
from reconcile.notice import CAUTION
from tests.builders import concat, fills

HOSTILE = [
    "<script>alert(1)</script>",
    '=HYPERLINK("http://example.invalid","x")',
    "+1+1",
    "@SUM(A1:A9)",
    "-2+3",
]  # a leading tab or space cannot survive: text values are trimmed on input


def _book() -> reconcile.Book:
    frames = [
        fills(
            [
                (f"b{n}", "buy", 2, "10.25", "2026-11-02T10:00:00Z", "1.00"),
                (f"s{n}", "sell", 2, "11.50", "2026-11-03T10:00:00Z", "1.00"),
            ],
            instrument=name,
            account=f"ACC-{n}",
        )
        for n, name in enumerate(HOSTILE)
    ]
    frames.append(
        fills(
            [("y1", "buy", 100, "1234", "2026-11-02"), ("y2", "sell", 100, "1250", "2026-11-04")],
            instrument="NORR",
            currency="JPY",
        )
    )
    return reconcile.match(concat(*frames))


def test_workbook_numbers_are_numbers_in_minor_units_and_text_is_inert(tmp_path: Path) -> None:
    book = _book()
    path = tmp_path / "book.xlsx"
    write_workbook(
        path,
        {"closed_lots": book.closed_lots, "positions": book.positions},
        title="Test",
        about=[CAUTION],
    )
    sheets = openpyxl.load_workbook(path)
    assert sheets.sheetnames == ["About", "closed lots", "positions"]
    lots = sheets["closed lots"]
    header = [c.value for c in lots[1]]
    assert lots.freeze_panes == "A2"
    gross = header.index("gross_pnl") + 1
    instrument = header.index("instrument") + 1
    rows = {lots.cell(row, instrument).value: row for row in range(2, lots.max_row + 1)}
    usd, yen = lots.cell(rows["+1+1"], gross), lots.cell(rows["NORR"], gross)
    assert (usd.value, usd.number_format) == (2.5, "#,##0.00")
    assert (yen.value, yen.number_format) == (1600, "#,##0")
    names = [lots.cell(rows[name], instrument) for name in HOSTILE]
    assert sorted(c.value for c in names) == sorted(HOSTILE)
    for cell in names:
        assert cell.data_type == "s"  # a string, never a formula
        if cell.value.startswith(("=", "+", "-", "@", "\t")):
            assert cell.quotePrefix


def test_workbook_bytes_do_not_depend_on_when_it_was_written(tmp_path: Path) -> None:
    book = _book()
    write_workbook(tmp_path / "a.xlsx", {"positions": book.positions}, title="T")
    write_workbook(tmp_path / "b.xlsx", {"positions": book.positions}, title="T")
    assert (tmp_path / "a.xlsx").read_bytes() == (tmp_path / "b.xlsx").read_bytes()


def test_a_value_beyond_double_precision_is_written_as_exact_text(tmp_path: Path) -> None:
    value = pa.array([Decimal("1234567890.123456789")], pa.decimal128(19, 9))
    frame = pd.DataFrame({"cost_basis": pd.Series(value, dtype=pd.ArrowDtype(value.type))})
    write_workbook(tmp_path / "w.xlsx", {"t": frame}, title="T")
    cell = openpyxl.load_workbook(tmp_path / "w.xlsx")["t"].cell(2, 1)
    assert cell.value == "1,234,567,890.123456789"


def test_page_escapes_everything_from_input_and_needs_no_network() -> None:
    book = _book()
    svg = '<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><rect/></svg>'
    page = Page(
        "Month end",
        "Larkmoor Capital (test)",
        [
            Section(
                "Positions",
                "positions",
                paragraphs=["Instrument <b>names</b> are text."],
                facts=[Fact("Breaks", "0", "good")],
                figures=[Figure("A chart", svg, "demo")],
                tables=[Table("Positions", book.positions)],
            )
        ],
    )
    html = render_page(page)
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "&lt;b&gt;names&lt;/b&gt;" in html
    assert svg in html  # our own chart markup is inlined
    assert CAUTION.replace("'", "&#39;") in html
    external = re.findall(r"""(?:src|href)\s*=\s*["']?(?!#)[^"'\s>]+""", html)
    assert external == []
    assert "1,600" in html  # yen P&L grouped, no decimals
