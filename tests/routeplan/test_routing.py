"""Routing of circuits over invented sites with exact, hand-computed answers.

Reference named beside each check: "hand" (worked out from the invented coordinates in the
test's docstring), "networkx" (the outside graph reference), "shapely" (geometry lengths).
"""

from __future__ import annotations

import itertools
import math

import networkx as nx
import numpy as np
import pandas as pd
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from routeplan.errors import NotConnectedError, ParameterError, RoutingError, UnreachableError
from routeplan.network import TrenchDefaults
from routeplan.routing import RouteParams, check_network, joined, route_site, row_length_m


def line(*xy):
    return shapely.LineString(xy)


def pt(x, y):
    return shapely.Point(x, y)


@pytest.fixture
def loop_site(make_site):
    """A ring trench where circuits compete for the two ways round.

    Ring L: (0,0) → (100,0) → (100,40) → (0,40) → (0,0), 280 m, chainage from (0,0).
    Taps: CB1 (102,10) → (100,10) at 110 m; R1 (row x=30, y 43..83) → (30,40) at 210 m;
    POC (-2,20) → (0,20) at 260 m; R2 (row y=5, x -3..-40) → (0,5) at 275 m;
    INV1 (50,-2) → (50,0) at 50 m. All stubs 2 m except the rows' 3 m.
    Segments (id: chainage from (0,0), one decimal): L@0.0-50.0, L@50.0-110.0, L@110.0-210.0,
    L@210.0-260.0, L@260.0-275.0, L@275.0-280.0.
    """
    return make_site(
        rows=[
            {"id": "R1", "strings": 2, "geometry": line((30, 43), (30, 83))},
            {"id": "R2", "strings": 3, "geometry": line((-3, 5), (-40, 5))},
        ],
        combiners=[{"id": "CB1", "geometry": pt(102, 10)}],
        inverters=[{"id": "INV1", "geometry": pt(50, -2)}],
        trenches=[{"id": "L", "geometry": line((0, 0), (100, 0), (100, 40), (0, 40), (0, 0))}],
        grid=[{"id": "POC", "geometry": pt(-2, 20)}],
    )


def test_loop_routes_take_the_shorter_way(loop_site):
    plan = route_site(loop_site)
    c = plan.circuits.set_index("circuit_id")
    assert c.index.tolist() == ["R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3", "A:CB1", "AC:INV1"]
    # hand: R1 (210 m) → CB1 (110 m) clockwise back 100 m, not 180 m the other way
    assert c.loc["R1/S1", "trench_m"] == 100.0
    assert c.loc["R1/S1", "segment_ids"] == "L@110.0-210.0"
    # hand: R2 (275 m) → CB1 (110 m) forward through the ring's start: 5 + 110 m
    assert c.loc["R2/S1", "trench_m"] == 115.0
    assert c.loc["R2/S1", "segment_ids"] == "L@275.0-280.0;L@0.0-50.0;L@50.0-110.0"
    assert c.loc["A:CB1", "segment_ids"] == "L@50.0-110.0"  # hand: 60 m back to (50, 0)
    assert (
        c.loc["AC:INV1", "segment_ids"] == "L@0.0-50.0;L@275.0-280.0;L@260.0-275.0"
    )  # hand: 50 + 5 + 15 m
    assert_allclose(c["trench_m"], [100, 100, 115, 115, 115, 60, 70], rtol=0, atol=1e-12)
    assert_allclose(c["stub_m"], [5, 5, 5, 5, 5, 4, 4], rtol=0, atol=1e-12)
    assert_allclose(c["route_m"], [105, 105, 120, 120, 120, 64, 74], rtol=0, atol=1e-12)
    assert c["group_max"].tolist() == [2, 2, 4, 4, 4, 4, 4]
    assert c["strings"].tolist() == [1, 1, 1, 1, 1, 5, 5]
    # shapely: the route geometry's length is route_m, from the source feature to the destination
    assert_allclose(
        shapely.length(plan.circuits.geometry.array), plan.circuits["route_m"], rtol=1e-12
    )
    r2 = c.loc["R2/S1", "geometry"]
    assert list(r2.coords) == [(-3, 5), (0, 5), (0, 0), (50, 0), (100, 0), (100, 10), (102, 10)]


