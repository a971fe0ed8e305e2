"""routeplan.network's functions on small hand-built geometry, fast enough for mutation runs.

Every site here is a few invented lines and points. The reference is named beside each check:
"hand" (worked out from the invented coordinates, written out in the comment), "shapely"
(GEOS's own intersection, distance, substring or flat-capped buffer of the same lines),
"networkx" (shortest path lengths and components of the same segments), "hashlib"
(SHA-256 itself, for the fingerprint's properties). Segment ids are not compared as text
(their form is not fixed here): segments are identified by trench, chainage and length.
"""

from __future__ import annotations

import gc
import math

import networkx as nx
import numpy as np
import pyproj
import pytest
import shapely
import shapely.ops
from numpy.testing import assert_allclose

from routeplan import network as nw
from routeplan.errors import ParameterError
from routeplan.network import (
    TrenchDefaults,
    build_network,
    check_choice,
    check_metric_crs,
    far_problems,
    node_trenches,
    overlap_min_m,
    paused_gc,
    trench_fingerprint,
    trench_problems,
)

from .test_network import UTM, equipment, line, pt, trenches


def table(net) -> list[tuple]:
    """(trench id, start_m, end_m, length_m) of every segment, rounded to the micrometre."""
    s = net.segments
    return [
        (t, round(a, 6), round(b, 6), round(m, 6))
        for t, a, b, m in zip(s["trench_id"], s["start_m"], s["end_m"], s["length_m"], strict=True)
    ]


def nx_graph(net) -> nx.MultiGraph:
    g = nx.MultiGraph()
    g.add_nodes_from(range(net.n_nodes))
    g.add_weighted_edges_from(
        zip(net.seg_u.tolist(), net.seg_v.tolist(), net.seg_length_m.tolist(), strict=True)
    )
    return g


# ---- parameters and small helpers ----------------------------------------------------------


def test_paused_gc_restores_the_collectors_state():
    was = gc.isenabled()
    try:
        gc.enable()
        with paused_gc():
            assert not gc.isenabled()
        assert gc.isenabled()
        gc.disable()
        with paused_gc():
            assert not gc.isenabled()
        assert not gc.isenabled()  # off before: left off
        gc.enable()
        with pytest.raises(RuntimeError), paused_gc():
            raise RuntimeError("inside")
        assert gc.isenabled()  # back on after an exception too
    finally:
        (gc.enable if was else gc.disable)()


def test_check_choice_names_the_valid_values():
    assert check_choice("laying", "duct", ("direct", "duct")) == "duct"
    with pytest.raises(ParameterError) as err:
        check_choice("laying", "air", ("direct", "duct"))
    [p] = err.value.problems
    assert (p.layer, p.feature_id, p.message) == (
        "params",
        "laying",
        "'air' is not one of 'direct', 'duct'",
    )


def test_trench_defaults_messages_name_each_bad_value():
    with pytest.raises(ParameterError) as err:
        TrenchDefaults(depth_m=0.0, spacing_m=-0.1, soil_k_m_w=0.0, max_circuits=0.5)
    assert [(p.layer, p.feature_id, p.message) for p in err.value.problems] == [
        ("params", "depth_m", "must be > 0 m, got 0.0"),
        ("params", "spacing_m", "must be >= 0 m, got -0.1"),
        ("params", "soil_k_m_w", "must be > 0 K·m/W, got 0.0"),
        ("params", "max_circuits", "must be >= 1 or NaN, got 0.5"),
    ]
    # the limits themselves are valid: spacing 0 (touching), at least one circuit
    d = TrenchDefaults(depth_m=1e-3, spacing_m=0.0, soil_k_m_w=1e-3, max_circuits=1.0)
    assert (d.spacing_m, d.max_circuits) == (0.0, 1.0)
    assert math.isnan(TrenchDefaults().max_circuits)
    d = TrenchDefaults()
    assert (d.depth_m, d.laying, d.spacing_m, d.soil_k_m_w) == (0.7, "direct", 0.0, 2.5)
    with pytest.raises(ParameterError) as err:
        TrenchDefaults(depth_m=math.nan, spacing_m=math.nan, soil_k_m_w=math.nan)
    assert [p.feature_id for p in err.value.problems] == ["depth_m", "spacing_m", "soil_k_m_w"]


def test_check_metric_crs_messages():
    assert check_metric_crs(pyproj.CRS(UTM)) == []
    assert check_metric_crs(UTM) == []  # any CRS input pyproj takes
    [p] = check_metric_crs(None)
    assert (p.layer, p.feature_id, p.message) == (
        "site",
        None,
        "no CRS: lengths cannot be measured",
    )
    [p] = check_metric_crs(pyproj.CRS("EPSG:4326"))
    assert (p.layer, p.feature_id) == ("site", None)
    assert p.message == "CRS EPSG:4326 is not projected in metres (degree)"
    # pyproj: EPSG:2229 (NAD83 / California zone 5) is projected, in US survey feet
    [p] = check_metric_crs(pyproj.CRS("EPSG:2229"))
    assert p.message == "CRS EPSG:2229 is not projected in metres (US survey foot)"


def test_overlap_minimum_is_the_larger_of_one_metre_and_ten_tolerances():
    # hand: max(1 m, 10 × tol), tol raised to 1e-6 m
    assert overlap_min_m(0.05) == 1.0
    assert overlap_min_m(0.1) == 1.0
    assert overlap_min_m(0.25) == 2.5
    assert overlap_min_m(0.0) == 1.0
    assert nw.OVERLAP_MIN_M == 1.0 and nw.OVERLAP_TOL_FACTOR == 10.0


