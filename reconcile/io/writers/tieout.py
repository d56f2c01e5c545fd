"""A tie-out's results on disk: CSV tables, ``breaks.json``, a workbook and an HTML page.

Everything asked for is written atomically with ``run.json``: all files land, or none does.
Amounts in CSV and JSON are exact decimal text (money lines in their currency's minor unit).
"""

from __future__ import annotations

import numbers
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from reconcile.core.compare import MONEY
from reconcile.core.tieout import TieOut
from reconcile.errors import ConfigError
from reconcile.io.render.tieout_page import about_lines, report_title, tieout_page
from reconcile.io.writers.atomic import file_set
from reconcile.io.writers.tables import decimal_text, document_writer, table_writer
from reconcile.io.writers.xlsx import write_workbook
from reconcile.money import minor_unit

REPORT_FORMATS = ("csv", "json", "xlsx", "html")


def check_formats(formats: Sequence[str]) -> list[str]:
    """The formats asked for (``csv,html`` or repeated), every one by default."""
    chosen = [f.strip().lower() for item in formats for f in item.split(",") if f.strip()]
    unknown = [f for f in chosen if f not in REPORT_FORMATS]
    if unknown:
        raise ConfigError(
            f"format: expected one or more of {', '.join(REPORT_FORMATS)}, found {unknown[0]!r}"
        )
    return list(dict.fromkeys(chosen)) or list(REPORT_FORMATS)


def write_tieout(
    result: TieOut, out: Path, formats: Sequence[str], manifest: Mapping[str, Any]
) -> list[Path]:
    """Write the chosen reports and ``run.json`` into ``out``; return the paths written."""
    chosen = check_formats(formats)
    written = []
    with file_set(out) as files:
        if "csv" in chosen:
            for name, frame in result.tables().items():
                places = measure_places(frame) if name == "compared_lines" else None
                written.append(files.add(f"{name}.csv", table_writer(frame, "csv", places)))
        if "json" in chosen:
            written.append(
                files.add("breaks.json", document_writer(breaks_document(result, manifest)))
            )
        if "xlsx" in chosen:
            written.append(files.add("tieout.xlsx", _workbook(result, manifest)))
        if "html" in chosen:
            written.append(files.add("tieout.html", _page(tieout_page(result, manifest))))
        written.append(files.add("run.json", document_writer(manifest)))
    return written


#: Columns of compared lines that hold money on money lines and quantities or prices elsewhere.
MEASURED_COLUMNS = ("ours", "theirs", "difference", "allowed")


def measure_places(lines: pd.DataFrame) -> dict[str, np.ndarray]:
    """Money lines show the currency's minor unit; quantity and price lines their own digits."""
    places = np.array(
        [
            (minor_unit(currency) or 0) if measure in MONEY else 0
            for measure, currency in zip(lines["measure"], lines["currency"], strict=True)
        ],
        dtype=np.int64,
    )
    return {column: places for column in MEASURED_COLUMNS if column in lines.columns}


def _page(html: str) -> Any:
    def write(path: Path) -> None:
        path.write_text(html, encoding="utf-8")

    return write


def breaks_document(result: TieOut, manifest: Mapping[str, Any]) -> dict[str, Any]:
    """Every compared line with its causes, as exact text a machine can read back."""
    causes = result.causes.groupby("line", sort=False)
    fills = result.fills_involved.groupby(["line", "rank"], sort=False)
    lines = []
    for row in _records(result.lines):
        currency = row["currency"] if row["measure"] in MONEY else None
        found = causes.get_group(row["line"]) if row["line"] in causes.groups else None
        lines.append(
            {
                "line": row["line"],
                "account": row["account"],
                "instrument": row["instrument"],
                "currency": row["currency"],
                "measure": row["measure"],
                "basis": row["basis"] or None,
                "ours": decimal_text(row["ours"], currency),
                "theirs": decimal_text(row["theirs"], currency),
                "difference": decimal_text(row["difference"], currency),
                "allowed": decimal_text(row["allowed"], currency),
                "status": row["status"],
                "note": row["note"] or None,
                "statement_rows": [int(r) for r in row["statement_rows"].split(";") if r],
                "fx_rate": decimal_text(row["fx_rate"]),
                "causes": [] if found is None else _causes(found, fills, currency),
            }
        )
    return {
        "period": manifest.get("period"),
        "tz_database": manifest.get("tz_database"),
        "method": result.method,
        "commission": result.commission,
        "rounding": result.rounding,
        "base": result.base,
        "counts": result.counts(),
        "lines": lines,
        "caution": manifest.get("caution"),
    }


def _causes(found: pd.DataFrame, fills: Any, currency: str | None) -> list[dict[str, Any]]:
    out = []
    for cause in _records(found):
        key = (cause["line"], cause["rank"])
        involved = _records(fills.get_group(key)) if key in fills.groups else []
        out.append(
            {
                "rank": cause["rank"],
                "kind": cause["kind"],
                "fill_ids": [f["fill_id"] for f in involved],
                "fills": [
                    {"fill_id": f["fill_id"], "source_row": f["source_row"], "role": f["role"]}
                    for f in involved
                ],
                "amount": decimal_text(cause["explained"], currency),
                "residual": decimal_text(cause["residual"], currency),
                "explanation": cause["explanation"],
            }
        )
    return out


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as plain Python values: None for missing, ints for integers, Decimals as they are."""
    clean = frame.astype(object).where(frame.notna(), None)
    return [
        {str(k): int(v) if isinstance(v, numbers.Integral) else v for k, v in record.items()}
        for record in clean.to_dict(orient="records")
    ]


def _workbook(result: TieOut, manifest: Mapping[str, Any]) -> Any:
    counts = pd.DataFrame(
        {"status": list(result.counts()), "lines": list(result.counts().values())}
    )
    breaks = result.breaks.drop(columns=["top_cause", "explanation"]).merge(
        result.causes, on="line", how="left"
    )
    sheets = {
        "summary": counts,
        "compared_lines": result.lines,
        "breaks": breaks,
        "fills_involved": result.fills_involved,
    }
    if len(result.conversions):
        sheets["conversions"] = result.conversions

    def write(path: Path) -> None:
        write_workbook(path, sheets, title=report_title(result), about=about_lines(manifest))

    return write
