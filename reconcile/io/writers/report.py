"""Write a report folder: the page, the workbook and the tables, all together or not at all."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

from reconcile.io.render.html import render_page
from reconcile.io.render.report import Report
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import add_tables
from reconcile.io.writers.xlsx import write_workbook

PAGE = "report.html"
WORKBOOK = "report.xlsx"


def write_report(
    report: Report,
    directory: Path | str,
    fmt: str = "csv",
    manifest: Mapping[str, Any] | None = None,
) -> list[Path]:
    """``report.html``, ``report.xlsx``, every table as ``<name>.<fmt>`` and ``run.json``."""
    html = render_page(report.page)
    with file_set(directory) as files:
        written = [
            files.add(PAGE, lambda path: _write_text(path, html)),
            files.add(
                WORKBOOK,
                lambda path: write_workbook(
                    path, report.tables, title=report.page.title, about=report.about
                ),
            ),
        ]
        extra = {"run.json": dict(manifest)} if manifest is not None else None
        written += add_tables(files, report.tables, fmt, extra)
    return written


def _write_text(path: Path, text: str) -> None:
    path.write_text(text, encoding="utf-8")
