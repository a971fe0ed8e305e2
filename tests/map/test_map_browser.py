"""The HTML map in a real browser: headless Debian Chromium driven by playwright.

Never ``playwright install``: the browser is Debian's ``chromium`` package. Without it these
tests skip locally and fail when ``CI=true`` (so CI cannot pass them silently).
"""

from __future__ import annotations

import json
import os
import re
import shutil
from pathlib import Path

import pytest

from routeplan.map import page as rpmap
from routeplan.map.features import expand
from routeplan.map.page import render_folder, write_map
from routeplan.map.scales import FILL, PROBLEM_COLOUR, UTILISATION
from routeplan.map.text import escape_text

from .map_fixtures import HOSTILE, expected_counts, make_frames, write_output_folder

pytestmark = pytest.mark.browser


def _html_file(path: Path, out_dir: Path, **options) -> Path:
    """The map of output folder ``out_dir`` written to ``path`` (a test's own file)."""
    path.write_text(render_folder(out_dir, **options), encoding="utf-8")
    return path


CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",  # tests run as root
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]
VIEWPORT = {"width": 1280, "height": 800}

# JavaScript run in the page ---------------------------------------------------------------

MAP_READY = "window[document.querySelector('.folium-map').id] instanceof L.Map"

#: The drawn layer whose property `key` equals `value`: where to point at, and how it is drawn.
#: Lines: the middle of their first segment (a string's own stub); areas and points: centre.
FIND_LAYER = """([key, value]) => {
    const map = window[document.querySelector('.folium-map').id];
    let found = null;
    map.eachLayer(l => {
        if (l.feature && l.feature.properties[key] === value) {
            found = l;
        }
    });
    if (!found) { return null; }
    const box = map.getContainer().getBoundingClientRect();
    let p;
    if (found instanceof L.CircleMarker) {
        p = map.latLngToContainerPoint(found.getLatLng());
    } else if (found instanceof L.Polygon) {
        p = map.latLngToContainerPoint(found.getBounds().getCenter());
    } else {
        const ll = found.getLatLngs();
        const a = map.latLngToContainerPoint(ll[0]), b = map.latLngToContainerPoint(ll[1]);
        p = L.point((a.x + b.x) / 2, (a.y + b.y) / 2);
    }
    const path = found._path;
    return {
        x: box.left + p.x, y: box.top + p.y,
        stroke: path ? path.getAttribute('stroke') : null,
        dash: path ? path.getAttribute('stroke-dasharray') : null,
        d: path ? path.getAttribute('d') : null,
        cls: path ? path.getAttribute('class') : null,
    };
}"""


def _chromium() -> str:
    path = shutil.which("chromium")
    if path is None:
        message = "Debian chromium is not installed (apt-get install -y chromium)"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(message + "; CI must install it", pytrace=False)
        pytest.skip(message)
    return path


@pytest.fixture(scope="module")
def browser():
    chromium = _chromium()
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("the playwright package is not installed", pytrace=False)
        pytest.skip("the playwright package is not installed")
    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)
        yield b
        b.close()


class Page:
    """A page of the map with everything it reported."""

    def __init__(self, browser, html: Path):
        self.errors: list[str] = []
        self.requests: list[str] = []
        self.failed: list[str] = []
        self.dialogs: list[str] = []
        self.page = browser.new_page(viewport=VIEWPORT)
        pg = self.page
        pg.on("console", lambda m: self.errors.append(m.text) if m.type == "error" else None)
        pg.on("pageerror", lambda e: self.errors.append(str(e)))
        pg.on("request", lambda r: self.requests.append(r.url))
        pg.on("requestfailed", lambda r: self.failed.append(r.url))
        pg.on("dialog", self._dialog)
        pg.goto(html.as_uri())
        pg.wait_for_function(MAP_READY, timeout=20_000)

    def _dialog(self, dialog) -> None:
        self.dialogs.append(dialog.message)
        dialog.dismiss()

    def find(self, key: str, value: str) -> dict:
        found = self.page.evaluate(FIND_LAYER, [key, escape_text(value)])
        assert found is not None, f"no drawn layer with {key} = {value!r}"
        return found

    def hover_tooltip(self, x: float, y: float) -> str:
        """Point at (x, y) and return the text of the tooltip that opens."""
        tip = self.page.locator(".leaflet-tooltip")
        self.page.mouse.move(VIEWPORT["width"] / 2, VIEWPORT["height"] - 5)  # empty map
        tip.wait_for(state="detached", timeout=5_000)
        # Leaflet's canvas renderer ignores pointer moves for 32 ms after one it handled
        self.page.wait_for_timeout(50)
        self.page.mouse.move(x, y)
        tip.wait_for(state="visible", timeout=5_000)
        return tip.inner_text()

    def assert_clean(self) -> None:
        assert self.errors == []
        assert self.failed == []
        assert self.dialogs == []
        assert all(u.startswith(("file:", "data:")) for u in self.requests), self.requests

    def close(self) -> None:
        self.page.close()


