"""The environments along a route: several trench segments, shared stretches in air.

Recomputed by hand from IEC 60364-5-52:2009 Annex B (capacities B.52.5 XLPE 3 loaded D1/D2 and
the factors of Tables B.52.14-B.52.19, values from memory unless the data file says confirmed),
EN 50618:2014 Tables A.3/A.4 (from memory), IEC 60287-2-1 T4 for the depth factor and
IEC 60364-4-43:2008 433.1 with IEC 60947-2 ratings for the a.c. breaker. Sites invented.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc import DesignParams, InputError, SizingInput, size_circuits
from tests.iec60287 import ac_over_dc


def _depth_factor(depth_m, od_m):
    """IEC 60287-2-1: T4 ∝ ln(u + √(u² − 1)), u = 2L/De; F = √(T4(0.7 m) / T4(L)) ≤ 1."""

    def t4(depth):
        u = 2 * depth / od_m
        return np.log(u + np.sqrt(u * u - 1))

    return min(1.0, np.sqrt(t4(0.7) / t4(depth_m)))


def _two_feeders():
    """a.c. feeder 0 runs through segments 0, 1 and 2; feeder 1 through segments 0 and 3."""
    return SizingInput(
        kind=np.array([2, 2], dtype=np.int8),
        cable_m=np.array([30.0, 30.0]),
        ac_kva=np.array([100.0, 50.0]),
        ac_v=np.array([400.0, 400.0]),
        seg_depth_m=np.array([0.7, 1.0, 0.8, 0.7]),
        seg_laying=np.array([0, 0, 1, 0]),
        seg_spacing_m=np.zeros(4),
        seg_soil_k_m_w=np.array([2.5, 1.5, 2.5, 2.5]),
        seg_count=np.array([2, 4, 3, 2]),
        inc_circuit=np.array([0, 0, 0, 1, 1]),
        inc_segment=np.array([0, 1, 2, 0, 3]),
    )


def test_the_segment_with_the_smallest_product_of_factors_governs():
    f_direct_1m = _depth_factor(1.0, 0.04)  # 0.04 m cable group, direct
    f_duct = _depth_factor(0.8, 0.11)  # 0.11 m duct
    # products soil · depth · group: seg 0 1.0 · 1.0 · 0.75 (B.52.18, 2 touching); seg 1
    # 1.28 (B.52.16, 1.5 K·m/W direct) · f_direct_1m · 0.60 (4 touching) = 0.738; seg 2 (duct)
    # 1.0 · f_duct · 0.70 (B.52.19, 3 touching) = 0.686; seg 3 as seg 0
    r = size_circuits(_two_feeders())
    assert_allclose(r.seg_soil_factor, [1.0, 1.28, 1.0, 1.0])
    assert_allclose(r.seg_depth_factor, [1.0, f_direct_1m, f_duct, 1.0])
    assert_allclose(r.seg_group_factor, [0.75, 0.60, 0.70, 0.75])
    assert r.seg_count_final.tolist() == [2.0, 4.0, 3.0, 2.0]
    # feeder 0: Ib = 100 kVA / (√3 · 400 V) = 144.3 A -> In 160 A; the duct (D1) governs:
    # 120 mm² 223 × 0.686 = 153 A < 160 A, 150 mm² 251 × 0.686 = 172 A (D2 287 × 0.738)
    # feeder 1: Ib 72.2 A -> In 80 A; seg 0 and seg 3 tie at 0.75, the first one governs:
    # 16 mm² 84 × 0.75 = 63 A, 25 mm² 107 × 0.75 = 80.25 A
    assert r.size_mm2.tolist() == [150.0, 25.0]
    assert r.governing_env.tolist() == ["D1", "D2"]
    assert r.governing_segment.tolist() == [2, 0]
    assert_allclose(r.factor_depth, [f_duct, 1.0])
    assert_allclose(r.factor_soil, [1.0, 1.0])
    assert_allclose(r.factor_group, [0.70, 0.75])
    assert r.group_count.tolist() == [3.0, 2.0]
    assert_allclose(r.ampacity_a, [251.0 * f_duct * 0.70, 107.0 * 0.75])
    assert_allclose(r.design_current_a, [160.0, 80.0])
    assert r.ok.all() and (r.governing_air == -1).all()


def test_three_phase_drop_with_reactance_and_ac_resistance():
    # feeder 0 above: ΔU = √3 · L · I · (R cos φ + X sin φ), cos φ 0.9; R = R20 (IEC 60228,
    # 150 mm² 0.124 Ω/km) at 90 °C × R/R' (IEC 60287-1-1), X = 0.140 mV/A/m / √3 (BS 7671
    # Table 4E1B, trefoil)
    r = size_circuits(_two_feeders())
    i = 100e3 / (np.sqrt(3) * 400.0)
    r_dc = 0.124 * (1 + 0.00393 * 70) / 1e3  # Ω/m
    r_ac = r_dc * float(ac_over_dc(r_dc, 150.0, "Cu"))
    x = 0.140 / np.sqrt(3) / 1e3
    dv = np.sqrt(3) * 30.0 * i * (r_ac * 0.9 + x * np.sqrt(1 - 0.81))
    assert_allclose(r.vdrop_v[0], dv, rtol=1e-6)
    assert_allclose(r.vdrop_pct[0], 100 * dv / 400.0, rtol=1e-6)


def _strings_in_air():
    """Four strings in air: stretch 0 a row run behind the modules (strings 0, 1, 2), stretch
    1 a shared stub in open air (strings 0 and 3; routing counted 6 circuits there)."""
    n = 4
    return SizingInput(
        kind=np.zeros(n, dtype=np.int8),
        cable_m=np.full(n, 30.0),
        air_m=np.full(n, 10.0),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        air_count=np.array([0.0, 6.0]),
        air_behind_modules=np.array([True, False]),
        air_inc_circuit=np.array([0, 1, 2, 0, 3]),
        air_inc_stretch=np.array([0, 0, 0, 1, 1]),
    )


def test_the_air_stretch_with_the_smallest_product_of_factors_governs():
    # row run: EN 50618 Table A.4 at 70 °C 0.91 × B.52.17 bunched, 3 circuits 0.70 = 0.637;
    # stub: 1.00 (40 °C) × 6 circuits 0.57 = 0.57; 4 mm² pair on a surface 44 A (Table A.3)
    r = size_circuits(_strings_in_air(), DesignParams(row_air_temp_c=70.0))
    assert r.air_count_final.tolist() == [3.0, 6.0]
    assert r.governing_air.tolist() == [1, 0, 0, 1]
    assert r.group_count.tolist() == [6.0, 3.0, 3.0, 6.0]
    assert_allclose(r.factor_group, [0.57, 0.70, 0.70, 0.57])
    assert_allclose(r.factor_temp, [1.0, 0.91, 0.91, 1.0])
    assert_allclose(r.derating, [0.57, 0.637, 0.637, 0.57])
    assert_allclose(r.ampacity_a, 44.0 * np.array([0.57, 0.637, 0.637, 0.57]))
    assert (r.size_mm2 == 4.0).all() and (r.governing_env == "air").all()
    assert (r.governing_segment == -1).all() and r.ok.all()
    # on a tray (item 4): row run 0.91 × 0.82 = 0.746, stub 1.0 × 0.73 = 0.73
    design = DesignParams(
        row_air_temp_c=70.0, air_arrangement=("tray", "bunched", "bunched", "bunched")
    )
    r = size_circuits(_strings_in_air(), design)
    assert r.governing_air.tolist() == [1, 0, 0, 1]
    assert_allclose(r.factor_group, [0.73, 0.82, 0.82, 0.73])
    # without a row temperature every stretch is at 40 °C (factor 1.00): the groups alone decide
    r = size_circuits(_strings_in_air())
    assert_allclose(r.factor_temp, [1.0] * 4)
    assert_allclose(r.factor_group, [0.57, 0.70, 0.70, 0.57])


def test_parallel_sets_count_in_their_air_stretch():
    # two a.c. circuits share one stretch in air (bunched). 1 MVA at 800 V: Ib 721.7 A -> In
    # 800 A (IEC 60947-2); one 300 mm² set (B.52.12 trefoil 703 A) × 0.91 × 0.80 (2 circuits)
    # = 511.8 A is too little; two sets make 3 circuits: 2 × 703 × 0.91 × 0.70 = 895.6 A
    # (2 × 240 mm²: 2 × 607 × 0.91 × 0.70 = 773.3 A < 800 A). 50 kVA: In 40 A, 16 mm² (method
    # E 100 A × 0.91 × 0.70 = 63.7 A)
    inp = SizingInput(
        kind=np.array([2, 2], dtype=np.int8),
        cable_m=np.array([20.0, 20.0]),
        air_m=np.array([20.0, 20.0]),
        ac_kva=np.array([1000.0, 50.0]),
        ac_v=np.array([800.0, 800.0]),
        air_inc_circuit=np.array([0, 1]),
        air_inc_stretch=np.array([0, 0]),
    )
    r = size_circuits(inp)
    assert r.parallel.tolist() == [2, 1] and r.size_mm2.tolist() == [300.0, 16.0]
    assert r.air_count_final.tolist() == [3.0]
    assert r.group_count.tolist() == [3.0, 3.0]
    assert_allclose(r.ampacity_a, [2 * 703.0 * 0.91 * 0.70, 100.0 * 0.91 * 0.70])
    assert r.ok.all() and r.iterations == 2


def test_strings_are_never_run_in_parallel():
    # one PV cable per pole: a string too long for 10 mm² fails, it does not get two sets
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([400.0]),
        air_m=np.array([10.0]),
        isc_a=np.array([13.0]),
        imp_a=np.array([12.0]),
        vmp_v=np.array([1000.0]),
    )
    r = size_circuits(inp, DesignParams(drop_dc_total_pct=5.0))
    assert r.parallel.tolist() == [1] and r.size_mm2.tolist() == [10.0] and not r.ok[0]
    # 2 · 0.4 · 12 · 1.95 · 1.393 = 26.1 V = 2.61 % (PV cable at 120 °C, IEC 60228 class 5)
    assert r.note.tolist() == ["voltage drop 2.61 % exceeds 1.00 % with largest allowed 10 mm² Cu"]


def test_size_lists_of_any_form():
    inp = SizingInput(
        kind=np.array([0, 2], dtype=np.int8),
        cable_m=np.array([10.0, 10.0]),
        air_m=np.array([10.0, 10.0]),
        isc_a=np.array([5.0, np.nan]),
        imp_a=np.array([4.5, np.nan]),
        vmp_v=np.array([1000.0, np.nan]),
        ac_kva=np.array([np.nan, 10.0]),
        ac_v=np.array([np.nan, 400.0]),
    )
    # steps of 1 mm² and a one-size list are valid; 1.5 mm² PV cable carries 24 A on a surface
    # (EN 50618 Table A.3, pair) ≥ 1.25 × 5 A
    r = size_circuits(inp, DesignParams(sizes_string_mm2=(1.5, 2.5, 4.0), sizes_ac_mm2=(300.0,)))
    assert r.size_mm2.tolist() == [1.5, 300.0]
    # integer sizes are named as numbers of mm² in the message
    with pytest.raises(InputError) as e:
        size_circuits(inp, DesignParams(sizes_string_mm2=(4, 300)))
    assert str(e.value) == (
        "string sizes [300.0] mm² Cu/PV have no tabulated capacity for environment air with 2 "
        "loaded conductors (iec rules); remove them from the size list"
    )


def test_air_stretch_counts_and_defaults():
    # without air_count the incident circuits are counted; a stretch nobody uses counts 0;
    # without air_behind_modules no stretch is behind the modules (open-air temperature)
    inp = _strings_in_air()
    inp.air_count, inp.air_behind_modules = None, None
    inp.air_inc_circuit = np.array([0, 1, 2, 3])
    inp.air_inc_stretch = np.array([0, 0, 2, 2])
    r = size_circuits(inp, DesignParams(row_air_temp_c=70.0))
    assert r.air_count_final.tolist() == [2.0, 0.0, 2.0]
    assert r.governing_air.tolist() == [0, 0, 2, 2]
    assert_allclose(r.factor_temp, [1.0] * 4)  # EN 50618 Table A.4: 1.00 at 40 °C
    assert_allclose(r.factor_group, [0.80] * 4)  # B.52.17 item 1, 2 circuits
    # air_count may name more stretches than the incidence uses
    inp.air_count = np.array([0.0, 0.0, 0.0, 5.0])
    assert size_circuits(inp).air_count_final.tolist() == [2.0, 0.0, 2.0, 5.0]
    # no stretches at all
    inp.air_count, inp.air_inc_circuit, inp.air_inc_stretch = None, None, None
    r = size_circuits(inp)
    assert r.air_count_final.tolist() == [] and (r.governing_air == -1).all()


def test_a_short_stretch_in_air_still_counts():
    # a string with 0.5 m in air behind the modules (70 °C: 44 A × 0.91 = 40.0 A, EN 50618
    # Tables A.3/A.4) and the rest direct in the ground at reference conditions (B.52.3 4 mm²
    # 46 A × √(4.61 / 5.09) = 43.8 A, derived): the air stretch governs
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([50.0]),
        air_m=np.array([0.5]),
        isc_a=np.array([13.0]),
        imp_a=np.array([12.0]),
        vmp_v=np.array([1000.0]),
        seg_depth_m=np.array([0.7]),
        seg_laying=np.array([0]),
        seg_spacing_m=np.array([0.0]),
        seg_soil_k_m_w=np.array([2.5]),
        seg_count=np.array([1]),
        inc_circuit=np.array([0]),
        inc_segment=np.array([0]),
    )
    r = size_circuits(inp, DesignParams(row_air_temp_c=70.0))
    assert r.governing_env.tolist() == ["air"] and r.governing_segment.tolist() == [-1]
    assert_allclose(r.ampacity_a, [44.0 * 0.91])
    # without the stretch in air the trench governs
    inp.air_m = np.array([0.0])
    r = size_circuits(inp, DesignParams(row_air_temp_c=70.0))
    assert r.governing_env.tolist() == ["D2"]
    assert_allclose(r.ampacity_a, [46.0 * np.sqrt(4.61 / 5.09)])


def _feeder_pair(ac_max_a, **route):
    """A large and a small a.c. circuit (800 V) sharing one stretch in air or one segment."""
    return SizingInput(
        kind=np.array([2, 2], dtype=np.int8),
        cable_m=np.array([10.0, 10.0]),
        air_m=np.array([10.0, 10.0]) if "air_inc_circuit" in route else np.zeros(2),
        ac_kva=np.array([1500.0, 50.0]),
        ac_v=np.array([800.0, 800.0]),
        ac_max_a=np.array([ac_max_a, np.nan]),
        **route,
    )


def test_extra_sets_count_in_the_group_when_they_are_tried():
    # an extra parallel set is one more circuit in the group already while it is tried, so the
    # right number of sets is found in the first pass and only confirmed in the second.
    # In air (bunched, B.52.17; 300 mm² trefoil 703 A × 0.91): Ib 900 A -> In 1000 A;
    # 2 sets with 3 circuits 2 × 639.7 × 0.70 = 895.6 A < 1000 A; 3 sets with 4 circuits
    # 3 × 639.7 × 0.65 = 1247.5 A
    inp = _feeder_pair(900.0, air_inc_circuit=np.array([0, 1]), air_inc_stretch=np.array([0, 0]))
    r = size_circuits(inp, DesignParams(sizes_ac_mm2=(16.0, 300.0)))
    assert r.parallel.tolist() == [3, 1] and r.air_count_final.tolist() == [4.0]
    assert r.iterations == 2
    # direct in the ground (B.52.18 touching, B.52.5 300 mm² D2 419 A): Ib 600 A -> In 630 A;
    # 2 sets, 3 circuits: 2 × 419 × 0.65 = 544.7 A; 3 sets, 4 circuits: 3 × 419 × 0.60 = 754.2 A
    inp = _feeder_pair(
        600.0,
        seg_depth_m=np.array([0.7]),
        seg_laying=np.array([0]),
        seg_spacing_m=np.array([0.0]),
        seg_soil_k_m_w=np.array([2.5]),
        seg_count=np.array([2]),
        inc_circuit=np.array([0, 1]),
        inc_segment=np.array([0, 0]),
    )
    r = size_circuits(inp, DesignParams(sizes_ac_mm2=(16.0, 300.0)))
    assert r.parallel.tolist() == [3, 1] and r.seg_count_final.tolist() == [4.0]
    assert_allclose(r.ampacity_a[0], 3 * 419.0 * 0.60)
    assert r.iterations == 2
