"""routeplan.routing's functions on small hand-built networks, fast enough for mutation runs.

Every network here is a few invented lines. The reference is named beside each check:
"networkx" (Dijkstra path lengths on the same segments), "hand" (worked out from the
invented coordinates, written out in the comment), "Python" (``str.join``, integer bit
arithmetic). Segment ids are not compared as text (their form is not fixed here).
"""

from __future__ import annotations

import math

import geopandas as gpd
import networkx as nx
import numpy as np
import pytest
import shapely

from layers.errors import Problem
from routeplan import routing
from routeplan.errors import NotConnectedError, ParameterError, RoutingError
from routeplan.network import build_network
from routeplan.routing import RouteParams, shortest_paths

UTM = "EPSG:32633"


def line(*xy):
    return shapely.LineString(xy)


def pt(x, y):
    return shapely.Point(x, y)


def ladder(with_equipment: bool = False):
    """Two rails joined by three rungs of different lengths, and a far island.

    hand: rail A (0,0)→(300,0); rail B (0,60)→(100,60)→(200,40)→(300,40) (bent); rungs at
    x = 0 (60 m), x = 100 (60 m), x = 300 (40 m); island Z (5000,0)→(5100,0).
    """
    tr = gpd.GeoDataFrame(
        {"id": ["A", "B", "R0", "R1", "R3", "Z"]},
        geometry=[
            line((0, 0), (300, 0)),
            line((0, 60), (100, 60), (200, 40), (300, 40)),
            line((0, 0), (0, 60)),
            line((100, 0), (100, 60)),
            line((300, 0), (300, 40)),
            line((5000, 0), (5100, 0)),
        ],
        crs=UTM,
    )
    eq = None
    if with_equipment:
        eq = gpd.GeoDataFrame(
            {
                "layer": ["rows", "rows", "combiners", "combiners", "inverters", "combiners"],
                "feature_id": ["R1", "R2", "C1", "C2", "I1", "C3"],
            },
            geometry=[
                pt(50, 3),
                pt(250, 45),
                pt(150, -2),
                pt(5050, 4),
                pt(2000, 2000),
                pt(3000, 3000),
            ],
            crs=UTM,
        )
    return build_network(tr, eq)


def nx_graph(net) -> nx.MultiGraph:
    g = nx.MultiGraph()
    g.add_nodes_from(range(net.n_nodes))
    g.add_weighted_edges_from(
        zip(net.seg_u.tolist(), net.seg_v.tolist(), net.seg_length_m.tolist(), strict=True)
    )
    return g


def check_paths(net, src, dst, paths) -> None:
    """Each path runs from its source to its destination, segment after segment, and is as
    long as networkx's shortest path."""
    g = nx_graph(net)
    assert len(paths.offset) == len(src) + 1 and paths.offset[0] == 0
    assert paths.offset[-1] == len(paths.segment) == len(paths.forward)
    assert paths.pair.tolist() == np.repeat(np.arange(len(src)), np.diff(paths.offset)).tolist()
    for p, (a, b) in enumerate(zip(src.tolist(), dst.tolist(), strict=True)):
        segs = paths.segment[paths.offset[p] : paths.offset[p + 1]]
        fwd = paths.forward[paths.offset[p] : paths.offset[p + 1]]
        ref = nx.shortest_path_length(g, a, b, weight="weight")  # networkx
        assert paths.trench_m[p] == pytest.approx(ref, abs=1e-9)
        assert net.seg_length_m[segs].sum() == pytest.approx(ref, abs=1e-9)
        if a == b:
            assert len(segs) == 0
            continue
        u = np.where(fwd, net.seg_u[segs], net.seg_v[segs])
        v = np.where(fwd, net.seg_v[segs], net.seg_u[segs])
        assert u[0] == a and v[-1] == b and (u[1:] == v[:-1]).all()
        assert len(set(u.tolist())) == len(u)  # no node twice


def all_pairs(net):
    main = np.flatnonzero(net.node_island == net.node_island[0])
    src, dst = np.meshgrid(main, main)
    return src.ravel(), dst.ravel()


def test_shortest_paths_of_every_pair_match_networkx():
    net = ladder()
    src, dst = all_pairs(net)
    check_paths(net, src, dst, shortest_paths(net, src, dst))


