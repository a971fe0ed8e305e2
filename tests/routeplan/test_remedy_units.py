"""Failure remedies (routeplan.remedy.remedies) on small circuits built by hand: the exact texts.

Each test builds a calc.SizingInput of a few invented circuits, sizes it and asks for the
remedies; the expected texts are worked out by hand from the tables the iec rule set uses
(calc/data, each file naming its source):

* design current of a string 1.25 × I_SC (IEC 62548:2016 7.x, from memory); of an a.c.
  circuit the breaker rating at or above S / (√3 · U) (IEC 60364-4-43:2008 433.1, ratings
  of IEC 60947-2, from memory: ... 315, 400, 500, 630, 800, ... 1600 A);
* capacities in the ground: IEC 60364-5-52:2009 Tables B.52.3 / B.52.5, method D2, Cu XLPE
  (from memory): 2 loaded 4 mm² 46 A, 6 mm² 58 A, 10 mm² 77 A, 16 mm² 100 A, 25 mm² 129 A;
  3 loaded 16 mm² 84 A, 185 mm² 324 A, 240 mm² 375 A, 300 mm² 419 A. A PV string cable is
  rated as the 2-loaded value × √(R20 class 2 / R20 class 5 tinned) (calc.ampacity):
  4 mm² 46 × √(4.61 / 5.09) = 43.78 A, 6 mm² 58 × √(3.08 / 3.39) = 55.28 A,
  10 mm² 77 × √(1.83 / 1.95) = 74.59 A;
* group factors, direct in ground (IEC 60364-5-52:2009 Table B.52.18, from memory):
  2 circuits touching 0.75, at 0.25 m 0.90; 3 circuits 0.65 / 0.80 / at 0.5 m 0.85;
  8 circuits touching 0.43; 12 circuits touching 0.36;
* resistance at 20 °C (IEC 60228:2004 Tables 2 and 3): class 5 tinned Cu 4 mm² 5.09,
  6 mm² 3.39, 10 mm² 1.95, 16 mm² 1.24, 25 mm² 0.795 Ω/km; class 2 Cu 16 mm² 1.15,
  25 mm² 0.727, 35 mm² 0.524, 50 mm² 0.387 Ω/km; at θ: R20 · (1 + 0.00393 (θ − 20))
  (IEC 60287-1-1:2006 Table 1 α20 of Cu), at 90 °C × 1.2751;
* d.c. drop 2 · L · I_MP · R / V_MP (Ohm's law, both poles).

Every circuit is invented: strings of I_SC 13 A, I_MP 12 A, V_MP 1000 V unless a test says
otherwise; trench segments 0.7 m deep, direct in ground, soil 2.5 K·m/W, ground 20 °C (the
reference conditions of the tables, so no other factor applies).
"""

from __future__ import annotations

import dataclasses

import numpy as np

import calc
from routeplan.pipeline import MAX_PARALLEL
from routeplan.remedy import WhatIfs, _sorted_codes, remedies
from tests.calc.test_engine_input_edges import _input as calc_input
from tests.calc.test_engine_notes import beyond_breakers

SPACING_TEXT = "(design.spacing_m where a trench has none)"
STRING_LIMIT = "limited by largest size in design.sizes_mm2.string (4 mm²)"


def _input(**changes):
    """Circuits of 20 m (tests/calc's invented circuits, see the module docstring); ``changes``
    sets any field (lists allowed; None leaves a field to its calc default)."""
    left = [k for k, v in changes.items() if v is None]
    inp = calc_input(**{k: v for k, v in changes.items() if v is not None})
    return dataclasses.replace(inp, **dict.fromkeys(left))


def _segments(spacing_m):
    """Trench segments 0.7 m deep, direct in ground, soil 2.5 K·m/W, with these spacings."""
    m = len(spacing_m)
    return dict(
        seg_depth_m=np.full(m, 0.7),
        seg_laying=np.zeros(m, dtype=int),
        seg_spacing_m=np.asarray(spacing_m, dtype=float),
        seg_soil_k_m_w=np.full(m, 2.5),
        seg_count=np.ones(m),
    )


def _remedies(inp, dp, segments: int = 1):
    """The remedy texts of ``inp`` sized with ``dp``; circuit i is "Ci", its governing stretch
    "Gi", trench segment k lies in trench "T-k"."""
    result = calc.size_circuits(inp, dp, rules="iec")
    n = len(result.ok)
    ids = np.array([f"C{i}" for i in range(n)], dtype=object)
    governing = np.array([f"G{i}" for i in range(n)], dtype=object)
    trench = np.array([f"T-{k}" for k in range(segments)], dtype=object)
    return remedies(inp, dp, "iec", result, ids, governing, trench, MAX_PARALLEL).tolist()


