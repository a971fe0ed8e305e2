"""The plant view of a generated 1 GW plant's map in headless Debian Chromium: it opens with
no error and no request, draws a few hundred things (blocks, AC circuits, labels) instead of
60,000, its blocks carry the failing counts of ``cable_schedule.csv`` by ``inverter_id``, and
the details appear as the user zooms in. The demo opens on its details, nothing covered.

The plant is made once per module with ``routeplan synth --mw 1000`` and ``routeplan plan``
in-process (about 15 s here). The opening time is measured and printed, not asserted (the
machine is shared); ``tests/map/bench_map.py --plant`` records it. Screenshots go to pytest's
temporary folder. Skipped without Chromium locally, a failure under ``CI=true``.
"""

from __future__ import annotations

import time
from pathlib import Path
from urllib.parse import quote

import pandas as pd
import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.map import plantview
from routeplan.map.page import render_map
from routeplan.map.scales import FILL

from .map_fixtures import HOSTILE, make_frames
from .test_map_browser import (  # noqa: F401  (fixtures)
    VIEWPORT,
    Page,
    browser,
    demo,
    demo_html,
    screenshots,
)

pytestmark = pytest.mark.browser

#: Most things the plant view may draw: SVG paths, canvas-drawn features, DOM labels.
PLANT_VIEW_MAX_ELEMENTS = 3_000
MAX_FILE_BYTES = 30_000_000

PLANT_READY = "window.rpPlantView && window.rpPlantView.ready"
RAF = "() => new Promise(r => requestAnimationFrame(() => requestAnimationFrame(() => r(1))))"

#: What the page draws: SVG paths, features on the map (canvas or SVG), labels.
DRAWN = """() => {
    const map = window[document.querySelector('.folium-map').id];
    let features = 0;
    map.eachLayer(l => { if (l.feature) { features++; } });
    return {paths: document.querySelectorAll('path').length, features: features,
            labels: document.querySelectorAll('.rp-id-label, .rp-block-label').length,
            zoom: map.getZoom()};
}"""

#: Each block area's id and failing count, as the page holds them.
BLOCKS = """() => {
    const out = {};
    feature_group_blocks.eachLayer(l => { out[l.rpBlock.id] = l.rpBlock.fail; });
    return out;
}"""

#: Boxes (page pixels) of the site, the panel, the legend and the layer list.
BOXES = """() => {
    const map = window[document.querySelector('.folium-map').id];
    const b = L.latLngBounds([]);
    map.eachLayer(l => {
        if (l.getBounds && !l.eachLayer) { b.extend(l.getBounds()); }
        if (l.getLatLng && l.feature) { b.extend(l.getLatLng()); }
    });
    const box = map.getContainer().getBoundingClientRect();
    const nw = map.latLngToContainerPoint(b.getNorthWest());
    const se = map.latLngToContainerPoint(b.getSouthEast());
    const rect = s => { const r = document.querySelector(s).getBoundingClientRect();
                        return [r.left, r.top, r.right, r.bottom]; };
    return {site: [box.left + nw.x, box.top + nw.y, box.left + se.x, box.top + se.y],
            covers: {panel: rect('#rp-panel'), legend: rect('#rp-legend'),
                     layers: rect('.leaflet-control-layers')}};
}"""


def _overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


@pytest.fixture(scope="module")
def plant(tmp_path_factory) -> Path:
    """A generated 1 GW plant planned into an output folder (once for the module)."""
    tmp = tmp_path_factory.mktemp("plant1gw")
    runner = CliRunner()
    result = runner.invoke(app, ["synth", "--mw", "1000", "--out", str(tmp / "site")])
    assert result.exit_code == 0, result.output
    result = runner.invoke(app, ["plan", str(tmp / "site"), "--out", str(tmp / "out"), "-q"])
    assert result.exit_code in (0, 1), result.output  # 1: some circuits fail a limit
    return tmp / "out"


@pytest.fixture
def plant_page(browser, plant: Path):  # noqa: F811
    start = time.perf_counter()
    page = Page(browser, plant / "map.html")
    page.page.wait_for_function(PLANT_READY, timeout=30_000)
    page.page.evaluate(RAF)
    page.open_s = time.perf_counter() - start
    yield page
    page.close()


def _failing_by_inverter(out: Path) -> dict[str, int]:
    schedule = pd.read_csv(out / "cable_schedule.csv", dtype={"inverter_id": str})
    fail = schedule["status"].str.lower().eq("fail")
    return fail.groupby(schedule["inverter_id"]).sum().astype(int).to_dict()


def test_plant_map_opens_offline_and_draws_a_few_hundred_things(plant_page, plant, screenshots):  # noqa: F811
    plant_page.assert_clean()
    drawn = plant_page.page.evaluate(DRAWN)
    print(f"\n1 GW map: opens in {plant_page.open_s:.2f} s; plant view draws {drawn}")
    total = drawn["paths"] + drawn["features"] + drawn["labels"]
    assert 0 < total <= PLANT_VIEW_MAX_ELEMENTS, drawn
    assert (plant / "map.html").stat().st_size < MAX_FILE_BYTES
    # no equipment marker, string or row at plant zoom
    for key in ("equipment", "string", "rows", "segments"):
        assert not plant_page.page.evaluate(f"() => window['feature_group_{key}']._map != null")
    plant_page.page.screenshot(path=screenshots / "plant_1gw_view.png", animations="disabled")


