"""Hand-checked circuits sized by the engine under ``rules = "nec"`` (NFPA 70 NEC 2023).

Every expected value is computed here from the NEC 2023 tables as published (values and tags in
../shared/REFERENCE_VALUES.md §4.2–4.4 and §10.1):

* Table 310.16, Cu, ≤ 3 current-carrying conductors, 30 °C (confirmed): 12 AWG 20/25/30 A,
  10 AWG 30/35/40, 8 AWG 40/50/55, 2/0 145/175/195, 3/0 165/200/225, 4/0 195/230/260,
  250 kcmil 215/255/290, 300 kcmil 240/285/320, 350 kcmil 260/310/350 (60/75/90 °C);
* 310.15(B)(1) ambient correction, 90 °C column (confirmed): 16–20 °C 1.08, 26–30 °C 1.00,
  31–35 °C 0.96;
* Table 310.15(C)(1) adjustment (memory): 4–6 conductors 0.80, 10–20 0.50, 21–30 0.45;
* 690.8(A)(1)(a)(1) source circuit I_max = 1.25 × Isc; 690.8(B) the larger of (1) 1.25 × I_max
  uncorrected and (2) I_max corrected and adjusted (confirmed); the 1.5625 × Isc product;
* 240.6(A) standard ratings (confirmed) … 20, 25, 30 … 250, 300, 350 A; 240.4(B) next rating up
  ≤ 800 A; 240.4(D) Cu 12 AWG 20 A, 10 AWG 30 A (confirmed, §10.1);
* Chapter 9 Table 8 (confirmed), stranded uncoated Cu at 75 °C: 10 AWG 1.24, 8 AWG 0.778,
  250 kcmil 0.0515, 350 kcmil 0.0367 Ω/kft; α75 Cu 0.00323 (the table's note, memory);
  Table 9 (confirmed) 350 kcmil Cu in PVC conduit R_ac 0.038 Ω/kft;
* Table 690.7(A) (memory but the first row): −10 °C → 1.14.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.engine import DesignParams, SizingInput, failure_causes, size_circuits
from calc.errors import InputError
from calc.nec.sizes import size_from_label, size_label

FT_PER_KM = 1000.0 / 0.3048
ALPHA75_CU = 0.00323  # Chapter 9 Table 8 note (memory)
NAN = math.nan


def _r90_ohm_km(r75_ohm_kft: float) -> float:
    """Table 8's resistance at 75 °C brought to the 90 °C conductor ('max' conductor temp)."""
    return r75_ohm_kft * (1 + ALPHA75_CU * (90 - 75)) * FT_PER_KM / 1000.0


def _design(**kw) -> DesignParams:
    base = dict(
        insulation_array="90C",
        insulation_subarray="90C",
        insulation_ac="90C",
        ac_breaker_device="nec240.6a",
        frequency_hz=60.0,
        ground_temp_c=30.0,
        power_factor=1.0,
    )
    base.update(kw)
    return DesignParams(**base)


def _dc(kind, cable_m, isc, imp, vmp, n_strings=1.0, parent=-1, max_fuse=25.0, n_par=1.0,
        voc=NAN, coeff=NAN):  # fmt: skip
    return dict(kind=kind, cable_m=cable_m, isc_a=isc, imp_a=imp, vmp_v=vmp, n_strings=n_strings,
                parent=parent, max_fuse_a=max_fuse, strings_in_parallel=n_par, voc_v=voc,
                voc_coeff_pct_per_c=coeff, ac_kva=NAN, ac_v=NAN, ac_max_a=NAN)  # fmt: skip


def _ac(cable_m, kva, volts, i_cont):
    return dict(kind=2, cable_m=cable_m, isc_a=NAN, imp_a=NAN, vmp_v=NAN, n_strings=1.0,
                parent=-1, max_fuse_a=NAN, strings_in_parallel=1.0, voc_v=NAN,
                voc_coeff_pct_per_c=NAN, ac_kva=kva, ac_v=volts, ac_max_a=i_cont)  # fmt: skip


def _inp(circuits, segments, incidence) -> SizingInput:
    """``segments``: (laying, count) per segment; ``incidence``: (circuit, segment) pairs."""
    cols = {k: np.array([c[k] for c in circuits]) for k in circuits[0]}
    cols["kind"] = cols["kind"].astype(np.int8)
    cols["parent"] = cols["parent"].astype(np.int64)
    return SizingInput(
        **cols,
        seg_depth_m=np.full(len(segments), 0.8),
        seg_laying=np.array([s[0] for s in segments]),
        seg_spacing_m=np.zeros(len(segments)),
        seg_soil_k_m_w=np.full(len(segments), 1.0),
        seg_count=np.array([s[1] for s in segments], dtype=float),
        inc_circuit=np.array([i[0] for i in incidence]),
        inc_segment=np.array([i[1] for i in incidence]),
    )


