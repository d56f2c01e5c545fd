"""The hashed distinctness check against Python's own set of the values."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest
from hypothesis import given
from hypothesis import strategies as st

from reconcile.fast import hashing
from reconcile.fast._jit import numba_available

TEXT = st.lists(st.text(max_size=6), max_size=40)


@given(values=TEXT, start=st.integers(0, 5), large=st.booleans())
def test_values_shown_distinct_are_distinct_and_repeats_are_never_shown_distinct(
    values: list[str], start: int, large: bool
) -> None:
    column = pa.array(values, pa.large_string() if large else pa.string()).slice(start)
    kept = values[start:]
    shown = hashing.all_distinct(column)
    if len(set(kept)) < len(kept):
        assert not shown
    elif numba_available():
        assert shown  # 64-bit hashes of a few dozen short strings do not collide in practice


def fnv1a_64(data: bytes) -> int:
    """FNV-1a, 64-bit, in Python integers: the definition's offset basis and prime."""
    value = 0xCBF29CE484222325
    for byte in data:
        value = ((value ^ byte) * 0x100000001B3) % 2**64
    return value


def test_the_python_definition_gives_known_fnv_values() -> None:
    # FNV-1a 64-bit test vectors for "" and "a" (from memory of the FNV authors' published list).
    assert fnv1a_64(b"") == 0xCBF29CE484222325
    assert fnv1a_64(b"a") == 0xAF63DC4C8601EC8C


@pytest.mark.skipif(not numba_available(), reason="the hash runs compiled only")
@given(values=TEXT)
def test_the_compiled_hash_is_fnv1a(values: list[str]) -> None:
    column = pa.array(values, pa.string())
    offsets = np.frombuffer(column.buffers()[1], np.int32)[: len(values) + 1]
    data_buffer = column.buffers()[2]
    data = np.zeros(0, np.uint8) if data_buffer is None else np.frombuffer(data_buffer, np.uint8)
    compiled = np.empty(len(values), np.uint64)
    hashing._hash_strings(offsets, data, compiled)
    assert compiled.tolist() == [fnv1a_64(v.encode()) for v in values]


def test_a_column_with_nulls_is_left_to_the_exact_check() -> None:
    assert not hashing.all_distinct(pa.array(["a", None]))
