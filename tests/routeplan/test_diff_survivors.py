"""The terminal lines of ``routeplan diff`` (:func:`routeplan.diff.text.diff_lines`) pinned
whole, on small schedules written by hand (no plan is run): the plant block, the circuits'
head line, their own route changes, the alike values summarised, the followers with their
delta range and cause, every kind of trench segment event and the listing limits. Every
expected line is worked out by hand in the comments from the cells the test writes."""

from __future__ import annotations

import pytest

from routeplan.diff import DiffError, diff_outputs
from routeplan.diff.text import diff_lines

from .test_diff_tables import changes, circuit, quantity, segment, summary_of, write_folder

#: the new plan's routes: T1@0.0-60.0 split at 25.0 m, the same stretch of trench T1
SPLIT = "T1@0.0-25.0;T1@25.0-60.0;T1@60.0-120.0"


def _plans(tmp_path):
    """Old and new folders of an invented plant with one change of every kind.

    Circuits (all string circuits to CB9 unless named; cells as ``CIRCUIT`` of
    test_diff_tables unless changed):

    * A1 array CB1 → INV1: route_m 120.00 → 130.00, cable_m 126.00 → 136.00 (scope route);
    * B1: derating 0.800 → 0.750; B2–B5: ampacity_a 40.0 → 36.5 / 36.0 / 35.5 / 35.0 and
      derating 0.800 → 0.730; B6–B8: utilisation 0.438 → 0.500; Z1 array CB8 → INV1:
      ampacity_a 40.0 → 38.0 (scope value);
    * F1–F4 land on CB1, which A1 leaves: vdrop_total_pct 1.100 → 1.150 / 1.120 / 1.130, and
      F4 from an empty cell to 1.200 (no delta); G1 lands on CB7, which no circuit leaves:
      1.100 → 1.101 (scope follows);
    * R1 removed, N1 (array, loss 2000.0 W) added.
    """
    old_c = [
        circuit("A1", "array", from_id="CB1", to_id="INV1"),
        *(circuit(f"B{k}", to_id="CB9") for k in range(1, 9)),
        circuit("Z1", "array", from_id="CB8", to_id="INV1"),
        *(circuit(f"F{k}", to_id="CB1") for k in range(1, 4)),
        circuit("F4", to_id="CB1", vdrop_total_pct=""),
        circuit("G1", to_id="CB7"),
        circuit("R1", to_id="CB9"),
    ]
    t = dict(trench_segments=SPLIT)
    new_c = [
        circuit(
            "A1", "array", from_id="CB1", to_id="INV1", route_m="130.00", cable_m="136.00", **t
        ),
        circuit("B1", to_id="CB9", derating="0.750", **t),
        *(
            circuit(f"B{k}", to_id="CB9", ampacity_a=a, derating="0.730", **t)
            for k, a in zip(range(2, 6), ("36.5", "36.0", "35.5", "35.0"), strict=True)
        ),
        *(circuit(f"B{k}", to_id="CB9", utilisation="0.500", **t) for k in range(6, 9)),
        circuit("Z1", "array", from_id="CB8", to_id="INV1", ampacity_a="38.0", **t),
        circuit("F1", to_id="CB1", vdrop_total_pct="1.150", **t),
        circuit("F2", to_id="CB1", vdrop_total_pct="1.120", **t),
        circuit("F3", to_id="CB1", vdrop_total_pct="1.130", **t),
        circuit("F4", to_id="CB1", vdrop_total_pct="1.200", **t),
        circuit("G1", to_id="CB7", vdrop_total_pct="1.101", **t),
        circuit("N1", "array", from_id="CB6", to_id="INV1", loss_w="2000.0", **t),
    ]
    # T1@0.0-60.0 split at 25.0 m (the first piece now carries 1 circuit), T1@60.0-120.0 one
    # string more; T2's two segments merged at 30.0 m; T3's cut moved from 40 m to 70 m;
    # T4 and T6 removed, T5 added. Trench: 120 + 50 + 100 + 10 + 10 = 290 m before,
    # 120 + 50 + 100 + 20 = 290 m after
    old_s = [
        segment("T1", 0, 60), segment("T1", 60, 120), segment("T2", 0, 30),
        segment("T2", 30, 50), segment("T3", 0, 40), segment("T3", 40, 100),
        segment("T4", 0, 10), segment("T6", 0, 10),
    ]  # fmt: skip
    new_s = [
        segment("T1", 0, 25, circuits="1"), segment("T1", 25, 60),
        segment("T1", 60, 120, strings="3"), segment("T2", 0, 50), segment("T3", 0, 70),
        segment("T3", 70, 100), segment("T5", 0, 20),
    ]  # fmt: skip
    old_q = [quantity("cable", "4", "252.00"), quantity("cable", "6", "100.00", "array")]
    new_q = [quantity("cable", "4", "252.00"), quantity("cable", "10", "120.00", "array")]
    new_summary = summary_of(new_c, new_s) | {"rules": "demo-rules-2"}
    old = write_folder(tmp_path / "a", old_c, old_s, old_q)
    new = write_folder(tmp_path / "b", new_c, new_s, new_q, summary=new_summary)
    return diff_outputs(old, new)


