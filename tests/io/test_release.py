"""``match`` on the command line lets go of its input frames before it builds the tables.

Millions of fills need not stay in memory beside the tables built from them: the command hands
its frames over (``session.read_and_match``) and the fast path drops them once it has what it
needs. A caller of the Python API keeps its own frames untouched.
"""

from __future__ import annotations

import gc
import weakref
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pytest

from reconcile.core.matching import match_canonical
from reconcile.errors import InputError
from reconcile.fast import tables
from reconcile.io import session
from tests.builders import OVERFLOWING_FILLS, rows_of

SAMPLE = Path(__file__).parents[2] / "sample_data" / "fills.csv"


def _tables(book: Any) -> dict[str, pd.DataFrame]:
    return {name: frame.reset_index(drop=True) for name, frame in book.tables().items()}


def test_read_and_match_lets_go_of_the_fills_before_building_tables(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    refs: list[weakref.ref[pd.DataFrame]] = []
    alive_at_build: list[bool] = []
    build_all = tables.TableBuilder.build_all

    def read() -> session.Inputs:
        inputs = session.read_inputs(SAMPLE)
        refs.append(weakref.ref(inputs.fills))
        return inputs

    def watched(self: tables.TableBuilder, *args: Any) -> Any:
        gc.collect()
        alive_at_build.append(refs[0]() is not None)
        return build_all(self, *args)

    monkeypatch.setattr(tables.TableBuilder, "build_all", watched)
    book, record = session.read_and_match(read, engine="fast")
    assert alive_at_build == [False]
    assert record.summaries() == session.read_inputs(SAMPLE).summaries()
    expected = session.match_inputs(session.read_inputs(SAMPLE), engine="fast")
    for name, frame in _tables(expected).items():
        pd.testing.assert_frame_equal(_tables(book)[name], frame)


def test_the_api_leaves_the_callers_frames_alone() -> None:
    fills = session.read_inputs(SAMPLE).fills
    before = fills.copy()
    match_canonical(fills, engine="fast")
    pd.testing.assert_frame_equal(fills, before)


def _big_fills_csv(path: Path, rows: int) -> Path:
    lines = ["fill_id,account,instrument,side,quantity,price,time,commission,currency"]
    lines += [
        f"F{i},ACC{i % 7},INS{i % 13},{'buy' if i % 2 else 'sell'},{i % 9 + 1},{i % 50 + 10}.25,"
        f"2026-11-02T09:{i // 3600 % 60:02d}:{i % 60:02d}Z,0.50,EUR"
        for i in range(rows)
    ]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_a_read_column_is_one_array_that_validation_shares(tmp_path: Path) -> None:
    """Arrow reads a large file in many blocks; each column is joined once on reading, so the
    checks take it as it is instead of copying it beside the frame that holds it."""
    from reconcile.core.canon import canonical_fills
    from reconcile.io.readers.delimited import read_delimited
    from reconcile.io.readers.typed_csv import TypedColumns

    path = _big_fills_csv(tmp_path / "fills.csv", 60_000)  # several of the reader's 1 MB blocks
    frame = read_delimited(path, typed=TypedColumns(decimals=("quantity", "price", "commission")))
    ids = frame["fill_id"].array._pa_array  # the pandas column's Arrow storage
    assert ids.num_chunks == 1
    canon = canonical_fills(frame)
    shared = canon["fill_id"].array._pa_array.chunk(0).buffers()[2].address
    assert shared == ids.chunk(0).buffers()[2].address


def _overflowing_fills(path: Path) -> Path:
    """A key whose numbers fit their scales but whose gross P&L leaves 64 bits in the kernel
    (12-digit quantities at 10^5 prices), beside an ordinary key."""
    OVERFLOWING_FILLS.to_csv(path, index=False)
    return path


def _counting_read(path: Path) -> tuple[Callable[[], session.Inputs], list[int]]:
    calls: list[int] = []

    def read() -> session.Inputs:
        calls.append(1)
        return session.read_inputs(path)

    return read, calls


def test_a_key_that_overflows_after_the_early_release_is_read_again(tmp_path: Path) -> None:
    path = _overflowing_fills(tmp_path / "fills.csv")
    read, calls = _counting_read(path)
    book, _ = session.read_and_match(read, engine="fast")
    assert len(calls) == 2  # once to match, once more for the key the kernel could not hold
    expected = session.match_inputs(session.read_inputs(path), engine="reference")
    for name, frame in _tables(expected).items():
        assert rows_of(_tables(book)[name]) == rows_of(frame), name


def test_inputs_that_fit_are_read_once(tmp_path: Path) -> None:
    read, calls = _counting_read(SAMPLE)
    session.read_and_match(read, engine="fast")
    assert len(calls) == 1


def test_a_file_changed_before_it_is_read_again_is_an_error(tmp_path: Path) -> None:
    path = _overflowing_fills(tmp_path / "fills.csv")
    calls: list[int] = []

    def read() -> session.Inputs:
        calls.append(1)
        inputs = session.read_inputs(path)
        if len(calls) == 1:  # someone edits the file while the first read is matched
            path.write_text(path.read_text(encoding="utf-8").replace("s4", "s5"), encoding="utf-8")
        return inputs

    with pytest.raises(InputError, match="changed while they were being matched"):
        session.read_and_match(read, engine="fast")
