"""The tie-out as one self-contained HTML page: the counts, each break and its causes, all lines."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd

from reconcile.core.compare import MONEY
from reconcile.core.tieout import TieOut
from reconcile.io.render.html import Fact, Page, Section, Table, render_page
from reconcile.io.render.numbers import cell_text, grouped
from reconcile.notice import CAUTION

_VALUES = ("ours", "theirs", "difference", "allowed")


def report_title(result: TieOut) -> str:
    return f"Statement tie-out {result.period.label}"


def about_lines(manifest: Mapping[str, Any]) -> list[str]:
    """What produced the results, in words: the same lines head the workbook and end the page."""
    lines = [
        f"reconcile {manifest['reconcile_version']}, {manifest['command']}",
        f"Period {manifest['period']['describe']}",
        f"Relief {manifest['method']}, commission {manifest['commission']}, rounding "
        f"{manifest['rounding']}"
        + (f", base currency {manifest['base']}" if manifest["base"] else ""),
        f"Tolerance: {manifest['tolerance_text']}",
        f"Time-zone database {manifest['tz_database']}",
    ]
    lines += [
        f"Input: {read['source']} ({read['accepted']:,} {read['kind']})"
        for read in manifest["inputs"]
    ]
    lines += [f"Left out: {count:,} {what}" for what, count in manifest["left_out"].items()]
    return [*lines, CAUTION]


def tieout_page(result: TieOut, manifest: Mapping[str, Any]) -> str:
    sections = tieout_sections(result, manifest)
    page = Page(report_title(result), result.period.describe(), sections, about_lines(manifest))
    return render_page(page)


def tieout_sections(result: TieOut, manifest: Mapping[str, Any]) -> list[Section]:
    """The tie-out as page sections: summary, breaks, fills involved, lines, conversions."""
    counts = result.counts()
    breaks = result.breaks
    summary = Section(
        "Summary",
        "summary",
        paragraphs=[
            f"Period {result.period.describe()}.",
            f"Relief {result.method}, commission {result.commission}; tolerance "
            f"{manifest['tolerance_text']}.",
        ],
        facts=[
            Fact("tied", f"{counts['tied']:,}", "good"),
            Fact(
                "within tolerance",
                f"{counts['within tolerance']:,}",
                "warn" if counts["within tolerance"] else "",
            ),
            Fact("breaks", f"{counts['break']:,}", "bad" if counts["break"] else "good"),
        ],
        tone="bad" if counts["break"] else "good",
    )
    sections = [summary, _breaks_section(result, breaks)]
    if len(result.fills_involved):
        sections.append(
            Section(
                "Fills involved",
                "fills",
                paragraphs=["Every fill a cause names, with the row it came from."],
                tables=[Table("Fills involved", result.fills_involved)],
            )
        )
    sections.append(
        Section(
            "Compared lines",
            "lines",
            tables=[Table("All compared lines", _shown(result.lines), numeric=_VALUES)],
        )
    )
    if len(result.conversions):
        sections.append(
            Section(
                "Conversions",
                "conversions",
                paragraphs=["Each amount converted into the base currency, with the rate used."],
                tables=[Table("Converted amounts", result.conversions)],
            )
        )
    return sections


def _breaks_section(result: TieOut, breaks: pd.DataFrame) -> Section:
    if not len(breaks):
        return Section(
            "Breaks",
            "breaks",
            paragraphs=["Every compared line ties within tolerance."],
            tone="good",
        )
    columns = [
        "line",
        "account",
        "instrument",
        "currency",
        "measure",
        *_VALUES[:3],
        "top_cause",
        "note",
    ]
    causes = result.causes[["line", "rank", "kind", "explanation"]]
    return Section(
        "Breaks",
        "breaks",
        paragraphs=[
            "A cause is listed only when it explains the difference within tolerance; the best "
            "first. Difference = ours - theirs."
        ],
        tables=[
            Table("Breaks", _shown(breaks)[columns], numeric=_VALUES),
            Table("Causes, best first", causes),
        ],
        tone="bad",
    )


def _shown(lines: pd.DataFrame) -> pd.DataFrame:
    """Lines with their figures as text a person reads: money in its minor unit, grouped."""
    shown = lines.copy()
    for column in _VALUES:
        shown[column] = [
            grouped(value, currency if measure in MONEY else None) if value is not None else ""
            for value, currency, measure in zip(
                lines[column].astype(object).where(lines[column].notna(), None),
                lines["currency"],
                lines["measure"],
                strict=True,
            )
        ]
    shown["fx_rate"] = [
        cell_text(v) for v in lines["fx_rate"].astype(object).where(lines["fx_rate"].notna(), None)
    ]
    return shown