def test_source_circuits_grouped_condition_2_governs():
    # 10 PV source circuits, Isc 13 A, in one raceway in the ground (D1) at 35 °C: 20
    # current-carrying conductors (2 per d.c. circuit) → Table 310.15(C)(1) 0.50;
    # 310.15(B)(1) 90 °C at 35 °C 0.96. I_max = 1.25 × 13 = 16.25 A (690.8(A)(1)(a)(1)).
    strings = [_dc(0, 50.0, 13.0, 12.0, 1200.0, n_par=2.0) for _ in range(10)]
    inp = _inp(strings, [(1, 10)], [(i, 0) for i in range(10)])
    r = size_circuits(inp, _design(ground_temp_c=35.0), "nec")
    i_max = 1.25 * 13.0
    # 12 AWG: 30 × 0.96 × 0.50 = 14.4 A < 16.25 A fails (2); 10 AWG: 40 × 0.96 × 0.50 = 19.2 A
    # the hand calculation above: 30 * 0.96 * 0.50 < i_max <= 40 * 0.96 * 0.50
    assert set(size_label(r.size_mm2).tolist()) == {"10 AWG"}
    assert r.factor_group[0] == 0.50 and r.group_count[0] == 20 and r.factor_temp[0] == 0.96
    assert r.design_current_a[0] == pytest.approx(i_max)
    assert r.ampacity_a[0] == pytest.approx(40 * 0.96 * 0.50)
    # (1): 1.25 × 16.25 = 20.3125 A (= 1.5625 × Isc) against the 75 °C column, 35 A
    assert r.terminal_required_a[0] == pytest.approx(1.5625 * 13.0)
    assert r.terminal_ampacity_a[0] == 35.0
    # the schedule's utilisation is the governing condition, (2): 16.25 / 19.2
    assert r.utilisation[0] == pytest.approx(i_max / 19.2)
    assert i_max / 19.2 > 1.5625 * 13.0 / 35.0
    # no fuse: the other string can feed (2 − 1) × 16.25 A ≤ the 25 A maximum series fuse
    assert not r.fuse_required[0] and np.isnan(r.fuse_a[0])
    # drop: 2 × 50 m × Imp 12 A × R(10 AWG, 90 °C), of Vmp 1200 V
    dv = 2 * 0.050 * 12.0 * _r90_ohm_km(1.24)
    assert r.vdrop_pct[0] == pytest.approx(100 * dv / 1200.0, rel=1e-9)
    # in duct in the ground: Table 310.16 used, the installation not represented → review note
    assert all("in duct" in n and "Table 310.16" in n and "review" in n for n in r.note)
    assert r.ok.all()


def _combiner(ground_c=20.0, terminal=None):
    """12 source circuits (Isc 13 A, module maximum series fuse 25 A) in one raceway to a
    combiner; its output circuit alone in a second raceway to the inverter."""
    strings = [_dc(0, 30.0, 13.0, 12.0, 1200.0, parent=12) for _ in range(12)]
    array = _dc(1, 100.0, 13.0, 12.0, 1200.0, n_strings=12.0)
    inp = _inp([*strings, array], [(1, 12), (1, 1)], [*((i, 0) for i in range(12)), (12, 1)])
    d = _design(ground_temp_c=ground_c, terminal_temp_c=terminal)
    return size_circuits(inp, d, "nec")


