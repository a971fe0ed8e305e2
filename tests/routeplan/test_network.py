"""Trench network: noding, segment ids and attributes, equipment taps.

References are named beside each check: "hand" (exact geometry worked out by hand from
the invented coordinates), "shapely" (shapely's own noding/length as an outside
implementation), "networkx" (graph algorithms).
"""

from __future__ import annotations

import dataclasses
import math

import geopandas as gpd
import networkx as nx
import numpy as np
import pandas as pd
import pyproj
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from routeplan import network
from routeplan.errors import ParameterError
from routeplan.network import (
    REDRAWN_MAX,
    NodedTrenches,
    TrenchDefaults,
    build_network,
    check_metric_crs,
    far_problems,
    node_trenches,
    segment_ids,
)

UTM = "EPSG:32633"


def line(*xy):
    return shapely.LineString(xy)


def pt(x, y):
    return shapely.Point(x, y)


def trenches(*geoms, ids=None, **attrs) -> gpd.GeoDataFrame:
    """Trenches T1, T2, ... (or ``ids``) with the given geometries and optional attribute
    lists."""
    data = {"id": ids or [f"T{i + 1}" for i in range(len(geoms))], **attrs}
    return gpd.GeoDataFrame(data, geometry=list(geoms), crs=UTM)


def equipment(*items) -> gpd.GeoDataFrame:
    """Equipment from ``(layer, id, geometry)`` triples."""
    return gpd.GeoDataFrame(
        {"layer": [i[0] for i in items], "feature_id": [i[1] for i in items]},
        geometry=[i[2] for i in items],
        crs=UTM,
    )


def seg(net, segment_id):
    """The row of one segment."""
    return net.segments.set_index("segment_id").loc[segment_id]


def test_t_junction_splits_the_through_trench():
    net = build_network(trenches(line((0, 0), (100, 0)), line((50, 0), (50, 40))))
    # hand: T1 is cut at x = 50 where T2 ends on it; chainage from each trench's first vertex
    assert net.segments["segment_id"].tolist() == ["T1@0.0-50.0", "T1@50.0-100.0", "T2@0.0-40.0"]
    assert_allclose(net.segments["length_m"], [50.0, 50.0, 40.0], rtol=0, atol=1e-12)
    assert net.n_nodes == 4
    assert (
        seg(net, "T1@0.0-50.0").node_v
        == seg(net, "T1@50.0-100.0").node_u
        == seg(net, "T2@0.0-40.0").node_u
    )


def test_crossing_splits_both_trenches():
    net = build_network(trenches(line((0, 0), (100, 0)), line((30, -20), (30, 20))))
    # hand: crossing at (30, 0): 30 m along T1 from (0, 0), 20 m along T2 from (30, -20)
    assert net.segments["segment_id"].tolist() == [
        "T1@0.0-30.0",
        "T1@30.0-100.0",
        "T2@0.0-20.0",
        "T2@20.0-40.0",
    ]
    assert_allclose(net.segments["length_m"], [30.0, 70.0, 20.0, 20.0], rtol=0, atol=1e-12)
    assert net.n_nodes == 5
    node = seg(net, "T1@30.0-100.0").node_u
    assert_allclose(net.node_xy[node], [30.0, 0.0], atol=1e-12)


def test_continuation_keeps_two_trenches_apart():
    # T2 continues T1 in a straight line: still two segments, one per trench
    net = build_network(trenches(line((0, 0), (50, 0)), line((50, 0), (100, 0))))
    assert net.segments["segment_id"].tolist() == ["T1@0.0-50.0", "T2@0.0-50.0"]
    assert net.n_nodes == 3  # hand: the shared end is one node


def test_shared_interior_vertex_is_a_node():
    # both trenches bend at (50, 0): they touch there without crossing
    net = build_network(
        trenches(line((0, 0), (50, 0), (100, 20)), line((50, -30), (50, 0), (80, -30)))
    )
    assert len(net.segments) == 4
    assert_allclose(
        net.segments["length_m"],
        [50.0, math.hypot(50, 20), 30.0, math.hypot(30, 30)],  # hand
        rtol=0,
        atol=1e-9,
    )