def test_a_unique_shortest_path_is_taken_segment_by_segment():
    net = ladder()
    xy = net.node_xy.round(6).tolist()
    a, b = xy.index([0.0, 60.0]), xy.index([300.0, 40.0])
    p = shortest_paths(net, np.array([a, b]), np.array([b, a]))
    g = nx_graph(net)
    # hand: along B, 100 + √(100² + 20²) + 100 = 301.98 m; any way over rail A is at least
    # 100 + 60 (rung R1) + 200 + 40 (rung R3) = 400 m: the way along B is the only shortest
    assert p.trench_m.tolist() == pytest.approx([200 + math.hypot(100, 20)] * 2, abs=1e-9)
    nodes = nx.dijkstra_path(g, a, b, weight="weight")  # networkx
    segs = p.segment[: p.offset[1]]
    ends = np.where(p.forward[: p.offset[1]], net.seg_v[segs], net.seg_u[segs])
    walked = [a, *ends.tolist()]
    assert walked == nodes
    # the way back: the same segments in reverse order, each travelled the other way
    assert p.segment[p.offset[1] :].tolist() == segs[::-1].tolist()
    assert (p.forward[p.offset[1] :] == ~p.forward[: p.offset[1]][::-1]).all()
    assert p.forward.dtype == bool and p.segment.dtype.kind == "i"


@pytest.mark.parametrize(
    ("detour", "detour_m", "local_chunk", "chunk_entries"),
    [
        (0.0, 0.0, 64, 4_000_000),  # every first search falls short: searched again in full
        (0.0, 0.0, 1, 1),  # ... one destination per search, in both passes
        (1.0, 0.0, 2, 20),  # some fall short (bent ways), some do not
        (2.0, 100.0, 3, 4_000_000),
    ],
)
def test_search_radius_and_chunks_never_change_a_route(
    monkeypatch, detour, detour_m, local_chunk, chunk_entries
):
    net = ladder()
    src, dst = all_pairs(net)
    want = shortest_paths(net, src, dst)
    monkeypatch.setattr(routing, "_DETOUR", detour)
    monkeypatch.setattr(routing, "_DETOUR_M", detour_m)
    monkeypatch.setattr(routing, "_LOCAL_CHUNK", local_chunk)
    monkeypatch.setattr(routing, "_CHUNK_ENTRIES", chunk_entries)
    got = shortest_paths(net, src, dst)
    check_paths(net, src, dst, got)
    assert got.offset.tolist() == want.offset.tolist()
    assert got.trench_m.tolist() == pytest.approx(want.trench_m.tolist(), abs=1e-9)


def test_a_pair_on_two_islands_is_refused_in_both_passes(monkeypatch):
    net = ladder()
    z = int(np.argmax(net.node_xy[:, 0]))  # (5100, 0), island Z
    with pytest.raises(ValueError, match="a source cannot reach its destination"):
        shortest_paths(net, np.array([0, 1]), np.array([1, z]))
    monkeypatch.setattr(routing, "_DETOUR_M", 1e9)  # the first search covers everything
    with pytest.raises(ValueError, match="a source cannot reach its destination"):
        shortest_paths(net, np.array([z]), np.array([0]))


def test_search_radius_is_the_farthest_source_doubled_plus_100_m():
    net = ladder()
    xy = net.node_xy.round(6).tolist()
    o, a, b = xy.index([0.0, 0.0]), xy.index([300.0, 0.0]), xy.index([0.0, 60.0])
    # hand: destination o's farthest source is a, 300 m away: 2 × 300 + 100; b's: o, 60 m
    r = routing._search_radius(net, np.array([a, b, o]), np.array([o, o, b]), np.array([0, 0, 1]))
    assert r.tolist() == [700.0, 220.0]
    assert (
        routing._search_radius(net, np.zeros(0, int), np.zeros(0, int), np.zeros(0, int)).size == 0
    )


