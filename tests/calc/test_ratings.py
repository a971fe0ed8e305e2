"""Picking device ratings from a list of standard ratings (calc.ratings).

The lists are the standard ampere ratings of fuses and inverse-time breakers of NFPA 70 NEC 2023,
240.6(A) (confirmed: calc/data/nec_2023_240_6_a_standard_ratings.csv, read through
calc.nec.protection.standard_ratings_a). The ranges are those of NEC 2023 690.9(B) (a PV
overcurrent device rated at least 125 % of the 690.8(A)(1) maximum current, 1.25 × Isc: 1.5625 ×
Isc; confirmed, REFERENCE_VALUES.md 10.1 and calc/data/nec_2023_rules.csv) and of IEC 62548:2016
(string fuse 1.5 × Isc ≤ In ≤ 2.4 × Isc, and not above the module's maximum series fuse rating;
confirmed, calc/data/iec62548_2016_pv_dc_rules.csv). The module currents are invented.
"""

import numpy as np
import pytest

from calc.nec.protection import standard_ratings_a
from calc.ratings import fuse_in_range, smallest_rating_a


@pytest.fixture
def fuses_a() -> np.ndarray:
    # NEC 2023 240.6(A): 1, 3, 6, 10 A (fuses only), then 15 ... 6000 A
    return standard_ratings_a(fuses=True)


@pytest.fixture
def breakers_a() -> np.ndarray:
    # NEC 2023 240.6(A): inverse-time breakers, 15 ... 6000 A
    return standard_ratings_a()


# --------------------------------------------------------------------------------------------
# smallest_rating_a


def test_the_next_standard_rating_up(fuses_a):
    # NEC 2023 240.6(A): 44.9 A -> 45 A, 45.1 A -> 50 A, 0.5 A -> 1 A (the smallest fuse rating),
    # 601 A -> 700 A (the 2023 list has no 601 A rating)
    got = smallest_rating_a(fuses_a, [44.9, 45.1, 0.5, 601.0, 1.5])
    assert got.tolist() == [45.0, 50.0, 1.0, 700.0, 3.0]


def test_a_current_equal_to_a_rating_fits_it(fuses_a):
    # NEC 2023 690.9(B) with 690.8(A)(1): Isc 12.8 A -> 1.25 × 1.25 × 12.8 = 20.0 A: the 20 A
    # rating fits (at or above the current), not the next one up (25 A)
    lower_a = 1.25 * (1.25 * 12.8)
    assert lower_a == 20.0
    assert smallest_rating_a(fuses_a, [lower_a, 15.0, 1.0]).tolist() == [20.0, 15.0, 1.0]


def test_a_current_within_the_relative_tolerance_fits_the_rating(fuses_a):
    # the module's contract: a rating equal to the current within a relative 1e-9 fits it (a
    # current computed from factors, e.g. 1.25 × 1.25 × Isc, may come out a few ulps above)
    edge_a = 20.0 / (1.0 - 1e-9)  # the largest current the 20 A rating is taken for
    assert smallest_rating_a(fuses_a, [20.0 * (1 + 1e-12), edge_a]).tolist() == [20.0, 20.0]
    # beyond the tolerance the next rating up (NEC 2023 240.6(A): 25 A)
    assert smallest_rating_a(fuses_a, [20.0 * (1 + 3e-9)]).tolist() == [25.0]


def test_the_largest_rating_and_above(breakers_a):
    # NEC 2023 240.6(A): 6000 A is the largest standard rating; above it there is none (nan)
    got = smallest_rating_a(breakers_a, [6000.0, 5000.5, 6000.5, 1e6])
    np.testing.assert_array_equal(got, [6000.0, 6000.0, np.nan, np.nan])
    assert got.dtype == np.float64


def test_an_empty_list_has_no_rating():
    # no standard rating to pick from: none (nan), one per current, floats
    got = smallest_rating_a([], [10.0, 20.0])
    assert got.shape == (2,)
    assert got.dtype == np.float64
    assert np.isnan(got).all()


def test_the_currents_keep_their_shape(breakers_a):
    # NEC 2023 240.6(A) breakers: 14 A -> 15 A, 126 A -> 150 A, 6500 A -> none
    got = smallest_rating_a(breakers_a, [[14.0, 126.0], [6500.0, 100.0]])
    assert got.shape == (2, 2)
    np.testing.assert_array_equal(got, [[15.0, 150.0], [np.nan, 100.0]])


