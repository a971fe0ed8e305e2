"""Trench geometry that would corrupt the network: corridors drawn twice, trenches running
back over themselves, far parts of a multi-part trench — refused by `check` and `plan` in
one line each; and problems of several stages reported together, one line per root cause.

Lengths are checked against shapely (reference library): the length of one line inside the
other's flat-capped buffer, or the length of their intersection for collinear lines.
Every site here is invented.
"""

from __future__ import annotations

import copy
import math
import tomllib

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, MultiLineString, Point
from typer.testing import CliRunner

import layers
from routeplan.cli import app
from routeplan.network import overlap_min_m, trench_problems
from tests.conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site

runner = CliRunner()
TOL = 0.1  # the design default node_tol_m [m]
DRAWN_ONCE = "a corridor must be drawn once"


def trenches(*geoms, ids=None) -> gpd.GeoDataFrame:
    ids = ids or [f"T{k + 1}" for k in range(len(geoms))]
    return gpd.GeoDataFrame({"id": ids}, geometry=list(geoms), crs=UTM33)


def messages(frame: gpd.GeoDataFrame, node_tol_m: float = TOL, snap_m: float = 30.0) -> list[str]:
    return [str(p) for p in trench_problems(frame, node_tol_m=node_tol_m, snap_m=snap_m)]


def band_length(a: LineString, b: LineString, tol: float = TOL) -> float:
    """Shared length as shapely measures it: the smaller of each line's length inside the
    other's flat-capped buffer."""
    inside = [
        shapely.length(shapely.intersection(p, shapely.buffer(q, tol, cap_style="flat")))
        for p, q in ((a, b), (b, a))
    ]
    return float(min(inside))


def overlap_line(subject: str, other: str, length_m: float) -> str:
    return (
        f"trenches {subject!r}: overlaps trench {other!r} along {length_m:.1f} m — {DRAWN_ONCE} "
        "(remove the duplicate, or end one trench where the other starts)"
    )


# ---- the measure, against shapely -------------------------------------------------------------


def test_minimum_overlap_is_documented_rule():
    assert overlap_min_m(0.1) == 1.0  # the 1 m floor
    assert overlap_min_m(0.5) == 5.0  # 10 × the tolerance


def test_duplicate_trench():
    a = LineString([(0, 0), (40, 10), (100, 0)])
    assert messages(trenches(a, a)) == [overlap_line("T1", "T2", shapely.length(a))]


def test_duplicate_drawn_the_other_way():
    a = LineString([(0, 0), (40, 10), (100, 0)])
    assert messages(trenches(a, a.reverse())) == [overlap_line("T1", "T2", shapely.length(a))]


def test_partial_overlap_measures_the_shared_stretch():
    a, b = LineString([(0, 0), (100, 0)]), LineString([(58, 0), (200, 0)])
    shared = shapely.length(shapely.intersection(a, b))  # shapely: 42 m
    assert shared == pytest.approx(42.0)
    assert messages(trenches(a, b)) == [overlap_line("T1", "T2", shared)]


def test_partial_overlap_of_polylines_with_different_vertices():
    a = LineString([(0, 0), (30, 0), (60, 0), (100, 0)])
    b = LineString([(45, 0), (75, 0), (120, 0), (120, 50)])
    shared = shapely.length(shapely.intersection(a, b))  # shapely: 55 m
    assert messages(trenches(a, b)) == [overlap_line("T1", "T2", shared)]


def test_near_duplicate_within_the_tolerance():
    a = LineString([(0, 0), (80, 0)])
    b = LineString([(0, 0.07), (80, 0.07)])  # 0.07 m < node_tol_m: noding would join them
    assert messages(trenches(a, b)) == [overlap_line("T1", "T2", band_length(a, b))]
    assert band_length(a, b) == pytest.approx(80.0)