def test_fill_takes_given_values_and_defaults():
    tr = trenches(
        line((0, 0), (1, 0)),
        line((0, 1), (1, 1)),
        line((0, 2), (1, 2)),
        laying=[" Duct ", None, "DIRECT"],
        depth_m=["1.1", None, "x"],  # text that is no number: the default
    )
    d = TrenchDefaults(depth_m=0.9, laying="duct", spacing_m=0.2, soil_k_m_w=1.2, max_circuits=4)
    out = nw._fill(tr, d)
    assert list(out.columns) == list(nw.TRENCH_ATTRIBUTES)
    assert out["laying"].tolist() == ["duct", "duct", "direct"]
    assert out["depth_m"].tolist() == [1.1, 0.9, 0.9]
    assert out["spacing_m"].tolist() == [0.2] * 3
    assert out["soil_k_m_w"].tolist() == [1.2] * 3
    assert out["max_circuits"].tolist() == [4.0] * 3


def test_fingerprint_changes_with_every_input_it_depends_on():
    base = trenches(line((0, 0), (10, 0)), line((10, 0), (10, 5)), depth_m=[0.8, 1.0])
    fp = trench_fingerprint(base, 0.1, TrenchDefaults())
    assert len(fp) == 64 and int(fp, 16) >= 0  # hashlib: a SHA-256 hex digest
    assert trench_fingerprint(base.copy(), 0.1, TrenchDefaults()) == fp  # same input
    moved = base.copy()
    moved.loc[1, "geometry"] = line((10, 0), (10, 5.001))
    renamed = base.copy()
    renamed["id"] = ["T1", "T3"]
    deeper = base.copy()
    deeper["depth_m"] = [0.8, 1.1]
    laid = base.assign(laying=["duct", None])
    laid2 = base.assign(laying=["direct", None])
    variants = [
        trench_fingerprint(base, 0.2, TrenchDefaults()),
        trench_fingerprint(base, 0.1, TrenchDefaults(depth_m=0.9)),
        trench_fingerprint(moved, 0.1, TrenchDefaults()),
        trench_fingerprint(renamed, 0.1, TrenchDefaults()),
        trench_fingerprint(deeper, 0.1, TrenchDefaults()),
        trench_fingerprint(laid, 0.1, TrenchDefaults()),
        trench_fingerprint(laid2, 0.1, TrenchDefaults()),
        trench_fingerprint(base.iloc[:1], 0.1, TrenchDefaults()),
        trench_fingerprint(
            base.assign(depth_m=[0.8, 1.0]).astype({"depth_m": "float32"}), 0.1, TrenchDefaults()
        ),
    ]
    assert len(set(variants) | {fp}) == len(variants) + 1
    # 3-D coordinates: only x, y count (a z changes nothing the network uses)
    flat = trenches(line((0, 0), (10, 0)))
    high = trenches(shapely.LineString([(0, 0, 5), (10, 0, 7)]))
    assert trench_fingerprint(flat, 0.1, TrenchDefaults()) == trench_fingerprint(
        high, 0.1, TrenchDefaults()
    )


# ---- a small hand-built network ------------------------------------------------------------
#
#            (40,30) T2 ──────●C1 tap (70,30)────── (80,30)
#               │
#               │          T3 (60,20)
#               │             │
#  T1 (0,0) ──●R1(20,0)──(40,0)──(60,0)──────────── (100,0) ● I1 tap
#                                 │
#                              (60,-20)
#
# hand: T2 ends on T1 at x = 40 (a T), T3 crosses T1 at (60, 0); R1 at (20, 3) taps T1 at
# (20, 0), C1 at (70, 25) taps T2 at (70, 30) (T2's chainage 30 + 30 = 60 m), I1 at
# (100, -2.5) taps T1's east end; G1 at (200, 0) is 100 m from T1, beyond snap_m = 30 m.


@pytest.fixture
def small():
    tr = trenches(
        line((0, 0), (100, 0)),
        line((40, 0), (40, 30), (80, 30)),
        line((60, -20), (60, 20)),
        depth_m=[0.9, np.nan, 1.2],
        laying=["duct", None, "Direct"],
        max_circuits=[np.nan, 8, np.nan],
    )
    eq = equipment(
        ("rows", "R1", pt(20, 3)),
        ("combiners", "C1", pt(70, 25)),
        ("inverters", "I1", pt(100, -2.5)),
        ("grid", "G1", pt(200, 0)),
    )
    return tr, eq


