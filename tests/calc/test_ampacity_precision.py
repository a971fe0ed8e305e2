"""Single-precision (float32) arguments of calc.ampacity are computed in double precision.

A float32 column (a data frame read with reduced precision) must give the same factor as the
same numbers in float64: calc converts every numeric argument to float64 before computing.
Reference values are the formulas written out with the math module.
"""

import math

import numpy as np
from numpy.testing import assert_allclose

from calc.ampacity import depth_factor


def test_float32_cable_diameter_gives_the_double_precision_depth_factor():
    # IEC 60287-2-1 T4 ∝ arccosh(2L/De) (from memory), L_ref = 0.7 m (IEC 60364-5-52 reference
    # depth): F = √(arccosh(2 · 0.7 / De) / arccosh(2 · 1.0 / De)) for L = 1.0 m, De = the float32
    # value nearest 0.04 m (0.03999999910593033): F = 0.9604815075908613 (math module). Computed in
    # float32 the first logarithm alone is off by about 1e-8.
    de = np.float32(0.04)
    d = float(de)
    expected = math.sqrt(math.acosh(2 * 0.7 / d) / math.acosh(2 * 1.0 / d))
    assert_allclose(expected, 0.9604815075908613, rtol=1e-15)
    got = depth_factor(np.array([1.0]), np.array([de]))
    assert_allclose(got, [expected], rtol=1e-13)
    got = depth_factor(np.array([1.0], dtype=np.float32), np.array([de]))
    assert_allclose(got, [expected], rtol=1e-13)
