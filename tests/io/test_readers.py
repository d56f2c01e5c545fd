"""Readers: file-level problems name the file and row; values arrive exactly."""

from __future__ import annotations

from decimal import Decimal
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import reconcile
from reconcile.errors import (
    InputError,
    MissingColumnsError,
    SourceEmptyError,
    SourceNotFoundError,
    ValidationError,
)

HEADER = "fill_id,account,instrument,side,quantity,price,time,currency\n"
ROW = "f{n},A,X,buy,1,12345678901234.5678,2026-11-02T10:00:0{n}Z,USD\n"


def _write(tmp_path: Path, text: str | bytes, name: str = "fills.csv") -> Path:
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def _problems(path: Path) -> list[str]:
    with pytest.raises(ValidationError) as caught:
        reconcile.read_fills(path)
    return [str(p) for p in caught.value.problems]


def test_decimals_arrive_with_every_digit(tmp_path: Path) -> None:
    # pandas' pyarrow CSV engine with a decimal dtype goes through float and changes digits here
    fills = reconcile.read_fills(_write(tmp_path, HEADER + ROW.format(n=1)))
    assert fills["price"].tolist() == [Decimal("12345678901234.5678")]


def test_missing_file(tmp_path: Path) -> None:
    with pytest.raises(SourceNotFoundError, match=r"nope\.csv: no such file"):
        reconcile.read_fills(tmp_path / "nope.csv")


def test_a_directory_is_not_a_file(tmp_path: Path) -> None:
    folder = tmp_path / "dir.csv"
    folder.mkdir()
    with pytest.raises(SourceNotFoundError, match="expected a file"):
        reconcile.read_fills(folder)


def test_empty_file(tmp_path: Path) -> None:
    with pytest.raises(SourceEmptyError, match="the file is empty"):
        reconcile.read_fills(_write(tmp_path, ""))


def test_header_only_file_has_no_fills(tmp_path: Path) -> None:
    assert reconcile.read_fills(_write(tmp_path, HEADER)).empty


def test_missing_required_column(tmp_path: Path) -> None:
    with pytest.raises(MissingColumnsError, match="missing required column: currency"):
        reconcile.read_fills(
            _write(
                tmp_path,
                "fill_id,account,instrument,side,quantity,price,"
                "time\nf1,A,X,buy,1,2,2026-11-02T10:00:00Z\n",
            )
        )


def test_a_row_with_too_many_fields_is_named(tmp_path: Path) -> None:
    text = HEADER + ROW.format(n=1) + ROW.format(n=2).replace("USD", "USD,extra")
    row = ROW.format(n=2).strip().replace("USD", "USD,extra")[:57] + "..."  # shown up to 60
    assert _problems(_write(tmp_path, text)) == [
        f"{tmp_path / 'fills.csv'} row 3: expected 8 fields as in the header, not 9, found {row!r}"
    ]


def test_every_row_with_the_wrong_field_count_is_named(tmp_path: Path) -> None:
    rows = [ROW.format(n=n) for n in range(1, 6)]
    rows[1] = rows[1].replace("USD", "USD,extra")
    rows[3] = "f4,A\n"
    problems = _problems(_write(tmp_path, HEADER + "".join(rows)))
    assert [p.split(":")[0].rsplit(" ", 1)[1] for p in problems] == ["3", "5"]
    assert "expected 8 fields as in the header, not 2, found 'f4,A'" in problems[1]


def test_bad_utf8_is_named_by_line(tmp_path: Path) -> None:
    text = (HEADER + ROW.format(n=1)).encode() + b"f2,A,X\xff,buy,1,2,2026-11-02T10:00:00Z,USD\n"
    problems = _problems(_write(tmp_path, text))
    assert problems == [
        f"{tmp_path / 'fills.csv'} row 3: expected UTF-8 text (declare another "
        "encoding with a profile), found \"b'\\\\xff,bu'\""
    ]


def test_repeated_and_blank_headers(tmp_path: Path) -> None:
    problems = _problems(_write(tmp_path, "fill_id,account,,account\n"))
    assert len(problems) == 2
    assert "column #3: expected a name for every column" in problems[0]
    assert "column #4: expected each column named once (also column #2)" in problems[1]


def test_a_utf8_byte_order_mark_is_ignored(tmp_path: Path) -> None:
    fills = reconcile.read_fills(_write(tmp_path, ("\ufeff" + HEADER + ROW.format(n=1)).encode()))
    assert fills["fill_id"].tolist() == ["f1"]


def test_rows_are_numbered_by_line_even_across_blank_lines(tmp_path: Path) -> None:
    text = HEADER + ROW.format(n=1) + "\n" + ROW.format(n=2).replace(",1,", ",-1,")
    assert _problems(_write(tmp_path, text)) == [
        f"{tmp_path / 'fills.csv'} row 4, column quantity: expected a decimal > 0, found '-1'"
    ]


def test_unknown_extension_needs_a_format(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="cannot tell the format"):
        reconcile.read_fills(_write(tmp_path, HEADER, name="fills.xyz"))


def test_parquet_decimals_and_timestamps_are_taken_as_typed(tmp_path: Path) -> None:
    table = pa.table(
        {
            "fill_id": ["f1"],
            "account": ["A"],
            "instrument": ["X"],
            "side": ["B"],
            "quantity": pa.array([Decimal("3.5")], pa.decimal128(10, 2)),
            "price": pa.array([Decimal("99.125")], pa.decimal128(12, 3)),
            "time": pa.array([1_793_000_000_000_000], pa.timestamp("us", tz="UTC")),
            "currency": ["EUR"],
        }
    )
    pq.write_table(table, tmp_path / "fills.parquet")
    fills = reconcile.read_fills(tmp_path / "fills.parquet")
    assert fills["price"].tolist() == [Decimal("99.125")]
    assert fills["side"].tolist() == ["buy"]


def test_parquet_float_money_is_refused(tmp_path: Path) -> None:
    table = pa.table(
        {
            "fill_id": ["f1"],
            "account": ["A"],
            "instrument": ["X"],
            "side": ["buy"],
            "quantity": [1.0],
            "price": ["2"],
            "time": ["2026-11-02T10:00:00Z"],
            "currency": ["USD"],
        }
    )
    pq.write_table(table, tmp_path / "fills.parquet")
    with pytest.raises(ValidationError, match="column quantity: expected exact decimal values"):
        reconcile.read_fills(tmp_path / "fills.parquet")


def test_a_file_that_is_not_parquet(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="cannot be read as Parquet"):
        reconcile.read_fills(_write(tmp_path, "not parquet", name="fills.parquet"))