def test_nearly_touching_end_joins_within_node_tol():
    # T2 stops 5 cm short of T1
    geoms = (line((0, 0), (100, 0)), line((50, 0.05), (50, 40)))
    joined = build_network(trenches(*geoms), node_tol_m=0.1)
    assert len(joined.segments) == 3
    # hand: the node sits at T2's end, so T1's halves bend 5 cm up to it
    assert_allclose(
        joined.segments["length_m"], [math.hypot(50, 0.05)] * 2 + [39.95], rtol=0, atol=1e-9
    )
    assert len(set(joined.node_island)) == 1
    apart = build_network(trenches(*geoms), node_tol_m=0.01)
    assert len(apart.segments) == 2
    assert len(set(apart.node_island)) == 2


def test_overshooting_end_is_trimmed_to_the_crossing():
    # T2 crosses T1 and ends 4 cm past it: the 4 cm stub is noise and is dropped
    net = build_network(trenches(line((0, 0), (100, 0)), line((50, -0.04), (50, 40))))
    # hand: T2's chainage starts at its first vertex (50, -0.04), so what is left of it runs
    # 0.04 → 40.04 m: T2@0.0-40.0 (4 cm, not 5, keeps the ends off a rounding tie)
    assert net.segments["segment_id"].tolist() == ["T1@0.0-50.0", "T1@50.0-100.0", "T2@0.0-40.0"]
    assert_allclose(net.segments["length_m"], [50.0, 50.0, 40.0], rtol=0, atol=1e-9)  # hand
    assert_allclose(net.segments["start_m"], [0.0, 50.0, 0.04], rtol=0, atol=1e-9)
    assert_allclose(net.segments["end_m"], [50.0, 100.0, 40.04], rtol=0, atol=1e-9)


def test_equipment_exactly_on_a_trench_vertex():
    net = build_network(
        trenches(line((0, 0), (30, 0), (30, 40))),
        equipment(("combiners", "CB1", pt(30, 0))),
    )
    # hand: the tap at the bend splits the trench there, stub of zero length; the bend is
    # 30 m along T1, its end 30 + 40 = 70 m
    assert net.segments["segment_id"].tolist() == ["T1@0.0-30.0", "T1@30.0-70.0"]
    assert_allclose(net.segments["length_m"], [30.0, 40.0], rtol=0, atol=1e-12)
    geoms = net.segments.geometry
    assert [len(g.coords) for g in geoms] == [2, 2]  # the bend vertex is not repeated
    tap = net.taps.iloc[0]
    assert tap.connected and tap.stub_m == 0.0
    assert_allclose(net.node_xy[tap.node], [30, 0])


def test_several_taps_on_one_segment_and_a_tap_reusing_a_node():
    net = build_network(
        trenches(line((0, 0), (100, 0))),
        equipment(
            ("rows", "R1", pt(20, 3)),
            ("combiners", "CB1", pt(60, -4)),
            ("combiners", "CB2", pt(60.05, 2)),  # within node_tol of CB1's tap
            ("inverters", "INV1", pt(100.02, 5)),  # within node_tol of the trench end
        ),
    )
    # hand: cuts at R1's tap (x = 20) and CB1's (x = 60, CB2 joins its node); chainage = x
    assert net.segments["segment_id"].tolist() == ["T1@0.0-20.0", "T1@20.0-60.0", "T1@60.0-100.0"]
    assert_allclose(net.segments["length_m"], [20.0, 40.0, 40.0], rtol=0, atol=1e-12)  # hand
    taps = net.taps.set_index("feature_id")
    assert taps.loc["CB1", "node"] == taps.loc["CB2", "node"]
    assert taps.loc["INV1", "node"] == seg(net, "T1@60.0-100.0").node_v
    # hand: stubs end on the node, so CB2's and INV1's stubs lean to it
    assert_allclose(
        taps["stub_m"].to_numpy(),
        [3.0, 4.0, math.hypot(0.05, 2), math.hypot(0.02, 5)],
        rtol=0,
        atol=1e-12,
    )


def test_row_stub_starts_at_the_rows_nearest_point():
    row = line((5, 10), (45, 10))
    net = build_network(trenches(line((0, 0), (0, 50))), equipment(("rows", "R1", row)))
    stub = net.taps.geometry.iloc[0]
    # hand: nearest point of the row is its west end (5, 10), tap at (0, 10)
    assert list(stub.coords) == [(5.0, 10.0), (0.0, 10.0)]
    assert net.taps["stub_m"].iloc[0] == 5.0


