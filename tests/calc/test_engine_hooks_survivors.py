"""The engine's rule-set hooks on small hand-built circuits: the NEC 2023 310.14(A)(2) short-section
exception with the runner-up stretch, grouping by current-carrying conductors (and the IEC
default by circuits), the a.c. size restriction of Chapter 9 Table 9, and the hooks' IEC defaults.

Written for the survivors of the mutation run of 2026-12-04 (tests/MUTATION.md, "calc.engine and
calc.rules: the rule-set hooks"). Every expected value is computed here by hand from:

* NEC 2023 Table 310.16 (Cu, raceway or earth, 30 °C; confirmed, ../shared/REFERENCE_VALUES.md
  §4.3): 12 AWG 20/25/30 A, 10 AWG 30/35/40 A (60/75/90 °C);
* NEC 2023 Table 310.17 (Cu, free air, 30 °C; memory, calc/data): 12 AWG 40 A, 10 AWG 55 A (90 °C);
* 310.15(B)(1) ambient correction, 90 °C column (confirmed): 16–20 °C 1.08, 26–30 °C 1.00;
* Table 310.15(C)(1) adjustment (confirmed in calc/data): 1–3 conductors 1.00, 4–6 0.80,
  7–9 0.70, 10–20 0.50, 21–30 0.45, 41 and above 0.35;
* 690.8(A)(1)(a)(1): I_max = 1.25 × Isc = 16.25 A for Isc 13 A; 690.8(B)(1): 1.25 × I_max =
  20.3125 A before correction in the 75 °C termination column (110.14(C), confirmed);
* 310.14(A)(2) exception: where two ampacities apply to portions of a circuit, the higher may be
  used beyond the transition for 10 ft (3.048 m) or 10 % of the circuit length at the higher
  ampacity, whichever is less (confirmed, the rule set's reading: the circuit less the stretch);
* IEC 60364-5-52:2009 Table B.52.18 (circuits direct in the ground, touching; from memory,
  ../shared/REFERENCE_VALUES.md §3.8): 2 circuits 0.75, 3 circuits 0.65, 4 circuits 0.60,
  5 circuits 0.55.

Sites invented.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from calc.engine import (
    KIND_AC,
    KIND_ARRAY,
    DesignParams,
    SizingInput,
    failure_causes,
    larger_sizes_mm2,
    size_circuits,
)
from calc.errors import InputError
from calc.nec.sizes import size_from_label, size_label
from calc.rules import get_rules

from .test_nec_engine import _design

NAN = math.nan
I_MAX = 1.25 * 13.0  # 690.8(A)(1)(a)(1), Isc 13 A


def _nec(**kw) -> DesignParams:
    """test_nec_engine's NEC design with air at 30 °C and 3 % drop budgets."""
    base = dict(air_temp_c=30.0, drop_string_pct=3.0, drop_dc_total_pct=3.0)
    base.update(kw)
    return _design(**base)


def _strings(cable_m, air_m=0.0, **kw) -> SizingInput:
    """Single PV source circuits (Isc 13 A, Imp 12 A, Vmp 1200 V, no parallel strings)."""
    n = len(cable_m)
    return SizingInput(
        kind=np.zeros(n, dtype=np.int8),
        cable_m=np.asarray(cable_m, dtype=float),
        air_m=np.broadcast_to(np.asarray(air_m, dtype=float), (n,)).copy(),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1200.0),
        max_fuse_a=np.full(n, 25.0),
        **kw,
    )


def _segments(laying, count, length_m, incidence) -> dict:
    """Buried segments (laying 1 = duct, D1; 0 = direct, D2), depth 0.8 m, touching."""
    m = len(laying)
    return dict(
        seg_depth_m=np.full(m, 0.8),
        seg_laying=np.asarray(laying),
        seg_spacing_m=np.zeros(m),
        seg_soil_k_m_w=np.full(m, 1.0),
        seg_count=np.asarray(count, dtype=float),
        seg_length_m=None if length_m is None else np.asarray(length_m, dtype=float),
        inc_circuit=np.array([i[0] for i in incidence]),
        inc_segment=np.array([i[1] for i in incidence]),
    )


# ---- 310.14(A)(2) exception: the runner-up stretch governs


