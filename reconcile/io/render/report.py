"""The report a person reads: one HTML page (with charts) and the tables behind it.

:func:`build_report` turns a book and its statistics into a :class:`Report`: the page, and every
table the page was made from (each becomes a CSV or JSON file and a sheet of the workbook). Other
work hands its own sections, tables and headline facts in as :class:`ReportPart` objects; they are
placed right after the overview, in the order given (see DEVELOPERS.md, "Adding to the report").
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

import pandas as pd

from reconcile.core.book import Book
from reconcile.core.stats import NOT_RECOVERED, Stats
from reconcile.core.summary import currency_totals
from reconcile.io.render import charts
from reconcile.io.render.html import Fact, Figure, Page, Section, Table
from reconcile.io.render.numbers import cell_text, grouped
from reconcile.io.render.stats_view import BLANK, percent, ratio, view
from reconcile.notice import CAUTION

#: The breakdowns the report shows, in page order, with their section headings.
BREAKDOWNS = {
    "month": "By month",
    "instrument": "By instrument",
    "account": "By account",
    "side": "By side",
    "weekday": "By weekday",
}
#: The statistics a breakdown table shows; every statistic is in its CSV and sheet.
BREAKDOWN_COLUMNS = (
    "trades",
    "win_rate",
    "net_pnl",
    "gross_profit",
    "gross_loss",
    "profit_factor",
    "expectancy",
    "max_drawdown",
    "fee_drag",
)

OVERVIEW_NOTE = (
    "Max drawdown: the largest fall of cumulative net P&L from its running peak. "
    "Fee drag: commission and financing as a share of gross P&L before costs."
)


@dataclass(frozen=True)
class ReportPart:
    """What another piece of work contributes to the report.

    ``sections`` go on the page after the overview; ``tables`` are written beside the page (CSV or
    JSON) and as sheets of the workbook, after the statistics; ``facts`` join the overview.
    """

    sections: Sequence[Section] = ()
    tables: Mapping[str, pd.DataFrame] = field(default_factory=dict)
    facts: Sequence[Fact] = ()
    #: Whether the part found what its command would exit 1 for (breaks, fee leakage).
    found: bool = False
    #: What produced the part, by name, for the report's run.json (its inputs, period, counts).
    manifest: Mapping[str, Any] = field(default_factory=dict)
    #: One line for the terminal saying what the part found.
    summary: str = ""


@dataclass(frozen=True)
class ReportStats:
    """The statistics a report needs: over the whole book, and one per breakdown key."""

    overall: Stats
    breakdowns: Mapping[str, Stats]


@dataclass(frozen=True)
class Report:
    """The page, and every table behind it by name, in workbook order."""

    page: Page
    tables: dict[str, pd.DataFrame]
    about: list[str]
    #: The parts' run.json entries and terminal lines (see :class:`ReportPart`).
    manifest: dict[str, Any] = field(default_factory=dict)
    summaries: list[str] = field(default_factory=list)


def build_report(
    book: Book,
    statistics: ReportStats,
    *,
    parts: Sequence[ReportPart] = (),
    title: str = "Trading report",
    provenance: Sequence[str] = (),
) -> Report:
    """The report of ``book``: overview, the parts handed in, statistics, charts and tables."""
    overall = statistics.overall
    sections = [_overview(book, overall, parts)]
    sections += [section for part in parts for section in part.sections]
    if len(overall.summary):
        sections += [_cumulative(overall), _statistics(overall)]
        sections += _breakdowns(statistics.breakdowns, book)
        sections += [_holding(book, overall), _extremes(overall)]
    sections += [_open_positions(book), _round_trips(book)]
    if len(book.unattributed):
        sections.append(_unattributed(book))
    sections.append(_definitions(overall))
    page = Page(title, _subtitle(book, overall), sections, tuple(provenance))
    return Report(
        page,
        _tables(book, statistics, parts),
        _about(title, overall, provenance),
        {name: entry for part in parts for name, entry in part.manifest.items()},
        [part.summary for part in parts if part.summary],
    )


def _tables(
    book: Book, statistics: ReportStats, parts: Sequence[ReportPart]
) -> dict[str, pd.DataFrame]:
    tables: dict[str, pd.DataFrame] = {"statistics": statistics.overall.summary}
    for stats in statistics.breakdowns.values():
        name, summary = next(iter(stats.tables().items()))
        tables[name] = summary
    tables["extremes"] = statistics.overall.extremes
    tables["cumulative_pnl"] = statistics.overall.cumulative
    for part in parts:
        tables.update(part.tables)
    return tables | book.tables()


def _subtitle(book: Book, overall: Stats) -> str:
    method = "average cost" if book.method == "average" else book.method.upper()
    pieces = [f"relief {method}", f"commission {book.commission}"]
    summary = overall.summary
    if len(summary):
        first = min(summary["first_trade"]).strftime("%Y-%m-%d")
        last = max(summary["last_trade"]).strftime("%Y-%m-%d")
        pieces.insert(0, f"{first} to {last} (UTC)")
    pieces.append(f"months in {overall.timezone}")
    return " · ".join(pieces)


def _overview(book: Book, overall: Stats, parts: Sequence[ReportPart]) -> Section:
    summary = overall.summary
    trips = len(book.round_trips)
    still_open = int((book.positions["quantity"] != 0).sum())
    facts = [
        Fact("Round trips", f"{trips:,}"),
        Fact("Accounts", f"{book.positions['account'].nunique():,}"),
        Fact("Instruments", f"{book.positions['instrument'].nunique():,}"),
        Fact("Positions still open", f"{still_open:,}"),
        Fact("Currencies", ", ".join(sorted(set(book.positions["currency"]))) or BLANK),
    ]
    facts += [fact for part in parts for fact in part.facts]
    paragraphs = [
        "Every amount is in its own currency; amounts in different currencies are never added."
    ]
    tables = []
    if len(summary):
        tables.append(_compact(summary, ("currency",), "Per currency", note=OVERVIEW_NOTE))
        tables.append(_bridge(book, overall))
    else:
        paragraphs.append("No round trip has closed yet: there is nothing to measure.")
    return Section("Overview", "overview", paragraphs, facts, tables=tables)


def _bridge(book: Book, overall: Stats) -> Table:
    """From the statistics' net P&L to the book's realized net, so the two figures a reader meets
    are reconciled on the page: the difference is what no finished trade holds."""
    measured = "round trips" if overall.over == "round-trips" else "closed lots"
    realized = {row["currency"]: row["realized_net"] for row in _records(currency_totals(book))}
    rows: dict[str, list[str]] = {
        "currency": [],
        f"net P&L of the {measured}": [],
        "realized elsewhere": [],
        "realized net (positions)": [],
    }
    for row in _records(overall.summary):
        code = row["currency"]
        total = realized.get(code, Decimal(0))
        for name, value in zip(
            list(rows)[1:], (row["net_pnl"], total - row["net_pnl"], total), strict=True
        ):
            rows[name].append(grouped(value, code))
        rows["currency"].append(code)
    note = (
        "Realized elsewhere: partial closes of positions still open, financing no open lot "
        "took, and (with commission at-fill) commissions of lots still open."
    )
    return Table(
        "From the statistics to realized P&L",
        pd.DataFrame(rows, dtype="str"),
        note=note,
        numeric=list(rows)[1:],
    )


def _cumulative(overall: Stats) -> Section:
    summary = overall.summary
    marks = {}
    lines = []
    for row in _records(summary):
        code = row["currency"]
        depth = grouped(row["max_drawdown"], code)
        marks[code] = charts.DrawdownMark(
            row["max_drawdown_start"], row["max_drawdown_trough"], f"max drawdown {depth}"
        )
        lines.append(_drawdown_sentence(row))
    figure = Figure(
        "Cumulative net P&L of the round trips, by close time (UTC); shaded: below the running "
        "peak; dots: the start and trough of the largest fall.",
        charts.cumulative_pnl(overall.cumulative, marks),
        "cumulative-pnl",
    )
    return Section("Cumulative P&L and drawdown", "cumulative", lines, figures=[figure])


def _drawdown_sentence(row: Mapping[str, Any]) -> str:
    code = row["currency"]
    if row["max_drawdown_state"] == "no drawdown":
        return f"{code}: cumulative net P&L never fell below a previous peak."
    recovered = (
        "has not recovered"
        if row["max_drawdown_state"] == NOT_RECOVERED
        else f"recovered {cell_text(row['max_drawdown_recovery'])}"
    )
    text = (
        f"{code}: the largest fall was {grouped(row['max_drawdown'], code)} from the peak of "
        f"{grouped(row['max_drawdown_peak'], code)} reached {cell_text(row['max_drawdown_start'])}"
        f" to the trough at {cell_text(row['max_drawdown_trough'])}; it {recovered}."
    )
    if row["drawdown_from_zero"]:
        text += (
            f" At worst it stood {grouped(row['drawdown_from_zero'], code)} below zero "
            f"({cell_text(row['drawdown_from_zero_trough'])})."
        )
    return text


def _statistics(overall: Stats) -> Section:
    shown = view(overall)
    table = Table(
        "Every statistic, per currency",
        shown.frame(),
        numeric=shown.headers,
        note="Times are UTC. Trades tied for an extreme are all named; the full list is in "
        "extremes.csv.",
    )
    return Section("Statistics", "statistics", tables=[table])


def _breakdowns(breakdowns: Mapping[str, Stats], book: Book) -> list[Section]:
    sections = []
    for key, heading in BREAKDOWNS.items():
        stats = breakdowns.get(key)
        if stats is None or not len(stats.summary):
            continue
        figures = []
        if key == "month":
            figures = [
                Figure(
                    "Net P&L of the round trips closed each month",
                    charts.pnl_by_month(stats.summary),
                    "pnl-by-month",
                )
            ]
        if key == "instrument":
            figures = [
                Figure(
                    f"Net P&L by instrument, best first (with more than "
                    f"{2 * charts.INSTRUMENTS_EACH_END} in a currency, its best and worst "
                    f"{charts.INSTRUMENTS_EACH_END}; every one is in the table)",
                    charts.pnl_by_instrument(stats.summary),
                    "pnl-by-instrument",
                )
            ]
        tables = [_compact(stats.summary, (key, "currency"), f"{heading[3:].capitalize()}")]
        section = Section(heading, f"by-{key}", figures=figures, tables=tables)
        sections.append(section)
        if key == "month":
            sections.append(_costs(stats))
    return sections


def _costs(by_month: Stats) -> Section:
    columns = ("gross_pnl", "commission", "financing", "commission_drag", "fee_drag")
    table = _compact(by_month.summary, ("month", "currency"), "Costs by month", columns=columns)
    figure = Figure(
        "Commission and financing cost of the round trips closed each month (financing shown as a "
        "cost: a charge above zero, a credit below)",
        charts.fees_by_month(by_month.summary),
        "fees-by-month",
    )
    return Section(
        "Costs",
        "costs",
        ["Fee drag is commission less financing, as a share of gross P&L before costs."],
        figures=[figure],
        tables=[table],
    )


def _holding(book: Book, overall: Stats) -> Section:
    figure = Figure(
        "Round trips by holding time (first opening fill to the fill that made the position flat)",
        charts.holding_time(book.round_trips["holding_time"].tolist()),
        "holding-time",
    )
    extremes = "; ".join(
        f"{row['currency']} longest {cell_text(row['longest_holding'])}, shortest "
        f"{cell_text(row['shortest_holding'])}"
        for row in _records(overall.summary)
    )
    return Section("Holding time", "holding", [f"Holding times: {extremes}."], figures=[figure])


def _extremes(overall: Stats) -> Section:
    table = Table("Largest win and loss, longest and shortest holding", overall.extremes)
    return Section(
        "Extremes",
        "extremes",
        ["Every trade tied for an extreme is listed."],
        tables=[table],
    )


def _open_positions(book: Book) -> Section:
    positions = book.positions[book.positions["quantity"] != 0]
    tables = [Table("Positions still open", positions.reset_index(drop=True))]
    if len(book.open_lots):
        tables.append(Table("Their open lots", book.open_lots))
    paragraphs = [] if len(positions) else ["Every position is flat."]
    return Section("Open positions", "open", paragraphs, tables=tables if len(positions) else [])


def _round_trips(book: Book) -> Section:
    return Section(
        "Round trips",
        "round-trips",
        tables=[Table("Round trips, in the order of the round_trips table", book.round_trips)],
    )


def _unattributed(book: Book) -> Section:
    return Section(
        "Unattributed financing",
        "unattributed",
        ["Financing booked while the position was flat: realized when booked, never dropped."],
        tables=[Table("Financing with no open position", book.unattributed)],
        tone="warn",
    )


def _definitions(overall: Stats) -> Section:
    zero = {
        "breakeven": "counts as a breakeven, neither a win nor a loss",
        "win": "counts as a win",
        "loss": "counts as a loss",
    }[overall.zero_pnl]
    unit = "one closed lot" if overall.over == "closed-lots" else "one round trip (flat to flat)"
    return Section(
        "How these figures were made",
        "definitions",
        [
            f"A trade is {unit}; its P&L is net of commission and financing. A trade with zero "
            f"net P&L {zero}.",
            "Gross profit and gross loss are the sums of the winning and of the losing trades. "
            "Profit factor is gross profit over gross loss, left blank when there is no loss; "
            "payoff is the average win over the average loss; expectancy is win rate x average "
            "win - loss rate x average loss, the mean net P&L per trade.",
            "Cumulative net P&L starts at zero at the first opening and moves when trades close. "
            "Max drawdown is its largest fall from a running peak; drawdown from zero is how far "
            "it fell below where it started. Both are amounts of money, not shares of capital.",
            f"Amounts are rounded once to the currency's minor unit from exact sums; ratios are "
            f"rounded to {overall.ratio_places} places. Months and weekdays are those of the "
            f"close, in {overall.timezone}; times shown are UTC.",
            "Definitions and their sources: docs/statistics.md in the reconcile package.",
        ],
    )


def _about(title: str, overall: Stats, provenance: Sequence[str]) -> list[str]:
    return [
        CAUTION,
        "",
        *provenance,
        f"Statistics over {overall.over}; zero-P&L trades: {overall.zero_pnl}; months and "
        f"weekdays in {overall.timezone}; times in UTC; ratios to {overall.ratio_places} places.",
        "Amounts are numbers in the currency's decimals; the exact figures are in the CSV/JSON "
        "tables beside this workbook.",
    ]


def _compact(
    summary: pd.DataFrame,
    keys: Sequence[str],
    caption: str,
    *,
    columns: Sequence[str] = BREAKDOWN_COLUMNS,
    note: str = "",
) -> Table:
    """Selected statistics as text a person reads: money grouped, rates as percentages."""
    shown: dict[str, list[str]] = {_header(name): [] for name in (*keys, *columns)}
    for row in _records(summary):
        for name in (*keys, *columns):
            shown[_header(name)].append(_FORMATS.get(name, _plain)(row, name))
    frame = pd.DataFrame(shown, dtype="str")
    numeric = [_header(name) for name in columns]
    return Table(caption, frame, note=note, numeric=numeric)


def _header(name: str) -> str:
    return name.replace("_pnl", " P&L").replace("_", " ")


def _plain(row: Mapping[str, Any], name: str) -> str:
    value = row[name]
    return BLANK if value is None else cell_text(value)


def _money(row: Mapping[str, Any], name: str) -> str:
    value = row[name]
    return BLANK if value is None else grouped(value, row["currency"])


def _rate(row: Mapping[str, Any], name: str) -> str:
    return percent(row[name])


def _ratio(row: Mapping[str, Any], name: str) -> str:
    return ratio(row[name])


_FORMATS: dict[str, Callable[[Mapping[str, Any], str], str]] = {
    "net_pnl": _money,
    "gross_profit": _money,
    "gross_loss": _money,
    "expectancy": _money,
    "max_drawdown": _money,
    "gross_pnl": _money,
    "commission": _money,
    "financing": _money,
    "win_rate": _rate,
    "fee_drag": _rate,
    "commission_drag": _rate,
    "profit_factor": _ratio,
}


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    values = frame.astype(object)
    return [
        {str(k): (None if _missing(v) else v) for k, v in record.items()}
        for record in values.to_dict("records")
    ]


def _missing(value: Any) -> bool:
    return value is None or (not isinstance(value, str | Decimal) and bool(pd.isna(value)))
