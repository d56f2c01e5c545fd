"""A self-contained HTML page: sections of facts, tables and charts, no network at view time.

Everything that came from an input (account and instrument names, ids, free text) is escaped by
Jinja2's autoescape. The only markup inserted as is are charts, which our own chart code draws
as SVG (text inside them is escaped by the SVG writer).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from functools import cache

import jinja2
import pandas as pd
from markupsafe import Markup

from reconcile import schema
from reconcile.io.render.numbers import cell_text
from reconcile.notice import CAUTION

#: Rows of a table shown on the page; the full table is always in the CSV beside it.
DEFAULT_ROW_LIMIT = 200


@dataclass(frozen=True)
class Table:
    """A table; ``numeric`` names the right-aligned columns of a table already shown as text."""

    caption: str
    frame: pd.DataFrame
    limit: int = DEFAULT_ROW_LIMIT
    note: str = ""
    #: Columns of text already formatted as numbers, aligned as numbers too.
    numeric: Sequence[str] = ()


@dataclass(frozen=True)
class Figure:
    """A chart: ``svg`` is markup drawn by our own chart code, inlined as is."""

    caption: str
    svg: str
    name: str = ""


@dataclass(frozen=True)
class Fact:
    label: str
    value: str
    tone: str = ""  # "", "good", "warn" or "bad"


@dataclass(frozen=True)
class Section:
    heading: str
    anchor: str
    paragraphs: Sequence[str] = ()
    facts: Sequence[Fact] = ()
    figures: Sequence[Figure] = ()
    tables: Sequence[Table] = ()
    tone: str = ""


@dataclass(frozen=True)
class Page:
    title: str
    subtitle: str = ""
    sections: Sequence[Section] = ()
    provenance: Sequence[str] = field(default_factory=tuple)


def render_page(page: Page) -> str:
    """The page as one HTML document (UTF-8 text)."""
    return (
        _environment()
        .get_template("page.html.j2")
        .render(
            page=page, caution=CAUTION, rows=_rows, header=_header, numeric=_numeric, svg=Markup
        )
    )


@cache
def _environment() -> jinja2.Environment:
    return jinja2.Environment(
        loader=jinja2.PackageLoader("reconcile.io.render", "templates"),
        autoescape=True,  # every value from an input is text, never markup
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )


def _header(table: Table) -> list[str]:
    return [str(c).replace("_", " ") for c in table.frame.columns]


def _numeric(table: Table) -> list[bool]:
    frame = table.frame
    return [
        isinstance(frame[c].dtype, pd.ArrowDtype)
        or pd.api.types.is_numeric_dtype(frame[c])
        or c in table.numeric
        for c in frame.columns
    ]


def _rows(table: Table) -> list[list[str]]:
    frame = table.frame.head(table.limit)
    currencies = frame["currency"].tolist() if "currency" in frame.columns else None
    rows = []
    for position, record in enumerate(frame.astype(object).itertuples(index=False)):
        cells = []
        for name, value in zip(frame.columns, record, strict=True):
            currency = currencies[position] if currencies and name in schema.MONEY_COLUMNS else None
            cells.append(
                cell_text(
                    value if not isinstance(value, float) or value == value else None,
                    currency if isinstance(value, Decimal) else None,
                )
            )
        rows.append(cells)
    return rows
