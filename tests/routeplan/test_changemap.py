"""The change map of ``routeplan diff`` (:mod:`routeplan.diff.changemap`), read as HTML.

Two real plans of a small hand-built site (tests/conftest.py) are made with the command line.
Layout in the site's local frame [m] (origin E 500 000, N 5 300 000, EPSG:32633)::

          R3 ─────────── (new only, 1 string) ── CB2 (new only, at 45, 32)
          T1 runs x = 42 from y = 30 down to y = 0
          R2, R1 rows (as in the base site)
          T2 runs y = 0 from x = 42 to 150; CB1 at x = 45 (old) → x = 65 (new): 20.0 m
          R0 ── (old only, 1 string, y = -12) ── T3 (old only, x = 60, y 0 … -20), CB0 at (62, -12)
                                                  INV1 (100, -2)        G1 (150, 3)

The diff's tables (circuits, segment events, plant block) are written out by hand from what
the two plans hold (the lead's comparison makes them in the command); the map is checked
against the plans' own GeoPackages read with GDAL (geopandas/pyogrio), distances against
shapely, coordinates against pyproj.
"""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import pytest
import shapely
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import DiffError
from routeplan.diff.changemap import render_change_map
from routeplan.diff.changemap_features import (
    LOOK_COLOUR,
    LOOKS,
    OKABE_ITO,
    OLD_COLOUR,
    OLD_DASH,
    ids_of,
    look_key,
)
from routeplan.map.features import expand
from routeplan.map.panel import CAUTION
from routeplan.map.text import escape_text

from ..conftest import E0, N0, SITE_TOML, base_frames, write_site

runner = CliRunner()

#: the ids of the hostile twin: each would run as script, or end the page's script, if it
#: reached the page unescaped
HOSTILE = {
    "R1": "<img src=x onerror=alert(1)>",
    "R2": "R`2",
    "CB1": "${alert(1)}`CB",
    "T2": "</script><b>T2</b>",
    "INV1": "INV\\1",
    "site": "Site </script>${alert(3)}`<b>bold</b>\\",
}
#: the combiner CB1 moves this far along x between the plans [m]
MOVE_M = 20.0


def _xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def scenario_frames(version: str, names: dict[str, str] | None = None) -> dict:
    """The site of the ``old`` or ``new`` plan (see the module docstring); ``names`` renames
    ids."""
    names = names or {}
    f = base_frames()
    crs = f["rows"].crs
    if version == "old":
        row, y, x0, x1, cb, at = "R0", -12, 20, 50, "CB0", (62, -12)
        t3 = gpd.GeoDataFrame(
            {"id": ["T3"], "depth_m": [0.8], "laying": ["direct"]},
            geometry=[LineString([_xy(60, 0), _xy(60, -20)])],
            crs=crs,
        )
        f["trenches"] = pd.concat([f["trenches"], t3], ignore_index=True)
    else:
        row, y, x0, x1, cb, at = "R3", 30, 0, 40, "CB2", (45, 32)
        f["combiners"] = f["combiners"].set_geometry([Point(_xy(45 + MOVE_M, 0))], crs=crs)
    extra_row = gpd.GeoDataFrame(
        {"id": [row], "strings": [1], "module": ["mod1"], "to": [cb]},
        geometry=[LineString([_xy(x0, y), _xy(x1, y)])],
        crs=crs,
    )
    extra_cb = gpd.GeoDataFrame(
        {"id": [cb], "to": ["INV1"], "max_strings": [12]}, geometry=[Point(_xy(*at))], crs=crs
    )
    f["rows"] = pd.concat([f["rows"], extra_row], ignore_index=True)
    f["combiners"] = pd.concat([f["combiners"], extra_cb], ignore_index=True)
    for frame in f.values():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: names.get(v, v))
    return f