def test_polygon_row_and_pad():
    net = build_network(
        trenches(line((0, 0), (0, 50))),
        equipment(
            ("rows", "R1", shapely.box(3, 10, 43, 14)),
            ("inverters", "I1", shapely.box(-2, 40, 2, 44)),
        ),
    )
    taps = net.taps.set_index("feature_id")
    assert taps.loc["R1", "stub_m"] == 3.0  # hand: the box's west side is 3 m from x = 0
    assert taps.loc["I1", "stub_m"] == 0.0  # the trench runs into the pad


def test_far_feature_is_not_connected_and_reported_with_its_distance():
    net = build_network(
        trenches(line((0, 0), (100, 0))),
        equipment(("rows", "R9", pt(50, 12.5)), ("combiners", "CB1", pt(10, 1))),
        snap_m=10.0,
    )
    assert net.taps["connected"].tolist() == [False, True]
    assert net.taps["node"].iloc[0] == -1
    problems = far_problems(net)
    assert [str(p) for p in problems] == [
        "rows 'R9': nearest trench 'T1' is 12.50 m away, more than snap_m 10 m"  # hand
    ]


def test_no_trench_at_all():
    net = build_network(trenches(), equipment(("rows", "R1", pt(0, 0))))
    assert [str(p) for p in far_problems(net)] == [
        "trenches: no trench to route on",
        "rows 'R1': cannot join the network: no trench (or empty geometry)",
    ]


def test_multilinestring_trench_numbers_segments_across_parts():
    mls = shapely.MultiLineString([[(0, 0), (10, 0)], [(20, 0), (30, 0)]])
    net = build_network(trenches(mls, line((5, -5), (5, 5))))
    # hand: the parts laid end to end: (0,0)-(10,0) is chainage 0-10, (20,0)-(30,0) 10-20; T2
    # crosses the first part at x = 5, 5 m along T2 from (5, -5)
    assert net.segments["segment_id"].tolist() == [
        "T1@0.0-5.0",
        "T1@5.0-10.0",
        "T1@10.0-20.0",
        "T2@0.0-5.0",
        "T2@5.0-10.0",
    ]
    assert_allclose(net.segments["length_m"], [5.0, 5.0, 10.0, 5.0, 5.0])  # hand
    assert_allclose(net.segments["start_m"], [0.0, 5.0, 10.0, 0.0, 5.0], rtol=0, atol=1e-12)
    assert_allclose(net.segments["end_m"], [5.0, 10.0, 20.0, 5.0, 10.0], rtol=0, atol=1e-12)


def crossings_at(*xs: float) -> list[shapely.LineString]:
    """Short trenches across y = 0 at each x, from (x, -1) to (x, 1)."""
    return [line((x, -1), (x, 1)) for x in xs]


def test_segment_id_chainage_is_rounded_to_a_decimetre_half_to_even():
    # exact ties (binary fractions, exact in a float): half to even, as Python's round() does
    # it (IEEE 754 roundTiesToEven): 0.25 → 0.2, 0.75 → 0.8, 12.25 → 12.2, 50.75 → 50.8
    ties = np.array([0.25, 0.75, 12.25, 50.75])
    assert [round(x, 1) for x in ties] == [0.2, 0.8, 12.2, 50.8]  # Python, the reference
    ids = segment_ids(np.array(["T", "T", "U", "U"]), ties, ties + 2.5)
    # hand: 2.75 → 2.8, 3.25 → 3.2, 14.75 → 14.8, 53.25 → 53.2
    assert ids.tolist() == ["T@0.2-2.8", "T@0.8-3.2", "U@12.2-14.8", "U@50.8-53.2"]
    # on a site: T1 (0,0) → (100,0) tapped at x = 12.24 and 50.76 by combiners 1 m off it;
    # chainage = x: 12.24 → 12.2, 50.76 → 50.8
    net = build_network(
        trenches(line((0, 0), (100, 0))),
        equipment(("combiners", "CB1", pt(12.24, -1)), ("combiners", "CB2", pt(50.76, -1))),
    )
    assert net.segments["segment_id"].tolist() == [
        "T1@0.0-12.2",
        "T1@12.2-50.8",
        "T1@50.8-100.0",
    ]
    # the chainage itself is kept to the float (the schedule's from_m, to_m)
    assert_allclose(net.segments["start_m"], [0.0, 12.24, 50.76], rtol=0, atol=1e-9)
    assert_allclose(net.segments["end_m"], [12.24, 50.76, 100.0], rtol=0, atol=1e-9)