def test_a_short_crowded_raceway_gives_way_to_the_next_most_onerous_one():
    # circuit 0 (100 m) passes raceway 0 (2 m, 10 circuits counted: 20 conductors, 0.50),
    # raceway 1 (60 m, alone: 2 conductors, 1.00) and raceway 2 (38 m, 4 circuits: 8
    # conductors, 0.70); circuit 1 runs only in raceway 0, circuit 2 only in raceway 2.
    # Raceway 0 is short for circuit 0 (2 m ≤ 3.048 m and ≤ 10 % of 98 m): its 0.50 is
    # disregarded and the next most onerous raceway, 2 (0.70), governs — not raceway 1.
    seg = _segments(
        [1, 1, 1], [10, 1, 4], [2.0, 60.0, 38.0], [(0, 0), (0, 1), (0, 2), (1, 0), (2, 2)]
    )
    r = size_circuits(_strings([100.0, 100.0, 100.0], **seg), _nec(), "nec")
    # circuit 0: 12 AWG 30 A × 0.70 = 21 A ≥ 16.25 A (without the exception 30 × 0.50 = 15 A
    # would fail); 690.8(B)(1) 20.3125 A ≤ 25 A (75 °C column)
    # the hand calculation above: 30 * 0.50 < I_MAX <= 30 * 0.70
    assert size_label(r.size_mm2[0]) == "12 AWG" and r.governing_env[0] == "D1"
    assert r.governing_segment[0] == 2 and r.governing_segment.dtype == np.int64
    assert r.factor_group[0] == 0.70 and r.group_count[0] == 8
    assert r.ampacity_a[0] == pytest.approx(21.0)
    assert r.terminal_ampacity_a[0] == 25.0 and r.ok[0]
    # one review note for a circuit in ducts only
    assert r.note[0].startswith("in duct: ") and r.note[0].count("Table 310.16") == 1
    # circuit 1 has no other raceway: the exception does not apply, 10 AWG 40 × 0.50 = 20 A
    assert size_label(r.size_mm2[1]) == "10 AWG" and r.governing_segment[1] == 0
    assert r.factor_group[1] == 0.50 and r.group_count[1] == 20
    assert r.ampacity_a[1] == pytest.approx(20.0)
    # circuit 2: raceway 2 is 38 m (not short), 12 AWG at 0.70
    assert size_label(r.size_mm2[2]) == "12 AWG" and r.ampacity_a[2] == pytest.approx(21.0)


def test_a_short_raceway_gives_way_to_another_environment_and_direct_burial_runner_up():
    # ground 20 °C: 310.15(B)(1) 1.08 in duct and direct-buried alike.
    # circuit 0: a 2 m duct (segment 0, 11 circuits: 22 conductors, 0.45) and 98 m direct-buried
    # alone (segment 1). The duct is short: its rating is disregarded and, no other duct being
    # left, the direct-buried stretch governs: 12 AWG 30 × 1.08 = 32.4 A (the duct alone would
    # give 30 × 1.08 × 0.45 = 14.58 A < 16.25 A).
    # circuit 1: direct-buried only, a 2 m crossing (segment 2, 21 circuits: 42 conductors,
    # 0.35) and 98 m (segment 3, 4 circuits: 8 conductors, 0.70): 30 × 1.08 × 0.70 = 22.68 A.
    seg = _segments(
        [1, 0, 0, 0], [11, 1, 21, 4], [2.0, 98.0, 2.0, 98.0], [(0, 0), (0, 1), (1, 2), (1, 3)]
    )
    r = size_circuits(_strings([100.0, 100.0], **seg), _nec(ground_temp_c=20.0), "nec")
    # the hand calculation above: I_MAX > 30 * 1.08 * 0.45
    # the hand calculation above: 30 * 1.08 * 0.35 < I_MAX <= 30 * 1.08 * 0.70
    assert size_label(r.size_mm2.tolist()).tolist() == ["12 AWG", "12 AWG"]
    assert r.governing_env.tolist() == ["D2", "D2"]
    assert r.governing_segment.tolist() == [1, 3]
    assert r.factor_group.tolist() == [1.0, 0.70] and r.group_count.tolist() == [2, 8]
    assert r.factor_temp.tolist() == [1.08, 1.08]
    assert r.ampacity_a == pytest.approx([30 * 1.08, 30 * 1.08 * 0.70])
    assert r.ok.all()