def test_parallel_beyond_the_tolerance_is_not_an_overlap():
    a = LineString([(0, 0), (80, 0)])
    assert messages(trenches(a, LineString([(0, 0.12), (80, 0.12)]))) == []


@pytest.mark.parametrize(
    ("overlap_m", "reported"), [(0.9, False), (1.1, True)]
)  # both sides of overlap_min_m(0.1) = 1 m
def test_collinear_overlap_both_sides_of_the_minimum(overlap_m, reported):
    a, b = LineString([(0, 0), (50, 0)]), LineString([(50 - overlap_m, 0), (90, 0)])
    expected = [overlap_line("T1", "T2", overlap_m)] if reported else []
    assert messages(trenches(a, b)) == expected


@pytest.mark.parametrize(("shared_m", "reported"), [(0.95, False), (1.05, True)])
def test_shallow_y_junction_both_sides_of_the_minimum(shared_m, reported):
    # two trenches leave one point at angle θ: within TOL of each other for TOL / sin θ
    theta = math.asin(TOL / shared_m)
    a = LineString([(0, 0), (60, 0)])
    b = LineString([(0, 0), (60 * math.cos(theta), 60 * math.sin(theta))])
    assert band_length(a, b) == pytest.approx(shared_m, rel=1e-6)  # shapely agrees
    expected = [overlap_line("T1", "T2", shared_m)] if reported else []
    assert messages(trenches(a, b)) == expected


def test_larger_tolerance_scales_the_minimum():
    # node_tol_m 0.5: an offset of 0.4 m is within it; the minimum is 5 m
    a = LineString([(0, 0), (50, 0)])
    assert messages(trenches(a, LineString([(46, 0.4), (90, 0.4)])), node_tol_m=0.5) == []
    assert messages(trenches(a, LineString([(44, 0.4), (90, 0.4)])), node_tol_m=0.5) == [
        overlap_line("T1", "T2", 6.0)
    ]


@pytest.mark.parametrize(
    "other",
    [
        LineString([(50, -40), (50, 40)]),  # crossing
        LineString([(50, 0), (50, 40)]),  # T-junction on the other's side
        LineString([(100, 0), (180, 0)]),  # end to end, continuing straight on
        LineString([(100, 0), (100, 50)]),  # end to end, at a corner
        LineString([(100.05, 0), (180, 0)]),  # continuing, with a gap within the tolerance
        LineString([(20, -10), (80, 10)]),  # crossing at about 18°
    ],
    ids=["crossing", "tee", "straight-on", "corner", "gap", "oblique"],
)
def test_meetings_are_not_overlaps(other):
    assert messages(trenches(LineString([(0, 0), (100, 0)]), other)) == []


def test_many_corners_and_crossings_do_not_add_up():
    # a zig-zag with 40 right-angle corners, crossed 20 times by a straight trench: each
    # meeting lies within the tolerance for about TOL or 2 TOL, far more than 1 m in all
    xs = np.repeat(np.arange(0, 210, 10.0), 2)[1:-1]
    ys = np.tile([-5.0, -5.0, 5.0, 5.0], len(xs))[: len(xs)]
    zigzag = LineString(np.c_[xs, ys])
    assert shapely.get_num_coordinates(zigzag) == 40
    straight = LineString([(-5, 0), (205, 0)])
    assert messages(trenches(zigzag, straight)) == []


# ---- a trench over itself --------------------------------------------------------------------


def test_retrace_there_and_back():
    t = LineString([(0, 0), (100, 0), (70, 0)])  # A → B, then 30 m back towards A
    assert messages(trenches(t)) == [
        f"trenches 'T1': runs back over its own path along 30.0 m — {DRAWN_ONCE} "
        "(remove the stretch drawn twice)"
    ]