def test_segments_shorter_than_a_decimetre_are_named_in_millimetres():
    # crossings 2 cm and 1 cm apart (node_tol 1 mm keeps them apart): T1 is cut at x = 5.01,
    # 5.03 and 5.04. Rounded to 0.1 m the two short pieces would both be T1@5.0-5.0, so both
    # take three decimals; the long pieces keep one (0 → 5.01 is T1@0.0-5.0, 5.04 → 11 is
    # T1@5.0-11.0, which no other piece shares)
    net = build_network(
        trenches(line((0, 0), (11, 0)), *crossings_at(5.01, 5.03, 5.04)), node_tol_m=0.001
    )
    ids = net.segments["segment_id"].tolist()
    assert ids[:4] == ["T1@0.0-5.0", "T1@5.010-5.030", "T1@5.030-5.040", "T1@5.0-11.0"]
    assert len(set(ids)) == len(ids) == 4 + 3 * 2  # unique: T1's 4 and 2 per crossing
    assert_allclose(net.segments["length_m"][:4], [5.01, 0.02, 0.01, 5.96], rtol=0, atol=1e-9)


def test_ids_are_unique_and_name_their_trench_before_the_last_at():
    # trench ids holding the separators of the scheme: "@" and "-"; the trench id is
    # everything before the last "@" (README, Outputs)
    tr = gpd.GeoDataFrame(
        {"id": ["A@1.0-2.0", "B-3", "@"]},
        geometry=[line((0, 0), (60, 0)), line((20, -10), (20, 10)), line((40, 10), (40, 0))],
        crs=UTM,
    )
    net = build_network(tr)
    ids = net.segments["segment_id"].tolist()
    # hand: A is cut at x = 20 (B crosses) and 40 (the "@" trench ends on it); B at its
    # middle, 10 m from (20, -10); "@" is one piece of 10 m
    assert ids == [
        "A@1.0-2.0@0.0-20.0",
        "A@1.0-2.0@20.0-40.0",
        "A@1.0-2.0@40.0-60.0",
        "B-3@0.0-10.0",
        "B-3@10.0-20.0",
        "@@0.0-10.0",
    ]
    assert len(set(ids)) == len(ids)
    assert [i.rsplit("@", 1)[0] for i in ids] == net.segments["trench_id"].tolist()


def test_chainage_runs_across_a_multilinestrings_parts_in_stored_order():
    # parts stored second-first: a 3-4-5 diagonal, then a 7.5 m vertical part tapped at y = 2.5
    diagonal = [(10, 0), (13, 4)]
    vertical = [(0, 0), (0, 7.5)]
    mls = shapely.MultiLineString([diagonal, vertical])
    net = build_network(trenches(mls), equipment(("combiners", "CB1", pt(-1, 2.5))))
    # shapely: the first part's length is where the second part starts along the trench
    first = shapely.length(shapely.LineString(diagonal))
    tap = shapely.line_locate_point(shapely.LineString(vertical), pt(0, 2.5))
    assert (first, tap) == (5.0, 2.5)  # hand: hypot(3, 4); 2.5 m up the vertical part
    assert net.segments["segment_id"].tolist() == ["T1@0.0-5.0", "T1@5.0-7.5", "T1@7.5-12.5"]
    assert_allclose(net.segments["start_m"], [0.0, first, first + tap], rtol=0, atol=1e-12)
    assert_allclose(net.segments["end_m"], [first, first + tap, first + 7.5], rtol=0, atol=1e-12)


def test_attributes_filled_from_defaults():
    tr = trenches(
        line((0, 0), (10, 0)),
        line((10, 0), (20, 0)),
        depth_m=[1.2, np.nan],
        laying=["Duct", None],
        spacing_m=[np.nan, 0.25],
        soil_k_m_w=[np.nan, 1.0],
        max_circuits=[6.0, np.nan],
    )
    defaults = TrenchDefaults(depth_m=0.8, laying="direct", spacing_m=0.1, soil_k_m_w=1.5)
    s = build_network(tr, defaults=defaults).segments
    assert s["depth_m"].tolist() == [1.2, 0.8]
    assert s["laying"].tolist() == ["duct", "direct"]
    assert s["spacing_m"].tolist() == [0.1, 0.25]
    assert s["soil_k_m_w"].tolist() == [1.5, 1.0]
    assert s["max_circuits"].iloc[0] == 6.0 and math.isnan(s["max_circuits"].iloc[1])