def plan_pair(root: Path, names: dict[str, str] | None = None) -> dict[str, Path]:
    """The two plans, made with the command line: {"old": folder, "new": folder}."""
    names = names or {}
    toml = SITE_TOML
    if "site" in names:
        toml = toml.replace('"Test site"', json.dumps(names["site"]))
    out = {}
    for version in ("old", "new"):
        site = write_site(root / f"site-{version}", scenario_frames(version, names), toml=toml)
        folder = root / version
        result = runner.invoke(
            app, ["plan", str(site), "--out", str(folder), "--quiet", "--no-cache"]
        )
        assert result.exit_code == 0, result.output
        out[version] = folder
    return out


def diff_tables(names: dict[str, str] | None = None) -> dict[str, pd.DataFrame]:
    """The diff's tables for the pair, written out by hand from the two plans' schedules."""
    names = names or {}

    def n(key: str) -> str:
        return names.get(key, key)

    t2 = n("T2")
    circuits = pd.DataFrame(
        [
            (f"{n('R1')}/S1", "string", "longer", "route_m 15.00 → 35.00 (+20.00)"),
            (f"{n('R1')}/S2", "string", "longer", "route_m 15.00 → 35.00 (+20.00)"),
            (f"{n('R2')}/S1", "string", "size up", "size_mm2 4.0 → 6.0"),
            (f"{n('R2')}/S2", "string", "size up", "size_mm2 4.0 → 6.0"),
            (f"{n('R2')}/S3", "string", "size up", "size_mm2 4.0 → 6.0"),
            ("R0/S1", "string", "removed", "removed </script><img src=y onerror=alert(4)>"),
            ("R3/S1", "string", "added", "added ${alert(5)}"),
            (f"A:{n('CB1')}", "array", "shorter", "route_m 57.00 → 37.00 (−20.00)"),
            ("A:CB0", "array", "removed", "removed"),
            ("A:CB2", "array", "added", "added"),
        ],
        columns=["circuit_id", "kind", "look", "summary"],
    )
    segments = pd.DataFrame(
        [
            ("removed", "T3", ("T3@0.0-12.0", "T3@12.0-20.0"), (), "trench T3 removed `x`"),
            (
                "merged",
                t2,
                (f"{t2}@0.0-3.0", f"{t2}@3.0-18.0"),
                (f"{t2}@0.0-23.0",),
                "2 segments → 1: 18.0 m → 23.0 m",
            ),
            ("changed", "T1", ("T1@0.0-10.0",), ("T1@0.0-10.0",), "circuits 0 → 1 <b>x</b>"),
        ],
        columns=["event", "trench_id", "old_ids", "new_ids", "text"],
    )
    plant = pd.DataFrame(
        [
            ("cable Cu 4.0 mm² string", "m", 200.0, 150.5, -49.5),
            ("cable Cu 6.0 mm² string", "m", np.nan, 205.05, np.nan),
            (f"trench {HOSTILE['CB1']}", "m</script>", 201.0, 190.0, -11.0),
        ],
        columns=["item", "unit", "old", "new", "delta"],
    )
    return {"circuits": circuits, "segments": segments, "plant": plant}


# -- reading the page -------------------------------------------------------------------------

_DATA = re.compile(r"(rp_\w+)\.addData\(rpFeatures\(JSON\.parse\('(.*?)'\)\)\);", re.S)
_STYLES = re.compile(
    r"var (rp_\w+) = L\.geoJson\(null, \{\s*style: \(function\(\) \{\s*var t = (\[.*?\]);\n", re.S
)


def page_layers(html: str) -> dict[str, dict]:
    """Each drawn layer of the page by its script name: its features and its style table."""
    styles = {m.group(1): json.loads(m.group(2)) for m in _STYLES.finditer(html)}
    out = {}
    for m in _DATA.finditer(html):
        text = m.group(2).replace("\\'", "'").replace("\\\\", "\\")
        out[m.group(1)] = {
            "features": expand(json.loads(text))["features"],
            "styles": styles[m.group(1)],
        }
    return out