def test_a_short_crowded_stretch_in_free_air_gives_way_to_the_next_stretch():
    # source circuits of 100 m, all in free air (Table 310.17): stretch 0 a row run behind the
    # modules at 40 °C (310.15(B)(1) 0.91; 2 m, 21 circuits bunched: 42 conductors, 0.35),
    # stretch 1 in open air at 30 °C (1.00; 40 m, 4 circuits: 8 conductors, 0.70). Circuit 0
    # runs along stretch 0 only, circuit 1 along both.
    # Circuit 1: 12 AWG 40 A × 0.91 × 0.35 = 12.74 A < 16.25 A on stretch 0, which is short, so
    # stretch 1 governs: 40 × 1.00 × 0.70 = 28 A. 690.8(B)(1): 20.3125 A ≤ 25 A (Table 310.16's
    # 75 °C column for the terminations, 110.14(C)(1), also in free air).
    # Circuit 0 has no other stretch: no exception, 10 AWG 55 × 0.91 × 0.35 = 17.52 A.
    # (Stretch 2: one circuit routing counted, not given here.)
    inp = _strings(
        [100.0, 100.0],
        air_m=100.0,
        air_count=np.array([21.0, 4.0, 1.0]),
        air_behind_modules=np.array([True, False, False]),
        air_inc_circuit=np.array([0, 1, 1]),
        air_inc_stretch=np.array([0, 0, 1]),
        air_length_m=np.array([2.0, 40.0, 10.0]),
    )
    d = _nec(row_air_temp_c=40.0)
    r = size_circuits(inp, d, "nec")
    # by hand: 40 × 0.91 × 0.35 < I_MAX ≤ 40 × 0.70 and I_MAX ≤ 55 × 0.91 × 0.35
    assert size_label(r.size_mm2.tolist()).tolist() == ["10 AWG", "12 AWG"]
    assert r.governing_env.tolist() == ["air", "air"]
    assert r.governing_air.tolist() == [0, 1] and r.governing_air.dtype == np.int64
    assert r.factor_group.tolist() == [0.35, 0.70] and r.group_count.tolist() == [42, 8]
    assert r.factor_temp.tolist() == [0.91, 1.0]
    assert r.ampacity_a == pytest.approx([55 * 0.91 * 0.35, 28.0]) and r.ok.all()
    # 690.8(B)(1) in free air: Table 310.16's 75 °C column (110.14(C)(1)), 10 AWG 35 A, 12 AWG
    # 25 A, against 1.25 × I_MAX
    assert r.terminal_ampacity_a.tolist() == [35.0, 25.0]
    assert r.terminal_required_a.tolist() == pytest.approx([1.25 * I_MAX] * 2)
    # stretch 0 4 m long (over 10 ft) is not short: it governs circuit 1 too, 10 AWG 17.52 A
    inp.air_length_m = np.array([4.0, 40.0, 10.0])
    r = size_circuits(inp, d, "nec")
    assert size_label(r.size_mm2[1]) == "10 AWG" and r.governing_air[1] == 0
    assert r.factor_group[1] == 0.35 and r.group_count[1] == 42 and r.factor_temp[1] == 0.91
    assert r.ampacity_a[1] == pytest.approx(55 * 0.91 * 0.35)


# ---- grouping: conductors under nec, circuits under iec


def _mixed_trenches() -> SizingInput:
    # segment 0: a source circuit and a three-phase inverter output circuit (routing counted
    # these 2); segment 1: the a.c. circuit, routing counted 3; segment 2 (the last): routing
    # counted 4 circuits, none given. All direct in the ground, touching.
    seg = _segments([0, 0, 0], [2, 3, 4], None, [(0, 0), (1, 0), (1, 1)])
    inp = _strings([50.0, 50.0], **seg)
    inp.kind = np.array([0, KIND_AC], dtype=np.int8)
    inp.isc_a, inp.imp_a, inp.vmp_v = (np.array([13.0, NAN]), np.array([12.0, NAN]),
                                       np.array([1200.0, NAN]))  # fmt: skip
    inp.ac_kva, inp.ac_v, inp.ac_max_a = np.array([NAN, 20.0]), np.array([NAN, 480.0]), None
    inp.phases = np.array([1, 3])
    return inp