def test_retrace_over_an_earlier_stretch():
    # out, round a loop, and back along 25 m of the way out
    t = LineString([(0, 0), (100, 0), (100, 40), (75, 40), (75, 0.0), (50, 0.0)])
    shared = shapely.length(
        shapely.intersection(LineString([(0, 0), (100, 0)]), LineString([(75, 0), (50, 0)]))
    )
    assert messages(trenches(t)) == [
        f"trenches 'T1': runs back over its own path along {shared:.1f} m — {DRAWN_ONCE} "
        "(remove the stretch drawn twice)"
    ]


def test_parts_of_one_trench_overlapping():
    t = MultiLineString([[(0, 0), (100, 0)], [(20, 0), (50, 0)]])
    assert messages(trenches(t)) == [
        f"trenches 'T1': part 2 overlaps part 1 along 30.0 m — {DRAWN_ONCE} "
        "(remove the duplicate part)"
    ]


def test_a_loop_and_sharp_corners_are_not_retraces():
    loop = LineString([(0, 0), (50, 0), (50, 50), (0, 50), (0, 0)])
    hairpin = LineString([(0, 100), (50, 100), (0, 110)])  # turns back 168.7°, 10 m apart
    assert messages(trenches(loop, hairpin)) == []


# ---- far parts of a multi-part trench ---------------------------------------------------------


FAR = (
    "m from the rest of the trench, more than snap_m 30 m — a trench's parts must form one "
    "corridor (give the far part its own id, or remove it)"
)


@pytest.mark.parametrize(("gap_m", "reported"), [(29.0, False), (31.0, True)])
def test_far_part_both_sides_of_snap(gap_m, reported):
    t = MultiLineString([[(0, 0), (100, 0)], [(100 + gap_m, 0), (150 + gap_m, 0)]])
    expected = [f"trenches 'T1': part 2 is {gap_m:.1f} {FAR}"] if reported else []
    assert messages(trenches(t), snap_m=30.0) == expected


def test_far_part_is_the_group_with_fewer_parts():
    # parts 1 and 2 lie side by side; part 3, the longest, 40 m away is the stray one
    t = MultiLineString([[(0, 0), (60, 0)], [(0, 5), (60, 5)], [(100, 0), (250, 0)]])
    assert messages(trenches(t)) == [f"trenches 'T1': part 3 is 40.0 {FAR}"]


def test_far_group_of_parts_is_one_problem():
    t = MultiLineString(
        [[(0, 0), (100, 0)], [(0, 10), (100, 10)], [(0, 200), (30, 200)], [(40, 200), (60, 200)]]
    )
    gap = shapely.distance(LineString([(0, 10), (100, 10)]), LineString([(0, 200), (30, 200)]))
    assert messages(trenches(t)) == [f"trenches 'T1': parts 3, 4 are {gap:.1f} {FAR}"]


def test_features_sharing_an_id_are_left_to_validation():
    a = LineString([(0, 0), (100, 0)])
    assert messages(trenches(a, a, ids=["T1", "T1"])) == []


# ---- the check of a local re-plan: only the redrawn trenches and those near them -----------


def _clean_grid() -> list[LineString]:
    """Six trenches that pass: four parallel lines 12 m apart, crossed by two others."""
    rows = [LineString([(0, 12 * k), (120, 12 * k)]) for k in range(4)]
    return [*rows, LineString([(30, -10), (30, 50)]), LineString([(90, -10), (90, 50)])]


