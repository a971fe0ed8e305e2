"""Notes and protection texts of the sizing engine, each recomputed by hand from the sources.

Sources: IEC 60228:2004 Tables 2/3 (R20), IEC 60287-1-1 (R at temperature, α20 Cu 3.93e-3),
EN 50618:2014 Table A.3 (PV cable in air, from memory) with its 120 °C basis, IEC 60364-5-52:2009
Tables B.52.12 (method F, from memory) and B.52.14 (XLPE 40 °C 0.91, confirmed),
IEC 60364-4-43:2008 Table 43A (k = 143) and 433.1, IEC 62548:2016 (from memory). Sites invented.
"""

from types import SimpleNamespace

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, failure_causes, size_circuits


def _array_with_strings(array_m):
    """Array 0 with strings 1 and 2 (100 m each), all in air at 40 °C."""
    return SizingInput(
        kind=np.array([1, 0, 0], dtype=np.int8),
        cable_m=np.array([array_m, 100.0, 100.0]),
        air_m=np.array([array_m, 100.0, 100.0]),
        parent=np.array([-1, 0, 0]),
        isc_a=np.full(3, 13.0),
        imp_a=np.full(3, 12.0),
        vmp_v=np.full(3, 1000.0),
        n_strings=np.array([2, 1, 1]),
    )


def test_array_drop_beyond_what_its_strings_leave():
    # strings (12 A, 1000 V): PV cable at its 120 °C basis, R = R20 (1 + 0.00393 · 100);
    # 6 mm²: 3.39 · 1.393 Ω/km -> 2 · 0.1 · 12 · 4.722 = 11.3 V = 1.13 % > 1 %;
    # 10 mm²: 1.95 · 1.393 = 2.71635 Ω/km -> 6.519 V = 0.652 %
    string_pct = 100 * 2 * 0.1 * 12.0 * 1.95 * 1.393 / 1000.0
    # array (2 × 12 = 24 A, 400 m), budget min(1.5, 2 - 0.652) = 1.348 %; sizes 16 and 25 mm²
    # only, one conductor per pole: 25 mm² XLPE at 90 °C, R = 0.727 · 1.2751 ->
    # 2 · 0.4 · 24 · 0.92700 = 17.80 V
    array_pct = 100 * 2 * 0.4 * 24.0 * 0.727 * 1.2751 / 1000.0
    design = DesignParams(sizes_array_mm2=(16.0, 25.0), max_parallel=1)
    r = size_circuits(_array_with_strings(400.0), design)
    assert r.size_mm2.tolist() == [25.0, 10.0, 10.0]
    assert_allclose(r.vdrop_pct, [array_pct, string_pct, string_pct])
    assert_allclose(r.vdrop_limit_pct, [2.0 - string_pct, 1.0, 1.0])
    assert_allclose(r.vdrop_total_pct, [array_pct + string_pct] * 3)
    assert r.ok.tolist() == [False, False, False]
    assert r.note.tolist() == [
        "voltage drop 1.78 % exceeds 1.35 % (d.c. total 2 % less its strings' 0.65 %) with "
        "largest allowed 25 mm² Cu",
        "cumulative d.c. drop 2.43 % exceeds 2 % (feeder circuit 0)",
        "cumulative d.c. drop 2.43 % exceeds 2 % (feeder circuit 0)",
    ]
    causes = failure_causes(r)
    assert causes["drop"].tolist() == [True, False, False]
    assert causes["other"].tolist() == [False, True, True]
    assert not causes["capacity"].any()
    # the array's 2 strings are in parallel at its combiner: (2 − 1) × 1.25 × 13 A = 16.25 A,
    # and no module maximum series fuse is given (2 strings: no fuse assumed, common practice)
    assert r.protection.tolist() == [
        "alone on its inverter input: no backfeed",
        "no string fuse needed; 2 string(s) in parallel",
        "no string fuse needed; 2 string(s) in parallel",
    ]
    # with two conductors per pole allowed the array takes 2 × 25 mm²: half the drop, 0.89 %
    r = size_circuits(_array_with_strings(400.0), DesignParams(sizes_array_mm2=(16.0, 25.0)))
    assert r.parallel.tolist() == [2, 1, 1] and r.ok.all()
    assert_allclose(r.vdrop_pct[0], array_pct / 2)