def test_nec_grouping_counts_current_carrying_conductors():
    # Table 310.15(C)(1) by current-carrying conductors (2 per d.c. circuit, 3 per three-phase
    # circuit, 310.15(E)(1): a neutral of a balanced circuit is not counted): segment 0: 2 + 3 =
    # 5 → 0.80; segment 1: the a.c. circuit's 3 and 2 more not given, counted at the most of
    # any circuit there, 3 each: 9 → 0.70; segment 2: 4 circuits not given, 2 each (the most of
    # any circuit there, none: 2) = 8 → 0.70
    r = size_circuits(_mixed_trenches(), _nec(), "nec")
    assert r.seg_group_factor.tolist() == [0.80, 0.70, 0.70]
    assert r.group_count[0] == 5 and r.factor_group[0] == 0.80


def test_iec_grouping_counts_circuits():
    # IEC 60364-5-52 Table B.52.18 (touching): segment 0 2 circuits 0.75 (5 conductors would give
    # the 5-circuit 0.55), segment 1 3 circuits 0.65, segment 2 4 circuits 0.60
    r = size_circuits(_mixed_trenches(), DesignParams(drop_string_pct=3.0), "iec")
    assert r.seg_group_factor.tolist() == [0.75, 0.65, 0.60]
    assert r.group_count[0] == 2 and r.factor_group[0] == 0.75


# ---- sizes a failing a.c. circuit could still be given


def test_larger_ac_sizes_need_a_table_9_row():
    # Chapter 9 Table 9 (a.c. resistance) lists 600, 750 and 1000 kcmil above 500 kcmil and no
    # 700, 800 or 900 kcmil, which Table 8 (d.c. resistance) has: a.c. circuits may take only
    # the former, d.c. circuits every one (calc/data's Table 8 and 9 rows, as published)
    big = tuple(size_from_label(["400 kcmil", "500 kcmil"]).tolist())
    d = _nec(sizes_ac_mm2=big, sizes_array_mm2=big)
    assert size_label(larger_sizes_mm2(KIND_AC, d, "nec")).tolist() == [
        "600 kcmil",
        "750 kcmil",
        "1000 kcmil",
    ]
    assert size_label(larger_sizes_mm2(KIND_ARRAY, d, "nec")).tolist() == [
        "600 kcmil",
        "700 kcmil",
        "750 kcmil",
        "800 kcmil",
        "900 kcmil",
        "1000 kcmil",
    ]


# ---- failure_causes: the 690.8(B)(1) condition and its tolerance


def _failing_condition_1():
    # 12 source circuits on one output circuit (12 × 16.25 = 195 A) limited to 4/0 AWG: (2) holds
    # (260 × 1.08 = 280.8 A ≥ 195 A at 20 °C), (1) fails: 1.25 × 195 = 243.75 A > 230 A (75 °C)
    seg = _segments([1, 1], [12, 1], None, [*((i, 0) for i in range(12)), (12, 1)])
    inp = _strings([30.0] * 12 + [100.0], parent=np.array([12] * 12 + [-1]), **seg)
    inp.kind = np.array([0] * 12 + [KIND_ARRAY], dtype=np.int8)
    inp.n_strings = np.array([1.0] * 12 + [12.0])
    d = _nec(ground_temp_c=20.0, max_parallel=1,
             sizes_array_mm2=tuple(size_from_label(["3/0 AWG", "4/0 AWG"]).tolist()))  # fmt: skip
    return size_circuits(inp, d, "nec")


