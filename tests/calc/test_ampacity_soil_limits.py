"""Soil thermal resistivity factor at and around the limits of IEC 60364-5-52:2009 Table B.52.16.

Table B.52.16 (from memory, file ``iec60364_5_52_2009_b52_16_soil_resistivity.csv``), direct in
ground (D2) / in ducts (D1): 2.5 K·m/W 1.00 / 1.00, 3.0 K·m/W 0.90 / 0.96. Between rows calc
interpolates linearly; only beyond the last row (3 K·m/W) does the √(3/ρ) extension apply.
"""

import pytest
from numpy.testing import assert_allclose

from calc.ampacity import soil_factor
from calc.errors import InputError


def test_between_the_last_two_rows_is_interpolated_not_extended():
    # 2.75 K·m/W, midway between 2.5 and 3.0: direct (1.00 + 0.90) / 2 = 0.95,
    # duct (1.00 + 0.96) / 2 = 0.98 (the √(3/ρ) extension would give 0.95 · √(3/2.75) = 0.992)
    assert_allclose(soil_factor([2.75, 2.75], [0, 1]), [0.95, 0.98], rtol=1e-12)


@pytest.mark.parametrize("rho", [0.0, -1.0, float("nan"), None])
def test_resistivity_not_above_zero_is_refused(rho):
    with pytest.raises(InputError) as e:
        soil_factor([1.0, rho], [0, 0])
    assert str(e.value) == "soil thermal resistivity must be > 0 K.m/W"