def test_segments_of_a_small_network(small):
    net = build_network(*small)
    # hand: T1 cut at the tap (20), the T (40), the crossing (60); T2 at C1's tap (60 m along
    # it); T3 at the crossing (20 m along it)
    assert table(net) == [
        ("T1", 0.0, 20.0, 20.0),
        ("T1", 20.0, 40.0, 20.0),
        ("T1", 40.0, 60.0, 20.0),
        ("T1", 60.0, 100.0, 40.0),
        ("T2", 0.0, 60.0, 60.0),
        ("T2", 60.0, 70.0, 10.0),
        ("T3", 0.0, 20.0, 20.0),
        ("T3", 20.0, 40.0, 20.0),
    ]
    s = net.segments
    assert s["trench_index"].tolist() == [0, 0, 0, 0, 1, 1, 2, 2]
    assert list(s.columns) == [
        "segment_id",
        "trench_id",
        "trench_index",
        "node_u",
        "node_v",
        "start_m",
        "end_m",
        "length_m",
        *nw.TRENCH_ATTRIBUTES,
        "geometry",
    ]
    assert s.crs == pyproj.CRS(UTM)
    assert s["segment_id"].is_unique
    assert all(str(i).startswith(t) for i, t in zip(s["segment_id"], s["trench_id"], strict=True))
    assert s["depth_m"].tolist() == [0.9] * 4 + [0.7] * 2 + [1.2] * 2
    assert s["laying"].tolist() == ["duct"] * 4 + ["direct"] * 4
    assert s["max_circuits"].fillna(-1).tolist() == [-1] * 4 + [8.0] * 2 + [-1] * 2
    # shapely: each segment's geometry is the trench's stretch (substring), ends on its nodes
    geo = np.asarray(s.geometry.array)
    src = np.asarray(small[0].geometry.array)
    for g, ti, a, b in zip(geo, s["trench_index"], s["start_m"], s["end_m"], strict=True):
        assert g.equals_exact(shapely.ops.substring(src[ti], a, b), 1e-9)
    assert_allclose(s["length_m"], shapely.length(geo), rtol=0, atol=0)
    first = shapely.get_coordinates(shapely.get_point(geo, 0))
    last = shapely.get_coordinates(shapely.get_point(geo, -1))
    assert_allclose(first, net.node_xy[net.seg_u], atol=0)
    assert_allclose(last, net.node_xy[net.seg_v], atol=0)
    # T2's bend stays a vertex of its first segment, and is no node
    assert shapely.get_num_coordinates(geo[4]) == 3
    # hand: nodes = 3 ends of T1/T3 ... the distinct points
    expected = {
        (0, 0),
        (20, 0),
        (40, 0),
        (60, 0),
        (100, 0),
        (80, 30),
        (70, 30),
        (60, -20),
        (60, 20),
    }
    assert {tuple(p) for p in net.node_xy.round(9).tolist()} == expected
    assert net.n_nodes == 9
    # nodes numbered by first candidate: crossings first, pair by pair (T1-T2 touch at
    # (40, 0), T1-T3 cross at (60, 0)), then the parts' first ends (T1's (0, 0))
    assert_allclose(net.node_xy[:3], [[40, 0], [60, 0], [0, 0]])


def test_taps_of_a_small_network(small):
    net = build_network(*small)
    t = net.taps
    assert list(t.columns) == [
        "layer",
        "feature_id",
        "connected",
        "node",
        "distance_m",
        "trench_id",
        "stub_m",
        "geometry",
    ]
    assert t["layer"].tolist() == ["rows", "combiners", "inverters", "grid"]
    assert t["feature_id"].tolist() == ["R1", "C1", "I1", "G1"]
    assert t["connected"].tolist() == [True, True, True, False]
    assert t["trench_id"].tolist() == ["T1", "T2", "T1", "T1"]
    assert_allclose(t["distance_m"], [3.0, 5.0, 2.5, 100.0], rtol=0, atol=1e-12)  # hand
    assert_allclose(t["stub_m"].to_numpy()[:3], [3.0, 5.0, 2.5], rtol=0, atol=1e-12)
    assert math.isnan(t["stub_m"].iloc[3])
    assert t["node"].iloc[3] == -1 and t.geometry.iloc[3] is None
    assert_allclose(net.node_xy[t["node"].to_numpy()[:3]], [(20, 0), (70, 30), (100, 0)])
    assert [list(g.coords) for g in t.geometry.iloc[:3]] == [
        [(20.0, 3.0), (20.0, 0.0)],
        [(70.0, 25.0), (70.0, 30.0)],
        [(100.0, -2.5), (100.0, 0.0)],
    ]
    assert [net.tap(la, f) for la, f in zip(t["layer"], t["feature_id"], strict=True)] == [
        0,
        1,
        2,
        3,
    ]
    with pytest.raises(KeyError):
        net.tap("rows", "C1")
    assert (net.node_tol_m, net.snap_m) == (0.1, 30.0)
    assert [str(p) for p in far_problems(net)] == [
        "grid 'G1': nearest trench 'T1' is 100.00 m away, more than snap_m 30 m"
    ]


def test_graph_distances_match_networkx(small):
    net = build_network(*small)
    g = nx_graph(net)
    from scipy.sparse import csgraph

    dist = csgraph.dijkstra(net.graph, directed=False)
    ref = dict(nx.all_pairs_dijkstra_path_length(g))
    for a in range(net.n_nodes):
        for b in range(net.n_nodes):
            assert dist[a, b] == pytest.approx(ref[a][b], abs=1e-9)  # networkx
    assert net.graph.shape == (9, 9) and net.graph.nnz == 2 * 8
    assert net.node_island.tolist() == [0] * 9
    assert net.island_trenches(0) == ["T1", "T2", "T3"]
    u, v = net.seg_u, net.seg_v
    assert net.segment_between(v, u).tolist() == list(range(8))
    with pytest.raises(ValueError, match=r"^a node pair is not joined by any segment$"):
        net.segment_between(np.array([u[0]]), np.array([u[0]]))
    far = int(np.argmax(net.node_xy[:, 0]))  # (100, 0)
    west = int(np.argmin(net.node_xy[:, 0]))  # (0, 0)
    with pytest.raises(ValueError, match=r"^a node pair is not joined by any segment$"):
        net.segment_between(np.array([west]), np.array([far]))  # hand: 4 segments apart
    with pytest.raises(ValueError, match=r"^a node pair is not joined by any segment$"):
        net.segment_between(np.array([far]), np.array([far + 100]))  # beyond the last key
    # hand: (60, 0)–(100, 0) is T1's fourth segment, either way round
    cross = int(np.flatnonzero((net.node_xy == [60.0, 0.0]).all(axis=1))[0])
    assert net.segment_between(np.array([cross, far]), np.array([far, cross])).tolist() == [3, 3]
    assert net.segment_between(np.zeros(0, np.int64), np.zeros(0, np.int64)).tolist() == []