def test_short_circuit_note():
    # 25 kA for 0.5 s, Cu XLPE k = 143 (Table 43A): S ≥ 25000 · √0.5 / 143 = 123.6 mm²
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([20.0]),
        air_m=np.array([20.0]),
        ac_kva=np.array([50.0]),
        ac_v=np.array([400.0]),
    )
    r = size_circuits(inp, DesignParams(fault_ka=25.0, clear_s=0.5, sizes_ac_mm2=(70.0, 95.0)))
    assert_allclose(r.sc_min_mm2, [25e3 * np.sqrt(0.5) / 143.0])
    assert r.note.tolist() == [
        "short circuit 25 kA for 0.5 s needs 124 mm² per conductor (adiabatic, IEC 60364-4-43)"
    ]


def beyond_breakers() -> SizingInput:
    """An a.c. circuit of 10 m in air whose Ib (5000 A, the datasheet maximum) is above the
    largest IEC 60947-2 breaker rating (4000 A, from memory): no protective device fits it."""
    return SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([3000.0]),
        ac_v=np.array([800.0]),
        ac_max_a=np.array([5000.0]),
    )


def test_no_breaker_and_parallel_sets_in_the_note():
    # Ib 5000 A (datasheet maximum) is above the largest IEC 60947-2 rating (4000 A, from
    # memory); the cable is held to Ib: 4 × 300 mm² in trefoil, 703 A (B.52.12 method F, from
    # memory) × 0.91 = 639.7 A per set, 2559 A in all
    r = size_circuits(beyond_breakers())
    assert r.parallel.tolist() == [4] and r.size_mm2.tolist() == [300.0]
    assert_allclose(r.ampacity_a, [4 * 703.0 * 0.91])
    assert np.isnan(r.ac_breaker_a[0]) and r.ac_ib_a.tolist() == [5000.0]
    assert r.note.tolist() == [
        "Ib 5000 A exceeds the largest iec60947-2 breaker rating; needs 5000 A after derating "
        "0.91; largest allowed 4×300 mm² Cu carries 2559 A"
    ]
    assert r.protection.tolist() == [""]


def test_breaker_and_string_fuse_texts():
    # a.c.: 250 kVA at 800 V, Ib = 250000 / (√3 · 800) = 180.4 A -> IEC 60947-2 In 200 A; the
    # cable needs 200 A: 50 mm² trefoil, 207 A (B.52.12 method F, from memory) × 0.91 = 188.4 A
    # is too little, 70 mm² 268 × 0.91 = 243.9 A
    # strings: 12 in parallel, I_MOD_MAX_OCPR 25 A -> fuse 1.5 · 13 = 19.5 A -> 20 A gPV
    inp = SizingInput(
        kind=np.array([2, 0, 0], dtype=np.int8),
        cable_m=np.array([10.0, 20.0, 20.0]),
        air_m=np.array([10.0, 20.0, 20.0]),
        isc_a=np.full(3, 13.0),
        imp_a=np.full(3, 12.0),
        vmp_v=np.full(3, 1000.0),
        strings_in_parallel=np.array([1, 12, 12]),
        max_fuse_a=np.full(3, 25.0),
        fuse_a=np.array([np.nan, np.nan, 32.0]),
        ac_kva=np.array([250.0, np.nan, np.nan]),
        ac_v=np.array([800.0, np.nan, np.nan]),
    )
    r = size_circuits(inp)
    assert r.size_mm2[0] == 70.0 and r.ac_breaker_a[0] == 200.0
    assert r.protection.tolist() == [
        "breaker 200 A (iec60947-2): Ib 180 A ≤ In ≤ Iz 244 A",
        "string fuse 20 A gPV; 12 strings in parallel",
        "string fuse 32 A gPV; 12 strings in parallel",
    ]
    # the fixed 32 A fuse is outside 19.5 A ... min(2.4 · 13, 25) = 25 A
    assert r.note.tolist() == [
        "",
        "",
        "fixed string fuse 32 A outside the IEC 62548 range 19.5-25.0 A",
    ]
    assert r.ok.tolist() == [True, True, False]