def test_missing_attribute_columns_use_defaults():
    tr = gpd.GeoDataFrame({"id": ["A"]}, geometry=[line((0, 0), (1, 0))], crs=UTM)
    s = build_network(tr).segments
    assert (s["depth_m"].iloc[0], s["laying"].iloc[0], s["soil_k_m_w"].iloc[0]) == (
        0.7,
        "direct",
        2.5,
    )


def test_invalid_defaults_list_valid_choices():
    with pytest.raises(ParameterError, match="'buried' is not one of 'direct', 'duct'"):
        TrenchDefaults(laying="buried")
    with pytest.raises(ParameterError) as err:
        TrenchDefaults(depth_m=0, soil_k_m_w=-1)
    assert len(err.value.problems) == 2


def test_parallel_trenches_graph_keeps_the_shorter():
    # two trenches join the same two nodes: a straight one (10 m) and a detour (30 m)
    net = build_network(trenches(line((0, 0), (10, 0)), line((0, 0), (0, 10), (10, 10), (10, 0))))
    assert net.graph.nnz == 2  # one undirected edge
    assert net.graph[0, 1] == 10.0
    assert net.segment_between(np.array([1]), np.array([0])).tolist() == [0]


def test_ring_trench_with_a_tap():
    ring = line((0, 0), (10, 0), (10, 10), (0, 10), (0, 0))
    net = build_network(trenches(ring), equipment(("rows", "R1", pt(10, 5))))
    # hand: ring of 40 m cut at its start and at the tap (chainage 15 m)
    assert_allclose(net.segments["length_m"], [15.0, 25.0])
    assert net.seg_u[0] == net.seg_v[1]


def test_crs_must_be_projected_metres():
    assert check_metric_crs(pyproj.CRS(UTM)) == []
    [problem] = check_metric_crs(pyproj.CRS("EPSG:4326"))
    assert problem.layer == "site" and "not projected in metres" in problem.message


# ---- property tests on random grid-like networks -------------------------------------------


@st.composite
def grid_trenches(draw):
    """Horizontal and vertical trenches on a 10 m lattice, each on its own line."""
    ys = draw(st.lists(st.integers(0, 8), min_size=1, max_size=6, unique=True))
    xs = draw(st.lists(st.integers(0, 8), min_size=1, max_size=6, unique=True))
    geoms = []
    for y in ys:
        a, b = sorted(draw(st.tuples(st.integers(0, 8), st.integers(0, 8))))
        geoms.append(line((a * 10.0, y * 10.0), (b * 10.0 + 5.0, y * 10.0)))
    for x in xs:
        a, b = sorted(draw(st.tuples(st.integers(0, 8), st.integers(0, 8))))
        geoms.append(line((x * 10.0, a * 10.0 - 3.0), (x * 10.0, b * 10.0)))
    return geoms


@settings(max_examples=60, deadline=None)
@given(grid_trenches())
def test_noding_matches_shapely_node(geoms):
    net = build_network(trenches(*geoms))
    # shapely: GEOS noding of the same lines is the outside reference
    noded = shapely.get_parts(shapely.node(shapely.MultiLineString(geoms)))
    assert len(net.segments) == len(noded)
    assert_allclose(
        np.sort(net.segments["length_m"]), np.sort(shapely.length(noded)), rtol=0, atol=1e-9
    )
    assert_allclose(net.segments["length_m"].sum(), sum(g.length for g in geoms), atol=1e-9)
    # each segment's length is its geometry's, and its ends are its nodes
    geo = np.asarray(net.segments.geometry.array)
    assert_allclose(net.segments["length_m"], shapely.length(geo), rtol=0, atol=0)
    start = shapely.get_coordinates(shapely.get_point(geo, 0))
    assert_allclose(start, net.node_xy[net.seg_u], atol=0)


