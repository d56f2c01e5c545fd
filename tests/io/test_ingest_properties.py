"""Properties of ingest (derived): every row read is counted exactly once, and no decimal changes
its digits on the way in, whatever the delimiter, decimal mark, grouping or format."""

from __future__ import annotations

import json
import tempfile
from decimal import Decimal
from pathlib import Path

from hypothesis import given
from hypothesis import strategies as st

from reconcile.io.readers.sources import balance, read_source

QUANTITIES = st.decimals(min_value="0.0001", max_value="9999999", places=4, allow_nan=False)
PRICES = st.decimals(min_value="-99999", max_value="9999999", places=6, allow_nan=False)
COMMISSIONS = st.decimals(min_value=0, max_value="999", places=2, allow_nan=False)
BREAKS = {
    "side": "HOLD",
    "quantity": "-1",
    "time": "31.02.2026 10:00",
    "currency": "ZZZ",
}


@st.composite
def notations(draw: st.DrawFn) -> tuple[str, str, str]:
    """(delimiter, decimal mark, thousands separator) that can live together."""
    decimal_mark = draw(st.sampled_from([".", ","]))
    thousands = draw(st.sampled_from(["", " ", "'", "." if decimal_mark == "," else ","]))
    delimiter = draw(st.sampled_from([";", "\t", "|"] + ([","] if decimal_mark == "." else [])))
    if delimiter == thousands:
        thousands = ""
    return delimiter, decimal_mark, thousands


def written(value: Decimal, mark: str, thousands: str) -> str:
    sign, digits = ("-", -value) if value < 0 else ("", value)
    whole, _, fraction = format(digits, "f").partition(".")
    grouped = f"{int(whole):,}".replace(",", thousands)
    return sign + grouped + (mark + fraction if fraction else "")


@st.composite
def sources(draw: st.DrawFn) -> tuple[str, str, list[dict[str, Decimal]], int]:
    delimiter, mark, thousands = draw(notations())
    count = draw(st.integers(1, 25))
    lines = [delimiter.join(["Ref", "Side", "Qty", "Px", "When", "Ccy", "Comm"])]
    good: list[dict[str, Decimal]] = []
    broken = 0
    for n in range(count):
        values = {"q": draw(QUANTITIES), "p": draw(PRICES), "c": draw(COMMISSIONS)}
        cells = {
            "side": draw(st.sampled_from(["BOT", "SLD"])),
            "quantity": written(values["q"], mark, thousands),
            "time": f"02.11.2026 10:{n % 60:02d}",
            "currency": "USD",
        }
        if draw(st.booleans()) and draw(st.booleans()):
            column = draw(st.sampled_from(sorted(BREAKS)))
            cells[column] = BREAKS[column]
            broken += 1
        else:
            good.append(values)
        lines.append(
            delimiter.join(
                [
                    f"T{n}",
                    cells["side"],
                    cells["quantity"],
                    written(values["p"], mark, thousands),
                    cells["time"],
                    cells["currency"],
                    written(values["c"], mark, thousands),
                ]
            )
        )
    profile = f"""
[source]
delimiter = {json.dumps(delimiter)}
[columns]
fill_id = "Ref"
side = "Side"
quantity = "Qty"
price = "Px"
time = "When"
currency = "Ccy"
commission = "Comm"
[constants]
account = "DESK"
instrument = "INS"
[values.side]
BOT = "buy"
SLD = "sell"
[numbers]
decimal = {json.dumps(mark)}
thousands = {json.dumps(thousands)}
[time]
format = "%d.%m.%Y %H:%M"
timezone = "UTC"
"""
    return "\n".join(lines) + "\n", profile, good, broken


@given(sources())
def test_rows_read_equal_accepted_plus_rejected_and_digits_survive(
    source: tuple[str, str, list[dict[str, Decimal]], int],
) -> None:
    text, profile, good, broken = source
    with tempfile.TemporaryDirectory() as folder:
        data, config = Path(folder) / "fills.txt", Path(folder) / "p.toml"
        data.write_text(text, encoding="utf-8")
        config.write_text(profile, encoding="utf-8")
        read = read_source(data, profile=config, input_format="csv", keep_rejects=True)
    assert balance(read.summary) == 0
    assert (read.summary["accepted"], read.summary["rejected"]) == (len(good), broken)
    assert read.frame["quantity"].tolist() == [v["q"] for v in good]
    assert read.frame["price"].tolist() == [v["p"] for v in good]
    assert read.frame["commission"].tolist() == [v["c"] for v in good]


@given(st.lists(st.tuples(QUANTITIES, PRICES), min_size=1, max_size=20))
def test_json_numbers_keep_their_digits(rows: list[tuple[Decimal, Decimal]]) -> None:
    lines = [
        f'{{"fill_id": "f{n}", "account": "A", "instrument": "X", "side": "buy", '
        f'"quantity": {q}, "price": {p}, "time": "2026-11-02T10:00:00Z", "currency": "USD"}}'
        for n, (q, p) in enumerate(rows)
    ]
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "fills.jsonl"
        path.write_text("\n".join(lines), encoding="utf-8")
        read = read_source(path, keep_rejects=True)
    assert read.frame["quantity"].tolist() == [q for q, _ in rows]
    assert read.frame["price"].tolist() == [p for _, p in rows]
    assert [format(v, "f") for v in read.frame["price"]] == [
        _at_scale(p, read.frame["price"]) for _, p in rows
    ]


def _at_scale(value: Decimal, column: object) -> str:
    scale = column.dtype.pyarrow_dtype.scale  # type: ignore[attr-defined]
    return format(value.quantize(Decimal(1).scaleb(-scale)), "f")
