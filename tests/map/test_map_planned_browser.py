"""The map of a site planned through the command line with hostile text in every field that
reaches it (site name, ids of every layer, module key, ``to`` values; the site of
``tests/routeplan/test_promise_text.py``), opened in headless Debian Chromium: nothing in it
runs (no dialog, no error, no element made from the text) and the tooltips and panel show
the text as it was typed. Skipped without Chromium locally, a failure under ``CI=true``."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.routeplan.promise_sites import plan_cli
from tests.routeplan.test_promise_text import HOSTILE, MODULE, SITE, site_files

from .test_map_browser import Page, browser  # noqa: F401  (the browser fixture)

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def hostile_map(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("planned")
    out = tmp / "out"
    result = plan_cli(site_files(tmp / "site", hostile=True), out, "-q")
    assert result.exit_code == 0, result.output
    return out / "map.html"


def test_a_planned_hostile_map_shows_the_text_and_runs_nothing(browser, hostile_map):  # noqa: F811
    page = Page(browser, hostile_map)
    try:
        page.assert_clean()  # no dialog, no error, no request: nothing ran, the scripts whole
        for tag in ("img", "svg[onload]", "b", "textarea"):  # none made from the text
            assert page.page.locator(f".leaflet-container {tag}").count() == 0, tag
        row = page.find("row", HOSTILE["R1"])
        tip = page.hover_tooltip(row["x"], row["y"])
        assert HOSTILE["R1"] in tip and MODULE in tip  # the module key as typed
        cb = page.find("equipment", HOSTILE["CB1"])
        assert HOSTILE["CB1"] in page.hover_tooltip(cb["x"], cb["y"])
        inv = page.find("equipment", HOSTILE["INV1"])
        assert "{{7*7}}" in page.hover_tooltip(inv["x"], inv["y"])
        # T1's first segment: (42, 30) → (42, 20), chainage 0 → 10 m along T1
        seg = page.find("segment", HOSTILE["T1"] + "@0.0-10.0")
        assert HOSTILE["T1"] + "@0.0-10.0" in page.hover_tooltip(seg["x"], seg["y"] + 4)
        panel = page.page.locator("#rp-panel").inner_text()
        assert "<script>alert('site')</script>" in panel and "${alert(1)}" in panel
        assert page.page.title().startswith("<script>alert('site')</script>")
        assert SITE.split("\x1b")[0] in page.page.title()
        page.assert_clean()
    finally:
        page.close()
