"""routeplan.routing's public functions on their own, and its searches in the cases the other
routing tests do not reach: no pair, one pair, a pair on two islands; searches in chunks;
local searches whose part of the network leaves out lower-numbered nodes; the parameters'
messages; the geometry-only checks with their parameters; the assignment report; the
incidence frame; the island named in a message when it holds many trenches.

Reference beside each check: "networkx" (shortest path lengths on the same segments),
"hand" (worked out from the invented coordinates), "README" or a docstring for messages.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import shapely
import shapely.affinity
from hypothesis import HealthCheck, given, settings

from layers.errors import Problem
from routeplan import routing
from routeplan.errors import ParameterError, UnreachableError
from routeplan.network import TrenchDefaults
from routeplan.routing import (
    RouteParams,
    assignment_check,
    check_network,
    geometry_problems,
    route_site,
    shortest_paths,
)

from .test_routing import grid_sites


def line(*xy):
    return shapely.LineString(xy)


def pt(x, y):
    return shapely.Point(x, y)


def networkx_length(net, a: int, b: int) -> float:
    g = nx.MultiGraph()
    g.add_weighted_edges_from(
        zip(net.seg_u.tolist(), net.seg_v.tolist(), net.seg_length_m.tolist(), strict=True)
    )
    return 0.0 if a == b else nx.shortest_path_length(g, a, b, weight="weight")


# ---- two clusters 5 km apart: local searches leave the first cluster's nodes out -------------


@pytest.fixture
def two_clusters(make_site):
    """Cluster W (trenches W1, W2; listed first, so its nodes are numbered first) around
    (0, 0), and cluster E around (5000, 0): each a T of trenches with a row, a combiner, an
    inverter and a grid point. Each cluster is an island of its own; a search from a
    destination in E covers E's part of the network only (the first radius is 2 × the
    straight distance + 100 m), whose nodes are not numbered from 0."""
    rows, combiners, inverters, trenches, grid = [], [], [], [], []
    for name, x0 in (("W", 0.0), ("E", 5000.0)):
        trenches += [
            {"id": f"{name}1", "geometry": line((x0, 0), (x0 + 200, 0))},
            {"id": f"{name}2", "geometry": line((x0 + 100, 0), (x0 + 100, 120))},
        ]
        rows += [
            {
                "id": f"{name}R{k}",
                "strings": 2,
                "geometry": line((x0 + 102, 20.0 + 30 * k), (x0 + 140, 20.0 + 30 * k)),
            }
            for k in range(3)
        ]
        combiners.append({"id": f"{name}CB", "geometry": pt(x0 + 30, -2)})
        inverters.append({"id": f"{name}INV", "geometry": pt(x0 + 180, -2)})
        grid.append({"id": f"{name}G", "geometry": pt(x0 + 200, 3)})
    return make_site(
        rows=rows, combiners=combiners, inverters=inverters, trenches=trenches, grid=grid
    )


def assert_routes_agree_with_networkx(plan) -> None:
    net, c = plan.network, plan.circuits
    node = net.taps.set_index(["layer", "feature_id"])["node"]
    for row in c.itertuples():
        a, b = node[(row.from_layer, row.from_id)], node[(row.to_layer, row.to_id)]
        assert row.trench_m == pytest.approx(networkx_length(net, a, b), abs=1e-9), row
    # shapely: each route's geometry is as long as its route_m
    np.testing.assert_allclose(shapely.length(c.geometry.values), c["route_m"], atol=1e-9)


def test_local_searches_of_a_far_cluster_agree_with_networkx(two_clusters):
    plan = route_site(two_clusters)
    net = plan.network
    east = net.node_xy[:, 0] > 2500
    assert east.any() and not east[0]  # E's nodes are not the first ones
    assert_routes_agree_with_networkx(plan)
    c = plan.circuits.set_index("circuit_id")
    # hand: ER0 taps E2 at (5100, 20); ECB taps E1 at (5030, 0): 20 + 70 m of trench
    assert c.loc["ER0/S1", "trench_m"] == pytest.approx(90.0, abs=1e-9)
    assert c.loc["ER0/S1", "to_id"] == "ECB" and c.loc["WR0/S1", "to_id"] == "WCB"


def test_searches_in_chunks_give_the_same_routes(two_clusters, monkeypatch):
    """One destination per search call (the memory bound at its smallest), every first
    search missed (radius 0): the full searches, chunked, give the same routes."""
    before = route_site(two_clusters)
    monkeypatch.setattr(routing, "_CHUNK_ENTRIES", 1)
    monkeypatch.setattr(routing, "_DETOUR", 0.0)
    monkeypatch.setattr(routing, "_DETOUR_M", 0.0)
    after = route_site(two_clusters)
    assert_routes_agree_with_networkx(after)
    for col in ("to_id", "route_m", "segment_ids", "group_max"):
        assert before.circuits[col].tolist() == after.circuits[col].tolist()
    assert before.segments["circuits"].tolist() == after.segments["circuits"].tolist()


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(grid_sites())
def test_routes_on_sites_larger_than_the_first_radius_agree_with_networkx(make_site, drawn):
    """test_routing's random grid sites, stretched 30 times (trench spacing 300 m): the first
    search of a destination covers a part of the network only (2 × the straight distance to
    its farthest source + 100 m), yet every route is the shortest (networkx)."""
    trenches, rows, combiners = drawn

    def big(features):
        return [
            dict(f, geometry=shapely.affinity.scale(f["geometry"], 30, 30, origin=(0, 0)))
            for f in features
        ]

    site = make_site(
        rows=big(rows),
        combiners=big(combiners),
        inverters=big([{"id": "INV", "geometry": pt(-1, -5)}]),
        trenches=big(trenches),
    )
    assert_routes_agree_with_networkx(route_site(site, RouteParams(snap_m=100_000.0)))


# ---- shortest_paths on its own ------------------------------------------------------------------


def test_shortest_paths_of_no_pair(two_clusters):
    net = route_site(two_clusters).network
    p = shortest_paths(net, np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64))
    assert p.offset.tolist() == [0] and p.offset.dtype.kind == "i"  # (n_pairs + 1,) ints
    assert len(p.segment) == 0 and p.segment.dtype.kind == "i"
    assert len(p.forward) == 0 and p.forward.dtype == bool
    assert len(p.trench_m) == 0 and len(p.pair) == 0


def test_shortest_paths_of_one_pair(two_clusters):
    net = route_site(two_clusters).network
    west = np.flatnonzero(net.node_xy[:, 0] < 2500)
    a, b = int(west[0]), int(west[-1])
    p = shortest_paths(net, np.array([a]), np.array([b]))
    assert p.offset[0] == 0 and p.offset[1] == len(p.segment) > 0
    assert p.trench_m[0] == pytest.approx(networkx_length(net, a, b), abs=1e-9)  # networkx
    assert p.trench_m[0] == pytest.approx(net.seg_length_m[p.segment].sum(), abs=1e-9)
    # the segments run from a to b, each entered where the last one ended
    u = np.where(p.forward, net.seg_u[p.segment], net.seg_v[p.segment])
    v = np.where(p.forward, net.seg_v[p.segment], net.seg_u[p.segment])
    assert u[0] == a and v[-1] == b and (u[1:] == v[:-1]).all()


def test_shortest_paths_of_a_pair_on_two_islands(two_clusters):
    net = route_site(two_clusters).network
    west = int(np.flatnonzero(net.node_xy[:, 0] < 2500)[0])
    east = int(np.flatnonzero(net.node_xy[:, 0] > 2500)[0])
    with pytest.raises(ValueError, match=r"^a source cannot reach its destination$"):
        shortest_paths(net, np.array([west]), np.array([east]))


# ---- parameters ---------------------------------------------------------------------------------

VALID = "snap_m, node_tol_m, termination_m, slack_pct, row_run_factor, trench"
VALID_TRENCH = "depth_m, laying, spacing_m, soil_k_m_w, max_circuits"


def test_unknown_parameters_name_the_valid_ones():
    # the fields of RouteParams and TrenchDefaults, as their docstrings list them
    with pytest.raises(ParameterError) as err:
        RouteParams.from_mapping({"snap": 3, "trench": {"depth": 1.0, "laying": "duct"}})
    assert err.value.problems == [
        Problem("params", "snap", f"unknown; valid: {VALID}"),
        Problem("params", "trench.depth", f"unknown; valid: {VALID_TRENCH}"),
    ]
    p = RouteParams.from_mapping({"slack_pct": 5.0, "trench": {"laying": "duct"}})
    assert p == RouteParams(slack_pct=5.0, trench=TrenchDefaults(laying="duct"))


# ---- the checks that need geometry alone, with their parameters ------------------------------


def test_geometry_problems_of_a_site_without_trenches(make_site):
    site = make_site(inverters=[{"id": "INV1", "geometry": pt(0, 0)}], validate=False)
    assert geometry_problems(site) == []  # its layers' own problems say why


def test_geometry_problems_with_default_and_given_parameters(make_site):
    """One trench A (0,0) → (100,0); CB1 40 m below it; INV1 beside it. Trench B runs along
    A from x = 90 for 8 m, 0.5 m beside it, then leaves at right angles."""
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((20, 2), (20, 10))}],
        combiners=[{"id": "CB1", "geometry": pt(50, -40)}],
        inverters=[{"id": "INV1", "geometry": pt(10, -1)}],
        trenches=[{"id": "A", "geometry": line((0, 0), (100, 0))}],
    )
    far = Problem("combiners", "CB1", "nearest trench 'A' is 40.00 m away, more than snap_m 30 m")
    assert geometry_problems(site) == [far]  # the defaults: snap_m 30 m
    assert geometry_problems(site, RouteParams(snap_m=45.0)) == []
    assert check_network(site, RouteParams(snap_m=45.0)) == []

    two = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((20, 2), (20, 10))}],
        inverters=[{"id": "INV1", "geometry": pt(10, -1)}],
        trenches=[
            {"id": "A", "geometry": line((0, 0), (100, 0))},
            {"id": "B", "geometry": line((90, 0.5), (98, 0.5), (98, 30))},
        ],
    )
    # the shortest shared length reported is max(1 m, 10 × node_tol_m) (network.overlap_min_m)
    assert geometry_problems(two, RouteParams(node_tol_m=0.1)) == []  # 0.5 m apart: apart
    overlaps = geometry_problems(two, RouteParams(node_tol_m=0.6))  # 8 m along, over 6 m
    assert [(p.layer, p.feature_id) for p in overlaps] == [("trenches", "A")]
    assert geometry_problems(two, RouteParams(node_tol_m=1.0)) == []  # 8 m, under 10 m


def test_far_parts_use_the_given_snap(make_site):
    """Trench A has two parts 40 m apart: one corridor when snap_m is 45 m, not at 30 m."""
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
    assert [p.feature_id for p in geometry_problems(site)] == ["A"]
    assert geometry_problems(site, RouteParams(snap_m=45.0)) == []


def test_a_trench_shorter_than_the_tolerance_is_no_trench(make_site):
    # its two ends join into one node at node_tol_m 1 m: nothing is left to route on
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((0.2, 2), (0.2, 10))}],
        inverters=[{"id": "INV1", "geometry": pt(0.4, -1)}],
        trenches=[{"id": "A", "geometry": line((0, 0), (0.8, 0))}],
    )
    assert geometry_problems(site, RouteParams(node_tol_m=0.1)) == []
    assert geometry_problems(site, RouteParams(node_tol_m=1.0)) == [
        Problem("trenches", None, "no trench to route on")
    ]


# ---- the assignment report, the incidence frame, a large island in a message -----------------


def test_assignment_check_reports_every_destination(two_clusters):
    # no `to` anywhere: two candidates of each kind, the nearest by route is the one on the
    # feature's own island (the other cluster's cannot be reached)
    RULE = "nearest"  # noqa: N806
    problems, report = assignment_check(two_clusters)
    assert problems == []
    got = report[["layer", "feature_id", "to_id", "rule"]].values.tolist()
    assert got == [
        ["rows", "WR0", "WCB", RULE],
        ["rows", "WR1", "WCB", RULE],
        ["rows", "WR2", "WCB", RULE],
        ["rows", "ER0", "ECB", RULE],
        ["rows", "ER1", "ECB", RULE],
        ["rows", "ER2", "ECB", RULE],
        ["combiners", "WCB", "WINV", RULE],
        ["combiners", "ECB", "EINV", RULE],
        ["inverters", "WINV", "WG", RULE],
        ["inverters", "EINV", "EG", RULE],
    ]


def test_incidence_frame_has_the_documented_columns(two_clusters):
    plan = route_site(two_clusters)
    f = plan.incidence_frame()
    assert list(f.columns) == [
        "circuit",
        "segment",
        "circuit_id",
        "segment_id",
        "length_m",
        "circuits",
        "depth_m",
        "laying",
        "spacing_m",
        "soil_k_m_w",
        "max_circuits",
        "max_cable_sets",
    ]
    # one row per segment of each route, by circuit, in route order
    c = plan.circuits
    assert f["circuit"].tolist() == np.repeat(np.arange(len(c)), c["n_segments"]).tolist()
    per_circuit = f.groupby("circuit")["segment_id"].agg(";".join)
    has = c["n_segments"].to_numpy() > 0
    assert per_circuit.tolist() == c.loc[has, "segment_ids"].tolist()
    assert (f["circuit_id"] == c["circuit_id"].to_numpy()[f["circuit"]]).all()
    s = plan.segments
    assert (f["circuits"] == s["circuits"].to_numpy()[f["segment"]]).all()


def test_an_island_of_many_trenches_is_named_by_its_first_six(make_site):
    """Island X: a comb of 8 trenches X1…X8 (the row's); island Y: trench Y1 (the
    combiner's). The message names six of X's trenches and counts the rest."""
    teeth = [{"id": f"X{k}", "geometry": line((10.0 * k, 0), (10.0 * k, 20))} for k in range(2, 9)]
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": line((12, 30), (18, 30))}],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(500, -1)}],
        inverters=[{"id": "INV1", "geometry": pt(560, -1)}],
        trenches=[
            {"id": "X1", "geometry": line((0, 20), (100, 20))},
            *teeth,
            {"id": "Y1", "geometry": line((480, 0), (600, 0))},
        ],
    )
    with pytest.raises(UnreachableError) as err:
        route_site(site)
    assert [str(p) for p in err.value.problems] == [
        "rows 'R1': R1/S1 cannot reach combiner 'CB1': 'R1' joins the trench island "
        "[X1, X2, X3, X4, X5, X6 and 2 more], 'CB1' joins [Y1]"
    ]


# ---- the stretches in air and the route geometry ------------------------------------------------


def test_stretches_in_air_and_who_runs_along_them(make_site):
    """Trench T (0,0) → (100,0). Rows at right angles above it: R1 (x = 20, y 3 → 23, 2
    strings), R2 (x = 60, y 0.5 → 10.5), R3 (x = 80, touching, 1.6 m long); CB1 on the trench
    at x = 40, INV1 2 m below it at x = 90, the grid point G 4 m above its end. Hand: stubs
    3, 0.5, 0, 0, 2, 4 m; row runs half a row (README): 10, 5, 0.8 m. A stretch of zero
    length carries nothing in air."""
    site = make_site(
        rows=[
            {"id": "R1", "strings": 2, "to": "CB1", "geometry": line((20, 3), (20, 23))},
            {"id": "R2", "strings": 1, "to": "CB1", "geometry": line((60, 0.5), (60, 10.5))},
            {"id": "R3", "strings": 1, "to": "CB1", "geometry": line((80, 0), (80, 1.6))},
        ],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(40, 0)}],
        inverters=[{"id": "INV1", "to": "G", "geometry": pt(90, -2)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
        grid=[{"id": "G", "geometry": pt(100, 4)}],
    )
    plan = route_site(site)
    air = plan.air
    assert list(air.columns) == ["stretch_id", "kind", "layer", "feature_id", "length_m"]
    assert air[["stretch_id", "kind", "layer", "feature_id"]].values.tolist() == [
        ["stub R1", "stub", "rows", "R1"],
        ["stub R2", "stub", "rows", "R2"],
        ["stub R3", "stub", "rows", "R3"],
        ["stub CB1", "stub", "combiners", "CB1"],
        ["stub INV1", "stub", "inverters", "INV1"],
        ["stub G", "stub", "grid", "G"],
        ["row run R1", "row run", "rows", "R1"],
        ["row run R2", "row run", "rows", "R2"],
        ["row run R3", "row run", "rows", "R3"],
    ]
    np.testing.assert_allclose(air["length_m"], [3, 0.5, 0, 0, 2, 4, 10, 5, 0.8], atol=1e-9)
    cid = plan.circuits["circuit_id"].tolist()
    assert cid == ["R1/S1", "R1/S2", "R2/S1", "R3/S1", "A:CB1", "AC:INV1"]
    c, k = plan.air_incidence_circuit, plan.air_incidence_stretch
    assert c.dtype.kind == k.dtype.kind == "i" and c.ndim == k.ndim == 1
    assert list(zip(c.tolist(), k.tolist(), strict=True)) == [
        (0, 0), (0, 6),  # R1's strings: its stub and its row run
        (1, 0), (1, 6),
        (2, 1), (2, 7),  # R2/S1: a stub of half a metre counts
        (3, 8),  # R3/S1: no stub, a row run of 0.8 m
        (4, 4),  # A:CB1: CB1 stands on the trench; INV1's stub
        (5, 4), (5, 5),  # AC:INV1: INV1's stub and G's
    ]  # fmt: skip


def test_a_route_against_the_drawing_direction_of_a_bent_trench(make_site):
    """Trench U is drawn (100,0) → (100,50) → (0,50) → (0,0). R1 (x = 0, y -3 → -20) taps
    its end (0,0) by 3 m; CB1 (102, 0) taps its start by 2 m: the string runs along U
    backwards, through both bends."""
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": line((0, -3), (0, -20))}],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(102, 0)}],
        inverters=[{"id": "INV1", "geometry": pt(102, 50)}],
        trenches=[{"id": "U", "geometry": line((100, 0), (100, 50), (0, 50), (0, 0))}],
    )
    c = route_site(site).circuits.set_index("circuit_id")
    coords = shapely.get_coordinates(c.loc["R1/S1", "geometry"]).tolist()
    assert coords == [[0, -3], [0, 0], [0, 50], [100, 50], [100, 0], [102, 0]]  # hand
    assert c.loc["R1/S1", "route_m"] == pytest.approx(3 + 200 + 2, abs=1e-9)  # 50 + 100 + 50


# ---- route_site's parameters, memo, timings and messages ----------------------------------------


@pytest.fixture
def small(make_site):
    """Trench T (0,0) → (100,0) (no attributes); R1 (x = 10, y 3 → 20) and R2 (x = 30) to CB1
    (40, -1), CB1 to INV1 (80, -2), INV1 to the grid point G (100, 3)."""
    return make_site(
        rows=[
            {"id": "R1", "strings": 2, "to": "CB1", "geometry": line((10, 3), (10, 20))},
            {"id": "R2", "strings": 1, "to": "CB1", "geometry": line((30, 3), (30, 20))},
        ],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(40, -1)}],
        inverters=[{"id": "INV1", "to": "G", "geometry": pt(80, -2)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
        grid=[{"id": "G", "geometry": pt(100, 3)}],
    )


def test_route_site_keeps_its_parameters_and_their_trench_defaults(small):
    params = RouteParams(trench=TrenchDefaults(depth_m=1.1, laying="duct", max_circuits=4))
    plan = route_site(small, params)
    assert plan.params is params
    s = plan.segments
    assert set(s["depth_m"]) == {1.1} and set(s["laying"]) == {"duct"}
    assert set(s["max_circuits"]) == {4.0}


def test_a_memo_of_the_same_trenches_is_taken(small):
    first = route_site(small)
    again = route_site(small, memo=first.network.memo)
    # the noding of the unchanged trenches is the memo's own (NetworkMemo docstring)
    assert again.network.memo.noded is first.network.memo.noded
    assert again.circuits["route_m"].tolist() == first.circuits["route_m"].tolist()


class Clock:
    """A stand-in for time.perf_counter that advances one second per reading."""

    def __init__(self) -> None:
        self.now = 0.0

    def perf_counter(self) -> float:
        self.now += 1.0
        return self.now


def test_each_step_is_timed_once(small, monkeypatch):
    # bench/run.py reads these steps as route.<step>; each one is the time between two
    # readings of the clock around it (one second of the stand-in clock)
    monkeypatch.setattr(routing, "time", Clock())
    plan = route_site(small)
    assert plan.timings_s == {
        "trench_check": 1.0,
        "network": 1.0,
        "assign": 1.0,
        "search": 1.0,
        "tables": 1.0,
    }


def test_a_site_not_in_metres_is_refused_before_anything_else(make_site):
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "INV1", "geometry": line((10, 3), (10, 20))}],
        inverters=[{"id": "INV1", "geometry": pt(50, -2)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
        crs="EPSG:4326",
        validate=False,
    )
    with pytest.raises(routing.RoutingError) as err:
        route_site(site)
    assert [p.layer for p in err.value.problems] == ["site"]
    assert "is not projected in metres" in err.value.problems[0].message


def test_route_site_checks_with_its_own_tolerance(make_site):
    """The overlap of test_geometry_problems_with_default_and_given_parameters, and a trench
    shorter than the tolerance, found by route_site's own checks with the given node_tol_m."""
    two = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "INV1", "geometry": line((20, 2), (20, 10))}],
        inverters=[{"id": "INV1", "geometry": pt(10, -1)}],
        trenches=[
            {"id": "A", "geometry": line((0, 0), (100, 0))},
            {"id": "B", "geometry": line((90, 0.5), (98, 0.5), (98, 30))},
        ],
    )
    route_site(two, RouteParams(node_tol_m=0.1))  # 0.5 m apart: two corridors
    with pytest.raises(routing.RoutingError) as err:
        route_site(two, RouteParams(node_tol_m=0.6))
    assert [(p.layer, p.feature_id) for p in err.value.problems] == [("trenches", "A")]
    short = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "INV1", "geometry": line((0.2, 2), (0.2, 10))}],
        inverters=[{"id": "INV1", "geometry": pt(0.4, -1)}],
        trenches=[{"id": "A", "geometry": line((0, 0), (0.8, 0))}],
    )
    problems = check_network(short, RouteParams(node_tol_m=1.0))
    assert Problem("trenches", None, "no trench to route on") in problems


