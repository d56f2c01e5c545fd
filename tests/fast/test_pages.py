"""Kernel output arrays whose rows are handed back to the system once the tables are built."""

from __future__ import annotations

import numpy as np
import pytest

from reconcile.fast import pages

ROWS, COLUMNS = 20_000, 12  # 1.9 MB: many pages


def test_a_releasable_array_starts_as_zeros_and_holds_what_is_written() -> None:
    values = pages.releasable_zeros((ROWS, COLUMNS))
    assert values.dtype == np.int64
    assert values.shape == (ROWS, COLUMNS)
    assert not values.any()
    values[:] = np.arange(ROWS * COLUMNS).reshape(ROWS, COLUMNS)
    assert values[-1, -1] == ROWS * COLUMNS - 1


@pytest.mark.skipif(not pages._CAN_RELEASE, reason="no madvise on this platform")
def test_releasing_frees_only_whole_pages_below_the_stop_row() -> None:
    values = pages.releasable_zeros((ROWS, COLUMNS))
    values[:] = 7
    view = values[100:]  # as the kernel's output is sliced to its row count
    pages.release_rows(view, 10_000)
    row_bytes = COLUMNS * 8
    released = (values == 0).all(axis=1)
    first, last = np.flatnonzero(released)[[0, -1]]
    assert first >= 100
    assert last < 10_100
    assert (values[10_100:] == 7).all()
    assert released.sum() * row_bytes >= 10_000 * row_bytes - 2 * pages._PAGE - row_bytes


def test_releasing_an_ordinary_array_does_nothing() -> None:
    values = np.full((ROWS, COLUMNS), 7, np.int64)
    pages.release_rows(values, ROWS)
    assert (values == 7).all()


def test_an_empty_shape_is_an_ordinary_empty_array() -> None:
    assert pages.releasable_zeros((0, COLUMNS)).shape == (0, COLUMNS)
