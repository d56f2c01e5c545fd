"""Whether a text column holds no value twice, answered from 64-bit hashes of its values.

Equal strings have equal hashes, so distinct hashes prove distinct values; a repeated hash
(a real repeat, or in rare cases two values that share a hash) proves nothing, and the caller
then asks Arrow's exact hash table. Hashing and sorting integers is several times faster than
building Arrow's table of every string for millions of unique ids.
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
    """True when the hashes show every value distinct; False means "not shown", not "repeated".

    Only compiled: as plain Python the per-byte loop would be slower than Arrow's table.
    """
    if (
        not numba_available()
        or values.null_count
        or not (pa.types.is_string(values.type) or pa.types.is_large_string(values.type))
    ):
        return False
    if len(values) < 2:
        return True
    _, offsets_buffer, data_buffer = values.buffers()
    width = np.int64 if pa.types.is_large_string(values.type) else np.int32
    offsets = np.frombuffer(offsets_buffer, dtype=width)[
        values.offset : values.offset + len(values) + 1
    ]
    data = np.zeros(0, np.uint8) if data_buffer is None else np.frombuffer(data_buffer, np.uint8)
    hashes = np.empty(len(values), np.uint64)
    _hash_strings(offsets, data, hashes)
    hashes.sort()
    return not bool(np.any(hashes[1:] == hashes[:-1]))


@jit
def _hash_strings(offsets: Any, data: Any, out: Any) -> None:
    for i in range(len(out)):
        h = _BASIS
        for j in range(offsets[i], offsets[i + 1]):
            h = (h ^ data[j]) * _PRIME
        out[i] = h