#: the plant block: items padded to the longest, "trench segments over capacity" (29
#: characters). Cable lines from quantities.csv: array 10 mm² only new ("-"), array 6 mm² only
#: old, string 4 mm² unchanged. Cable: 16 × 126 = 2016 m old; 15 × 126 + 136 = 2026 m new.
#: Trench 290 m both. Losses 16 × 3.2 W = 51.2 W = 0.051 kW old; 15 × 3.2 + 2000 = 2048 W =
#: 2.048 kW new (+1.997); energy (1000 h a year, summary_of) 51.2 kWh = 0.051 MWh, 2048 kWh =
#: 2.048 MWh.
PLANT = [
    "plant (old → new, delta):",
    "  cable array Cu 10.0 mm²        - → 120.00 (+120.00) m",
    "  cable array Cu 6.0 mm²         100.00 → - (-100.00) m",
    "  cable string Cu 4.0 mm²        252.00 → 252.00 (+0.00) m",
    "  cable, all (conductor metres)  2016.00 → 2026.00 (+10.00) m",
    "  trench                         290.00 → 290.00 (+0.00) m",
    "  losses at operating current    0.051 → 2.048 (+1.997) kW",
    "  energy loss                    0.051 → 2.048 (+1.997) MWh/year",
    "  failing circuits               0 → 0 (+0)",
    "  trench segments over capacity  0 → 0 (+0)",
    "  inverter inputs over a limit   0 → 0 (+0)",
]
#: 1 added (N1), 1 removed (R1), 15 changed (A1, B1–B8, Z1, F1–F4, G1) of which 5 only follow
#: (F1–F4, G1): 10 of their own
CIRCUITS_HEAD = "circuits: 1 added, 1 removed, 10 changed, 5 changed only by a circuit they feed"
ROUTE = [
    " their route, cable or status:",
    "  + N1: new array circuit",
    "  - R1: string circuit removed",
    # route_m is told before cable_m; 130.00 − 120.00 = +10.00, 136.00 − 126.00 = +10.00
    "  ~ A1: route_m 120.00 → 130.00 (+10.00); cable_m 126.00 → 136.00 (+10.00)",
]
VALUES = [
    " their values (same route and cable):",
    # groups of (kind, fields changed) in the order met: B1 alone (0.750 − 0.800 = −0.050)
    "  ~ B1: derating 0.800 → 0.750 (-0.050)",
    # B2–B5: four string circuits, more than three: one line, B2 the example
    # (36.5 − 40.0 = −3.5; 0.730 − 0.800 = −0.070)
    "  ~ 4 string circuits: ampacity_a, derating "
    "(as B2: ampacity_a 40.0 → 36.5 (-3.5); derating 0.800 → 0.730 (-0.070))",
    # B6–B8: three, listed one by one (0.500 − 0.438 = +0.062)
    "  ~ B6: utilisation 0.438 → 0.500 (+0.062)",
    "  ~ B7: utilisation 0.438 → 0.500 (+0.062)",
    "  ~ B8: utilisation 0.438 → 0.500 (+0.062)",
    # Z1, an array circuit (38.0 − 40.0 = −2.0)
    "  ~ Z1: ampacity_a 40.0 → 38.0 (-2.0)",
]
FOLLOWS = [
    " only the cumulative DC drop, after a circuit they feed changed:",
    # (string, "") first: G1, 1.101 − 1.100 = +0.001
    "  1 string circuits: cumulative DC drop +0.001 % with no circuit they feed changed "
    "(a setting?)",
    # (string, A1): F1 +0.050, F2 +0.020, F3 +0.030, F4 no delta (empty before); A1 longer
    "  4 string circuits: cumulative DC drop +0.020 to +0.050 % after A1 (longer)",
]
SEGMENTS = [
    "trench segments: 1 split, 1 merged, 1 reshaped, 1 added, 2 removed, 1 changed",
    "  split: T1@0.0-60.0 (2 circuits) split at 25.0 m into T1@0.0-25.0 (1 circuit), "
    "T1@25.0-60.0 (2 circuits)",
    "  merged: T2@0.0-30.0 (2 circuits), T2@30.0-50.0 (2 circuits) merged at 30.0 m into "
    "T2@0.0-50.0 (2 circuits)",
    "  reshaped: T3@0.0-40.0 (2 circuits), T3@40.0-100.0 (2 circuits) became "
    "T3@0.0-70.0 (2 circuits), T3@70.0-100.0 (2 circuits)",
    "  added: T5@0.0-20.0 (2 circuits) added",
    "  removed: T4@0.0-10.0 (2 circuits) removed",
    "  removed: T6@0.0-10.0 (2 circuits) removed",
    "  changed: T1@60.0-120.0: strings 2 → 3 (+1)",
]
#: bill lines keyed item kind material size laying depth unit, sorted by key ("10" < "6")
QUANTITIES = [
    "quantities: 2 lines changed (old → new, delta)",
    "  cable array Cu 10 trench 0.8 m: 0.00 → 120.00 (+120.00)",
    "  cable array Cu 6 trench 0.8 m: 100.00 → 0.00 (-100.00)",
]


