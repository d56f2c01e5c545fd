"""``match`` on the command line lets go of its input frames before it builds the tables.

Millions of fills need not stay in memory beside the tables built from them: the command hands
its frames over (``session.read_and_match``) and the fast path drops them once it has what it
needs. A caller of the Python API keeps its own frames untouched.
"""

from __future__ import annotations

import gc
import weakref
from pathlib import Path
from typing import Any

import pandas as pd
import pytest

from reconcile.core.matching import match_canonical
from reconcile.fast import tables
from reconcile.io import session

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
