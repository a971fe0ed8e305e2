"""report.html in a real browser and printed to PDF: headless Debian Chromium, driven by
playwright as the map's browser tests are (tests/map/test_map_browser.py, whose browser
fixture is used here), and by ``routeplan report --pdf`` itself; the PDF is read with pypdf.
Without Chromium these tests skip locally and fail when ``CI=true``.
"""

from __future__ import annotations

from pathlib import Path

import pypdf
import pytest
from typer.testing import CliRunner

from routeplan import CAUTION
from routeplan.cli import app

from ..map import test_map_browser as plan_map
from .report_sites import DEMO, HOSTILE_NAME, ROOT, hostile_site

pytestmark = pytest.mark.browser

browser = plan_map.browser
runner = CliRunner()


@pytest.fixture(scope="module")
def planned(tmp_path_factory) -> dict[str, Path]:
    tmp = tmp_path_factory.mktemp("report-browser")
    assert runner.invoke(app, ["plan", str(DEMO), "--out", str(tmp / "demo")]).exit_code == 0
    site = hostile_site(tmp / "hostile-site")
    assert runner.invoke(app, ["plan", str(site), "--out", str(tmp / "hostile")]).exit_code == 1
    return {"demo": tmp / "demo", "hostile": tmp / "hostile"}


class ReportPage:
    """The report open in a page, with everything the page reported."""

    def __init__(self, browser, html: Path):
        self.errors: list[str] = []
        self.requests: list[str] = []
        self.failed: list[str] = []
        self.dialogs: list[str] = []
        self.page = browser.new_page(viewport=plan_map.VIEWPORT)
        pg = self.page
        pg.on("console", lambda m: self.errors.append(m.text) if m.type == "error" else None)
        pg.on("pageerror", lambda e: self.errors.append(str(e)))
        pg.on("request", lambda r: self.requests.append(r.url))
        pg.on("requestfailed", lambda r: self.failed.append(r.url))
        pg.on("dialog", self._dialog)
        pg.goto(html.as_uri())
        pg.wait_for_load_state("load")

    def _dialog(self, dialog) -> None:
        self.dialogs.append(dialog.message)
        dialog.dismiss()

    def clean(self) -> None:
        """No error, no dialog, no request but the page itself."""
        assert self.errors == []
        assert self.dialogs == []
        assert self.failed == []
        assert all(u.startswith(("file:", "data:")) for u in self.requests), self.requests

    def text(self, selector: str = "body") -> str:
        return " ".join(self.page.inner_text(selector).split())


def test_report_opens_offline_and_shows_every_setting_and_table(browser, planned):
    p = ReportPage(browser, planned["demo"] / "report.html")
    try:
        p.clean()
        settings = p.page.eval_on_selector_all(
            "#settings tbody tr", "rows => rows.map(r => r.cells[0].innerText.trim())"
        )
        # every key of site.toml's tables is among them (the full list: test_report.py)
        assert "design.ground_temp_c" in settings and "allowances.row_run_factor" in settings
        assert len(settings) == len(set(settings)) > 50
        tables = p.page.eval_on_selector_all(
            "#tables tbody tr",
            "rows => rows.map(r => [r.cells[0].innerText.trim(), r.cells[2].innerText.trim()])",
        )
        files = sorted(f.name for f in (ROOT / "calc" / "data").glob("*.csv"))
        assert sorted(t[0] for t in tables) == files
        assert all(t[1] for t in tables)  # every table shows its tags
        body = p.text()
        assert " ".join(CAUTION.split()) in p.text("#caution")
        for heading in ("1. Design basis", "2. Results", "Settings in force", "Data tables"):
            assert heading in body
        # printed: each main section on a new page, table headers repeated, rows kept whole
        p.page.emulate_media(media="print")
        look = p.page.evaluate(
            """() => [getComputedStyle(document.querySelector('section.major')).breakBefore,
                      getComputedStyle(document.querySelector('thead')).display,
                      getComputedStyle(document.querySelector('tbody tr')).breakInside]"""
        )
        assert look == ["page", "table-header-group", "avoid"]
    finally:
        p.page.close()


def test_hostile_text_runs_nothing_and_reads_as_written(browser, planned):
    p = ReportPage(browser, planned["hostile"] / "report.html")
    try:
        p.clean()
        # no element from the user's text; the only images are the charts'
        found = "document.querySelectorAll('script, b, img:not(#charts img)').length"
        assert p.page.evaluate(found) == 0
        assert p.page.inner_text("p.site") == HOSTILE_NAME
        assert p.page.title() == "routeplan calculation report"
    finally:
        p.page.close()


def test_pdf_has_pages_with_the_design_basis_and_the_caution(planned, tmp_path):
    plan_map._chromium()  # skip (or fail under CI=true) without Chromium
    pdf = tmp_path / "report.pdf"
    r = runner.invoke(app, ["report", str(planned["demo"]), "--pdf", str(pdf)])
    assert r.exit_code == 0, r.output
    assert r.output.strip() == f"report: {pdf}"
    reader = pypdf.PdfReader(pdf)
    assert len(reader.pages) > 1
    # A4 by default: 210 mm x 297 mm (ISO 216) in PostScript points (72 per inch, 25.4 mm)
    box = reader.pages[0].mediabox
    assert (
        abs(float(box.width) - 210 / 25.4 * 72) < 1 and abs(float(box.height) - 297 / 25.4 * 72) < 1
    )
    text = " ".join(" ".join(page.extract_text() for page in reader.pages).split())
    for heading in (
        "Calculation report",
        "1. Design basis",
        "Project and site",
        "Settings in force",
        "Module data",
        "Data tables",
        "Methods",
        "Assumptions",
        "2. Results",
        "Failing circuits",
    ):
        assert heading in text, heading
    assert " ".join(CAUTION.split()) in text
    assert "Cerro Pardo Solar" in text
    n = len(reader.pages)  # each page numbered in its footer
    for i in (0, n - 1):
        assert f"page {i + 1} of {n}" in reader.pages[i].extract_text()
    # routeplan's own PDF is replaced on the next run (a user's is not: test_report.py);
    # US letter is 8.5 in x 11 in
    pdf.write_bytes(pdf.read_bytes() + b"%an earlier run's tail\n")
    args = ["report", str(planned["demo"]), "--pdf", str(pdf), "--paper", "letter"]
    again = runner.invoke(app, args)
    assert again.exit_code == 0, again.output
    assert b"earlier run" not in pdf.read_bytes()
    box = pypdf.PdfReader(pdf).pages[0].mediabox
    assert (float(box.width), float(box.height)) == (8.5 * 72, 11 * 72)