@pytest.fixture(scope="module")
def screenshots(tmp_path_factory) -> Path:
    """Where the screenshots go: pytest's temporary folder (kept for the last few runs,
    e.g. /tmp/pytest-of-<user>/pytest-current/screenshots0), never the source tree."""
    return tmp_path_factory.mktemp("screenshots")


@pytest.fixture(scope="module")
def demo_html(tmp_path_factory) -> Path:
    """map.html of the demo plan's output folder (written once for the module)."""
    frames, site = make_frames()
    return write_map(write_output_folder(tmp_path_factory.mktemp("demo"), frames, site))


@pytest.fixture(scope="module")
def hostile_html(tmp_path_factory) -> Path:
    frames, site = make_frames(HOSTILE)
    return write_map(write_output_folder(tmp_path_factory.mktemp("hostile"), frames, site))


@pytest.fixture
def demo(browser, demo_html: Path):
    page = Page(browser, demo_html)
    yield page
    page.close()


@pytest.fixture
def hostile(browser, hostile_html: Path):
    page = Page(browser, hostile_html)
    yield page
    page.close()


def test_opens_offline_without_errors(demo: Page):
    demo.assert_clean()
    assert demo.requests and demo.requests[0].startswith("file:")
    assert demo.page.locator(".leaflet-tile").count() == 0


def test_one_interactive_path_per_drawn_thing(demo: Page):
    frames, _ = make_frames()
    n = expected_counts(frames)
    drawn = n["circuits"] + n["segments"] + n["rows"] + n["equipment"]
    assert demo.page.locator("path.leaflet-interactive").count() == drawn
    # casings and halos are drawn but not interactive
    assert demo.page.locator("path.rp-fail-casing").count() == n["fail"]
    assert demo.page.locator("path.rp-over-halo").count() == n["over"]
    assert demo.page.locator("path.rp-fail-casing.leaflet-interactive").count() == 0
    assert demo.page.locator("path.rp-over-halo.leaflet-interactive").count() == 0
    assert demo.page.locator("path.rp-circuit").count() == n["circuits"]
    assert demo.page.locator("path.rp-segment").count() == n["segments"]
    demo.assert_clean()


def test_hover_circuit_shows_id_size_and_utilisation(demo: Page):
    at = demo.find("circuit", "R1/S1")
    text = demo.hover_tooltip(at["x"], at["y"])
    assert "R1/S1" in text
    assert "6 mm² Cu" in text
    assert "15 %" in text
    assert "R1 → CB1" in text
    demo.assert_clean()


def test_hover_failing_circuit_shows_reason(demo: Page):
    at = demo.find("circuit", "R2/S2")
    assert at["stroke"].lower() == PROBLEM_COLOUR.lower()
    casing = demo.page.locator("path.rp-fail-casing")
    assert casing.get_attribute("d") == at["d"]  # its dashed outline
    assert casing.get_attribute("stroke-dasharray")
    text = demo.hover_tooltip(at["x"], at["y"])
    assert "FAIL" in text and "total DC drop 3.40 % > limit 3.00 %" in text


def test_light_and_heavy_circuits_differ(demo: Page):
    light = demo.find("circuit", "R1/S1")  # utilisation 0.15
    heavy = demo.find("circuit", "R4/S2")  # utilisation 0.95
    assert light["stroke"] != heavy["stroke"]
    assert light["stroke"] == UTILISATION.colour(0.15)
    assert heavy["stroke"] == UTILISATION.colour(0.95)


