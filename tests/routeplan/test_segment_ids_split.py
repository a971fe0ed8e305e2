"""Trench segment ids from chainage (README, Outputs: ``<trench>@<from>-<to>``) stay put when
the site is edited elsewhere: a new stub or tap that splits one segment renames only that
segment (into its two parts), every other segment and every route that did not run the split
segment keep their ids; and a re-plan with the cache after such a split writes the same files
as a cold run.

The site (invented) is the base site of tests/conftest.py with a third trench: T1 (42, 30) →
(42, 0), T2 (42, 0) → (150, 0), T3 (150, 0) → (150, 40); rows R1 (y = 10) and R2 (y = 20..24)
tap T1 at x = 42, CB1 (45, 0) and INV1 (100, -2) tap T2, the grid point G1 (150, 3) taps T3
(0 m away, where T2's end is 3 m away). Every id below is worked out by hand from these
coordinates: the chainage is the distance from the trench's first vertex along it.
"""

from __future__ import annotations

from pathlib import Path

import geopandas as gpd
import pandas as pd
import pytest
import shapely
from shapely.geometry import LineString
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.network import build_network
from routeplan.pipeline import plan

from ..conftest import E0, N0, UTM33, base_frames, write_site
from .test_cache import same_gpkg

runner = CliRunner()


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def frames(*, stub: bool = False, row: bool = False, t3_bend: bool = False) -> dict:
    """The site; ``stub`` adds trench T4 (70, -20) → (70, 0) ending on T2; ``row`` adds row R3
    (x = 70, y -3 → -30, 2 strings to CB1), tapping T2 at (70, 0); ``t3_bend`` continues T3 from
    (150, 40) east to (180, 40)."""
    f = base_frames()
    t3 = [xy(150, 0), xy(150, 40)] + ([xy(180, 40)] if t3_bend else [])
    ids, geoms = (
        ["T1", "T2", "T3"],
        [
            LineString([xy(42, 30), xy(42, 0)]),
            LineString([xy(42, 0), xy(150, 0)]),
            LineString(t3),
        ],
    )
    if stub:
        ids.append("T4")
        geoms.append(LineString([xy(70, -20), xy(70, 0)]))
    f["trenches"] = gpd.GeoDataFrame(
        {"id": ids, "depth_m": 0.8, "laying": "direct"}, geometry=geoms, crs=UTM33
    )
    if row:
        rows = f["rows"]
        extra = gpd.GeoDataFrame(
            {"id": ["R3"], "strings": [2], "module": ["mod1"], "to": ["CB1"]},
            geometry=[LineString([xy(70, -3), xy(70, -30)])],
            crs=UTM33,
        )
        f["rows"] = gpd.GeoDataFrame(pd.concat([rows, extra], ignore_index=True), crs=UTM33)
    return f


#: hand: T1 cut where R2 (y = 20, chainage 10) and R1 (y = 10, chainage 20) tap it; T2 where
#: CB1 (x = 45, chainage 3) and INV1 (x = 100, chainage 58) tap it, 108 m long; T3 where G1
#: (y = 3, chainage 3) taps it, 40 m long
BEFORE = [
    "T1@0.0-10.0",
    "T1@10.0-20.0",
    "T1@20.0-30.0",
    "T2@0.0-3.0",
    "T2@3.0-58.0",
    "T2@58.0-108.0",
    "T3@0.0-3.0",
    "T3@3.0-40.0",
]
#: hand: each circuit's segments in route order (rows down T1 to the corner, along T2 to CB1;
#: the array circuit CB1 → INV1 along T2; the AC circuit INV1 → G1 along T2 then T3)
ROUTES = {
    "R1/S1": "T1@20.0-30.0;T2@0.0-3.0",
    "R1/S2": "T1@20.0-30.0;T2@0.0-3.0",
    "R2/S1": "T1@10.0-20.0;T1@20.0-30.0;T2@0.0-3.0",
    "R2/S2": "T1@10.0-20.0;T1@20.0-30.0;T2@0.0-3.0",
    "R2/S3": "T1@10.0-20.0;T1@20.0-30.0;T2@0.0-3.0",
    "A:CB1": "T2@3.0-58.0",
    "AC:INV1": "T2@58.0-108.0;T3@0.0-3.0",
}
#: hand: x = 70 is 70 - 42 = 28 m along T2, so T2@3.0-58.0 splits into these two
SPLIT = "T2@3.0-58.0"
PARTS = ["T2@3.0-28.0", "T2@28.0-58.0"]


