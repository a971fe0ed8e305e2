"""The governing air stretch of a circuit that runs along several stretches, whichever its place.

Factors recomputed by hand: EN 50618:2014 Table A.4 (PV cable, 0.91 at 70 °C, from memory) and
Table A.3 (4 mm² pair on a surface 44 A, from memory); IEC 60364-5-52:2009 Table B.52.17 item 1
(bunched: 2 circuits 0.80, 6 circuits 0.57, confirmed in calc/data). Sites invented.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits


def _two_strings(inc_circuit, inc_stretch):
    """Strings 0 and 1 in air: stretch 0 a row run behind the modules that routing counted
    6 circuits on, stretch 1 a stub in open air."""
    n = 2
    return SizingInput(
        kind=np.zeros(n, dtype=np.int8),
        cable_m=np.full(n, 30.0),
        air_m=np.full(n, 10.0),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        air_count=np.array([6.0, 0.0]),
        air_behind_modules=np.array([True, False]),
        air_inc_circuit=np.array(inc_circuit),
        air_inc_stretch=np.array(inc_stretch),
    )


def test_a_later_circuit_on_two_stretches_takes_the_more_onerous_one():
    # string 0 on the row run only; string 1 on the row run and on the stub.
    # row run: 0.91 (70 °C) × 0.57 (6 bunched) = 0.5187; stub: 1.00 (40 °C) × 1.00 (string 1
    # alone there) = 1.00. Both strings are governed by the row run: 44 A × 0.5187 = 22.8 A
    # ≥ 1.25 × 13 A = 16.25 A, so 4 mm².
    r = size_circuits(_two_strings([0, 1, 1], [0, 0, 1]), DesignParams(row_air_temp_c=70.0))
    assert r.governing_air.tolist() == [0, 0]
    assert r.group_count.tolist() == [6.0, 6.0]
    assert_allclose(r.factor_group, [0.57, 0.57])
    assert_allclose(r.factor_temp, [0.91, 0.91])
    assert_allclose(r.ampacity_a, [44.0 * 0.91 * 0.57] * 2)
    assert r.air_count_final.tolist() == [6.0, 1.0]
    # the same with the stub listed first for string 1 (incidence in any order)
    r = size_circuits(_two_strings([1, 0, 1], [1, 0, 0]), DesignParams(row_air_temp_c=70.0))
    assert r.governing_air.tolist() == [0, 0]
    # when the stub is the worse one (6 circuits counted there, 40 °C: 0.57 against the row
    # run's 0.91 × 0.80 = 0.728 for its 2 circuits), string 1 takes the stub
    inp = _two_strings([0, 1, 1], [0, 0, 1])
    inp.air_count = np.array([0.0, 6.0])
    r = size_circuits(inp, DesignParams(row_air_temp_c=70.0))
    assert r.governing_air.tolist() == [0, 1]
    assert_allclose(r.factor_group, [0.80, 0.57])
    assert_allclose(r.factor_temp, [0.91, 1.0])
    assert_allclose(r.derating, [0.91 * 0.80, 0.57])


def test_a_circuit_in_air_without_a_stretch_is_rated_alone():
    # strings 0 and 1 share the row run (0.91 × 0.80 for 2 bunched = 0.728); string 2 has 10 m
    # in air but no stretch: one circuit behind the modules, 0.91 × 1.00; a.c. circuit 3 in the
    # ground only (B.52.18: alone, factor 1.00) has no air stretch either
    inp = SizingInput(
        kind=np.array([0, 0, 0, 2], dtype=np.int8),
        cable_m=np.full(4, 30.0),
        air_m=np.array([10.0, 10.0, 10.0, 0.0]),
        isc_a=np.array([13.0, 13.0, 13.0, np.nan]),
        imp_a=np.array([12.0, 12.0, 12.0, np.nan]),
        vmp_v=np.array([1000.0, 1000.0, 1000.0, np.nan]),
        ac_kva=np.array([np.nan, np.nan, np.nan, 100.0]),
        ac_v=np.array([np.nan, np.nan, np.nan, 400.0]),
        air_behind_modules=np.array([True]),
        air_inc_circuit=np.array([0, 1]),
        air_inc_stretch=np.array([0, 0]),
        seg_depth_m=np.array([0.7]),
        seg_laying=np.array([0]),
        seg_spacing_m=np.array([0.0]),
        seg_soil_k_m_w=np.array([2.5]),
        seg_count=np.array([1]),
        inc_circuit=np.array([3]),
        inc_segment=np.array([0]),
    )
    r = size_circuits(inp, DesignParams(row_air_temp_c=70.0))
    assert r.governing_air.tolist() == [0, 0, -1, -1]
    assert r.governing_env.tolist() == ["air", "air", "air", "D2"]
    assert r.governing_segment.tolist() == [-1, -1, -1, 0]
    assert r.group_count.tolist() == [2.0, 2.0, 0.0, 1.0]
    assert_allclose(r.factor_temp, [0.91, 0.91, 0.91, 1.0])
    assert_allclose(r.factor_group, [0.80, 0.80, 1.0, 1.0])
    # in air there is no soil or depth factor: both 1
    assert_allclose(r.factor_soil, [1.0] * 4)
    assert_allclose(r.factor_depth, [1.0] * 4)
    assert_allclose(r.derating, [0.728, 0.728, 0.91, 1.0])
    assert_allclose(r.ampacity_a[:3], [44.0 * 0.728, 44.0 * 0.728, 44.0 * 0.91])
    assert r.air_count_final.tolist() == [2.0]


def test_no_circuits_at_all():
    # an empty input is sized to empty results (no level, no tree to climb)
    r = size_circuits(SizingInput(kind=np.array([], dtype=np.int8), cable_m=np.array([])))
    assert r.size_mm2.shape == (0,) and r.voc_max_v.shape == (0,) and r.note.shape == (0,)
    assert r.total_loss_w.tolist() == [0.0] * 4 and r.total_loss_pct.tolist() == [0.0] * 4
