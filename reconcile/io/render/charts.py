"""Charts for the report, drawn with matplotlib as SVG markup to inline in the page.

Floats appear here and only here, and only to place marks: a decimal becomes a float to find its
pixel, never to be printed. The one figure a chart prints (the maximum drawdown) is exact text
handed in by the caller. The output is deterministic (fixed ids, no date) and small (text stays
text, styled by the page); text in it is escaped by matplotlib's SVG writer, and mathtext is off so
a ``$`` in an instrument name is just a character.

Amounts are never added across currencies: every money chart has one panel per currency.
"""

from __future__ import annotations

import io
import re
from collections.abc import Iterable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from decimal import Decimal
from typing import Any, TypeVar

import matplotlib
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.dates import DAILY, MONTHLY, YEARLY, AutoDateLocator, ConciseDateFormatter
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, MaxNLocator
from matplotlib.typing import RcKeyType

T = TypeVar("T")

INK = "#1f2933"
MUTED = "#616e7c"
RULE = "#d9dee3"
LINE = "#33566f"
GAIN = "#4f8a6c"
LOSS = "#b4544f"
SHADE = "#e8b4b1"
FINANCING = "#c89b4a"

WIDTH = 9.5  # inches; the page scales the SVG down to its column
PANEL_HEIGHT = 2.1
LEGEND_ROOM = 0.35  # inches above the panels for a legend
#: Fewest category slots a bar panel spans, so two months do not make two slabs.
MIN_SLOTS = 6
#: Time bins of a cumulative panel: more points than this many bins cannot be told apart.
CURVE_BINS = 150
#: Instruments shown at each end (best and worst) when a currency has more than twice as many.
INSTRUMENTS_EACH_END = 12

STYLE: dict[RcKeyType, Any] = {
    "svg.hashsalt": "reconcile",
    "svg.fonttype": "none",
    "text.parse_math": False,
    "font.family": "sans-serif",
    "font.size": 9,
    "axes.edgecolor": RULE,
    "axes.labelcolor": MUTED,
    "axes.titlesize": 9,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlecolor": INK,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.grid.axis": "y",
    "axes.axisbelow": True,
    "grid.color": "#eceff2",
    "grid.linewidth": 0.7,
    "xtick.color": MUTED,
    "ytick.color": MUTED,
    "xtick.major.size": 0,
    "ytick.major.size": 0,
    "legend.frameon": False,
    "legend.fontsize": 8,
    "figure.dpi": 72,
}

#: Holding-time classes of the distribution chart: (label, upper bound exclusive).
HOLDING_BINS: tuple[tuple[str, pd.Timedelta | None], ...] = (
    ("< 5 min", pd.Timedelta(minutes=5)),
    ("5-30 min", pd.Timedelta(minutes=30)),
    ("30 min-2 h", pd.Timedelta(hours=2)),
    ("2-8 h", pd.Timedelta(hours=8)),
    ("8 h-1 d", pd.Timedelta(days=1)),
    ("1-3 d", pd.Timedelta(days=3)),
    ("3-7 d", pd.Timedelta(days=7)),
    ("7 d or more", None),
)


@dataclass(frozen=True)
class DrawdownMark:
    """The maximum drawdown of one currency: where it started and bottomed, and its exact text."""

    start: pd.Timestamp | None
    trough: pd.Timestamp | None
    text: str


def cumulative_pnl(curve: pd.DataFrame, marks: Mapping[str, DrawdownMark] | None = None) -> str:
    """Cumulative net P&L per currency as a step line, its falls from the peak shaded.

    ``curve`` is a ``cumulative_pnl`` table (currency, time, cumulative_pnl, peak_pnl); ``marks``
    give each currency's maximum drawdown, drawn as two dots and labelled with its exact text.
    """
    currencies = sorted(set(curve["currency"]))
    with _figure(len(currencies)) as (figure, panels):
        for axes, code in zip(panels, currencies, strict=True):
            rows = thin_curve(curve[curve["currency"] == code])
            times = _instants(rows["time"])
            value = _floats(rows["cumulative_pnl"])
            peak = _floats(rows["peak_pnl"])
            axes.fill_between(
                times, value, peak, step="post", color=SHADE, alpha=0.7, lw=0, label="drawdown"
            )
            axes.step(times, value, where="post", color=LINE, lw=1.4, label="cumulative net P&L")
            axes.axhline(0, color=MUTED, lw=0.6)
            _money_axis(axes, code)
            _date_axis(axes)
            if marks and code in marks:
                _mark(axes, rows, code, marks[code])
        _legend(figure, panels[0])
        return _svg(figure)


