"""Arrow decimals to scaled int64 and back, exactly and vectorised.

A decimal column becomes the integers it stores (its unscaled values) at the column's scale; a value
that does not fit comfortably in 64 bits is flagged, never wrapped. On the way back a column of
integers, each at its own scale, becomes one Arrow decimal column at the largest scale, typed with
the narrowest precision its values need (as :func:`reconcile.core.frames.tight_decimal_type` does).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from reconcile.fast._jit import jit, numba_available

#: Values are kept below 2**62 on the way in, so no kernel sum of two inputs can reach 2**63.
INPUT_LIMIT = 2**62
LIMIT = 2**63 - 1
POW10 = np.array([10**k for k in range(19)], dtype=np.int64)
#: The largest magnitude that 10**k times leaves inside int64 (a table: division is slow).
FITS_TIMES_POW10 = np.array([LIMIT // 10**k for k in range(19)], dtype=np.int64)


def unscaled(values: pa.Array | pa.ChunkedArray) -> tuple[np.ndarray, int, np.ndarray]:
    """(integers, scale, fits): the unscaled values of a decimal column; nulls read as 0."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks() if values.num_chunks != 1 else values.chunk(0)
    kind = values.type
    if pa.types.is_decimal256(kind):
        narrow = pa.decimal128(min(kind.precision, 38), kind.scale)
        try:
            values = values.cast(narrow)
        except pa.ArrowInvalid:
            return np.zeros(len(values), np.int64), kind.scale, np.zeros(len(values), bool)
    if not pa.types.is_decimal(values.type):
        raise TypeError(f"expected a decimal column, got {values.type}")
    words = np.frombuffer(values.buffers()[1], dtype=np.int64)
    words = words[2 * values.offset : 2 * (values.offset + len(values))].reshape(-1, 2)
    low, high = words[:, 0], words[:, 1]
    fits = (high == (low >> 63)) & (low < INPUT_LIMIT) & (low > -INPUT_LIMIT)
    ints = np.where(fits, low, 0)
    if values.null_count:
        valid = np.asarray(values.is_valid().to_numpy(zero_copy_only=False), dtype=bool)
        ints = np.where(valid, ints, 0)
        fits |= ~valid
    return ints, values.type.scale, fits


def unscaled_in_order(
    values: pa.Array | pa.ChunkedArray, order: np.ndarray
) -> tuple[np.ndarray, int, np.ndarray]:
    """:func:`unscaled` with the integers taken in ``order`` (``fits`` stays in input order):
    one compiled pass over the words when numba is there."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks() if values.num_chunks != 1 else values.chunk(0)
    if not numba_available() or not pa.types.is_decimal128(values.type) or values.null_count:
        ints, scale, fits = unscaled(values)
        return ints[order], scale, fits
    words = np.frombuffer(values.buffers()[1], dtype=np.int64)
    words = words[2 * values.offset : 2 * (values.offset + len(values))].reshape(-1, 2)
    out, fits = np.empty(len(order), np.int64), np.empty(len(values), bool)
    _unscale_in_order(words, np.ascontiguousarray(order, np.int64), out, fits)
    return out, values.type.scale, fits


@jit
def _unscale_in_order(words: Any, order: Any, out: Any, fits: Any) -> None:
    for i in range(len(words)):
        low, high = words[i, 0], words[i, 1]
        fits[i] = high == (low >> 63) and -INPUT_LIMIT < low < INPUT_LIMIT
    for n in range(len(order)):
        i = order[n]
        out[n] = words[i, 0] if fits[i] else 0


def significant_places(values: np.ndarray, scale: int) -> np.ndarray:
    """Decimal places each value needs (money.significant_places): 1.500 needs 1, 100 none."""
    places = np.full(len(values), scale, dtype=np.int64)
    rest = values.copy()
    for _ in range(scale):
        whole = (rest % 10 == 0) & (places > 0)
        if not whole.any():
            break
        rest = np.where(whole, rest // 10, rest)
        places -= whole
    return places


def rescale(
    values: np.ndarray,
    scale: int,
    keys: np.ndarray,
    key_target: np.ndarray,
    *,
    in_place: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Values at ``scale`` moved to the target scale of each row's key: (integers, did not fit).

    Moving down must be exact (the target is at least each value's significant places).
    One compiled pass when numba is there (no per-row copy of the targets), else numpy.
    ``in_place`` writes the result over ``values`` (a caller done with them), when it can.
    """
    if numba_available():
        values = np.ascontiguousarray(values, np.int64)
        reuse = in_place and values.flags.writeable
        out, bad = values if reuse else np.empty_like(values), np.zeros(len(values), bool)
        _rescale_rows(
            values,
            scale,
            np.ascontiguousarray(keys, np.int64),
            np.ascontiguousarray(key_target, np.int64),
            out,
            bad,
        )
        return out, bad
    return rescale_columns(values, scale, key_target[keys])