def test_the_terminal_lines_of_a_diff_with_every_kind_of_change(tmp_path):
    d = _plans(tmp_path)
    assert diff_lines(d) == [
        "note: the plans differ in rule set: - → demo-rules-2",
        *PLANT,
        CIRCUITS_HEAD,
        *ROUTE,
        *VALUES,
        *FOLLOWS,
        *SEGMENTS,
        *QUANTITIES,
    ]
    # the plant block's changed items in diff.csv (the values as shown above)
    assert changes(d, "plant") == [
        ("plant", "cable array Cu 10.0 mm²", "changed", "m", "", "120.00", "+120.00", "", "", ""),
        ("plant", "cable array Cu 6.0 mm²", "changed", "m", "100.00", "", "-100.00", "", "", ""),
        (
            "plant", "cable, all (conductor metres)", "changed", "m", "2016.00", "2026.00",
            "+10.00", "", "", "",
        ),
        (
            "plant", "losses at operating current", "changed", "kW", "0.051", "2.048", "+1.997",
            "", "", "",
        ),
        ("plant", "energy loss", "changed", "MWh/year", "0.051", "2.048", "+1.997", "", "", ""),
    ]  # fmt: skip
    # the added and removed circuits' rows, whole
    rows = [tuple(r) for r in d.circuits.itertuples(index=False, name=None)]
    assert rows[:2] == [
        ("N1", "array", "added", "added", "route", "", "new array circuit"),
        ("R1", "string", "removed", "removed", "route", "", "string circuit removed"),
    ]
    assert list(d.circuits.columns) == [
        "circuit_id", "kind", "change", "look", "scope", "cause", "summary",
    ]  # fmt: skip
    assert list(d.segments.columns) == ["event", "trench_id", "old_ids", "new_ids", "text"]
    assert (d.old_dir.name, d.new_dir.name) == ("a", "b")


def test_the_terminal_lists_at_most_listed_of_each_part(tmp_path):
    """listed=1: one circuit of their own route (of 3: "… and 2 more") and one segment per
    event (2 removed: "… and 1 more removed"); the values and followers are not cut."""
    d = _plans(tmp_path)
    assert diff_lines(d, listed=1) == [
        "note: the plans differ in rule set: - → demo-rules-2",
        *PLANT,
        CIRCUITS_HEAD,
        *ROUTE[:2],
        "  … and 2 more (all in diff.csv: --out DIR)",
        *VALUES,
        *FOLLOWS,
        *SEGMENTS[:6],
        "  … and 1 more removed (all in diff.csv: --out DIR)",
        SEGMENTS[7],
        *QUANTITIES,
    ]
    # listed=3 lists all three of their own route, and nothing is cut
    assert diff_lines(d, listed=3) == diff_lines(d)


