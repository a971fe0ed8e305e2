"""Missing values (None) in the adiabatic short-circuit rules of calc.shortcircuit.

calc reads numeric arguments as float, so a ``None`` size from a user's table is nan: Table 43A
has no k for it and the one-line refusal names the material and insulation.
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import TableRangeError
from calc.shortcircuit import k_table_43a, min_size_adiabatic_mm2


def test_missing_size_has_no_table_43a_k():
    with pytest.raises(TableRangeError) as e:
        k_table_43a("Cu", "PVC", [240, None])
    assert str(e.value) == "Table 43A has no k for Cu/PVC at these sizes"
    # the same sizes as numbers: IEC 60364-4-43:2008 Table 43A, Cu PVC ≤ 300 mm²: k = 115
    assert_allclose(k_table_43a("Cu", "PVC", [240, 240]), [115.0, 115.0])


def test_missing_clearing_time_or_k_gives_no_minimum_size():
    # IEC 60364-4-43:2008 434.5.2: S ≥ √(I² t) / k = √(20 000² × 0.2) / 143 = 62.55 mm²; without
    # t or k there is no minimum size (nan), as for a nan argument
    got = min_size_adiabatic_mm2([20e3, 20e3, 20e3], [0.2, None, 0.2], [143.0, 143.0, None])
    assert_allclose(got[0], 20e3 * math.sqrt(0.2) / 143.0, rtol=1e-12)
    assert_allclose(got[0], 62.55, atol=5e-3)
    assert np.isnan(got[1:]).tolist() == [True, True]