def test_within_local_and_z_order_helpers():
    assert routing._within(np.array([2, 0, 3])).tolist() == [0, 1, 0, 1, 2]
    sub = np.array([2, 5, 9])
    assert routing._local(sub, np.array([9, 2, 3, 10, 5, 0])).tolist() == [2, 0, -1, -1, 1, -1]
    assert routing._local(np.zeros(0, np.int64), np.array([1, 2])).tolist() == [-1, -1]
    corners = [[0.0, 0.0], [10.0, 20.0], [3.0, 7.0], [10.0, 0.0], [0.0, 20.0]]
    xy = np.array(corners) + np.array([7.0, -3.0])  # off the origin, unlike in each axis

    def morton(q):  # Python: interleave the bits, x in the even ones, y in the odd ones
        code = 0
        for bit in range(16):
            code |= ((int(q[0]) >> bit) & 1) << (2 * bit)
            code |= ((int(q[1]) >> bit) & 1) << (2 * bit + 1)
        return code

    q = np.floor((xy - xy.min(axis=0)) / (xy.max(axis=0) - xy.min(axis=0)) * 65535)
    assert routing._z_order(xy).tolist() == [morton(v) for v in q]
    assert routing._z_order(xy)[[1, 3, 4]].tolist() == [2**32 - 1, 0x55555555, 0xAAAAAAAA]
    # an axis spanning half a metre is spread over the whole 16 bits as well
    thin = np.array([[5.0, 1.0], [5.25, 2.0], [5.5, 3.0]])
    q = np.floor((thin - thin.min(axis=0)) / (thin.max(axis=0) - thin.min(axis=0)) * 65535)
    assert routing._z_order(thin).tolist() == [morton(v) for v in q]
    # all in one point: no span, every code 0
    assert routing._z_order(np.array([[5.0, 5.0], [5.0, 5.0]])).tolist() == [0, 0]


def test_route_lengths_between_features_match_networkx():
    net = ladder(with_equipment=True)
    fn = routing._route_lengths_fn(net)
    g = nx_graph(net)
    node = net.taps.set_index("feature_id")["node"]
    stub = net.taps.set_index("feature_id")["stub_m"]

    def ref(a, b):
        if node[a] < 0 or node[b] < 0 or not nx.has_path(g, node[a], node[b]):
            return math.inf
        return stub[a] + nx.shortest_path_length(g, node[a], node[b], "weight") + stub[b]

    layer = {"R": "rows", "C": "combiners", "I": "inverters"}
    for src, dst in (
        (["R1", "R2"], ["C1"]),  # fewer destination nodes: searched from the destination
        (["R1"], ["C1", "R1", "R2"]),  # fewer source nodes: searched from the source
        (["R2", "R1", "R2"], ["C1", "C2", "I1"]),
    ):
        for dl in sorted({layer[d[0]] for d in dst}):  # one call per destination layer
            ds = [d for d in dst if layer[d[0]] == dl]
            out = fn("rows", src, dl, ds)
            assert out.shape == (len(src), len(ds))
            want = np.array([[ref(s, d) for d in ds] for s in src], dtype=float)  # networkx
            np.testing.assert_allclose(out, want, rtol=0, atol=1e-9)
    # hand: R1 (50, 3) → C1 (150, -2): 3 + 100 + 2 m along rail A
    assert fn("rows", ["R1"], "combiners", ["C1"]).tolist() == [[105.0]]
    # I1 is 2000 m from every trench: not connected, no route to or from it
    assert fn("inverters", ["I1"], "combiners", ["C1"]).tolist() == [[math.inf]]
    assert fn("combiners", ["C2"], "inverters", ["I1"]).tolist() == [[math.inf]]
    # C2 is on island Z: no route to rail A
    assert fn("rows", ["R1"], "combiners", ["C2"]).tolist() == [[math.inf]]
    # C3 joins no trench: its column is inf, the others are measured
    assert fn("rows", ["R1", "R2"], "combiners", ["C3", "C1"]).tolist() == [
        [math.inf, 105.0],
        # hand: R2's 5 m stub to (250, 40) on B, 50 m along B to (300, 40), 40 m down R3,
        # 150 m back along A to C1's tap (150, 0), its 2 m stub
        [math.inf, 5 + 50 + 40 + 150 + 2],
    ]
    assert fn("rows", [], "combiners", ["C1"]).shape == (0, 1)
    assert fn("rows", ["R1"], "combiners", []).shape == (1, 0)


