"""The map as a review tool, in headless Debian Chromium: find an id (search box and
``#find=<id>``), the details of a circuit, a row and a trench segment against the schedules the
same run wrote, the trench panel, the failing list, the colour views, and hostile ids shown as
text. Skipped without Chromium locally, a failure under ``CI=true``.

The plans are the demo site and a variant with a tight string drop limit (some strings fail).
Screenshots go to pytest's temporary folder (``screenshots`` fixture), never the source tree.
"""

from __future__ import annotations

import csv
import itertools
import re
import shutil
from pathlib import Path
from urllib.parse import quote

import pytest

from routeplan.map.scales import PASS_COLOUR
from routeplan.order import natural_key
from routeplan.outputs.schedules import csv_unguard
from tests.routeplan.promise_sites import plan_cli
from tests.routeplan.test_promise_text import HOSTILE, site_files

from .test_map_browser import (  # noqa: F401  (fixtures)
    MAP_READY,
    VIEWPORT,
    Page,
    browser,
    screenshots,
)

pytestmark = pytest.mark.browser

DEMO = Path(__file__).resolve().parents[2] / "demo_site"


def _plan(tmp: Path, site: Path) -> Path:
    out = tmp / "out"
    result = plan_cli(site, out, "-q")
    assert result.exit_code in (0, 1), result.output  # 1: some circuits fail a limit
    return out


def _csv(path: Path) -> list[dict[str, str]]:
    """The rows of a schedule as text, each cell as written before its CSV guard."""
    with path.open(encoding="utf-8", newline="") as f:
        return [{k: csv_unguard(v) for k, v in r.items()} for r in csv.DictReader(f)]


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    return _plan(tmp_path_factory.mktemp("review_demo"), DEMO)


@pytest.fixture(scope="module")
def tight_out(tmp_path_factory) -> Path:
    """The demo with a string drop limit of 0.05 % (its strings reach 0.83 %; no string size
    allowed meets it, so strings fail in every block)."""
    tmp = tmp_path_factory.mktemp("review_tight")
    site = shutil.copytree(DEMO, tmp / "site")
    toml = (site / "site.toml").read_text(encoding="utf-8")
    tight = toml.replace("[design.drop_pct]\nstring = 1.0", "[design.drop_pct]\nstring = 0.05")
    assert tight != toml
    (site / "site.toml").write_text(tight, encoding="utf-8")
    return _plan(tmp, site)