def prop(layer: dict, key: str) -> list[str]:
    return [f["properties"].get(key, "") for f in layer["features"]]


def utm_coords(feature: dict) -> np.ndarray:
    """A drawn feature's lon/lat coordinates back in EPSG:32633 (pyproj)."""
    g = shapely.geometry.shape(feature["geometry"])
    to_utm = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True)
    return np.column_stack(to_utm.transform(*shapely.get_coordinates(g).T))


# -- fixtures ---------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def pair(tmp_path_factory) -> dict[str, Path]:
    return plan_pair(tmp_path_factory.mktemp("changemap"))


@pytest.fixture(scope="module")
def page(pair) -> str:
    t = diff_tables()
    return render_change_map(pair["old"], pair["new"], t["circuits"], t["segments"], t["plant"])


@pytest.fixture(scope="module")
def layers(page) -> dict[str, dict]:
    return page_layers(page)


def gpkg(folder: Path, layer: str) -> gpd.GeoDataFrame:
    return gpd.read_file(folder / "routes.gpkg", layer=layer)


# -- the hand-written tables match the plans ---------------------------------------------------


def test_the_scenario_changes_what_the_tables_say(pair):
    old, new = gpkg(pair["old"], "circuits"), gpkg(pair["new"], "circuits")
    o = old.set_index("circuit_id")
    n = new.set_index("circuit_id")
    t = diff_tables()["circuits"]
    for cid, look in zip(t["circuit_id"], t["look"], strict=True):
        assert (cid in o.index) == (look != "added"), cid
        assert (cid in n.index) == (look != "removed"), cid
        if look == "longer":
            assert n.loc[cid, "route_m"] > o.loc[cid, "route_m"]
        if look == "shorter":
            assert n.loc[cid, "route_m"] < o.loc[cid, "route_m"]
        if look == "size up":
            assert n.loc[cid, "size_mm2"] > o.loc[cid, "size_mm2"]
    seg_old = set(gpkg(pair["old"], "segments")["segment_id"])
    seg_new = set(gpkg(pair["new"], "segments")["segment_id"])
    assert {"T3@0.0-12.0", "T3@12.0-20.0"} <= seg_old and not any(
        s.startswith("T3") for s in seg_new
    )


# -- circuits ---------------------------------------------------------------------------------


def test_each_changed_circuit_is_drawn_in_both_versions(layers, pair):
    t = diff_tables()["circuits"]
    old_ids = sorted(t["circuit_id"][t["look"] != "added"])
    new_ids = sorted(t["circuit_id"][t["look"] != "removed"])
    assert sorted(prop(layers["rp_cm_old_ok"], "circuit")) == old_ids
    drawn_new = [
        (cid, name) for name, lay in layers.items() if name.startswith("rp_cm_new_")
        for cid in prop(lay, "circuit")
    ]  # fmt: skip
    assert sorted(c for c, _ in drawn_new) == new_ids
    # each drawn where its plan's routes.gpkg has it (to 0.1 m: 6 decimals of a degree)
    for version, names in (("old", ["rp_cm_old_ok"]), ("new", [n for _, n in drawn_new])):
        routes = gpkg(pair[version], "circuits").set_index("circuit_id")
        for name in set(names):
            for f in layers[name]["features"]:
                want = shapely.get_coordinates(routes.loc[f["properties"]["circuit"], "geometry"])
                got = utm_coords(f)
                assert len(got) <= len(want)  # simplified lightly, never more points
                line = shapely.LineString(want)
                assert shapely.distance(shapely.points(got), line).max() < 0.1, f["properties"]
                assert np.allclose(got[[0, -1]], want[[0, -1]], atol=0.1)


