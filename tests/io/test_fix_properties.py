"""FIX 4.4 logs generated at random against a plain model (derived): the fills that stand are the
model's, and every line read is counted exactly once."""

from __future__ import annotations

import tempfile
from decimal import Decimal
from pathlib import Path

from hypothesis import given
from hypothesis import strategies as st

from reconcile.io.readers.sources import balance, read_source
from tests.fixmsg import execution, message

QTY = st.integers(1, 900)
PX = st.decimals(min_value="0.01", max_value="999", places=2, allow_nan=False)


@st.composite
def logs(draw: st.DrawFn) -> tuple[list[str], dict[str, tuple[int, Decimal]]]:
    """Lines of a log and the model: the ExecID of each standing fill -> (quantity, price)."""
    lines: list[str] = []
    live: dict[str, tuple[int, Decimal]] = {}  # original ExecID -> terms
    current: dict[str, str] = {}  # ExecID that may be referred to -> original ExecID
    sent: list[list[tuple[int, str]]] = []
    for n in range(draw(st.integers(1, 30))):
        exec_id, seq = f"X{n}", n + 1
        kind = draw(st.sampled_from(["fill", "fill", "correct", "cancel", "resend", "other"]))
        targets = sorted(r for r, original in current.items() if original in live)
        if kind in ("correct", "cancel") and targets:
            ref = draw(st.sampled_from(targets))
            original = current[ref]
            if kind == "correct":
                qty, px = draw(QTY), draw(PX)
                fields = execution(exec_id, "G", ref=ref, qty=str(qty), px=str(px), seq=seq)
                live[original] = (qty, px)
                current[exec_id] = original
            else:
                fields = execution(exec_id, "H", ref=ref, qty="1", px="1", seq=seq)
                del live[original]
        elif kind == "resend" and sent:
            fields = [(t, str(seq) if t == 34 else v) for t, v in draw(st.sampled_from(sent))]
            fields.append((43, "Y"))
        elif kind == "other":
            fields = execution(exec_id, draw(st.sampled_from(["0", "4", "8"])), seq=seq)
        else:
            qty, px = draw(QTY), draw(PX)
            fields = execution(exec_id, "F", qty=str(qty), px=str(px), seq=seq)
            live[exec_id] = (qty, px)
            current[exec_id] = exec_id
        sent.append(fields)
        lines.append(message(fields, delimiter=draw(st.sampled_from(["\x01", "|"]))))
    return lines, live


@given(logs())
def test_standing_fills_match_the_model_and_every_line_is_counted(
    log: tuple[list[str], dict[str, tuple[int, Decimal]]],
) -> None:
    lines, live = log
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "session.fix"
        path.write_text("\n".join(lines) + "\n", encoding="ascii")
        read = read_source(path, keep_rejects=True)
    assert balance(read.summary) == 0
    assert read.summary["rejected"] == 0
    got = {
        fill_id.rsplit("-", 1)[1]: (int(q), p)
        for fill_id, q, p in zip(
            read.frame["fill_id"], read.frame["quantity"], read.frame["price"], strict=True
        )
    }
    assert got == live
