"""String overcurrent protection at the edges of the IEC 62548:2016 rules (calc.pv).

The rules, as calc.pv states them (IEC 62548:2016, from memory; the fuse bounds confirmed in a
third-party worked example, see iec62548_2016_pv_dc_rules.csv):

* protection required when (S − 1) · 1.25 · I_SC > I_MOD_MAX_OCPR (strictly greater);
* 1.5 · I_SC ≤ I_n ≤ 2.4 · I_SC and I_n ≤ I_MOD_MAX_OCPR (both bounds inclusive);
* without I_MOD_MAX_OCPR, fuses are assumed required from 3 strings in parallel (flagged).

Module data below are invented; every expected value is a hand calculation written beside it.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import UnknownOptionError
from calc.pv import pv_rule, string_design_current_a, string_protection

NAN = np.nan


def test_protection_is_not_required_when_the_backfeed_equals_the_fuse_rating():
    # I_SC 8 A, I_MOD_MAX_OCPR 20 A: 3 strings -> (3 − 1) · 1.25 · 8 = 20 A, not > 20 A: no fuse;
    # 4 strings -> 3 · 1.25 · 8 = 30 A > 20 A: fuses required.
    p = string_protection([8.0, 8.0], [3, 4], [20.0, 20.0], [NAN, NAN])
    assert p.required.tolist() == [False, True]


def test_a_fixed_fuse_on_either_bound_is_accepted_and_one_outside_is_refused():
    # I_SC 10 A, I_MOD_MAX_OCPR 20 A: lower 1.5 · 10 = 15 A, upper min(2.4 · 10, 20) = 20 A.
    p = string_protection([10.0] * 4, [12] * 4, [20.0] * 4, [15.0, 20.0, 12.0, 25.0])
    assert_allclose(p.lower_a, [15.0] * 4)
    assert_allclose(p.upper_a, [20.0] * 4)
    assert p.required.tolist() == [True] * 4  # 11 · 1.25 · 10 = 137.5 A > 20 A
    assert_allclose(p.fuse_a, [15.0, 20.0, 12.0, 25.0])
    assert p.ok.tolist() == [True, True, False, False]
    assert p.note.tolist() == [
        "",
        "",
        "fixed string fuse 12 A outside the IEC 62548 range 15.0-20.0 A",
        "fixed string fuse 25 A outside the IEC 62548 range 15.0-20.0 A",
    ]


def test_the_upper_bound_without_a_module_fuse_rating_is_2_4_isc():
    # I_SC 10 A, no I_MOD_MAX_OCPR: 1.5 · 10 = 15 A ≤ I_n ≤ 2.4 · 10 = 24 A
    p = string_protection([10.0], [12], [NAN], [24.0])
    assert_allclose(p.lower_a, [15.0])
    assert_allclose(p.upper_a, [24.0])
    assert p.ok.tolist() == [True]


def test_the_pick_at_the_top_and_beyond_the_top_of_the_rating_list():
    # A project's fuse range of 10, 16 and 20 A.
    # I_SC 12 A, I_MOD_MAX_OCPR 30 A: range 18 .. min(28.8, 30) A -> 20 A, the last of the list.
    # I_SC 20 A, I_MOD_MAX_OCPR 50 A: range 30 .. 48 A -> no rating of the list fits.
    p = string_protection([12.0, 20.0], [12, 12], [30.0, 50.0], [NAN, NAN], [10, 16, 20])
    assert p.required.tolist() == [True, True]
    assert_allclose(p.fuse_a, [20.0, NAN])
    assert p.ok.tolist() == [True, False]
    assert p.note.tolist() == [
        "",
        "no standard fuse rating within the IEC 62548 range 30.0-48.0 A",
    ]


def test_missing_module_fuse_rating_assumes_fuses_from_three_strings_and_says_so():
    note = (
        "max_fuse_a not given: string fuses assumed required for 3 or more parallel strings; "
        "check the fuse against the module maximum series fuse rating"
    )
    # I_SC 10 A: 2 strings -> no fuse; 3 and 12 -> range 15 .. 24 A -> 16 A (IEC 60269-1 list)
    p = string_protection([10.0] * 3, [2, 3, 12], [NAN] * 3, [NAN] * 3)
    assert p.required.tolist() == [False, True, True]
    assert_allclose(p.fuse_a, [NAN, 16.0, 16.0])
    assert p.note.tolist() == ["", note, note]


def test_a_rating_on_a_bound_up_to_rounding_counts_as_on_the_bound():
    # The bounds are products (1.5 · I_SC, 2.4 · I_SC): a rating that equals one up to float
    # rounding (1 part in 10⁹) is on the bound, which IEC 62548 includes.
    # I_SC 10 A, I_MOD_MAX_OCPR 16 A: range 15 .. 16 A.
    just_above_16 = 16.0 * (1.0 + 1e-9)
    just_below_15 = 15.0 * (1.0 - 1e-9)
    p = string_protection([10.0], [12], [16.0], [NAN], [just_above_16])
    assert_allclose(p.fuse_a, [just_above_16], rtol=0)
    assert p.ok.tolist() == [True]
    p = string_protection([10.0] * 2, [12] * 2, [16.0] * 2, [just_above_16, just_below_15])
    assert p.ok.tolist() == [True, True]


@pytest.mark.parametrize("missing", ["isc_a", "strings_in_parallel", "max_fuse_a", "fuse_a"])
def test_a_missing_value_reads_as_not_known_and_leaves_the_other_string_alone(missing):
    # String 0: I_SC 10 A, 12 strings, I_MOD_MAX_OCPR 20 A -> 16 A in 15 .. 20 A.
    args = {"isc_a": 10.0, "strings_in_parallel": 12, "max_fuse_a": 20.0, "fuse_a": NAN}
    cols = {k: [v, v] for k, v in args.items()}
    cols[missing] = [args[missing], None]
    p = string_protection(
        cols["isc_a"], cols["strings_in_parallel"], cols["max_fuse_a"], cols["fuse_a"]
    )
    assert p.required[0] and p.ok[0]
    assert p.fuse_a[0] == 16.0
    assert (p.lower_a[0], p.upper_a[0]) == (15.0, 20.0)
    if missing == "isc_a":
        assert np.isnan(p.lower_a[1]) and np.isnan(p.upper_a[1])
    if missing == "max_fuse_a":  # nan = not given: the 2.4 · I_SC bound alone, and the note
        assert p.upper_a[1] == 24.0
        assert p.note[1].startswith("max_fuse_a not given")
    if missing == "fuse_a":  # nan = let calc pick
        assert p.fuse_a[1] == 16.0


def test_a_blank_in_the_rating_list_is_skipped():
    # I_SC 10 A: range 15 .. 24 A; of 10, (blank), 16 and 20 A the smallest that fits is 16 A.
    p = string_protection([10.0], [12], [NAN], [NAN], [10, None, 16, 20])
    assert_allclose(p.fuse_a, [16.0])


@pytest.mark.parametrize("missing", [0, 1, 2])
def test_string_cable_current_with_a_missing_value(missing):
    # IEC 62548:2016 (from memory): unfused 1.25 · I_SC · (S − 1) = 1.25 · 10 · 3 = 37.5 A;
    # with a 16 A fuse max(16, 1.25 · 10) = 16 A.
    args = [[10.0, 10.0, 10.0], [4, 4, 4], [NAN, 16.0, 16.0]]
    args[missing] = [*args[missing][:2], None]
    got = string_design_current_a(*args)
    assert_allclose(got[:2], [37.5, 16.0], rtol=1e-12)
    if missing == 0:
        assert np.isnan(got[2])
    elif missing == 1:  # with a fuse the strings in parallel play no part: 16 A
        assert_allclose(got[2], 16.0, rtol=1e-12)
    else:  # no fuse given: the unfused rule
        assert_allclose(got[2], 37.5, rtol=1e-12)


def test_an_unknown_rule_name_is_refused_with_the_list_of_rules():
    with pytest.raises(UnknownOptionError) as err:
        pv_rule("isc_multiplier")
    assert str(err.value) == (
        "IEC 62548 rule must be one of 'isc_factor', 'fuse_min_x_isc', 'fuse_max_x_isc', "
        "'ocpr_threshold', 'array_fuse_min_x_isc', 'array_fuse_max_x_isc', "
        "'unfused_max_strings_no_ocpr', 'voc_factor_no_data'; got 'isc_multiplier'"
    )