def test_old_routes_are_dashed_grey_and_new_ones_coloured_by_change(layers):
    old = layers["rp_cm_old_ok"]
    grey = [int(OLD_COLOUR[i : i + 2], 16) for i in (1, 3, 5)]
    assert len(set(grey)) == 1  # R = G = B: a grey
    assert old["styles"] == [
        {
            "color": OLD_COLOUR,
            "weight": 7.0,
            "opacity": 0.9,
            "dashArray": OLD_DASH,
            "lineCap": "butt",
        }
    ]
    assert set(prop(old, "plan")) == {"old (dashed grey)"}
    t = diff_tables()["circuits"]
    looks = dict(zip(t["circuit_id"], t["look"], strict=True))
    for name, lay in layers.items():
        if not name.startswith("rp_cm_new_"):
            continue
        (style,) = lay["styles"]
        assert "dashArray" not in style
        for cid in prop(lay, "circuit"):
            assert style["color"] == LOOK_COLOUR[looks[cid]], cid
        assert set(prop(lay, "plan")) == {"new"}
    # the tooltip says what changed, in the circuits table's words
    longer = layers["rp_cm_new_longer"]
    assert prop(longer, "summary") == [escape_text("route_m 15.00 → 35.00 (+20.00)")] * 2
    assert prop(longer, "change") == ["longer"] * 2


def test_circuits_drawn_on_one_line_name_each_other(layers):
    # the strings of a row share their whole route (rows are a line each in this site): the
    # top one hides the others, so each tooltip names every circuit on that line
    assert prop(layers["rp_cm_new_longer"], "same") == ["2 circuits: R1/S1, R1/S2"] * 2
    assert prop(layers["rp_cm_new_size_up"], "same") == ["3 circuits: R2/S1, R2/S2, R2/S3"] * 3
    assert prop(layers["rp_cm_new_shorter"], "same") == [""]  # A:CB1 runs alone
    old = dict(zip(prop(layers["rp_cm_old_ok"], "circuit"), prop(layers["rp_cm_old_ok"], "same"),
                   strict=True))  # fmt: skip
    assert old["R1/S2"] == "2 circuits: R1/S1, R1/S2" and old["A:CB1"] == ""


def test_now_failing_is_thick_vermillion_and_an_unknown_look_is_other(pair):
    t = diff_tables()
    c = t["circuits"].copy()
    c.loc[c["circuit_id"] == "R3/S1", "look"] = "now failing"
    c.loc[c["circuit_id"] == "A:CB2", "look"] = "Renamed <i>x</i>"
    drawn = page_layers(render_change_map(pair["old"], pair["new"], c, t["segments"], t["plant"]))
    failing = drawn["rp_cm_new_now_failing"]
    assert prop(failing, "circuit") == ["R3/S1"]
    assert failing["styles"][0]["color"] == OKABE_ITO["vermillion"]
    assert failing["styles"][0]["weight"] > drawn["rp_cm_new_longer"]["styles"][0]["weight"]
    other = drawn["rp_cm_new_other"]
    assert prop(other, "circuit") == ["A:CB2"]
    assert prop(other, "change") == [escape_text("Renamed <i>x</i>")]  # shown as given
    assert other["styles"][0]["color"] == LOOK_COLOUR["other"]


def test_palette_is_okabe_ito_and_every_look_has_a_colour():
    # Okabe & Ito (2008), "Color Universal Design", RGB of the eight colours (from memory)
    rgb = {
        "black": (0, 0, 0), "orange": (230, 159, 0), "sky blue": (86, 180, 233),
        "bluish green": (0, 158, 115), "yellow": (240, 228, 66), "blue": (0, 114, 178),
        "vermillion": (213, 94, 0), "reddish purple": (204, 121, 167),
    }  # fmt: skip
    assert {k: tuple(int(v[i : i + 2], 16) for i in (1, 3, 5)) for k, v in OKABE_ITO.items()} == rgb
    drawn = [k for k in LOOKS if k != "removed"]
    assert set(LOOK_COLOUR) == set(drawn)
    colours = [LOOK_COLOUR[k].upper() for k in drawn]
    assert len(set(colours)) == len(colours)  # one colour per kind of change
    palette = {v.upper() for v in OKABE_ITO.values()}
    assert {c for c in colours if c not in palette} == {LOOK_COLOUR["other"].upper()}
    assert OKABE_ITO["yellow"].upper() not in colours  # yellow is the segment highlighter
    assert LOOK_COLOUR["now failing"] == OKABE_ITO["vermillion"]