@settings(max_examples=60, deadline=None)
@given(grid_trenches())
def test_islands_match_networkx(geoms):
    net = build_network(trenches(*geoms))
    g = nx.MultiGraph()
    g.add_nodes_from(range(net.n_nodes))
    g.add_edges_from(zip(net.seg_u.tolist(), net.seg_v.tolist(), strict=True))
    # networkx: connected components of the same segments
    assert len(set(net.node_island.tolist())) == nx.number_connected_components(g)
    # shapely: lines that touch form the islands (union of lines, parts of the merged result)
    merged = shapely.get_parts(shapely.line_merge(shapely.union_all(geoms)))
    groups = nx.Graph()
    groups.add_nodes_from(range(len(merged)))
    tree = shapely.STRtree(merged)
    i, j = tree.query(merged, predicate="intersects")
    groups.add_edges_from(zip(i.tolist(), j.tolist(), strict=True))
    assert nx.number_connected_components(groups) == len(set(net.node_island.tolist()))


# ---- the memo a build hands to the next (re-planning) ---------------------------------------


def assert_same_network(a, b) -> None:
    """Two networks are the same: nodes, segments, taps and stubs, value for value."""
    np.testing.assert_array_equal(a.node_xy, b.node_xy)
    for x, y in ((a.segments, b.segments), (a.taps, b.taps)):
        assert list(x.columns) == list(y.columns)
        for col in x.columns:
            if col == "geometry":
                gx, gy = np.asarray(x.geometry.array), np.asarray(y.geometry.array)
                assert (shapely.is_missing(gx) == shapely.is_missing(gy)).all()
                have = ~shapely.is_missing(gx)
                assert shapely.equals_exact(gx[have], gy[have], tolerance=0).all()
            else:
                np.testing.assert_array_equal(x[col].to_numpy(), y[col].to_numpy())
    assert a._index == b._index


@st.composite
def equipment_near(draw, n_max: int = 12):
    """Points near a 0..85 m lattice; some exactly on lattice lines, some on top of each
    other (so taps join trench candidates and each other within the tolerance)."""
    items = []
    for i in range(draw(st.integers(0, n_max))):
        x = draw(st.sampled_from([0.0, 10.0, 20.0, 33.3, 40.0, 50.05, 60.0, 70.02]))
        y = draw(st.sampled_from([0.0, 2.0, 10.0, 19.95, 30.0, 45.0, 60.04, 80.0]))
        layer = draw(st.sampled_from(["rows", "combiners", "inverters"]))
        items.append((layer, f"E{i}", pt(x, y)))
    return items


def build(geoms, items, memo=None, **kw):
    return build_network(trenches(*geoms), equipment(*items), memo=memo, **kw)