def test_integer_lists_give_float_ratings():
    # NEC 2023 240.6(A)'s first breaker ratings given as integers: the ratings come back as floats
    got = smallest_rating_a([15, 20, 25], [16, 30])
    assert got.dtype == np.float64
    np.testing.assert_array_equal(got, [20.0, np.nan])


# --------------------------------------------------------------------------------------------
# fuse_in_range


def _nec_690_9_b(isc_a):
    """NEC 2023 690.9(B) with 690.8(A)(1): the device at least 1.25 × (1.25 × Isc) [A]."""
    return 1.25 * (1.25 * np.asarray(isc_a, dtype=float))


def test_a_required_fuse_is_the_next_rating_up_within_the_range(fuses_a):
    # NEC 2023 690.9(B): Isc 10 A -> at least 15.625 A -> 20 A; the module's maximum series fuse
    # 25 A is the upper end (690.9(A))
    lower = _nec_690_9_b([10.0])
    c = fuse_in_range(lower, [25.0], [True], [np.nan], fuses_a)
    assert c.fuse_a.tolist() == [20.0]
    assert c.ok.tolist() == [True]
    assert c.ok.dtype == bool


def test_a_pick_equal_to_the_upper_end_is_in_range(fuses_a):
    # NEC 2023 690.9(B): Isc 12.8 A -> 20.0 A exactly; a module maximum series fuse of 20 A allows
    # it (at most the maximum series fuse), 15 A does not
    lower = _nec_690_9_b([12.8, 12.8])
    c = fuse_in_range(lower, [20.0, 15.0], [True, True], [np.nan, np.nan], fuses_a)
    np.testing.assert_array_equal(c.fuse_a, [20.0, np.nan])
    assert c.ok.tolist() == [True, False]


def test_no_rating_in_the_range_is_no_fuse_and_not_ok(fuses_a):
    # IEC 62548:2016: Isc 9.0 A -> 13.5 ... 21.6 A, capped by a 12 A maximum series fuse: the
    # next 240.6(A) rating up from 13.5 A (15 A) lies above 12 A
    c = fuse_in_range([1.5 * 9.0], [min(2.4 * 9.0, 12.0)], [True], [np.nan], fuses_a)
    assert np.isnan(c.fuse_a).all()
    assert c.ok.tolist() == [False]


def test_a_fuse_not_required_is_none_and_ok(fuses_a):
    # not required (e.g. two strings in parallel, IEC 62548:2016): no fuse, ok - whether or not
    # a rating would fit the range
    c = fuse_in_range([15.0, 15.0], [25.0, 12.0], [False, False], [np.nan, np.nan], fuses_a)
    assert np.isnan(c.fuse_a).all()
    assert c.ok.tolist() == [True, True]


def test_a_fixed_fuse_is_kept_and_checked_against_both_ends(fuses_a):
    # IEC 62548:2016, Isc 10 A: 15 ... 24 A (2.4 × Isc), under a 25 A maximum series fuse.
    # Fixed by the combiner: 15 A (the lower end itself), 24 A (the upper end itself), 20 A inside,
    # 12 A below, 25 A above; kept whatever the pick and whether or not a fuse is required
    lower = np.full(5, 1.5 * 10.0)
    upper = np.full(5, min(2.4 * 10.0, 25.0))
    fixed = [15.0, 24.0, 20.0, 12.0, 25.0]
    c = fuse_in_range(lower, upper, [True, True, False, True, False], fixed, fuses_a)
    assert c.fuse_a.tolist() == fixed
    assert c.ok.tolist() == [True, True, True, False, False]


def test_a_fixed_fuse_on_the_ends_within_the_tolerance_is_in_range(fuses_a):
    # the ends computed from factors: Isc 12.8 A -> NEC 2023 690.9(B) 20.0 A; a fixed 20 A fuse
    # at a lower end a few ulps above 20 A, or an upper end a few ulps below it, is in range
    c = fuse_in_range(
        [20.0 * (1 + 1e-12), 15.0],
        [25.0, 20.0 * (1 - 1e-12)],
        [True, True],
        [20.0, 20.0],
        fuses_a,
    )
    assert c.ok.tolist() == [True, True]
    # beyond the tolerance (3e-9 relative) it is out of range
    c = fuse_in_range(
        [20.0 * (1 + 3e-9), 15.0], [25.0, 20.0 * (1 - 3e-9)], [True, True], [20.0, 20.0], fuses_a
    )
    assert c.ok.tolist() == [False, False]