def test_look_and_ids_are_read_leniently():
    assert look_key("Now Failing") == "now failing"
    assert look_key("renamed") == "other" and look_key(np.nan) == "other"
    assert ids_of(("a", "b")) == ["a", "b"] and ids_of(["x"]) == ["x"]
    assert ids_of(()) == [] and ids_of(None) == [] and ids_of("T1@10.0-20.0") == ["T1@10.0-20.0"]


# -- segments -----------------------------------------------------------------------------------


def test_changed_segments_are_highlighted_with_their_text(layers):
    new = layers["rp_cm_segments_new"]
    old = layers["rp_cm_segments_old"]
    assert sorted(prop(new, "segment")) == ["T1@0.0-10.0", "T2@0.0-23.0"]
    assert sorted(prop(old, "segment")) == [
        "T3@0.0-12.0",
        "T3@12.0-20.0",
    ]  # the removed trench, from OLD
    assert "dashArray" in old["styles"][0] and "dashArray" not in new["styles"][0]
    by_segment = dict(zip(prop(new, "segment"), prop(new, "text"), strict=True))
    assert by_segment["T1@0.0-10.0"] == escape_text("circuits 0 → 1 <b>x</b>")
    assert by_segment["T2@0.0-23.0"] == escape_text("2 segments → 1: 18.0 m → 23.0 m")
    assert set(prop(old, "text")) == {escape_text("trench T3 removed `x`")}
    assert set(prop(old, "old_ids")) == {"T3@0.0-12.0, T3@12.0-20.0"}


def test_segment_bands_lie_on_their_plan_s_segments(layers, pair):
    for version, name in (("new", "rp_cm_segments_new"), ("old", "rp_cm_segments_old")):
        segs = gpkg(pair[version], "segments").set_index("segment_id")
        for f in layers[name]["features"]:
            want = shapely.get_coordinates(segs.loc[f["properties"]["segment"], "geometry"])
            assert np.allclose(utm_coords(f), want, atol=0.1)


# -- equipment ----------------------------------------------------------------------------------


def test_moved_combiner_arrow_gives_the_distance(layers, pair):
    old = gpkg(pair["old"], "equipment").set_index("id")
    new = gpkg(pair["new"], "equipment").set_index("id")
    a, b = old.loc["CB1", "geometry"], new.loc["CB1", "geometry"]
    distance = shapely.distance(a, b)  # shapely
    assert distance == pytest.approx(np.hypot(MOVE_M, 0.0), abs=1e-9)  # the site edit
    arrows = layers["rp_cm_moves_arrows"]
    assert prop(arrows, "moved") == [f"CB1 moved {distance:.1f} m"] == ["CB1 moved 20.0 m"]
    # the arrow's shaft runs from the old position to the new, its head ends at the new one
    (f,) = arrows["features"]
    assert f["geometry"]["type"] == "MultiLineString"
    shaft, head = (shapely.LineString(p) for p in f["geometry"]["coordinates"])
    to_utm = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True)
    xy = np.column_stack(to_utm.transform(*shapely.get_coordinates(shaft).T))
    assert np.allclose(xy, [[a.x, a.y], [b.x, b.y]], atol=0.1)
    tip = to_utm.transform(*shapely.get_coordinates(head)[1])
    assert np.allclose(tip, [b.x, b.y], atol=0.1)