def test_no_environment_note():
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([20.0]),
        isc_a=np.array([13.0]),
        imp_a=np.array([12.0]),
        vmp_v=np.array([1000.0]),
    )
    r = size_circuits(inp)
    assert r.note.tolist() == ["no route environment given: in air assumed"]
    assert r.ok.tolist() == [True] and r.governing_env.tolist() == ["air"]


def test_failure_causes_and_their_tolerances():
    # capacity: design current above the capacity by more than 1e-6 relative; drop: above the
    # budget by more than 1e-6 %; exactly at those edges a circuit meets the limit
    amp, lim = 100.0, 1.0
    result = SimpleNamespace(
        ok=np.array([False] * 6),
        design_current_a=np.array([150.0, amp * (1 + 1e-6), amp * (1 + 0.5e-6), 50.0, 50.0, 50.0]),
        ampacity_a=np.full(6, amp),
        vdrop_pct=np.array([0.5, 0.5, 0.5, lim + 0.5, lim + 1e-6, lim + 0.5e-6]),
        vdrop_limit_pct=np.full(6, lim),
    )
    causes = failure_causes(result)
    assert causes["capacity"].tolist() == [True, False, False, False, False, False]
    assert causes["drop"].tolist() == [False, False, False, True, False, False]
    assert causes["other"].tolist() == [False, True, True, False, True, True]
    # passing circuits have no cause
    result.ok = np.ones(6, dtype=bool)
    assert not any(v.any() for v in failure_causes(result).values())


def test_two_parallel_sets_in_the_note():
    # 1 MVA at 800 V (In 800 A, IEC 60947-2) on at most 2 × 240 mm² in air: 2 × 607 A (B.52.12
    # trefoil, from memory) × 0.91 = 1104.7 A is enough; limited to 95 mm² it is not:
    # 2 × 328 A × 0.91 = 597 A
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([1000.0]),
        ac_v=np.array([800.0]),
    )
    r = size_circuits(inp, DesignParams(max_parallel=2, sizes_ac_mm2=(70.0, 95.0)))
    assert r.note.tolist() == [
        "needs 800 A after derating 0.91; largest allowed 2×95 mm² Cu carries 597 A"
    ]
    causes = failure_causes(r)
    assert causes["capacity"].tolist() == [True] and causes["other"].tolist() == [False]


def test_cumulative_drop_with_the_array_listed_last():
    # strings 0 and 1 on array 2 (the last circuit): each string's path adds the array's drop;
    # a string straight to an inverter (circuit 3) has its own drop as its path
    inp = SizingInput(
        kind=np.array([0, 0, 1, 0], dtype=np.int8),
        cable_m=np.array([100.0, 100.0, 100.0, 100.0]),
        air_m=np.array([100.0, 100.0, 100.0, 100.0]),
        parent=np.array([2, 2, -1, -1]),
        isc_a=np.full(4, 13.0),
        imp_a=np.full(4, 12.0),
        vmp_v=np.full(4, 1000.0),
        n_strings=np.array([1, 1, 2, 1]),
    )
    r = size_circuits(inp)
    own = r.vdrop_pct
    assert_allclose(r.vdrop_total_pct, [own[0] + own[2], own[1] + own[2], own[2] + own[0], own[3]])
    assert r.ok.all()


