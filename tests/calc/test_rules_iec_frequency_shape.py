"""The IEC rule set's a.c. resistance factor broadcasts over an array of frequencies too.

IEC 60287-1-1 (Ed.2.1 2014) 2.1: R/R' = 1 + y_s + y_p. Hand calculation (see
tests/calc/test_ac_resistance.py::test_hand_computed_300mm2_copper): 300 mm² Cu class 2 at 90 °C,
R' = 0.0601 × (1 + 0.00393 × 70) = 0.0766335 Ω/km (IEC 60228 Table 2, IEC 60287-1-1 Table 1),
50 Hz, three single-core cables in trefoil touching: y_s = 0.0138498, y_p = 0.0318822, so
R/R' = 1.0457320; at 0 Hz (d.c.) exactly 1.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc.rules import get_rules

R_OHM_KM = 0.0601 * (1 + 0.00393 * 70)


def test_one_circuit_at_several_frequencies():
    got = get_rules("iec").ac_resistance_factor(300.0, "Cu", R_OHM_KM, np.array([0.0, 50.0]), 3)
    assert got.shape == (2,)
    assert got[0] == 1.0
    assert_allclose(got[1], 1.0457320, atol=1e-6)


def test_direct_current_at_several_frequencies_keeps_their_shape():
    # every frequency 0 (d.c.): the factor is exactly 1 in the shape of the frequencies
    got = get_rules("iec").ac_resistance_factor(300.0, "Cu", R_OHM_KM, np.zeros(3), 3)
    assert got.tolist() == [1.0, 1.0, 1.0]