def test_one_circuit_alone(make_site):
    # one row of one string straight to an inverter that feeds no grid point: one circuit
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "INV1", "geometry": line((10, 3), (10, 20))}],
        inverters=[{"id": "INV1", "geometry": pt(50, -2)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
    )
    c = route_site(site).circuits
    assert c["circuit_id"].tolist() == ["R1/S1"]
    assert c["route_m"].tolist() == [pytest.approx(3 + 40 + 2, abs=1e-9)]  # hand


def test_nearest_by_route_skips_a_combiner_off_the_network(make_site):
    """R1 has no `to`; CB1 is 40 m below the trench (not joined), CB2 and CB3 on it: R1 goes
    to the nearer of the joined ones by route, and the far one is the only problem."""
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((10, 3), (10, 20))}],
        combiners=[
            {"id": "CB1", "to": "INV1", "geometry": pt(12, -40)},
            {"id": "CB2", "to": "INV1", "geometry": pt(60, -1)},
            {"id": "CB3", "to": "INV1", "geometry": pt(30, -1)},
        ],
        inverters=[{"id": "INV1", "geometry": pt(90, -2)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
    )
    problems, report = assignment_check(site)
    assert [(p.layer, p.feature_id) for p in problems] == [("combiners", "CB1")]
    row = report[report["feature_id"] == "R1"].iloc[0]
    assert (row["to_id"], row["route_m"]) == ("CB3", pytest.approx(3 + 20 + 1, abs=1e-9))


def test_features_with_the_same_fault_are_one_line(make_site):
    """Seven combiners without `to` and the only inverter 40 m off the network: one line
    names how many and the first five; the inverter's own problem is a line of its own."""
    combiners = [{"id": f"CB{k}", "geometry": pt(10.0 * k, -1)} for k in range(1, 8)]
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": line((5, 3), (5, 20))}],
        combiners=combiners,
        inverters=[{"id": "INV1", "geometry": pt(50, -40)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
    )
    assert [str(p) for p in check_network(site)] == [
        "inverters 'INV1': nearest trench 'T' is 40.00 m away, more than snap_m 30 m",
        "combiners: no `to`, and no inverter is reachable through the trenches "
        "(7 combiners: CB1, CB2, CB3, CB4, CB5 and 2 more)",
    ]


def test_row_length_of_multipolygons_and_degenerate_rows():
    # shapely.oriented_envelope: a MultiPolygon's long side; a flat polygon's envelope is a line
    two = shapely.MultiPolygon([shapely.box(0, 0, 30, 4), shapely.box(40, 0, 60, 4)])
    flat = shapely.Polygon([(0, 0), (25, 0), (10, 0)])
    lengths = routing.row_length_m(np.array([two, flat, line((0, 0), (3, 4))], dtype=object))
    np.testing.assert_allclose(lengths, [60.0, 25.0, 5.0], atol=1e-9)  # hand


def test_segment_between_refuses_a_pair_no_segment_joins(small):
    net = route_site(small).network
    u, v = net.seg_u, net.seg_v
    k = int(np.argmax(net.seg_length_m))
    assert net.segment_between(np.array([v[k]]), np.array([u[k]])).tolist() == [k]
    last = net.n_nodes - 1
    for a, b in ((u[0], v[-1]), (last, last)):  # not joined; above every joined pair
        if a == b or not np.any(((u == a) & (v == b)) | ((u == b) & (v == a))):
            with pytest.raises(ValueError, match=r"^a node pair is not joined by any segment$"):
                net.segment_between(np.array([a]), np.array([b]))


# ---- circuits whose ends lie on separate islands -----------------------------------------------


def unreachable(site) -> list[str]:
    with pytest.raises(UnreachableError) as err:
        route_site(site)
    return [str(p) for p in err.value.problems]


def test_an_unreachable_end_at_the_networks_first_node(make_site):
    """Trench A (0,0) → (100,0) is listed first, so its first end is node 0; trench B
    (0,50) → (100,50) is an island of its own. R1 touches A's first end (its tap is node 0)
    and goes to CB1 on B; then the other way round."""
    trenches = [
        {"id": "A", "geometry": line((0, 0), (100, 0))},
        {"id": "B", "geometry": line((0, 50), (100, 50))},
    ]
    at_a, at_b = line((0, 0), (0, -20)), line((50, 52), (50, 70))
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": at_a}],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(60, 49)}],
        inverters=[{"id": "INV1", "geometry": pt(90, 49)}],
        trenches=trenches,
    )
    assert unreachable(site) == [
        "rows 'R1': R1/S1 cannot reach combiner 'CB1': 'R1' joins the trench island [A], "
        "'CB1' joins [B]"
    ]
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": at_b}],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(0, 0)}],
        inverters=[{"id": "INV1", "geometry": pt(90, -1)}],
        trenches=trenches,
    )
    assert unreachable(site) == [
        "rows 'R1': R1/S1 cannot reach combiner 'CB1': 'R1' joins the trench island [B], "
        "'CB1' joins [A]"
    ]