def test_loop_segment_counts(loop_site):
    plan = route_site(loop_site)
    s = plan.segments.set_index("segment_id")
    assert s.index.tolist() == [
        "L@0.0-50.0",
        "L@50.0-110.0",
        "L@110.0-210.0",
        "L@210.0-260.0",
        "L@260.0-275.0",
        "L@275.0-280.0",
    ]
    assert_allclose(s["length_m"], [50, 60, 100, 50, 15, 5], rtol=0, atol=1e-12)  # hand
    # hand: which circuits use which stretch of the ring
    assert s["circuits"].tolist() == [4, 4, 2, 0, 1, 4]
    assert s["strings"].tolist() == [3, 3, 2, 0, 0, 3]
    assert s["arrays"].tolist() == [0, 1, 0, 0, 0, 0]
    assert s["ac"].tolist() == [1, 0, 0, 0, 1, 1]
    assert s.loc["L@0.0-50.0", "circuit_ids"] == "AC:INV1;R2/S1;R2/S2;R2/S3"
    assert s.loc["L@210.0-260.0", "circuit_ids"] == ""
    assert s["fill"].isna().all() and not s["over_capacity"].any()  # no capacity given
    # hand: Σ count × length over segments = Σ trench length over circuits = 675 m
    assert (s["circuits"] * s["length_m"]).sum() == plan.circuits["trench_m"].sum() == 675.0


def test_incidence_is_by_circuit_in_route_order(loop_site):
    plan = route_site(loop_site)
    seg_ids = plan.segments["segment_id"].to_numpy()
    inc = pd.DataFrame({"c": plan.incidence_circuit, "s": seg_ids[plan.incidence_segment]})
    joined = inc.groupby("c", sort=True)["s"].agg(";".join)
    assert joined.tolist() == plan.circuits["segment_ids"].tolist()
    frame = plan.incidence_frame()
    assert frame["segment_id"].tolist() == inc["s"].tolist()
    # group_max is the most circuits on any segment of the route
    most = frame.groupby("circuit")["circuits"].max()
    assert most.tolist() == plan.circuits["group_max"].tolist()
    assert set(frame.columns) >= {"depth_m", "laying", "spacing_m", "soil_k_m_w", "max_circuits"}


def test_cable_allowances(loop_site):
    params = RouteParams(termination_m=1.5, slack_pct=5.0, row_run_factor=0.5)
    c = route_site(loop_site, params).circuits.set_index("circuit_id")
    # hand: rows 40 m (R1) and 37 m (R2) long → half of each along the row
    assert_allclose(c["row_run_m"], [20, 20, 18.5, 18.5, 18.5, 0, 0])
    # hand: cable = route × 1.05 + 2 × 1.5 + row run
    assert_allclose(
        c["cable_m"],
        [105 * 1.05 + 3 + 20] * 2 + [120 * 1.05 + 3 + 18.5] * 3 + [64 * 1.05 + 3, 74 * 1.05 + 3],
        rtol=1e-12,
    )