def test_a_690_8_b_1_failure_is_a_capacity_failure_beyond_the_tolerance_only():
    r = _failing_condition_1()
    assert not r.ok[12] and r.terminal_required_a[12] == pytest.approx(243.75)
    assert r.terminal_ampacity_a[12] == 230.0 and r.design_current_a[12] <= r.ampacity_a[12]
    assert failure_causes(r)["capacity"][12] and not failure_causes(r)["other"][12]
    # the same circuit with the requirement within failure_causes' relative 1e-6 of the
    # terminal ampacity is not a capacity failure (it fails for another reason), beyond it is
    for req, capacity in ((230.0 * (1.0 + 1e-6), False), (230.0 * (1.0 + 0.5e-6), False),
                          (230.0 * (1.0 + 3e-6), True)):  # fmt: skip
        req1 = r.terminal_required_a.copy()
        req1[12] = req
        why = failure_causes(dataclasses.replace(r, terminal_required_a=req1))
        assert bool(why["capacity"][12]) is capacity and bool(why["other"][12]) is not capacity


# ---- the hooks' IEC defaults


def test_iec_refuses_the_nec_settings_naming_them():
    inp = _strings([40.0], **_segments([1], [1], None, [(0, 0)]))
    with pytest.raises(
        InputError, match=r"^terminal_temp_c applies to rules 'nec' only \(rules 'iec'\)$"
    ):
        size_circuits(inp, DesignParams(terminal_temp_c=75.0), "iec")
    with pytest.raises(
        InputError,
        match=r"^buried_rating = 'engineered' is not available \(rules 'iec' rate buried circuits "
        r"by the tables only\)$",
    ):
        size_circuits(inp, DesignParams(buried_rating="engineered"), "iec")


def test_iec_terminal_requirement_is_the_design_current_as_floats():
    # IEC 60364-5-52 has no second, uncorrected condition: were a capacity given, the default
    # holds it to the design current itself (the hook's IEC default), read as floats
    got = get_rules("iec").terminal_required_a([16, 25])
    assert got.dtype == np.float64 and got.tolist() == [16.0, 25.0]
    assert np.isnan(get_rules("iec").terminal_required_a([None])).all()


def test_current_carrying_conductors_of_a_set():
    # 2 for d.c. and single-phase, 3 for three-phase (NEC 2023 310.15(E)(1): the neutral of a
    # balanced three-phase circuit is not counted), whatever the kind's number
    rs = get_rules("iec")
    kinds = np.array([0, 1, 3, KIND_AC, KIND_AC, KIND_AC])
    phases = np.array([3, 3, 3, 1, 3, 0])
    assert rs.current_carrying_conductors(kinds, phases).tolist() == [2, 2, 2, 2, 3, 2]


# ---- which limit a failing NEC circuit breaks, in its note


def _source_circuits(n, isc, count, sizes, ground_c=30.0, parent=False):
    """``n`` source circuits of ``isc`` (Imp 12 A, 1200 V) in one raceway that routing counted
    ``count`` circuits in; with ``parent``, a combiner output circuit of the ``n`` in a raceway of
    its own."""
    seg = _segments([1, 1], [count, 1], None, [*((i, 0) for i in range(n)), (n, 1)])
    inp = _strings([30.0] * n + [100.0], parent=np.array([n if parent else -1] * n + [-1]), **seg)
    inp.kind = np.array([0] * n + [KIND_ARRAY], dtype=np.int8)
    inp.isc_a = np.full(n + 1, float(isc))
    inp.n_strings = np.array([1.0] * n + [float(n)])
    d = _nec(ground_temp_c=ground_c, sizes_string_mm2=tuple(size_from_label(sizes).tolist()))
    return size_circuits(inp, d, "nec")


def test_a_source_circuit_on_the_690_8_b_1_limit_passes():
    # Isc 16 A: I_max = 20 A; 690.8(B)(1) 1.25 × 20 = 25 A, exactly the 75 °C column of 12 AWG
    # (Table 310.16, 25 A): met (≥); (2) 30 A ≥ 20 A
    r = _source_circuits(1, 16.0, 1, ["12 AWG", "10 AWG"])
    assert r.terminal_required_a[0] == 25.0 and r.terminal_ampacity_a[0] == 25.0
    assert size_label(r.size_mm2[0]) == "12 AWG" and r.ok[0]
    assert r.utilisation[0] == pytest.approx(1.0)