def test_over_capacity_segment_is_flagged(demo: Page):
    seg = demo.find("segment", "T1#3")
    halo = demo.page.locator("path.rp-over-halo")
    assert halo.count() == 1
    assert halo.get_attribute("d") == seg["d"]  # the halo follows the over-capacity segment
    assert halo.get_attribute("stroke").lower() == PROBLEM_COLOUR.lower()
    width = float(halo.get_attribute("stroke-width"))
    seg_path = demo.page.locator("path.rp-over")
    assert width > 1.5 * float(seg_path.get_attribute("stroke-width"))
    # hovering next to the circuits that run along it shows the segment
    text = demo.hover_tooltip(seg["x"] + 4, seg["y"])
    assert "T1#3" in text and "OVER CAPACITY" in text and "max 3 circuits" in text
    assert "Grouping factor" in text and "0.73" in text


def test_segments_without_a_capacity_take_their_colour_from_the_page(demo: Page):
    """A segment without a capacity is coloured in the browser (rpCounted) by its circuits
    over the busiest segment's; its tile's script holds only the count. The darkest is
    ColorBrewer Blues 9's last class, #08306b (Harrower & Brewer 2003); one with a capacity
    keeps its own colour, by fill."""
    frames, _ = make_frames()
    seg = frames["segments"]
    busiest = seg["circuits"].max()
    columns = (seg["segment_id"], seg["circuits"], seg["max_circuits"])
    for sid, circuits, cap in zip(*columns, strict=True):
        drawn = demo.find("segment", sid)["stroke"].lower()
        if cap > 0:
            assert drawn == FILL.colour(circuits / cap).lower(), sid
        else:
            assert drawn == FILL.colour(circuits / busiest).lower(), sid
            assert (drawn == "#08306b") == (circuits == busiest), sid
    demo.assert_clean()


def test_row_and_equipment_tooltips(demo: Page):
    row = demo.find("row", "R2")
    text = demo.hover_tooltip(row["x"], row["y"])
    assert "R2" in text and "3.40 %" in text  # worst drop of its strings
    cb = demo.find("equipment", "CB1")
    text = demo.hover_tooltip(cb["x"], cb["y"])
    assert "CB1" in text and "combiner" in text


def test_panel_shows_totals_and_caution(demo: Page):
    panel = demo.page.locator("#rp-panel").inner_text()
    assert "Demo field" in panel
    assert "9 string · 2 array · 1 AC" in panel
    assert "design aid" in panel and "qualified, licensed person" in panel
    legend = demo.page.locator("#rp-legend").inner_text()
    assert "utilisation" in legend and "over capacity" in legend


def test_layer_control_switches_circuit_kinds(demo: Page):
    n = expected_counts(make_frames()[0])
    total = demo.page.locator("path.leaflet-interactive").count()
    demo.page.get_by_label("String circuits").uncheck()
    assert demo.page.locator("path.leaflet-interactive").count() == total - n["strings"]
    assert demo.page.locator("path.rp-fail-casing").count() == 0  # the casing goes with it
    demo.page.get_by_label("String circuits").check()
    assert demo.page.locator("path.leaflet-interactive").count() == total


def test_hostile_text_is_shown_not_run(hostile: Page, screenshots: Path):
    hostile.assert_clean()  # no dialog, no error: nothing ran, the map script is whole
    n = expected_counts(make_frames(HOSTILE)[0])
    drawn = n["circuits"] + n["segments"] + n["rows"] + n["equipment"]
    assert hostile.page.locator("path.leaflet-interactive").count() == drawn

    at = hostile.find("circuit", HOSTILE["R1/S1"])
    text = hostile.hover_tooltip(at["x"], at["y"])
    assert "<img src=x onerror=alert(1)>" in text
    assert hostile.page.locator(".leaflet-container img").count() == 0

    row = hostile.find("row", HOSTILE["R2"])
    assert "${alert(1)}" in hostile.hover_tooltip(row["x"], row["y"])

    cb = hostile.find("equipment", HOSTILE["CB2"])
    assert "CB`2" in hostile.hover_tooltip(cb["x"], cb["y"])

    seg = hostile.find("segment", HOSTILE["T1#2"])
    assert HOSTILE["T1#2"] in hostile.hover_tooltip(seg["x"], seg["y"] + 4)

    panel = hostile.page.locator("#rp-panel").inner_text()
    assert HOSTILE["site"] in panel
    assert hostile.page.title().startswith(HOSTILE["site"])
    hostile.page.screenshot(path=str(screenshots / "map-hostile.png"), animations="disabled")
    hostile.assert_clean()


def test_screenshot(demo: Page, screenshots: Path):
    path = screenshots / "map.png"
    demo.page.screenshot(path=str(path), animations="disabled")
    assert path.stat().st_size > 10_000