def test_moved_added_and_removed_equipment_markers(layers):
    markers = layers["rp_cm_moves_markers"]
    rows = sorted(
        zip(prop(markers, "equipment"), prop(markers, "change"), prop(markers, "plan"), strict=True)
    )
    assert rows == [
        ("CB0", "removed", "old"),
        ("CB1", "moved 20.0 m", "new position"),
        ("CB1", "moved 20.0 m", "old position"),
        ("CB2", "added", "new"),
    ]
    # the unchanged equipment (INV1, G1) is background only: no tooltip
    assert all("INV1" not in json.dumps(lay["features"]) for n, lay in layers.items()
               if n.startswith("rp_cm_moves"))  # fmt: skip


def test_equipment_that_did_not_move_is_not_an_arrow(pair, tmp_path):
    # the same plan on both sides: nothing moved, nothing added or removed
    t = diff_tables()
    html = render_change_map(
        pair["new"], pair["new"], t["circuits"][:0], t["segments"][:0], t["plant"][:0]
    )
    drawn = page_layers(html)
    assert not any(n.startswith("rp_cm_moves") for n in drawn)
    assert "0 moved · 0 added · 0 removed" in html
    assert "No plant-level change." in html


@pytest.mark.parametrize(
    ("version", "crs", "working"),
    [
        ("old", "EPSG:32632", "EPSG:32633"),  # the old plan in UTM 32N: onto the new one's CRS
        ("new", "EPSG:4326", "EPSG:32633"),  # the new plan in lon/lat: distances in UTM 33N
    ],
)
def test_plans_in_other_crss_are_reprojected(pair, tmp_path, version, crs, working):
    # one plan's routes.gpkg rewritten in another CRS: drawn where it was, distances unchanged
    moved = tmp_path / version
    moved.mkdir()
    (moved / "summary.json").write_bytes((pair[version] / "summary.json").read_bytes())
    for layer in ("circuits", "segments", "rows", "equipment"):
        gpkg(pair[version], layer).to_crs(crs).to_file(moved / "routes.gpkg", layer=layer)
    folders = dict(pair, **{version: moved})
    t = diff_tables()
    html = render_change_map(
        folders["old"], folders["new"], t["circuits"], t["segments"], t["plant"]
    )
    drawn = page_layers(html)
    assert prop(drawn["rp_cm_moves_arrows"], "moved") == ["CB1 moved 20.0 m"]
    assert f"Working CRS {working}, shown in WGS 84." in html
    for plan, name in (("old", "rp_cm_old_ok"), ("new", "rp_cm_new_longer")):
        routes = gpkg(pair[plan], "circuits").set_index("circuit_id")
        for f in drawn[name]["features"]:
            line = routes.loc[f["properties"]["circuit"], "geometry"]
            assert shapely.distance(shapely.points(utm_coords(f)), line).max() < 0.1


# -- panel --------------------------------------------------------------------------------------


def test_panel_counts_plant_table_and_caution(page):
    panel = page[page.index('id="rp-panel"') : page.index('id="rp-legend"')]
    assert "2 added · 2 removed · 2 longer · 1 shorter · 3 size up" in panel
    assert "1 removed · 1 changed · 1 merged" in panel
    assert "1 moved · 1 added · 1 removed" in panel
    # fixed decimals, signed delta with a minus sign, "–" where a value is absent
    assert (
        '<td class="rp-item">cable Cu 4.0 mm² string</td><td>m</td><td class="rp-num">200.00</td>'
        '<td class="rp-num">150.50</td><td class="rp-num">−49.50</td>'
    ) in panel
    assert (
        '<td class="rp-num">–</td><td class="rp-num">205.05</td><td class="rp-num">–</td>' in panel
    )
    assert escape_text(CAUTION) in panel
    assert "Test site" in panel


