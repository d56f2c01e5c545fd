"""Zeroed arrays whose pages go back to the operating system a range of rows at a time.

The kernel writes its output rows into arrays sized for the worst case; the closed lots are then
built from them in slices of rows. Handing each slice's pages back as soon as it is built keeps
the kernel's rows and the finished table from being in memory together at their full size.
Where the platform cannot (no anonymous private mappings or no ``madvise``), these are plain
``numpy.zeros`` arrays and releasing does nothing.
"""

from __future__ import annotations

import mmap

import numpy as np

_PAGE = mmap.PAGESIZE
_CAN_RELEASE = hasattr(mmap, "MAP_PRIVATE") and hasattr(mmap, "MADV_DONTNEED")


def releasable_zeros(shape: tuple[int, ...]) -> np.ndarray:
    """An int64 array of zeros (pages are only taken when first written)."""
    count = int(np.prod(shape))
    if not _CAN_RELEASE or count == 0:
        return np.zeros(shape, np.int64)
    mapping = mmap.mmap(-1, count * 8, flags=mmap.MAP_PRIVATE)
    if hasattr(mmap, "MADV_HUGEPAGE"):
        mapping.madvise(mmap.MADV_HUGEPAGE)  # fewer, larger page faults, as numpy asks for
    return np.frombuffer(mapping, np.int64, count).reshape(shape)


def release_rows(array: np.ndarray, stop: int) -> None:
    """Give back the whole pages holding rows ``[0, stop)`` of ``array``, which must not be read
    again (they would read as zeros). Does nothing for an array not made by this module."""
    mapping, root = _mapping_of(array)
    if mapping is None or stop <= 0:
        return
    offset = array.__array_interface__["data"][0] - root.__array_interface__["data"][0]
    row_bytes = array.strides[0]
    begin = -(-offset // _PAGE) * _PAGE
    end = (offset + stop * row_bytes) // _PAGE * _PAGE
    if end > begin:
        mapping.madvise(mmap.MADV_DONTNEED, begin, end - begin)


def _mapping_of(array: np.ndarray) -> tuple[mmap.mmap | None, np.ndarray]:
    root = array
    while isinstance(root.base, np.ndarray):
        root = root.base
    base = root.base.obj if isinstance(root.base, memoryview) else root.base
    return (base, root) if isinstance(base, mmap.mmap) else (None, root)