def test_route_parameters_problems_and_their_limits():
    with pytest.raises(ParameterError) as err:
        RouteParams(snap_m=-1.0, node_tol_m=math.inf, termination_m=True, slack_pct="3")
    assert [(p.layer, p.feature_id, p.message) for p in err.value.problems] == [
        ("params", "snap_m", "must be a number >= 0, got -1.0"),
        ("params", "node_tol_m", "must be a number >= 0, got inf"),
        ("params", "termination_m", "must be a number >= 0, got True"),
        ("params", "slack_pct", "must be a number >= 0, got '3'"),
    ]
    # zero is a valid value of each (no slack, no allowance, ...)
    p = RouteParams(snap_m=0, node_tol_m=0, termination_m=0, slack_pct=0, row_run_factor=0)
    assert (p.snap_m, p.node_tol_m, p.termination_m, p.slack_pct, p.row_run_factor) == (0,) * 5


# ---- route_site's tables on a small hand-built site ----------------------------------------
#
#   R1 (x = 10, y 3 → 30)          C2 (102, 40)
#      │                          │ T2 (100,0) → (100,20) → (100,50)
#  T1 ●───────────●───────────────●──────────────────────●──● (200, 0)
#   (0,0)  (10,0)    C1 (60,-2)  (100,0)        I1 (190, 2)   G1 (200, -3)
#
# hand: circuits R1/S1, R1/S2 (R1 → C1), SA:C1 (C1 → C2: a combiner feeding a combiner),
# A:C2 (C2 → I1), AC:I1 (I1 → G1). T1 is cut at 10, 60, 100 and 190; T2 at 40 (C2's tap).


@pytest.fixture
def small_site(make_site):
    return make_site(
        rows=[{"id": "R1", "strings": 2, "to": "C1", "geometry": line((10, 3), (10, 30))}],
        combiners=[
            {"id": "C1", "to": "C2", "geometry": pt(60, -2)},
            {"id": "C2", "to": "I1", "geometry": pt(102, 40)},
        ],
        inverters=[{"id": "I1", "to": "G1", "geometry": pt(190, 2)}],
        trenches=[
            {"id": "T1", "geometry": line((0, 0), (200, 0)), "max_circuits": 2},
            {"id": "T2", "geometry": line((100, 0), (100, 20), (100, 50)), "max_circuits": 1},
        ],
        grid=[{"id": "G1", "geometry": pt(200, -3)}],
    )


def test_segment_table_counts_every_kind(small_site):
    plan = routing.route_site(small_site)
    s = plan.segments
    assert list(s.columns) == [
        "segment_id",
        "trench_id",
        "length_m",
        "circuits",
        "strings",
        "arrays",
        "ac",
        "subarrays",
        "circuit_ids",
        "depth_m",
        "laying",
        "spacing_m",
        "soil_k_m_w",
        "max_circuits",
        "max_cable_sets",
        "fill",
        "over_capacity",
        "node_u",
        "node_v",
        "start_m",
        "end_m",
        "trench_index",
        "geometry",
    ]
    assert s.crs == small_site.crs
    assert s["trench_id"].tolist() == ["T1"] * 5 + ["T2"] * 2
    assert s["start_m"].tolist() == [0, 10, 60, 100, 190, 0, 40]
    assert s["length_m"].tolist() == [10, 50, 40, 90, 10, 40, 10]  # hand
    # hand: which circuits use which stretch
    assert s["circuits"].tolist() == [0, 2, 1, 1, 1, 2, 0]
    assert s["strings"].tolist() == [0, 2, 0, 0, 0, 0, 0]
    assert s["subarrays"].tolist() == [0, 0, 1, 0, 0, 1, 0]
    assert s["arrays"].tolist() == [0, 0, 0, 1, 0, 1, 0]
    assert s["ac"].tolist() == [0, 0, 0, 0, 1, 0, 0]
    for col in ("circuits", "strings", "subarrays", "arrays", "ac"):
        assert s[col].dtype == np.int64, col
    assert s["circuit_ids"].tolist() == [
        "",
        "R1/S1;R1/S2",
        "SA:C1",
        "A:C2",
        "AC:I1",
        "A:C2;SA:C1",
        "",
    ]
    # hand: circuits / max_circuits; T2's first stretch carries 2 circuits for 1 allowed
    assert s["fill"].tolist() == [0.0, 1.0, 0.5, 0.5, 0.5, 2.0, 0.0]
    assert s["over_capacity"].tolist() == [False] * 5 + [True, False]
    assert s["max_circuits"].tolist() == [2.0] * 5 + [1.0] * 2


