"""The matching kernel: every key's replay in scaled 64-bit integers, exactly as the reference does.

Inputs are contiguous arrays sorted by key, then time, then input order, with per-key offsets; each
decimal is an integer at a per-key scale (quantity ``qs``, price ``ps``, multiplier ``ms`` and money
``ws``, where ``ws >= qs + ps + ms`` and ``ws`` is at least the currency's minor unit and every
charge's places). Each rule of :mod:`reconcile.core.engine` is repeated here step by step, in the
same order: the largest-remainder split of a fill's commission over [closed pieces..., opened
remainder], the remaining-balance share of a lot's charges on a partial close, the average basis
relieved in minor units, financing before fills at equal times, totals rounded once.

Every product and sum is checked against the int64 range (compiled, by the CPU's overflow flag:
:func:`reconcile.fast._jit.mul_overflows`). The flag is a plain local that each step takes and
returns, and no helper called at every fill takes an array, so numba updates no reference counts
in the loop. A key whose numbers do not fit is left out of the output (its rows are rolled back)
and flagged, so the caller replays it with the reference engine: the kernel never wraps. The
functions run compiled by numba when it is installed and as plain Python otherwise; both give the
same integers.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from reconcile.fast._jit import add_overflows, inline, jit, mul_overflows

POW10 = np.array([10**k for k in range(19)], dtype=np.int64)

FIFO, LIFO, HIFO, AVERAGE = 0, 1, 2, 3
METHOD_CODES = {"fifo": FIFO, "lifo": LIFO, "hifo": HIFO, "average": AVERAGE}

#: Decimal places of averaged prices (engine.AVERAGE_PLACES).
AVERAGE_PLACES = 10

OK, OVERFLOW = 0, 1


@inline
def _mul(a: Any, b: Any, bad: Any) -> Any:
    """``(a * b, bad)``, or ``(0, True)`` when the product leaves the int64 range.

    Every checked step takes and returns the key's overflow flag, a plain local of the caller
    (an array flag would be a reference-counted object passed to every step)."""
    product, overflow = mul_overflows(a, b)
    if overflow:
        return 0, True
    return product, bad


@inline
def _add(a: Any, b: Any, bad: Any) -> Any:
    """``(a + b, bad)``, or ``(0, True)`` when the sum leaves the int64 range."""
    total, overflow = add_overflows(a, b)
    if overflow:
        return 0, True
    return total, bad


@inline
def _value(quantity: Any, price: Any, mult: Any, factor: Any, bad: Any) -> Any:
    """quantity x price x multiplier, at the money scale (``factor`` is 10**value_shift)."""
    value, bad = _mul(quantity, price, bad)
    value, bad = _mul(value, mult, bad)
    return _mul(value, factor, bad)


@inline
def _pow10(places: Any, bad: Any) -> Any:
    if places < 0 or places > 18:
        return 1, True
    return POW10[places], bad


@inline
def _places(value: Any, scale: Any) -> Any:
    """Significant decimal places of ``value / 10**scale`` (money.significant_places)."""
    places = scale
    while places > 0 and value % 10 == 0:
        value //= 10
        places -= 1
    return places


@inline
def _charge_places(amount: Any, scale: Any, minor: Any, bad: Any) -> Any:
    """max(minor unit, the amount's significant places), as money.charge_places."""
    factor, bad = _pow10(scale - minor, bad)
    if amount % factor == 0:
        return minor, bad
    return max(minor, _places(amount, scale)), bad


@inline
def _round_div(num: Any, den: Any, half_up: Any) -> Any:
    """``num / den`` (den > 0) rounded to an integer, half-even or half away from zero."""
    q = num // den
    r = num - q * den
    if r > den - r or (r == den - r and ((q >= 0) if half_up else (q % 2 == 1))):
        q += 1
    return q


@inline
def _prorata(balance: Any, part: Any, whole: Any, scale: Any, places: Any, bad: Any) -> Any:
    """money.prorata at ``scale``: the share of ``balance`` that leaves with ``part`` of ``whole``,
    rounded half-even to ``places``; the whole takes the balance itself."""
    if part == whole:
        return balance, bad
    factor, bad = _pow10(scale - places, bad)
    den, bad = _mul(whole, factor, bad)
    if den <= 0:
        return 0, bad
    product, bad = _mul(balance, part, bad)
    return _mul(_round_div(product, den, False), factor, bad)


@inline
def _charge_prorata(balance: Any, part: Any, whole: Any, scale: Any, minor: Any, bad: Any) -> Any:
    """The share of a lot's unrealized charge, at the charge's own places (money.charge_places)."""
    if part == whole or balance == 0:
        return balance, bad
    places, bad = _charge_places(balance, scale, minor, bad)
    return _prorata(balance, part, whole, scale, places, bad)


@inline
def _one_share(amount: Any, count: Any, out: Any) -> None:
    """money.allocate where there is nothing to split: the first weight takes the whole amount."""
    out[0] = amount
    for i in range(1, count):
        out[i] = 0


@inline
def _share_of(units: Any, weight: Any, total: Any, bad: Any) -> Any:
    """``divmod(units * weight, total)`` for ``0 <= weight <= total``, without forming the
    product: with ``units = q * total + r`` it is ``q * weight`` (at most ``units``) plus
    ``divmod(r * weight, total)``, which overflows only when ``total`` passes about 3e9."""
    whole, part = units // total, units % total
    product, bad = _mul(part, weight, bad)
    return whole * weight + product // total, product % total, bad


@inline
def _split_in_two(amount: Any, first: Any, second: Any, scale: Any, minor: Any, bad: Any) -> Any:
    """:func:`_allocate` over two weights, on values rather than arrays: ``(share of the first,
    share of the second, flag)``. The common split (a piece closed and the rest opened, or two
    pieces), without the call and the arrays' reference counting."""
    places, bad = _charge_places(amount, scale, minor, bad)
    factor, bad = _pow10(scale - places, bad)
    units = abs(amount) // factor
    total, bad = _add(first, second, bad)
    if total <= 0:
        return 0, 0, True
    floor_first, rem_first, bad = _share_of(units, first, total, bad)
    floor_second, rem_second, bad = _share_of(units, second, total, bad)
    # At most one unit is left; it goes to the larger remainder, a tie to the first.
    if floor_first + floor_second < units:
        if rem_first >= rem_second:
            floor_first += 1
        else:
            floor_second += 1
    sign = -1 if amount < 0 else 1
    share_first, bad = _mul(sign * floor_first, factor, bad)
    share_second, bad = _mul(sign * floor_second, factor, bad)
    return share_first, share_second, bad


@jit
def _to_largest_remainders(left: Any, count: Any, out: Any, rem: Any) -> None:
    """One unit more to each of the ``left`` largest remainders, by a stable sort (many units)."""
    order = np.argsort(-rem[:count], kind="mergesort")
    for n in range(left):
        out[order[n]] += 1


@jit
def _allocate(
    amount: Any, weights: Any, count: Any, scale: Any, minor: Any, out: Any, rem: Any, bad: Any
) -> Any:
    """money.allocate of ``amount`` over ``weights[:count]`` at the charge's places, into ``out``;
    returns the overflow flag.

    Units left after flooring go to the largest remainders; equal remainders to the earlier weight.
    A called function, not inlined: inlining a helper that takes arrays costs two atomic
    reference-count updates per array at every call.
    """
    if count == 1 or amount == 0:
        _one_share(amount, count, out)
        return bad
    places, bad = _charge_places(amount, scale, minor, bad)
    factor, bad = _pow10(scale - places, bad)
    units = abs(amount) // factor
    sign = -1 if amount < 0 else 1
    total = 0
    for i in range(count):
        total, bad = _add(total, weights[i], bad)
    if total <= 0:
        return True
    left = units
    for i in range(count):
        if units == 0:
            out[i] = 0
            rem[i] = 0
            continue
        floor, rem[i], bad = _share_of(units, weights[i], total, bad)
        out[i] = floor
        left -= floor
    if left > 0:
        if left * count <= 4096:
            for _ in range(left):
                best = -1
                for i in range(count):
                    if rem[i] >= 0 and (best < 0 or rem[i] > rem[best]):
                        best = i
                out[best] += 1
                rem[best] = -1
        else:
            _to_largest_remainders(left, count, out, rem)
    for i in range(count):
        out[i], bad = _mul(sign * out[i], factor, bad)
    return bad


@inline
def _hifo_before(price_a: Any, seq_a: Any, price_b: Any, seq_b: Any, direction: Any) -> Any:
    """Whether lot a closes before lot b under hifo: the least gain first, ties oldest.

    Takes the lots' values, not the arrays: an inlined helper taking arrays would update their
    reference counts at every comparison."""
    pa_, pb = direction * price_a, direction * price_b
    return pa_ > pb or (pa_ == pb and seq_a < seq_b)


@jit
def _heap_push(heap: Any, size: Any, slot: Any, price: Any, seq: Any, direction: Any) -> Any:
    """Add ``slot`` to the binary heap ``heap[:size]``; returns the new size."""
    i = size
    parent = (i - 1) // 2
    while i > 0 and _hifo_before(
        price[slot], seq[slot], price[heap[parent]], seq[heap[parent]], direction
    ):
        heap[i] = heap[parent]
        i = parent
        parent = (i - 1) // 2
    heap[i] = slot
    return size + 1


@jit
def _heap_pop(heap: Any, size: Any, price: Any, seq: Any, direction: Any) -> Any:
    """Drop the first lot of the heap ``heap[:size]``; returns the new size."""
    size -= 1
    last = heap[size]
    i, child = 0, 1
    moving = True  # a flag, not a break: numba then drops the arrays' reference counting
    while moving and child < size:
        first = heap[child]
        if child + 1 < size:
            other = heap[child + 1]
            if _hifo_before(price[other], seq[other], price[first], seq[first], direction):
                child, first = child + 1, other
        moving = _hifo_before(price[first], seq[first], price[last], seq[last], direction)
        if moving:
            heap[i] = first
            i, child = child, 2 * child + 1
    heap[i] = last
    return size


@jit
def replay_keys(
    method: Any,
    at_close: Any,
    k_fill: Any,
    k_fin: Any,
    k_open: Any,
    k_minor: Any,
    k_qs: Any,
    k_ps: Any,
    k_ms: Any,
    k_ws: Any,
    k_mult: Any,
    k_status: Any,
    f_time: Any,
    f_sign: Any,
    f_qty: Any,
    f_price: Any,
    f_comm: Any,
    f_row: Any,
    e_time: Any,
    e_amount: Any,
    e_row: Any,
    o_time: Any,
    o_dir: Any,
    o_qty: Any,
    o_price: Any,
    o_cost: Any,
    o_comm: Any,
    o_fin: Any,
    o_row: Any,
    n_fill_rows: Any,
    p_int: Any,
    p_time: Any,
    t_int: Any,
    t_time: Any,
    l_int: Any,
    l_time: Any,
    k_out: Any,
    u_row: Any,
    counts: Any,
) -> None:
    """Replay every key; write pieces, trips, open lots, positions and unattributed rows.

    ``k_fill``/``k_fin``/``k_open`` hold per-key offsets (K + 1 entries) into the sorted fills,
    financing and opening lots. Output rows go into the preallocated 2-D integer arrays (columns
    as :mod:`reconcile.fast.tables` reads them); ``counts`` receives the row count of each table.
    ``k_status`` is OK or OVERFLOW per key on the way in (keys already known not to fit are
    skipped) and on the way out.
    """
    keys = len(k_minor)
    cap = 1
    for k in range(keys):
        cap = max(cap, k_fill[k + 1] - k_fill[k] + k_open[k + 1] - k_open[k] + 1)
    lot_src = np.zeros(cap, dtype=np.int64)
    lot_time = np.zeros(cap, dtype=np.int64)
    lot_qty = np.zeros(cap, dtype=np.int64)
    lot_price = np.zeros(cap, dtype=np.int64)
    lot_cost = np.zeros(cap, dtype=np.int64)
    lot_comm = np.zeros(cap, dtype=np.int64)
    lot_fin = np.zeros(cap, dtype=np.int64)
    lot_seq = np.zeros(cap, dtype=np.int64)
    alive = np.zeros(cap, dtype=np.bool_)
    heap = np.zeros(cap, dtype=np.int64)
    closing = np.zeros(cap, dtype=np.int64)
    takes = np.zeros(cap, dtype=np.int64)
    shares = np.zeros(cap, dtype=np.int64)
    rem = np.zeros(cap, dtype=np.int64)
    n_p, n_t, n_l, n_u = 0, 0, 0, 0
    for k in range(keys):
        if k_status[k] != OK:
            continue
        start_p, start_t, start_l, start_u = n_p, n_t, n_l, n_u
        bad = False
        minor, qs, ps, ms, ws = k_minor[k], k_qs[k], k_ps[k], k_ms[k], k_ws[k]
        mult = k_mult[k]
        value_factor, bad = _pow10(ws - (qs + ps + ms), bad)
        head, tail, heap_size, seq = 0, 0, 0, 0
        position = 0  # absolute quantity open
        direction = 0
        trip_open = False
        trips_local = 0
        t_dir, t_open_time, t_fills = 0, 0, 0
        t_maxq, t_entry_q, t_entry_v, t_exit_q, t_exit_v = 0, 0, 0, 0, 0
        t_gross, t_comm, t_fin = 0, 0, 0
        sum_gross, sum_charges, sum_fin, paid, booked, unattributed = 0, 0, 0, 0, 0, 0
        # Carried-in lots first, in (open_time, input order).
        for o in range(k_open[k], k_open[k + 1]):
            if direction == 0:
                direction = o_dir[o]
                trip_open = True
                t_dir, t_open_time, t_fills = direction, o_time[o], 0
                t_maxq, t_entry_q, t_entry_v, t_exit_q, t_exit_v = 0, 0, 0, 0, 0
                t_gross, t_comm, t_fin = 0, 0, 0
            t_entry_q, bad = _add(t_entry_q, o_qty[o], bad)
            entry_value, bad = _mul(o_qty[o], o_price[o], bad)
            t_entry_v, bad = _add(t_entry_v, entry_value, bad)
            t_comm, bad = _add(t_comm, o_comm[o], bad)
            t_fin, bad = _add(t_fin, o_fin[o], bad)
            seq += 1
            if method == AVERAGE and tail > 0:
                lot_qty[0], bad = _add(lot_qty[0], o_qty[o], bad)
                lot_cost[0], bad = _add(lot_cost[0], o_cost[o], bad)
                lot_comm[0], bad = _add(lot_comm[0], o_comm[o], bad)
                lot_fin[0], bad = _add(lot_fin[0], o_fin[o], bad)
            else:
                slot = tail
                tail += 1
                lot_src[slot] = n_fill_rows + o_row[o]
                lot_time[slot] = o_time[o]
                lot_qty[slot] = o_qty[o]
                lot_price[slot] = o_price[o]
                lot_cost[slot] = o_cost[o]
                lot_comm[slot] = o_comm[o]
                lot_fin[slot] = o_fin[o]
                lot_seq[slot] = seq
                alive[slot] = True
                if method == HIFO:
                    heap_size = _heap_push(heap, heap_size, slot, lot_price, lot_seq, direction)
            position, bad = _add(position, o_qty[o], bad)
            t_maxq = max(t_maxq, position)
        i, j = k_fill[k], k_fin[k]
        while (i < k_fill[k + 1] or j < k_fin[k + 1]) and not bad:
            if j < k_fin[k + 1] and (i >= k_fill[k + 1] or e_time[j] <= f_time[i]):
                amount = e_amount[j]
                booked, bad = _add(booked, amount, bad)
                if position == 0:
                    u_row[n_u] = e_row[j]
                    n_u += 1
                    unattributed, bad = _add(unattributed, amount, bad)
                else:
                    count = 0
                    for s in range(head, tail):
                        if alive[s]:
                            takes[count] = lot_qty[s]
                            closing[count] = s
                            count += 1
                    bad = _allocate(amount, takes, count, ws, minor, shares, rem, bad)
                    for n in range(count):
                        lot_fin[closing[n]], bad = _add(lot_fin[closing[n]], shares[n], bad)
                    t_fin, bad = _add(t_fin, amount, bad)
                j += 1
                continue
            sign, quantity, price, commission = f_sign[i], f_qty[i], f_price[i], f_comm[i]
            left = quantity
            count = 0
            if direction != 0 and sign != direction:
                while left > 0 and head < tail:
                    if method == FIFO:
                        s = head
                    elif method == HIFO:
                        s = heap[0]
                    elif method == LIFO:
                        s = tail - 1
                    else:
                        s = 0
                    take = min(lot_qty[s], left)
                    closing[count] = s
                    takes[count] = take
                    count += 1
                    left -= take
                    if take < lot_qty[s]:
                        break
                    # A lot about to close fully leaves the closing order now; the next one follows.
                    if method == FIFO:
                        head = s + 1
                    elif method == LIFO:
                        tail -= 1
                    elif method == HIFO:
                        heap_size = _heap_pop(heap, heap_size, lot_price, lot_seq, direction)
                        if heap_size == 0:
                            head = tail
                    else:
                        head = tail
            weights = count
            if left > 0:
                takes[count] = left
                weights += 1
            if weights == 1 or commission == 0:
                _one_share(commission, weights, shares)
            elif weights == 2:
                shares[0], shares[1], bad = _split_in_two(
                    commission, takes[0], takes[1], ws, minor, bad
                )
            else:
                bad = _allocate(commission, takes, weights, ws, minor, shares, rem, bad)
            paid, bad = _add(paid, commission, bad)
            if count > 0:
                t_fills += 1
            for n in range(count):
                s, take, close_comm = closing[n], takes[n], shares[n]
                whole = lot_qty[s]
                if method == AVERAGE:
                    open_price = lot_cost[s]  # the pool's average is cost / (whole x multiplier)
                    relieved, bad = _prorata(lot_cost[s], take, whole, ws, minor, bad)
                else:
                    open_price = lot_price[s]
                    if take == whole:
                        relieved = lot_cost[s]
                    else:
                        relieved, bad = _value(take, lot_price[s], mult, value_factor, bad)
                proceeds, bad = _value(take, price, mult, value_factor, bad)
                gross, bad = _add(proceeds, -relieved, bad)
                gross *= direction
                open_comm, bad = _charge_prorata(lot_comm[s], take, whole, ws, minor, bad)
                fin, bad = _charge_prorata(lot_fin[s], take, whole, ws, minor, bad)
                reported_comm = close_comm
                if at_close:
                    reported_comm, bad = _add(close_comm, open_comm, bad)
                p_int[n_p, 0] = k
                p_int[n_p, 1] = lot_src[s]
                p_int[n_p, 2] = f_row[i]
                p_int[n_p, 3] = take
                p_int[n_p, 4] = open_price
                p_int[n_p, 5] = gross
                p_int[n_p, 6] = whole
                p_int[n_p, 7] = reported_comm
                p_int[n_p, 8] = fin if at_close else 0
                p_int[n_p, 10] = trips_local
                p_int[n_p, 11] = direction
                p_time[n_p, 0] = lot_time[s]
                p_time[n_p, 1] = f_time[i]
                n_p += 1
                t_exit_q, bad = _add(t_exit_q, take, bad)
                exit_value, bad = _mul(take, price, bad)
                t_exit_v, bad = _add(t_exit_v, exit_value, bad)
                t_gross, bad = _add(t_gross, gross, bad)
                t_comm, bad = _add(t_comm, close_comm, bad)
                sum_gross, bad = _add(sum_gross, gross, bad)
                charges, bad = _add(open_comm, close_comm, bad)
                sum_charges, bad = _add(sum_charges, charges, bad)
                sum_fin, bad = _add(sum_fin, fin, bad)
                lot_qty[s] = whole - take
                lot_cost[s], bad = _add(lot_cost[s], -relieved, bad)
                lot_comm[s], bad = _add(lot_comm[s], -open_comm, bad)
                lot_fin[s], bad = _add(lot_fin[s], -fin, bad)
                position -= take
                if lot_qty[s] == 0:
                    alive[s] = False
            if count > 0 and position == 0:
                t_int[n_t, 0] = k
                t_int[n_t, 1] = t_dir
                t_int[n_t, 2] = t_maxq
                t_int[n_t, 3] = t_entry_v
                t_int[n_t, 4] = t_exit_v
                t_int[n_t, 5] = t_fills
                t_int[n_t, 6] = t_gross
                t_int[n_t, 7] = t_comm
                t_int[n_t, 8] = t_fin
                t_int[n_t, 9] = t_entry_q
                t_int[n_t, 10] = trips_local
                t_int[n_t, 11] = t_exit_q
                t_time[n_t, 0] = t_open_time
                t_time[n_t, 1] = f_time[i]
                n_t += 1
                trips_local += 1
                trip_open = False
                direction = 0
                head, tail, heap_size = 0, 0, 0
            if left > 0:
                if direction == 0:
                    direction = sign
                    trip_open = True
                    t_dir, t_open_time, t_fills = sign, f_time[i], 0
                    t_maxq, t_entry_q, t_entry_v, t_exit_q, t_exit_v = 0, 0, 0, 0, 0
                    t_gross, t_comm, t_fin = 0, 0, 0
                open_comm = shares[weights - 1]
                t_fills += 1
                t_entry_q, bad = _add(t_entry_q, left, bad)
                entry_value, bad = _mul(left, price, bad)
                t_entry_v, bad = _add(t_entry_v, entry_value, bad)
                t_comm, bad = _add(t_comm, open_comm, bad)
                cost, bad = _value(left, price, mult, value_factor, bad)
                seq += 1
                if method == AVERAGE and tail > 0:
                    lot_qty[0], bad = _add(lot_qty[0], left, bad)
                    lot_cost[0], bad = _add(lot_cost[0], cost, bad)
                    lot_comm[0], bad = _add(lot_comm[0], open_comm, bad)
                else:
                    if method == AVERAGE:
                        head = 0
                    slot = tail
                    tail += 1
                    lot_src[slot] = f_row[i]
                    lot_time[slot] = f_time[i]
                    lot_qty[slot] = left
                    lot_price[slot] = price
                    lot_cost[slot] = cost
                    lot_comm[slot] = open_comm
                    lot_fin[slot] = 0
                    lot_seq[slot] = seq
                    alive[slot] = True
                    if method == HIFO:
                        heap_size = _heap_push(heap, heap_size, slot, lot_price, lot_seq, direction)
                position, bad = _add(position, left, bad)
                t_maxq = max(t_maxq, position)
            i += 1
        # What is still open, then the key's position.
        cost_open, lots_open = 0, 0
        for s in range(head, tail):
            if not alive[s]:
                continue
            lots_open += 1
            cost_open, bad = _add(cost_open, lot_cost[s], bad)
            l_int[n_l, 0] = k
            l_int[n_l, 1] = lot_src[s]
            l_int[n_l, 2] = lot_qty[s]
            l_int[n_l, 3] = lot_cost[s] if method == AVERAGE else lot_price[s]
            l_int[n_l, 4] = lot_comm[s] if at_close else 0
            l_int[n_l, 5] = lot_fin[s] if at_close else 0
            l_int[n_l, 6] = lot_cost[s]
            l_int[n_l, 7] = trips_local
            l_int[n_l, 8] = direction
            l_time[n_l] = lot_time[s]
            n_l += 1
        if at_close:
            commission_total = sum_charges
            financing_total, bad = _add(sum_fin, unattributed, bad)
        else:
            commission_total, financing_total = paid, booked
        k_out[k, 0] = position * direction
        k_out[k, 1] = cost_open
        k_out[k, 2] = position
        k_out[k, 3] = sum_gross
        k_out[k, 4] = commission_total
        k_out[k, 5] = financing_total
        k_out[k, 7] = lots_open
        k_out[k, 8] = trips_local + (1 if trip_open else 0)
        if bad:
            k_status[k] = OVERFLOW
            n_p, n_t, n_l, n_u = start_p, start_t, start_l, start_u
    counts[0], counts[1], counts[2], counts[3] = n_p, n_t, n_l, n_u


@jit
def group_by_key(keys: Any, key_count: Any) -> Any:
    """A stable counting sort: the order that groups rows by key, keeping their order within a
    key (linear time, for feeds already in time order)."""
    starts = np.zeros(key_count + 1, dtype=np.int64)
    for n in range(len(keys)):
        starts[keys[n] + 1] += 1
    for k in range(key_count):
        starts[k + 1] += starts[k]
    order = np.empty(len(keys), dtype=np.int64)
    for n in range(len(keys)):
        k = keys[n]
        order[starts[k]] = n
        starts[k] += 1
    return order
