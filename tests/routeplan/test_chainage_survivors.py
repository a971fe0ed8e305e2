"""Joined split points and the segment ids (:func:`routeplan.network.build_network`, its
chainage of joined split points): a tap within ``node_tol`` of an existing node joins it and
takes that node's chainage, also when the joined node is the trench's first vertex (the very
first split point of the network) and when one trench has two such joins.

The sites are invented: trench T1 from (0, 0) to (100, 0) (100 m, along x, so a point's
chainage is its x; checked with shapely below), combiners tapping it from beside the trench
(``tests/routeplan/test_segment_ids_split.py``'s ``net_ids``); node_tol_m is 0.1 m, the
default, so taps 8 cm apart are one node.
"""

from __future__ import annotations

import pytest
import shapely
from shapely.geometry import LineString

from .test_segment_ids_split import net_ids

#: hand: CB1 taps T1 at x = 20 and CB2 at x = 60, so T1 is cut at chainages 20 and 60
IDS = ["T1@0.0-20.0", "T1@20.0-60.0", "T1@60.0-100.0"]
START_M = [0.0, 20.0, 60.0]
END_M = [20.0, 60.0, 100.0]


def test_the_hand_chainages_are_shapelys():
    # shapely: the distance along T1 of each tap point (the foot of the perpendicular)
    t1 = LineString([(0, 0), (100, 0)])
    taps = [(0.08, -3), (19.92, 2), (20, -3), (60, -4), (60.08, 2)]
    along = [t1.project(shapely.Point(p)) for p in taps]
    assert along == pytest.approx([0.08, 19.92, 20.0, 60.0, 60.08], abs=1e-12)
    assert t1.length == 100.0


def test_a_tap_joining_the_trench_start_takes_chainage_zero():
    # CB0 taps T1 8 cm from its first vertex (0, 0): within node_tol it joins the node of
    # T1's start (the trench's own end comes first, so the node stays at (0, 0)). Nothing is
    # split and the first segment still starts at chainage 0, not 0.08 (T1@0.1-20.0)
    got = net_ids(("CB0", 0.08, -3), ("CB1", 20, -3), ("CB2", 60, -4))
    assert got[0] == IDS
    assert got[1] == pytest.approx(START_M, abs=1e-9)
    assert got[2] == pytest.approx(END_M, abs=1e-9)


def test_two_joined_taps_on_one_trench_each_take_their_nodes_chainage():
    # CB3 taps 8 cm before CB1's tap and CB4 8 cm after CB2's: two joined pairs on T1. Each
    # node stays at its first tap (CB1's at 20, CB2's at 60), so every id and chainage is
    # the one without CB3 and CB4 (not T1@20.0-60.1 / T1@60.1-100.0, nor 19.9 for CB3's)
    got = net_ids(("CB1", 20, -3), ("CB2", 60, -4), ("CB3", 19.92, 2), ("CB4", 60.08, 2))
    assert got[0] == IDS
    assert got[1] == pytest.approx(START_M, abs=1e-9)
    assert got[2] == pytest.approx(END_M, abs=1e-9)