def test_a_pick_within_the_tolerance_of_the_upper_end_is_in_range(fuses_a):
    # NEC 2023 690.9(B): Isc 12.8 A -> 20 A; an upper end computed a few ulps below 20 A keeps it,
    # one 3e-9 (relative) below does not
    c = fuse_in_range(
        [20.0, 20.0], [20.0 * (1 - 1e-12), 20.0 * (1 - 3e-9)], [True, True], [np.nan] * 2, fuses_a
    )
    np.testing.assert_array_equal(c.fuse_a, [20.0, np.nan])
    assert c.ok.tolist() == [True, False]


def test_the_ends_of_the_tolerance_still_fit(fuses_a):
    # the module's contract, at its very edge: a 20 A fuse fits a range whose lower end is
    # 20 A / (1 - 1e-9) or whose upper end is 20 A / (1 + 1e-9) (the largest and smallest ends
    # still equal to 20 A within the relative 1e-9), picked or fixed
    low_edge, up_edge = 20.0 / (1.0 - 1e-9), 20.0 / (1.0 + 1e-9)
    picked = fuse_in_range([16.0], [up_edge], [True], [np.nan], fuses_a)  # 16 A -> 20 A
    assert picked.fuse_a.tolist() == [20.0] and picked.ok.tolist() == [True]
    fixed = fuse_in_range([low_edge, 15.0], [25.0, up_edge], [True, True], [20.0, 20.0], fuses_a)
    assert fixed.ok.tolist() == [True, True]


# --------------------------------------------------------------------------------------------
# inputs as users' tables give them: calc reads numeric arguments as float (None as nan), flags
# as booleans (as tests/calc/test_protection_missing_values.py for calc.protection)


def test_a_missing_current_has_no_rating(breakers_a):
    # None (a blank in a user's table) reads as nan: no rating; NEC 2023 240.6(A): 101 A -> 110 A
    got = smallest_rating_a(breakers_a, [None, 101.0])
    np.testing.assert_array_equal(got, [np.nan, 110.0])


def test_single_precision_ratings_give_double_precision_picks():
    # NEC 2023 240.6(A)'s first breaker ratings as a float32 array: the picks are calc's float64
    got = smallest_rating_a(np.array([15.0, 20.0, 25.0], dtype=np.float32), [16.0, 26.0])
    assert got.dtype == np.float64
    np.testing.assert_array_equal(got, [20.0, np.nan])


def test_required_flags_given_as_numbers(fuses_a):
    # a table's 1 / 0 column: 1 = required, 0 = not. NEC 2023 690.9(B): Isc 10 A -> 20 A; under a
    # 15 A maximum series fuse no rating fits (not ok where required, ok where not)
    c = fuse_in_range([15.625] * 4, [25.0, 15.0, 15.0, 25.0], [1, 1, 0, 0], [np.nan] * 4, fuses_a)
    np.testing.assert_array_equal(c.fuse_a, [20.0, np.nan, np.nan, np.nan])
    assert c.ok.dtype == bool
    assert c.ok.tolist() == [True, False, True, True]


def test_missing_range_ends_and_fixed_fuses(fuses_a):
    # None reads as nan. A fixed fuse None: none fixed, so picked (NEC 2023 690.9(B), Isc 10 A:
    # 20 A). A missing lower or upper end: no rating can be shown to lie in the range, and a fixed
    # fuse cannot be checked against it - not ok
    c = fuse_in_range([15.625, None, 15.625], [25.0, 25.0, None], [True] * 3, [None] * 3, fuses_a)
    np.testing.assert_array_equal(c.fuse_a, [20.0, np.nan, np.nan])
    assert c.ok.tolist() == [True, False, False]
    c = fuse_in_range([None, 15.0], [25.0, None], [True, True], [20.0, 20.0], fuses_a)
    assert c.fuse_a.tolist() == [20.0, 20.0]
    assert c.ok.tolist() == [False, False]
