"""Missing values (None) in the protection rules of calc.protection.

The protection functions document nan as "none" or "not known" (no array fuse, no overload
device, an unsized cable) and refuse a missing current. calc reads numeric arguments as float, so
a ``None`` from a user's table takes the same documented path as nan.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.protection import (
    ac_breaker,
    array_cable_check,
    array_fuse,
    array_min_capacity_a,
    breaker_ratings_a,
    overload_check,
)


def test_missing_design_current_is_refused_by_the_breaker_choice():
    with pytest.raises(InputError) as e:
        ac_breaker([180.0, None], breaker_ratings_a("iec60947-2"), 1.30)
    assert str(e.value) == "ib_a must be finite and >= 0; got nan at index 1"


def test_missing_array_isc_is_refused_by_the_array_fuse():
    with pytest.raises(InputError) as e:
        array_fuse([None])
    assert str(e.value) == "isc_array_a must be finite and >= 0; got nan at index 0"


def test_missing_capacity_and_missing_fuse_in_the_backfeed_check():
    # IEC 62548:2016 (from memory) / IEC 60364-4-43:2008 433.1: B = 375 A from the other arrays.
    # Iz missing: protection cannot be verified; fuse missing: none fitted, and Iz 300 A < B
    c = array_cable_check([None, 300.0], [375.0, 375.0], [125.0, None])
    assert c.needed.tolist() == [True, True] and c.ok.tolist() == [False, False]
    assert c.note.tolist() == [
        "cable capacity Iz not known: backfeed protection not verified",
        "backfeed 375.0 A from the other arrays of the input exceeds Iz 300.0 A and no array "
        "fuse is fitted",
    ]


def test_missing_fuse_sizes_the_array_cable_for_the_backfeed():
    # no array fuse: Iz ≥ max(1.25 · I_SC, B) = max(1.25 × 100, 375) = 375 A (IEC 62548:2016,
    # from memory); with the 125 A fuse: max(125, 125, 1.45 × 125 / 1.45) = 125 A
    assert_allclose(array_min_capacity_a([100.0, 100.0], [375.0, 375.0], [None, 125.0]), [375, 125])


def test_missing_overload_device_fails_every_condition():
    # IEC 60364-4-43:2008 433.1 cannot hold without a device (In missing)
    c = overload_check([144.3], [None], [175.0], [None])
    assert c.ok.tolist() == [False]
    assert (c.ib_ok.tolist(), c.iz_ok.tolist()) == ([False], [False])
    assert c.note.tolist() == ["no overload protective device"]


def test_missing_backfeed_leaves_only_an_unfused_capacity_unknown():
    # without a fuse Iz ≥ max(1.25 · I_SC, B) needs B: unknown (nan); with the 125 A fuse the
    # backfeed does not enter: max(1.25 × 100, 125, 1.45 × 125 / 1.45) = 125 A
    got = array_min_capacity_a([100.0, 100.0], [None, None], [np.nan, 125.0])
    assert np.isnan(got[0]) and got[1] == 125.0


def test_missing_conventional_current_factor_leaves_i2_unknown():
    # IEC 60947-2 list: Ib 180.42 A -> In 200 A; without the device's I2 / In neither I2 nor the
    # capacity max(In, I2 / 1.45) (IEC 60364-4-43:2008 433.1) is known
    b = ac_breaker([180.42], breaker_ratings_a("iec60947-2"), None)
    assert b.in_a.tolist() == [200.0]
    assert np.isnan(b.i2_a).tolist() == [True] and np.isnan(b.iz_min_a).tolist() == [True]