def test_two_identical_plans_print_no_changes(tmp_path):
    d = diff_outputs(write_folder(tmp_path / "a"), write_folder(tmp_path / "b"))
    assert diff_lines(d) == ["no changes"]
    # the tables keep their columns when empty
    assert list(d.circuits.columns) == [
        "circuit_id", "kind", "change", "look", "scope", "cause", "summary",
    ]  # fmt: skip
    assert list(d.segments.columns) == ["event", "trench_id", "old_ids", "new_ids", "text"]


# ---- circuits: how each looks, its one-line summary, its route compared as stretches of trench


def test_each_circuits_look_summary_and_route_stretches(tmp_path):
    """One string circuit per case (to CB9, cells as ``CIRCUIT`` unless changed), T1 as in
    ``write_folder``; each expected look, scope and summary worked out from the module's rules
    (the weightiest change; size × parallel per pole; at most three changes, in the order
    status, size_mm2, parallel, material, route_m, to_id, trench_segments, then the rest)."""
    t1 = [segment("T1", 0, 60), segment("T1", 60, 120)]
    old_s = [
        *t1, segment("T3", 0, 50), segment("T4", 0, 60), segment("T5", 0, 60),
        segment("T6", 0, 60), segment("T7", 0, 60),
    ]  # fmt: skip
    new_s = [
        *t1, segment("T3", 0, 50),
        # T4: the same stretch in two pieces, its ends 0.04 m in (0.0 and 60.0 to 0.1 m)
        segment("T4", 0.04, 30, segment_id="T4@0.0-30.0"),
        segment("T4", 30, 59.96, segment_id="T4@30.0-60.0"),
        # T5 now starts 0.3 m on, T6 ends 0.3 m short: other stretches
        segment("T5", 0.3, 60), segment("T6", 0, 59.7),
        # T7 in two pieces 0.05 m apart (0.10 − 0.05 = 0.05 exactly in binary64): adjacent
        segment("T7", 0, 0.05, segment_id="T7@a"), segment("T7", 0.1, 60, segment_id="T7@b"),
    ]  # fmt: skip
    old_c = [
        circuit("L1"), circuit("L2", status="fail"), circuit("L3"), circuit("L4"),
        circuit("L5", parallel="2"), circuit("L6", parallel="2"), circuit("L7"), circuit("L8"),
        circuit("L9"),
        circuit("L0"), circuit("M1"), circuit("M2"), circuit("M3", fuse_a=""),
        circuit("K1", trench_segments="T4@0.0-60.0"), circuit("K2", trench_segments="T5@0.0-60.0"),
        circuit("K3", trench_segments="T6@0.0-60.0"), circuit("K4", trench_segments="T7@0.0-60.0"),
        circuit("K5", trench_segments="X@1"),
        # P1 → CB1 → subarray SA1 → CB2 → array AR1; Q1 → CB3 → QA → CB4 → QB → CB3 (a loop)
        circuit("P1", to_id="CB1"), circuit("SA1", "subarray", from_id="CB1", to_id="CB2"),
        circuit("AR1", "array", from_id="CB2", to_id="INV1"),
        circuit("Q1", to_id="CB3"), circuit("QA", "subarray", from_id="CB3", to_id="CB4"),
        circuit("QB", "subarray", from_id="CB4", to_id="CB3"),
    ]  # fmt: skip
    new_c = [
        circuit("L1", status="fail"), circuit("L2"), circuit("L3", size_mm2="6.0"),
        circuit("L4", parallel="2"), circuit("L5", size_mm2="6.0"),
        circuit("L6", size_mm2="8.0", parallel="1"), circuit("L7", material="Al"),
        circuit("L8", route_m="110.00"), circuit("L9", route_m="130.00"),
        circuit("L0", route_m="120.50"),
        circuit("M1", size_mm2="6.0", material="Al", route_m="125.00", cable_m="131.00"),
        circuit("M2", trench_segments="T3@0.0-50.0"),
        circuit("M3", fuse_a="20", design_current_a=""),
        circuit("K1", trench_segments="T4@0.0-30.0;T4@30.0-60.0"),
        circuit("K2", trench_segments="T5@0.3-60.0"), circuit("K3", trench_segments="T6@0.0-59.7"),
        circuit("K4", trench_segments="T7@a;T7@b"), circuit("K5", trench_segments="X@2"),
        circuit("P1", to_id="CB1", vdrop_total_pct="1.150"),
        circuit("SA1", "subarray", from_id="CB1", to_id="CB2", vdrop_total_pct="1.120"),
        circuit("AR1", "array", from_id="CB2", to_id="INV1", ampacity_a="36.5"),
        circuit("Q1", to_id="CB3", vdrop_total_pct="1.200"),
        circuit("QA", "subarray", from_id="CB3", to_id="CB4"),
        circuit("QB", "subarray", from_id="CB4", to_id="CB3"),
    ]  # fmt: skip
    summary_old = summary_of(old_c, old_s) | {"rules": "r1", "site": {"name": "North"}}
    summary_new = summary_of(new_c, new_s) | {"site": {"name": "South"}}
    summary_new["tool"] = {"name": "routeplan", "version": "0.2.0"}
    d = diff_outputs(
        write_folder(tmp_path / "a", old_c, old_s, summary=summary_old),
        write_folder(tmp_path / "b", new_c, new_s, summary=summary_new),
    )
    # the bases that differ, each "what: old → new" ("-" where absent)
    assert d.notes == (
        "routeplan version: 0.1.0 → 0.2.0",
        "rule set: r1 → -",
        "site name: North → South",
    )
    got = {
        r.circuit_id: (r.look, r.scope, r.cause, r.summary)
        for r in d.circuits.itertuples(index=False)
    }
    assert got == {
        "L1": ("now failing", "route", "", "status ok → fail"),
        "L2": ("now passing", "route", "", "status fail → ok"),
        # 4 → 6 mm²: up
        "L3": ("size up", "route", "", "size_mm2 4.0 → 6.0 (+2.0)"),
        # 1 → 2 in parallel: up
        "L4": ("size up", "route", "", "parallel 1 → 2 (+1)"),
        # 2 × 4.0 = 8 mm² → 1 × 6.0 = 6 mm²: down, though the size grew
        "L5": ("size down", "route", "", "size_mm2 4.0 → 6.0 (+2.0); parallel 2 → 1 (-1)"),
        # 2 × 4.0 = 8 mm² → 1 × 8.0 = 8 mm²: neither; no route_m change: other
        "L6": ("other", "route", "", "size_mm2 4.0 → 8.0 (+4.0); parallel 2 → 1 (-1)"),
        # a material alone is no size change
        "L7": ("other", "route", "", "material Cu → Al"),
        "L8": ("shorter", "route", "", "route_m 120.00 → 110.00 (-10.00)"),
        "L9": ("longer", "route", "", "route_m 120.00 → 130.00 (+10.00)"),
        # half a metre longer is longer too
        "L0": ("longer", "route", "", "route_m 120.00 → 120.50 (+0.50)"),
        # four changes: the three weightiest, then "…"; 4 → 6 mm² is up
        "M1": (
            "size up", "route", "",
            "size_mm2 4.0 → 6.0 (+2.0); material Cu → Al; route_m 120.00 → 125.00 (+5.00); …",
        ),
        "M2": ("other", "route", "", "other trench stretches"),
        # an empty cell shown as "-", no delta
        "M3": ("other", "value", "", "fuse_a - → 20; design_current_a 17.50 → -"),
        # K1 (T4 0.04–59.96, to 0.1 m 0.0–60.0) and K4 (0.05 m apart) are no change; K2, K3
        # cover other stretches; K5's segments are in neither schedule (named, so different)
        "K2": ("other", "route", "", "other trench stretches"),
        "K3": ("other", "route", "", "other trench stretches"),
        "K5": ("other", "route", "", "other trench stretches"),
        "AR1": ("other", "value", "", "ampacity_a 40.0 → 36.5 (-3.5)"),
        # P1 → SA1 (follows itself) → AR1 (its own value): the nearest own change
        "P1": ("other", "follows", "AR1", "vdrop_total_pct 1.100 → 1.150 (+0.050)"),
        "SA1": ("other", "follows", "AR1", "vdrop_total_pct 1.100 → 1.120 (+0.020)"),
        # Q1 → QA → QB → QA ...: a loop with no own change: no cause
        "Q1": ("other", "follows", "", "vdrop_total_pct 1.100 → 1.200 (+0.100)"),
    }  # fmt: skip