def test_site_equipment_lists_the_layers_in_tapping_order(make_site):
    site = make_site(
        rows=[
            {"id": "R2", "geometry": line((0, 5), (30, 5)), "to": "C1"},
            {"id": "R1", "geometry": line((0, 10), (30, 10)), "to": "C1"},
        ],
        combiners=[{"id": "C1", "geometry": pt(40, 1), "to": "I1"}],
        inverters=[{"id": "I1", "geometry": pt(60, 1), "to": "G1"}],
        trenches=[{"id": "T1", "geometry": line((0, 0), (80, 0))}],
        grid=[{"id": "G1", "geometry": pt(80, 1)}],
    )
    eq = nw.site_equipment(site)
    # hand: rows, combiners, inverters, grid, each in its layer's order
    assert eq["layer"].tolist() == ["rows", "rows", "combiners", "inverters", "grid"]
    assert eq["feature_id"].tolist() == ["R2", "R1", "C1", "I1", "G1"]
    assert eq.index.tolist() == [0, 1, 2, 3, 4]
    assert eq.crs == site.crs
    assert [g.wkt for g in eq.geometry] == [
        "LINESTRING (0 5, 30 5)",
        "LINESTRING (0 10, 30 10)",
        "POINT (40 1)",
        "POINT (60 1)",
        "POINT (80 1)",
    ]
    assert nw.EQUIPMENT_LAYERS == ("rows", "combiners", "inverters", "grid")


def test_metric_crs_accepts_every_spelling_of_the_metre_and_only_the_horizontal_axes():
    utm = pyproj.CRS(UTM)
    wkt1 = utm.to_wkt("WKT1_GDAL")
    # pyproj: a WKT1 unit keeps the name it is given; "meter" and "m" are the metre too
    for name in ("meter", "m"):
        crs = pyproj.CRS(wkt1.replace('"metre"', f'"{name}"'))
        assert {a.unit_name for a in crs.axis_info} == {name}
        assert check_metric_crs(crs) == []
    # pyproj: UTM 33N with heights in US survey feet (EPSG:6360): x, y in metres, routable
    compound = pyproj.CRS("EPSG:32633+6360")
    assert [a.unit_name for a in compound.axis_info][2] == "US survey foot"
    assert check_metric_crs(compound) == []
    # a projected CRS with its northing in feet: both units named (in either order)
    wkt2 = utm.to_wkt("WKT2_2019").replace(
        'AXIS["(N)",north,ORDER[2],LENGTHUNIT["metre",1]]',
        'AXIS["(N)",north,ORDER[2],LENGTHUNIT["foot",0.3048]]',
    )
    [p] = check_metric_crs(pyproj.CRS(wkt2))
    assert p.message.startswith("CRS PROJCRS[")
    assert p.message.endswith(
        (" is not projected in metres (metre, foot)", " is not projected in metres (foot, metre)")
    )


# ---- the trench-only noding and the memo ---------------------------------------------------


def test_node_trenches_defaults_and_fingerprint():
    tr = trenches(line((0, 0), (10, 0)), line((5, -5), (5, 5)))
    noded = node_trenches(tr)
    # the defaults of build_network: node_tol_m 0.1 m, TrenchDefaults()
    assert noded.tol_m == 0.1
    assert noded.fingerprint == trench_fingerprint(tr, 0.1, TrenchDefaults())
    d = TrenchDefaults(depth_m=0.9)
    assert node_trenches(tr, 0.2, d).fingerprint == trench_fingerprint(tr, 0.2, d)
    assert node_trenches(tr, 0.2, d).attrs["depth_m"].tolist() == [0.9, 0.9]
    assert node_trenches(tr, fingerprint="given").fingerprint == "given"
    assert node_trenches(tr, 0.0).tol_m == nw.MIN_TOL_M
    # hand: T2 crosses T1 at (5, 0): one crossing, both parts split there
    assert noded.cross_xy.tolist() == [[5.0, 0.0]]
    assert noded.active.dtype == bool and noded.active.tolist() == [True] * 5
    assert noded.trench_ids.tolist() == ["T1", "T2"]
    assert sorted(noded.split_pos_m.tolist()) == [5.0, 5.0]
    for name in ("split_ci", "split_pj", "pair_a", "pair_b", "owner", "cidx"):
        assert getattr(noded, name).dtype == np.int64, name
    none = node_trenches(trenches())
    assert none.n_parts == 0 and none.parts.size == 0
    for name in ("pair_a", "pair_b", "split_ci", "split_pj"):
        assert getattr(none, name).dtype == np.int64 and getattr(none, name).size == 0, name


def test_zero_length_parts_are_no_trench():
    # hand: a trench of one repeated point (length 0) on T1 at x = 30: no node, no split
    point_like = shapely.MultiLineString([[(30, 0), (30, 0)], [(0, 50), (20, 50)]])
    net = build_network(trenches(line((0, 0), (100, 0)), point_like))
    assert table(net) == [("T1", 0.0, 100.0, 100.0), ("T2", 0.0, 20.0, 20.0)]
    assert net.n_nodes == 4
    # the checks ignore it too: no far part 50 m away, no part number shifted
    assert trench_problems(trenches(line((0, 0), (100, 0)), point_like)) == []
    far_point = shapely.MultiLineString([[(0, 0), (100, 0)], [(60, 70), (60, 70)]])
    assert trench_problems(trenches(far_point)) == []


def test_fresh_but_equal_inputs_share_the_fingerprint():
    def frame():
        # text values made at run time: equal strings, distinct objects
        laying = ["".join(["du", "ct"]), "".join(["dir", "ect"])]
        ids = ["".join(["T", "1"]), "".join(["T", "2"])]
        geoms = [line((0, 0), (10, 0)), line((10, 0), (10, 5))]
        return trenches(*geoms, ids=ids, laying=laying, depth_m=[0.8, 1.0])

    a, b = frame(), frame()
    assert a["laying"].iloc[0] is not b["laying"].iloc[0]
    assert trench_fingerprint(a, 0.1, TrenchDefaults()) == trench_fingerprint(
        b, 0.1, TrenchDefaults()
    )
    # and the memo of one is taken for the other (the fingerprints match)
    last = build_network(a)
    again = build_network(b, memo=last.memo)
    assert again.memo.noded is last.memo.noded