def test_output_circuit_of_many_strings_condition_1_governs():
    r = _combiner()
    a = 12
    # 690.8(A)(2): 12 × 16.25 = 195 A; 690.8(B)(1): 1.25 × 195 = 243.75 A in the 75 °C column
    i_max = 12 * 1.25 * 13.0
    assert r.design_current_a[a] == pytest.approx(195.0)
    assert r.terminal_required_a[a] == pytest.approx(243.75)
    # (2) alone (90 °C × 1.08 at 20 °C, 2 conductors: no adjustment) would take 2/0 AWG:
    # 195 × 1.08 = 210.6 ≥ 195 A; (1) needs 250 kcmil: 4/0 230 A < 243.75 ≤ 255 A
    assert i_max <= 195 * 1.08 and 230 < 243.75 <= 255
    assert size_label(r.size_mm2[a]) == "250 kcmil"
    assert r.factor_temp[a] == 1.08 and r.factor_group[a] == 1.0
    assert r.ampacity_a[a] == pytest.approx(290 * 1.08)
    assert r.terminal_ampacity_a[a] == 255.0
    assert r.utilisation[a] == pytest.approx(243.75 / 255.0)  # (1) governs
    assert i_max / (290 * 1.08) < 243.75 / 255.0
    # drop: 2 × 100 m × 12 × 12 A × R(250 kcmil, 90 °C) of 1200 V
    dv = 2 * 0.100 * 144.0 * _r90_ohm_km(0.0515)
    assert r.vdrop_pct[a] == pytest.approx(100 * dv / 1200.0, rel=1e-9)


def test_source_circuit_fuse_and_240_4_protection_choose_the_size():
    r = _combiner()
    s = 0
    # 690.9(A): the 11 other strings feed 11 × 16.25 = 178.75 A > 25 A maximum series fuse → fuse;
    # 690.9(B): ≥ 1.25 × 16.25 = 20.3125 A → 25 A (240.6(A)), ≤ the 25 A maximum series fuse
    assert r.fuse_required[s] and r.fuse_a[s] == 25.0
    # 24 conductors in the raceway → 0.45; 1.08 at 20 °C
    assert r.group_count[s] == 24 and r.factor_group[s] == 0.45
    # 10 AWG carries I_max (40 × 1.08 × 0.45 = 19.44 ≥ 16.25 A) but is not protected by 25 A:
    # 240.4(B) allows only the next rating above 19.44 A, 20 A; 8 AWG 55 × 1.08 × 0.45 = 26.73 A
    # the hand calculation above: 40 * 1.08 * 0.45 >= 16.25 and 55 * 1.08 * 0.45 >= 25.0
    assert set(size_label(r.size_mm2[:12]).tolist()) == {"8 AWG"}
    assert r.ampacity_a[s] == pytest.approx(55 * 1.08 * 0.45)
    assert "25 A (240.6(A), 690.9)" in r.protection[s]
    dv = 2 * 0.030 * 12.0 * _r90_ohm_km(0.778)
    assert r.vdrop_pct[s] == pytest.approx(100 * dv / 1200.0, rel=1e-9)
    assert r.ok.all()


def test_equipment_marked_for_90_c_moves_condition_1_to_the_90_c_column():
    # terminal_temp_c = 90 (110.14(C), equipment so marked): 243.75 A in the 90 °C column:
    # 3/0 225 A < 243.75 ≤ 4/0 260 A; (2) still holds: 260 × 1.08 ≥ 195 A
    r = _combiner(terminal=90)
    assert size_label(r.size_mm2[12]) == "4/0 AWG" and r.terminal_ampacity_a[12] == 260.0
    with pytest.raises(InputError, match="terminal_temp_c must be 60, 75 or 90"):
        _combiner(terminal=80)


def test_inverter_output_circuit_breaker_and_conductor():
    # 690.8(A)(3) / 705.28: continuous output current 240 A; breaker ≥ 1.25 × 240 = 300 A → 300 A
    # (240.6(A)); (1) 300 A in the 75 °C column: 300 kcmil 285 < 300 ≤ 350 kcmil 310 A;
    # (2) 240 A in the 90 °C column at 30 °C (1.00), 3 conductors (no adjustment): 4/0 260 A
    # (a 3 % a.c. drop limit: the NEC sets none, informational notes suggest 3 %, memory)
    inp = _inp([_ac(150.0, 200.0, 480.0, 240.0)], [(1, 1)], [(0, 0)])
    r = size_circuits(inp, _design(fault_ka=20.0, clear_s=0.1, drop_ac_pct=3.0), "nec")
    assert r.ac_breaker_a[0] == 300.0 and r.design_current_a[0] == 240.0
    assert size_label(r.size_mm2[0]) == "350 kcmil"
    assert r.terminal_required_a[0] == pytest.approx(300.0)
    assert r.terminal_ampacity_a[0] == 310.0 and r.ampacity_a[0] == 350.0
    # 240.4: the 300 A breaker protects min(350, 310) = 310 A; no I2 rule (IEC 60364-4-43)
    assert "240.4" in r.protection[0] and "I2" not in r.protection[0]
    assert r.utilisation[0] == pytest.approx(300.0 / 310.0)
    # drop at pf 1: √3 × 240 A × 150 m × R; R = Table 9 R_ac (PVC conduit) / Table 8 R_dc at 75 °C
    # × Table 8 R_dc at 90 °C = 0.038 Ω/kft × (1 + 0.00323 × 15)
    r_ac = 0.038 * (1 + ALPHA75_CU * 15) * FT_PER_KM / 1000.0
    dv = math.sqrt(3) * 240.0 * 0.150 * r_ac
    assert r.vdrop_pct[0] == pytest.approx(100 * dv / 480.0, rel=1e-9)
    # no adiabatic table in the NEC: the withstand is not checked, and the circuit says so
    assert np.isnan(r.sc_min_mm2[0]) and "short-circuit withstand not checked" in r.note[0]