# -- escaping -----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def hostile_page(tmp_path_factory) -> str:
    pair = plan_pair(tmp_path_factory.mktemp("changemap-hostile"), HOSTILE)
    t = diff_tables(HOSTILE)
    return render_change_map(pair["old"], pair["new"], t["circuits"], t["segments"], t["plant"])


class Tags(HTMLParser):
    """The elements of a page as Python's HTML parser meets them (script text is not markup
    to it, up to the first ``</script``, as for a browser)."""

    def __init__(self, html: str):
        super().__init__(convert_charrefs=True)
        self.tags: list[str] = []
        self.feed(html)

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)


def test_hostile_ids_are_escaped(hostile_page, page):
    html = hostile_page
    for raw in ("<img src=x", "<img src=y", "${alert", "</script><b>", "<b>bold</b>", "INV\\1",
                "R`2"):  # fmt: skip
        assert raw not in html, raw
    # no element was made or cut short by the hostile text: the same elements as the plain page
    assert Tags(html).tags == Tags(page).tags
    drawn = page_layers(html)
    circuits = {
        c for n, lay in drawn.items() if n.startswith("rp_cm_") for c in prop(lay, "circuit")
    }
    assert escape_text(f"{HOSTILE['R1']}/S1") in circuits
    assert escape_text(f"{HOSTILE['R2']}/S3") in circuits
    assert prop(drawn["rp_cm_moves_arrows"], "moved") == [
        escape_text(f"{HOSTILE['CB1']} moved 20.0 m")
    ]
    trench = set(prop(drawn["rp_cm_segments_new"], "trench"))
    assert escape_text(HOSTILE["T2"]) in trench
    title = re.search(r"<title>(.*?)</title>", html, re.S).group(1)
    assert title == escape_text(f"{HOSTILE['site']} – changes")
    assert escape_text(HOSTILE["site"]) in html[html.index('id="rp-panel"') :]


# -- failures -------------------------------------------------------------------------------------


def test_missing_folder_is_one_line_naming_it(pair, tmp_path):
    t = diff_tables()
    with pytest.raises(DiffError) as err:
        render_change_map(
            tmp_path / "nowhere", pair["new"], t["circuits"], t["segments"], t["plant"]
        )
    assert str(err.value).startswith(str(tmp_path / "nowhere" / "routes.gpkg"))
    assert "not found" in str(err.value) and "\n" not in str(err.value)


def test_table_without_a_column_is_named(pair):
    t = diff_tables()
    with pytest.raises(DiffError, match=r"^change map: the circuits table has no column look$"):
        render_change_map(pair["old"], pair["new"], t["circuits"].drop(columns="look"),
                          t["segments"], t["plant"])  # fmt: skip
    with pytest.raises(DiffError, match=r"^change map: the segments table has no column new_ids$"):
        render_change_map(pair["old"], pair["new"], t["circuits"],
                          t["segments"].drop(columns="new_ids"), t["plant"])  # fmt: skip


def test_damaged_folders_are_one_line_naming_the_file(pair, tmp_path):
    t = diff_tables()
    args = (t["circuits"], t["segments"], t["plant"])
    # a routes.gpkg without its equipment layer
    broken = tmp_path / "no-equipment"
    broken.mkdir()
    (broken / "summary.json").write_bytes((pair["new"] / "summary.json").read_bytes())
    for layer in ("circuits", "segments", "rows"):
        gpkg(pair["new"], layer).to_file(broken / "routes.gpkg", layer=layer)
    with pytest.raises(DiffError) as err:
        render_change_map(pair["old"], broken, *args)
    message = str(err.value)
    assert message.startswith(f"{broken / 'routes.gpkg'}: cannot read layer 'equipment'")
    assert "\n" not in message
    # a summary.json without the site's name
    (broken / "summary.json").write_text('{"site": {}}', encoding="utf-8")
    with pytest.raises(
        DiffError, match=rf"^{re.escape(str(broken / 'summary.json'))}: no site\.name$"
    ):
        render_change_map(broken, pair["new"], *args)