def test_memo_nearest_remembers_only_unmoved_features():
    geoms = [line((0, 0), (100, 0)), line((0, 1.5), (100, 1.5))]
    items = [("rows", "R1", pt(50, 0.5)), ("combiners", "C1", pt(10, -3))]
    last = build_network(trenches(*geoms), equipment(*items))
    assert last.memo.equipment["part"].tolist() == [0, 0]
    assert last.memo.snap_m == 30.0
    # R1 moved 0.6 m (now nearer T2), C1 unchanged, a third feature new
    moved = [pt(50, 1.1), pt(10, -3), pt(70, 4)]
    known, part, dist = last.memo.nearest(np.asarray(moved, dtype=object))
    assert known.tolist() == [False, True, False]
    assert part.tolist() == [-1, 0, -1]
    assert dist.dtype == float and dist.tolist() == [math.inf, 3.0, math.inf]
    net = build_network(
        trenches(*geoms),
        equipment(("rows", "R1", moved[0]), ("combiners", "C1", moved[1]), ("grid", "G", moved[2])),
        memo=last.memo,
    )
    assert net.taps["trench_id"].tolist() == ["T2", "T1", "T2"]  # hand: 0.4 m, 3 m, 2.5 m
    assert_allclose(net.taps["distance_m"], [0.4, 3.0, 2.5], atol=1e-12)
    # fewer features than remembered
    known, part, _ = last.memo.nearest(np.asarray([pt(10, -3)], dtype=object))
    assert known.tolist() == [False] and part.tolist() == [-1]


def test_trench_defaults_laying_problem_is_named():
    with pytest.raises(ParameterError) as err:
        TrenchDefaults(laying="air")
    [p] = err.value.problems
    assert (p.layer, p.feature_id, p.message) == (
        "params",
        "laying",
        "'air' is not one of 'direct', 'duct'",
    )


def test_fill_keeps_a_laying_that_is_no_text():
    tr = trenches(line((0, 0), (1, 0)), line((0, 1), (1, 1)), laying=[3, " DUCT"])
    assert nw._fill(tr, TrenchDefaults())["laying"].tolist() == [3, "duct"]


# ---- nearest trench: the staged search finds the true nearest --------------------------------


def _two_candidates(px, py, near_side):
    """Around the point (px, py): a short trench 3 m away on ``near_side`` and a longer one
    3.5 m away on another side, reaching across the point's column or row (see below)."""
    if near_side == "west":
        near = line((px - 3, py - 1), (px - 3, py + 1))
        other = line((px - 1, py + 3.5), (px + 6, py + 3.5))  # north, reaches x = px + 4
    elif near_side == "east":
        near = line((px + 3, py - 1), (px + 3, py + 1))
        other = line((px - 6, py + 3.5), (px + 1, py + 3.5))  # north, reaches x = px - 4
    else:  # south
        near = line((px - 1, py - 3), (px + 1, py - 3))
        other = line((px + 3.5, py - 1), (px + 3.5, py + 6))  # east, reaches y = py + 4
    return near, other


@pytest.mark.parametrize(
    ("px", "py", "side"),
    [
        (0.0, 0.0, "west"),
        (10.0, 12.0, "west"),  # north of the diagonal
        (0.0, 0.0, "east"),
        (12.0, 10.0, "east"),  # south of the diagonal
        (0.0, 0.0, "south"),
        (12.0, 10.0, "south"),
    ],
)
def test_each_feature_taps_its_nearest_trench_whatever_its_side(px, py, side):
    near, other = _two_candidates(px, py, side)
    second = (px - 0.5, py) if side == "south" else (px, py - 0.5)
    net = build_network(
        trenches(other, near, ids=["OTHER", "NEAR"]),
        equipment(("combiners", "C", pt(px, py)), ("inverters", "I", pt(*second))),
    )
    # shapely: the distances to the two trenches; the nearer one is tapped
    for k, (fx, fy) in enumerate([(px, py), second]):
        d_near, d_other = shapely.distance(pt(fx, fy), near), shapely.distance(pt(fx, fy), other)
        assert d_near < d_other
        assert net.taps["trench_id"].iloc[k] == "NEAR"
        assert net.taps["distance_m"].iloc[k] == pytest.approx(d_near, abs=1e-12)


def test_a_far_feature_equally_near_two_trenches_takes_the_first():
    # hand: (50, 0) is 40 m from both trenches, beyond snap_m: the lower index, listed first
    net = build_network(
        trenches(line((90, -10), (90, 10)), line((10, -10), (10, 10)), ids=["E", "W"]),
        equipment(("grid", "G", pt(50, 0)), ("grid", "H", pt(50, 0.5))),
    )
    assert net.taps["trench_id"].tolist() == ["E", "E"]
    assert net.taps["connected"].tolist() == [False, False]
    net = build_network(
        trenches(line((10, -10), (10, 10)), line((90, -10), (90, 10)), ids=["W", "E"]),
        equipment(("grid", "G", pt(50, 0))),
    )
    assert net.taps["trench_id"].tolist() == ["W"]
    assert net.taps["distance_m"].tolist() == [40.0]


# ---- joining within the tolerance, at its very limit -------------------------------------------


def test_ends_exactly_the_tolerance_apart_join():
    # hand: a gap of exactly 0.125 m (a binary fraction: no rounding) with node_tol_m 0.125
    tr = trenches(line((0, 0), (100, 0)), line((100.125, 0), (200, 0)))
    net = build_network(tr, node_tol_m=0.125)
    assert net.n_nodes == 3 and len(net.segments) == 2
    assert net.seg_u[1] == net.seg_v[0]  # T2 starts where T1 ends
    apart = build_network(tr, node_tol_m=0.0625)
    assert apart.n_nodes == 4