def thin_curve(rows: pd.DataFrame, bins: int = CURVE_BINS) -> pd.DataFrame:
    """At most four points per time bin: its first, last, lowest and highest cumulative value.

    Every peak and trough stays (the drawdown marks sit on them) and the drawn envelope is the
    same, but a long history no longer makes a chart of hundreds of kilobytes.
    """
    if len(rows) <= 4 * bins:
        return rows
    times = rows["time"].tolist()
    values = rows["cumulative_pnl"].tolist()
    start, span = times[0], (times[-1] - times[0]) or pd.Timedelta(1)
    keep: set[int] = set()
    members: dict[int, list[int]] = {}
    for index, moment in enumerate(times):
        members.setdefault(min(bins - 1, (moment - start) * bins // span), []).append(index)
    for indices in members.values():
        keep |= {
            indices[0],
            indices[-1],
            min(indices, key=lambda i: values[i]),
            max(indices, key=lambda i: values[i]),
        }
    return rows.iloc[sorted(keep)]


def _mark(axes: Axes, rows: pd.DataFrame, currency: str, mark: DrawdownMark) -> None:
    for moment in (mark.start, mark.trough):
        if moment is not None:
            at = rows[rows["time"] == moment]["cumulative_pnl"]
            if len(at):
                axes.plot(_instants([moment]), _floats(at)[-1:], "o", color=LOSS, ms=3.5)
    axes.set_title(f"{currency}  ·  {mark.text}")


def pnl_by_month(summary: pd.DataFrame) -> str:
    """Net P&L of each month, one panel per currency (a ``statistics_by_month`` table)."""
    return _bars_by_currency(summary, "month", "net_pnl")


def pnl_by_instrument(summary: pd.DataFrame) -> str:
    """Net P&L of each instrument, largest first, one panel per currency."""
    currencies = sorted(set(summary["currency"]))
    counts = [
        min(int((summary["currency"] == code).sum()), 2 * INSTRUMENTS_EACH_END)
        for code in currencies
    ]
    heights = [0.32 * max(n, 3) + 0.55 for n in counts]
    longest = max((len(str(name)) for name in summary["instrument"]), default=4)
    with _figure(len(currencies), heights=heights, sharex=False, labels=longest) as (
        figure,
        panels,
    ):
        for axes, code in zip(panels, currencies, strict=True):
            rows = summary[summary["currency"] == code]
            order = _ends(
                sorted(zip(rows["net_pnl"], rows["instrument"], strict=True), reverse=True)
            )
            names = [str(name) for _, name in order]
            values = [float(value) for value, _ in order]
            axes.barh(range(len(names)), values, color=[_tone(v) for v in values], height=0.6)
            axes.set_yticks(range(len(names)), names)
            _pad_slots(axes, len(names), "y", minimum=3)
            axes.invert_yaxis()
            axes.grid(axis="x")
            axes.grid(axis="y", visible=False)
            axes.axvline(0, color=MUTED, lw=0.6)
            axes.xaxis.set_major_formatter(_money_ticks())
            axes.xaxis.set_major_locator(MaxNLocator(6))
            axes.set_title(code)
        return _svg(figure)


def _ends(ranked: list[T]) -> list[T]:
    """The best and the worst :data:`INSTRUMENTS_EACH_END` of a ranked list, if it is longer."""
    if len(ranked) <= 2 * INSTRUMENTS_EACH_END:
        return ranked
    return ranked[:INSTRUMENTS_EACH_END] + ranked[-INSTRUMENTS_EACH_END:]


def fees_by_month(summary: pd.DataFrame) -> str:
    """Commission and financing cost of the trades closed each month, one panel per currency.

    Financing is shown as a cost (a charge up, a credit down).
    """
    currencies = sorted(set(summary["currency"]))
    with _figure(len(currencies)) as (figure, panels):
        for axes, code in zip(panels, currencies, strict=True):
            rows = summary[summary["currency"] == code]
            months = [str(m) for m in rows["month"]]
            places = range(len(months))
            commission = _floats(rows["commission"])
            financing = [-v for v in _floats(rows["financing"])]
            axes.bar([p - 0.2 for p in places], commission, 0.4, color=LINE, label="commission")
            axes.bar([p + 0.2 for p in places], financing, 0.4, color=FINANCING, label="financing")
            axes.set_xticks(list(places), months)
            _pad_slots(axes, len(months), "x")
            axes.axhline(0, color=MUTED, lw=0.6)
            _money_axis(axes, code)
        _legend(figure, panels[0])
        return _svg(figure)


def holding_time(holding: Sequence[pd.Timedelta]) -> str:
    """How long trades were held: the number of trades in each holding-time class."""
    counts = holding_counts(holding)
    labels = [label for label, _ in HOLDING_BINS]
    with _figure(1) as (figure, panels):
        axes = panels[0]
        bars = axes.bar(range(len(labels)), counts, color=LINE, width=0.7)
        axes.bar_label(bars, labels=[str(n) if n else "" for n in counts], color=MUTED, padding=2)
        axes.set_xticks(range(len(labels)), labels)
        axes.set_ylabel("trades")
        axes.yaxis.set_major_locator(MaxNLocator(5, integer=True))
        axes.set_ylim(0, max([*counts, 1]) * 1.18)
        return _svg(figure)


def holding_counts(holding: Sequence[pd.Timedelta]) -> list[int]:
    """Trades in each class of :data:`HOLDING_BINS` (exact comparisons of durations)."""
    counts = [0] * len(HOLDING_BINS)
    for held in holding:
        index = next(
            n for n, (_, bound) in enumerate(HOLDING_BINS) if bound is None or held < bound
        )
        counts[index] += 1
    return counts


def _bars_by_currency(summary: pd.DataFrame, key: str, column: str) -> str:
    currencies = sorted(set(summary["currency"]))
    with _figure(len(currencies)) as (figure, panels):
        for axes, code in zip(panels, currencies, strict=True):
            rows = summary[summary["currency"] == code]
            labels = [str(v) for v in rows[key]]
            values = _floats(rows[column])
            axes.bar(range(len(labels)), values, color=[_tone(v) for v in values], width=0.6)
            axes.set_xticks(range(len(labels)), labels)
            _pad_slots(axes, len(labels), "x")
            axes.axhline(0, color=MUTED, lw=0.6)
            _money_axis(axes, code)
        return _svg(figure)


@contextmanager
def _figure(
    panels: int,
    *,
    heights: Sequence[float] | None = None,
    sharex: bool = True,
    labels: int = 8,
) -> Iterator[tuple[Figure, list[Axes]]]:
    """A figure of ``panels`` stacked axes, drawn under :data:`STYLE`.

    Margins are set by hand (``labels`` is the longest y tick label, in characters): a layout
    engine would measure every text twice and triple the drawing time.
    """
    heights = list(heights) if heights else [PANEL_HEIGHT] * max(panels, 1)
    total = sum(heights) + LEGEND_ROOM + 0.35
    with matplotlib.rc_context(STYLE):
        figure = Figure(figsize=(WIDTH, total))
        figure.subplots_adjust(
            left=min(0.4, (0.25 + 0.075 * labels) / WIDTH),
            right=0.985,
            top=1 - LEGEND_ROOM / total,
            bottom=0.35 / total,
            hspace=0.45,
        )
        grid = figure.subplots(
            max(panels, 1), 1, sharex=sharex, squeeze=False, height_ratios=heights
        )
        yield figure, [row[0] for row in grid]


def _pad_slots(axes: Axes, count: int, axis: str, minimum: int = MIN_SLOTS) -> None:
    pad = max(0.0, (minimum - count) / 2)
    limits = (-0.5 - pad, count - 0.5 + pad)
    if axis == "x":
        axes.set_xlim(*limits)
    else:
        axes.set_ylim(*limits)


def _svg(figure: Figure) -> str:
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None})
    text = buffer.getvalue()
    start = text.index("<svg")  # drop the XML declaration and doctype: the page is HTML
    svg = text[start:]
    svg = re.sub(r"\n\s*<metadata>.*?</metadata>", "", svg, count=1, flags=re.DOTALL)
    return svg.replace("<svg ", '<svg role="img" ', 1)