def test_crossing_counts_and_trench_capacity(make_site):
    """A plus-shaped network: H (-50,0)-(50,0) holds 5 circuits, V (0,-50)-(0,50) no limit.

    CB1 (3,-1) taps H at x = 3; INV1 (50,-1) at H's east end. Rows (stubs 2 m) tap
    RW H at x = -30, RE H at x = 40, RN V at y = 30, RS V at y = -30; 1, 4, 2, 3 strings.
    Segments (chainage = x + 50 on H, y + 50 on V): H@0.0-20.0 (x -50..-30), H@20.0-50.0
    (-30..0), H@50.0-53.0 (0..3), H@53.0-90.0 (3..40), H@90.0-100.0 (40..50); V@0.0-20.0
    (y -50..-30), V@20.0-50.0 (-30..0), V@50.0-80.0 (0..30), V@80.0-100.0 (30..50).
    """
    site = make_site(
        rows=[
            {"id": "RW", "strings": 1, "geometry": line((-30, 2), (-30, 20))},
            {"id": "RN", "strings": 2, "geometry": line((2, 30), (20, 30))},
            {"id": "RS", "strings": 3, "geometry": line((-2, -30), (-20, -30))},
            {"id": "RE", "strings": 4, "geometry": line((40, 2), (40, 20))},
        ],
        combiners=[{"id": "CB1", "geometry": pt(3, -1)}],
        inverters=[{"id": "INV1", "geometry": pt(50, -1)}],
        trenches=[
            {"id": "H", "max_circuits": 5.0, "geometry": line((-50, 0), (50, 0))},
            {"id": "V", "geometry": line((0, -50), (0, 50))},
        ],
    )
    plan = route_site(site)
    s = plan.segments.set_index("segment_id")
    assert s.index.tolist() == [
        "H@0.0-20.0",
        "H@20.0-50.0",
        "H@50.0-53.0",
        "H@53.0-90.0",
        "H@90.0-100.0",
        "V@0.0-20.0",
        "V@20.0-50.0",
        "V@50.0-80.0",
        "V@80.0-100.0",
    ]
    assert_allclose(s["length_m"], [20, 30, 3, 37, 10, 20, 30, 30, 20], rtol=0, atol=1e-12)
    # hand: every string crosses H@50.0-53.0 except RE's; A:CB1 runs H@53.0-90.0 and H@90.0-100.0
    assert s["circuits"].tolist() == [0, 1, 6, 5, 1, 0, 3, 2, 0]
    assert s["arrays"].tolist() == [0, 0, 0, 1, 1, 0, 0, 0, 0]
    assert_allclose(
        s.loc[["H@50.0-53.0", "H@53.0-90.0", "H@90.0-100.0"], "fill"], [6 / 5, 1.0, 1 / 5]
    )
    assert s["over_capacity"].tolist() == [False, False, True] + [False] * 6
    assert s.loc[["V@20.0-50.0", "V@50.0-80.0"], "fill"].isna().all()
    c = plan.circuits.groupby("from_id").first()
    assert c.loc[["RW", "RN", "RS", "RE", "CB1"], "segment_ids"].tolist() == [
        "H@20.0-50.0;H@50.0-53.0",
        "V@50.0-80.0;H@50.0-53.0",
        "V@20.0-50.0;H@50.0-53.0",
        "H@53.0-90.0",
        "H@53.0-90.0;H@90.0-100.0",
    ]
    assert_allclose(c.loc[["RW", "RN", "RS", "RE", "CB1"], "trench_m"], [33, 33, 33, 37, 47])
    assert c.loc[["RW", "RN", "RS", "RE", "CB1"], "group_max"].tolist() == [6, 6, 6, 5, 5]


def test_row_length_of_polygon_is_its_long_side():
    rotated = shapely.affinity.rotate(shapely.box(0, 0, 40, 4), 30)
    # hand: the long side of a 40 m × 4 m table, whatever its rotation
    assert_allclose(row_length_m(np.array([rotated, shapely.box(0, 0, 3, 9)])), [40, 9], rtol=1e-9)


def test_rerun_gives_identical_ids_and_tables(loop_site):
    a, b = route_site(loop_site), route_site(loop_site)
    pd.testing.assert_frame_equal(a.circuits, b.circuits)
    pd.testing.assert_frame_equal(a.segments, b.segments)
    pd.testing.assert_frame_equal(a.assignment, b.assignment)


def test_assignment_report(loop_site):
    report = route_site(loop_site).assignment
    assert report[["layer", "feature_id", "to_id", "rule"]].values.tolist() == [
        ["rows", "R1", "CB1", "only"],
        ["rows", "R2", "CB1", "only"],
        ["combiners", "CB1", "INV1", "only"],
        ["inverters", "INV1", "POC", "only"],
    ]
    assert_allclose(report["route_m"], [105, 120, 64, 74])  # hand, as routed
    assert report["strings"].tolist() == [2, 3, 5, 5]