# ---- trench segments: overlaps at the OVERLAP_M limit, several cuts, lengths, field changes


def test_segment_events_at_the_overlap_limit_and_with_several_cuts(tmp_path):
    """Chainage cells chosen so that the overlaps are exact in binary64: 0.10 − 0.05 = 0.05."""
    old_s = [
        # T1: one segment 0–60 m
        segment("T1", 0, 60),
        # T2: three segments, 50–90–100–120 m (chainage "100.00" sorts before "50.00" as text)
        segment("T2", 50, 90), segment("T2", 90, 100), segment("T2", 100, 120),
        # T3: one segment 50–120 m
        segment("T3", 50, 120),
        # T4: two segments, both with the same id in the new plan
        segment("T4", 0, 10), segment("T4", 10, 20),
    ]  # fmt: skip
    new_s = [
        # T1 now 0–0.05, 0.05–0.10 and 0.10–60 m: the first touches the old one (overlap
        # 0.05 − 0 = 0.05 m at most), the second overlaps it by 0.10 − 0.05 = 0.05 m, not more
        # than OVERLAP_M: both added; the third overlaps it by 59.9 m (a new id: reshaped)
        segment("T1", 0, 0.05, segment_id="T1@a"), segment("T1", 0.05, 0.1, segment_id="T1@b"),
        segment("T1", 0.1, 60),
        # T2 merged into one 50–120 m
        segment("T2", 50, 120),
        # T3 split at 90 and 100 m, its end now 120.5 m
        segment("T3", 50, 90), segment("T3", 90, 100), segment("T3", 100, 120.5),
        segment("T4", 0, 10, strings="3"), segment("T4", 10, 20, strings="4", status="over"),
    ]  # fmt: skip
    d = diff_outputs(
        write_folder(tmp_path / "a", segments=old_s), write_folder(tmp_path / "b", segments=new_s)
    )
    two = "(2 circuits)"
    # along each trench by the chainage of a group's first segment (T1@a's group and the
    # reshaped one both start at 0.0: no old id sorts first)
    assert [tuple(r) for r in d.segments.itertuples(index=False, name=None)] == [
        ("added", "T1", (), ("T1@a",), f"T1@a {two} added"),
        (
            "reshaped", "T1", ("T1@0.0-60.0",), ("T1@0.1-60.0",),
            f"T1@0.0-60.0 {two} became T1@0.1-60.0 {two}",
        ),
        ("added", "T1", (), ("T1@b",), f"T1@b {two} added"),
        (
            "merged", "T2", ("T2@50.0-90.0", "T2@90.0-100.0", "T2@100.0-120.0"),
            ("T2@50.0-120.0",),
            f"T2@50.0-90.0 {two}, T2@90.0-100.0 {two}, T2@100.0-120.0 {two} merged at 90.0, "
            f"100.0 m into T2@50.0-120.0 {two}",
        ),
        (
            "split", "T3", ("T3@50.0-120.0",),
            ("T3@50.0-90.0", "T3@90.0-100.0", "T3@100.0-120.5"),
            f"T3@50.0-120.0 {two} split at 90.0, 100.0 m into T3@50.0-90.0 {two}, "
            f"T3@90.0-100.0 {two}, T3@100.0-120.5 {two}",
        ),
        ("changed", "T4", ("T4@0.0-10.0",), ("T4@0.0-10.0",), "T4@0.0-10.0: strings 2 → 3 (+1)"),
        (
            "changed", "T4", ("T4@10.0-20.0",), ("T4@10.0-20.0",),
            "T4@10.0-20.0: strings 2 → 4 (+2); status ok → over",
        ),
    ]  # fmt: skip
    rows = changes(d, "segment")
    # a length line where the total length changed: T1 60.00 → 59.90 m (−0.10); T3
    # 70.00 → 40 + 10 + 20.5 = 70.50 m (+0.50); T2 40 + 10 + 20 = 70 m both: none
    assert (
        "segment", "T1@0.0-60.0", "changed", "length_m", "60.00", "59.90", "-0.10", "", "",
        "total length of T1@0.0-60.0 → T1@0.1-60.0",
    ) in rows  # fmt: skip
    assert (
        "segment", "T3@50.0-120.0", "changed", "length_m", "70.00", "70.50", "+0.50", "", "",
        "total length of T3@50.0-120.0 → T3@50.0-90.0; T3@90.0-100.0; T3@100.0-120.5",
    ) in rows  # fmt: skip
    assert [r[:4] for r in rows if r[3] == "length_m"] == [
        ("segment", "T1@0.0-60.0", "changed", "length_m"),
        ("segment", "T3@50.0-120.0", "changed", "length_m"),
    ]
    assert (
        "segment", "T2@50.0-90.0", "merged", "", "T2@50.0-90.0; T2@90.0-100.0; T2@100.0-120.0",
        "T2@50.0-120.0", "", "", "", d.segments["text"][3],
    ) in rows  # fmt: skip


