"""Writers: exact text, every format, and all-or-nothing publication."""

from __future__ import annotations

import errno
import json
import os
from decimal import Decimal
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import reconcile
from reconcile.errors import OutputError
from reconcile.io.writers import tables as writer_tables
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import decimal_text, write_tables
from tests.builders import concat, fills

BOOK_FILLS = concat(
    fills(
        [
            ("b1", "buy", 3, "101.5", "2026-11-02T10:00:00Z", "1.10"),
            ("s1", "sell", 3, "102.25", "2026-11-03T10:00:00Z", "1.10"),
        ]
    ),
    fills(
        [
            ("y1", "sell", 100, "1234", "2026-11-02T01:00:00Z", "150"),
            ("y2", "buy", 100, "1200", "2026-11-04T01:00:00Z", "150"),
        ],
        instrument="Y",
        currency="JPY",
    ),
    fills(
        [("k1", "buy", 2, "1.2345", "2026-11-02T08:00:00Z", "0.125")],
        instrument="K",
        currency="BHD",
    ),
)


@pytest.mark.parametrize(
    ("value", "currency", "text"),
    [
        ("12.3", "USD", "12.30"),
        ("12.345", "USD", "12.345"),
        ("100.000", "JPY", "100"),
        ("0.10", "BHD", "0.100"),
        ("-0.00", "USD", "0.00"),
        ("8.9290000000", None, "8.929"),
        ("1E+2", None, "100"),
    ],
)
def test_decimal_text(value: str, currency: str | None, text: str) -> None:
    assert decimal_text(Decimal(value), currency) == text


def test_csv_amounts_use_each_currency_minor_unit(tmp_path: Path) -> None:
    book = reconcile.match(BOOK_FILLS)
    write_tables(book.tables(), tmp_path, "csv")
    positions = pd.read_csv(tmp_path / "positions.csv", dtype=str)
    assert positions[["currency", "realized_gross", "commission"]].values.tolist() == [
        ["BHD", "0.000", "0.000"],
        ["USD", "2.25", "2.20"],
        ["JPY", "3400", "300"],
    ]


def test_parquet_keeps_exact_decimals(tmp_path: Path) -> None:
    book = reconcile.match(BOOK_FILLS)
    write_tables(book.tables(), tmp_path, "parquet")
    table = pq.read_table(tmp_path / "closed_lots.parquet")
    assert table.column("gross_pnl").to_pylist() == [Decimal("2.25"), Decimal("3400.00")]
    assert str(table.schema.field("close_time").type) == "timestamp[ns, tz=UTC]"


def test_json_tables_hold_exact_text(tmp_path: Path) -> None:
    book = reconcile.match(BOOK_FILLS)
    write_tables(book.tables(), tmp_path, "json")
    trips = json.loads((tmp_path / "round_trips.json").read_text())
    assert [t["net_pnl"] for t in trips] == ["0.05", "3100"]
    assert trips[0]["holding_time"] == "P1DT0H0M0S"


def test_a_failed_write_leaves_nothing_behind(tmp_path: Path) -> None:
    (tmp_path / "positions.parquet").write_text("earlier results\n")
    tables = {"positions": pd.DataFrame({"a": ["1"]}), "broken": pd.DataFrame({"a": [object()]})}
    with pytest.raises(Exception):  # noqa: B017, PT011 - whatever the writer raised
        write_tables(tables, tmp_path, "parquet")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["positions.parquet"]
    assert (tmp_path / "positions.parquet").read_text() == "earlier results\n"


def test_a_disk_error_is_an_output_error_naming_the_file(tmp_path: Path) -> None:
    def whole(path: Path) -> None:
        path.write_text("whole\n")

    def full_disk(path: Path) -> None:
        path.write_text("half")
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    def write_both() -> None:
        with file_set(tmp_path) as files:
            files.add("positions.csv", whole)
            files.add("closed_lots.csv", full_disk)

    with pytest.raises(OutputError) as raised:
        write_both()
    assert str(raised.value) == (
        f"{tmp_path / 'closed_lots.csv'}: cannot write results: {os.strerror(errno.ENOSPC)}"
    )
    assert list(tmp_path.iterdir()) == []


def test_an_unknown_format(tmp_path: Path) -> None:
    with pytest.raises(OutputError, match="expected one of csv, parquet, json"):
        write_tables({}, tmp_path, "xml")


def test_csv_text_that_a_spreadsheet_would_run_is_inert_and_reads_back(tmp_path: Path) -> None:
    names = ['=HYPERLINK("http://x")', "+1+1", "-2", "@SUM(A1)", "plain"]
    rows = [(f"b{n}", "buy", 1, "10", f"2026-11-0{n + 2}") for n in range(len(names))]
    frame = pd.concat(
        [fills(rows[n : n + 1], instrument=name) for n, name in enumerate(names)], ignore_index=True
    )
    book = reconcile.match(frame)
    write_tables(book.tables(), tmp_path, "csv")
    text = (tmp_path / "open_lots.csv").read_text()
    assert '"\'=HYPERLINK(""http://x"")"' in text
    assert '"\'+1+1"' in text
    assert '"\'@SUM(A1)"' in text
    assert '"\'-2"' in text
    carried = reconcile.read_opening(tmp_path / "open_lots.csv")
    assert sorted(carried["instrument"]) == sorted(names)


def test_written_files_get_the_usual_permissions(tmp_path: Path) -> None:
    import os

    write_tables({"t": pd.DataFrame({"a": ["1"]})}, tmp_path, "csv")
    umask = os.umask(0)
    os.umask(umask)
    assert (tmp_path / "t.csv").stat().st_mode & 0o777 == 0o666 & ~umask


@pytest.mark.parametrize("rows", [0, 1, 7, 9])
def test_an_arrow_table_written_a_row_group_at_a_time_is_the_whole_table_written(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, rows: int
) -> None:
    monkeypatch.setattr(writer_tables, "ROW_GROUP_ROWS", 3)
    table = pa.table(
        {
            "account": pa.array([f"A{i % 2}" for i in range(rows)], pa.string()),
            "fill_id": pa.array([f"F{i}" for i in range(rows)], pa.string()),
            "quantity": pa.array([Decimal(i) / 4 for i in range(rows)], pa.decimal128(6, 2)),
        }
    )
    writer_tables._write_arrow_parquet(table, tmp_path / "sliced.parquet")
    whole = writer_tables._like_from_pandas(table)
    options = writer_tables.parquet_options(whole)
    pq.write_table(whole, tmp_path / "whole.parquet", row_group_size=3, **options)
    assert (tmp_path / "sliced.parquet").read_bytes() == (tmp_path / "whole.parquet").read_bytes()
