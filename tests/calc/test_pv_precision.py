"""Single-precision (float32) arguments of calc.pv are computed in double precision.

calc converts every numeric argument to float64; the reference is the formula written out with
the math module on the same (float32-rounded) numbers.
"""

import math

import numpy as np
from numpy.testing import assert_allclose

from calc.pv import ac_current_a


def test_float32_rated_power_gives_the_double_precision_current():
    # three-phase I = S / (√3 · U_LL); S = the float32 value nearest 100.3 kVA
    # (100.30000305175781 kVA), U = 400 V: I = 100 300.003 / 692.820 = 144.7706 A
    s_kva = float(np.float32(100.3))
    expected = s_kva * 1e3 / (math.sqrt(3.0) * 400.0)
    got = ac_current_a(np.array([100.3], dtype=np.float32), [400.0], [3])
    assert_allclose(got, [expected], rtol=1e-14)
    assert_allclose(expected, 144.7706, atol=1e-4)
