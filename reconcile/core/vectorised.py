"""Whole-column shortcuts for :mod:`reconcile.core.canon`, for inputs of millions of rows.

Each function answers for the common, clean case in a few Arrow or numpy passes, and returns None
(or "nothing to report") when the slower, row-aware code of canon must look: that code stays the
one that words every problem. A shortcut never accepts a value canon's own rules would refuse.
"""

from __future__ import annotations

from decimal import Decimal
from types import ModuleType

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

MAX_DIGITS = 38


def plain_decimals(text: pa.Array) -> pa.Array | None:
    """Exact decimals of plain decimal text (blank = null), or None when any value needs canon.

    Arrow's decimal parser takes the same plain forms canon's pattern does (``+5``, ``5.``,
    ``.5``); exponent forms are left to canon, which rewrites them with their own places.
    """
    if pc.any(pc.match_substring(text, "e", ignore_case=True)).as_py():
        return None
    text = pc.if_else(pc.equal(text, ""), pa.scalar(None, pa.string()), text)
    dot = pc.find_substring(text, ".")
    places = pc.if_else(
        pc.greater_equal(dot, 0), pc.subtract(pc.subtract(pc.utf8_length(text), dot), 1), 0
    )
    scale = pc.max(places).as_py() or 0
    if scale > MAX_DIGITS:
        return None
    try:
        values = pc.cast(text, pa.decimal128(MAX_DIGITS, scale))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    largest = pc.max(pc.abs(values)).as_py() if values.null_count < len(values) else None
    whole = _whole_digits(largest)
    if whole + scale > MAX_DIGITS:
        return None
    return values.cast(pa.decimal128(max(whole, 1) + scale, scale))


def _whole_digits(value: Decimal | None) -> int:
    if value is None or value == 0:
        return 0
    return max(value.adjusted() + 1, 0)


def iso_times(text: pa.Array) -> pa.Array | None:
    """UTC timestamps of ISO 8601 text that all carries a UTC offset, or None for canon to look.

    Arrow's parser takes a subset of canon's forms, except an hour without minutes
    (``2026-11-02T10Z``), which canon refuses: every value must have its minutes.
    """
    if len(text) == 0 or text.null_count:
        return None
    # Arrow's parser takes only ASCII, so a byte check stands for the character check here.
    scans = compiled_scans(text)
    minutes = None if scans is None else scans.byte_everywhere(text, 13, ":")
    if minutes is None:
        minutes = pc.all(pc.equal(pc.utf8_slice_codeunits(text, 13, 14), ":")).as_py()
    if not minutes:
        return None
    try:
        return pc.cast(text, pa.timestamp("ns", tz="UTC"))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None


#: Columns shorter than this skip the compiled scans: loading numba would cost more than they save.
COMPILED_SCAN_ROWS = 50_000


def compiled_scans(values: pa.Array) -> ModuleType | None:
    """:mod:`reconcile.fast.text` for a column long enough to pay for loading it, else None."""
    if len(values) < COMPILED_SCAN_ROWS:
        return None
    from reconcile.fast import text

    return text


def repeated(values: pa.Array) -> np.ndarray:
    """Rows whose value occurs more than once in the column."""
    scans = compiled_scans(values)
    shown = scans is not None and scans.all_distinct(values)
    if shown or len(pc.unique(values)) == len(values):  # the usual case: unique ids
        return np.zeros(len(values), bool)
    codes = _codes(values)
    counts = np.bincount(codes) if len(codes) else np.zeros(0, np.int64)
    flags: np.ndarray = counts[codes] > 1
    return flags


def key_codes(account: pa.Array, instrument: pa.Array) -> np.ndarray:
    """One integer per (account, instrument) pair."""
    if len(account) == 0:
        return np.zeros(0, np.int64)
    return pair_codes(_codes(account), _codes(instrument))


def pair_codes(accounts: np.ndarray, instruments: np.ndarray) -> np.ndarray:
    """One integer per (account, instrument) pair, from each column's codes (see :func:`codes`)."""
    if len(accounts) == 0:
        return np.zeros(0, np.int64)
    # Codes may be 32-bit (dictionary indices): the product is formed in 64 bits.
    paired: np.ndarray = accounts.astype(np.int64) * (int(instruments.max()) + 1) + instruments
    if int(paired.max()) >= 4 * len(paired):  # sparse: few of many possible pairs occur
        paired = np.unique(paired, return_inverse=True)[1].reshape(-1)
    return paired


def one_value_per_key(
    keys: np.ndarray, values: pa.Array, value_codes: np.ndarray | None = None
) -> bool:
    """Whether each key (see :func:`key_codes`) has a single value in ``values`` (whose codes,
    when already known, are ``value_codes``)."""
    if len(values) == 0:
        return True
    found = _codes(values) if value_codes is None else value_codes
    # Any one value per key stands for its key: all rows agree with it only if all are equal.
    chosen = np.empty(int(keys.max()) + 1, np.int64)
    chosen[keys] = found
    return bool(np.array_equal(chosen[keys], found))


def codes(values: pa.Array) -> np.ndarray | None:
    """An integer per row, equal where the values are equal; None when some value is missing."""
    return None if values.null_count else _codes(values)


def _codes(values: pa.Array) -> np.ndarray:
    """The dictionary indices as they are (32-bit: half the memory of a 64-bit copy)."""
    encoded = pc.dictionary_encode(values)
    if isinstance(encoded, pa.ChunkedArray):
        encoded = encoded.combine_chunks()
    return np.asarray(encoded.indices.to_numpy(zero_copy_only=False))


def blank_text(length: int) -> pa.Array:
    """``length`` empty strings, in the large-string layout pandas keeps text in.

    Its offsets are all zero: ``np.zeros`` takes them from memory the system hands out zeroed,
    so an absent optional column (no ``order_id`` in ten million fills) costs no memory until
    something writes to it, instead of two arrays of offsets (Arrow's, then pandas' wider copy).
    """
    offsets = np.zeros(length + 1, np.int64)
    return pa.Array.from_buffers(
        pa.large_string(), length, [None, pa.py_buffer(offsets), pa.py_buffer(b"")]
    )


def string_series(values: pa.Array) -> pd.Series:
    """A pandas ``str`` column over Arrow strings, without a row-by-row copy."""
    kind = pd.StringDtype(na_value=np.nan)
    array = kind.__from_arrow__(pa.chunked_array([values]))  # type: ignore[attr-defined]
    series: pd.Series = pd.Series(array, dtype=kind)
    return series