def planned(tmp_path: Path, name: str, **edit: bool) -> tuple[list[str], dict[str, str]]:
    """Plan the site (in memory): its segment ids and each circuit's ``trench_segments``."""
    p = plan(write_site(tmp_path / name, frames(**edit)))
    routes = dict(zip(p.circuits["circuit_id"], p.circuits["trench_segments"], strict=True))
    return p.segments["segment_id"].tolist(), routes


@pytest.fixture
def before(tmp_path) -> tuple[list[str], dict[str, str]]:
    ids, routes = planned(tmp_path, "before")
    assert ids == BEFORE
    assert routes == ROUTES
    return ids, routes


@pytest.mark.parametrize(
    ("edit", "new"),
    [
        ("stub", ["T4@0.0-20.0"]),  # the new trench, 20 m from (70, -20) up to T2
        ("row", []),  # a new row tapping T2: no new trench
    ],
)
def test_a_split_renames_only_the_split_segment(before, tmp_path, edit, new):
    ids, routes = before
    after_ids, after_routes = planned(tmp_path, edit, **{edit: True})
    # the set of ids differs exactly by the split segment → its two parts (and the new trench)
    assert set(ids) - set(after_ids) == {SPLIT}
    assert set(after_ids) - set(ids) == {*PARTS, *new}
    # the parts take the split segment's place, in order along T2
    i = ids.index(SPLIT)
    assert after_ids[: i + 2] == [*ids[:i], *PARTS]
    # every circuit that did not run the split segment keeps its text; A:CB1 (CB1 → INV1)
    # ran it and now runs both parts, in the same direction
    for cid, text in routes.items():
        expected = PARTS_TEXT if cid == "A:CB1" else text
        assert after_routes[cid] == expected, cid
    if edit == "row":
        # hand: R3's strings tap T2 at chainage 28 and run west to CB1 (chainage 3)
        assert after_routes["R3/S1"] == after_routes["R3/S2"] == "T2@3.0-28.0"
    else:
        assert set(after_routes) == set(routes)


PARTS_TEXT = ";".join(PARTS)


def test_a_trench_edit_leaves_the_other_trenches_ids(before, tmp_path):
    _, routes = before
    # T3 bends at (150, 40) and runs 30 m more east: hand, its last segment now ends at
    # 40 + 30 = 70 m; T1 and T2 (far from the edit) and T3's first segment keep their ids
    after_ids, after_routes = planned(tmp_path, "bend", t3_bend=True)
    assert after_ids == [*BEFORE[:-1], "T3@3.0-70.0"]
    # no route ran T3's far segment: every route is as before
    assert after_routes == routes


# -- re-plan with the cache after a split equals a cold run -------------------------------------


def csvs(out: Path) -> dict[str, bytes]:
    """Every CSV file of an output folder, by name."""
    return {p.name: p.read_bytes() for p in sorted(out.glob("*.csv"))}