_EDITS = st.tuples(
    st.integers(0, 5),  # the trench redrawn
    st.sampled_from(["shift", "copy", "far part", "retrace"]),
    st.floats(-13.0, 13.0, allow_nan=False),  # across the rows: onto a neighbour and beyond
    st.floats(-40.0, 40.0, allow_nan=False),  # along them
)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(edits=st.lists(_EDITS, min_size=1, max_size=3))
def test_the_redrawn_trenches_alone_give_every_problem_of_the_layer(edits):
    # the partial check of a local re-plan (only the redrawn trenches and those within twice
    # the tolerance of them) against the whole layer checked, where the others passed before
    base = _clean_grid()
    assert messages(trenches(*base)) == []
    geoms, changed = list(base), [False] * len(base)
    for i, how, dy, dx in edits:
        g = base[i]
        moved = shapely.affinity.translate(g, xoff=dx if how != "retrace" else 0.0, yoff=dy)
        if how == "shift":
            geoms[i] = moved
        elif how == "copy":  # a new trench: the corridor (or one beside it) drawn again
            geoms.append(moved)
            changed.append(True)
            continue
        elif how == "far part":
            geoms[i] = MultiLineString([g, shapely.affinity.translate(g, yoff=30 + abs(dy))])
        else:  # back over its own path for part of the way
            xy = list(g.coords)
            geoms[i] = LineString([*xy, xy[0]]) if abs(dx) > 20 else g
        changed[i] = True
    frame = trenches(*geoms)
    every = messages(frame)
    only = np.array(changed)
    got = [str(p) for p in trench_problems(frame, node_tol_m=TOL, snap_m=30.0, only=only)]
    assert got == every


def test_a_trench_redrawn_onto_another_is_found_from_it_alone():
    base = _clean_grid()
    geoms = [*base[:1], shapely.affinity.translate(base[0], yoff=0.05), *base[2:]]
    frame = trenches(*geoms)
    only = np.zeros(len(geoms), dtype=bool)
    only[1] = True
    got = [str(p) for p in trench_problems(frame, node_tol_m=TOL, snap_m=30.0, only=only)]
    assert got == [overlap_line("T1", "T2", 120.0)] == messages(frame)
    # none marked: nothing looked at
    assert trench_problems(frame, node_tol_m=TOL, only=np.zeros(len(geoms), dtype=bool)) == []


@pytest.mark.parametrize("mount", ["tracker", "fixed"])
def test_generated_sites_pass(mount):
    # drawn split at every junction: many touching ends, T-junctions and crossings
    from routeplan.synth import synth_site

    s = synth_site(30, 4, mount=mount)
    t = s.frames["trenches"]
    assert len(t) > 300
    assert messages(t) == []


# ---- `check` and `plan`: one line, exit 2, nothing written --------------------------------------


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def with_trenches(*extra: tuple[str, object], replace: dict[str, object] | None = None):
    """base_frames() with trenches replaced by id and extra trenches added."""
    frames = copy.deepcopy(base_frames())
    t = frames["trenches"]
    geoms = list(t.geometry)
    for k, tid in enumerate(t["id"]):
        if replace and tid in replace:
            geoms[k] = replace[tid]
    rows = [{"id": tid, "depth_m": None, "laying": None} for tid, _ in extra]
    frames["trenches"] = gpd.GeoDataFrame(
        pd.concat([t.drop(columns="geometry"), pd.DataFrame(rows)], ignore_index=True),
        geometry=geoms + [g for _, g in extra],
        crs=t.crs,
    )
    return frames


T2 = LineString([xy(42, 0), xy(150, 0)])  # base_frames' trench T2, 108 m

CASES = {
    "duplicate": (with_trenches(("T3", T2)), overlap_line("T2", "T3", 108.0)),
    "partial": (
        with_trenches(("T3", LineString([xy(60, 0), xy(200, 0)]))),
        overlap_line(
            "T2",
            "T3",
            shapely.length(shapely.intersection(T2, LineString([xy(60, 0), xy(200, 0)]))),
        ),
    ),
    "near-duplicate": (
        with_trenches(("T3", LineString([xy(42, 0.06), xy(150, 0.06)]))),
        overlap_line("T2", "T3", 108.0),
    ),
    "retrace": (
        with_trenches(replace={"T2": LineString([xy(42, 0), xy(150, 0), xy(120, 0)])}),
        f"trenches 'T2': runs back over its own path along 30.0 m — {DRAWN_ONCE} "
        "(remove the stretch drawn twice)",
    ),
    "far-part": (
        with_trenches(replace={"T2": MultiLineString([T2.coords, [xy(42, 100), xy(80, 100)]])}),
        "trenches 'T2': part 2 is 100.0 m from the rest of the trench, more than snap_m 20 m — "
        "a trench's parts must form one corridor (give the far part its own id, or remove it)",
    ),
}