def test_alike_circuits_are_grouped_by_their_own_fields_only(tmp_path):
    """A circuit may bear the id of a trench segment (ids of different schedules): the
    segment's own change (strings 2 → 3) is not one of the circuit's fields, so the four
    string circuits whose ampacity fell (40.0 → 36.5: −3.5) are one line."""
    sid = "T1@0.0-60.0"
    ids = [sid, "V1", "V2", "V3"]
    d = diff_outputs(
        write_folder(tmp_path / "a", [circuit(i) for i in ids]),
        write_folder(
            tmp_path / "b",
            [circuit(i, ampacity_a="36.5") for i in ids],
            [segment("T1", 0, 60, strings="3"), segment("T1", 60, 120)],
        ),
    )
    lines = diff_lines(d)
    at = lines.index("circuits: 4 changed")
    assert lines[at:] == [
        "circuits: 4 changed",
        " their values (same route and cable):",
        f"  ~ 4 string circuits: ampacity_a (as {sid}: ampacity_a 40.0 → 36.5 (-3.5))",
        "trench segments: 1 changed",
        f"  changed: {sid}: strings 2 → 3 (+1)",
    ]


def test_segments_of_several_trenches_far_along_match_their_own(tmp_path):
    """TA has segments 0–100 and 195–200 m, TB one 0–2 m, TC (old plan only) one 0–5 m: the
    same ids in both plans but TB's strings (2 → 3); TC removed. Each segment is matched in
    its own trench, whatever the chainage of the others."""
    old_s = [
        segment("TA", 0, 100), segment("TA", 195, 200), segment("TB", 0, 2), segment("TC", 0, 5),
    ]  # fmt: skip
    new_s = [segment("TA", 0, 100), segment("TA", 195, 200), segment("TB", 0, 2, strings="3")]
    d = diff_outputs(
        write_folder(tmp_path / "a", segments=old_s), write_folder(tmp_path / "b", segments=new_s)
    )
    assert [tuple(r) for r in d.segments.itertuples(index=False, name=None)] == [
        ("changed", "TB", ("TB@0.0-2.0",), ("TB@0.0-2.0",), "TB@0.0-2.0: strings 2 → 3 (+1)"),
        ("removed", "TC", ("TC@0.0-5.0",), (), "TC@0.0-5.0 (2 circuits) removed"),
    ]


@pytest.mark.parametrize("side", ["old", "new"])
def test_a_plan_without_trench_segments(tmp_path, side):
    """One plan has no trench segment at all: every segment of the other is added or
    removed."""
    both = [segment("T1", 0, 60), segment("T1", 60, 120)]
    d = diff_outputs(
        write_folder(tmp_path / "a", segments=[] if side == "old" else both),
        write_folder(tmp_path / "b", segments=both if side == "old" else []),
    )
    event = "added" if side == "old" else "removed"
    assert d.segments["event"].tolist() == [event, event]
    assert d.segments["text"].tolist() == [
        f"T1@0.0-60.0 (2 circuits) {event}",
        f"T1@60.0-120.0 (2 circuits) {event}",
    ]


def test_a_missing_plan_folder_is_named(tmp_path):
    new = write_folder(tmp_path / "b")
    with pytest.raises(DiffError) as e:
        diff_outputs(tmp_path / "nowhere", new)
    assert str(e.value) == f"{tmp_path / 'nowhere'}: no such folder"