def test_circuit_table_of_a_small_site(small_site):
    plan = routing.route_site(small_site)
    c = plan.circuits.set_index("circuit_id")
    assert sorted(c.index) == ["A:C2", "AC:I1", "R1/S1", "R1/S2", "SA:C1"]
    assert c.crs == small_site.crs
    order = ["R1/S1", "R1/S2", "SA:C1", "A:C2", "AC:I1"]
    c = c.loc[order]
    # hand: trench 50, 40 + 40, 40 + 90, 10 m; stubs 3 + 2, 2 + 2, 2 + 2, 2 + 3 m
    assert c["trench_m"].tolist() == [50, 50, 80, 130, 10]
    assert c["stub_m"].tolist() == [5, 5, 4, 4, 5]
    assert c["route_m"].tolist() == [55, 55, 84, 134, 15]
    assert c["row_run_m"].tolist() == [13.5, 13.5, 0, 0, 0]  # hand: half of R1's 27 m
    assert c["n_segments"].tolist() == [1, 1, 2, 2, 1]
    assert c["group_max"].tolist() == [2, 2, 2, 2, 1]
    assert c["group_max"].dtype == np.int64 and c["n_segments"].dtype.kind == "i"
    seg = plan.segments.set_index("segment_id")
    trench_start = [
        [(seg.loc[i, "trench_id"], seg.loc[i, "start_m"]) for i in ids.split(";")]
        for ids in c["segment_ids"]
    ]
    assert trench_start == [
        [("T1", 10.0)],
        [("T1", 10.0)],
        [("T1", 60.0), ("T2", 0.0)],
        [("T2", 0.0), ("T1", 100.0)],
        [("T1", 190.0)],
    ]
    # hand: each route from the source feature to the destination, through every vertex
    assert [shapely.get_coordinates(g).tolist() for g in c.geometry] == [
        [[10, 3], [10, 0], [60, 0], [60, -2]],
        [[10, 3], [10, 0], [60, 0], [60, -2]],
        [[60, -2], [60, 0], [100, 0], [100, 20], [100, 40], [102, 40]],
        [[102, 40], [100, 40], [100, 20], [100, 0], [190, 0], [190, 2]],
        [[190, 2], [190, 0], [200, 0], [200, -3]],
    ]


def test_a_route_between_features_on_one_node_is_its_two_stubs(make_site):
    # hand: R9's nearest point (20, 2) and C9 (20, -1) both tap T at (20, 0)
    site = make_site(
        rows=[{"id": "R9", "strings": 1, "to": "C9", "geometry": line((20, 2), (20, 20))}],
        combiners=[{"id": "C9", "to": "I9", "geometry": pt(20, -1)}],
        inverters=[{"id": "I9", "to": "G9", "geometry": pt(50, 1)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (50, 0))}],
        grid=[{"id": "G9", "geometry": pt(0, -1)}],
    )
    c = routing.route_site(site).circuits.set_index("circuit_id")
    assert shapely.get_coordinates(c.loc["R9/S1", "geometry"]).tolist() == [
        [20, 2],
        [20, 0],
        [20, -1],
    ]
    assert c.loc["R9/S1", "n_segments"] == 0 and c.loc["R9/S1", "group_max"] == 0
    assert c.loc["R9/S1", "segment_ids"] == "" and c.loc["R9/S1", "route_m"] == 3.0


def test_island_names_its_first_six_trenches():
    six = gpd.GeoDataFrame(
        {"id": [f"T{i}" for i in range(1, 8)]},
        geometry=[line((0, 0), (100, 0))] + [line((10 * i, 0), (10 * i, 5)) for i in range(1, 7)],
        crs=UTM,
    )
    assert routing._island(build_network(six.iloc[:6]), 0) == "[T1, T2, T3, T4, T5, T6]"
    assert routing._island(build_network(six), 0) == "[T1, T2, T3, T4, T5, T6 and 1 more]"
    assert routing._island(build_network(six), 0, most=2) == "[T1, T2 and 5 more]"


