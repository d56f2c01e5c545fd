"""Exact text of whole columns, with the same characters as the per-value formatters.

:func:`reconcile.io.writers.tables.decimal_text`, ``pd.Timestamp.isoformat`` and
``pd.Timedelta.isoformat`` define the text; these functions produce it for a whole Arrow column
at once, so writing ten million rows of CSV needs no per-row Python.
"""

from __future__ import annotations

from collections.abc import Callable
from decimal import Decimal

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

SECOND = 1_000_000_000
DAY = 86_400 * SECOND


def decimal_texts(
    values: pa.Array,
    places: np.ndarray | None,
    one: Callable[[Decimal | None, int], str | None],
) -> pa.Array:
    """Plain digits, trailing zeros dropped, at least ``places[i]`` decimals (0 if None).

    ``one(value, places)`` formats a single value: it is used only for the rare values Arrow
    would write in exponent form.
    """
    text = _plain_digits(values)
    if text is None:
        text = pc.cast(values, pa.string())
        dot = pc.greater_equal(pc.find_substring(text, "."), 0)
        text = pc.if_else(dot, pc.utf8_rtrim(pc.utf8_rtrim(text, "0"), "."), text)
    if places is not None and len(values):
        point = pc.find_substring(text, ".")
        shown = pc.if_else(
            pc.greater_equal(point, 0), pc.subtract(pc.subtract(pc.utf8_length(text), point), 1), 0
        )
        # A missing value has no text and needs no zeros (its null stays null below).
        shown = pc.fill_null(shown, 0)
        need = np.maximum(places - np.asarray(shown.to_numpy(zero_copy_only=False)), 0)
        if need.any():
            needs = pa.array(need > 0)
            start = pc.if_else(pc.and_(needs, pc.less(point, 0)), ".", "")
            zeros = pc.binary_repeat("0", pa.array(need, pa.int64()))
            text = pc.binary_join_element_wise(text, start, zeros, "")
    exponent = np.flatnonzero(
        np.asarray(
            pc.fill_null(pc.match_substring(text, "E"), False).to_numpy(zero_copy_only=False),
            dtype=bool,
        )
    )
    if len(exponent):
        fixed = text.to_pylist()
        raw = values.to_pylist()
        for i in exponent:
            fixed[i] = one(raw[i], 0 if places is None else int(places[i]))
        text = pa.array(fixed, pa.string())
    return text


def _plain_digits(values: pa.Array) -> pa.Array | None:
    """Digits of each value, trailing zeros dropped, built from its integer parts; None when an
    unscaled value does not fit in 64 bits (Arrow's own text, with exponents, is used then)."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    scale = values.type.scale
    if not pa.types.is_decimal128(values.type) or scale > 18:
        return None
    words = np.frombuffer(values.buffers()[1], dtype=np.int64)
    words = words[2 * values.offset : 2 * (values.offset + len(values))].reshape(-1, 2)
    low, high = words[:, 0], words[:, 1]
    valid = np.asarray(values.is_valid().to_numpy(zero_copy_only=False), dtype=bool)
    if np.any(valid & ((high != (low >> 63)) | (low == np.iinfo(np.int64).min))):
        return None
    magnitude = np.abs(np.where(valid, low, 0))
    whole, fraction = np.divmod(magnitude, 10**scale)
    sign = pc.if_else(pa.array(low < 0), "-", "")
    digits = pc.utf8_lpad(pa.array(fraction).cast(pa.string()), width=scale, padding="0")
    digits = pc.utf8_rtrim(digits, "0")
    point = pc.if_else(pc.equal(digits, ""), "", ".")
    text = pc.binary_join_element_wise(sign, pa.array(whole).cast(pa.string()), point, digits, "")
    return pc.if_else(pa.array(valid), text, pa.scalar(None, pa.string()))


def iso_times(nanoseconds: np.ndarray, valid: np.ndarray) -> pa.Array:
    """``pd.Timestamp.isoformat()`` of UTC instants: six places for microseconds, nine when a
    nanosecond is set, none for whole seconds; ``+00:00``."""
    seconds = nanoseconds // SECOND
    fraction = nanoseconds - seconds * SECOND
    # Arrow writes a zone-less timestamp as "YYYY-MM-DD HH:MM:SS"; strftime is far slower.
    base = pc.utf8_replace_slice(
        pc.cast(pa.array(seconds, pa.timestamp("s")), pa.string()), 10, 11, "T"
    )
    text = pc.binary_join_element_wise(base, _fraction(fraction), "+00:00", "")
    return pc.if_else(pa.array(valid), text, pa.scalar(None, pa.string()))


def _fraction(fraction: np.ndarray) -> pa.Array:
    micro = fraction % 1000 == 0
    digits = np.where(micro, fraction // 1000, fraction)
    six = pc.utf8_lpad(pa.array(digits).cast(pa.string()), width=6, padding="0")
    nine = pc.utf8_lpad(pa.array(digits).cast(pa.string()), width=9, padding="0")
    padded = pc.if_else(pa.array(micro), six, nine)
    dotted = pc.binary_join_element_wise(".", padded, "")
    return pc.if_else(pa.array(fraction == 0), "", dotted)


def iso_durations(nanoseconds: np.ndarray, valid: np.ndarray) -> pa.Array:
    """``pd.Timedelta.isoformat()``: ``P{days}DT{h}H{m}M{s}[.fraction]S``, days floored, the
    fraction's trailing zeros dropped."""
    days = nanoseconds // DAY
    rest = nanoseconds - days * DAY
    hours, rest = rest // (3600 * SECOND), rest % (3600 * SECOND)
    minutes, rest = rest // (60 * SECOND), rest % (60 * SECOND)
    whole, fraction = rest // SECOND, rest % SECOND
    digits = pc.utf8_rtrim(
        pc.utf8_lpad(pa.array(fraction).cast(pa.string()), width=9, padding="0"), "0"
    )
    tail = pc.if_else(pa.array(fraction == 0), "", pc.binary_join_element_wise(".", digits, ""))
    parts = [
        "P",
        _text(days),
        "DT",
        _text(hours),
        "H",
        _text(minutes),
        "M",
        _text(whole),
        tail,
        "S",
    ]
    text = pc.binary_join_element_wise(*parts, "")
    return pc.if_else(pa.array(valid), text, pa.scalar(None, pa.string()))


def _text(values: np.ndarray) -> pa.Array:
    return pa.array(values).cast(pa.string())
