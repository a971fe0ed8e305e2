"""calc.ampacity at the edges of its IEC 60364-5-52:2009 and EN 50618:2014 tables: the count
interpolation and extension of the buried grouping factors, the last row of the temperature
tables, the refusals and their messages, and missing values (None = nan = not known).

Table cells are those of IEC 60364-5-52:2009 Table B.52.18 (from memory; the 0.5 m column of rows
4 to 6 confirmed against BS 7671 Table 4C2, see the data file's header).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.ampacity import (
    air_temp_factor,
    buried_capacity_a,
    ground_temp_factor,
    group_factor,
    pv_cable_capacity_a,
)
from calc.errors import InputError, TableRangeError, UnknownOptionError


def test_buried_group_factor_takes_the_next_larger_row_between_rows():
    # B.52.18, cables touching (nil clearance): 2 circuits 0.75, 3 circuits 0.65, 9 circuits
    # 0.41, 12 circuits 0.36, 16 circuits 0.32, 20 circuits 0.29. Between rows the next larger
    # tabulated count, counts rounded up to whole circuits (calc.ampacity.group_factor Notes):
    # 1.5 -> 2; 3 + 1e-12 (a float count of 3) -> 3; 10 and 11 -> 12; 13 -> 16; 18 -> 20.
    got = group_factor([1.5, 3.0 + 1e-12, 9.0, 10.0, 11.0, 12.0, 13.0, 18.0], [0.0] * 8, 0)
    assert_allclose(got, [0.75, 0.65, 0.41, 0.36, 0.36, 0.36, 0.32, 0.29], rtol=1e-12)
    # B.52.19 part B, single-core in ducts, 0.25 m apart: 6 ducts 0.70 (from memory) for 5.5
    assert_allclose(group_factor([5.5], [0.25], 1), group_factor([6.0], [0.25], 1), rtol=1e-12)


def test_buried_group_factor_beyond_20_circuits_extends_one_over_f_squared():
    # Beyond the last row, 1/F² is extended linearly in the count from the 16- and 20-circuit rows
    # (calc.ampacity.group_factor Notes; derived). Hand calculation, nil clearance:
    #   1/0.32² = 9.765625, 1/0.29² = 11.890606, slope = (11.890606 − 9.765625) / 4 = 0.531245
    #   20.5 circuits, rounded up to 21: 1/F² = 11.890606 + 0.531245 = 12.421851 -> F = 0.283731
    #   24 circuits:   1/F² = 11.890606 + 4 · 0.531245 = 14.015587 -> F = 0.267113
    got = group_factor([20.5, 24.0], [0.0, 0.0], 0)
    assert_allclose(got, [0.283731, 0.267113], atol=2e-6)


def test_a_missing_circuit_count_gives_an_unknown_factor():
    got = group_factor([4.0, None], [0.0, 0.0], 0)
    assert_allclose(got[0], 0.60, rtol=1e-12)  # B.52.18, 4 circuits touching
    assert np.isnan(got[1])


@pytest.mark.parametrize("spacing", [None, -0.1])
def test_a_missing_or_negative_spacing_is_refused(spacing):
    with pytest.raises(InputError) as err:
        group_factor([3.0, 3.0], [0.25, spacing], 0)
    assert str(err.value) == "spacing between circuits must be >= 0 m"


def test_an_unknown_laying_is_refused():
    with pytest.raises(InputError) as err:
        group_factor([3.0, 3.0], [0.25, 0.25], [0, 2])
    assert str(err.value) == "laying must be 0 (direct, D2) or 1 (duct, D1)"


@pytest.mark.parametrize(
    ("call", "message"),
    [
        # IEC 60364-5-52:2009 Table B.52.14 (air): XLPE rows to 80 °C, PVC rows to 60 °C
        (
            lambda: air_temp_factor([30.0, 85.0], "XLPE"),
            "IEC 60364-5-52 Table B.52.14 XLPE: temperature above 80 °C is off the table",
        ),
        (
            lambda: air_temp_factor([65.0], "PVC"),
            "IEC 60364-5-52 Table B.52.14 PVC: temperature above 60 °C is off the table",
        ),
        # EN 50618:2014 Table A.4 (PV cable, from memory): rows to 110 °C
        (
            lambda: air_temp_factor([115.0], "PV"),
            "EN 50618 Table A.4 factor: temperature above 110 °C is off the table",
        ),
        # IEC 60364-5-52:2009 Table B.52.15 (ground): XLPE rows to 80 °C; PV cable takes XLPE
        (
            lambda: ground_temp_factor([85.0], "PV"),
            "IEC 60364-5-52 Table B.52.15 XLPE: temperature above 80 °C is off the table",
        ),
    ],
)
def test_a_temperature_above_the_last_row_is_refused_naming_the_table(call, message):
    with pytest.raises(TableRangeError) as err:
        call()
    assert str(err.value) == message


@pytest.mark.parametrize(
    ("call", "table"),
    [
        (lambda: air_temp_factor([30.0, None], "XLPE"), "IEC 60364-5-52 Table B.52.14 XLPE"),
        (lambda: air_temp_factor([np.nan], "PV"), "EN 50618 Table A.4 factor"),
        (lambda: ground_temp_factor([20.0, None], "PVC"), "IEC 60364-5-52 Table B.52.15 PVC"),
    ],
)
def test_a_missing_temperature_is_refused_naming_the_table(call, table):
    with pytest.raises(TableRangeError) as err:
        call()
    assert str(err.value) == f"{table}: a temperature is missing (NaN)"


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (
            lambda: air_temp_factor([30.0], "EPR"),
            "insulation must be one of 'PVC', 'XLPE', 'PV'; got 'EPR'",
        ),
        (
            lambda: ground_temp_factor([20.0], "EPR"),
            "insulation must be one of 'PVC', 'XLPE', 'PV'; got 'EPR'",
        ),
        (
            lambda: buried_capacity_a([95.0], "Fe", "XLPE", 3, "D2"),
            "material must be one of 'Cu', 'Al'; got 'Fe'",
        ),
        (
            lambda: buried_capacity_a([95.0], "Cu", "EPR", 3, "D2"),
            "insulation must be one of 'PVC', 'XLPE'; got 'EPR'",
        ),
        (
            lambda: buried_capacity_a([95.0], "Cu", "XLPE", 3, "D3"),
            "method must be one of 'D1', 'D2'; got 'D3'",
        ),
        (
            lambda: pv_cable_capacity_a([4.0], "buried"),
            "installation must be one of 'free_air', 'on_surface', 'two_adjacent_surface'; "
            "got 'buried'",
        ),
    ],
)
def test_an_unknown_option_is_refused_with_the_valid_ones(call, message):
    with pytest.raises(UnknownOptionError) as err:
        call()
    assert str(err.value) == message


def test_missing_sizes_have_no_tabulated_capacity():
    # IEC 60364-5-52:2009 Table B.52.5 (from memory): 95 mm² Cu XLPE, 3 loaded, D2: 226 A.
    got = buried_capacity_a([95.0, None], "Cu", "XLPE", 3, "D2")
    assert got[0] == 226.0 and np.isnan(got[1])
    # EN 50618:2014 Table A.3 (from memory): 4 mm² free in air 55 A.
    got = pv_cable_capacity_a([4.0, None], "free_air")
    assert got[0] == 55.0 and np.isnan(got[1])


def test_pv_cable_capacity_defaults_to_free_air():
    # EN 50618:2014 Table A.3 (from memory): 4 mm² 55 A free in air, 6 mm² 70 A.
    assert pv_cable_capacity_a([4.0, 6.0]).tolist() == [55.0, 70.0]
