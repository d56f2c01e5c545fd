"""Charts: SVG that can be inlined, deterministic, with input text escaped and never parsed."""

from __future__ import annotations

import random
import re
import xml.etree.ElementTree as ET
from datetime import timedelta
from decimal import Decimal

import pandas as pd
import pyarrow as pa
import pytest

import reconcile
from reconcile.core.stats import peak_drawdown
from reconcile.io.render import charts
from tests.builders import concat, fills

NAMES = ["<script>alert(1)</script>", "$x^2$ & co", "ALPHA"]


def _book() -> reconcile.Book:
    frames = []
    for n, name in enumerate(NAMES):
        frames.append(
            fills(
                [
                    (f"b{n}", "buy", 1, "100", "2026-10-05T10:00:00Z"),
                    (f"s{n}", "sell", 1, str(95 + 5 * n), "2026-10-06T10:00:00Z"),
                    (f"b{n}x", "buy", 1, "100", "2026-11-05T10:00:00Z", "0.50"),
                    (f"s{n}x", "sell", 1, "103", "2026-11-06T10:00:00Z", "0.50"),
                ],
                instrument=name,
            )
        )
    frames.append(
        fills(
            [("y1", "buy", 10, "1500", "2026-10-05"), ("y2", "sell", 10, "1490", "2026-10-07")],
            instrument="KOMA",
            currency="JPY",
        )
    )
    return reconcile.match(concat(*frames))


def _all_charts(book: reconcile.Book) -> dict[str, str]:
    month = reconcile.stats(book, "month").summary
    return {
        "cumulative": charts.cumulative_pnl(reconcile.stats(book).cumulative),
        "month": charts.pnl_by_month(month),
        "instrument": charts.pnl_by_instrument(reconcile.stats(book, "instrument").summary),
        "fees": charts.fees_by_month(month),
        "holding": charts.holding_time(book.round_trips["holding_time"].tolist()),
    }


def test_every_chart_is_one_well_formed_svg_element_to_inline() -> None:
    for name, svg in _all_charts(_book()).items():
        assert svg.startswith('<svg role="img" '), name
        assert "<?xml" not in svg
        assert "<!DOCTYPE" not in svg
        assert "<metadata" not in svg  # no creator or date
        ET.fromstring(svg)  # parses as XML on its own
        assert len(svg) < 40_000, (name, len(svg))


def test_charts_are_the_same_bytes_every_time() -> None:
    book = _book()
    assert _all_charts(book) == _all_charts(book)


def test_names_from_input_are_escaped_text_and_never_mathtext() -> None:
    svg = charts.pnl_by_instrument(reconcile.stats(_book(), "instrument").summary)
    assert "<script" not in svg
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg
    assert "$x^2$ &amp; co" in svg  # shown as typed: dollars are not math delimiters
    texts = [t.text for t in ET.fromstring(svg).iter("{http://www.w3.org/2000/svg}text")]
    assert "<script>alert(1)</script>" in texts


def test_money_charts_have_one_panel_per_currency() -> None:
    svg = charts.pnl_by_month(reconcile.stats(_book(), "month").summary)
    titles = re.findall(r">(JPY|USD)</text>", svg)
    assert titles == ["JPY", "USD"]


def test_holding_classes_are_exact_and_half_open() -> None:
    # Derived: each class includes its lower bound and excludes its upper one.
    held = [
        timedelta(minutes=4, seconds=59),
        timedelta(minutes=5),
        timedelta(hours=2),
        timedelta(days=1) - timedelta(microseconds=1),
        timedelta(days=7),
        timedelta(days=30),
    ]
    counts = charts.holding_counts([pd.Timedelta(h) for h in held])
    assert counts == [1, 1, 0, 1, 1, 0, 0, 2]
    assert sum(counts) == len(held)


@pytest.mark.parametrize("empty", [True, False])
def test_a_chart_of_one_trade_still_draws(empty: bool) -> None:
    book = reconcile.match(
        fills([("b", "buy", 1, "10", "2026-10-05"), ("s", "sell", 1, "12", "2026-10-06")])
    )
    holding = [] if empty else book.round_trips["holding_time"].tolist()
    svg = charts.holding_time(holding)
    ET.fromstring(svg)


def test_a_long_curve_is_thinned_but_keeps_every_peak_and_trough() -> None:
    # Derived: a seeded random walk of 5,000 closes; thinning to 50 bins keeps at most 200 points,
    # the first and last, the overall high and low, and so the same largest fall.
    rng = random.Random(11)
    steps = [rng.randint(-50, 50) for _ in range(5_000)]
    cumulative = [sum(steps[: n + 1]) for n in range(len(steps))]
    start = pd.Timestamp("2026-10-01", tz="UTC")
    curve = pd.DataFrame(
        {
            "time": [start + pd.Timedelta(minutes=7 * n) for n in range(len(steps))],
            "cumulative_pnl": [Decimal(v) for v in cumulative],
        }
    )
    thinned = charts.thin_curve(curve, bins=50)
    assert len(thinned) <= 200
    kept = thinned["cumulative_pnl"].tolist()
    assert (kept[0], kept[-1]) == (cumulative[0], cumulative[-1])
    assert (max(kept), min(kept)) == (max(cumulative), min(cumulative))
    points = list(enumerate(kept))
    every = [(n, Decimal(v)) for n, v in enumerate(cumulative)]
    assert peak_drawdown(points, -1).depth == peak_drawdown(every, -1).depth
    short = curve.head(100)
    assert charts.thin_curve(short, bins=50) is short


def test_many_instruments_show_the_best_and_worst_twelve() -> None:
    summary = pd.DataFrame(
        {
            "instrument": [f"I{n:02d}" for n in range(40)],
            "currency": ["USD"] * 40,
            "net_pnl": pd.Series(
                [Decimal(n - 20) for n in range(40)], dtype=pd.ArrowDtype(pa.decimal128(4, 0))
            ),
        }
    )
    labels = re.findall(r">(I\d\d)</text>", charts.pnl_by_instrument(summary))
    assert labels == [f"I{n:02d}" for n in [*range(39, 27, -1), *range(11, -1, -1)]]


def test_trades_minutes_apart_get_a_date_axis_without_warnings() -> None:
    # A day trader's morning: round trips closing minutes apart. matplotlib warned (an error
    # here) when one tick cap applied to every date frequency.
    rows = []
    for n in range(4):
        rows += [
            (f"b{n}", "buy", 1, "10", f"2026-11-02T14:0{2 * n}:00Z"),
            (f"s{n}", "sell", 1, "11", f"2026-11-02T14:0{2 * n + 1}:00Z"),
        ]
    statistics = reconcile.stats(reconcile.match(fills(rows)))
    ET.fromstring(charts.cumulative_pnl(statistics.cumulative))
