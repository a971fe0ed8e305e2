"""NEC conductor sizes: circular mils, ASTM B258 AWG diameters, labels.

Published values: NFPA 70 NEC 2023 Chapter 9 Table 8, conductor area column [cmil] (confirmed,
see calc/data/nec_2023_chapter9_table8_conductors.csv). Definitions: 1 mil = 0.001 in,
1 in = 25.4 mm (exact), 1 cmil = π/4 mil²; ASTM B258 d = 0.005 in · 92^((36 − n)/39).
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.nec.sizes import (
    awg_diameter_mm,
    cmil_mm2,
    foot_m,
    size_from_label,
    size_index,
    size_label,
    size_labels,
    sizes_mm2,
)

# NEC 2023 Chapter 9 Table 8, area [cmil] of 14 AWG … 4/0 AWG (confirmed)
TABLE8_AWG_CMIL = {
    "14 AWG": 4110,
    "12 AWG": 6530,
    "10 AWG": 10380,
    "8 AWG": 16510,
    "6 AWG": 26240,
    "4 AWG": 41740,
    "3 AWG": 52620,
    "2 AWG": 66360,
    "1 AWG": 83690,
    "1/0 AWG": 105600,
    "2/0 AWG": 133100,
    "3/0 AWG": 167800,
    "4/0 AWG": 211600,
}
KCMIL = [250, 300, 350, 400, 500, 600, 700, 750, 800, 900, 1000]


def test_circular_mil_from_its_definition():
    # area of a circle of 0.001 in diameter, 1 in = 25.4 mm
    assert cmil_mm2() == pytest.approx(math.pi / 4 * (0.001 * 25.4) ** 2, rel=1e-15)
    assert cmil_mm2() == pytest.approx(5.067075e-4, rel=1e-6)


def test_astm_b258_diameters_at_the_defining_gauges():
    # 36 AWG = 0.005 in and 4/0 AWG = 0.46 in define the gauge (ratio 92 over 39 steps)
    assert_allclose(awg_diameter_mm([36, -3]) / 25.4, [0.005, 0.46], rtol=1e-12)


@pytest.mark.parametrize("label,cmil", TABLE8_AWG_CMIL.items())
def test_awg_areas_agree_with_nec_table8_cmil(label, cmil):
    # Table 8 rounds the area to 4 significant figures: agreement within 0.1 %
    area_cmil = size_from_label([label])[0] / (math.pi / 4 * 0.0254**2)
    assert area_cmil == pytest.approx(cmil, rel=1e-3)


def test_kcmil_areas_are_exact_multiples_of_the_circular_mil():
    got = size_from_label([f"{k} kcmil" for k in KCMIL])
    assert_allclose(got, np.array(KCMIL) * 1000 * math.pi / 4 * 0.0254**2, rtol=1e-12)


def test_known_metric_equivalents():
    # common conversions (from memory): 10 AWG ≈ 5.26 mm², 4/0 AWG ≈ 107.2 mm²,
    # 250 kcmil ≈ 126.7 mm²
    got = size_from_label(["10 AWG", "4/0 AWG", "250 kcmil"])
    # tolerance: half a unit of the last quoted digit
    assert np.all(np.abs(got - [5.26, 107.2, 126.7]) <= [0.005, 0.05, 0.05])


def test_size_list_is_ascending_14_awg_to_1000_kcmil():
    s = sizes_mm2()
    assert len(s) == 24 and np.all(np.diff(s) > 0)
    assert size_labels()[0] == "14 AWG" and size_labels()[-1] == "1000 kcmil"


def test_labels_both_ways():
    labels = ["14 AWG", "10 AWG", "1/0 AWG", "4/0 AWG", "250 kcmil", "1000 kcmil"]
    assert size_label(size_from_label(labels)).tolist() == labels
    assert size_label(sizes_mm2()).tolist() == list(size_labels())


def test_unknown_sizes_and_labels_are_refused():
    with pytest.raises(InputError, match="10 mm² is not an NEC size"):
        size_index([10.0])
    with pytest.raises(InputError, match="'10 mm2'"):
        size_from_label(["10 mm2"])


def test_foot_is_exactly_0_3048_m():
    assert foot_m() == 0.3048