def test_row_joins_its_nearest_trench_even_when_another_is_shorter(make_site):
    """R1 ends at (-3, 30): trench C's end (-2, 31) is √2 m away, trench D (x = 0) 3 m.

    C runs (-2,31) → (-2,60) → (50,60) → (50,0), 141 m, into A (0,0) → (100,0) at x = 50;
    D runs (0,0) → (0,50). CB1 (0,-2) taps A at its start. The rule (join the nearest
    trench) gives √2 + 141 + 50 + 2 m, though via D it would be 3 + 30 + 2 m. C is one segment
    (C@0.0-141.0: 29 + 52 + 60 m); A is cut at x = 50 where C ends (A@0.0-50.0 first).
    """
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "geometry": line((-40, 30), (-3, 30))}],
        combiners=[{"id": "CB1", "geometry": pt(0, -2)}],
        inverters=[{"id": "INV1", "geometry": pt(100, -1)}],
        trenches=[
            {"id": "A", "geometry": line((0, 0), (100, 0))},
            {"id": "C", "geometry": line((-2, 31), (-2, 60), (50, 60), (50, 0))},
            {"id": "D", "geometry": line((0, 0), (0, 50))},
        ],
    )
    c = route_site(site).circuits.set_index("circuit_id")
    assert c.loc["R1/S1", "segment_ids"] == "C@0.0-141.0;A@0.0-50.0"
    assert_allclose(c.loc["R1/S1", "route_m"], math.sqrt(2) + 191 + 2, rtol=1e-12)  # hand
    assert c.index.tolist() == ["R1/S1", "A:CB1"]  # no grid point → no ac circuit


@pytest.fixture
def capacity_site(make_site):
    """Trench (0,0)-(100,0); CB1 (10,-1) max 4 strings, CB2 (90,-1) unlimited.

    Rows are vertical lines from y = 2, so each stub is 2 m; combiner stubs are 1 m.
    Route lengths [m] (hand): R1 x=20: 13 / 73; R2 x=30: 23 / 63; R3 x=80: 73 / 13.
    """

    def build(r1_strings=3, extra_rows=(), validate=True):
        return make_site(
            validate=validate,
            rows=[
                {"id": "R1", "strings": r1_strings, "geometry": line((20, 2), (20, 30))},
                {"id": "R2", "strings": 2, "geometry": line((30, 2), (30, 30))},
                {"id": "R3", "strings": 1, "geometry": line((80, 2), (80, 30))},
                *extra_rows,
            ],
            combiners=[
                {"id": "CB1", "max_strings": 4.0, "geometry": pt(10, -1)},
                {"id": "CB2", "geometry": pt(90, -1)},
            ],
            inverters=[{"id": "INV1", "to": None, "geometry": pt(50, -1)}],
            trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
        )

    return build


def test_nearest_combiner_respects_max_strings(capacity_site):
    plan = route_site(capacity_site())
    rep = plan.assignment.set_index("feature_id")
    # hand: R1 (13 m) takes 3 of CB1's 4; R2's 2 strings no longer fit → CB2 at 63 m
    assert rep.loc[["R1", "R2", "R3"], "to_id"].tolist() == ["CB1", "CB2", "CB2"]
    assert rep.loc[["R1", "R2", "R3"], "rule"].tolist() == [
        "nearest",
        "nearest with room",
        "nearest",
    ]
    assert rep.loc["R2", "note"] == "nearer 'CB1' (23.0 m) had no room"
    assert_allclose(rep.loc[["R1", "R2", "R3"], "route_m"], [13, 63, 13])
    assert rep.loc[["CB1", "CB2"], "strings"].tolist() == [3, 3]
    c = plan.circuits.set_index("circuit_id")
    assert c.loc["R2/S1", "to_id"] == "CB2" and c.loc["R2/S1", "route_m"] == 63.0


def test_rows_given_by_to_take_capacity_first(capacity_site):
    extra = {"id": "R4", "strings": 2, "to": "CB1", "geometry": line((60, 2), (60, 30))}
    rep = route_site(capacity_site(extra_rows=[extra])).assignment.set_index("feature_id")
    # hand: R4's 2 strings leave CB1 room for 2: R1's 3 no longer fit, R2's 2 do
    assert rep.loc["R4", "rule"] == "given"
    assert rep.loc[["R1", "R2", "R3"], "to_id"].tolist() == ["CB2", "CB1", "CB2"]


def test_row_too_big_for_every_combiner(capacity_site, make_site):
    site = capacity_site()
    site.combiners.loc[1, "max_strings"] = 2.0
    with pytest.raises(RoutingError) as err:
        route_site(site)
    # hand, shortest first: R1 → CB1 (13 m, 1 left), R3 → CB2 (13 m, 1 left); R2's 2 strings
    # then fit neither CB1 (23 m) nor CB2 (63 m)
    assert [str(p) for p in err.value.problems] == [
        "rows 'R2': no `to`, and no reachable combiner has room for its 2 strings "
        "(nearest 'CB1' at 23.0 m)"
    ]


