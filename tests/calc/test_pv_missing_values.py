"""Missing values (None) in the inverter a.c. currents of calc.pv.

``ac_max_a`` documents nan as "not given"; calc reads numeric arguments as float, so a ``None``
from a user's table is the same "not given" and the rated current S / (√3 · U) is used.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc.pv import ac_current_a, ac_max_current_a


def test_missing_datasheet_maximum_falls_back_to_the_rated_current():
    # three-phase 250 kVA at 800 V line-to-line: I = S / (√3 U) = 250 000 / (1.7320508 · 800)
    # = 180.422 A (hand calculation); the 190 A of the second inverter is its datasheet maximum
    got = ac_max_current_a([250.0, 250.0], [800.0, 800.0], [3, 3], [None, 190.0])
    assert_allclose(got, [250e3 / (np.sqrt(3.0) * 800.0), 190.0], rtol=1e-12)
    assert_allclose(got[0], 180.422, atol=5e-4)


def test_datasheet_maximum_needs_no_rating_or_voltage():
    # an inverter known only by its maximum continuous output current: S and U missing
    assert ac_max_current_a([None, 4.6], [None, 230.0], [3, 1], [160.0, None]).tolist() == [
        160.0,
        20.0,  # single phase: S / U = 4600 / 230 = 20 A
    ]


def test_missing_rating_gives_no_rated_current():
    # S / U cannot be computed without S or U: nan, as for a nan argument
    got = ac_current_a([None, 100.0], [400.0, None], [3, 3])
    assert np.isnan(got).tolist() == [True, True]