def test_a_lone_tap_joins_a_trench_end_within_the_tolerance():
    # hand: the tap (99.875, 0) is exactly 0.125 m from T1's east end: one node there; the
    # piece from the tap to the end joins that node to itself and is shorter than twice the
    # tolerance: dropped, so T1 is one segment, its end moved onto the node; the node's
    # chainage is that of the split point nearest it, the trench's end (100.0 m; README,
    # "Outputs": one chainage per node)
    net = build_network(
        trenches(line((0, 0), (100, 0))),
        equipment(("inverters", "I", pt(99.875, 3))),
        node_tol_m=0.125,
    )
    assert net.n_nodes == 2 and table(net) == [("T1", 0.0, 100.0, 100.0)]
    assert_allclose(net.node_xy[net.taps["node"].iloc[0]], [100.0, 0.0])
    assert net.taps["stub_m"].iloc[0] == pytest.approx(math.hypot(0.125, 3), abs=1e-12)
    # a tolerance of 2**-10 m, far below the k-d search's 1e-9 m margin of its own
    tol = 2.0**-10
    net = build_network(
        trenches(line((0, 0), (100, 0))),
        equipment(("inverters", "I", pt(100 - tol, 3))),
        node_tol_m=tol,
    )
    assert net.n_nodes == 2
    net = build_network(
        trenches(line((0, 0), (100, 0)), line((100 + tol, 0), (200, 0))), node_tol_m=tol
    )
    assert net.n_nodes == 3
    # 0.1 m away with the default tolerance, one tap alone: the same
    net = build_network(
        trenches(line((0, 0), (100, 0))), equipment(("inverters", "I", pt(99.95, 3)))
    )
    assert net.n_nodes == 2 and len(net.segments) == 1


# ---- crossings ----------------------------------------------------------------------------------


def test_shared_first_ends_number_the_node_first():
    # hand: two straight trenches leaving (0, 0): their meeting point is the first node
    net = build_network(trenches(line((0, 0), (10, 0)), line((0, 0), (0, 10))))
    assert net.node_xy[0].tolist() == [0.0, 0.0]
    # the crossing of the first pair of trenches (T1, T2) is numbered before the shared end
    # of a later pair (T2, T3), pair by pair
    net = build_network(
        trenches(line((0, 0), (10, 0)), line((5, -5), (5, 5)), line((5, 5), (0, 10)))
    )
    assert net.node_xy[:2].tolist() == [[5.0, 0.0], [5.0, 5.0]]


@pytest.mark.parametrize("bent_first", [True, False])
def test_parts_sharing_an_end_and_crossing_elsewhere(bent_first):
    bent = line((0, 0), (10, 10), (20, 0))
    straight = line((0, 0), (20, 5))
    geoms = (bent, straight) if bent_first else (straight, bent)
    net = build_network(trenches(*geoms, ids=["B", "S"] if bent_first else ["S", "B"]))
    # hand: the straight line y = x / 4 meets the bent one's second leg y = 20 - x at (16, 4)
    xy = {tuple(p) for p in net.node_xy.round(9).tolist()}
    assert (16.0, 4.0) in xy
    assert len(net.segments) == 4
    # shapely: GEOS noding of the same lines gives the same pieces
    noded = shapely.get_parts(shapely.node(shapely.MultiLineString(list(geoms))))
    assert_allclose(np.sort(net.segments["length_m"]), np.sort(shapely.length(noded)), atol=1e-9)


def test_four_vertex_parts_sharing_an_end_and_crossing_elsewhere():
    a = line((0, 0), (10, 10), (20, 10), (30, 0))
    b = line((0, 0), (15, 20), (15, 0), (30, 5))
    net = build_network(trenches(a, b))
    noded = shapely.get_parts(shapely.node(shapely.MultiLineString([a, b])))  # shapely
    assert len(net.segments) == len(noded)
    assert_allclose(np.sort(net.segments["length_m"]), np.sort(shapely.length(noded)), atol=1e-9)


def test_collinear_parts_sharing_an_end_number_the_whole_overlap_first():
    # hand: b runs back along a from a's end (11, 21) to (6, 11): they share that stretch,
    # whose two ends are the crossings, numbered before every trench end
    a = line((1, 1), (11, 21))
    b = line((11, 21), (6, 11))
    net = build_network(trenches(a, b))
    assert {tuple(p) for p in net.node_xy[:2].round(9).tolist()} == {(11.0, 21.0), (6.0, 11.0)}


# ---- segment geometry: the stretch of the trench, vertex for vertex ----------------------------


def test_segments_keep_every_inner_vertex_in_order():
    zig = line((0, 0), (10, 5), (20, 0), (30, 5), (40, 0), (50, 5))
    net = build_network(
        trenches(zig), equipment(("rows", "R", pt(5, 10)), ("combiners", "C", pt(45, 10)))
    )
    src = zig
    for g, a, b in zip(
        net.segments.geometry, net.segments["start_m"], net.segments["end_m"], strict=True
    ):
        assert g.equals_exact(shapely.ops.substring(src, a, b), 1e-9)  # shapely
    assert [len(g.coords) for g in net.segments.geometry] == [2, 6, 2]


def test_a_vertex_exactly_one_micrometre_past_a_split_is_not_repeated():
    # hand: the vertex 1e-6 m after the trench's start is not "more than MIN_TOL_M" inside the
    # segment (build_network's pieces), so it is left out; one 2e-6 m in stays
    net = build_network(trenches(line((0, 0), (nw.MIN_TOL_M, 0), (10, 0))))
    assert [list(g.coords) for g in net.segments.geometry] == [[(0.0, 0.0), (10.0, 0.0)]]
    net = build_network(trenches(line((0, 0), (2 * nw.MIN_TOL_M, 0), (10, 0))))
    assert [len(g.coords) for g in net.segments.geometry] == [3]


# ---- trench checks: overlaps, retraces, far parts ------------------------------------------