def errors(result) -> list[str]:
    return [
        line[len("error: ") :] for line in result.stderr.splitlines() if line.startswith("error: ")
    ]


@pytest.mark.parametrize("case", list(CASES))
@pytest.mark.parametrize("command", ["check", "plan"])
def test_refused_in_one_line(tmp_path, case, command):
    frames, line = CASES[case]
    root = write_site(tmp_path / "site", frames)
    out = tmp_path / "out"
    args = [command, str(root)] + (["--out", str(out)] if command == "plan" else [])
    result = runner.invoke(app, args)
    assert result.exit_code == 2, result.output
    assert errors(result) == [line]
    assert "Traceback" not in result.output
    assert not out.exists()


# ---- problems of several stages in one run ----------------------------------------------------


def attribute_and_far_frames():
    frames = with_trenches(("T3", T2))  # an overlap …
    frames["rows"].loc[0, "strings"] = -1  # … an attribute refused …
    frames["inverters"] = frames["inverters"].set_geometry(
        [Point(xy(100, -80))], crs=frames["inverters"].crs
    )  # … and an inverter 80 m from every trench
    return frames


@pytest.mark.parametrize("command", ["check", "plan"])
def test_attribute_overlap_and_far_equipment_together(tmp_path, command):
    root = write_site(tmp_path / "site", attribute_and_far_frames())
    out = tmp_path / "out"
    args = [command, str(root)] + (["--out", str(out)] if command == "plan" else [])
    result = runner.invoke(app, args)
    assert result.exit_code == 2, result.output
    assert errors(result) == [
        "rows 'R1': strings is -1, must be ≥ 1",
        overlap_line("T2", "T3", 108.0),
        "inverters 'INV1': nearest trench 'T2' is 80.00 m away, more than snap_m 20 m",
    ]
    assert not out.exists()


def test_setting_and_far_equipment_together(tmp_path):
    frames = copy.deepcopy(base_frames())
    frames["grid"] = frames["grid"].set_geometry([Point(xy(150, 60))], crs=frames["grid"].crs)
    toml = SITE_TOML.replace("[design]\n", "[design]\nair_temp_c = 99\n")
    root = write_site(tmp_path / "site", frames, toml=toml)
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert errors(result) == [
        "site.toml 'design.air_temp_c': 99 is outside -30–80",
        "grid 'G1': nearest trench 'T2' is 60.00 m away, more than snap_m 20 m",
    ]


def test_no_network_checks_with_a_refused_tolerance(tmp_path):
    # the tolerance the checks depend on is wrong: its line only, no guess with a default
    toml = SITE_TOML.replace("[design]\n", "[design]\nnode_tol_m = 9\n")
    root = write_site(tmp_path / "site", attribute_and_far_frames(), toml=toml)
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert errors(result) == [
        "rows 'R1': strings is -1, must be ≥ 1",
        "site.toml 'design.node_tol_m': 9 is outside 0–5",
    ]


def test_unreadable_file_stops_before_the_network_checks(tmp_path):
    root = write_site(tmp_path / "site", attribute_and_far_frames())
    (root / "grid.geojson").write_text("not GeoJSON", encoding="utf-8")
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    lines = errors(result)
    assert lines[0].startswith("grid: cannot read grid.geojson")
    assert lines[1:] == ["rows 'R1': strings is -1, must be ≥ 1"]  # and inverters' to = 'G1'


# ---- one line per root cause ------------------------------------------------------------------

EMPTY = '{"type": "FeatureCollection", "features": []}'