def test_direct_burial_carries_its_note_and_the_engineered_method_is_refused():
    inp = _inp([_dc(0, 40.0, 13.0, 12.0, 1200.0)], [(0, 1)], [(0, 0)])
    r = size_circuits(inp, _design(), "nec")
    assert r.governing_env[0] == "D2" and r.ok[0]
    assert "direct-buried" in r.note[0] and "review" in r.note[0]
    # 12 AWG: (2) 30 A × 1.00 ≥ 16.25 A; (1) 25 A (75 °C) ≥ 20.3125 A
    assert size_label(r.size_mm2[0]) == "12 AWG"
    with pytest.raises(InputError, match=r"buried_rating = 'engineered' \(NEC 2023 310\.14\(B\)"):
        size_circuits(inp, _design(buried_rating="engineered"), "nec")
    # the same circuit under iec has no such note (IEC 60364-5-52 represents soil and depth)
    iec = size_circuits(inp, DesignParams(), "iec")
    assert "review" not in iec.note[0]


def test_690_7_maximum_voltage_against_the_rated_voltage():
    # Table 690.7(A) at −10 °C: 1.14 → 1400 V × 1.14 = 1596 V > 1500 V; with the module's
    # coefficient −0.27 %/°C: 1300 × (1 + 0.0027 × 35) = 1422.85 V ≤ 1500 V
    c = [_dc(0, 40.0, 13.0, 12.0, 1200.0, voc=1400.0), _dc(0, 40.0, 13.0, 12.0, 1100.0,
         voc=1300.0, coeff=-0.27)]  # fmt: skip
    inp = _inp(c, [(1, 2)], [(0, 0), (1, 0)])
    r = size_circuits(inp, _design(min_ambient_c=-10.0), "nec")
    assert r.voc_max_v[0] == pytest.approx(1596.0) and not r.ok[0]
    assert "690.7" in r.note[0]
    assert r.voc_max_v[1] == pytest.approx(1422.85) and r.ok[1]
    assert size_circuits(inp, _design(min_ambient_c=-10.0, dc_rated_v=1000.0), "nec").ok.sum() == 0


def test_size_lists_are_nec_sizes():
    d = _design(sizes_string_mm2=tuple(size_from_label(["10 AWG", "8 AWG"]).tolist()))
    inp = _inp([_dc(0, 40.0, 13.0, 12.0, 1200.0)], [(1, 1)], [(0, 0)])
    assert size_label(size_circuits(inp, d, "nec").size_mm2[0]) == "10 AWG"
    with pytest.raises(InputError):
        size_circuits(inp, _design(sizes_string_mm2=(4.0, 6.0)), "nec")


def _short_section_case(short_m: float, cable_m: float):
    # circuit 0 runs through a long raceway alone (segment 0) and a short stretch of a raceway
    # shared with 9 other source circuits (segment 1: 20 conductors, Table 310.15(C)(1) 0.50);
    # the 9 others run only there
    c = [_dc(0, cable_m, 13.0, 12.0, 1200.0) for _ in range(10)]
    inc = [(0, 0), *((i, 1) for i in range(10))]
    inp = _inp(c, [(1, 1), (1, 10)], inc)
    inp.seg_length_m = np.array([cable_m - short_m, short_m])
    return inp


