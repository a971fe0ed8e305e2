"""Circuits, their ids, and the greedy assignment of missing destinations.

References: "hand" (worked out from the inputs written in the test).
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from routeplan.circuits import (
    Destinations,
    assign_destinations,
    assign_greedy,
    derive_circuits,
    string_circuit_ids,
)
from routeplan.errors import AssignmentError, RoutingError


def line(*xy):
    return shapely.LineString(xy)


def pt(x, y):
    return shapely.Point(x, y)


def test_string_ids_zero_padded_to_the_rows_count():
    assert string_circuit_ids("R12", 12)[2] == "R12/S03"
    assert string_circuit_ids("R7", 9) == [f"R7/S{k}" for k in range(1, 10)]
    assert string_circuit_ids("R1", 100)[99] == "R1/S100"
    assert string_circuit_ids("R0", 0) == []  # no strings → no circuits


def test_greedy_without_limits_is_the_nearest():
    r = np.array([[5.0, 3.0, 9.0], [1.0, 1.0, 0.5], [np.inf, np.inf, np.inf]])
    choice, refused = assign_greedy(r, np.ones(3), np.full(3, np.inf))
    # hand: row minima, the last source has no route
    assert choice.tolist() == [1, 2, -1]
    assert refused.tolist() == [-1, -1, -1]


def test_greedy_ties_go_to_the_lower_index():
    r = np.array([[2.0, 2.0], [2.0, 2.0]])
    choice, _ = assign_greedy(r, np.array([1, 1]), np.array([1.0, 1.0]))
    # hand: (0,0) first, then (0,1) is skipped (source 0 placed), (1,0) full, (1,1)
    assert choice.tolist() == [0, 1]


def test_greedy_shortest_pairs_first_within_capacity():
    r = np.array(
        [
            [10.0, 40.0],  # S0: 3 strings
            [12.0, 30.0],  # S1: 2 strings
            [11.0, 50.0],  # S2: 2 strings
        ]
    )
    choice, refused = assign_greedy(r, np.array([3, 2, 2]), np.array([5.0, 4.0]))
    # hand: (S0,D0,10) → D0 left 2; (S2,D0,11) → D0 left 0; (S1,D0,12) refused; (S1,D1,30) → D1
    assert choice.tolist() == [0, 1, 0]
    assert refused.tolist() == [-1, 0, -1]


def test_greedy_source_that_fits_nowhere():
    choice, refused = assign_greedy(np.array([[1.0, 2.0]]), np.array([5]), np.array([4.0, 3.0]))
    assert choice.tolist() == [-1] and refused.tolist() == [0]


def test_greedy_empty():
    choice, refused = assign_greedy(np.zeros((0, 2)), np.zeros(0), np.ones(2))
    assert choice.shape == refused.shape == (0,)


def fixed_lengths(table):
    """A RouteLengths from a dict {(src_id, dst_id): metres}."""

    def route_lengths(src_layer, src_ids, dst_layer, dst_ids):
        return np.array(
            [[table.get((s, d), np.inf) for d in dst_ids] for s in src_ids], dtype=float
        )

    return route_lengths


@pytest.fixture
def small_site(make_site):
    return make_site(
        rows=[
            {"id": "R1", "strings": 3, "geometry": line((0, 0), (1, 0))},
            {"id": "R2", "strings": 2, "to": "CB2", "geometry": line((0, 1), (1, 1))},
        ],
        combiners=[
            {"id": "CB1", "geometry": pt(0, 2)},
            {"id": "CB2", "to": "INV1", "geometry": pt(0, 3)},
        ],
        inverters=[{"id": "INV1", "geometry": pt(0, 4)}],
        trenches=[{"id": "T", "geometry": line((0, -1), (0, 9))}],
        grid=[{"id": "G1", "geometry": pt(0, 5)}, {"id": "G2", "geometry": pt(0, 6)}],
    )


def test_destinations_and_report(small_site):
    lengths = fixed_lengths(
        {
            ("R1", "CB1"): 20.0,
            ("R1", "CB2"): 10.0,
            ("CB1", "INV1"): 7.0,
            ("INV1", "G1"): 9.0,
            ("INV1", "G2"): 4.0,
        }
    )
    dest, problems = assign_destinations(small_site, lengths, lambda layer, fid: True)
    assert problems == []
    assert dest.to == {
        "rows": [("combiners", "CB2"), ("combiners", "CB2")],
        "combiners": [("inverters", "INV1"), ("inverters", "INV1")],
        "inverters": [("grid", "G2")],
    }
    rep = dest.report
    assert rep[["layer", "feature_id", "to_id", "rule"]].values.tolist() == [
        ["rows", "R1", "CB2", "nearest"],
        ["rows", "R2", "CB2", "given"],
        ["combiners", "CB1", "INV1", "only"],
        ["combiners", "CB2", "INV1", "given"],
        ["inverters", "INV1", "G2", "nearest"],
    ]
    assert rep["strings"].tolist() == [3, 2, 0, 5, 5]  # hand: strings each feature carries


def test_circuits_in_order_with_stable_ids(small_site):
    lengths = fixed_lengths({("R1", "CB1"): 1.0, ("CB1", "INV1"): 1.0, ("INV1", "G1"): 1.0})
    dest, _ = assign_destinations(small_site, lengths, lambda layer, fid: True)
    circuits, problems = derive_circuits(small_site, dest)
    assert problems == []
    frame = circuits.frame()
    assert frame["circuit_id"].tolist() == [
        "R1/S1",
        "R1/S2",
        "R1/S3",
        "R2/S1",
        "R2/S2",
        "A:CB1",
        "A:CB2",
        "AC:INV1",
    ]
    assert frame["kind"].tolist() == ["string"] * 5 + ["array"] * 2 + ["ac"]
    assert frame["to_id"].tolist() == ["CB1"] * 3 + ["CB2"] * 2 + ["INV1", "INV1", "G1"]
    assert frame["strings"].tolist() == [1] * 5 + [3, 2, 5]
    assert circuits.from_index.tolist() == [0, 0, 0, 1, 1, 0, 1, 0]
    assert circuits.to_index.tolist() == [0, 0, 0, 1, 1, 0, 0, 0]


def test_unreachable_destination_and_unconnected_features(small_site):
    dest, problems = assign_destinations(
        small_site, fixed_lengths({}), lambda layer, fid: fid != "CB1"
    )
    # hand: R1 has no route to any combiner; CB1 is unconnected (reported elsewhere);
    # INV1 reaches no grid point
    assert [(cls, str(p)) for cls, p in problems] == [
        (AssignmentError, "rows 'R1': no `to`, and no combiner is reachable through the trenches"),
        (
            AssignmentError,
            "inverters 'INV1': no `to`, and no grid point is reachable through the trenches",
        ),
    ]
    assert dest.to["rows"][0] is None and dest.to["combiners"][0] is None


def test_duplicate_circuit_ids_are_reported(make_site):
    # a combiner named like a row's string circuit cannot collide ('A:' prefix), but a row
    # called 'A:CB1' with one string gives 'A:CB1/S1', and a combiner 'CB1/S1' gives 'A:CB1/S1'
    site = make_site(
        rows=[{"id": "A:CB1", "strings": 1, "to": "CB1/S1", "geometry": line((0, 0), (1, 0))}],
        combiners=[{"id": "CB1/S1", "to": "INV1", "geometry": pt(0, 2)}],
        inverters=[{"id": "INV1", "geometry": pt(0, 4)}],
        trenches=[{"id": "T", "geometry": line((0, -1), (0, 9))}],
    )
    dest, _ = assign_destinations(site, fixed_lengths({}), lambda layer, fid: True)
    _, problems = derive_circuits(site, dest)
    assert [(cls, p.layer, p.feature_id) for cls, p in problems] == [
        (RoutingError, "rows", "A:CB1")
    ]
    assert "'A:CB1/S1' is not unique" in problems[0][1].message


def test_destinations_dataclass_is_plain_data(small_site):
    dest, _ = assign_destinations(small_site, fixed_lengths({}), lambda layer, fid: True)
    assert isinstance(dest, Destinations)
