"""The report page in a real browser: it loads cleanly, offline, with every chart drawn."""

from __future__ import annotations

from pathlib import Path

import pytest
from playwright.sync_api import Browser, ConsoleMessage, Request
from typer.testing import CliRunner

from reconcile.cli import app

SAMPLE = Path(__file__).parents[2] / "sample_data"
CHARTS = ["cumulative-pnl", "pnl-by-month", "fees-by-month", "pnl-by-instrument", "holding-time"]


@pytest.fixture(scope="module")
def page_path(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("report")
    result = CliRunner().invoke(
        app,
        [
            "report",
            str(SAMPLE / "fills.csv"),
            "--financing",
            str(SAMPLE / "financing.csv"),
            "--title",
            "Larkmoor Capital <month end>",
            "--out",
            str(out),
        ],
        env={"COLUMNS": "100"},
    )
    assert result.exit_code == 0, result.output
    return out / "report.html"


def test_the_page_loads_offline_with_no_errors_and_every_chart(
    browser: Browser, page_path: Path, artifacts: Path
) -> None:
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    page = context.new_page()
    errors: list[str] = []
    requests: list[str] = []
    page.on("console", lambda m: _record_error(m, errors))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: _record_request(r, page_path, requests))
    page.goto(page_path.as_uri(), wait_until="load")
    page.wait_for_load_state("networkidle")

    assert errors == []
    assert requests == []  # nothing but the file itself: no fonts, scripts or images fetched
    assert page.title() == "Larkmoor Capital <month end>"
    for name in CHARTS:
        chart = page.locator(f'figure[data-chart="{name}"] svg')
        assert chart.count() == 1, name
        box = chart.bounding_box()
        assert box is not None, name
        assert (box["width"] > 400, box["height"] > 100) == (True, True), (name, box)
    assert page.locator("footer.page").inner_text().startswith("reconcile's output is not tax")
    page.screenshot(path=str(artifacts / "report.png"), full_page=True)
    context.close()


def test_the_page_prints_to_pdf(browser: Browser, page_path: Path, artifacts: Path) -> None:
    page = browser.new_page()
    page.goto(page_path.as_uri(), wait_until="load")
    page.emulate_media(media="print")
    assert page.locator("nav.contents").is_hidden()
    pdf = page.pdf(format="A4", print_background=True)
    (artifacts / "report.pdf").write_bytes(pdf)
    assert pdf.startswith(b"%PDF")
    assert pdf.count(b"/Type /Page") >= 5
    page.close()


def _record_error(message: ConsoleMessage, errors: list[str]) -> None:
    if message.type == "error":
        errors.append(message.text)


def _record_request(request: Request, page_path: Path, requests: list[str]) -> None:
    if request.url != page_path.as_uri():
        requests.append(request.url)