def test_310_15_a_short_section_exception():
    # 310.14(A)(2) exception: the higher ampacity may be used beyond the transition for 10 ft
    # (3.048 m) or 10 % of the circuit length at the higher ampacity, whichever is less.
    # 12 AWG in the crowded raceway: 30 A × 0.50 = 15 A < I_max 16.25 A; alone: 30 A.
    d = _design()
    r = size_circuits(_short_section_case(2.5, 60.0), d, "nec")  # 2.5 ≤ 3.048 and ≤ 5.75 m
    assert size_label(r.size_mm2[0]) == "12 AWG"
    assert r.governing_segment[0] == 0 and r.factor_group[0] == 1.0
    assert r.ampacity_a[0] == 30.0
    # the others have no other stretch: the exception does not apply
    assert set(size_label(r.size_mm2[1:]).tolist()) == {"10 AWG"}
    # longer than 10 ft; or longer than 10 % of the rest (0.1 × 17.5 m = 1.75 m < 2.5 m)
    for short_m, cable_m in ((3.5, 60.0), (2.5, 20.0)):
        r = size_circuits(_short_section_case(short_m, cable_m), d, "nec")
        assert size_label(r.size_mm2[0]) == "10 AWG" and r.governing_segment[0] == 1
    # no lengths given: no exception
    inp = _short_section_case(2.5, 60.0)
    inp.seg_length_m = None
    assert size_label(size_circuits(inp, d, "nec").size_mm2[0]) == "10 AWG"


def _three_outputs(protection: str):
    # three output circuits of 12 source circuits each (Isc 13 A) on one inverter input, each
    # alone in its raceway at 20 °C (90 °C: 1.08)
    arrays = [_dc(1, 60.0, 13.0, 12.0, 1200.0, n_strings=12.0) for _ in range(3)]
    inp = _inp(arrays, [(1, 1)] * 3, [(0, 0), (1, 1), (2, 2)])
    inp.dc_group = np.zeros(3, dtype=np.int64)
    return size_circuits(inp, _design(ground_temp_c=20.0, array_protection=protection), "nec")


def test_output_circuit_backfeed_fuse_or_conductor():
    # the other two feed 2 × 12 × 1.25 × 13 = 390 A into a fault on one (their 690.8(A) currents)
    r = _three_outputs("fuse")
    assert r.backfeed_a[0] == pytest.approx(390.0)
    # 250 kcmil (as for one output circuit alone, 690.8(B)(1)): 290 × 1.08 = 313.2 A < 390 A, so
    # a device: ≥ 1.25 × 195 = 243.75 A → 250 A (240.6(A)); it protects min(313.2, 255) = 255 A
    assert set(size_label(r.size_mm2).tolist()) == {"250 kcmil"}
    assert (r.array_fuse_a == 250.0).all() and r.ok.all()
    # no devices: the conductor carries 390 A after correction: 350 kcmil 350 × 1.08 = 378 A <
    # 390 ≤ 400 kcmil 380 × 1.08 = 410.4 A
    r = _three_outputs("cable")
    assert set(size_label(r.size_mm2).tolist()) == {"400 kcmil"}
    assert np.isnan(r.array_fuse_a).all() and r.design_current_a[0] == pytest.approx(390.0)


def test_failing_condition_1_is_a_capacity_failure_with_its_numbers():
    # the output circuit of 12 strings limited to 4/0 AWG, one set: (2) holds (260 × 1.08 =
    # 280.8 A ≥ 195 A) but (1) fails: 1.25 × 195 = 243.75 A > 230 A (75 °C column)
    strings = [_dc(0, 30.0, 13.0, 12.0, 1200.0, parent=12) for _ in range(12)]
    array = _dc(1, 100.0, 13.0, 12.0, 1200.0, n_strings=12.0)
    inp = _inp([*strings, array], [(1, 12), (1, 1)], [*((i, 0) for i in range(12)), (12, 1)])
    d = _design(ground_temp_c=20.0, max_parallel=1, sizes_array_mm2=tuple(
        size_from_label(["3/0 AWG", "4/0 AWG"]).tolist()))  # fmt: skip
    r = size_circuits(inp, d, "nec")
    assert not r.ok[12] and r.ampacity_a[12] >= r.design_current_a[12]
    assert failure_causes(r)["capacity"][12]
    assert "244 A before correction in the 75 °C terminal column" in r.note[12]
    assert "4/0 AWG Cu has 230 A" in r.note[12]
    assert r.utilisation[12] == pytest.approx(243.75 / 230.0)


def test_a_circuit_in_duct_and_direct_buried_has_one_note():
    inp = _inp([_dc(0, 40.0, 13.0, 12.0, 1200.0)], [(0, 1), (1, 1)], [(0, 0), (0, 1)])
    note = size_circuits(inp, _design(), "nec").note[0]
    assert note.startswith("in duct and direct-buried:") and note.count("Table 310.16") == 1