def test_blocks_carry_the_schedules_failing_counts(plant_page, plant):
    blocks = plant_page.page.evaluate(BLOCKS)
    assert blocks == _failing_by_inverter(plant)
    # each failing block's label names its count; the labels do not overlap
    labels = plant_page.page.locator(".rp-block-label")
    assert labels.count() > 0
    boxes = []
    for i in range(labels.count()):
        el = labels.nth(i)
        name = el.get_attribute("aria-label")
        block = name.removeprefix("Block ").split(":")[0]
        assert el.inner_text() == str(blocks[block]) and blocks[block] > 0
        b = el.bounding_box()
        boxes.append((b["x"], b["y"], b["x"] + b["width"], b["y"] + b["height"]))
    assert not any(_overlap(a, b) for i, a in enumerate(boxes) for b in boxes[i + 1 :])


def test_the_site_is_not_covered_at_the_opening_view(plant_page):
    boxes = plant_page.page.evaluate(BOXES)
    for name, rect in boxes["covers"].items():
        if rect[2] > rect[0]:
            assert not _overlap(boxes["site"], rect), name


def _zoom_in_from_a_block_label(pg) -> None:
    """Focus the first block's label, press Enter, wait for the detail zoom and two frames."""
    label = pg.locator(".rp-block-label").first
    label.focus()
    pg.keyboard.press("Enter")
    pg.wait_for_function(
        "window[document.querySelector('.folium-map').id].getZoom()"
        " >= window.rpPlantView.detailZoom"
    )
    pg.evaluate(RAF)


def test_a_block_label_zooms_in_by_keyboard_to_the_details(plant_page, screenshots):  # noqa: F811
    pg = plant_page.page
    _zoom_in_from_a_block_label(pg)
    for key in ("equipment", "string", "array", "segments"):
        assert pg.evaluate(f"() => window['feature_group_{key}']._map != null"), key
    assert not pg.evaluate("() => feature_group_blocks._map != null")
    assert not pg.evaluate("() => feature_group_rows._map != null")  # off in the layer list
    # ids labelled, at most the cap, no two overlapping
    labels = pg.locator(".rp-id-label")
    n = labels.count()
    assert 0 < n <= plantview.LABEL_CAP
    boxes = [labels.nth(i).bounding_box() for i in range(n)]
    boxes = [(b["x"], b["y"], b["x"] + b["width"], b["y"] + b["height"]) for b in boxes]
    assert not any(_overlap(a, b) for i, a in enumerate(boxes) for b in boxes[i + 1 :])
    texts = set(labels.all_inner_texts())
    assert any(t.startswith("INV") for t in texts)
    pg.screenshot(path=screenshots / "plant_1gw_detail.png", animations="disabled")
    plant_page.assert_clean()


#: The colour each drawn trench segment without a capacity was given, by segment id.
SEGMENT_COLOURS = """() => {
    const map = window[document.querySelector('.folium-map').id], out = {};
    map.eachLayer(l => {
        const p = l.feature && l.feature.properties;
        if (p && p.segment !== undefined && p.capacity === 'not set') {
            out[p.segment] = l.options.color;
        }
    });
    return out;
}"""


def test_segment_tiles_made_near_the_view_take_the_pages_colours(plant_page, plant):
    """At 1 GW the segments' tiles are made when the view comes near them (lazily, after the
    page has set its colour of each count): each segment without a capacity drawn is coloured
    by its circuits over the busiest segment's, as trench_schedule.csv gives them."""
    pg = plant_page.page
    _zoom_in_from_a_block_label(pg)
    drawn = pg.evaluate(SEGMENT_COLOURS)
    schedule = pd.read_csv(plant / "trench_schedule.csv", dtype={"segment_id": str})
    busiest = schedule["circuits"].max()
    circuits = schedule.set_index("segment_id")["circuits"]
    assert len(drawn) > 100
    for sid, colour in drawn.items():
        assert colour == FILL.colour(circuits[sid] / busiest), sid
    plant_page.assert_clean()


def test_a_layer_switched_off_stays_off_when_zooming(plant_page):
    pg = plant_page.page
    pg.get_by_label("Combiners, inverters, grid point").check()  # shown at plant zoom too
    assert pg.evaluate("() => feature_group_equipment._map != null")
    pg.get_by_label("Blocks (plant view)").uncheck()
    pg.evaluate(
        "() => { const m = window[document.querySelector('.folium-map').id];"
        " m.setZoom(window.rpPlantView.detailZoom, {animate: false});"
        " m.setZoom(window.rpPlantView.detailZoom - 2, {animate: false}); }"
    )
    assert pg.evaluate("() => feature_group_equipment._map != null")
    assert not pg.evaluate("() => feature_group_blocks._map != null")
    plant_page.assert_clean()