@pytest.fixture(scope="module")
def hostile_out(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("review_hostile")
    return _plan(tmp, site_files(tmp / "site", hostile=True))


class Review(Page):
    """A map page opened at its address with ``fragment`` (e.g. ``#find=…``) from the start."""

    def __init__(self, browser, html: Path, fragment: str = ""):  # noqa: F811
        self.errors, self.requests, self.failed, self.dialogs = [], [], [], []
        self.page = browser.new_page(viewport=VIEWPORT)
        pg = self.page
        pg.on("console", lambda m: self.errors.append(m.text) if m.type == "error" else None)
        pg.on("pageerror", lambda e: self.errors.append(str(e)))
        pg.on("request", lambda r: self.requests.append(r.url))
        pg.on("requestfailed", lambda r: self.failed.append(r.url))
        pg.on("dialog", self._dialog)
        pg.goto(html.as_uri() + fragment)
        pg.wait_for_function(MAP_READY, timeout=20_000)

    def details(self) -> dict[str, str]:
        """The details box: its title and each value row by its schedule column."""
        box = self.page.locator("#rp-details")
        box.wait_for(state="visible", timeout=10_000)
        rows = self.page.evaluate(
            """() => Array.from(document.querySelectorAll('#rp-details tr[data-k]'))
                .map(tr => [tr.getAttribute('data-k'), tr.querySelector('td').textContent])"""
        )
        out = dict(rows)
        out["_title"] = self.page.locator("#rp-details h2 .rp-id").inner_text()
        return out

    def listed(self) -> list[str]:
        """The circuit ids listed in the details box's circuit table."""
        return self.page.evaluate(
            """() => Array.from(document.querySelectorAll('#rp-details .rp-list button'))
                .map(b => b.textContent)"""
        )


def _open(browser, out: Path, fragment: str = "") -> Review:  # noqa: F811
    return Review(browser, out / "map.html", fragment)


#: circuit columns the details show as the schedule writes them (with a unit after, or alone)
CIRCUIT_KEYS = (
    "circuit_id", "from_id", "to_id", "inverter_id", "size_mm2", "parallel", "route_m",
    "cable_m", "design_current_a", "ampacity_base_a", "derating", "ampacity_a", "governing",
    "factor_temp", "factor_soil", "factor_depth", "factor_group", "utilisation", "vdrop_v",
    "vdrop_pct", "vdrop_total_pct", "loss_w", "protection", "note",
)  # fmt: skip
SEGMENT_KEYS = (
    "segment_id", "trench_id", "length_m", "circuits", "cable_sets", "fill", "group_factor",
    "depth_m", "laying", "spacing_m", "soil_k_m_w",
)  # fmt: skip


def _check_values(shown: dict[str, str], row: dict[str, str], keys) -> None:
    for k in keys:
        value = row[k]
        cell = shown[k]
        if value == "":
            assert cell.startswith("–"), (k, cell)
        else:
            # the schedule's digits, then a unit, a note in brackets, or nothing
            assert re.match(re.escape(value) + r"(\s|$)", cell), (k, value, cell)


def test_find_a_circuit_by_address_shows_its_schedule_row(browser, demo_out):  # noqa: F811
    rows = _csv(demo_out / "cable_schedule.csv")
    # an array circuit (through three trenches) and a string
    for row in (next(r for r in rows if r["kind"] == "array"), rows[-1]):
        page = _open(browser, demo_out, "#find=" + quote(row["circuit_id"], safe=""))
        try:
            shown = page.details()
            assert shown["_title"] == row["circuit_id"]
            _check_values(shown, row, CIRCUIT_KEYS)
            assert shown["status"] == ("FAIL" if row["status"] == "fail" else row["status"])
            assert shown["trench_segments"].split(", ") == row["trench_segments"].split(";")
            # the route is highlighted: its line, its segments, its governing stretch, its ends
            assert page.page.locator(".leaflet-rpSelect-pane path").count() >= 3
            page.assert_clean()
        finally:
            page.close()


def test_find_a_row_and_a_segment_by_address(browser, demo_out):  # noqa: F811
    circuits = _csv(demo_out / "cable_schedule.csv")
    segments = _csv(demo_out / "trench_schedule.csv")
    row_id = circuits[-1]["from_id"]
    page = _open(browser, demo_out, "#find=" + quote(row_id, safe=""))
    try:
        shown = page.details()
        assert shown["_title"] == row_id
        strings = [c["circuit_id"] for c in circuits if c["from_id"] == row_id]
        assert sorted(page.listed()) == sorted(strings) and strings
    finally:
        page.close()
    seg = max(segments, key=lambda s: int(s["circuits"]))
    page = _open(browser, demo_out, "#find=" + quote(seg["segment_id"], safe=""))
    try:
        shown = page.details()
        assert shown["_title"] == seg["segment_id"]
        _check_values(shown, seg, SEGMENT_KEYS)
        assert shown["max_circuits"].startswith(seg["max_circuits"] + " circuits")
        assert page.listed() == seg["circuit_ids"].split(";")
        page.assert_clean()
    finally:
        page.close()


#: screen point on a drawn trench segment, beside its middle by `off` px across it, after
#: the map zoomed to it; null when it is not drawn
SEGMENT_POINT = """([id, off]) => {
    const map = window[document.querySelector('.folium-map').id];
    let found = null;
    map.eachLayer(l => {
        if (l.feature && l.feature.properties.segment !== undefined
            && rpReview.raw(l.feature.properties.segment) === id) { found = l; }
    });
    if (!found) { return null; }
    map.fitBounds(found.getBounds(), {maxZoom: 21, animate: false});
    const ll = found.getLatLngs();
    const a = map.latLngToContainerPoint(ll[0]), b = map.latLngToContainerPoint(ll[ll.length - 1]);
    const len = Math.hypot(b.x - a.x, b.y - a.y) || 1;
    const nx = -(b.y - a.y) / len, ny = (b.x - a.x) / len;
    const box = map.getContainer().getBoundingClientRect();
    return {x: box.left + (a.x + b.x) / 2 + nx * off, y: box.top + (a.y + b.y) / 2 + ny * off};
}"""


def test_clicking_a_trench_segment_lists_its_circuits(browser, demo_out, screenshots):  # noqa: F811
    segments = _csv(demo_out / "trench_schedule.csv")
    busy = sorted(
        (s for s in segments if float(s["length_m"]) > 8),
        key=lambda s: -int(s["circuits"]),
    )[0]
    page = _open(browser, demo_out)
    try:
        for off in (4, -4, 3, -3):  # beside the circuits drawn over the band's middle
            p = page.page.evaluate(SEGMENT_POINT, [busy["segment_id"], off])
            assert p is not None
            page.page.mouse.click(p["x"], p["y"])
            head = page.page.locator("#rp-details h2")
            if head.is_visible() and head.inner_text().startswith("Trench segment"):
                break
        shown = page.details()
        assert shown["_title"] == busy["segment_id"]
        assert page.listed() == busy["circuit_ids"].split(";")
        # its values as the trench schedule writes them, the spread across its cable sets too
        for k in ("cable_sets", "group_factor", "spread_m"):
            assert shown[k].split(" ")[0] == busy[k], k
        page.page.screenshot(path=screenshots / "demo_trench_panel.png", animations="disabled")
        # the segment's circuits are drawn side by side across it, one line each; pointing
        # at one names it, clicking it selects it
        ids = busy["circuit_ids"].split(";")
        fan = page.page.locator("path.rp-fan")
        assert fan.count() == len(ids)
        box = fan.nth(len(ids) - 1).bounding_box()
        x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
        assert page.hover_tooltip(x, y) == ids[-1]
        page.page.mouse.click(x, y)
        assert page.details()["_title"] == ids[-1]
        page.page.locator(f"#rp-details button[data-find='{busy['segment_id']}']").first.click()
        assert page.details()["_title"] == busy["segment_id"]
        # a circuit of the list selects it
        first = busy["circuit_ids"].split(";")[0]
        page.page.locator("#rp-details .rp-list button").first.click()
        assert page.details()["_title"] == first
        page.assert_clean()
    finally:
        page.close()


def test_search_box_finds_by_prefix_with_the_keyboard(browser, demo_out):  # noqa: F811
    circuits = _csv(demo_out / "cable_schedule.csv")
    prefix = "a:cb-e"  # any case
    expected = sorted(
        c["circuit_id"] for c in circuits if c["circuit_id"].lower().startswith(prefix)
    )
    assert expected
    page = _open(browser, demo_out)
    try:
        page.page.locator("#rp-q").focus()
        page.page.keyboard.type(prefix)
        hits = page.page.locator("#rp-hits li[role=option]")
        hits.first.wait_for(state="visible")
        texts = [t.split("\n")[0] for t in hits.all_inner_texts()]
        shown = [page.page.locator("#rp-hits li > span:first-child").nth(i).inner_text()
                 for i in range(hits.count())]  # fmt: skip
        assert all(t.lower().startswith(prefix) for t in shown), texts
        assert sorted(shown) == expected[:20]
        page.page.keyboard.press("ArrowDown")  # the second hit
        second = shown[1]
        assert page.page.locator("#rp-hits li").nth(1).get_attribute("aria-selected") == "true"
        page.page.keyboard.press("Enter")
        assert page.details()["_title"] == second
        assert page.page.locator("#rp-hits").is_hidden()
        # Escape in the box clears it
        page.page.locator("#rp-q").focus()
        page.page.keyboard.press("Escape")
        assert page.page.locator("#rp-q").input_value() == ""
        # a prefix of many ids: the first 20, and a line saying there are more
        many = sum(c["circuit_id"].lower().startswith("w") for c in circuits)
        assert many > 20
        page.page.keyboard.type("w")
        page.page.locator("#rp-hits .rp-hit-more").wait_for(state="visible")
        assert page.page.locator("#rp-hits li[role=option]").count() == 20
        page.assert_clean()
    finally:
        page.close()


def test_hash_change_selects_another_feature(browser, demo_out):  # noqa: F811
    circuits = _csv(demo_out / "cable_schedule.csv")
    a, b = circuits[0]["circuit_id"], circuits[5]["circuit_id"]
    page = _open(browser, demo_out, "#find=" + quote(a, safe=""))
    try:
        assert page.details()["_title"] == a
        page.page.evaluate("(h) => { location.hash = h; }", "#find=" + quote(b, safe=""))
        page.page.wait_for_function(
            "(id) => document.querySelector('#rp-details h2 .rp-id').textContent === id", arg=b
        )
        page.page.evaluate("() => { location.hash = '#find=no-such-id'; }")
        page.page.wait_for_function(
            "() => document.querySelector('#rp-details h2').textContent.startsWith('Not found')"
        )
        page.assert_clean()
    finally:
        page.close()


def test_failing_list_is_grouped_by_block_and_zooms_to_each(browser, tight_out):  # noqa: F811
    circuits = _csv(tight_out / "cable_schedule.csv")
    failing = [c for c in circuits if c["status"] == "fail"]
    assert len(failing) > 1
    blocks = sorted({c["inverter_id"] for c in failing}, key=natural_key)
    page = _open(browser, tight_out)
    try:
        fails = page.page.locator("#rp-failing")
        assert f"({len(failing):,})" in fails.locator("summary").first.inner_text()
        buttons = fails.locator("button[data-find]")
        assert buttons.count() == len(failing)
        if len(blocks) > 1:
            heads = fails.locator("details > summary").all_text_contents()
            assert [h.split(" (")[0] for h in heads] == [f"Block {b}" for b in blocks]
        fails.locator("summary").first.click()
        for i in (0, buttons.count() - 1):
            b = buttons.nth(i)
            if not b.is_visible():
                b.locator("xpath=ancestor::details[1]/summary").click()
            cid = b.inner_text()
            b.click()
            assert page.details()["_title"] == cid
            # the map shows the selected circuit
            inside = page.page.evaluate(
                """(id) => {
                    const map = window[document.querySelector('.folium-map').id];
                    let ok = false;
                    map.eachLayer(l => {
                        const p = l.feature && l.feature.properties;
                        if (p && p.circuit !== undefined && rpReview.raw(p.circuit) === id) {
                            ok = map.getBounds().pad(0.01).contains(l.getBounds());
                        }
                    });
                    return ok;
                }""",
                cid,
            )
            assert inside, cid
        page.assert_clean()
    finally:
        page.close()


#: [circuit id, stroke colour] of every drawn circuit line
STROKES = """() => {
    const map = window[document.querySelector('.folium-map').id], out = [];
    map.eachLayer(l => {
        const p = l.feature && l.feature.properties;
        if (p && p.circuit !== undefined && l._path) {
            out.push([rpReview.raw(p.circuit), l._path.getAttribute('stroke')]);
        }
    });
    return out;
}"""


def _luminance(colour: str) -> float:
    r, g, b = (int(colour[k : k + 2], 16) for k in (1, 3, 5))
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def test_drop_view_spreads_and_orders_the_colours(browser, demo_out, screenshots):  # noqa: F811
    circuits = {c["circuit_id"]: c for c in _csv(demo_out / "cable_schedule.csv")}
    page = _open(browser, demo_out)
    try:
        page.page.screenshot(path=screenshots / "demo_whole_site.png", animations="disabled")
        drawn = page.page.evaluate(STROKES)
        page.page.locator("#rp-view > summary").click()  # the colour view control unfolds
        page.page.locator("input[name=rp-view][value=drop]").check()
        key = page.page.locator("#rp-view-key .rp-ticks")
        key.wait_for(state="visible")
        strokes = page.page.evaluate(STROKES)
        limits = {"string": 1.0, "subarray": 1.0, "array": 1.5, "ac": 1.0}  # demo site.toml
        shares = []
        for cid, stroke in strokes:
            c = circuits[cid]
            share = float(c["vdrop_pct"]) / limits[c["kind"]]
            if c["kind"] != "ac":
                share = max(share, float(c["vdrop_total_pct"]) / 2.0)  # dc_total
            shares.append((share, _luminance(stroke)))
        shares.sort()
        # darker means more: luminance never rises with the share (equal shares aside)
        for (s1, l1), (s2, l2) in itertools.pairwise(shares):
            assert s2 == s1 or l2 <= l1 + 1.0, (s1, l1, s2, l2)
        assert len({round(lum) for _, lum in shares}) > 10  # spread: many distinct colours
        # status: every passing circuit Okabe–Ito bluish green (the demo has no failing one)
        page.page.locator("input[name=rp-view][value=status]").check()
        assert {s.lower() for _, s in page.page.evaluate(STROKES)} == {PASS_COLOUR.lower()}
        # back to the colours as drawn
        page.page.locator("input[name=rp-view][value=drawn]").check()
        assert page.page.evaluate(STROKES) == drawn
        page.assert_clean()
    finally:
        page.close()


def test_selected_route_screenshot(browser, demo_out, screenshots):  # noqa: F811
    rows = _csv(demo_out / "cable_schedule.csv")
    row = max((r for r in rows if r["kind"] == "string"), key=lambda r: float(r["route_m"]))
    page = _open(browser, demo_out, "#find=" + quote(row["circuit_id"], safe=""))
    try:
        assert page.details()["_title"] == row["circuit_id"]
        page.page.screenshot(path=screenshots / "demo_selected_route.png", animations="disabled")
        for name in ("demo_selected_route.png",):
            assert (screenshots / name).stat().st_size > 10_000
        page.assert_clean()
    finally:
        page.close()


def test_hostile_ids_are_shown_as_text(browser, hostile_out):  # noqa: F811
    circuits = _csv(hostile_out / "cable_schedule.csv")
    segments = _csv(hostile_out / "trench_schedule.csv")
    row_id = HOSTILE["R1"]
    page = _open(browser, hostile_out, "#find=" + quote(row_id, safe=""))
    try:
        shown = page.details()
        assert shown["_title"] == row_id
        strings = [c["circuit_id"] for c in circuits if c["from_id"] == row_id]
        assert sorted(page.listed()) == sorted(strings) and strings
        # a circuit of the row, then its first trench segment: everything as typed
        page.page.locator("#rp-details .rp-list button").first.click()
        shown = page.details()
        cid = shown["_title"]
        assert cid in strings
        seg = next(s for s in segments if cid in s["circuit_ids"].split(";"))
        page.page.locator("#rp-details tr[data-k=trench_segments] button").first.click()
        shown = page.details()
        first_seg = next(c for c in circuits if c["circuit_id"] == cid)["trench_segments"]
        assert shown["_title"] == first_seg.split(";")[0]
        assert seg["segment_id"] in first_seg.split(";")
        # the search box, typed with the hostile row id's first characters
        page.page.locator("#rp-q").fill("")
        page.page.locator("#rp-q").focus()
        page.page.keyboard.type(row_id[:6])
        page.page.locator("#rp-hits li").first.wait_for(state="visible")
        hits = page.page.locator("#rp-hits li > span:first-child").all_inner_texts()
        assert row_id in hits
        for where in ("#rp-details", "#rp-hits", "#rp-panel"):
            for tag in ("img", "script", "svg[onload]", "iframe", "textarea"):
                assert page.page.locator(f"{where} {tag}").count() == 0, (where, tag)
        assert page.page.locator("#rp-details b, #rp-hits b").count() == 0
        page.assert_clean()  # no dialog, no console error, no request but file: and data:
    finally:
        page.close()


def test_strings_drawn_per_row_are_still_found(browser, demo_out, tmp_path):  # noqa: F811
    # above aggregate_strings_above, strings are drawn one line per row: each string id is
    # still searchable and its details come from the review data
    from routeplan.map.page import render_folder

    html = tmp_path / "aggregated.html"
    html.write_text(render_folder(demo_out, aggregate_strings_above=10), encoding="utf-8")
    rows = _csv(demo_out / "cable_schedule.csv")
    row = next(r for r in rows if r["kind"] == "string")
    page = Review(browser, html, "#find=" + quote(row["circuit_id"], safe=""))
    try:
        assert page.page.locator(".rp-string").count() < sum(r["kind"] == "string" for r in rows)
        shown = page.details()
        assert shown["_title"] == row["circuit_id"]
        _check_values(shown, row, CIRCUIT_KEYS)
        assert page.page.locator(".leaflet-rpSelect-pane path").count() >= 2  # row line, ends
        page.page.keyboard.press("Escape")  # closes the details
        assert page.page.locator("#rp-details").is_hidden()
        page.page.locator("#rp-q").focus()
        page.page.keyboard.type(row["circuit_id"])
        page.page.keyboard.press("Enter")
        assert page.details()["_title"] == row["circuit_id"]
        page.assert_clean()
    finally:
        page.close()


def test_us_demo_details_name_the_awg_kcmil_size(browser, tmp_path):  # noqa: F811
    # demo_site_us (rules nec): the details give the schedule's size_label beside size_mm2, and
    # the map's conductor texts use it; the IEC demo's details have no such row (test above)
    out = _plan(tmp_path, DEMO.parent / "demo_site_us")
    rows = _csv(out / "cable_schedule.csv")
    for row in (next(r for r in rows if r["kind"] == "ac"), rows[-1]):
        page = _open(browser, out, "#find=" + quote(row["circuit_id"], safe=""))
        try:
            shown = page.details()
            assert shown["_title"] == row["circuit_id"]
            assert re.fullmatch(r"(\d+|\d/0) AWG|\d+ kcmil", row["size_label"])
            assert shown["size_label"] == row["size_label"]
            _check_values(shown, row, ("size_mm2", "route_m", "cable_m"))
            page.assert_clean()
        finally:
            page.close()
