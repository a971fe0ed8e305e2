"""Highest string open-circuit voltage with a missing temperature coefficient (calc.pv.voc_max_v).

IEC 62548:2016 (from memory): V_OC,max = V_OC · (1 + β/100 · (T_min − 25 °C)); without β (nan =
not given) 1.2 · V_OC for crystalline silicon. A ``None`` from a user's table is "not given" too,
and a float32 V_OC is computed in double precision.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc.pv import voc_max_v


def test_missing_coefficient_takes_the_crystalline_factor():
    # β −0.3 %/°C at −10 °C: 1000 × (1 + 0.003 × 35) = 1105 V; β missing: 1.2 × 1000 = 1200 V
    assert_allclose(voc_max_v([1000.0, 1000.0], [-0.3, None], -10.0), [1105.0, 1200.0])


def test_float32_voc_gives_the_double_precision_voltage():
    # V_OC the float32 value nearest 1001.7 V (1001.7000122070312 V), β not given: 1.2 · V_OC
    voc = float(np.float32(1001.7))
    got = voc_max_v(np.array([1001.7], dtype=np.float32), [np.nan], -10.0)
    assert got.tolist() == [1.2 * voc]
    assert_allclose(1.2 * voc, 1202.0400146484374, rtol=1e-15)