def test_aggregated_strings_in_browser(browser, demo_html: Path, tmp_path: Path):
    html = _html_file(tmp_path / "agg.html", demo_html.parent, aggregate_strings_above=5)
    page = Page(browser, html)
    try:
        n = expected_counts(make_frames()[0])
        # one line per row instead of one per string
        drawn = (
            n["circuits"] - n["strings"] + n["rows"] + n["segments"] + n["rows"] + n["equipment"]
        )
        assert page.page.locator("path.leaflet-interactive").count() == drawn
        # the line of row R4's strings has the colour of its worst string
        line = page.find("between", "R4 → CB2")
        assert line["stroke"] == UTILISATION.colour(0.95)
        assert "rp-string" in line["cls"]
        page.assert_clean()
    finally:
        page.close()


def test_hidden_rows_are_made_when_switched_on(browser, demo_html: Path, tmp_path, monkeypatch):
    # large plants start with the rows switched off and make them only when asked
    monkeypatch.setattr(rpmap, "ROWS_SHOWN_UP_TO", 2)
    page = Page(browser, _html_file(tmp_path / "rows.html", demo_html.parent))
    try:
        rows = page.page.locator("path.rp-row")
        assert rows.count() == 0
        page.page.get_by_label(rpmap.LAYER_NAMES["rows"]).check()
        assert rows.count() == expected_counts(make_frames()[0])["rows"]
        row = page.find("row", "R2")
        assert "3.40 %" in page.hover_tooltip(row["x"], row["y"])
        page.assert_clean()
    finally:
        page.close()


def test_canvas_map_for_large_plants(browser, demo_html: Path, tmp_path, monkeypatch):
    # above CANVAS_ABOVE drawn features the map draws on a canvas; tooltips still work
    monkeypatch.setattr(rpmap, "CANVAS_ABOVE", 0)
    page = Page(browser, _html_file(tmp_path / "canvas.html", demo_html.parent))
    try:
        assert page.page.locator("path.leaflet-interactive").count() == 0
        assert page.page.locator("canvas").count() >= 1
        at = page.find("circuit", "R1/S1")
        text = page.hover_tooltip(at["x"], at["y"])
        assert "R1/S1" in text and "15 %" in text
        page.assert_clean()
    finally:
        page.close()


def test_page_rebuilds_the_layers_as_python_does(demo: Page, demo_html: Path):
    # the page's rpFeatures and map_features.expand give the same FeatureCollection
    html = demo_html.read_text(encoding="utf-8")
    pattern = re.compile(r"addData\(rpFeatures\(JSON\.parse\('(.*?)'\)\)\);", re.S)
    texts = [m.group(1).replace("\\'", "'").replace("\\\\", "\\") for m in pattern.finditer(html)]
    assert texts
    for text in texts:
        built = demo.page.evaluate("(t) => JSON.stringify(rpFeatures(JSON.parse(t)))", text)
        assert json.loads(built) == expand(json.loads(text))


def test_a_map_in_many_tiles(browser, demo_html: Path, tmp_path, monkeypatch):
    # tiles of about 4 features (a 1 GW plant's are ~1,000): every feature drawn once, a
    # group's tiles switch off and on together, hidden rows are made tile by tile when asked
    import numpy as np

    from routeplan.map import tiles as map_tiles

    monkeypatch.setattr(map_tiles, "TILE_MASK", np.uint64(3))
    monkeypatch.setattr(map_tiles, "TILE_MAX", 8)
    monkeypatch.setattr(rpmap, "ROWS_SHOWN_UP_TO", 2)
    html = _html_file(tmp_path / "tiles.html", demo_html.parent)
    assert html.read_text(encoding="utf-8").count("rpFeatures(") > 12  # many layers
    page = Page(browser, html)
    try:
        n = expected_counts(make_frames()[0])
        drawn = page.page.locator("path.leaflet-interactive")
        total = n["circuits"] + n["segments"] + n["equipment"]  # rows start switched off
        assert drawn.count() == total
        page.page.get_by_label("String circuits").uncheck()
        assert drawn.count() == total - n["strings"]
        page.page.get_by_label("String circuits").check()
        page.page.get_by_label(rpmap.LAYER_NAMES["rows"]).check()
        assert page.page.locator("path.rp-row").count() == n["rows"]
        assert drawn.count() == total + n["rows"]
        at = page.find("circuit", "R1/S1")
        assert "R1/S1" in page.hover_tooltip(at["x"], at["y"])
        page.assert_clean()
    finally:
        page.close()
