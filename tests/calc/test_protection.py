"""Overcurrent protection of array and a.c. circuits and the bifacial design Isc (calc.protection).

Sources named beside each check. "from memory" marks values recalled, not read (see the data files'
tags); worked examples are invented and computed by hand in the comments.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from calc.errors import InputError, UnknownOptionError
from calc.protection import (
    ac_breaker,
    array_cable_check,
    array_fuse,
    array_min_capacity_a,
    backfeed_a,
    bifacial_isc_a,
    bnpi_rear_ratio,
    breaker_ratings_a,
    gpv_fuse_ratings_a,
    i2_factor,
    overload_check,
)
from calc.pv import ac_max_current_a
from calc.rules import get_rules
from calc.tables import load_table

# --------------------------------------------------------------------------------------------
# data files: row counts and known cells


def test_gpv_fuse_ratings_file():
    # IEC 60269-6:2010 gPV fuse-links; catalogue list (REFERENCE_VALUES 10.3, memory-low as a whole)
    t = load_table("iec60269_6_gpv_fuse_ratings.csv")
    assert len(t) == 30
    row = t["rating_a"] == 15
    assert t["tag"][row].tolist() == ["confirmed"]  # a 15 A 1000 V DC string fuse-link was seen
    assert t["seen_in"][row].tolist() == ["S4"]
    assert any("catalogue practice" in line for line in t.header)


def test_breaker_rating_files():
    # IEC 60898-1 preferred values 6-125 A: 14 values, 8 A from memory (not in the public list seen)
    t = load_table("iec60898_1_breaker_ratings.csv")
    assert len(t) == 14
    assert t["tag"][t["rating_a"] == 8].tolist() == ["memory"]
    # IEC 60947-2 / IEC 60059 R10 (from memory), 16-4000 A with catalogue 320 A and 3200 A
    t = load_table("iec60947_2_breaker_ratings.csv")
    assert len(t) == 27
    assert t["tag"][t["rating_a"] == 315].tolist() == ["confirmed"]


def test_conventional_current_file():
    # IEC 60898-1: Inf 1.13 In, I2 1.45 In; IEC 60947-2: 1.05 In / 1.30 In (confirmed, a maker's
    # summary of both standards); gPV (IEC 60269-6) I2 1.45 In from memory
    t = load_table("overcurrent_device_conventional_currents.csv")
    assert len(t) == 3
    row = t.where(device="iec60947-2")
    assert t["inf_factor"][row].tolist() == [1.05] and t["i2_factor"][row].tolist() == [1.30]
    assert t["tag"][t.where(device="gpv")].tolist() == ["memory"]


def test_bifacial_irradiance_file():
    # IEC 61215-1:2021 BNPI 1000 + 135 W/m², BSI 1000 + 300 W/m² (confirmed, REFERENCE_VALUES 10.4)
    t = load_table("iec61215_1_2021_bifacial_irradiance.csv")
    assert len(t) == 2
    assert t["g_rear_w_m2"][t.where(name="bnpi")].tolist() == [135.0]
    assert t["g_rear_w_m2"][t.where(name="bsi")].tolist() == [300.0]


def test_rules_file_has_the_array_fuse_bounds():
    # IEC 62548:2016 (from memory): 1.25 · I_SC ≤ In ≤ 2.4 · I_SC of the sub-array / array
    t = load_table("iec62548_2016_pv_dc_rules.csv")
    assert len(t) == 8  # the factors, the unfused-strings assumption, the Voc factor
    row = t.where(name="array_fuse_max_x_isc")
    assert t["value"][row].tolist() == [2.4] and t["tag"][row].tolist() == ["memory"]


# --------------------------------------------------------------------------------------------
# rating lists and the user's restriction


def test_gpv_list_has_string_and_array_ratings():
    # catalogue practice (memory-low list): 15 A and 30 A string fuses, NH array fuses to 630 A
    r = gpv_fuse_ratings_a()
    assert {15.0, 30.0, 125.0, 200.0, 630.0} <= set(r.tolist())
    assert np.all(np.diff(r) > 0)


def test_iec60898_preferred_values():
    # IEC 60898-1 preferred In (confirmed except 8 A): 6, 10, 13, 16, 20, 25, 32, 40, 50, 63, 80,
    # 100, 125 A
    assert breaker_ratings_a("iec60898-1").tolist() == [
        6.0, 8.0, 10.0, 13.0, 16.0, 20.0, 25.0, 32.0, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0,
    ]  # fmt: skip


def test_iec60947_r10_values_from_160_a():
    # IEC 60059 R10 series 160-4000 A (from memory): 1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8 × 10^n
    r = breaker_ratings_a("iec60947-2")
    r10 = [160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000]
    assert set(r10) <= set(r.tolist())
    assert r[0] == 16.0 and r[-1] == 4000.0


def test_user_list_is_kept_when_every_value_is_standard():
    assert gpv_fuse_ratings_a([250.0, 15, 125]).tolist() == [15.0, 125.0, 250.0]
    assert breaker_ratings_a("iec60947-2", [320, 630]).tolist() == [320.0, 630.0]


def test_user_value_not_in_the_standard_list_is_named():
    with pytest.raises(InputError) as e:
        breaker_ratings_a("iec60898-1", [16, 30, 125], setting="ac_breaker_ratings_a")
    assert str(e.value) == (
        "ac_breaker_ratings_a: 30 A is not in the IEC 60898-1 breaker rating list "
        "(6, 8, 10, 13, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125 A)"
    )
    with pytest.raises(InputError) as e:
        gpv_fuse_ratings_a([17, 15, 18])
    assert str(e.value).startswith(
        "fuse_ratings_a: 17 A, 18 A are not in the IEC 60269-6 gPV fuse rating list (1, 2, 3, "
    )


def test_user_list_empty_or_not_numbers():
    with pytest.raises(InputError) as e:
        gpv_fuse_ratings_a([])
    assert str(e.value) == "fuse_ratings_a: must be a non-empty list of ratings [A]"
    with pytest.raises(InputError) as e:
        gpv_fuse_ratings_a(["big"])
    assert str(e.value) == "fuse_ratings_a: ratings must be numbers [A]"


def test_unknown_device_lists_the_valid_ones():
    with pytest.raises(UnknownOptionError) as e:
        breaker_ratings_a("ul489")
    assert str(e.value) == "breaker device must be one of 'iec60898-1', 'iec60947-2'; got 'ul489'"
    with pytest.raises(UnknownOptionError) as e:
        i2_factor("gG")
    assert str(e.value) == (
        "protective device must be one of 'iec60898-1', 'iec60947-2', 'gpv'; got 'gG'"
    )


def test_conventional_tripping_factors():
    # IEC 60898-1 I2 = 1.45 In, IEC 60947-2 I2 = 1.30 In (confirmed); gPV 1.45 In (from memory)
    assert i2_factor("iec60898-1") == 1.45
    assert i2_factor("iec60947-2") == 1.30
    assert i2_factor("gpv") == 1.45


# --------------------------------------------------------------------------------------------
# bifacial design Isc (IEC 62548-1:2023 Annex F by its publisher's summary; formula from memory)


def test_bnpi_is_the_default_rear_ratio():
    # IEC 61215-1 bifacial nameplate irradiance: 135 W/m² rear at 1000 W/m² front
    assert bnpi_rear_ratio() == 135.0 / 1000.0


def test_bifacial_worked_example():
    # Isc 13.9 A, φ = 0.80, BNPI: 0.80 × 0.135 = 0.108; 13.9 × 1.108 = 15.4012 A
    assert_allclose(bifacial_isc_a([13.9], [0.80]), [15.4012], rtol=1e-12)
    # same module at the bifacial stress irradiance (BSI, 300 W/m² rear): 13.9 × 1.24 = 17.236 A
    assert_allclose(bifacial_isc_a([13.9], [0.80], 0.3), [17.236], rtol=1e-12)


def test_bifacial_limiting_cases():
    isc = [13.9, 13.9, 13.9]
    # φ = 0 -> Isc unchanged; φ nan -> monofacial, Isc unchanged; rear ratio 0 -> unchanged
    assert bifacial_isc_a(isc, [0.0, np.nan, 0.0], [0.135, 0.135, 0.0]).tolist() == isc
    # the datasheet bifacial Isc takes precedence over the formula, also for a monofacial φ
    out = bifacial_isc_a(isc, [0.8, np.nan, 0.7], 0.135, [15.0, np.nan, 16.2])
    assert out.tolist() == [15.0, 13.9, 16.2]


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        (
            {"bifaciality": [0.7, 1.2]},
            "bifaciality must be within 0-1 (nan = monofacial); got 1.2 at index 1",
        ),
        (
            {"bifaciality": [0.7, -0.1]},
            "bifaciality must be within 0-1 (nan = monofacial); got -0.1 at index 1",
        ),
        (
            {"bifaciality": [0.7, 0.7], "rear_irradiance_ratio": -0.1},
            "rear_irradiance_ratio must be finite and >= 0; got -0.1 at index 0",
        ),
        (
            {"bifaciality": [0.7, 0.7], "isc_bifacial_a": [np.nan, 12.0]},
            "isc_bifacial_a below isc_a; got 12 at index 1",
        ),
    ],
)
def test_bifacial_inputs_out_of_range_are_refused(kwargs, message):
    with pytest.raises(InputError) as e:
        bifacial_isc_a([13.9, 13.9], **kwargs)
    assert str(e.value) == message


# --------------------------------------------------------------------------------------------
# backfeed of the other arrays on one inverter d.c. input (IEC 62548:2016 I_SC MAX, from memory)


def test_one_array_on_an_input_has_no_backfeed():
    assert backfeed_a([96.0, 50.0], [1, 2]).tolist() == [0.0, 0.0]


def test_two_arrays_backfeed_is_the_other_ones_125_isc():
    # B = 1.25 × the other's Isc: 1.25 × 60 = 75 A into the 100 A array, 1.25 × 100 = 125 A
    # into the 60 A array (more than that array's own 1.25 × 60 = 75 A rating)
    assert backfeed_a([100.0, 60.0], [4, 4]).tolist() == [75.0, 125.0]
    # equal arrays: B = 1.25 · Isc, never more than the array's own 1.25 · Isc rating
    b = backfeed_a([96.0, 96.0], [4, 4])
    assert b.tolist() == [120.0, 120.0] and np.all(b <= 1.25 * 96.0)


def test_groups_in_any_order_and_with_any_ids():
    # inputs 30 and -2 interleaved: input 30 holds 50, 80, 120 A -> B = 1.25·(200, 170, 130)
    b = backfeed_a([50.0, 10.0, 80.0, 120.0, 10.0], [30, -2, 30, 30, -2])
    assert b.tolist() == [250.0, 12.5, 212.5, 162.5, 12.5]


@settings(max_examples=100, deadline=None)
@given(data=st.lists(st.tuples(st.floats(0.0, 500.0), st.integers(0, 5)), min_size=1, max_size=30))
def test_backfeed_matches_the_definition(data):
    # definition summed pair by pair: B_i = Σ_{j ≠ i, same input} 1.25 · Isc_j
    isc = np.array([d[0] for d in data])
    grp = np.array([d[1] for d in data])
    expected = [
        sum(1.25 * isc[j] for j in range(len(isc)) if j != i and grp[j] == grp[i])
        for i in range(len(isc))
    ]
    assert_allclose(backfeed_a(isc, grp), expected, rtol=1e-12, atol=1e-9)


def test_backfeed_inputs_are_checked():
    with pytest.raises(InputError) as e:
        backfeed_a([96.0, 96.0], [1.0, 1.0])
    assert str(e.value) == "group must hold integer ids of the inverter d.c. inputs"
    with pytest.raises(InputError) as e:
        backfeed_a([96.0, np.nan], [1, 1])
    assert str(e.value) == "isc_array_a must be finite and >= 0; got nan at index 1"
    with pytest.raises(InputError) as e:
        backfeed_a([96.0, 96.0], [1])
    assert str(e.value) == "isc_array_a, group and source must be 1-D arrays of one length"


# --------------------------------------------------------------------------------------------
# array fuses and array cables (IEC 62548:2016 from memory; IEC 60364-4-43:2008 433.1)


def test_worked_example_four_equal_arrays_on_one_input():
    # four arrays of 8 strings, module Isc 12.0 A: I_SC array = 8 × 12.0 = 96.0 A each
    isc = np.full(4, 8 * 12.0)
    # backfeed into one array cable: 1.25 × (3 × 96) = 1.25 × 288 = 360 A
    b = backfeed_a(isc, [0, 0, 0, 0])
    assert_allclose(b, 360.0, rtol=1e-12)
    # fuse range: 1.25 × 96 = 120 A ... 2.4 × 96 = 230.4 A; smallest gPV rating ≥ 120 A: 125 A
    f = array_fuse(isc)
    assert_allclose(f.lower_a, 120.0, rtol=1e-12)
    assert_allclose(f.upper_a, 230.4, rtol=1e-12)
    assert f.fuse_a.tolist() == [125.0] * 4 and f.ok.all()
    # cable: without array fuses it carries the backfeed, Iz ≥ 360 A; with the 125 A fuse
    # Iz ≥ In = 125 A (gPV I2 = 1.45 × 125 = 181.25 A ≤ 1.45 × 125 A)
    assert_allclose(array_min_capacity_a(isc, b, np.nan), 360.0, rtol=1e-12)
    assert_allclose(array_min_capacity_a(isc, b, f.fuse_a), 125.0, rtol=1e-12)
    # a 150 A cable: protection needed (360 > 150); fused it passes, unfused it fails
    c = array_cable_check([150.0, 150.0], b[:2], [125.0, np.nan])
    assert c.needed.tolist() == [True, True] and c.ok.tolist() == [True, False]
    assert c.note[1] == (
        "backfeed 360.0 A from the other arrays of the input exceeds Iz 150.0 A "
        "and no array fuse is fitted"
    )


def test_array_fuse_lower_bound_equal_to_a_rating_is_taken():
    # I_SC 100 A: lower bound 1.25 × 100 = 125 A, itself a gPV rating -> 125 A
    assert array_fuse([100.0]).fuse_a.tolist() == [125.0]


def test_array_fuse_none_fits():
    # the project's range 63 A and 250 A only: I_SC 100 A needs 125-240 A -> nothing fits
    f = array_fuse([100.0], ratings_a=[63.0, 250.0])
    assert np.isnan(f.fuse_a[0]) and not f.ok[0]
    assert f.note[0] == "no standard fuse rating within the IEC 62548 array range 125.0-240.0 A"
    # above the gPV list: I_SC 600 A needs at least 750 A, the list ends at 630 A
    f = array_fuse([600.0])
    assert np.isnan(f.fuse_a[0]) and not f.ok[0]


def test_array_fuse_refuses_a_missing_isc():
    with pytest.raises(InputError) as e:
        array_fuse([96.0, np.nan])
    assert str(e.value) == "isc_array_a must be finite and >= 0; got nan at index 1"


@settings(max_examples=200, deadline=None)
@given(isc=st.floats(0.5, 700.0))
def test_array_fuse_within_bounds_or_reported(isc):
    # IEC 62548:2016 (from memory): 1.25 · I_SC ≤ In ≤ 2.4 · I_SC
    f = array_fuse([isc])
    if f.ok[0]:
        assert 1.25 * isc * (1 - 1e-9) <= f.fuse_a[0] <= 2.4 * isc * (1 + 1e-9)
    else:
        assert np.isnan(f.fuse_a[0]) and "no standard fuse rating" in f.note[0]


def test_array_cable_check_conditions():
    # IEC 60364-4-43:2008 433.1 with gPV I2 = 1.45 In (from memory):
    # Iz 400 ≥ B 375 -> not needed; Iz 120 < In 125 -> In > Iz and I2 181.25 > 1.45 × 120 = 174
    c = array_cable_check([400.0, 120.0], [375.0, 375.0], [np.nan, 125.0])
    assert c.needed.tolist() == [False, True] and c.ok.tolist() == [True, False]
    assert c.note.tolist() == [
        "",
        "array fuse 125 A above Iz 120.0 A; I2 181.2 A above 1.45·Iz 174.0 A",
    ]
    # backfeed exactly equal to Iz: not needed (the cable carries it)
    assert not array_cable_check([375.0], [375.0], [np.nan]).needed[0]
    # an unsized cable (Iz nan) is never passed, even with no backfeed
    c = array_cable_check([np.nan], [0.0], [125.0])
    assert not c.ok[0]
    assert c.note[0] == "cable capacity Iz not known: backfeed protection not verified"
    # an unknown backfeed (nan) is never read as none: protection is needed, and only a fuse
    # that protects the cable (In 125 A ≤ Iz 400 A, I2 ≤ 1.45 Iz; IEC 60364-4-43:2008 433.1)
    # passes it
    c = array_cable_check([400.0, 400.0], [np.nan, np.nan], [np.nan, 125.0])
    assert c.needed.tolist() == [True, True] and c.ok.tolist() == [False, True]
    assert c.note.tolist() == ["backfeed not known: backfeed protection not verified", ""]
    c = array_cable_check([400.0], [None], [np.nan])  # a missing value from a user's table
    assert c.needed.tolist() == [True] and c.ok.tolist() == [False]


def test_an_array_alone_needs_its_own_current_only():
    # no backfeed and no fuse: the array's own 1.25 · I_SC (IEC 62548:2016, from memory); a
    # backfeed below it changes nothing
    assert_allclose(array_min_capacity_a([100.0, 100.0], [0.0, 80.0], np.nan), [125.0, 125.0])


def test_array_capacity_with_a_device_whose_i2_is_above_145():
    # a device with I2 = 1.6 In (gG fuse-links ≥ 16 A, IEC 60269-2, from memory) needs
    # Iz ≥ 1.6 × 125 / 1.45 = 137.93 A
    assert_allclose(
        array_min_capacity_a([96.0], [360.0], [125.0], fuse_i2_factor=1.6), [200.0 / 1.45]
    )


def test_array_fuse_limiting_cases():
    # an array without current: its range is 0-0 A, no rating fits (not an input error)
    f = array_fuse([0.0])
    assert f.fuse_a.dtype.kind == "f" and np.isnan(f.fuse_a[0]) and not f.ok[0]
    assert f.note.tolist() == ["no standard fuse rating within the IEC 62548 array range 0.0-0.0 A"]
    # a rating equal to the upper bound 2.4 · I_SC fits: I_SC 100 A, only 240 A offered
    f = array_fuse([100.0], ratings_a=[240.0])
    assert f.fuse_a.tolist() == [240.0] and f.ok.tolist() == [True] and f.note.tolist() == [""]
    # no ratings at all: nothing fits
    f = array_fuse([100.0], ratings_a=[])
    assert f.fuse_a.dtype.kind == "f" and np.isnan(f.fuse_a[0]) and not f.ok[0]
    assert f.note[0] == "no standard fuse rating within the IEC 62548 array range 125.0-240.0 A"


def test_array_cable_check_with_the_bounds_met_exactly_and_other_devices():
    # In = Iz and I2 = 1.45 In = 1.45 Iz meet IEC 60364-4-43:2008 433.1 exactly
    c = array_cable_check([125.0], [375.0], [125.0])
    assert c.needed.tolist() == [True] and c.ok.tolist() == [True] and c.note.tolist() == [""]
    # a gG fuse-link, I2 = 1.6 In (IEC 60269-2, from memory): In 125 A ≤ Iz 130 A, but
    # I2 = 200 A > 1.45 × 130 = 188.5 A
    c = array_cable_check([130.0], [375.0], [125.0], fuse_i2_factor=1.6)
    assert c.ok.tolist() == [False]
    assert c.note.tolist() == ["I2 200.0 A above 1.45·Iz 188.5 A"]
    # a device with I2 = 1.3 In: In 130 A > Iz 125 A fails although I2 169 A ≤ 181.25 A
    c = array_cable_check([125.0], [375.0], [130.0], fuse_i2_factor=1.3)
    assert c.ok.tolist() == [False] and c.note.tolist() == ["array fuse 130 A above Iz 125.0 A"]


def test_array_cable_check_notes_every_failing_cable():
    c = array_cable_check([np.nan, 150.0, np.nan], [375.0] * 3, [np.nan] * 3)
    assert c.note.tolist() == [
        "cable capacity Iz not known: backfeed protection not verified",
        "backfeed 375.0 A from the other arrays of the input exceeds Iz 150.0 A "
        "and no array fuse is fitted",
        "cable capacity Iz not known: backfeed protection not verified",
    ]


# --------------------------------------------------------------------------------------------
# a.c. circuits: design current, breaker, IEC 60364-4-43:2008 433.1


def test_ac_worked_example():
    # 250 kVA inverter, 800 V three-phase: Ib = 250 000 / (√3 × 800) = 250 000 / 1385.64 = 180.42 A
    ib = ac_max_current_a([250.0], [800.0], [3], [np.nan])
    assert_allclose(ib, [250e3 / (math.sqrt(3.0) * 800.0)], rtol=1e-12)
    assert abs(ib[0] - 180.42) < 0.005
    # IEC 60947-2 breaker: smallest In ≥ 180.42 A is 200 A; I2 = 1.30 × 200 = 260 A
    b = ac_breaker(ib, breaker_ratings_a("iec60947-2"), i2_factor("iec60947-2"))
    assert b.in_a.tolist() == [200.0] and b.ok.all()
    assert_allclose(b.i2_a, [260.0])
    # cable: In ≤ Iz -> Iz ≥ 200 A; I2 ≤ 1.45 Iz -> Iz ≥ 260 / 1.45 = 179.31 A; so Iz ≥ 200 A
    assert_allclose(b.iz_min_a, [200.0])
    c = overload_check(ib, b.in_a, [200.0], b.i2_a)
    assert c.ok.all()


def test_datasheet_maximum_output_current_is_ib():
    # the inverter's maximum continuous output current 190 A (invented datasheet) replaces S/(√3·U)
    assert ac_max_current_a([250.0], [800.0], [3], [190.0]).tolist() == [190.0]
    # single phase without a datasheet maximum: I = S / U = 4600 / 230 = 20 A
    assert_allclose(ac_max_current_a([4.6], [230.0], [1], [np.nan]), [20.0], rtol=1e-12)
    with pytest.raises(InputError) as e:
        ac_max_current_a([250.0, 250.0], [800.0, 800.0], [3, 3], [np.nan, 0.0])
    assert str(e.value) == "ac_max_a must be > 0 (nan = not given); got 0 at index 1"


def test_ib_equal_to_a_rating_picks_that_rating():
    # IEC 60898-1: Ib 20 A -> In 20 A (not 25 A); I2 = 1.45 × 20 = 29 A; Iz ≥ 20 A
    b = ac_breaker([20.0], breaker_ratings_a("iec60898-1"), i2_factor("iec60898-1"))
    assert b.in_a.tolist() == [20.0]
    assert_allclose(b.i2_a, [29.0])
    assert_allclose(b.iz_min_a, [20.0])


def test_no_breaker_rating_fits():
    # IEC 60898-1 ends at 125 A: Ib 130 A has no rating -> nan and not ok
    b = ac_breaker([100.0, 130.0], breaker_ratings_a("iec60898-1"), 1.45)
    assert b.in_a[0] == 100.0 and np.isnan(b.in_a[1])
    assert b.ok.tolist() == [True, False]
    assert b.note.tolist() == ["", "Ib 130.0 A above the largest breaker rating 125 A"]
    with pytest.raises(InputError) as e:
        ac_breaker([np.nan], [16.0], 1.45)
    assert str(e.value) == "ib_a must be finite and >= 0; got nan at index 0"


def test_overload_check_names_each_failing_condition():
    # IEC 60364-4-43:2008 433.1: Ib ≤ In ≤ Iz and I2 ≤ 1.45 · Iz
    c = overload_check(
        [180.0, 210.0, 180.0, 180.0, 180.0],
        [200.0, 200.0, 200.0, 200.0, np.nan],
        [200.0, 200.0, 190.0, 200.0, 200.0],
        [260.0, 260.0, 260.0, 300.0, np.nan],
    )
    assert c.ok.tolist() == [True, False, False, False, False]
    assert c.ib_ok.tolist() == [True, False, True, True, False]
    assert c.iz_ok.tolist() == [True, True, False, True, False]
    assert c.i2_ok.tolist() == [True, True, True, False, False]
    assert c.note.tolist() == [
        "",
        "Ib 210.0 A > In 200 A",
        "In 200 A > Iz 190.0 A",  # I2 260 ≤ 1.45 × 190 = 275.5 holds
        "I2 300.0 A > 1.45·Iz 290.0 A",
        "no overload protective device",
    ]
    # an unsized cable (Iz nan) fails the conditions on Iz
    c = overload_check([180.0], [200.0], [np.nan], [260.0])
    assert c.ib_ok.tolist() == [True] and not c.iz_ok[0] and not c.i2_ok[0]
    assert c.note[0] == "cable capacity Iz not known: overload protection not verified"


@settings(max_examples=200, deadline=None)
@given(ib=st.floats(0.0, 4000.0), device=st.sampled_from(["iec60898-1", "iec60947-2"]))
def test_cable_sized_to_iz_min_passes_433(ib, device):
    # a cable with exactly the capacity ac_breaker asks for satisfies every condition of 433.1
    b = ac_breaker([ib], breaker_ratings_a(device), i2_factor(device))
    if b.ok[0]:
        assert overload_check([ib], b.in_a, b.iz_min_a, b.i2_a).ok[0]
    else:
        assert ib > breaker_ratings_a(device)[-1]


# --------------------------------------------------------------------------------------------
# the rule set exposes the same rules


def test_iec_rule_set_exposes_the_protection_rules():
    rs = get_rules("iec")
    assert rs.breaker_devices == ("iec60898-1", "iec60947-2")
    b = rs.ac_breaker([180.42], "iec60947-2", [250, 400])  # the project's range only
    assert b.in_a.tolist() == [250.0] and b.i2_a.tolist() == [325.0]
    assert rs.backfeed_a([96.0] * 4, [0] * 4).tolist() == [360.0] * 4
    assert rs.array_fuse([96.0], rs.gpv_fuse_ratings_a([125, 160])).fuse_a.tolist() == [125.0]
    assert rs.bifacial_isc_a([10.0], [0.5], 0.2).tolist() == [11.0]  # 10 × (1 + 0.5 × 0.2)
    assert rs.i2_factor("iec60947-2") == 1.30
    with pytest.raises(InputError) as e:
        rs.gpv_fuse_ratings_a([17])
    assert str(e.value).startswith("fuse_ratings_a: 17 A is not in the IEC 60269-6 gPV fuse")


def test_breaker_ratings_must_be_a_non_empty_list():
    for ratings in ([], [[160.0, 200.0]]):
        with pytest.raises(InputError) as e:
            ac_breaker([100.0], ratings, 1.3)
        assert str(e.value) == "ratings_a must be a non-empty list of ratings [A]"


def test_overload_check_notes_every_failing_circuit_and_condition():
    # no device first, an unsized cable next, then two conditions failing at once
    c = overload_check(
        [180.0, 180.0, 210.0, 180.0],
        [np.nan, 200.0, 200.0, 200.0],
        [200.0, np.nan, 190.0, 200.0],
        [np.nan, 260.0, 260.0, 260.0],
    )
    assert c.note.tolist() == [
        "no overload protective device",
        "cable capacity Iz not known: overload protection not verified",
        "Ib 210.0 A > In 200 A; In 200 A > Iz 190.0 A",
        "",
    ]


def test_the_relative_tolerance_includes_its_edge():
    # calc compares currents with a relative tolerance of 1e-9 (rounding noise): a value at the
    # bound × (1 + 1e-9) still meets it, in every check
    edge = 1.0 + 1e-9
    c = overload_check([200.0 * edge], [200.0], [200.0], [1.45 * 200.0 * edge])
    assert c.ib_ok.tolist() == [True] and c.i2_ok.tolist() == [True]
    c = overload_check([190.0], [200.0 * edge], [200.0], [200.0])
    assert c.iz_ok.tolist() == [True]
    c = array_cable_check([100.0, 100.0], [100.0 * edge, 375.0], [np.nan, 100.0 * edge])
    assert c.needed.tolist() == [False, True] and c.ok.tolist() == [True, True]
    # I2 at the edge with I2 = In (a device of factor 1.0): only In > Iz is noted
    c = array_cable_check([100.0], [375.0], [1.45 * 100.0 * edge], fuse_i2_factor=1.0)
    assert c.note.tolist() == ["array fuse 145 A above Iz 100.0 A"]
    # a rating at the upper bound 2.4 · I_SC × (1 + 1e-9) fits
    assert array_fuse([100.0], ratings_a=[2.4 * 100.0 * edge]).ok.tolist() == [True]
