"""An array cable that cannot carry even a backfeed below 1 A. Two arrays of one string of tiny
modules share an inverter input; array 0 runs alone in a trench segment whose routing count is
absurdly high (1 000 000 circuits), which derates its only allowed size (16 mm², one set) below
1 A. The schedule must then name the backfeed and the fuse, never call the array alone.

Backfeed by hand, IEC 62548:2016 (from memory): B = 1.25 × I_SC of the other array; array fuse:
the smallest gPV rating with 1.25 × I_SC ≤ In ≤ 2.4 × I_SC (calc.protection, from memory).
"""

from calc import DesignParams, size_circuits

from .test_engine_input_edges import _input


def _two_tiny_arrays(isc_a):
    return _input(
        kind=[1, 1],
        isc_a=isc_a,
        imp_a=[0.9 * isc_a[0], 0.9 * isc_a[1]],
        dc_group=[5, 5],
        seg_depth_m=[0.7],
        seg_laying=[0],
        seg_spacing_m=[0.0],
        seg_soil_k_m_w=[2.5],
        seg_count=[1e6],
        inc_circuit=[0],
        inc_segment=[0],
    )


def test_without_array_fuses_the_failing_cable_names_its_backfeed():
    # array 0: I_SC 0.1 A -> own design current 1.25 × 0.1 = 0.125 A; B = 1.25 × 0.6 = 0.75 A
    design = DesignParams(max_parallel=1, sizes_array_mm2=(16.0,), array_protection="cable")
    res = size_circuits(_two_tiny_arrays([0.1, 0.6]), design)
    assert res.ok.tolist() == [False, True]
    assert res.design_current_a[0] == 0.75
    assert res.protection[0] == ""  # no rule could be met: the note says why
    assert res.note[0] == (
        "needs 1 A (backfeed 1 A from its input, with no array fuses) after derating 0.00; "
        "largest allowed 16 mm² Cu carries 0 A"
    )


def test_with_array_fuses_the_fuse_is_named_for_a_backfeed_below_1_a():
    # array 0: I_SC 0.8 A -> fuse 1.25 × 0.8 = 1.0 A ≤ In ≤ 1.92 A -> 1 A gPV;
    # B = 1.25 × 0.6 = 0.75 A (shown rounded, "1 A") exceeds the derated Iz
    design = DesignParams(max_parallel=1, sizes_array_mm2=(16.0,), array_protection="fuse")
    res = size_circuits(_two_tiny_arrays([0.8, 0.6]), design)
    assert res.protection[0] == "array fuse 1 A gPV: backfeed 1 A > Iz 0 A"