@jit
def _rescale_rows(values: Any, scale: int, keys: Any, key_target: Any, out: Any, bad: Any) -> None:
    for i in range(len(values)):
        step, value = key_target[keys[i]] - scale, values[i]
        if step < 0:
            out[i] = value // POW10[min(-step, 18)]
        elif step == 0:
            out[i] = value
        elif (step > 18 and value != 0) or abs(value) > LIMIT // POW10[min(step, 18)]:
            bad[i] = True
            out[i] = 0
        else:
            out[i] = value * POW10[min(step, 18)]


def rescale_columns(
    values: np.ndarray, scale: int, target: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """:func:`rescale` over whole columns with numpy."""
    shift = target.astype(np.int64) - scale
    out = values.copy()
    down = shift < 0
    if down.any():
        out[down] = values[down] // POW10[np.minimum(-shift[down], 18)]
    up = shift > 0
    bad = np.zeros(len(values), dtype=bool)
    if up.any():
        factor = POW10[np.minimum(shift[up], 18)]
        limit = LIMIT // factor
        overflow = (np.abs(values[up]) > limit) | ((shift[up] > 18) & (values[up] != 0))
        bad[up] = overflow
        out[up] = np.where(overflow, 0, values[up] * np.where(overflow, 1, factor))
    return out, bad


def checked_mul(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Elementwise a x b with the rows that would leave the int64 range flagged (and zeroed)."""
    a, b = np.asarray(a, np.int64), np.asarray(b, np.int64)
    if _largest(a) * _largest(b) <= LIMIT:  # exact Python integers: no row can overflow
        product: np.ndarray = a * b
        return product, np.zeros(product.shape, bool)
    magnitude = np.maximum(np.abs(a), 1)
    bad = np.abs(b) > LIMIT // magnitude
    return np.where(bad, 0, a * np.where(bad, 0, b)), bad


def _largest(values: np.ndarray) -> int:
    """The largest magnitude in ``values`` as a Python integer (0 when empty); |-2**63| included."""
    if not values.size:
        return 0
    return max(abs(int(values.max())), abs(int(values.min())))


def digits(values: np.ndarray) -> np.ndarray:
    """Decimal digits of each |value| (0 for zero), by exact comparison with powers of ten."""
    found: np.ndarray = np.searchsorted(POW10, np.abs(values), side="right")
    return found


def to_decimal(
    values: np.ndarray, scales: np.ndarray | int, valid: np.ndarray | None = None
) -> pa.Array:
    """One Arrow decimal column from integers each at its own scale, at the narrowest type."""
    values = np.asarray(values, dtype=np.int64)
    row_scales = np.broadcast_to(np.asarray(scales, dtype=np.int64), values.shape)
    if not len(values):
        return pa.array([], pa.decimal128(1, 0))
    scale, lowest = int(row_scales.max()), int(row_scales.min())
    if numba_available() and scale - lowest <= 18:
        fused = _fused_decimal(values, row_scales, scale, valid)
        if fused is not None:
            return fused
    raised, bad = values, np.zeros(1, bool)
    if lowest < scale and scale - lowest <= 18:
        raised, bad = checked_mul(values, POW10[np.minimum(scale - row_scales, 18)])
    if lowest == scale or (not bad.any() and scale - lowest <= 18):
        present = raised if valid is None else raised[valid]
        largest = int(np.abs(present).max()) if len(present) else 0
        whole = max(len(str(largest)) - scale, 1) if largest else 1
        if whole + scale <= 38:
            return _from_ints(raised, pa.decimal128(whole + scale, scale), valid)
    return _mixed_scales(values, row_scales, valid)


def _fused_decimal(
    values: np.ndarray, row_scales: np.ndarray, scale: int, valid: np.ndarray | None
) -> pa.Array | None:
    """:func:`to_decimal` in one compiled pass (raise to ``scale``, find the largest, lay out the
    128-bit words); None when a raised value would leave 64 bits."""
    shifts = np.ascontiguousarray(scale - row_scales) if row_scales.strides[0] else None
    # Arrow's own pool reuses freed pages, so a large column does not fault in fresh memory.
    buffer = pa.allocate_buffer(16 * len(values))
    words = np.frombuffer(buffer, dtype=np.int64).reshape(-1, 2)
    present = np.ones(0, bool) if valid is None else np.ascontiguousarray(valid, bool)
    largest = _raise_into_words(
        values,
        np.zeros(1, np.int64) if shifts is None else shifts,
        shifts is not None,
        present,
        words,
    )
    if largest < 0:
        return None
    whole = max(len(str(largest)) - scale, 1) if largest else 1
    if whole + scale > 38:
        return None
    validity = None
    if valid is not None and not valid.all():
        validity = pa.array(valid).buffers()[1]
    kind = pa.decimal128(whole + scale, scale)
    return pa.Array.from_buffers(kind, len(values), [validity, buffer])


@jit
def _raise_into_words(values: Any, shifts: Any, per_row: Any, present: Any, words: Any) -> Any:
    """Each value times 10**shift as the low and high words of a 128-bit integer; returns the
    largest magnitude among present rows (every row when ``present`` is empty), or -1 when a
    value does not fit."""
    largest = 0
    shift = shifts[0]
    for i in range(len(values)):
        value = values[i]
        if per_row:
            shift = shifts[i]
        if value == -LIMIT - 1:
            return -1  # its magnitude is not an int64
        if shift > 0:
            if abs(value) > FITS_TIMES_POW10[shift]:
                return -1
            value = value * POW10[shift]
        words[i, 0] = value
        words[i, 1] = -1 if value < 0 else 0
        if (len(present) == 0 or present[i]) and abs(value) > largest:
            largest = abs(value)
    return largest


def _mixed_scales(values: np.ndarray, row_scales: np.ndarray, valid: np.ndarray | None) -> pa.Array:
    """The rare column whose values, brought to one scale, would not fit in 64 bits."""
    scale = int(row_scales.max())
    present = values if valid is None else values[valid]
    present_scales = row_scales if valid is None else row_scales[valid]
    int_digits = int((digits(present) - present_scales).max()) if len(present) else 1
    kind = decimal_type(max(int_digits, 1) + scale, scale)
    distinct = np.unique(row_scales)
    order = np.argsort(row_scales, kind="stable")
    parts = []
    for s in distinct:
        rows = order[row_scales[order] == s]
        part_valid = None if valid is None else valid[rows]
        parts.append(_from_ints(values[rows], pa.decimal128(38, int(s)), part_valid).cast(kind))
    inverse = np.empty_like(order)
    inverse[order] = np.arange(len(order))
    return pa.concat_arrays(parts).take(pa.array(inverse))


def decimal_type(precision: int, scale: int) -> pa.DataType:
    if precision <= 38:
        return pa.decimal128(precision, scale)
    return pa.decimal256(precision, scale)


def _from_ints(values: np.ndarray, kind: pa.DataType, valid: np.ndarray | None) -> pa.Array:
    """A decimal128 array over the integers (which must fit ``kind``), without a cast."""
    words = np.empty((len(values), 2), dtype=np.int64)
    words[:, 0] = values
    words[:, 1] = values >> 63
    validity = None
    if valid is not None and not valid.all():
        validity = pa.array(valid).buffers()[1]
    return pa.Array.from_buffers(kind, len(values), [validity, pa.py_buffer(words)])


def ints_of(values: pa.Array | pa.ChunkedArray) -> np.ndarray:
    """An integer or timestamp column as int64 (nulls as 0)."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    if pa.types.is_timestamp(values.type) or pa.types.is_duration(values.type):
        values = values.cast(pa.int64())
    return np.asarray(pc.fill_null(values, 0).to_numpy(zero_copy_only=False), dtype=np.int64)


def checked_add(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Elementwise a + b with the rows that would leave the int64 range flagged (and zeroed)."""
    a, b = np.asarray(a, np.int64), np.asarray(b, np.int64)
    if _largest(a) + _largest(b) <= LIMIT:
        total: np.ndarray = a + b
        return total, np.zeros(total.shape, bool)
    bad = ((b > 0) & (a > LIMIT - b)) | ((b < 0) & (a < -LIMIT - b))
    return np.where(bad, 0, a + np.where(bad, 0, b)), bad


def round_to_places(
    values: np.ndarray, scale: np.ndarray, places: np.ndarray, half_up: bool = False
) -> tuple[np.ndarray, np.ndarray]:
    """Values at ``scale`` rounded to ``places`` (half-even, or half away from zero), as
    integers at ``places``: money.round_to, elementwise. One compiled pass when numba is there;
    otherwise whole-column numpy (:func:`round_columns`), which gives the same integers."""
    if numba_available():
        values = np.ascontiguousarray(values, np.int64)
        shift = np.ascontiguousarray(np.broadcast_to(scale - places, values.shape), np.int64)
        out, bad = np.empty_like(values), np.zeros(len(values), bool)
        _round_rows(values, shift, half_up, out, bad)
        return out, bad
    return round_columns(values, scale, places, half_up)


@jit
def _round_rows(values: Any, shift: Any, half_up: Any, out: Any, bad: Any) -> None:
    for i in range(len(values)):
        step, value = shift[i], values[i]
        if step > 18 or step < -18:
            bad[i] = True
            out[i] = 0
        elif step > 0:
            den = POW10[step]
            q, r = value // den, value % den
            if r > den - r or (r == den - r and ((q >= 0) if half_up else (q % 2 == 1))):
                q += 1
            out[i] = q
        elif step < 0:
            factor = POW10[-step]
            if abs(value) > LIMIT // factor:
                bad[i] = True
                out[i] = 0
            else:
                out[i] = value * factor
        else:
            out[i] = value


def round_columns(
    values: np.ndarray, scale: np.ndarray, places: np.ndarray, half_up: bool = False
) -> tuple[np.ndarray, np.ndarray]:
    """:func:`round_to_places` over whole columns with numpy."""
    shift = np.asarray(scale - places, np.int64)
    up_factor = POW10[np.clip(-shift, 0, 18)]
    raised, bad = checked_mul(values, up_factor)
    den = POW10[np.clip(shift, 0, 18)]
    q = values // den
    r = values - q * den
    tie_up = (q >= 0) if half_up else (q % 2 == 1)
    q = q + ((r > den - r) | ((r == den - r) & tie_up))
    out = np.where(shift > 0, q, raised)
    return out, bad | (np.abs(shift) > 18)


def ratio(
    num: np.ndarray,
    num_scale: np.ndarray,
    den: np.ndarray,
    den_scale: np.ndarray,
    places: int,
) -> tuple[np.ndarray, np.ndarray]:
    """``(num / 10**num_scale) / (den / 10**den_scale)`` rounded half-even to ``places``, as
    integers at ``places`` (money.divide), by long division so no wide product is formed.
    Compiled when numba is there, else whole-column numpy (:func:`ratio_columns`)."""
    if numba_available():
        num = np.ascontiguousarray(num, np.int64)
        shift = np.ascontiguousarray(
            np.broadcast_to(den_scale + places - num_scale, num.shape), np.int64
        )
        den = np.ascontiguousarray(np.broadcast_to(den, num.shape), np.int64)
        out, bad = np.empty_like(num), np.zeros(len(num), bool)
        _ratio_rows(num, den, shift, out, bad)
        return out, bad
    return ratio_columns(num, num_scale, den, den_scale, places)


@jit
def _ratio_rows(num: Any, den: Any, shift: Any, out: Any, bad: Any) -> None:
    for i in range(len(num)):
        step, d = shift[i], den[i]
        wrong = step < -18
        if step < 0 and not wrong:
            factor = POW10[-step]
            if d != 0 and abs(d) > LIMIT // factor:
                wrong, d = True, 0
            else:
                d = d * factor
        if d <= 0 or d > LIMIT // 10:
            wrong = True
        if wrong:
            d = 1
        a = abs(num[i])
        whole, rest = a // d, a % d
        for _ in range(step):
            rest = rest * 10
            digit = rest // d
            if whole > (LIMIT - digit) // 10:
                wrong = True
                whole = 0
            else:
                whole = whole * 10 + digit
            rest = rest - digit * d
        if rest > d - rest or (rest == d - rest and whole % 2 == 1):
            whole += 1
        out[i] = -whole if num[i] < 0 else whole
        bad[i] = wrong


def ratio_columns(
    num: np.ndarray,
    num_scale: np.ndarray,
    den: np.ndarray,
    den_scale: np.ndarray,
    places: int,
) -> tuple[np.ndarray, np.ndarray]:
    """:func:`ratio` over whole columns with numpy."""
    num = np.asarray(num, np.int64)
    shift = np.asarray(den_scale + places - num_scale, np.int64) + np.zeros(len(num), np.int64)
    den, bad = checked_mul(np.asarray(den, np.int64), POW10[np.clip(-shift, 0, 18)])
    bad |= (den <= 0) | (den > LIMIT // 10) | (shift < -18)
    den = np.where(bad, 1, den)
    a = np.abs(num)
    whole, rest = a // den, a % den
    for step in range(int(shift.max()) if len(shift) else 0):
        active = step < shift
        rest = rest * 10
        digit = rest // den
        grown, over = checked_mul(whole, np.full(len(whole), 10, np.int64))
        grown, over2 = checked_add(grown, digit)
        bad |= active & (over | over2)
        whole = np.where(active, grown, whole)
        rest = np.where(active, rest - digit * den, rest // 10)
    whole = whole + ((rest > den - rest) | ((rest == den - rest) & (whole % 2 == 1)))
    return np.where(num < 0, -whole, whole), bad
