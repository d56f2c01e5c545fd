"""The compiled text scans against Python's own view of the values (set, strip) and FNV-1a."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pytest
from hypothesis import given
from hypothesis import strategies as st

from reconcile.fast import text
from reconcile.fast._jit import numba_available

TEXT = st.lists(st.text(max_size=6), max_size=40)


@given(values=TEXT, start=st.integers(0, 5), large=st.booleans())
def test_values_shown_distinct_are_distinct_and_repeats_are_never_shown_distinct(
    values: list[str], start: int, large: bool
) -> None:
    column = pa.array(values, pa.large_string() if large else pa.string()).slice(start)
    kept = values[start:]
    shown = text.all_distinct(column)
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
    text._hash_strings(offsets, data, compiled)
    assert compiled.tolist() == [fnv1a_64(v.encode()) for v in values]


def test_a_column_with_nulls_is_left_to_the_exact_check() -> None:
    assert not text.all_distinct(pa.array(["a", None]))


EDGES = st.text(alphabet=st.sampled_from([" ", "\t", "\u00a0", "\u3000", "a", "Z", "7", "é", "-"]))


@given(values=st.lists(EDGES, max_size=20))
def test_a_column_shown_unpadded_has_nothing_to_trim(values: list[str]) -> None:
    column = pa.array(values, pa.string())
    if text.surely_unpadded(column):
        assert all(v == v.strip() for v in values)
        assert pc.utf8_trim_whitespace(column).to_pylist() == values


@pytest.mark.skipif(not numba_available(), reason="the scan runs compiled only")
def test_plain_ascii_ids_are_shown_unpadded_and_padded_ones_are_not() -> None:
    assert text.surely_unpadded(pa.array(["LK1", "ACC-9", "", "x y"]))
    assert not text.surely_unpadded(pa.array(["LK1", " LK2"]))
    assert not text.surely_unpadded(pa.array(["LK1\t"]).slice(0))
    assert not text.surely_unpadded(pa.array(["LK1\u00a0"]))


TIMES = st.sampled_from(["2026-11-02T10:00Z", "2026-11-02T10Z", "2026-11-02", "", "x" * 14])


@given(values=st.lists(TIMES))
def test_the_byte_scan_agrees_with_the_character_slice_on_ascii_time_text(
    values: list[str],
) -> None:
    found = text.byte_everywhere(pa.array(values, pa.string()), 13, ":")
    if found is not None:  # compiled
        assert found == all(v[13:14] == ":" for v in values)
