"""The CSV shortcut that parses decimals in pyarrow's reader gives what the text path gives.

Derived: the text path (every cell read as text, parsed by canon) is the definition; the shortcut
must return the same values and report problems in the same words.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

import reconcile
from reconcile.core.canon import canonical_fills
from reconcile.errors import ValidationError
from reconcile.io.readers.sources import FILL_TYPED
from reconcile.io.readers.tabular import read_table
from reconcile.io.readers.typed_csv import TypedColumns
from tests.builders import rows_of

HEADER = "fill_id,account,instrument,side,quantity,price,time,commission,currency,multiplier\n"
ROWS = [
    "F1,ACC1,KSTL,buy,10,100.25,2026-11-02T14:30:00Z,1.25,USD,50",
    "F2,ACC1,KSTL,sell,4,101.5,2026-11-02T15:30:00.125+01:00,0.5,USD,50",
    "F3,ACC2,CRYP,buy,0.001234,69887.99,2026-11-03T09:00:00Z,,USD,",
    "F4,ACC2,CRYP,sell,0.000234,70001,2026-11-03T10:00:00Z,0.10,USD,1",
    "F5,ACC3,NORR,sell,300,1234,2026-11-04T09:30:00+09:00,150,JPY,1",
]


def _write(tmp_path: Path, rows: list[str]) -> Path:
    path = tmp_path / "fills.csv"
    path.write_text(HEADER + "\n".join(rows) + "\n")
    return path


def test_typed_read_equals_the_text_path(tmp_path: Path) -> None:
    path = _write(tmp_path, ROWS)
    typed = reconcile.read_fills(path)
    text = canonical_fills(read_table(path), source=str(path))
    assert rows_of(typed) == rows_of(text)
    assert str(typed["quantity"].dtype) == str(text["quantity"].dtype)
    assert str(typed["time"].dtype) == str(text["time"].dtype)
    assert typed["time"].dt.tz is text["time"].dt.tz  # one UTC object, however parsed


def test_times_with_offsets_are_parsed_by_the_reader(tmp_path: Path) -> None:
    raw = read_table(_write(tmp_path, ROWS), typed=FILL_TYPED)
    assert isinstance(raw["time"].dtype, pd.DatetimeTZDtype)
    assert str(raw["time"].iloc[1]) == "2026-11-02 14:30:00.125000+00:00"


def test_times_alone_can_be_typed(tmp_path: Path) -> None:
    raw = read_table(_write(tmp_path, ROWS), typed=TypedColumns(times=("time",)))
    assert isinstance(raw["time"].dtype, pd.DatetimeTZDtype)
    assert raw["quantity"].tolist()[0] == "10"  # text, as asked


@pytest.mark.parametrize(
    "odd_time",
    [
        "2026-11-05T10:00:00",  # no offset: canon places it with --timezone
        " 2026-11-05T10:00:00Z",  # spaces: canon trims them
        "2026-11-05T10Z",  # an hour without minutes, which canon refuses
        "",
    ],
)
def test_a_time_the_reader_cannot_place_leaves_the_column_as_text(
    tmp_path: Path, odd_time: str
) -> None:
    path = _write(tmp_path, [*ROWS, f"F6,ACC1,KSTL,buy,5,100,{odd_time},0,USD,50"])
    raw = read_table(path, typed=FILL_TYPED)
    assert raw["time"].iloc[-1] == odd_time
    assert str(raw["quantity"].dtype).startswith("decimal128")  # the decimals are still typed


def test_local_times_read_the_same_either_way(tmp_path: Path) -> None:
    path = _write(tmp_path, [*ROWS, "F6,ACC1,KSTL,buy,5,100,2026-11-05T10:00:00,0,USD,50"])
    typed = reconcile.read_fills(path, timezone="America/New_York")
    text = canonical_fills(read_table(path), source=str(path), timezone="America/New_York")
    assert rows_of(typed) == rows_of(text)
    assert str(typed["time"].iloc[-1]) == "2026-11-05 15:00:00+00:00"


@pytest.mark.parametrize(
    ("row", "problem"),
    [
        (
            "F6,ACC1,KSTL,buy,-5,100,2026-11-05T10:00:00Z,0,USD,50",
            "row 7, column quantity: expected a decimal > 0, found '-5'",
        ),
        (
            "F6,ACC1,KSTL,buy, 5 ,1e2,2026-11-05T10Z,0,USD,50",
            "row 7, column time: expected an ISO 8601 date-time",
        ),
        (
            "F6,ACC1,KSTL,buy,5,100,2026-11-05T10Z,0,USD,50",
            "row 7, column time: expected an ISO 8601 date-time",
        ),
        (
            "F6,ACC1,KSTL,buy,5,100,2026-11-05T10:00:00,0,USD,50",
            "row 7, column time: expected a UTC offset",
        ),
    ],
)
def test_problems_are_worded_as_the_text_path_words_them(
    tmp_path: Path, row: str, problem: str
) -> None:
    path = _write(tmp_path, [*ROWS, row])
    with pytest.raises(ValidationError) as caught:
        reconcile.read_fills(path)
    with pytest.raises(ValidationError) as direct:
        canonical_fills(read_table(path), source=str(path))
    assert str(caught.value) == str(direct.value)
    assert problem in str(caught.value)


def test_repeated_ids_are_compared_as_written(tmp_path: Path) -> None:
    # 5 and 5.0 are the same number but not the same text: an id clash, not an exact repeat.
    path = _write(
        tmp_path, [*ROWS, "F1,ACC1,KSTL,buy,10.0,100.25,2026-11-02T14:30:00Z,1.25,USD,50"]
    )
    with pytest.raises(ValidationError, match=r"the same id with different content") as caught:
        reconcile.read_fills(path, dedupe=True)
    assert "row 7, column fill_id" in str(caught.value)
