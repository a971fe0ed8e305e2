"""What calc.resistance refuses, and how it says so: untabulated sizes (IEC 60228:2004 Tables 2
and 3), unknown materials and insulations, and missing values (None = nan = not known).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import TableRangeError, UnknownOptionError
from calc.resistance import alpha20_per_k, r20_ohm_km, r_at_temp_ohm_km, reactance_ohm_km

# The sizes calc tabulates from IEC 60228:2004 Table 2 (class 2) and Table 3 (class 5) for copper,
# plain and tinned alike: 1.5 to 400 mm² (the R10-like series of the standard, from memory).
CU_SIZES = "[1.5, 2.5, 4.0, 6.0, 10.0, 16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0, 185.0, 240.0, 300.0, 400.0]"  # noqa: E501


def test_only_the_untabulated_sizes_are_named_plain_copper():
    # 3 mm² and 5 mm² are not IEC 60228 sizes; 4 mm² is (4.61 Ω/km class 2).
    with pytest.raises(TableRangeError) as err:
        r20_ohm_km([4.0, 5.0, 3.0, 5.0])
    assert str(err.value) == (
        f"IEC 60228 class 2 plain Cu has no size(s) [3.0, 5.0] mm²; tabulated: {CU_SIZES}"
    )


def test_an_untabulated_size_of_tinned_pv_conductor_names_the_coating():
    # EN 50618 PV cable is class 5 tinned copper (IEC 60228 Table 3); 3 mm² is not a size.
    with pytest.raises(TableRangeError) as err:
        r20_ohm_km([3.0], "Cu", conductor_class=5, tinned=True)
    assert str(err.value) == (
        f"IEC 60228 class 5 tinned Cu has no size(s) [3.0] mm²; tabulated: {CU_SIZES}"
    )


def test_a_size_above_the_table_is_refused_not_clipped():
    # 630 mm² lies above the largest tabulated size (400 mm²): refused, never read as 400 mm².
    with pytest.raises(TableRangeError) as err:
        r20_ohm_km([240.0, 630.0])
    assert str(err.value) == (
        f"IEC 60228 class 2 plain Cu has no size(s) [630.0] mm²; tabulated: {CU_SIZES}"
    )


def test_flexible_aluminium_is_not_in_iec_60228_table_3():
    # IEC 60228:2004 Table 3 (class 5) lists copper only (from memory).
    with pytest.raises(TableRangeError) as err:
        r20_ohm_km([10.0, 16.0], "Al", conductor_class=5)
    assert str(err.value) == (
        "IEC 60228 class 5 plain Al has no size(s) [10.0, 16.0] mm²; tabulated: []"
    )


def test_a_missing_size_is_refused_as_not_tabulated():
    with pytest.raises(TableRangeError) as err:
        r20_ohm_km([4.0, None])
    assert str(err.value) == (
        f"IEC 60228 class 2 plain Cu has no size(s) [nan] mm²; tabulated: {CU_SIZES}"
    )


@pytest.mark.parametrize("call", [lambda: r20_ohm_km([4.0], "Fe"), lambda: alpha20_per_k("Fe")])
def test_an_unknown_material_is_refused_with_the_valid_ones(call):
    with pytest.raises(UnknownOptionError) as err:
        call()
    assert str(err.value) == "material must be one of 'Cu', 'Al'; got 'Fe'"


def test_an_unknown_insulation_is_refused_with_the_valid_ones():
    with pytest.raises(UnknownOptionError) as err:
        reactance_ohm_km([95.0], "EPR", 3)
    assert str(err.value) == "insulation must be one of 'PVC', 'XLPE', 'PV'; got 'EPR'"


def test_resistance_at_temperature_with_a_missing_value():
    # IEC 60287-1-1:2006+A1:2014, R = R20 · (1 + α20 (θ − 20)), α20 Cu = 3.93e-3 /K (Table 1):
    # 1.91 Ω/km at 90 °C = 1.91 · (1 + 0.00393 · 70) = 1.91 · 1.2751 = 2.435441 Ω/km
    got = r_at_temp_ohm_km([1.91, None, 1.91], [90.0, 90.0, None])
    assert_allclose(got[0], 2.435441, rtol=1e-12)
    assert np.isnan(got[1:]).all()


def test_reactance_of_a_missing_size_is_unknown():
    # BS 7671:2018 Table 4E1B, 95 mm² three-phase trefoil: x = 0.145 mV/A/m -> 0.145 / √3 Ω/km
    got = reactance_ohm_km([95.0, None], "XLPE", 3)
    assert_allclose(got[0], 0.145 / np.sqrt(3.0), rtol=1e-12)
    assert np.isnan(got[1])
