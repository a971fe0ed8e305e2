"""``placement.html`` in a real browser: headless Debian Chromium driven by playwright.

A ``routeplan place`` run on the straight-trench site of ``tests/routeplan/test_placement.py``
(with a second block, so that one candidate fails), whose trench, inverter and site name are
hostile text. The page is checked against the ``placement.csv`` of the same run (read with the
csv module) and the colours against matplotlib's viridis (the reference library).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import geopandas as gpd
import pytest
from matplotlib import colormaps
from matplotlib.colors import to_hex
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.map.text import MISSING
from routeplan.outputs.schedules import csv_unguard

from ..routeplan.test_placement import straight_site
from .test_map_browser import CHROMIUM_ARGS, VIEWPORT, _chromium

pytestmark = pytest.mark.browser

#: ids and a site name that would run as script or markup if not escaped
TRENCH = "=1+2</script><script>alert(2)</script>"
INVERTER = "INV<img src=x onerror=alert(1)>${alert(3)}`"
SITE_NAME = "Site <b>bold</b> ${alert(4)}"


def _hostile_site(root: Path) -> Path:
    """The straight-trench site (two blocks) with hostile ids and site name."""
    site = straight_site(root, second_block=True)
    trenches = gpd.read_file(site / "trenches.geojson")
    trenches["id"] = [TRENCH]
    trenches.to_file(site / "trenches.geojson", engine="pyogrio")
    for name in ("inverters", "combiners"):
        frame = gpd.read_file(site / f"{name}.geojson")
        col = "id" if name == "inverters" else "to"
        frame[col] = frame[col].replace({"INV1": INVERTER})
        frame.to_file(site / f"{name}.geojson", engine="pyogrio")
    toml = (site / "site.toml").read_text(encoding="utf-8")
    (site / "site.toml").write_text(
        toml.replace('name = "Straight trench"', f"name = {json.dumps(SITE_NAME)}"),
        encoding="utf-8",
    )
    return site


@pytest.fixture(scope="module")
def placed(tmp_path_factory) -> tuple[Path, list[dict[str, str]]]:
    """The output folder of one ``place`` run and its placement.csv rows (text cells)."""
    root = tmp_path_factory.mktemp("placemap")
    site = _hostile_site(root / "site")
    out = root / "out"
    args = ["place", str(site), "--inverter", INVERTER, "--radius", "80", "--step", "20"]
    result = CliRunner().invoke(app, [*args, "--out", str(out)])
    assert result.exit_code == 0, result.output
    with (out / "placement.csv").open(encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    # the trench id is guarded against formulas in the CSV (OWASP "CSV Injection"); the map
    # shows the value (csv_unguard), so the rows compared below are unguarded
    assert {r["trench_id"] for r in rows} == {"", "'" + TRENCH}
    rows = [{k: csv_unguard(v) for k, v in r.items()} for r in rows]
    return out, rows


@pytest.fixture(scope="module")
def browser():
    chromium = _chromium()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS)
        yield b
        b.close()


@pytest.fixture
def page(browser, placed):
    """The map open in a new page, with everything it reported."""
    out, _ = placed
    pg = browser.new_page(viewport=VIEWPORT)
    seen = {"errors": [], "requests": [], "failed": [], "dialogs": []}
    pg.on("console", lambda m: seen["errors"].append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda e: seen["errors"].append(str(e)))
    pg.on("request", lambda r: seen["requests"].append(r.url))
    pg.on("requestfailed", lambda r: seen["failed"].append(r.url))
    pg.on("dialog", lambda d: (seen["dialogs"].append(d.message), d.dismiss()))
    pg.goto((out / "placement.html").as_uri())
    pg.wait_for_function("window.rpPlaceMap instanceof L.Map")
    yield pg, seen
    assert seen["errors"] == [] and seen["failed"] == [] and seen["dialogs"] == []
    assert all(u.startswith(("file:", "data:")) for u in seen["requests"]), seen["requests"]
    pg.close()


#: where candidate marker ``i`` (order of placement.csv) is on the page, and how it is drawn
MARKER = """i => {
    const map = window.rpPlaceMap, m = window.rpCandidates[i];
    const box = map.getContainer().getBoundingClientRect();
    const p = map.latLngToContainerPoint(m.getLatLng());
    const path = m._path;
    return {x: box.left + p.x, y: box.top + p.y, fill: path.getAttribute('fill'),
            cls: path.getAttribute('class'), dash: path.getAttribute('stroke-dasharray'),
            lat: m.getLatLng().lat, lng: m.getLatLng().lng};
}"""

RING = """cls => {
    const el = document.querySelector('path.' + cls);
    let found = null;
    window.rpPlaceMap.eachLayer(l => { if (l._path === el) { found = l; } });
    return found && {lat: found.getLatLng().lat, lng: found.getLatLng().lng,
                     interactive: el.classList.contains('leaflet-interactive')};
}"""


def _details(pg) -> dict[str, str]:
    return pg.evaluate(
        """() => Object.fromEntries([...document.querySelectorAll('#rp-details td')]
                .map(td => [td.dataset.column, td.textContent]))"""
    )


def test_one_marker_per_candidate_and_the_best_is_rank_one(page, placed, tmp_path):
    pg, _ = page
    _, rows = placed
    assert pg.locator("path.rp-cand").count() == len(rows)
    assert pg.locator("path.rp-cand.rp-best").count() == 1
    assert pg.locator("path.rp-cand.rp-current").count() == 1
    best = next(i for i, r in enumerate(rows) if r["rank"] == "1")
    assert "rp-best" in pg.evaluate(MARKER, best)["cls"]
    # drawn last, so that no other candidate covers it
    last = "[...document.querySelectorAll('path.rp-cand')].pop().getAttribute('class')"
    assert "rp-best" in pg.evaluate(last)
    # the best ring stands on the rank-1 candidate and takes no clicks
    ring, marker = pg.evaluate(RING, "rp-best-ring"), pg.evaluate(MARKER, best)
    assert ring["interactive"] is False
    assert (ring["lat"], ring["lng"]) == pytest.approx((marker["lat"], marker["lng"]), abs=1e-9)
    current = next(i for i, r in enumerate(rows) if r["candidate"] == "0")
    ring = pg.evaluate(RING, "rp-current-ring")
    assert (ring["lat"], ring["lng"]) == pytest.approx(
        (pg.evaluate(MARKER, current)["lat"], pg.evaluate(MARKER, current)["lng"]), abs=1e-9
    )
    # a click on the best marker shows the rank-1 row, each value as placement.csv holds it
    pg.mouse.click(marker["x"], marker["y"])
    pg.wait_for_selector("#rp-details:not([hidden])")
    assert pg.get_attribute("#rp-details", "data-candidate") == rows[best]["candidate"]
    assert _details(pg) == {k: (v if v != "" else MISSING) for k, v in rows[best].items()}
    assert (
        pg.locator("#rp-details h2").inner_text() == f"Candidate {rows[best]['candidate']} (rank 1)"
    )
    pg.screenshot(path=tmp_path / "placement_best.png", animations="disabled")


def test_colours_follow_viridis_and_infeasible_candidates_are_hollow(page, placed, tmp_path):
    pg, _ = page
    _, rows = placed
    feasible = [i for i, r in enumerate(rows) if r["feasible"] == "True"]
    infeasible = [i for i, r in enumerate(rows) if r["feasible"] == "False"]
    assert feasible and infeasible  # the second block makes one position fail (see the site)
    viridis = colormaps["viridis"]
    objective = {i: float(rows[i]["objective"]) for i in feasible}
    low, high = min(objective, key=objective.get), max(objective, key=objective.get)
    # smallest objective: viridis at t = 1 (#fde725); largest: at t = 0 (#440154) (matplotlib)
    assert pg.evaluate(MARKER, low)["fill"] == to_hex(viridis(1.0))
    assert pg.evaluate(MARKER, high)["fill"] == to_hex(viridis(0.0))
    i = infeasible[0]
    m = pg.evaluate(MARKER, i)
    assert "rp-infeasible" in m["cls"] and m["fill"] == "#FFFFFF" and m["dash"] == "3 3"
    # hover: the reason, from the row's counts
    pg.mouse.move(m["x"], m["y"])
    tip = pg.locator(".leaflet-tooltip.rp-tip").filter(has_text="not feasible").inner_text()
    n = int(rows[i]["failing_in_block"])
    assert f"{n} circuits of block {INVERTER} fail" in tip
    assert f"rank {rows[i]['rank']}" in tip
    pg.mouse.click(m["x"], m["y"])
    pg.wait_for_selector("#rp-details:not([hidden])")
    assert _details(pg) == {k: (v if v != "" else MISSING) for k, v in rows[i].items()}
    assert pg.locator("#rp-details .rp-why").inner_text().startswith("Not feasible: ")
    pg.screenshot(path=tmp_path / "placement_infeasible.png", animations="disabled")


def test_hostile_text_is_shown_as_text_and_the_caution_is_visible(page, placed):
    pg, seen = page
    _, rows = placed
    # the inverter id and site name in the panel, as text; no element made from them
    panel = pg.locator("#rp-panel").inner_text()
    assert INVERTER in panel and SITE_NAME in panel
    assert pg.locator("#rp-panel img, #rp-panel b b, body > script ~ img").count() == 0
    assert pg.evaluate("document.querySelectorAll('img').length") == 0
    assert pg.locator(".rp-caution").is_visible()
    assert "qualified, licensed person" in pg.locator(".rp-caution").inner_text()
    # the trench id: on hover of the trench, and in a candidate's details
    on_trench = next(i for i, r in enumerate(rows) if r["trench_id"] == TRENCH)
    pg.mouse.click(*(lambda m: (m["x"], m["y"]))(pg.evaluate(MARKER, on_trench)))
    pg.wait_for_selector("#rp-details:not([hidden])")
    assert _details(pg)["trench_id"] == TRENCH
    assert pg.title() == f"Placement of inverter {INVERTER} — {SITE_NAME}"
    assert seen["dialogs"] == []