def test_unknown_to_is_reported(capacity_site):
    extra = {"id": "R4", "strings": 1, "to": "CB9", "geometry": line((60, 2), (60, 30))}
    # layers rejects this site; routing still guards against it
    problems = check_network(capacity_site(extra_rows=[extra], validate=False))
    assert [str(p) for p in problems] == [
        "rows 'R4': to 'CB9' is not the id of any combiner or inverter"
    ]


def test_rows_go_to_inverters_without_combiners(make_site):
    site = make_site(
        rows=[
            {"id": f"R{i}", "strings": 12, "geometry": line((x, 2), (x, 30))}
            for i, x in enumerate((10, 70))
        ],
        inverters=[{"id": "I1", "geometry": pt(0, -1)}, {"id": "I2", "geometry": pt(100, -1)}],
        trenches=[{"id": "T", "geometry": line((0, 0), (100, 0))}],
        grid=[{"id": "G1", "geometry": pt(-5, 0)}, {"id": "G2", "geometry": pt(105, 0)}],
    )
    plan = route_site(site)
    c = plan.circuits
    assert c["circuit_id"].iloc[[0, 11, 12]].tolist() == ["R0/S01", "R0/S12", "R1/S01"]
    # hand: R0 at x = 10 is nearer I1, R1 at x = 70 nearer I2; each inverter its nearest grid point
    assert c.groupby("from_id")["to_id"].first().to_dict() == {
        "I1": "G1",
        "I2": "G2",
        "R0": "I1",
        "R1": "I2",
    }
    assert c.set_index("circuit_id").loc["AC:I1", "strings"] == 12
    assert set(plan.assignment["rule"]) == {"nearest"}


# ---- errors: every problem at once ----------------------------------------------------------


@pytest.fixture
def broken_site(make_site):
    """A site with an island (R5 on trench B), a far row (R6) and an unreachable inverter (INV2)."""
    return make_site(
        rows=[
            {"id": "R1", "strings": 2, "to": "CB1", "geometry": line((20, 2), (20, 30))},
            {"id": "R5", "strings": 2, "to": "CB1", "geometry": line((50, 52), (50, 80))},
            {"id": "R6", "strings": 1, "to": "CB1", "geometry": line((70, -40), (70, -60))},
        ],
        combiners=[
            {"id": "CB1", "to": "INV1", "geometry": pt(10, -1)},
            {"id": "CB2", "to": "INV2", "geometry": pt(30, -1)},
        ],
        inverters=[
            {"id": "INV1", "geometry": pt(90, -1)},
            {"id": "INV2", "geometry": pt(550, -1)},
        ],
        trenches=[
            {"id": "A", "geometry": line((0, 0), (100, 0))},
            {"id": "B", "geometry": line((0, 50), (100, 50))},
            {"id": "E1", "geometry": line((500, 0), (600, 0))},
            {"id": "E2", "geometry": line((600, 0), (600, 100))},
        ],
    )


EXPECTED_BROKEN = [
    "rows 'R6': nearest trench 'A' is 40.00 m away, more than snap_m 30 m",
    "rows 'R5': 2 circuits R5/S1…R5/S2 cannot reach combiner 'CB1': 'R5' joins the trench "
    "island [B], 'CB1' joins [A]",
    "combiners 'CB2': A:CB2 cannot reach inverter 'INV2': 'CB2' joins the trench island [A], "
    "'INV2' joins [E1, E2]",
]


def test_all_problems_reported_at_once(broken_site):
    with pytest.raises(RoutingError) as err:
        route_site(broken_site)
    assert type(err.value) is RoutingError  # two kinds of problem → the base class
    assert [str(p) for p in err.value.problems] == EXPECTED_BROKEN
    assert str(err.value).startswith("3 problems, first: rows 'R6'")


def test_check_network_lists_the_same_problems(broken_site):
    assert [str(p) for p in check_network(broken_site)] == EXPECTED_BROKEN