def test_unreachable_circuits_one_line_per_source_and_destination(make_site):
    """R4 (1 string) and R5 (2 strings) on island B, their combiner on A; a single circuit
    alone (one string straight to an inverter); and an inverter whose grid point is on
    another island."""
    trenches = [
        {"id": "A", "geometry": line((0, 0), (100, 0))},
        {"id": "B", "geometry": line((0, 50), (100, 50))},
    ]
    site = make_site(
        rows=[
            {"id": "R4", "strings": 1, "to": "CB1", "geometry": line((20, 52), (20, 70))},
            {"id": "R5", "strings": 2, "to": "CB1", "geometry": line((40, 52), (40, 70))},
        ],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(10, -1)}],
        inverters=[{"id": "INV1", "to": "G", "geometry": pt(90, -1)}],
        grid=[{"id": "G", "geometry": pt(90, 51)}],
        trenches=trenches,
    )
    assert unreachable(site) == [
        "rows 'R4': R4/S1 cannot reach combiner 'CB1': 'R4' joins the trench island [B], "
        "'CB1' joins [A]",
        "rows 'R5': 2 circuits R5/S1…R5/S2 cannot reach combiner 'CB1': 'R5' joins the trench "
        "island [B], 'CB1' joins [A]",
        "inverters 'INV1': AC:INV1 cannot reach grid point 'G': 'INV1' joins the trench "
        "island [A], 'G' joins [B]",
    ]
    alone = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "INV1", "geometry": line((20, 52), (20, 70))}],
        inverters=[{"id": "INV1", "geometry": pt(90, -1)}],
        trenches=trenches,
    )
    assert unreachable(alone) == [
        "rows 'R1': R1/S1 cannot reach inverter 'INV1': 'R1' joins the trench island [B], "
        "'INV1' joins [A]"
    ]