def test_failing_condition_2_names_its_numbers_not_condition_1():
    # 12 AWG only, 10 source circuits of Isc 16 A in the raceway (20 conductors, 0.50):
    # (2) 30 × 0.50 = 15 A < 20 A fails; (1) 25 A ≤ 25 A holds (on its limit)
    r = _source_circuits(10, 16.0, 10, ["12 AWG"])
    assert not r.ok[0] and failure_causes(r)["capacity"][0]
    assert "needs 20 A after derating 0.50; largest allowed 12 AWG Cu carries 15 A" in r.note[0]
    assert "before correction" not in r.note[0] and "240.4" not in r.note[0]


def test_a_source_circuit_its_fuse_does_not_protect_fails_on_240_4():
    # 12 source circuits (Isc 13 A, maximum series fuse 25 A) on one combiner, 24 conductors in
    # the raceway (0.45), ground 20 °C (1.08): a 25 A fuse (690.9(A), (B): ≥ 20.3125 A); 10 AWG
    # only: 40 × 1.08 × 0.45 = 19.44 A carries 16.25 A and 690.8(B)(1) holds (20.3125 ≤ 35 A),
    # but 240.4(B) lets only the next rating above 19.44 A, 20 A, protect it: not 25 A
    r = _source_circuits(12, 13.0, 12, ["10 AWG"], ground_c=20.0, parent=True)
    assert r.fuse_a[0] == 25.0 and r.ampacity_a[0] == pytest.approx(40 * 1.08 * 0.45)
    assert not r.ok[0] and failure_causes(r)["other"][0]
    assert r.note[0].endswith(
        "; the 25 A device does not protect the largest allowed 10 AWG Cu (ampacity 19 A with the "
        "terminal limit; 240.4)"
    )


def test_an_output_circuit_its_backfeed_fuse_does_not_protect_fails_on_240_4():
    # three output circuits of 12 source circuits (195 A each, 690.8(A)(2)) in one raceway (6
    # conductors, 0.80), ground 40 °C (0.91), 250 kcmil only, one set: (2) 290 × 0.91 × 0.80 =
    # 211.12 A ≥ 195 A; (1) 243.75 ≤ 255 A; the other two feed 390 A > 211.12 A, so a fuse
    # ≥ 1.25 × 195 = 243.75 A: 250 A (690.9(B), 240.6(A)); 240.4(B): the next rating above
    # 211.12 A is 225 A, so 250 A does not protect it
    arrays = _strings([60.0] * 3, **_segments([1], [3], None, [(0, 0), (1, 0), (2, 0)]))
    arrays.kind = np.full(3, KIND_ARRAY, dtype=np.int8)
    arrays.n_strings = np.full(3, 12.0)
    arrays.dc_group = np.zeros(3, dtype=np.int64)
    big = tuple(size_from_label(["250 kcmil"]).tolist())
    d = _nec(ground_temp_c=40.0, sizes_array_mm2=big, max_parallel=1, drop_array_pct=3.0)
    r = size_circuits(arrays, d, "nec")
    assert r.array_fuse_a.tolist() == [250.0] * 3
    assert r.ampacity_a[0] == pytest.approx(290 * 0.91 * 0.80) and not r.ok.any()
    assert r.note[0].endswith(
        "; the 250 A device does not protect the largest allowed 250 kcmil Cu (ampacity 211 A "
        "with the terminal limit; 240.4)"
    )


# ---- parallel sets add their conductors to the grouping (nec)