def _money_axis(axes: Axes, currency: str) -> None:
    axes.yaxis.set_major_formatter(_money_ticks())
    axes.yaxis.set_major_locator(MaxNLocator(5))
    axes.set_title(currency)


def _legend(figure: Figure, axes: Axes) -> None:
    handles, labels = axes.get_legend_handles_labels()
    figure.legend(handles, labels, loc="upper right", ncols=len(labels), bbox_to_anchor=(0.985, 1))


def _money_ticks() -> FuncFormatter:
    # Tick labels name axis positions chosen by the locator, not amounts of the data.
    return FuncFormatter(lambda value, _pos: f"{value:,.0f}")


def _date_axis(axes: Axes) -> None:
    # A fixed maxticks for every frequency has no interval to offer when the data span minutes,
    # and matplotlib warns; cap only the calendar frequencies.
    caps = {YEARLY: 8, MONTHLY: 8, DAILY: 8}
    locator = AutoDateLocator(maxticks=caps)  # type: ignore[no-untyped-call]
    axes.xaxis.set_major_locator(locator)
    concise = ConciseDateFormatter(locator, show_offset=False)  # type: ignore[no-untyped-call]
    axes.xaxis.set_major_formatter(concise)


def _instants(values: Iterable[pd.Timestamp]) -> list[float]:
    """Times as matplotlib's day numbers (floats, to place them on the axis)."""
    epoch = pd.Timestamp("1970-01-01", tz="UTC")
    return [(value - epoch) / pd.Timedelta(days=1) for value in values]


def _floats(values: pd.Series) -> list[float]:
    return [float(v) if isinstance(v, Decimal) else float("nan") for v in values.tolist()]


def _tone(value: float) -> str:
    return GAIN if value >= 0 else LOSS