def test_a_string_path_exactly_at_the_dc_total_passes():
    # the d.c. total set to the string's drop plus the array's (hand-computed as in
    # test_array_drop_beyond_what_its_strings_leave, array on 35 mm² at 90 °C, 24 A, 400 m)
    string_pct = 100 * 2 * 0.1 * 12.0 * 1.95 * 1.393 / 1000.0
    array_pct = 100 * 2 * 0.4 * 24.0 * 0.524 * 1.2751 / 1000.0
    design = DesignParams(drop_dc_total_pct=string_pct + array_pct, sizes_array_mm2=(35.0,))
    r = size_circuits(_array_with_strings(400.0), design)
    assert r.size_mm2.tolist() == [35.0, 10.0, 10.0]
    assert_allclose(r.vdrop_total_pct, [string_pct + array_pct] * 3)
    assert r.ok.all() and r.note.tolist() == ["", "", ""]


def test_a_breaker_missing_fails_the_circuit_even_when_the_cable_carries():
    # Ib 5000 A, above the largest IEC 60947-2 rating (4000 A, from memory); 8 × 300 mm²
    # (703 × 0.91 = 639.7 A a set, 5118 A in all) carry it, but no breaker protects them
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([3000.0]),
        ac_v=np.array([800.0]),
        ac_max_a=np.array([5000.0]),
    )
    r = size_circuits(inp, DesignParams(max_parallel=8))
    assert r.parallel.tolist() == [8] and r.ok.tolist() == [False]
    assert r.note.tolist() == [
        "Ib 5000 A exceeds the largest iec60947-2 breaker rating; no overload protective device"
    ]
    assert failure_causes(r)["other"].tolist() == [True]


def test_capacity_notes_of_arrays_name_a_backfeed_only_where_it_decides():
    # array 0 alone (10 strings, 162.5 A) on 16 mm² only: 115 A (method E) × 0.91 = 104.7 A;
    # array 1 (10 strings) beside array 2 (1 string, 13 A): backfeed 16.25 A, carried; its own
    # 162.5 A decides, so its note does not mention the backfeed either
    inp = SizingInput(
        kind=np.ones(3, dtype=np.int8),
        cable_m=np.full(3, 20.0),
        air_m=np.full(3, 20.0),
        isc_a=np.full(3, 13.0),
        imp_a=np.full(3, 12.0),
        vmp_v=np.full(3, 1000.0),
        n_strings=np.array([10, 10, 1]),
        dc_group=np.array([-1, 4, 4]),
    )
    r = size_circuits(inp, DesignParams(sizes_array_mm2=(16.0,), max_parallel=1))
    note = "needs 162 A after derating 0.91; largest allowed 16 mm² Cu carries 105 A"
    assert r.note.tolist()[:2] == [note, note]
    assert r.ok.tolist() == [False, False, True]


def test_drop_note_of_an_array_without_strings():
    # no strings in the input: the array's budget is its own limit and its note has no strings'
    # share; 2 × 0.4 km × 24 A × 0.927 Ω/km (25 mm² at 90 °C) = 1.78 % > 1.5 %
    inp = _array_with_strings(400.0)
    for name in ("kind", "cable_m", "air_m", "parent", "isc_a", "imp_a", "vmp_v", "n_strings"):
        setattr(inp, name, getattr(inp, name)[:1])
    r = size_circuits(inp, DesignParams(sizes_array_mm2=(16.0, 25.0), max_parallel=1))
    assert r.note.tolist() == ["voltage drop 1.78 % exceeds 1.50 % with largest allowed 25 mm² Cu"]


def test_each_failing_circuit_gets_its_own_numbers():
    # two strings of 400 m and 300 m on 10 mm² (at most, one conductor): 2.61 % and 1.96 %
    inp = SizingInput(
        kind=np.array([0, 0], dtype=np.int8),
        cable_m=np.array([400.0, 300.0]),
        air_m=np.array([10.0, 10.0]),
        isc_a=np.full(2, 13.0),
        imp_a=np.full(2, 12.0),
        vmp_v=np.full(2, 1000.0),
    )
    r = size_circuits(inp, DesignParams(drop_dc_total_pct=5.0))
    assert r.note.tolist() == [
        "voltage drop 2.61 % exceeds 1.00 % with largest allowed 10 mm² Cu",
        "voltage drop 1.96 % exceeds 1.00 % with largest allowed 10 mm² Cu",
    ]