def test_one_kind_of_problem_raises_its_class(make_site):
    base = {
        "combiners": [{"id": "CB1", "geometry": pt(10, -1)}],
        "inverters": [{"id": "INV1", "geometry": pt(90, -1)}],
        "trenches": [
            {"id": "A", "geometry": line((0, 0), (100, 0))},
            {"id": "B", "geometry": line((0, 50), (100, 50))},
        ],
    }
    far = {"id": "R6", "to": "CB1", "geometry": line((70, -40), (70, -60))}
    with pytest.raises(NotConnectedError) as err:
        route_site(make_site(rows=[far], **base))
    assert [p.feature_id for p in err.value.problems] == ["R6"]
    island = {"id": "R5", "to": "CB1", "geometry": line((50, 52), (50, 80))}
    with pytest.raises(UnreachableError) as err:
        route_site(make_site(rows=[island], **base))
    assert [p.feature_id for p in err.value.problems] == ["R5"]


def test_parameters_are_checked():
    with pytest.raises(ParameterError) as err:
        RouteParams(snap_m=-1, slack_pct=float("nan"))
    assert [p.feature_id for p in err.value.problems] == ["snap_m", "slack_pct"]
    with pytest.raises(ParameterError, match="unknown; valid: snap_m"):
        RouteParams.from_mapping({"snap": 3})
    p = RouteParams.from_mapping({"snap_m": 5, "trench": {"depth_m": 0.9}})
    assert p.snap_m == 5 and p.trench == TrenchDefaults(depth_m=0.9)


# ---- property tests: random grid networks against networkx ---------------------------------


@st.composite
def grid_sites(draw):
    """A random grid of trenches hung off a full-height spine (so all of it is one island),
    with rows and combiners at random lattice points beside the trenches."""
    ys = draw(st.lists(st.integers(0, 9), min_size=1, max_size=6, unique=True))
    xs = draw(st.lists(st.integers(1, 9), min_size=0, max_size=5, unique=True))
    trenches = [{"id": "SPINE", "geometry": line((0, -5), (0, 95))}]
    for y in ys:  # every horizontal starts on the spine
        b = draw(st.integers(1, 9))
        trenches.append({"id": f"H{y}", "geometry": line((0, y * 10.0), (b * 10.0 + 4, y * 10.0))})
    for x in xs:  # every vertical crosses (or ends on) the first horizontal, which it reaches
        y0 = ys[0]
        a, b = sorted((y0, draw(st.integers(0, 9))))
        trenches[1] = {"id": f"H{y0}", "geometry": line((0, y0 * 10.0), (94, y0 * 10.0))}
        trenches.append(
            {
                "id": f"V{x}",
                "geometry": line((x * 10.0 - 0.5, a * 10.0), (x * 10.0 - 0.5, b * 10.0 + 5)),
            }
        )
    pts = st.tuples(st.floats(-2, 95, allow_nan=False), st.floats(-6, 96, allow_nan=False))
    row_at = draw(st.lists(pts, min_size=1, max_size=8, unique=True))
    cb_at = draw(st.lists(pts, min_size=1, max_size=3, unique=True))
    strings = draw(st.lists(st.integers(1, 4), min_size=len(row_at), max_size=len(row_at)))
    rows = [
        {"id": f"R{i}", "strings": n, "geometry": line((x, y), (x + 7.0, y + 3.0))}
        for i, ((x, y), n) in enumerate(zip(row_at, strings, strict=True))
    ]
    combiners = [{"id": f"CB{i}", "geometry": pt(x, y)} for i, (x, y) in enumerate(cb_at)]
    return trenches, rows, combiners


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(grid_sites())
def test_routes_agree_with_networkx(make_site, drawn):
    trenches, rows, combiners = drawn
    site = make_site(
        rows=rows,
        combiners=combiners,
        inverters=[{"id": "INV", "geometry": pt(-1, -5)}],
        trenches=trenches,
    )
    plan = route_site(site, RouteParams(snap_m=1000.0))
    net, c, s = plan.network, plan.circuits, plan.segments

    # networkx: Dijkstra on the same segments (a MultiGraph keeps parallel segments)
    g = nx.MultiGraph()
    g.add_weighted_edges_from(
        zip(net.seg_u.tolist(), net.seg_v.tolist(), net.seg_length_m.tolist(), strict=True)
    )
    node = net.taps.set_index(["layer", "feature_id"])["node"]
    for row in c.itertuples():
        a, b = node[(row.from_layer, row.from_id)], node[(row.to_layer, row.to_id)]
        expected = 0.0 if a == b else nx.shortest_path_length(g, a, b, weight="weight")
        assert row.trench_m == pytest.approx(expected, rel=1e-12, abs=1e-9)

    geoms = np.asarray(c.geometry.array)
    # shapely: route_m is the length of the returned geometry
    assert_allclose(shapely.length(geoms), c["route_m"], rtol=1e-12, atol=1e-9)
    # hand (triangle inequality): no route is shorter than the straight line between its ends
    ends = shapely.distance(shapely.get_point(geoms, 0), shapely.get_point(geoms, -1))
    assert np.all(c["route_m"].to_numpy() >= ends - 1e-9)
    # Σ count × length over segments equals Σ trench length over circuits
    assert_allclose(
        (s["circuits"] * s["length_m"]).sum(), c["trench_m"].sum(), rtol=1e-12, atol=1e-9
    )
    # counts by kind add up; group_max is the largest count on each route
    assert (s["strings"] + s["arrays"] + s["ac"] == s["circuits"]).all()
    counts = s["circuits"].to_numpy()
    gmax = np.zeros(len(c), dtype=int)
    np.maximum.at(gmax, plan.incidence_circuit, counts[plan.incidence_segment])
    assert (gmax == c["group_max"].to_numpy()).all()