@pytest.mark.parametrize(
    ("layer", "content", "line"),
    [
        (
            "combiners",
            EMPTY,
            "rows: to of 2 rows (R1, R2) names 'CB1': no feature has that id — the combiners "
            "layer is empty",
        ),
        ("trenches", EMPTY, "trenches: has no features: a site needs at least one trench"),
        ("rows", EMPTY, "rows: has no features: a site needs at least one row"),
        ("inverters", EMPTY, "inverters: has no features: a site needs at least one inverter"),
        (
            "grid",
            EMPTY,
            "inverters 'INV1': to = 'G1': no feature has that id — the grid layer is empty",
        ),
        ("combiners", "", "combiners: cannot read combiners.geojson"),
        ("grid", "", "grid: cannot read grid.geojson"),
    ],
    ids=["combiners", "trenches", "rows", "inverters", "grid", "zero-byte", "zero-byte-grid"],
)
def test_empty_layer_file_is_one_line(tmp_path, layer, content, line):
    root = write_site(tmp_path / "site")
    (root / f"{layer}.geojson").write_text(content, encoding="utf-8")
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2, result.output
    lines = errors(result)
    assert len(lines) == 1, lines
    assert lines[0].startswith(line)


def test_missing_layer_is_one_line(tmp_path):
    root = write_site(tmp_path / "site")
    (root / "combiners.geojson").unlink()
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert errors(result) == [
        "combiners: required layer missing: no combiners.<ext> file, no layer 'combiners' in "
        "site.gpkg, and no [layers] entry"
    ]


def test_reference_into_a_site_without_grid_is_one_line(tmp_path):
    frames = copy.deepcopy(base_frames())
    del frames["grid"]
    result = runner.invoke(app, ["check", str(write_site(tmp_path / "site", frames))])
    assert result.exit_code == 2
    assert errors(result) == [
        "inverters 'INV1': to = 'G1': no feature has that id — the site has no grid layer"
    ]


def test_features_left_without_destination_by_one_far_feature(tmp_path):
    # two combiners without `to`, and the only inverter 80 m from every trench
    frames = copy.deepcopy(base_frames())
    cb = frames["combiners"]
    frames["combiners"] = gpd.GeoDataFrame(
        {"id": ["CB1", "CB2"], "to": [None, None], "max_strings": [12, 12]},
        geometry=[Point(xy(45, 0)), Point(xy(60, 2))],
        crs=cb.crs,
    )
    frames["inverters"] = frames["inverters"].set_geometry([Point(xy(100, -80))], crs=cb.crs)
    result = runner.invoke(app, ["check", str(write_site(tmp_path / "site", frames))])
    assert result.exit_code == 2
    assert errors(result) == [
        "inverters 'INV1': nearest trench 'T2' is 80.00 m away, more than snap_m 20 m",
        "combiners: no `to`, and no inverter is reachable through the trenches "
        "(2 combiners: CB1, CB2)",
    ]


def test_layer_without_id_column_is_one_line(tmp_path):
    frames = copy.deepcopy(base_frames())
    frames["combiners"] = frames["combiners"].rename(columns={"id": "name"})
    result = runner.invoke(app, ["check", str(write_site(tmp_path / "site", frames))])
    assert result.exit_code == 2
    assert errors(result) == ["combiners: no 'id' column"]


def test_refused_module_table_is_one_line(tmp_path):
    root = write_site(tmp_path / "site", toml=SITE_TOML.replace("isc_a = 13.0\n", ""))
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert errors(result) == ["site.toml 'modules.mod1': missing isc_a"]


def test_features_naming_one_missing_id_are_one_line(tmp_path):
    frames = copy.deepcopy(base_frames())
    frames["rows"]["to"] = "CB9"
    frames["rows"]["module"] = "mod9"
    result = runner.invoke(app, ["check", str(write_site(tmp_path / "site", frames))])
    assert result.exit_code == 2
    assert errors(result) == [
        "rows: module 'mod9' of 2 rows (R1, R2) is not in site.toml [modules] (known: mod1)",
        "rows: to = 'CB9' of 2 rows (R1, R2): no feature has that id",
    ]


