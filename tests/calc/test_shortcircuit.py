"""Adiabatic short-circuit k: IEC 60364-4-43:2008 Table 43A vs the IEC 60949 formula."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import TableRangeError, UnknownOptionError
from calc.shortcircuit import k_iec60949, k_table_43a, min_size_adiabatic_mm2

# (material, insulation, size, θi, θf) -> Table 43A k
CASES = [
    ("Cu", "PVC", 240, 70, 160),
    ("Cu", "PVC", 400, 70, 140),
    ("Cu", "XLPE", 240, 90, 250),
    ("Al", "PVC", 240, 70, 160),
    ("Al", "PVC", 400, 70, 140),
    ("Al", "XLPE", 240, 90, 250),
]


@pytest.mark.parametrize(("material", "insulation", "size", "theta_i", "theta_f"), CASES)
def test_table_43a_k_reproduced_by_iec60949_within_1(material, insulation, size, theta_i, theta_f):
    k_tab = k_table_43a(material, insulation, [size])[0]
    assert abs(k_iec60949(material, theta_i, theta_f) - k_tab) <= 1.0


def test_table_43a_values():
    # IEC 60364-4-43:2008 Table 43A: Cu PVC 115 (≤300) / 103 (>300), Cu XLPE 143, Al PVC 76,
    # Al XLPE 94
    assert k_table_43a("Cu", "PVC", [300, 400]).tolist() == [115.0, 103.0]
    assert k_table_43a("Cu", "XLPE", [95]).tolist() == [143.0]
    assert k_table_43a("Al", "XLPE", [95]).tolist() == [94.0]


def test_min_size():
    # S = √(I²t)/k: 10 kA, 1 s, k 143 -> 69.9 mm²
    assert_allclose(min_size_adiabatic_mm2([10e3], [1.0], [143.0]), [10e3 / 143.0])


def test_sizes_off_table_43a_are_refused():
    # Table 43A's rows cover 0 < S <= 1000 mm² (the data file's ranges); 1200 mm² has no k
    with pytest.raises(TableRangeError) as e:
        k_table_43a("Cu", "PVC", [240, 1200])
    assert str(e.value) == "Table 43A has no k for Cu/PVC at these sizes"


def test_unknown_material_or_insulation_lists_the_valid_ones():
    with pytest.raises(UnknownOptionError) as e:
        k_table_43a("Fe", "PVC", [16])
    assert str(e.value) == "material must be one of 'Cu', 'Al'; got 'Fe'"
    with pytest.raises(UnknownOptionError) as e:
        k_table_43a("Cu", "EPR", [16])
    assert str(e.value) == "insulation must be one of 'PVC', 'XLPE'; got 'EPR'"
    with pytest.raises(UnknownOptionError) as e:
        k_iec60949("Fe", 90.0, 250.0)
    assert str(e.value) == "material must be one of 'Cu', 'Al'; got 'Fe'"


def test_integer_fault_currents_give_the_same_size():
    # 50 kA as 32-bit integers (e.g. read from an integer column): I² = 2.5e9 A² does not fit
    # in 32 bits, so the formula must work in floats; S = 50000·√0.2 / 143 = 156.4 mm²
    fault = np.array([50_000], dtype=np.int32)
    assert_allclose(min_size_adiabatic_mm2(fault, [0.2], [143.0]), [50e3 * np.sqrt(0.2) / 143.0])
