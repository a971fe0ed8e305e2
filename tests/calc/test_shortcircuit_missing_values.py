"""Missing values (None) in the adiabatic short-circuit rules of calc.shortcircuit.

calc reads numeric arguments as float, so a ``None`` size from a user's table is nan: Table 43A
has no k for it and the one-line refusal names the material and insulation.
"""

import pytest
from numpy.testing import assert_allclose

from calc.errors import TableRangeError
from calc.shortcircuit import k_table_43a


def test_missing_size_has_no_table_43a_k():
    with pytest.raises(TableRangeError) as e:
        k_table_43a("Cu", "PVC", [240, None])
    assert str(e.value) == "Table 43A has no k for Cu/PVC at these sizes"
    # the same sizes as numbers: IEC 60364-4-43:2008 Table 43A, Cu PVC ≤ 300 mm²: k = 115
    assert_allclose(k_table_43a("Cu", "PVC", [240, 240]), [115.0, 115.0])