def test_a_feature_on_a_trench_shorter_than_the_tolerance_joins_no_island(make_site):
    # hand: T2 is 5 cm long, below node_tol_m (0.1 m): its two ends are one node and the
    # piece between them is dropped, so C1's node has no segment at all
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "C1", "geometry": line((10, 3), (10, 30))}],
        combiners=[{"id": "C1", "to": "I1", "geometry": pt(300, 2)}],
        inverters=[{"id": "I1", "geometry": pt(50, 2)}],
        trenches=[
            {"id": "T1", "geometry": line((0, 0), (100, 0))},
            {"id": "T2", "geometry": line((300, 0), (300.05, 0))},
        ],
    )
    found = [str(p) for p in routing.check_network(site)]
    assert found == [
        "rows 'R1': R1/S1 cannot reach combiner 'C1': 'R1' joins the trench island [T1], "
        "'C1' joins of no trench",
        "combiners 'C1': A:C1 cannot reach inverter 'I1': 'C1' joins the trench island of no "
        "trench, 'I1' joins [T1]",
    ]


def test_check_network_uses_the_given_snap_for_far_parts(make_site):
    # hand: trench A's two parts are 40 m apart: one corridor when snap_m is 45 m
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((20, 2), (20, 10))}],
        inverters=[{"id": "INV1", "geometry": pt(10, -1)}],
        trenches=[
            {
                "id": "A",
                "geometry": shapely.MultiLineString([[(0, 0), (100, 0)], [(140, 0), (200, 0)]]),
            }
        ],
    )
    assert routing.check_network(site, RouteParams(snap_m=45.0)) == []
    assert [p.feature_id for p in routing.check_network(site)] == ["A"]


def test_layer_offsets_of_each_feature():
    offset = {"rows": 0, "combiners": 5, "inverters": 7, "grid": 9}
    layers = np.array(["combiners", "rows", "grid", "combiners"], dtype=object)
    got = routing._layer_offset(layers, offset)
    assert got.tolist() == [5, 0, 9, 5] and got.dtype == np.int64
    none = routing._layer_offset(np.zeros(0, dtype=object), offset)
    assert none.tolist() == [] and none.dtype == np.int64


def test_grouped_problems_name_how_many_and_the_first_five():
    def p(fid, msg="has no 'to' and no inverter joins the network"):
        return (NotConnectedError, Problem("combiners", fid, msg))

    out = routing._grouped(
        [p("C1", "alone"), *(p(f"C{i}") for i in range(2, 4)), p("R1", "other")]
        + [(RoutingError, Problem("rows", f"R{i}", "far")) for i in range(1, 6)]
        + [(RoutingError, Problem("inverters", f"I{i}", "far")) for i in range(1, 8)]
    )
    assert [(cls, str(q)) for cls, q in out] == [
        (NotConnectedError, "combiners 'C1': alone"),
        (
            NotConnectedError,
            "combiners: has no 'to' and no inverter joins the network (2 combiners: C2, C3)",
        ),
        (NotConnectedError, "combiners 'R1': other"),
        (RoutingError, "rows: far (5 rows: R1, R2, R3, R4, R5)"),
        (RoutingError, "inverters: far (7 inverters: I1, I2, I3, I4, I5 and 2 more)"),
    ]


def test_a_shortest_path_that_leaves_the_first_search_box_is_still_taken(monkeypatch):
    """D (0, 0) and S (10, 0): way A goes up to y = 12 and back (12 + 10 + 12 = 34 m), split
    at (5, 12); way B stays near the axis but runs round (10 + 10 + 30 + 10 + 10 = 70 m).
    With the first radius the straight distance (10 m), D's first search covers the box
    ±11 m round D, which leaves A's middle node out: S is not within 10 m, so D is searched
    again in full (shortest_paths' Notes), and A is found."""
    tr = gpd.GeoDataFrame(
        {"id": ["A1", "A2", "B"]},
        geometry=[
            line((0, 0), (0, 12), (5, 12)),
            line((5, 12), (10, 12), (10, 0)),
            line((0, 0), (-10, 0), (-10, -10), (20, -10), (20, 0), (10, 0)),
        ],
        crs=UTM,
    )
    net = build_network(tr)
    xy = net.node_xy.round(6).tolist()
    d, s = xy.index([0.0, 0.0]), xy.index([10.0, 0.0])
    monkeypatch.setattr(routing, "_DETOUR", 1.0)
    monkeypatch.setattr(routing, "_DETOUR_M", 0.0)
    p = shortest_paths(net, np.array([s]), np.array([d]))
    assert p.trench_m.tolist() == [34.0]  # networkx agrees (check_paths)
    check_paths(net, np.array([s]), np.array([d]), p)