@pytest.mark.parametrize("edit", ["stub", "row"])
def test_a_cached_replan_after_a_split_equals_a_cold_run(tmp_path, edit):
    site = write_site(tmp_path / "site", frames())
    out = tmp_path / "out"
    first = runner.invoke(app, ["plan", str(site), "--out", str(out)])
    assert first.exit_code == 0, first.output
    before = csvs(out)
    assert f"\n{SPLIT}," in before["trench_schedule.csv"].decode("utf-8")
    # the edit: a new trench stub (new noding) or a new row (noding reused, new taps)
    write_site(site, frames(**{edit: True}))
    warm = runner.invoke(app, ["plan", str(site), "--out", str(out)])
    assert warm.exit_code == 0, warm.output
    reuse = next(t for t in warm.output.splitlines() if t.startswith("cache:"))
    # the outputs were updated in place (the incremental writers), not written anew
    assert "outputs updated: " in reuse and "GeoPackage rows rewritten" in reuse, reuse
    assert ("trench noding" in reuse) == (edit == "row"), reuse
    cold_out = tmp_path / "cold"
    cold = runner.invoke(app, ["plan", str(site), "--out", str(cold_out), "--no-cache"])
    assert cold.exit_code == 0, cold.output
    warm_csvs, cold_csvs = csvs(out), csvs(cold_out)
    assert sorted(warm_csvs) == sorted(cold_csvs) == sorted(before)
    for name in cold_csvs:
        assert warm_csvs[name] == cold_csvs[name], name  # byte for byte
    # the split shows in the files: a stale reuse could not pass
    text = warm_csvs["trench_schedule.csv"].decode("utf-8")
    assert f"\n{SPLIT}," not in text
    assert all(f"\n{part}," in text for part in PARTS)
    assert f"{PARTS_TEXT}," in warm_csvs["cable_schedule.csv"].decode("utf-8")
    # the workbook, updated too: the same bytes as cold
    xlsx = "cable_schedule.xlsx"
    assert (out / xlsx).read_bytes() == (cold_out / xlsx).read_bytes()
    # and the GeoPackage holds the same features, by key (test_cache's comparison)
    same_gpkg(out / "routes.gpkg", cold_out / "routes.gpkg")


def test_the_site_is_what_the_docstring_says():
    # shapely: the cut points' chainage along T2 and T3, from their first vertex
    f = frames()
    t2, t3 = f["trenches"].geometry.iloc[1], f["trenches"].geometry.iloc[2]
    pts = [shapely.Point(xy(x, 0)) for x in (45, 70, 100)]
    # (abs: the site lies 500 km east of the CRS origin, where a float's step is 1e-10 m)
    assert [t2.project(p) for p in pts] == pytest.approx([3.0, 28.0, 58.0], abs=1e-9)
    lengths = (t2.length, t3.project(shapely.Point(xy(150, 3))), t3.length)
    assert lengths == pytest.approx((108.0, 3.0, 40.0), abs=1e-9)


# -- a tap that joins an existing node splits nothing and renames nothing -----------------------


def net_ids(*taps: tuple[str, float, float]) -> tuple[list[str], list[float], list[float]]:
    """Ids, start_m and end_m of trench T1 (0, 0) → (100, 0) with combiners tapping it."""
    tr = gpd.GeoDataFrame({"id": ["T1"]}, geometry=[LineString([(0, 0), (100, 0)])], crs=UTM33)
    eq = gpd.GeoDataFrame(
        {"layer": "combiners", "feature_id": [t[0] for t in taps]},
        geometry=[shapely.Point(t[1], t[2]) for t in taps],
        crs=UTM33,
    )
    s = build_network(tr, eq).segments  # node_tol_m 0.1 m, the default
    return s["segment_id"].tolist(), s["start_m"].tolist(), s["end_m"].tolist()


@pytest.mark.parametrize("x", [60.08, 59.92])
def test_a_tap_joining_an_existing_node_renames_no_segment(x):
    # hand: CB1 taps T1 at x = 20 and CB2 at x = 60: T1@0.0-20.0, T1@20.0-60.0, T1@60.0-100.0
    before = net_ids(("CB1", 20, -3), ("CB2", 60, -4))
    assert before == (
        ["T1@0.0-20.0", "T1@20.0-60.0", "T1@60.0-100.0"],
        [0.0, 20.0, 60.0],
        [20.0, 60.0, 100.0],
    )
    # CB3 taps T1 8 cm beside CB2's tap: within node_tol (0.1 m) it joins CB2's node, which
    # stays at CB2's tap (its first candidate). No segment is split, no segment's stretch
    # moves: every id and chainage stays (before the fix, the segment on CB3's side took
    # CB3's chainage: T1@60.1-100.0 or T1@20.0-59.9)
    after = net_ids(("CB1", 20, -3), ("CB2", 60, -4), ("CB3", x, 2))
    assert after[0] == before[0]
    assert after[1] == pytest.approx(before[1], abs=1e-9)  # start_m
    assert after[2] == pytest.approx(before[2], abs=1e-9)  # end_m