@settings(max_examples=60, deadline=None)
@given(grid_trenches(), equipment_near(), equipment_near(), st.data())
def test_a_build_with_the_last_builds_memo_equals_a_cold_build(geoms, before, after, data):
    # hand: the memo only skips work; what it must give is the cold build's network
    last = build(geoms, before)
    moved = before[: len(before) // 2] + after  # some features kept, some new or moved
    assert_same_network(build(geoms, moved, last.memo), build(geoms, moved))
    # other trenches (one dropped): the memo's noding is not taken
    if len(geoms) > 1:
        fewer = geoms[:-1]
        assert_same_network(build(fewer, moved, last.memo), build(fewer, moved))
    # another snap distance: the remembered nearest parts are not taken
    snap = data.draw(st.sampled_from([0.5, 5.0]))
    assert_same_network(
        build(geoms, moved, last.memo, snap_m=snap), build(geoms, moved, snap_m=snap)
    )
    # a trench redrawn (moved, its parts as they were): nearest parts carried where right
    k = data.draw(st.integers(0, len(geoms) - 1))
    dx, dy = data.draw(st.sampled_from([(0.0, 4.0), (3.0, 0.0), (0.05, 0.0), (0.0, -10.0)]))
    redrawn = [*geoms[:k], shapely.affinity.translate(geoms[k], dx, dy), *geoms[k + 1 :]]
    memo = build(geoms, moved).memo
    assert_same_network(build(redrawn, moved, memo), build(redrawn, moved))


def test_a_redrawn_trench_takes_over_the_features_now_nearer_it():
    """Hand: C1 is 8 m from T1 and 12 m from T2; T2 redrawn 5 m nearer (7 m) takes it. P1,
    2 m from T1, keeps its remembered part. A tie (8 m from both) goes to the lower part, T1,
    also when T1 is the trench redrawn to tie."""
    geoms = [line((0, 0), (100, 0)), line((0, 20), (100, 20))]
    items = [("combiners", "C1", pt(10, 8)), ("inverters", "P1", pt(50, 2))]
    last = build(geoms, items)
    assert last.taps["trench_id"].tolist() == ["T1", "T1"]
    redrawn = [geoms[0], line((0, 15), (100, 15))]
    carried = last.memo.redrawn(build(redrawn, items).memo.noded)
    known, _, _ = carried.nearest(np.asarray(equipment(*items).geometry.array))
    assert known.tolist() == [False, True]  # C1 searched again, P1 carried
    net = build(redrawn, items, last.memo)
    assert net.taps["trench_id"].tolist() == ["T2", "T1"]
    assert_same_network(net, build(redrawn, items))
    # the tie: C2 8 m from T2 (part 1); T1 redrawn to 8 m from it (part 0) wins the tie
    items = [("combiners", "C2", pt(10, 12))]
    last = build(geoms, items)
    assert last.taps["trench_id"].tolist() == ["T2"]
    tied = [line((0, 4), (100, 4)), geoms[1]]
    net = build(tied, items, last.memo)
    assert net.taps["trench_id"].tolist() == ["T1"]
    assert_same_network(net, build(tied, items))
    # parts in another number: nothing carried
    split = [geoms[0], shapely.MultiLineString([[(0, 20), (40, 20)], [(60, 20), (100, 20)]])]
    assert last.memo.redrawn(build(split, items).memo.noded) is None


def assert_same_noding(a: NodedTrenches, b: NodedTrenches) -> None:
    """Two nodings are the same, field by field and value for value (order included)."""
    for field in dataclasses.fields(NodedTrenches):
        x, y = getattr(a, field.name), getattr(b, field.name)
        if isinstance(x, pd.DataFrame):
            pd.testing.assert_frame_equal(x, y)
        elif isinstance(x, np.ndarray):
            assert x.dtype == y.dtype, field.name
            np.testing.assert_array_equal(x, y, err_msg=field.name)
        else:
            assert x == y, field.name


def _redraw(geom, how: str, dx: float, dy: float):
    """One trench redrawn: moved, reversed, a vertex added on it, or bent."""
    if how == "move":
        return shapely.affinity.translate(geom, dx, dy)
    if how == "reverse":
        return shapely.reverse(geom)
    coords = shapely.get_coordinates(geom)
    mid = (coords[0] + coords[1]) / 2
    if how == "bend":
        mid = mid + np.array([dx, dy])
    return shapely.LineString([coords[0], mid, *coords[1:]])


@st.composite
def redrawn_trenches(draw):
    """Lattice trenches (one of them, at times, in two parts), and the same trenches with one
    to three redrawn: moved by a hair, by less than, exactly or more than the tolerance, onto
    another lattice line (where trenches overlap, cross and touch), reversed, given a vertex
    or bent."""
    geoms = draw(grid_trenches())
    if len(geoms) > 2 and draw(st.booleans()):
        geoms = [shapely.MultiLineString([geoms[0], geoms[1]]), *geoms[2:]]
    after = list(geoms)
    for k in draw(st.lists(st.integers(0, len(geoms) - 1), min_size=1, max_size=3)):
        how = draw(st.sampled_from(["move", "move", "reverse", "vertex", "bend"]))
        dx, dy = draw(
            st.sampled_from(
                [(0.0, 1e-7), (0.05, 0.0), (0.1, 0.0), (0.0, -0.1), (0.15, 0.1), (3.0, 0.0),
                 (0.0, 10.0), (-10.0, 0.0), (10.0, -10.0), (5.0, 5.0)]
            )
        )  # fmt: skip
        if how in ("vertex", "bend") and isinstance(after[k], shapely.MultiLineString):
            how = "move"
        after[k] = _redraw(after[k], how, dx, dy)
    return geoms, after


@settings(max_examples=150, deadline=None)
@given(redrawn_trenches(), equipment_near())
def test_a_noding_carried_over_a_redraw_equals_a_fresh_one(pair, items):
    # hand: the carried noding only skips work; it must be the fresh noding, array for array
    before, after = pair
    last = node_trenches(trenches(*before))
    fresh = node_trenches(trenches(*after))
    carried = network._renode(last, fresh)  # the redraw keeps every trench's parts' number
    assert carried is not None
    assert_same_noding(carried, fresh)
    assert_same_noding(node_trenches(trenches(*after), last=last), fresh)
    # and the network built with the last build's memo is the cold build's
    memo = build(before, items).memo
    assert_same_network(build(after, items, memo), build(after, items))


def test_a_noding_is_carried_over_only_for_parts_alike():
    """Hand: T2 crosses T1 at (50, 0); moved 60 m east it crosses nothing. Carried over: the
    crossing goes; with the parts of a trench in another number, or more than REDRAWN_MAX
    parts redrawn, nothing is carried (a fresh noding is made)."""
    before = [line((0, 0), (100, 0)), line((50, -10), (50, 10))]
    last = node_trenches(trenches(*before))
    assert last.cross_xy.tolist() == [[50.0, 0.0]]
    assert (last.cross_i.tolist(), last.cross_j.tolist()) == ([0], [1])
    # no part redrawn, an attribute changed: the last noding, the new attributes
    deeper = node_trenches(trenches(*before, depth_m=[1.2, 1.2]))
    assert_same_noding(network._renode(last, deeper), deeper)
    after = [before[0], line((110, -10), (110, 10))]
    carried = network._renode(last, node_trenches(trenches(*after)))
    assert len(carried.cross_xy) == 0 and len(carried.split_ci) == 0
    assert_same_noding(carried, node_trenches(trenches(*after)))
    # the parts redrawn, asked of one noding against two others (each answer its own):
    # T2 (part 1) against the first, none against itself
    now = node_trenches(trenches(*after))
    assert network._redrawn_parts(last, now).tolist() == [1]
    assert network._redrawn_parts(carried, now).tolist() == []
    assert network._redrawn_parts(last, now).tolist() == [1]
    # back: the crossing and T2's split of T1 (its centre, 50 m along T1) come back
    back = network._renode(carried, last)
    assert_same_noding(back, last)
    assert back.split_pos_m.tolist() == [50.0, 10.0]  # along T1, then along T2
    split = [shapely.MultiLineString([[(0, 0), (40, 0)], [(60, 0), (100, 0)]]), before[1]]
    assert network._renode(last, node_trenches(trenches(*split))) is None
    many = [line((0, y), (100, y)) for y in range(REDRAWN_MAX + 1)]
    last = node_trenches(trenches(*many))
    moved = node_trenches(trenches(*[shapely.affinity.translate(g, 0, 0.5) for g in many]))
    assert network._renode(last, moved) is None
    one = node_trenches(trenches(*many[:-1], line((0, 0), (1, 0))))
    assert network._renode(last, one) is not None


def test_a_vertex_near_its_own_end_that_a_redraw_makes_a_node():
    """Hand: T1's inner vertex (10, 0) lies 0.05 m from its own last end (10, 0.05), within
    the 0.1 m tolerance, but splits no other part: no node. T2 redrawn 0.08 m beside both
    makes the vertex a node, which joins that end (a close pair of two candidates neither of
    which moved); T2 redrawn away again undoes it."""
    t1 = line((0, 0), (10, 0), (10, 0.05))
    far, near = line((50, -5), (50, 5)), line((10.08, -5), (10.08, 5))
    apart = node_trenches(trenches(t1, far))
    beside = node_trenches(trenches(t1, near))
    vertex = len(beside.cross_xy) + 2 * beside.n_parts  # the first inner vertex: T1's
    assert not apart.active[vertex] and beside.active[vertex]
    act = np.flatnonzero(beside.active).tolist()
    end = len(beside.cross_xy) + beside.n_parts  # T1's last end
    pairs = list(zip(beside.pair_a.tolist(), beside.pair_b.tolist(), strict=True))
    assert (act.index(end), act.index(vertex)) in pairs
    assert_same_noding(network._renode(apart, beside), beside)
    assert_same_noding(network._renode(beside, apart), apart)


def test_the_memo_takes_a_features_nearest_part_only_for_the_same_geometry():
    geoms = [line((0, 0), (100, 0)), line((0, 20), (100, 20))]
    last = build(geoms, [("inverters", "P1", pt(50, 4)), ("combiners", "C1", pt(10, 1))])
    # P1 moved nearer the other trench; C1 unchanged
    items = [("inverters", "P1", pt(50, 16)), ("combiners", "C1", pt(10, 1))]
    known, part, _ = last.memo.nearest(np.asarray(equipment(*items).geometry.array))
    assert part[1] == 0  # C1: part 0 (T1)
    assert known.tolist() == [False, True]
    net = build(geoms, items, last.memo)
    assert net.taps["trench_id"].tolist() == ["T2", "T1"]  # hand: 4 m from T2, 1 m from T1
    assert_same_network(net, build(geoms, items))
