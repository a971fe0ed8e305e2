"""PV design currents and string protection, IEC 62548:2016 (rules from memory; see calc.pv)."""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.pv import (
    ac_current_a,
    ac_max_current_a,
    array_design_current_a,
    max_modules_in_series,
    string_design_current_a,
    string_protection,
    voc_max_v,
)


def test_two_strings_in_parallel_need_no_fuse():
    # IEC 62548:2016 (memory): (S − 1)·1.25·Isc = 12.5 A ≤ I_MOD_MAX_OCPR 20 A -> no protection
    p = string_protection([10.0], [2], [20.0], [np.nan])
    assert not p.required[0] and np.isnan(p.fuse_a[0]) and p.ok[0]
    # module maximum series fuse not given: 2 strings assumed safe unfused (stated assumption)
    p = string_protection([10.0], [2], [np.nan], [np.nan])
    assert not p.required[0]


def test_many_strings_get_a_fuse_within_the_bounds():
    # IEC 62548:2016 (memory): 1.5·Isc ≤ In ≤ 2.4·Isc and In ≤ I_MOD_MAX_OCPR
    p = string_protection([10.0, 13.0], [12, 24], [20.0, 30.0], [np.nan, np.nan])
    assert p.required.all() and p.ok.all()
    assert p.fuse_a.tolist() == [16.0, 20.0]  # smallest IEC 60269-1 rating ≥ 15 A and ≥ 19.5 A
    assert np.all((p.fuse_a >= 1.5 * np.array([10.0, 13.0])) & (p.fuse_a <= [20.0, 30.0]))


@settings(max_examples=200, deadline=None)
@given(isc=st.floats(1.0, 20.0), s=st.integers(1, 40), ocpr_x=st.floats(1.0, 4.0))
def test_fuse_is_always_within_bounds_or_reported(isc, s, ocpr_x):
    p = string_protection([isc], [s], [isc * ocpr_x], [np.nan])
    if p.required[0] and p.ok[0]:
        assert 1.5 * isc - 1e-9 <= p.fuse_a[0] <= min(2.4 * isc, isc * ocpr_x) + 1e-9
    if not p.ok[0]:
        assert "no standard fuse rating" in p.note[0]


def test_fixed_fuse_outside_bounds_is_a_failure_reason():
    p = string_protection([10.0, 10.0], [12, 12], [20.0, 20.0], [32.0, 16.0])
    assert p.ok.tolist() == [False, True]
    assert "fixed string fuse 32 A outside" in p.note[0]


@settings(max_examples=200, deadline=None)
@given(isc=st.floats(0.5, 25.0), s=st.integers(1, 50), fused=st.booleans())
def test_string_design_current_never_below_125_isc(isc, s, fused):
    # IEC 62548:2016 (memory): string cable rating never below 1.25 · I_SC STC
    fuse = 1.5 * isc if fused else np.nan
    assert string_design_current_a([isc], [s], [fuse])[0] >= 1.25 * isc - 1e-12


def test_string_and_array_design_currents():
    # unfused: 1.25·Isc·(S−1); fused: In; array without own device: 1.25·Isc·N
    assert_allclose(string_design_current_a([10.0, 10.0], [4, 4], [np.nan, 20.0]), [37.5, 20.0])
    assert_allclose(array_design_current_a([10.0], [20]), [250.0])


def test_ac_output_current():
    # 3-phase I = S/(√3·U_LL); 1-phase I = S/U_LN
    assert_allclose(ac_current_a([250.0], [800.0], [3]), [250e3 / (np.sqrt(3) * 800.0)])
    assert_allclose(ac_current_a([4.6], [230.0], [1]), [20.0])


def test_any_positive_datasheet_maximum_is_taken():
    # limiting case: ac_max_a > 0 is the only condition (a small inverter may give 0.5 A)
    assert ac_max_current_a([0.1, 0.2], [230.0, 230.0], [1, 1], [0.5, 1.0]).tolist() == [0.5, 1.0]


def test_datasheet_maximum_needs_no_rated_current():
    # with the maximum given, an unknown voltage (0) or power (0) makes no warning: the rated
    # current S / U is not needed
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        out = ac_max_current_a([100.0, 0.0], [0.0, 0.0], [3, 1], [160.0, 20.0])
    assert out.tolist() == [160.0, 20.0]


def test_phases_other_than_one_or_three_are_refused():
    with pytest.raises(InputError) as e:
        ac_current_a([100.0, 100.0], [400.0, 400.0], [3, 2])
    assert str(e.value) == "phases must be 1 or 3"


def test_most_modules_in_series_under_the_rated_voltage():
    # IEC 62548:2016 (from memory; NEC 2023 690.7(A)(1) alike): a string's V_OC,max is each
    # module's V_OC at STC corrected with the maker's coefficient to the lowest temperature,
    # V_OC,max = V_OC · (1 + β/100 · (T_min − 25 °C)), summed over the modules in series; the
    # most modules are the largest n with n · V_OC,max(module) ≤ U_rated. Worked here from the
    # formula, not from calc: a 49.6 V module at β = −0.26 %/°C and −40 °C gives
    # 49.6 · (1 + 0.0026 · 65) = 57.9824 V, and 1500 / 57.9824 = 25.87 → 25.
    per_module = 49.6 * (1 + (-0.26 / 100) * (-40 - 25))
    assert per_module == pytest.approx(57.9824)
    strings = np.array([27, 27, 25, 1])
    got = max_modules_in_series(strings * per_module, strings, 1500.0)
    assert got.tolist() == [25.0, 25.0, 25.0, 25.0]  # the same module: the same answer
    # a string exactly at the rating fits; a module alone above it leaves none
    assert max_modules_in_series([1500.0], [30], 1500.0).tolist() == [30.0]
    # … also where the division's last digit falls short: 1181.1 / (1181.1 / 25) = 24.999…
    assert max_modules_in_series([1181.1], [25], 1181.1).tolist() == [25.0]
    assert max_modules_in_series([2999.0], [2], 1500.0).tolist() == [1.0]
    assert max_modules_in_series([1600.0], [1], 1500.0).tolist() == [0.0]
    # unknown count or voltage: no answer
    assert np.isnan(max_modules_in_series([1600.0, np.nan, 1600.0], [np.nan, 27, 0], 1500.0)).all()
    # what calc's own V_OC,max gives (the string's V_OC at STC and the coefficient), the same n
    voc = voc_max_v([27 * 49.6], [-0.26], -40.0)
    assert max_modules_in_series(voc, [27], 1500.0).tolist() == [25.0]