# ---- the first search radius is only a guess: routes are exact beyond it ---------------------


def test_long_detour_beyond_the_first_search_radius(make_site):
    """A hairpin trench: (0,0) → (1000,0) → (1000,5) → (0,5), 2005 m. Row R1 (x=0, y -3..-23)
    taps (0,0) by 3 m; CB1 (0,7) taps (0,5) by 2 m: 5 m apart in a straight line, 2005 m
    along the trench — far beyond the first radius (2 × 5 m + 100 m), so the search is redone
    in full. INV1 (1002, 2.5) taps (1000, 2.5) by 2 m."""
    site = make_site(
        rows=[{"id": "R1", "strings": 1, "to": "CB1", "geometry": line((0, -3), (0, -23))}],
        combiners=[{"id": "CB1", "to": "INV1", "geometry": pt(0, 7)}],
        inverters=[{"id": "INV1", "geometry": pt(1002, 2.5)}],
        trenches=[{"id": "U", "geometry": line((0, 0), (1000, 0), (1000, 5), (0, 5))}],
    )
    c = route_site(site).circuits.set_index("circuit_id")
    assert c.loc["R1/S1", "trench_m"] == pytest.approx(2005.0, abs=1e-9)  # hand
    assert c.loc["R1/S1", "route_m"] == pytest.approx(2010.0, abs=1e-9)  # hand: + 3 + 2 m
    assert c.loc["A:CB1", "trench_m"] == pytest.approx(1002.5, abs=1e-9)  # hand


def test_search_radius_never_changes_a_route(comb, monkeypatch):
    """Every destination searched again in full (radius 0) gives the same routes."""
    from routeplan import routing

    site = comb(6, 4, 3)
    before = route_site(site)
    monkeypatch.setattr(routing, "_DETOUR", 0.0)
    monkeypatch.setattr(routing, "_DETOUR_M", 0.0)
    after = route_site(site)
    for col in ("route_m", "segment_ids", "group_max"):
        assert before.circuits[col].tolist() == after.circuits[col].tolist()
    assert before.segments["circuits"].tolist() == after.segments["circuits"].tolist()


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.text(max_size=4), max_size=12),
    st.lists(st.integers(0, 12), max_size=6),
)
def test_joined_groups_equal_pythons_join(items, cuts):
    # Python's str.join on each group is the reference (empty groups, empty and
    # separator-holding items, non-ASCII text included)
    offsets = np.array(sorted({0, len(items), *(min(c, len(items)) for c in cuts)}))
    want = [";".join(items[a:b]) for a, b in itertools.pairwise(offsets)]
    assert joined(items, offsets).tolist() == want
    # repeated offsets: empty groups
    twice = np.repeat(offsets, 2)
    want2 = [";".join(items[a:b]) for a, b in itertools.pairwise(twice)]
    assert joined(items, twice).tolist() == want2