def test_a_plan_that_passes_has_no_remedy():
    # two strings of 20 m in one trench: 16.25 A against 0.75 × 43.78 = 32.8 A; drop
    # 2 · 0.02 km · 12 A · 5.09 · 1.2751 Ω/km / 1000 V = 0.31 % < 1 %
    inp = _input(kind=[0, 0], inc_circuit=[0, 1], inc_segment=[0, 0], **_segments([0.0]))
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    assert _remedies(inp, dp) == ["", ""]


def test_a_long_string_is_given_the_first_larger_size_that_keeps_its_drop():
    # 400 m of string cable, alone in its trench (no grouping, so no spacing remedy), the
    # parent left out (calc's default: none). Drop 2 · 0.4 · 12 · R90 / 1000:
    # 4 mm² 5.09 · 1.2751 = 6.490 Ω/km → 6.23 %; 16 mm² 1.24 · 1.2751 → 1.52 %;
    # 25 mm² 0.795 · 1.2751 = 1.0137 Ω/km → 0.973 % ≤ 1 %: the first IEC 60228 size beyond the
    # list (4) that passes is 25 mm², which is not listed.
    inp = _input(
        kind=[0], cable_m=[400.0], parent=None, inc_circuit=[0], inc_segment=[0], **_segments([0.0])
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    assert _remedies(inp, dp) == [
        "limited by largest size in design.sizes_mm2.string (4 mm²), design.drop_pct.string, "
        "design.drop_pct.dc_total (the drop through its feeders); "
        "passes with 25 mm² (add 25 to design.sizes_mm2.string)"
    ]


def test_an_ac_cable_is_given_the_sets_it_needs():
    # 300 kVA at 400 V: 433 A → a 500 A breaker; 300 mm² (the largest size) carries 419 A:
    # fails with one set (max_parallel 1). Two sets in one trench are 2 circuits touching:
    # 2 · 419 · 0.75 = 628.5 A ≥ 500 A. No larger size exists for it (IEC 60364-5-52 ends at
    # 300 mm²), so the remedy is the setting only: "2 × 300 mm²" and max_parallel = 2.
    inp = _input(kind=[2], ac_kva=[300.0], inc_circuit=[0], inc_segment=[0], **_segments([0.0]))
    dp = calc.DesignParams(sizes_ac_mm2=(300,), max_parallel=1)
    assert _remedies(inp, dp) == [
        "governed by G0; limited by largest size in design.sizes_mm2.ac (300 mm²), "
        "design.max_parallel (1); passes with 2 × 300 mm² (design.max_parallel = 2)"
    ]


def test_an_ac_cable_needing_both_a_larger_size_and_more_sets():
    # 500 A again, list (16) and one set: the larger sizes alone end at 1 × 300 mm² = 419 A;
    # more sets alone end at 12 × 16 mm² = 12 · 84 · 0.36 = 363 A: both are needed.
    # 2 × 185 mm²: 2 · 324 · 0.75 = 486 A < 500; 2 × 240 mm²: 2 · 375 · 0.75 = 562.5 A ≥ 500.
    # The drop of 16 mm² (R20 1.15 Ω/km) over 20 m at 500 A is far above 1 %: drop_pct.ac.
    inp = _input(kind=[2], ac_kva=[300.0], inc_circuit=[0], inc_segment=[0], **_segments([0.0]))
    dp = calc.DesignParams(sizes_ac_mm2=(16,), max_parallel=1)
    assert _remedies(inp, dp) == [
        "governed by G0; limited by largest size in design.sizes_mm2.ac (16 mm²), "
        "design.max_parallel (1), design.drop_pct.ac; "
        "passes with 2 × 240 mm² (add 240 to design.sizes_mm2.ac; design.max_parallel = 2)"
    ]


def test_a_circuit_no_change_can_save_keeps_only_its_limits():
    # 1500 kVA at 400 V: 2165 A → a 2500 A breaker; 12 × 300 mm² touching carry
    # 12 · 419 · 0.36 = 1810 A < 2500 A: no change of the settings saves it. Its a.c. drop
    # (far above 2 %) is no d.c. total: an a.c. cable is never limited by drop_pct.dc_total.
    inp = _input(kind=[2], ac_kva=[1500.0], inc_circuit=[0], inc_segment=[0], **_segments([0.0]))
    dp = calc.DesignParams(sizes_ac_mm2=(16,), max_parallel=1)
    assert _remedies(inp, dp) == [
        "governed by G0; limited by largest size in design.sizes_mm2.ac (16 mm²), "
        "design.max_parallel (1), design.drop_pct.ac"
    ]


def test_more_sets_in_a_shared_trench_would_make_a_passing_circuit_fail():
    # an a.c. cable (300 kVA, 500 A, 300 mm² only) beside a string (I_SC 26 A: 32.5 A) in one
    # trench. Now: 2 circuits, 0.75: the string has 0.75 · 43.78 = 32.83 A ≥ 32.5 A (passes),
    # the a.c. cable 0.75 · 419 = 314 A < 500 A (fails). With 2 a.c. sets: 3 circuits, 0.65:
    # the a.c. cable 2 · 419 · 0.65 = 545 A ≥ 500 A, the string 0.65 · 43.78 = 28.5 A < 32.5 A
    # (its list is 4 mm² only): one circuit that passes now would then fail.
    inp = _input(
        kind=[2, 0],
        ac_kva=[300.0, 100.0],
        isc_a=[13.0, 26.0],
        inc_circuit=[0, 1],
        inc_segment=[0, 0],
        **_segments([0.0]),
    )
    dp = calc.DesignParams(sizes_ac_mm2=(300,), sizes_string_mm2=(4,), max_parallel=1)
    assert _remedies(inp, dp) == [
        "governed by G0; limited by largest size in design.sizes_mm2.ac (300 mm²), "
        "design.max_parallel (1); passes with 2 × 300 mm² "
        "(design.max_parallel = 2; 1 circuits that pass now would then fail)",
        "",
    ]


def test_strings_over_the_dc_total_are_saved_by_their_feeder():
    # an array cable of 200 m carrying 2 strings (I_MP 24 A), two strings of 40 m under it.
    # Array 16 mm²: 2 · 0.2 · 24 · 1.15 · 1.2751 / 1000 = 1.408 %; strings 4 mm²:
    # 2 · 0.04 · 12 · 6.490 / 1000 = 0.623 %; total 2.031 % > 2 %: the strings fail on the d.c.
    # total though within their own 1 %. Array 25 mm²: 2 · 0.2 · 24 · 0.727 · 1.2751 / 1000
    # = 0.890 %, total 1.513 % ≤ 2 %: the strings pass unchanged once the array is 25 mm².
    inp = _input(
        kind=[1, 0, 0],
        parent=[-1, 0, 0],
        n_strings=[2, 1, 1],
        cable_m=[200.0, 40.0, 40.0],
        inc_circuit=[0, 1, 2],
        inc_segment=[0, 1, 2],
        **_segments([0.0, 0.0, 0.0]),
    )
    dp = calc.DesignParams(sizes_array_mm2=(16,), sizes_string_mm2=(4,), max_parallel=1)
    string = (
        "limited by design.drop_pct.dc_total (the drop through its feeders); "
        "passes once C0 is 25 mm² (add 25 to design.sizes_mm2.array)"
    )
    assert _remedies(inp, dp, segments=3) == [
        "limited by largest size in design.sizes_mm2.array (16 mm²), design.max_parallel (1), "
        "design.drop_pct.array; passes with 25 mm² (add 25 to design.sizes_mm2.array)",
        string,
        string,
    ]


def test_a_string_and_its_feeder_must_both_grow():
    # an array cable of 100 m carrying 10 strings (design 10 · 1.25 · 13 = 162.5 A, I_MP
    # 120 A), a string of 100 m under it. String 6 mm²: 2 · 0.1 · 12 · 3.39 · 1.2751 / 1000
    # = 1.037 % > 1 %; 10 mm²: 1.95 · 1.2751 → 0.597 %. Array 35 mm²: 2 · 0.1 · 120 · 0.524
    # · 1.2751 / 1000 = 1.604 % > 1.5 %; 50 mm²: 0.387 · 1.2751 → 1.184 % (183 A ≥ 162.5 A);
    # total 1.78 % ≤ 2 %: the string passes with 10 mm² once the array is 50 mm².
    inp = _input(
        kind=[1, 0],
        parent=[-1, 0],
        n_strings=[10, 1],
        cable_m=[100.0, 100.0],
        inc_circuit=[0, 1],
        inc_segment=[0, 1],
        **_segments([0.0, 0.0]),
    )
    dp = calc.DesignParams(sizes_array_mm2=(16,), sizes_string_mm2=(4,))
    got = _remedies(inp, dp, segments=2)
    assert got[1] == (
        "limited by largest size in design.sizes_mm2.string (4 mm²), design.drop_pct.string, "
        "design.drop_pct.dc_total (the drop through its feeders); passes with 10 mm² once C0 "
        "is 50 mm² (add 10 to design.sizes_mm2.string; add 50 to design.sizes_mm2.array)"
    )


def test_spacing_remedies_name_each_circuits_own_trenches():
    # strings of I_SC 28 A (35 A): C0 runs in trenches T-0 and T-1, C1 in T-0, C2 in T-1; in
    # each trench 2 circuits touching: 0.75 · 43.78 = 32.83 A < 35 A, all three fail. 6 mm²:
    # 0.75 · 55.28 = 41.5 A ≥ 35 A. At 0.25 m: 0.90 · 43.78 = 39.4 A ≥ 35 A with 4 mm²:
    # each circuit is offered the spacing of its own trenches, and only 0.25 m (it passes
    # there already, so 0.5 m is not offered as well).
    inp = _input(
        kind=[0, 0, 0],
        isc_a=[28.0, 28.0, 28.0],
        inc_circuit=[0, 0, 1, 2],
        inc_segment=[0, 1, 0, 1],
        **_segments([0.0, 0.0]),
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    size = "passes with 6 mm² (add 6 to design.sizes_mm2.string)"
    assert _remedies(inp, dp, segments=2) == [
        f"governed by G0; {STRING_LIMIT}; {size}; or passes with spacing_m = 0.25 on trench "
        f"T-0, T-1 {SPACING_TEXT}",
        f"governed by G1; {STRING_LIMIT}; {size}; or passes with spacing_m = 0.25 on trench "
        f"T-0 {SPACING_TEXT}",
        f"governed by G2; {STRING_LIMIT}; {size}; or passes with spacing_m = 0.25 on trench "
        f"T-1 {SPACING_TEXT}",
    ]


def test_a_trench_already_at_a_spacing_is_not_named_and_half_a_metre_is_tried_next():
    # T-0 (touching): C0 and C1, I_SC 28 A, fail (see above); T-1 already at 0.25 m: C0 and
    # C2, 0.90 · 43.78 = 39.4 A ≥ 35 A (C2 passes). C0's remedy names T-0 only.
    # T-2 (touching): C3, C4, C5 of I_SC 29 A (36.25 A): 0.65 · 43.78 = 28.5 A and at 0.25 m
    # 0.80 · 43.78 = 35.02 A both < 36.25 A; at 0.5 m 0.85 · 43.78 = 37.2 A ≥ 36.25 A.
    # Their size: 6 mm² 0.65 · 55.28 = 35.9 A < 36.25 A, 10 mm² 0.65 · 74.59 = 48.5 A.
    inp = _input(
        kind=[0] * 6,
        isc_a=[28.0, 28.0, 28.0, 29.0, 29.0, 29.0],
        inc_circuit=[0, 0, 1, 2, 3, 4, 5],
        inc_segment=[0, 1, 0, 1, 2, 2, 2],
        **_segments([0.0, 0.25, 0.0]),
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    six = "passes with 6 mm² (add 6 to design.sizes_mm2.string)"
    ten = "passes with 10 mm² (add 10 to design.sizes_mm2.string)"
    half = f"or passes with spacing_m = 0.5 on trench T-2 {SPACING_TEXT}"
    assert _remedies(inp, dp, segments=3) == [
        f"governed by G0; {STRING_LIMIT}; {six}; or passes with spacing_m = 0.25 on trench "
        f"T-0 {SPACING_TEXT}",
        f"governed by G1; {STRING_LIMIT}; {six}; or passes with spacing_m = 0.25 on trench "
        f"T-0 {SPACING_TEXT}",
        "",
        f"governed by G3; {STRING_LIMIT}; {ten}; {half}",
        f"governed by G4; {STRING_LIMIT}; {ten}; {half}",
        f"governed by G5; {STRING_LIMIT}; {ten}; {half}",
    ]


def test_spacing_is_offered_for_capacity_not_for_a_drop_it_would_also_cure():
    # conductor temperature from loading: θ = 20 + 70 · (I / I_z)², I = 12 A. C0 and C1
    # (158 m, I_SC 26 A: 32.5 A) share touching T-0: I_z = 0.75 · 43.78 = 32.83 A, θ = 29.35 °C,
    # R = 5.09 · (1 + 0.00393 · 9.35) = 5.277 Ω/km, drop 2 · 0.158 · 12 · 5.277 / 1000
    # = 2.001 % > 2 %: they fail on drop only. At 0.25 m (I_z 39.4 A, θ 26.49 °C) the drop
    # would be 1.979 %, but spacing is offered only to circuits failing on capacity through
    # grouping: they are given the larger size (6 mm²) alone.
    # C2 and C3 (20 m, I_SC 28 A) in touching T-1 fail on capacity and pass at 0.25 m.
    inp = _input(
        kind=[0, 0, 0, 0],
        cable_m=[158.0, 158.0, 20.0, 20.0],
        isc_a=[26.0, 26.0, 28.0, 28.0],
        inc_circuit=[0, 1, 2, 3],
        inc_segment=[0, 0, 1, 1],
        **_segments([0.0, 0.0]),
    )
    dp = calc.DesignParams(
        sizes_string_mm2=(4,), conductor_temp="loading", drop_string_pct=2.0, drop_dc_total_pct=2.0
    )
    drop = (
        "limited by largest size in design.sizes_mm2.string (4 mm²), design.drop_pct.string, "
        "design.drop_pct.dc_total (the drop through its feeders); "
        "passes with 6 mm² (add 6 to design.sizes_mm2.string)"
    )
    capacity = (
        f"{STRING_LIMIT}; passes with 6 mm² (add 6 to design.sizes_mm2.string); "
        f"or passes with spacing_m = 0.25 on trench T-1 {SPACING_TEXT}"
    )
    assert _remedies(inp, dp, segments=2) == [
        drop,
        drop,
        f"governed by G2; {capacity}",
        f"governed by G3; {capacity}",
    ]


def test_a_string_exactly_at_the_dc_total_is_not_limited_by_it():
    # a string of I_SC 40 A (50 A > 43.78 A: fails on capacity, alone in its trench) whose
    # drop is the d.c. total exactly: 2 · L · 12 · 6.490 / 1000 = 2 % at L = 128.4 m (the
    # length is scaled from the drop at 100 m, so that the drop is 2 % to rounding). Within
    # the limit, the d.c. total is not among its limits. 6 mm²: 55.28 A ≥ 50 A.
    dp = calc.DesignParams(sizes_string_mm2=(4,), drop_string_pct=3.0, drop_dc_total_pct=2.0)

    def string(length_m):
        return _input(
            kind=[0],
            cable_m=[length_m],
            isc_a=[40.0],
            inc_circuit=[0],
            inc_segment=[0],
            **_segments([0.0]),
        )

    def drop(length_m):
        return float(calc.size_circuits(string(length_m), dp).vdrop_total_pct[0])

    per_100_m = drop(100.0)
    assert abs(per_100_m - 2 * 0.1 * 12 * 5.09 * (1 + 0.00393 * 70) / 1000 * 100) < 1e-3
    expected = [
        f"governed by G0; {STRING_LIMIT}; passes with 6 mm² (add 6 to design.sizes_mm2.string)"
    ]
    length_m = 100.0 * 2.0 / per_100_m
    assert abs(drop(length_m) - 2.0) < 1e-9
    assert _remedies(string(length_m), dp) == expected
    # and at the limit plus the tolerance the remedy shares with calc.failure_causes (1e-6 %),
    # the length stepped to the float at which the drop is that value exactly
    edge = 2.0 + 1e-6
    length_m = 100.0 * edge / per_100_m
    for _ in range(200):
        if drop(length_m) == edge:
            break
        length_m = np.nextafter(length_m, np.inf if drop(length_m) < edge else -np.inf)
    assert drop(length_m) == edge
    assert _remedies(string(length_m), dp) == expected


def test_circuits_without_trench_segments_are_given_their_remedy():
    # calc sizes a plan with no trench segment (every circuit in air, the segment fields left
    # out): the remedy too. A 400 m string in air, alone (EN 50618:2014 Table A.3, from memory:
    # 4 mm² two adjacent on a surface 44 A ≥ 16.25 A), its drop at the PV cable's 120 °C
    # (EN 50618:2014, the conductor temperature of Table A.3), R20 · (1 + 0.00393 · 100):
    # 4 mm² 5.09 · 1.393 → 2 · 0.4 · 12 · 7.090 / 1000 = 6.81 %; 25 mm² 0.795 · 1.393
    # → 1.063 % > 1 %; 35 mm² 0.565 · 1.393 → 0.756 % ≤ 1 %. No segment: no spacing remedy.
    inp = _input(kind=[0], cable_m=[400.0], air_m=[400.0])
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    assert _remedies(inp, dp, segments=0) == [
        "limited by largest size in design.sizes_mm2.string (4 mm²), design.drop_pct.string, "
        "design.drop_pct.dc_total (the drop through its feeders); "
        "passes with 35 mm² (add 35 to design.sizes_mm2.string)"
    ]


def test_whole_number_float_incidences_name_the_same_trenches():
    # calc takes incidences as whole-number floats (and the spacing left out as 0 m): two
    # strings of I_SC 28 A touching in T-0 (as in the spacing test above)
    inp = _input(
        kind=[0, 0],
        isc_a=[28.0, 28.0],
        inc_circuit=[0.0, 1.0],
        inc_segment=[0.0, 0.0],
        seg_depth_m=[0.7],
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    text = (
        f"{STRING_LIMIT}; passes with 6 mm² (add 6 to design.sizes_mm2.string); or passes with "
        f"spacing_m = 0.25 on trench T-0 {SPACING_TEXT}"
    )
    assert _remedies(inp, dp) == [f"governed by G0; {text}", f"governed by G1; {text}"]


def test_a_passing_feeder_given_a_larger_size_frees_its_trench_for_a_string():
    # an array cable C0 of 4 strings of I_SC 20 A (design 4 · 1.25 · 20 = 100 A) and one of
    # its strings C1 in one touching trench. C1 is fused (4 strings in parallel) at the first
    # gPV rating ≥ 1.5 · 20 A = 30 A (IEC 62548:2016, from memory; calc/data's gPV list), and
    # its cable carries 30 A. C0, 16 mm² only: one set, 2 circuits 0.75 · 100 = 75 A < 100 A;
    # two sets, 3 circuits 0.65 · 2 · 100 = 130 A ≥ 100 A: C0 passes with 2 × 16 mm²; C1 then
    # has 0.65 · 43.78 = 28.46 A < 30 A: it fails. With the larger array sizes C0 is one set of
    # 35 mm² (0.75 · 155 = 116 A ≥ 100 A; 25 mm²: 0.75 · 129 = 96.75 A < 100 A), the trench
    # holds 2 circuits and C1's 4 mm² has 0.75 · 43.78 = 32.83 A ≥ 30 A: C1 passes unchanged
    # once C0 is 35 mm². Or at 0.25 m, 3 circuits: 0.80 · 43.78 = 35.02 A ≥ 30 A.
    inp = _input(
        kind=[1, 0],
        parent=[-1, 0],
        n_strings=[4, 1],
        isc_a=[20.0, 20.0],
        inc_circuit=[0, 1],
        inc_segment=[0, 0],
        **_segments([0.0]),
    )
    dp = calc.DesignParams(sizes_array_mm2=(16,), sizes_string_mm2=(4,), max_parallel=2)
    assert _remedies(inp, dp) == [
        "",
        f"governed by G1; {STRING_LIMIT}; passes once C0 is 35 mm² (add 35 to "
        f"design.sizes_mm2.array); or passes with spacing_m = 0.25 on trench T-0 {SPACING_TEXT}",
    ]


def test_the_spacings_tried_are_those_both_grouping_tables_give():
    # IEC 60364-5-52:2009 Table B.52.18 (direct in ground) tabulates clearances of nil, one
    # cable diameter, 0.125 m, 0.25 m and 0.5 m; Table B.52.19 (ducts in the ground) nil,
    # 0.25 m, 0.5 m and 1.0 m (both from memory): a clear spacing both give is 0.25 m or 0.5 m
    from routeplan.remedy import _common_spacings_m

    assert _common_spacings_m() == (0.25, 0.5)


def test_circuits_grouped_in_air_without_any_trench_are_given_a_size_not_a_spacing():
    # Two strings of I_SC 32 A (design 1.25 · 32 = 40 A) bunched on one air stretch, no trench
    # segment and the incidences left out. EN 50618:2014 Table A.3 (from memory), two adjacent
    # on a surface: 4 mm² 44 A, 6 mm² 57 A; Table A.4 starts at 60 °C with 1.00 (calc takes
    # the first row below it: the 40 °C air); IEC 60364-5-52:2009 Table B.52.17, 2 circuits
    # bunched 0.80. 4 mm²: 0.80 · 44 = 35.2 A < 40 A, fails on grouping; 6 mm²: 0.80 · 57 =
    # 45.6 A ≥ 40 A. Spacing is a trench remedy: none is offered where no trench exists.
    inp = _input(
        kind=[0, 0],
        isc_a=[32.0, 32.0],
        air_m=[20.0, 20.0],
        air_count=[2],
        air_inc_circuit=[0, 1],
        air_inc_stretch=[0, 0],
        inc_circuit=None,
        inc_segment=None,
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    result = calc.size_circuits(inp, dp, rules="iec")
    assert result.factor_group.tolist() == [0.8, 0.8] and not result.ok.any()
    text = f"{STRING_LIMIT}; passes with 6 mm² (add 6 to design.sizes_mm2.string)"
    assert _remedies(inp, dp, segments=0) == [f"governed by G0; {text}", f"governed by G1; {text}"]


def _sized_whatifs(inp, dp, segments: int = 1):
    """The remedy texts of ``inp`` (as :func:`_remedies`) and the what-ifs they sized, by key."""
    result = calc.size_circuits(inp, dp, rules="iec")
    n = len(result.ok)
    whatifs = WhatIfs("iec")
    texts = remedies(
        inp,
        dp,
        "iec",
        result,
        np.array([f"C{i}" for i in range(n)], dtype=object),
        np.array([f"G{i}" for i in range(n)], dtype=object),
        np.array([f"T-{k}" for k in range(segments)], dtype=object),
        MAX_PARALLEL,
        whatifs,
    )
    return texts.tolist(), whatifs.kept


def test_a_string_at_index_0_names_its_feeder_above_it():
    # test_a_string_and_its_feeder_must_both_grow with the two circuits in the other order:
    # the string (index 0) passes with 10 mm² once its array cable (index 1) is 50 mm²; the
    # walk up the chain goes on from index 0 like from any other
    inp = _input(
        kind=[0, 1],
        parent=[1, -1],
        n_strings=[1, 10],
        cable_m=[100.0, 100.0],
        inc_circuit=[0, 1],
        inc_segment=[0, 1],
        **_segments([0.0, 0.0]),
    )
    dp = calc.DesignParams(sizes_array_mm2=(16,), sizes_string_mm2=(4,))
    assert _remedies(inp, dp, segments=2)[0] == (
        "limited by largest size in design.sizes_mm2.string (4 mm²), design.drop_pct.string, "
        "design.drop_pct.dc_total (the drop through its feeders); passes with 10 mm² once C1 "
        "is 50 mm² (add 10 to design.sizes_mm2.string; add 50 to design.sizes_mm2.array)"
    )


def test_a_circuit_saved_by_another_circuits_change_is_not_credited_with_it():
    # an array cable C0 of 6 strings of I_SC 20 A (design 6 · 1.25 · 20 = 150 A) and a string
    # C1 of I_SC 24 A (design 30 A) that is not under it, one touching trench. 16 mm² only,
    # max_parallel 2: C0 fails with 2 sets (3 circuits 0.65 · 2 · 100 = 130 A < 150 A), and C1
    # fails (0.65 · 43.78 = 28.46 A < 30 A). With the larger array sizes C0 is one set of
    # 70 mm² (0.75 · 225 = 168.75 A ≥ 150 A; 50 mm²: 0.75 · 183 = 137.25 A < 150 A): the trench
    # holds 2 circuits and C1's 4 mm² passes unchanged (0.75 · 43.78 = 32.83 A ≥ 30 A). No cable
    # of C1's own chain changed and it needs no setting: that what-if gives C1 no remedy (the
    # array's own text names the change). At 0.25 m, 3 circuits: C0 0.80 · 2 · 100 = 160 A,
    # C1 0.80 · 43.78 = 35.02 A: both pass.
    inp = _input(
        kind=[1, 0],
        parent=[-1, -1],
        n_strings=[6, 1],
        isc_a=[20.0, 24.0],
        inc_circuit=[0, 1],
        inc_segment=[0, 0],
        **_segments([0.0]),
    )
    dp = calc.DesignParams(sizes_array_mm2=(16,), sizes_string_mm2=(4,), max_parallel=2)
    spacing = f"passes with spacing_m = 0.25 on trench T-0 {SPACING_TEXT}"
    assert _remedies(inp, dp) == [
        "governed by G0; limited by largest size in design.sizes_mm2.array (16 mm²), "
        "design.max_parallel (2); passes with 70 mm² (add 70 to design.sizes_mm2.array); "
        f"or {spacing}",
        f"governed by G1; {STRING_LIMIT}; {spacing}",
    ]


def test_the_whatifs_sized_are_named_by_what_they_change():
    # the long string of test_a_long_string_is_given_the_first_larger_size_that_keeps_its_drop:
    # the larger string sizes (IEC 60228 sizes beyond the list) save it, so no other what-if
    # is sized (alone in its trench, it fails on drop: no spacing either); the what-if is kept,
    # under a key naming the setting it changes, in the WhatIfs given
    inp = _input(
        kind=[0], cable_m=[400.0], parent=None, inc_circuit=[0], inc_segment=[0], **_segments([0.0])
    )
    dp = calc.DesignParams(sizes_string_mm2=(4,))
    texts, kept = _sized_whatifs(inp, dp)
    assert texts[0].endswith("passes with 25 mm² (add 25 to design.sizes_mm2.string)")
    assert list(kept) == [
        "[('sizes_string_mm2', '(4.0, 6.0, 10.0, 16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, "
        "150.0, 185.0, 240.0)')]"
    ]
    assert kept[next(iter(kept))]["size_mm2"].tolist() == [25.0]


def test_no_wider_setting_is_tried_at_the_highest_max_parallel_nor_spacing_for_a_lone_set():
    # the a.c. cable of test_a_circuit_no_change_can_save_keeps_only_its_limits (2500 A,
    # nothing saves it). With max_parallel 1 its one set is alone in the trench (group factor
    # 1): larger sizes, more sets and both are tried, no spacing (none changes a lone set).
    # With max_parallel at the highest site.toml accepts no wider setting exists: larger sizes
    # only, then the spacings for its 12 touching sets (0.36).
    inp = _input(kind=[2], ac_kva=[1500.0], inc_circuit=[0], inc_segment=[0], **_segments([0.0]))
    sizes = (
        "[('sizes_ac_mm2', '(16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0, 185.0, 240.0, "
        "300.0)')]"
    )
    wide = f"[('max_parallel', '{MAX_PARALLEL}')]"
    both = f"[('max_parallel', '{MAX_PARALLEL}'), ('sizes_ac_mm2', " + sizes.split(", ", 1)[1]
    _, kept = _sized_whatifs(inp, calc.DesignParams(sizes_ac_mm2=(16,), max_parallel=1))
    assert list(kept) == [sizes, wide, both]
    dp = calc.DesignParams(sizes_ac_mm2=(16,), max_parallel=MAX_PARALLEL)
    texts, kept = _sized_whatifs(inp, dp)
    assert list(kept) == [sizes, "spacing_m 0.25", "spacing_m 0.5"]
    assert texts == [
        "governed by G0; limited by largest size in design.sizes_mm2.ac (16 mm²), "
        f"design.max_parallel ({MAX_PARALLEL}), design.drop_pct.ac"
    ]


def test_a_circuit_failing_for_a_reason_no_setting_here_changes_has_no_limit_nor_remedy():
    # Ib 5000 A on an a.c. cable in air: above the largest IEC 60947-2 breaker rating (4000 A,
    # from memory; tests/calc/test_engine_notes.py), so it fails with no protective device,
    # neither on capacity nor on drop; no size, set or spacing gives it one: an empty text
    # (the schedule's note says why)
    dp = calc.DesignParams(max_parallel=8)
    assert _remedies(beyond_breakers(), dp, segments=0) == [""]


def test_trench_names_are_ranked_as_python_sorts_their_text():
    # the documented behaviour of _sorted_codes: each value's rank among the distinct values
    # in Python's order of their text ("T-10" before "T-2"); a missing name (None) is a value
    # of its own, written "nan" (pandas.factorize with use_na_sentinel=False), never given
    # another name's rank
    rank, text = _sorted_codes(np.array(["T-2", "T-10", "T-2", "A"], dtype=object))
    assert rank.tolist() == [2, 1, 2, 0] and text.tolist() == ["A", "T-10", "T-2"]
    rank, text = _sorted_codes(np.array(["T-2", None, "T-1"], dtype=object))
    assert rank.tolist() == [1, 2, 0] and text.tolist() == ["T-1", "T-2", "nan"]
