"""Missing values (None) in the per-cent drop, the annual energy loss and an array's design
current: calc reads numeric arguments as float, so a ``None`` from a user's table is nan (not
known) and the result is nan, as for a nan argument — never a TypeError.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc.losses import energy_loss_kwh
from calc.pv import array_design_current_a
from calc.vdrop import vdrop_pct


def test_a_missing_drop_or_voltage_gives_an_unknown_percentage():
    # 6 V of 1200 V = 0.5 % (hand calculation)
    got = vdrop_pct([6.0, None, 6.0], [1200.0, 1200.0, None])
    assert_allclose(got[0], 0.5, rtol=1e-12)
    assert np.isnan(got[1:]).all()


def test_a_missing_loss_gives_an_unknown_energy():
    # 250 W for 1,500 equivalent loss hours = 375 kWh (hand calculation)
    got = energy_loss_kwh([250.0, None], 1500.0)
    assert_allclose(got[0], 375.0, rtol=1e-12)
    assert np.isnan(got[1])


def test_a_missing_isc_or_string_count_gives_an_unknown_array_current():
    # IEC 62548 (from memory): 1.25 × Isc × strings = 1.25 × 13 A × 20 = 325 A
    got = array_design_current_a([13.0, None, 13.0], [20, 20, None])
    assert_allclose(got[0], 325.0, rtol=1e-12)
    assert np.isnan(got[1:]).all()