def test_demo_opens_on_its_details_with_nothing_covered(browser, demo_html, screenshots):  # noqa: F811
    page = Page(browser, demo_html)
    try:
        page.page.wait_for_function(PLANT_READY)
        assert page.page.evaluate("() => typeof feature_group_blocks") == "undefined"
        assert page.page.locator("path.rp-circuit").count() > 0
        boxes = page.page.evaluate(BOXES)
        for name, rect in boxes["covers"].items():
            assert not _overlap(boxes["site"], rect), name
        assert "INV1" in page.page.locator(".rp-id-label").all_inner_texts()
        page.page.screenshot(path=screenshots / "demo_opening_view.png", animations="disabled")
        page.assert_clean()
    finally:
        page.close()


HOSTILE_INV = "<img src=x onerror=alert(7)>${alert(8)}`</script>"


def test_hostile_block_ids_are_shown_as_text(browser, tmp_path, monkeypatch):  # noqa: F811
    monkeypatch.setattr(plantview, "PLANT_VIEW_ABOVE", 0)  # the demo as a plant
    frames, site = make_frames({"INV1": HOSTILE_INV})
    frames["circuits"].loc[frames["circuits"]["circuit_id"] == "R1/S1", "status"] = "fail"
    html = render_map(*(frames[k] for k in ("circuits", "segments", "rows", "equipment")),
                      site_name=site)  # fmt: skip
    path = tmp_path / "map.html"
    path.write_text(html, encoding="utf-8")
    page = Page(browser, path)
    try:
        page.page.wait_for_function(PLANT_READY)
        label = page.page.locator(".rp-block-label")
        assert label.count() == 1 and label.inner_text() == "2"
        assert label.get_attribute("aria-label").startswith(f"Block {HOSTILE_INV}:")
        box = label.bounding_box()
        page.page.mouse.move(box["x"] + box["width"] / 2, box["y"] + box["height"] + 12)
        tip = page.page.locator(".leaflet-tooltip")
        tip.wait_for(state="visible", timeout=5_000)
        assert HOSTILE_INV in tip.inner_text()
        assert page.page.locator(".leaflet-container img").count() == 0
        page.assert_clean()
    finally:
        page.close()


def test_id_labels_show_hostile_ids_as_typed(browser, tmp_path):  # noqa: F811
    frames, site = make_frames(HOSTILE)
    html = render_map(*(frames[k] for k in ("circuits", "segments", "rows", "equipment")),
                      site_name=site)  # fmt: skip
    path = tmp_path / "map.html"
    path.write_text(html, encoding="utf-8")
    page = Page(browser, path)
    try:
        page.page.wait_for_function(PLANT_READY)
        texts = page.page.locator(".rp-id-label").all_inner_texts()
        assert HOSTILE["CB2"] in texts and HOSTILE["R2"] in texts
        assert page.page.locator(".leaflet-container img, .rp-labels b").count() == 0
        page.assert_clean()
    finally:
        page.close()


def test_legend_and_panel_fold_by_keyboard(demo):  # noqa: F811
    pg = demo.page
    for box in ("#rp-legend", "#rp-panel"):
        details = pg.locator(f"{box} details")
        was = details.evaluate("d => d.open")
        pg.locator(f"{box} summary").focus()
        pg.keyboard.press("Enter")
        assert details.evaluate("d => d.open") is (not was)
        pg.keyboard.press("Enter")
        assert details.evaluate("d => d.open") is was
    # the caution stays in view with the summary folded
    pg.locator("#rp-panel summary").focus()
    pg.keyboard.press("Enter")
    assert pg.locator("#rp-panel .rp-caution").is_visible()
    demo.assert_clean()


def test_find_at_plant_scale_zooms_to_a_string_not_yet_drawn(plant_page, plant, screenshots):  # noqa: F811
    """At the plant view the strings are not drawn yet: ``#find=`` makes them, zooms in to the
    string and highlights its route, and the details name it with the schedule's values."""
    pg = plant_page.page
    schedule = pd.read_csv(plant / "cable_schedule.csv", dtype=str)
    fail = schedule["status"].str.lower().eq("fail")
    row = schedule[(schedule["kind"] == "string") & fail].iloc[-1]
    pg.evaluate("(h) => { location.hash = h; }", "#find=" + quote(row["circuit_id"], safe=""))
    pg.wait_for_function(
        "window[document.querySelector('.folium-map').id].getZoom()"
        " >= window.rpPlantView.detailZoom",
        timeout=30_000,
    )
    pg.evaluate(RAF)
    # the highlight (drawn on the canvas at this scale): the route and its two ends
    highlighted = pg.evaluate(
        "() => { var m = window[document.querySelector('.folium-map').id], n = 0;"
        " m.eachLayer(function(l) { if (l.options && l.options.pane === 'rpSelect' && !l.eachLayer)"
        " { n++; } }); return n; }"
    )
    assert highlighted >= 3
    body = pg.locator("#rp-details-body").inner_text()
    assert row["circuit_id"] in body and row["cable_m"] in body
    pg.screenshot(path=screenshots / "plant_1gw_find.png", animations="disabled")
    plant_page.assert_clean()