DRAWN_ONCE = "a corridor must be drawn once"


def problems(frame, **kw) -> list[str]:
    return [str(p) for p in trench_problems(frame, **kw)]


def overlap(a: str, b: str, m: float) -> str:
    return (
        f"trenches {a!r}: overlaps trench {b!r} along {m:.1f} m — {DRAWN_ONCE} "
        "(remove the duplicate, or end one trench where the other starts)"
    )


def far(t: str, what: str, gap: float, snap: float = 30.0) -> str:
    return (
        f"trenches {t!r}: {what} {gap:.1f} m from the rest of the trench, more than snap_m "
        f"{snap:g} m — a trench's parts must form one corridor (give the far part its own id, "
        "or remove it)"
    )


def test_trench_problems_default_tolerance_and_snap():
    # hand: 5 m of corridor drawn twice 0.15 m apart: beyond the default 0.1 m, no overlap
    pair = trenches(line((0, 0), (5, 0)), line((0, 0.15), (5, 0.15)))
    assert problems(pair) == []
    assert problems(pair, node_tol_m=0.2) == [overlap("T1", "T2", 5.0)]
    # hand: a part 30.5 m from the rest: beyond the default snap_m of 30 m
    split = shapely.MultiLineString([[(0, 0), (10, 0)], [(40.5, 0), (50, 0)]])
    assert problems(trenches(split)) == [far("T1", "part 2 is", 30.5)]
    assert problems(trenches(split), snap_m=31.0) == []


def test_a_short_far_part_is_reported():
    # hand: a part of 0.5 m, 40 m from the rest of its trench
    split = shapely.MultiLineString([[(0, 0), (10, 0)], [(50, 0), (50.5, 0)]])
    assert problems(trenches(split)) == [far("T1", "part 2 is", 40.0)]


def test_the_stray_part_listed_first_is_still_the_stray():
    # hand: part 1 alone 100 m west; parts 2 and 3 meet end to end: they are the trench
    t = shapely.MultiLineString([[(-100, 0), (-90, 0)], [(0, 0), (5, 0)], [(5, 0), (10, 0)]])
    assert problems(trenches(t)) == [far("T1", "part 1 is", 90.0)]
    # ... the longer group when both groups have as many parts
    t = shapely.MultiLineString([[(-100, 0), (-98, 0)], [(0, 0), (10, 0)]])
    assert problems(trenches(t)) == [far("T1", "part 1 is", 98.0)]


def test_parts_of_a_later_trench_are_numbered_within_it():
    two = shapely.MultiLineString([[(0, 50), (20, 50)], [(5, 50), (15, 50)]])
    assert problems(trenches(line((0, 0), (10, 0)), two)) == [
        f"trenches 'T2': part 2 overlaps part 1 along 10.0 m — {DRAWN_ONCE} "
        "(remove the duplicate part)"
    ]
    back = shapely.MultiLineString([[(0, 50), (20, 50), (12, 50)], [(0, 80), (5, 80)]])
    assert problems(trenches(line((0, 0), (10, 0)), back)) == [
        f"trenches 'T2': part 1 runs back over its own path along 8.0 m — {DRAWN_ONCE} "
        "(remove the stretch drawn twice)"
    ]


def test_a_trench_pair_is_summed_over_the_parts():
    # hand: each of T1's two parts runs 0.6 m along T2: 1.2 m in all, more than 1 m
    t1 = shapely.MultiLineString([[(-10, 0.05), (0.6, 0.05)], [(9.4, 0.05), (20, 0.05)]])
    t2 = line((0, 0), (10, 0))
    assert problems(trenches(t1, t2)) == [overlap("T1", "T2", 1.2)]
    # ... and the same with the parts in the later trench
    assert problems(trenches(t2, t1)) == [overlap("T1", "T2", 1.2)]


def test_a_small_overlap_does_not_hide_a_later_one():
    # hand: T1–T2 share 0.5 m (below 1 m), T1–T3 share 3 m
    t1 = line((0, 0), (100, 0))
    t2 = line((99.5, 0), (120, 0))
    t3 = line((-3, 0.02), (3, 0.02))
    assert problems(trenches(t1, t2, t3)) == [overlap("T1", "T3", 3.0)]


def test_an_overlap_of_exactly_the_minimum_is_not_reported():
    # hand: 8 m and 9 m lines sharing exactly 1 m (binary fractions: no rounding); the rule
    # is "more than" overlap_min_m
    assert problems(trenches(line((0, 0), (8, 0)), line((7, 0), (16, 0)))) == []
    assert problems(trenches(line((0, 0), (8, 0)), line((6.875, 0), (16, 0)))) == [
        overlap("T1", "T2", 1.125)
    ]


def test_vertical_near_duplicates_overlap():
    # hand: two vertical trenches 5 cm apart sharing y = 15 … 20
    assert problems(trenches(line((10, 0), (10, 20)), line((10.05, 15), (10.05, 40)))) == [
        overlap("T1", "T2", 5.0)
    ]


def test_shallow_crossings_with_a_larger_tolerance():
    # hand: tol 0.2 m → minimum 2 m and edges summed only for sin θ < 0.2 / 2 = 0.1; a
    # crossing at sin θ = 0.15 meets (shares 2·0.2/0.15 = 2.7 m but is not summed)
    s = 0.15
    c = math.sqrt(1 - s * s)
    cross = line((-20 * c, -20 * s), (20 * c, 20 * s))
    assert problems(trenches(line((-20, 0), (20, 0)), cross), node_tol_m=0.2) == []


