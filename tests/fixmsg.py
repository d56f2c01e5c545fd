"""FIX tag=value messages for tests, framed by the specification's rule (computed here, not by us).

FIX 4.4 specification, Volume 2, "Message Format" and "CheckSum calculation" (the same rule in
FIX 4.2): BodyLength(9) counts the bytes after the delimiter that ends the 9= field, up to and
including the delimiter before 10=; CheckSum(10) is the sum of every byte from ``8=`` up to and
including that delimiter, modulo 256, written as three digits.
"""

from __future__ import annotations

from collections.abc import Sequence

SOH = "\x01"


def message(
    fields: Sequence[tuple[int, str]],
    *,
    version: str = "FIX.4.4",
    delimiter: str = SOH,
    body_length: int | None = None,
    checksum: str | None = None,
) -> str:
    """A whole message from its body fields (35= first), with 8, 9 and 10 computed."""
    body = "".join(f"{tag}={value}{SOH}" for tag, value in fields)
    length = len(body.encode("ascii")) if body_length is None else body_length
    head = f"8={version}{SOH}9={length}{SOH}"
    total = sum((head + body).encode("ascii")) % 256
    text = f"{head}{body}10={checksum if checksum is not None else f'{total:03d}'}{SOH}"
    return text.replace(SOH, delimiter)


def execution(
    exec_id: str,
    exec_type: str,
    *,
    side: str = "1",
    qty: str = "0",
    px: str = "0",
    time: str = "20261102-14:30:00.000",
    symbol: str = "KSTL",
    account: str = "DESK7",
    currency: str = "USD",
    seq: int = 1,
    ref: str | None = None,
    extra: Sequence[tuple[int, str]] = (),
    legacy_trans: str | None = None,
) -> list[tuple[int, str]]:
    """ExecutionReport (35=8) body fields; ``legacy_trans`` sets ExecTransType(20) for FIX 4.2."""
    fields: list[tuple[int, str]] = [
        (35, "8"),
        (49, "BRKR"),
        (56, "LMC"),
        (34, str(seq)),
        (52, time),
        (1, account),
        (6, px),
        (11, f"C{exec_id}"),
        (14, qty),
        (15, currency),
        (17, exec_id),
    ]
    if ref is not None:
        fields.append((19, ref))
    if legacy_trans is not None:
        fields.append((20, legacy_trans))
    fields += [
        (31, px),
        (32, qty),
        (37, f"O{exec_id}"),
        (39, "1"),
        (54, side),
        (55, symbol),
        (60, time),
        (150, exec_type),
        (151, "0"),
        *extra,
    ]
    return fields
