"""The change map of ``routeplan diff`` in a real browser: headless Debian Chromium driven by
playwright, as the plan map's browser tests (tests/map/test_map_browser.py, whose browser,
page and screenshot helpers are used here). Without Chromium these tests skip locally and fail
when ``CI=true``.

The two plans and the diff's tables are those of tests/routeplan/test_changemap.py: a combiner
moved 20.0 m, circuits longer, shorter, sized up, added and removed, a trench removed.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from routeplan.diff.changemap import GROUPS, render_change_map
from routeplan.diff.changemap_features import LOOK_COLOUR, OLD_COLOUR, look_class
from routeplan.map.panel import CAUTION
from routeplan.map.text import escape_text

from ..routeplan.test_changemap import HOSTILE, diff_tables, plan_pair
from . import test_map_browser as plan_map

pytestmark = pytest.mark.browser

browser = plan_map.browser
screenshots = plan_map.screenshots

#: Where to point at a drawn feature whose property ``key`` is ``value`` (and, unless null,
#: whose ``plan`` is ``plan``): a point along its outline, up to 8 px to either side, where
#: its own SVG path is the topmost element (old and new routes share trenches, and the
#: panel boxes cover part of the map). Null when no such feature is drawn; x null when none
#: of its points is free.
LOCATE = """([key, value, plan]) => {
    const map = window[document.querySelector('.folium-map').id];
    const box = map.getContainer().getBoundingClientRect();
    const found = [];
    map.eachLayer(l => {
        const p = l.feature && l.feature.properties;
        if (p && l._path && p[key] === value && (plan === null || p.plan === plan)) {
            found.push(l);
        }
    });
    if (!found.length) { return null; }
    for (const l of found) {
        let parts;
        if (l instanceof L.CircleMarker) {
            parts = [[l.getLatLng()]];
        } else {
            parts = l.getLatLngs();
            if (!Array.isArray(parts[0])) { parts = [parts]; }
        }
        for (const part of parts) {
            const xy = part.map(p => map.latLngToContainerPoint(p));
            const tries = [];
            if (xy.length === 1) {  // a circle marker: its centre, then around it
                const around = [[0, 0], [4, 0], [-4, 0], [0, 4], [0, -4], [3, 3], [-3, -3]];
                for (const [dx, dy] of around) {
                    tries.push(L.point(xy[0].x + dx, xy[0].y + dy));
                }
            }
            for (let i = 0; i + 1 < xy.length; i++) {
                const a = xy[i], b = xy[i + 1];
                const dx = b.x - a.x, dy = b.y - a.y, n = Math.hypot(dx, dy) || 1;
                for (let t = 0.05; t < 1; t += 0.05) {
                    for (const off of [0, 2, -2, 4, -4, 6, -6, 8, -8]) {
                        const ox = -off * dy / n, oy = off * dx / n;
                        tries.push(L.point(a.x + t * dx + ox, a.y + t * dy + oy));
                    }
                }
            }
            for (const c of tries) {
                const x = box.left + c.x, y = box.top + c.y;
                if (document.elementFromPoint(x, y) === l._path) {
                    return {x: x, y: y, stroke: l._path.getAttribute('stroke'),
                            dash: l._path.getAttribute('stroke-dasharray'),
                            cls: l._path.getAttribute('class')};
                }
            }
        }
    }
    return {x: null};
}"""

#: (circuit, plan, stroke, dash, classes) of every drawn changed circuit.
DRAWN_CIRCUITS = """() => {
    const map = window[document.querySelector('.folium-map').id];
    const out = [];
    map.eachLayer(l => {
        const p = l.feature && l.feature.properties;
        if (p && l._path && p.circuit !== undefined) {
            out.push([p.circuit, p.plan, l._path.getAttribute('stroke'),
                      l._path.getAttribute('stroke-dasharray'), l._path.getAttribute('class')]);
        }
    });
    return out;
}"""


class ChangePage(plan_map.Page):
    """A page of the change map with everything it reported."""

    def locate(self, key: str, value: str, plan: str | None = None) -> dict:
        found = self.page.evaluate(LOCATE, [key, escape_text(value), plan])
        assert found is not None, f"no drawn feature with {key} = {value!r}"
        assert found["x"] is not None, f"{key} = {value!r} is drawn but covered everywhere"
        return found

    def tooltip_of(self, key: str, value: str, plan: str | None = None) -> str:
        at = self.locate(key, value, plan)
        return self.hover_tooltip(at["x"], at["y"])


def _write(path: Path, pair: dict[str, Path], names: dict[str, str] | None = None) -> Path:
    t = diff_tables(names)
    html = render_change_map(pair["old"], pair["new"], t["circuits"], t["segments"], t["plant"])
    path.write_text(html, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def change_html(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("changemap-browser")
    return _write(tmp / "changes.html", plan_pair(tmp))


@pytest.fixture(scope="module")
def hostile_html(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("changemap-browser-hostile")
    return _write(tmp / "changes.html", plan_pair(tmp, HOSTILE), HOSTILE)


@pytest.fixture
def changes(browser, change_html: Path):
    page = ChangePage(browser, change_html)
    yield page
    page.close()


@pytest.fixture
def hostile(browser, hostile_html: Path):
    page = ChangePage(browser, hostile_html)
    yield page
    page.close()


def _expected(names: dict[str, str] | None = None) -> tuple[list[str], list[tuple[str, str]]]:
    """Circuit ids drawn old (all but added), and (id, look) drawn new (all but removed)."""
    t = diff_tables(names)["circuits"]
    old = sorted(escape_text(c) for c, k in zip(t["circuit_id"], t["look"], strict=True)
                 if k != "added")  # fmt: skip
    new = sorted((escape_text(c), k) for c, k in zip(t["circuit_id"], t["look"], strict=True)
                 if k != "removed")  # fmt: skip
    return old, new


def test_opens_offline_without_errors(changes: ChangePage):
    changes.assert_clean()
    assert changes.requests and changes.requests[0].startswith("file:")
    assert changes.page.locator(".leaflet-tile").count() == 0


def test_changed_routes_are_drawn_in_both_versions(changes: ChangePage):
    old, new = _expected()
    page = changes.page
    assert page.locator("path.rp-cm-old").count() == len(old)
    assert page.locator("path.rp-cm-new").count() == len(new)
    for look in {k for _, k in new}:
        n = sum(1 for _, k in new if k == look)
        assert page.locator(f"path.{look_class(look)}").count() == n, look
    drawn = page.evaluate(DRAWN_CIRCUITS)
    old_drawn = sorted(c for c, plan, *_ in drawn if plan == "old (dashed grey)")
    assert old_drawn == old
    looks = dict(new)
    new_drawn = []
    for cid, plan, stroke, dash, cls in drawn:
        if plan == "old (dashed grey)":
            assert stroke.lower() == OLD_COLOUR.lower() and dash, cid  # dashed grey
        else:
            assert plan == "new" and dash is None, cid  # solid …
            assert stroke.lower() == LOOK_COLOUR[looks[cid]].lower(), cid  # … coloured by change
            new_drawn.append((cid, looks[cid]))
            assert look_class(looks[cid]) in cls.split()
    assert sorted(new_drawn) == new
    changes.assert_clean()


def test_hover_new_and_old_routes(changes: ChangePage):
    text = changes.tooltip_of("circuit", "A:CB1", "new")
    assert "A:CB1" in text and "shorter" in text and "route_m 57.00 → 37.00 (−20.00)" in text
    assert "CB1 → INV1" in text and "37.0 m" in text
    text = changes.tooltip_of("circuit", "R0/S1", "old (dashed grey)")
    assert "R0/S1" in text and "removed" in text and "old (dashed grey)" in text
    # the three strings of R2 share one route: the last drawn, R2/S3, is the one on top
    text = changes.tooltip_of("circuit", "R2/S3", "new")
    assert "size up" in text and "6 mm² Cu" in text
    assert "3 circuits: R2/S1, R2/S2, R2/S3" in text  # the ones it hides
    changes.assert_clean()


def test_arrow_and_equipment_tooltips(changes: ChangePage):
    assert "CB1 moved 20.0 m" in changes.tooltip_of("moved", "CB1 moved 20.0 m")
    old = changes.tooltip_of("equipment", "CB1", "old position")
    assert "moved 20.0 m" in old and "old position" in old
    assert "added" in changes.tooltip_of("equipment", "CB2")
    assert "removed" in changes.tooltip_of("equipment", "CB0")
    assert changes.page.locator("path.rp-cm-arrow").count() == 1
    changes.assert_clean()


def test_changed_segments_are_highlighted(changes: ChangePage):
    page = changes.page
    assert page.locator("path.rp-cm-segment-new").count() == 2  # T1@0.0-10.0, T2@0.0-23.0
    assert (
        page.locator("path.rp-cm-segment-old").count() == 2
    )  # T3@0.0-12.0, T3@12.0-20.0 (removed)
    text = changes.tooltip_of("segment", "T3@12.0-20.0")
    assert "trench T3 removed `x`" in text and "T3@0.0-12.0, T3@12.0-20.0" in text
    text = changes.tooltip_of("segment", "T1@0.0-10.0")
    assert "circuits 0 → 1 <b>x</b>" in text
    changes.assert_clean()


def test_panel_and_legend(changes: ChangePage):
    panel = changes.page.locator("#rp-panel").inner_text()
    assert "Test site" in panel
    assert "2 added · 2 removed · 2 longer · 1 shorter · 3 size up" in panel
    assert "200.00\t150.50\t−49.50" in panel
    assert CAUTION in panel
    legend = changes.page.locator("#rp-legend").inner_text()
    assert "now failing" in legend and "old route" in legend and "moved" in legend


def test_layer_control_switches_old_routes(changes: ChangePage):
    old, _ = _expected()
    label = dict(GROUPS)["cm_old"]
    changes.page.get_by_label(label).uncheck()
    assert changes.page.locator("path.rp-cm-old").count() == 0
    changes.page.get_by_label(label).check()
    assert changes.page.locator("path.rp-cm-old").count() == len(old)
    changes.assert_clean()


def test_hostile_ids_are_shown_as_text(hostile: ChangePage, screenshots: Path):
    hostile.assert_clean()  # no dialog, no error: nothing ran, the map script is whole
    old, new = _expected(HOSTILE)
    assert hostile.page.locator("path.rp-cm-old").count() == len(old)
    assert hostile.page.locator("path.rp-cm-new").count() == len(new)

    # R1's two strings share one route: the last drawn, S2, is the one on top
    text = hostile.tooltip_of("circuit", f"{HOSTILE['R1']}/S2", "new")
    assert f"{HOSTILE['R1']}/S2" in text and "longer" in text
    assert hostile.page.locator(".leaflet-container img").count() == 0
    text = hostile.tooltip_of("circuit", "R0/S1", "old (dashed grey)")
    assert "removed </script><img src=y onerror=alert(4)>" in text
    moved = f"{HOSTILE['CB1']} moved 20.0 m"
    assert moved in hostile.tooltip_of("moved", moved)
    text = hostile.tooltip_of("segment", f"{HOSTILE['T2']}@0.0-23.0")
    assert HOSTILE["T2"] in text
    assert "R`2/S3" in hostile.tooltip_of("circuit", "R`2/S3", "new")

    panel = hostile.page.locator("#rp-panel").inner_text()
    assert HOSTILE["site"] in panel
    assert f"trench {HOSTILE['CB1']}" in panel and "m</script>" in panel
    assert hostile.page.title() == f"{HOSTILE['site']} – changes"
    assert hostile.page.locator("b", has_text="bold").count() == 0
    hostile.page.screenshot(path=str(screenshots / "changemap-hostile.png"), animations="disabled")
    hostile.assert_clean()


def test_screenshot(changes: ChangePage, screenshots: Path):
    path = screenshots / "changemap.png"
    changes.page.screenshot(path=str(path), animations="disabled")
    assert path.stat().st_size > 10_000
