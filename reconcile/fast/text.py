"""Compiled scans of Arrow text columns that prove the clean case, so canon can skip a step.

:func:`all_distinct` answers from 64-bit hashes: equal strings have equal hashes, so distinct
hashes prove distinct values; a repeated hash (a real repeat, or in rare cases two values that
share a hash) proves nothing, and the caller then asks Arrow's exact hash table. Hashing and
sorting integers is several times faster than Arrow's table of every string for millions of ids.

:func:`surely_unpadded` proves that no value starts or ends with whitespace, so trimming would
copy the column for nothing; :func:`byte_everywhere` checks one byte of every value (the colon of
an ISO time's minutes) without slicing out a column of one-character strings.

Each answer is one way: "not shown" sends the caller to the exact step, never to a wrong result.
The scans run only compiled; as plain Python they would be slower than the steps they save.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from reconcile.fast._jit import jit, numba_available

#: FNV-1a, 64-bit (the offset basis and prime of its published definition).
_BASIS = np.uint64(14695981039346656037)
_PRIME = np.uint64(1099511628211)


def all_distinct(values: pa.Array) -> bool:
    """True when the hashes show every value distinct; False means "not shown", not "repeated"."""
    layout = _layout(values)
    if layout is None or values.null_count:
        return False
    offsets, data = layout
    hashes = np.empty(len(values), np.uint64)
    _hash_strings(offsets, data, hashes)
    hashes.sort()
    return not bool(np.any(hashes[1:] == hashes[:-1]))


def surely_unpadded(values: pa.Array) -> bool:
    """True when no value's first or last byte can be whitespace (anything up to the space
    character, or any byte of a non-ASCII character, counts as possible whitespace)."""
    layout = _layout(values)
    return layout is not None and not _any_edge_suspect(*layout)


def byte_everywhere(values: pa.Array, index: int, byte: str) -> bool | None:
    """Whether every value has ``byte`` at byte ``index``; None when the scan does not apply."""
    layout = _layout(values)
    if layout is None:
        return None
    return bool(_all_have_byte_at(*layout, index, ord(byte)))


def _layout(values: pa.Array) -> tuple[np.ndarray, np.ndarray] | None:
    """The offsets and bytes of a string column, or None when the scans do not apply."""
    text = pa.types.is_string(values.type) or pa.types.is_large_string(values.type)
    if not numba_available() or not text or not isinstance(values, pa.Array):
        return None
    _, offsets_buffer, data_buffer = values.buffers()
    width = np.int64 if pa.types.is_large_string(values.type) else np.int32
    start = values.offset
    offsets = np.frombuffer(offsets_buffer, dtype=width)[start : start + len(values) + 1]
    data = np.zeros(0, np.uint8) if data_buffer is None else np.frombuffer(data_buffer, np.uint8)
    return offsets, data


@jit
def _any_edge_suspect(offsets: Any, data: Any) -> Any:
    for i in range(len(offsets) - 1):
        first, end = offsets[i], offsets[i + 1]
        if end > first and (
            data[first] <= 32 or data[first] >= 127 or data[end - 1] <= 32 or data[end - 1] >= 127
        ):
            return True
    return False


@jit
def _all_have_byte_at(offsets: Any, data: Any, index: Any, byte: Any) -> Any:
    for i in range(len(offsets) - 1):
        at = offsets[i] + index
        if at >= offsets[i + 1] or data[at] != byte:
            return False
    return True


@jit
def _hash_strings(offsets: Any, data: Any, out: Any) -> None:
    for i in range(len(out)):
        h = _BASIS
        for j in range(offsets[i], offsets[i + 1]):
            h = (h ^ data[j]) * _PRIME
        out[i] = h