def test_a_crossing_at_exactly_the_limit_angle_meets():
    # hand: tol = 21/221 m (< 0.1, so the minimum is 1 m) and an edge along (220, 21), whose
    # length is 221 (the Pythagorean triple 21² + 220² = 221²): sin θ = 21/221 = tol/minimum,
    # not below it, so the crossing only meets (it would share 2 m if summed)
    tol = 21 / 221
    cross = line((-220, -21), (220, 21))
    assert problems(trenches(line((-300, 0), (300, 0)), cross), node_tol_m=tol) == []


def test_a_near_duplicate_a_hair_beyond_the_tolerance_is_still_caught():
    # hand: the band is "a hair more than the tolerance" (1e-9 relative + 1e-9 m)
    near = trenches(line((0, 0), (5, 0)), line((0, 0.1 + 1e-9), (5, 0.1 + 1e-9)))
    assert problems(near) == [overlap("T1", "T2", 5.0)]
    assert problems(trenches(line((0, 0), (5, 0)), line((0, 0.1001), (5, 0.1001)))) == []


@pytest.mark.parametrize(
    ("a", "b"),
    [
        (((0, 0), (8, 0)), ((7, 0), (16, 0))),  # collinear, partly shared
        (((0, 0.05), (8, 0.05)), ((2, 0), (6, 0))),  # parallel, inside the band
        (((0, 1), (8, 1)), ((2, 0), (6, 0))),  # parallel, outside the band
        (((2, 0), (2, 5)), ((2, 0), (9, 0))),  # perpendicular from b's start (on the cap)
        (((9, 0), (9, -5)), ((2, 0), (9, 0))),  # perpendicular from b's end
        (((5, -3), (5, 4)), ((2, 0), (9, 0))),  # perpendicular across b's middle
        (((1, 1), (5, 5.2)), ((0, 0), (9, 9))),  # diagonal, a slight angle
        (((3, 4), (13, 4.02)), ((0, 4.01), (10, 4.01))),  # nearly parallel, partly shared
        (((-5, 0.5), (5, 0.5)), ((0, 0), (0, 0.001))),  # a short b across a
    ],
)
def test_length_in_band_equals_shapelys_flat_buffer(a, b):
    tol = 0.1
    got = nw._length_in_band(
        np.array([a[0]], float),
        np.array([a[1]], float),
        np.array([b[0]], float),
        np.array([b[1]], float),
        tol,
    )
    # shapely: the length of a inside b's buffer with flat caps
    ref = shapely.length(
        shapely.intersection(line(*a), shapely.buffer(line(*b), tol, cap_style="flat"))
    )
    assert got.tolist() == pytest.approx([ref], abs=1e-6)


def test_many_crossings_are_numbered_pair_by_pair_in_geos_order():
    # two zigzags cross a straight trench 40 and 39 times; short straight trenches meeting
    # end to end elsewhere add pairs that share one end
    zig = line(*[(2.5 * i, 1.0 if i % 2 else -1.0) for i in range(41)])
    zag = line(*[(2.5 * i + 1.25, 1.5 if i % 2 else -1.5) for i in range(40)])
    geoms = [
        line((-5, 0), (105, 0)),
        zig,
        line((200, 0), (210, 0)),
        line((210, 0), (210, 10)),
        line((210, 10), (220, 10)),
        line((220, 10), (220, 20)),
        zag,
    ]
    net = build_network(trenches(*geoms))
    # shapely: GEOS's intersection points of each crossing pair, in its order: the first nodes
    ref = np.concatenate(
        [
            shapely.get_coordinates(shapely.intersection(geoms[0], geoms[1])),
            shapely.get_coordinates(shapely.intersection(geoms[0], geoms[6])),
        ]
    )
    assert len(ref) == 79
    assert net.node_xy[: len(ref)].tolist() == ref.tolist()


def test_ids_that_join_alike_do_not_share_a_fingerprint():
    # two layers of the same lines whose ids, joined with a NUL between them, read alike
    geoms = [line((0, 0), (10, 0)), line((10, 0), (10, 5))]
    a = trenches(*geoms, ids=["A\x00B", "C"])
    b = trenches(*geoms, ids=["A", "B\x00C"])
    assert trench_fingerprint(a, 0.1, TrenchDefaults()) != trench_fingerprint(
        b, 0.1, TrenchDefaults()
    )
    # so the memo of one is not taken for the other: the segments carry the new ids
    net = build_network(b, memo=build_network(a).memo)
    assert net.segments["trench_id"].tolist() == ["A", "B\x00C"]


def test_a_shared_stretch_of_min_tol_counts_for_nothing():
    # hand: T1's second part (7, 0)–(16, 0) shares exactly 1 m with T2 (0, 0)–(8, 0) (binary
    # fractions: no rounding), its first part, exactly MIN_TOL_M long, lies on T2's start: a
    # stretch no longer than MIN_TOL_M is floating-point noise (its docstring) and is not
    # added, so the shared length is 1 m, not more than overlap_min_m
    t1 = shapely.MultiLineString([[(0, 0), (nw.MIN_TOL_M, 0)], [(7, 0), (16, 0)]])
    assert problems(trenches(t1, line((0, 0), (8, 0)))) == []


def test_chainage_runs_along_each_trench_of_several_multi_part_ones():
    """The chainage of a multi-part trench's later part starts where the earlier parts end
    (their lengths added, README "Outputs"), also for a trench after the first one: T2's
    second part starts 30.0 m along T2 (its first part, 0 → 30 m, by hand)."""
    t1 = line((0, 0), (50, 0))
    t2 = shapely.MultiLineString([[(0, 10), (30, 10)], [(30, 10), (30, 50)]])
    net = build_network(trenches(t1, t2))
    got = [(r.trench_id, r.start_m, r.end_m) for r in net.segments.itertuples()]
    assert got == [("T1", 0.0, 50.0), ("T2", 0.0, 30.0), ("T2", 30.0, 70.0)]
    assert net.segments["segment_id"].tolist() == ["T1@0.0-50.0", "T2@0.0-30.0", "T2@30.0-70.0"]
