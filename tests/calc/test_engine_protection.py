"""Array backfeed protection and a.c. breakers through the sizing engine, recomputed by hand.

Sources: IEC 62548:2016 (1.25 · I_SC, the backfeed of the other arrays and the array fuse range
1.25-2.4 · I_SC; from memory), gPV fuse ratings (IEC 60269-6, catalogue practice),
IEC 60364-4-43:2008 433.1, IEC 60364-5-52:2009 Table B.52.12 method F, two loaded XLPE Cu
conductors in free air (values from memory: 25 mm² 161 A, 35 mm² 200 A, 50 mm² 242 A, 70 mm²
310 A, 95 mm² 377 A) and Table B.52.14 (XLPE at 40 °C: 0.91, confirmed). The site is invented.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc import DesignParams, InputError, SizingInput, failure_causes, size_circuits

F40 = 0.91  # IEC 60364-5-52:2009 Table B.52.14, XLPE, 40 °C air


def _arrays():
    """Six array cables in air, 50 m: three on input 5, one alone, two on input 8."""
    n = 6
    return SizingInput(
        kind=np.ones(n, dtype=np.int8),
        cable_m=np.full(n, 50.0),
        air_m=np.full(n, 50.0),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.array([10, 10, 10, 10, 8, 8]),
        dc_group=np.array([5, 5, 5, -1, 8, 8]),
    )


def test_array_fuses_where_the_backfeed_exceeds_the_cable():
    r = size_circuits(_arrays())
    # I_SC of an array 10 × 13 = 130 A, own design current 1.25 × 130 = 162.5 A; input 5:
    # backfeed 1.25 × 260 = 325 A; input 8: 8 × 13 = 104 A each, backfeed 1.25 × 104 = 130 A
    assert_allclose(r.isc_design_a, [130.0, 130.0, 130.0, 130.0, 104.0, 104.0])
    assert_allclose(r.backfeed_a, [325.0, 325.0, 325.0, 0.0, 130.0, 130.0])
    # input 5: a fuse in 162.5-312 A, the smallest gPV rating 200 A; the cable needs
    # max(162.5, In 200, I2/1.45 = 200) = 200 A: 50 mm² (242 × 0.91 = 220.2 A; 35 mm² has 182)
    # alone: 162.5 A -> 35 mm²; input 8: carries 130 A itself at 25 mm² (161 × 0.91 = 146.5 A)
    assert r.size_mm2.tolist() == [50.0, 50.0, 50.0, 35.0, 25.0, 25.0]
    assert_allclose(r.ampacity_a, F40 * np.array([242.0, 242.0, 242.0, 200.0, 161.0, 161.0]))
    assert_allclose(r.design_current_a, [200.0, 200.0, 200.0, 162.5, 130.0, 130.0])
    assert_allclose(r.array_fuse_a, [200.0, 200.0, 200.0, np.nan, np.nan, np.nan])
    assert r.protection.tolist() == [
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "alone on its inverter input: no backfeed",
        "no array fuse needed: backfeed 130 A ≤ Iz 147 A",
        "no array fuse needed: backfeed 130 A ≤ Iz 147 A",
    ]
    assert r.ok.all() and r.note.tolist() == [""] * 6
    assert (r.governing_env == "air").all() and (r.parallel == 1).all()
    assert_allclose(r.utilisation, r.design_current_a / r.ampacity_a)


def test_without_array_fuses_the_cable_carries_the_backfeed():
    r = size_circuits(_arrays(), DesignParams(array_protection="cable"))
    # input 5: Iz ≥ 325 A -> 95 mm² (377 × 0.91 = 343.1 A; 70 mm² has 282.1 A)
    assert r.size_mm2.tolist() == [95.0, 95.0, 95.0, 35.0, 25.0, 25.0]
    assert_allclose(r.design_current_a, [325.0, 325.0, 325.0, 162.5, 130.0, 130.0])
    assert np.isnan(r.array_fuse_a).all()
    assert r.protection.tolist() == [
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "alone on its inverter input: no backfeed",
        "cable carries backfeed 130 A ≤ Iz 147 A",
        "cable carries backfeed 130 A ≤ Iz 147 A",
    ]
    assert r.ok.all()


def _strings_on_array(**changes):
    """Array 0 with strings 1 and 2, in air; string 2 bifacial (φ 0.8)."""
    base = dict(
        kind=np.array([1, 0, 0], dtype=np.int8),
        cable_m=np.full(3, 20.0),
        air_m=np.full(3, 20.0),
        parent=np.array([-1, 0, 0]),
        isc_a=np.full(3, 13.0),
        imp_a=np.full(3, 12.0),
        vmp_v=np.full(3, 1000.0),
        n_strings=np.array([2, 1, 1]),
        bifaciality=np.array([np.nan, np.nan, 0.8]),
    )
    base.update(changes)
    return SizingInput(**base)


def test_bifacial_design_isc_of_strings_and_their_array():
    # I_SC,BIFI = 13 × (1 + 0.8 × 0.135) = 14.404 A (BNPI rear ratio, IEC 61215-1); the array's
    # module I_SC is the mean of its strings', (13 + 14.404) / 2, times its 2 strings
    r = size_circuits(_strings_on_array())
    assert_allclose(r.isc_design_a, [13.0 + 14.404, 13.0, 14.404])
    assert_allclose(r.design_current_a, [1.25 * (13.0 + 14.404), 1.25 * 13.0, 1.25 * 14.404])
    # a design rear ratio of 0.3 (the bifacial stress irradiance): 13 × 1.24 = 16.12 A
    r = size_circuits(_strings_on_array(), DesignParams(rear_irradiance_ratio=0.3))
    assert_allclose(r.isc_design_a[2], 16.12)
    # a datasheet bifacial I_SC is taken as given
    inp = _strings_on_array(isc_bifacial_a=np.array([np.nan, np.nan, 15.0]))
    assert_allclose(size_circuits(inp).isc_design_a, [28.0, 13.0, 15.0])


def test_string_fuses_from_the_projects_ratings():
    # 12 strings in parallel, I_SC 10 A, I_MOD_MAX_OCPR 20 A: 15-20 A; gPV list: 15 A (the
    # IEC 60269-1 general list would give 16 A); the project's list (20, 25): 20 A
    inp = _strings_on_array(
        isc_a=np.full(3, 10.0),
        imp_a=np.full(3, 9.0),
        bifaciality=np.full(3, np.nan),
        strings_in_parallel=np.array([1, 12, 12]),
        max_fuse_a=np.full(3, 20.0),
    )
    r = size_circuits(inp)
    assert_allclose(r.fuse_a, [np.nan, 15.0, 15.0])
    assert r.fuse_required.tolist() == [False, True, True]
    r = size_circuits(inp, DesignParams(string_fuse_ratings_a=(20.0, 25.0)))
    assert_allclose(r.fuse_a, [np.nan, 20.0, 20.0])
    with pytest.raises(InputError) as e:
        size_circuits(inp, DesignParams(string_fuse_ratings_a=(17.0,)))
    assert str(e.value).startswith("string_fuse_ratings_a: 17 A is not in the IEC 60269-6 gPV")
    with pytest.raises(InputError) as e:
        size_circuits(inp, DesignParams(array_fuse_ratings_a=(17.0,)))
    assert str(e.value).startswith("array_fuse_ratings_a: 17 A is not in the IEC 60269-6 gPV")


def test_the_module_maximum_fuse_decides_string_protection():
    # 2 strings in parallel: (2 − 1) × 1.25 × 13 = 16.25 A > I_MOD_MAX_OCPR 15 A -> protected
    # (IEC 62548:2016, from memory); without the module value two strings stay unfused
    inp = _strings_on_array(
        bifaciality=np.full(3, np.nan),
        strings_in_parallel=np.array([1, 2, 2]),
        max_fuse_a=np.array([np.nan, 15.0, np.nan]),
    )
    r = size_circuits(inp)
    assert r.fuse_required.tolist() == [False, True, False]


def test_input_zero_is_an_input_like_any_other():
    # dc_group 0 joins arrays 0 and 1 (backfeed 1.25 × 130 A each); -1 leaves array 2 alone
    inp = SizingInput(
        kind=np.ones(3, dtype=np.int8),
        cable_m=np.full(3, 50.0),
        air_m=np.full(3, 50.0),
        isc_a=np.full(3, 13.0),
        imp_a=np.full(3, 12.0),
        vmp_v=np.full(3, 1000.0),
        n_strings=np.full(3, 10),
        dc_group=np.array([0, 0, -1]),
    )
    assert_allclose(size_circuits(inp).backfeed_a, [162.5, 162.5, 0.0])


def test_dc_fields_of_ac_circuits_are_ignored():
    # a.c. circuits need none of the d.c. fields: values there are not checked or used
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([50.0]),
        ac_v=np.array([400.0]),
        isc_a=np.array([13.0]),
        bifaciality=np.array([1.5]),
        isc_bifacial_a=np.array([1.0]),
    )
    r = size_circuits(inp)
    assert r.ok.tolist() == [True] and np.isnan(r.isc_design_a[0])


def test_arrays_alone_never_share_an_input():
    # dc_group -1: each array alone, whatever the ids of the real inputs (here 1)
    inp = _arrays()
    inp.dc_group = np.array([-1, -1, -1, 1, 1, -1])
    # arrays 3 (130 A) and 4 (104 A) on input 1: 1.25 × 104 and 1.25 × 130
    assert_allclose(size_circuits(inp).backfeed_a, [0.0, 0.0, 0.0, 130.0, 162.5, 0.0])


def test_the_projects_array_fuse_and_breaker_ratings():
    # input 5 of _arrays: 162.5-312 A; the project's gPV ratings 250 and 315 A: 250 A, the
    # cable then needs 250 A: 70 mm² (310 × 0.91 = 282.1 A; 50 mm² has 220.2 A)
    r = size_circuits(_arrays(), DesignParams(array_fuse_ratings_a=(250.0, 315.0)))
    assert_allclose(r.array_fuse_a[:3], [250.0] * 3)
    assert r.size_mm2[:3].tolist() == [70.0] * 3
    # a.c.: Ib 144.3 A (100 kVA, 400 V); the project's IEC 60947-2 ratings 250 and 400 A
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([100.0]),
        ac_v=np.array([400.0]),
    )
    r = size_circuits(inp, DesignParams(ac_breaker_ratings_a=(250.0, 400.0)))
    assert r.ac_breaker_a.tolist() == [250.0] and r.design_current_a.tolist() == [250.0]
    with pytest.raises(InputError) as e:
        size_circuits(inp, DesignParams(ac_breaker_ratings_a=(170.0,)))
    assert str(e.value).startswith(
        "ac_breaker_ratings_a: 170 A is not in the IEC 60947-2 breaker rating list (16, 20, "
    )


def test_strings_straight_to_an_inverter_leave_the_array_budget_alone():
    # string 0 goes to an inverter (no array); array 1 has no strings in the input: its budget
    # is its own limit, 1.5 %, whatever string 0 drops
    inp = SizingInput(
        kind=np.array([0, 1], dtype=np.int8),
        cable_m=np.array([100.0, 50.0]),
        air_m=np.array([100.0, 50.0]),
        parent=np.array([-1, -1]),
        isc_a=np.full(2, 13.0),
        imp_a=np.full(2, 12.0),
        vmp_v=np.full(2, 1000.0),
        n_strings=np.array([1, 8]),
    )
    r = size_circuits(inp)
    assert_allclose(r.vdrop_limit_pct, [1.0, 1.5])


def _three_on_one_input(strings, sizes, max_parallel, protection):
    inp = _arrays()
    for name in ("kind", "cable_m", "air_m", "isc_a", "imp_a", "vmp_v"):
        setattr(inp, name, getattr(inp, name)[:3])
    inp.n_strings, inp.dc_group = np.full(3, strings), np.full(3, 5)
    design = DesignParams(
        sizes_array_mm2=sizes, max_parallel=max_parallel, array_protection=protection
    )
    return size_circuits(inp, design)


def test_a_cable_too_small_for_its_backfeed_protection_names_what_it_needs():
    # with a 200 A array fuse (10 strings of 13 A, see above) the cable needs 200 A; 25 mm²
    # carries 161 × 0.91 = 146.5 A
    r = _three_on_one_input(10, (16.0, 25.0), 1, "fuse")
    assert r.design_current_a.tolist() == [200.0] * 3 and not r.ok.any()
    assert r.note[0] == (
        "needs 200 A (backfeed 325 A from its input, with an array fuse) after derating 0.91; "
        "largest allowed 25 mm² Cu carries 147 A"
    )
    assert failure_causes(r)["capacity"].all()
    # without array fuses the cable itself needs the backfeed, 325 A; 50 mm² has 220.2 A
    r = _three_on_one_input(10, (35.0, 50.0), 1, "cable")
    assert r.design_current_a.tolist() == [325.0] * 3 and not r.ok.any()
    assert_allclose(r.utilisation, 325.0 / (242.0 * 0.91))
    assert r.note[0] == (
        "needs 325 A (backfeed 325 A from its input, with no array fuses) after derating 0.91; "
        "largest allowed 50 mm² Cu carries 220 A"
    )


def test_an_array_no_fuse_fits_must_carry_its_backfeed():
    # 40 strings of 13 A: I_SC 520 A, the fuse range 650-1248 A lies above the gPV list (to
    # 630 A): no fuse; the cable must carry the backfeed 1.25 × 1040 = 1300 A itself;
    # 2 × 240 mm² carry 2 × 679 × 0.91 = 1235.8 A
    r = _three_on_one_input(40, (185.0, 240.0), 2, "fuse")
    assert r.design_current_a.tolist() == [1300.0] * 3 and not r.ok.any()
    assert_allclose(r.utilisation, 1300.0 / (2 * 679.0 * 0.91))
    assert r.note[0] == (
        "no standard array fuse within 1.25–2.4 × the array's Isc 520 A (IEC 62548); needs "
        "1300 A (backfeed 1300 A from its input, with no array fuses) after derating 0.91; "
        "largest allowed 2×240 mm² Cu carries 1236 A"
    )
    # a design without array fuses does not mention them
    r = _three_on_one_input(40, (185.0, 240.0), 2, "cable")
    assert r.design_current_a.tolist() == [1300.0] * 3
    assert r.note[0] == (
        "needs 1300 A (backfeed 1300 A from its input, with no array fuses) after derating "
        "0.91; largest allowed 2×240 mm² Cu carries 1236 A"
    )


def test_a_backfeed_below_one_ampere_is_still_named():
    # two one-string arrays of 0.5 A on one input: backfeed 1.25 × 0.5 = 0.625 A, carried
    inp = SizingInput(
        kind=np.ones(2, dtype=np.int8),
        cable_m=np.full(2, 20.0),
        air_m=np.full(2, 20.0),
        isc_a=np.full(2, 0.5),
        imp_a=np.full(2, 0.45),
        vmp_v=np.full(2, 1000.0),
        dc_group=np.array([2, 2]),
    )
    r = size_circuits(inp)
    assert_allclose(r.backfeed_a, [0.625, 0.625])
    # 16 mm² (method E two loaded 115 A × 0.91 = 104.65 A)
    assert r.protection.tolist() == ["no array fuse needed: backfeed 1 A ≤ Iz 105 A"] * 2