# ---- quantities: a corridor counted once ------------------------------------------------------


def crossing_site_frames() -> dict[str, gpd.GeoDataFrame]:
    """A site whose trenches cross (T1 × T2, T3 × T4), meet at a T-junction (T3 on T1), end
    to end at a corner (T5 at T3's end) and at a shallow Y just below the minimum overlap
    (T6 leaves T1's start at asin(0.1 / 0.95) ≈ 6°: 0.95 m within node_tol_m of T1)."""
    theta = math.asin(TOL / 0.95)
    t = {
        "T1": [xy(0, 0), xy(200, 0)],
        "T2": [xy(50, -40), xy(50, 40)],
        "T3": [xy(120, 0), xy(120, 60)],
        "T4": [xy(100, 30), xy(160, 30)],
        "T5": [xy(120, 60), xy(160, 60)],
        "T6": [xy(0, 0), xy(60 * math.cos(theta), 60 * math.sin(theta))],
    }
    frames = copy.deepcopy(base_frames())
    frames["trenches"] = gpd.GeoDataFrame(
        {"id": list(t), "depth_m": [0.8] * len(t), "laying": ["direct"] * len(t)},
        geometry=[LineString(c) for c in t.values()],
        crs=UTM33,
    )
    frames["rows"] = frames["rows"].set_geometry(
        [LineString([xy(55, 35), xy(95, 35)]), LineString([xy(125, 45), xy(155, 45)])],
        crs=UTM33,
    )
    frames["combiners"] = frames["combiners"].set_geometry([Point(xy(110, 2))], crs=UTM33)
    frames["inverters"] = frames["inverters"].set_geometry([Point(xy(180, -2))], crs=UTM33)
    frames["grid"] = frames["grid"].set_geometry([Point(xy(200, 3))], crs=UTM33)
    return frames


def test_bill_counts_each_corridor_once(tmp_path):
    frames = crossing_site_frames()
    root = write_site(tmp_path / "site", frames)
    checked = runner.invoke(app, ["check", str(root)])
    assert checked.exit_code == 0, checked.output  # meetings, not overlaps
    assert "ok: no problems found" in checked.output
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(root), "--out", str(out), "--no-cache"])
    assert result.exit_code in (0, 1), result.output
    q = pd.read_csv(out / "quantities.csv")
    billed = q.loc[q["item"].isin(["trench", "unused trench"]), "quantity"].sum()
    # shapely: the length of the union of the trench geometry (each corridor once)
    union = shapely.length(shapely.union_all(frames["trenches"].geometry.values))
    assert union == pytest.approx(500.0)
    assert billed == pytest.approx(union, abs=0.01)  # quantities.csv: 2 decimals


def test_bill_of_a_generated_site_counts_each_corridor_once():
    from routeplan.config import parse_design
    from routeplan.pipeline import plan_site
    from routeplan.synth import synth_site

    s = synth_site(20, 3)
    config = tomllib.loads(s.toml)
    design, problems = parse_design(config)
    assert problems == []
    site = layers.build_site(s.frames, config)
    plan = plan_site(site, design)
    bill = plan.quantities
    billed = bill.loc[bill["item"].isin(["trench", "unused trench"]), "quantity"].sum()
    union = shapely.length(shapely.union_all(site.trenches.geometry.values))
    assert billed == pytest.approx(union, rel=1e-9)


def test_layers_keep_a_partial_site_only_when_every_file_was_read(tmp_path):
    root = write_site(tmp_path / "site", attribute_and_far_frames())
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    partial = info.value.partial
    assert partial is not None
    assert partial.crs.equals(UTM33)
    assert math.isnan(partial.rows.loc[0, "strings"])  # refused: NaN
    (root / "grid.geojson").write_text("not GeoJSON", encoding="utf-8")
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    assert info.value.partial is None