def test_an_extra_parallel_set_adds_its_conductors():
    # segment 0: an inverter output circuit (400 A continuous, 480 V, three-phase) and a source
    # circuit; segment 1 (the last): routing counted one circuit, not given. 300 kcmil only,
    # ground 20 °C (1.08). One set: 3 + 2 = 5 conductors, 0.80: 320 × 1.08 × 0.80 = 276.5 A <
    # 400 A. Two sets: 3 + 3 + 2 = 8 conductors, 0.70: 2 × 320 × 1.08 × 0.70 = 483.84 A ≥ 400 A;
    # (1) 1.25 × 400 = 500 A ≤ 2 × 285 A (75 °C); breaker ≥ 500 A: 500 A (240.6(A)), which
    # protects 483.84 A (240.4(B): the next rating up is 500 A)
    seg = _segments([1, 1], [2, 1], None, [(0, 0), (1, 0)])
    inp = _strings([50.0, 50.0], **seg)
    inp.kind = np.array([KIND_AC, 0], dtype=np.int8)
    inp.isc_a, inp.imp_a, inp.vmp_v = (np.array([NAN, 13.0]), np.array([NAN, 12.0]),
                                       np.array([NAN, 1200.0]))  # fmt: skip
    inp.ac_kva = np.array([math.sqrt(3) * 480.0 * 400.0 / 1000.0, NAN])
    inp.ac_v, inp.ac_max_a, inp.phases = (
        np.array([480.0, NAN]),
        np.array([400.0, NAN]),
        np.array([3, 1]),
    )
    d = _nec(ground_temp_c=20.0, max_parallel=2, drop_ac_pct=3.0,
             sizes_ac_mm2=tuple(size_from_label(["300 kcmil"]).tolist()))  # fmt: skip
    r = size_circuits(inp, d, "nec")
    assert r.parallel[0] == 2 and size_label(r.size_mm2[0]) == "300 kcmil"
    assert r.group_count.tolist() == [8, 8] and r.factor_group.tolist() == [0.70, 0.70]
    assert r.ampacity_a[0] == pytest.approx(2 * 320 * 1.08 * 0.70)
    assert r.ac_breaker_a[0] == 500.0 and r.terminal_ampacity_a[0] == 570.0 and r.ok.all()
    assert r.rules == "nec"
    # no fault level given: no short-circuit note (the rule set's note is for a given level)
    assert "short-circuit" not in r.note[0]
    # segment 1: the one circuit routing counted there, 2 conductors (none given): 1.00
    assert r.seg_group_factor.tolist() == [0.70, 1.0]


def test_a_voltage_drop_failure_names_the_nec_size():
    # 12 AWG only, 100 m at Imp 12 A: far above a 0.1 % limit; the note names the AWG size
    twelve = tuple(size_from_label(["12 AWG"]).tolist())
    d = _nec(drop_string_pct=0.1, drop_dc_total_pct=0.1, sizes_string_mm2=twelve)
    inp = _strings([100.0], **_segments([1], [1], None, [(0, 0)]))
    r = size_circuits(inp, d, "nec")
    assert not r.ok[0] and failure_causes(r)["drop"][0]
    assert "with largest allowed 12 AWG Cu" in r.note[0]


def test_a_failing_iec_circuit_in_the_ground_has_no_empty_review_note():
    # iec has no buried review note: the maximum-voltage note (IEC 62548: Voc 2000 V above the
    # rated 1500 V whatever the temperature correction) is not followed by an empty one
    inp = _strings([50.0], voc_v=np.array([2000.0]), **_segments([0], [1], None, [(0, 0)]))
    r = size_circuits(inp, DesignParams(drop_string_pct=3.0), "iec")
    assert not r.ok[0] and r.note[0].startswith("Voc ")
    assert r.note[0].endswith("(IEC 62548)")


def test_air_stretch_lengths_of_the_wrong_length_are_refused_naming_them():
    inp = _strings([100.0], air_m=100.0, air_count=np.array([1.0, 1.0]),
                   air_inc_circuit=np.array([0]), air_inc_stretch=np.array([0]),
                   air_length_m=np.array([1.0, 2.0, 3.0]))  # fmt: skip
    with pytest.raises(
        InputError, match=r"^air_length_m must have length 2 \(one per air stretch\)$"
    ):
        size_circuits(inp, _nec(), "nec")


def test_a_source_circuit_on_the_690_8_b_1_limit_within_the_tolerance_passes():
    # as above, Isc 16 A up to the engine's relative 1e-9 (a current computed from factors): the
    # 690.8(B)(1) requirement 1.25 × 1.25 × Isc = 25.000000025 A is 25 A within 1e-9 of it, so
    # the 12 AWG 75 °C column (Table 310.16, 25 A) still meets it (at the tolerance's very edge)
    isc = 16.000000015999998
    r = _source_circuits(1, isc, 1, ["12 AWG", "10 AWG"])
    assert r.terminal_required_a[0] * (1.0 - 1e-9) == 25.0 and r.terminal_ampacity_a[0] == 25.0
    assert size_label(r.size_mm2[0]) == "12 AWG" and r.ok[0]
