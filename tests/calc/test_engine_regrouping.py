"""The sizing engine's second pass and a few of its outcomes checked against the rules outside
it: a circuit whose neighbour in the trench is laid in parallel sets is regrouped with every
set (IEC 60364-5-52:2009 Table B.52.18), a circuit crossing several segments is rated on the
worst whatever order its incidence is given in, the Joule loss of a d.c. circuit equals its
current times its voltage drop, an open-circuit voltage exactly at the rated voltage passes,
and the size list of sub-array cables is the one given.
"""

from numpy.testing import assert_allclose

from calc import DesignParams, size_circuits

from .test_engine_input_edges import _input

# IEC 60364-5-52:2009 Table B.52.18 (from memory; 4-6 circuits of the 0.5 m column confirmed
# against BS 7671 Table 4C2): cables touching ("nil" clearance), by number of circuits.
B52_18_NIL = {1: 1.0, 2: 0.75, 3: 0.65, 4: 0.60, 5: 0.55, 6: 0.50, 7: 0.45, 8: 0.43, 9: 0.41}


def _shared_trench():
    """Array 0 of 60 strings (1.25 × 13 A × 60 = 975 A: more than one 300 mm² set) and array 1
    of 10 strings in one trench segment at the reference 0.7 m and 2.5 K·m/W, touching; and a
    string of its own (no trench), sized first in every pass."""
    return _input(
        kind=[1, 1, 0],
        n_strings=[60, 10, 1],
        seg_depth_m=[0.7],
        seg_laying=[0],
        seg_spacing_m=[0.0],
        seg_soil_k_m_w=[2.5],
        inc_circuit=[0, 1],
        inc_segment=[0, 0],
    )


def test_a_neighbour_laid_in_parallel_sets_regroups_the_other_circuit():
    res = size_circuits(_shared_trench())
    p = int(res.parallel[0])
    assert p >= 2  # the first pass counted 2 circuits; the parallel sets add p − 1
    assert res.parallel[1] == 1
    # every conductor set is a circuit for grouping (calc.ampacity.group_factor: "each parallel
    # conductor set counted as a circuit"): 1 + p circuits in the segment, for both arrays
    assert res.group_count[:2].tolist() == [1.0 + p, 1.0 + p]
    assert_allclose(res.factor_group[:2], [B52_18_NIL[1 + p]] * 2, rtol=1e-12)


def test_the_joule_loss_of_a_dc_circuit_is_its_current_times_its_drop():
    # d.c. loop: ΔU = 2 · I · R · L / p and P = 2 · I² · R · L / p, so P = I · ΔU (Ohm's and
    # Joule's laws), with p conductor sets sharing the current, here p ≥ 2 for array 0
    res = size_circuits(_shared_trench())
    assert res.parallel[0] >= 2
    assert_allclose(res.loss_w, res.operating_current_a * res.vdrop_v, rtol=1e-12)


def test_a_circuit_across_segments_is_rated_on_the_worst_in_any_order():
    # array 0 crosses segments 0 (1.0 K·m/W) and 1 (3.0 K·m/W); array 1 lies in segment 2
    # (2.5 K·m/W); the pairs are given out of order. B.52.16 direct (from memory): 1.50, 0.90,
    # 1.00 -> array 0 is governed by segment 1.
    inp = _input(
        kind=[1, 1],
        n_strings=[10, 10],
        seg_depth_m=[0.7, 0.7, 0.7],
        seg_laying=[0, 0, 0],
        seg_spacing_m=[0.0, 0.0, 0.0],
        seg_soil_k_m_w=[1.0, 3.0, 2.5],
        inc_circuit=[0, 1, 0],
        inc_segment=[0, 2, 1],
    )
    res = size_circuits(inp)
    assert res.governing_segment.tolist() == [1, 2]
    assert_allclose(res.factor_soil, [0.90, 1.00], rtol=1e-12)


def test_an_open_circuit_voltage_at_the_rated_voltage_passes():
    # IEC 62548:2016 (from memory): V_OC,max = V_OC · (1 + β/100 · (T_min − 25 °C)) must not
    # exceed the rated d.c. voltage. 1000 V, β = −0.5 %/°C, T_min = −25 °C:
    # 1000 · (1 + 0.005 · 50) = 1250 V, exactly the rating of 1250 V: allowed.
    inp = _input(kind=[0, 0], voc_v=[1000.0, 1000.0], voc_coeff_pct_per_c=[-0.5, -0.5])
    res = size_circuits(inp, DesignParams(min_ambient_c=-25.0, dc_rated_v=1250.0))
    assert res.voc_max_v.tolist() == [1250.0, 1250.0]
    assert res.ok.tolist() == [True, True]
    assert not any("exceeds the rated" in note for note in res.note)


def test_sub_array_cables_are_sized_from_their_own_size_list():
    # array 0 ← sub-array 1 ← string 2: the sub-array cable carries 4 strings (65 A), which a
    # 16 mm² cable would; only 95 and 120 mm² are allowed for sub-array cables.
    inp = _input(kind=[1, 3, 0], parent=[-1, 0, 1], n_strings=[10, 4, 1])
    res = size_circuits(inp, DesignParams(sizes_subarray_mm2=(95.0, 120.0)))
    assert res.size_mm2[1] == 95.0


def test_an_open_circuit_voltage_on_the_rating_up_to_rounding_passes():
    # β = 0 %/°C (no temperature change): V_OC,max = V_OC. A V_OC equal to the 1500 V rating up
    # to float rounding (1 part in 10⁹, the engine's tolerance) is on the rating: allowed.
    voc = 1500.0 * (1.0 + 1e-9)
    inp = _input(kind=[0], voc_v=[voc], voc_coeff_pct_per_c=[0.0])
    res = size_circuits(inp, DesignParams(dc_rated_v=1500.0))
    assert res.voc_max_v.tolist() == [voc]
    assert res.ok.tolist() == [True]
