"""Capacities and correction factors, IEC 60364-5-52:2009 Annex B, EN 50618, IEC 60287-2-1."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.ampacity import (
    air_temp_factor,
    buried_capacity_a,
    depth_factor,
    free_air_capacity_a,
    ground_temp_factor,
    group_factor,
    pv_cable_capacity_a,
    reference_condition,
    soil_factor,
)
from calc.errors import InputError, TableRangeError, UnknownOptionError
from calc.tables import load_table


def _sqrt_rule(theta_max, theta, theta_ref):
    return np.sqrt((theta_max - theta) / (theta_max - theta_ref))


@pytest.mark.parametrize(("insulation", "theta_max"), [("PVC", 70.0), ("XLPE", 90.0)])
def test_air_temperature_factor_follows_sqrt_rule(insulation, theta_max):
    # IEC 60364-5-52:2009 Table B.52.14 (ref 30 °C) vs √((θmax − θ)/(θmax − 30)), within 0.01
    t = load_table("iec60364_5_52_2009_b52_14_air_temperature.csv")
    ok = ~np.isnan(t[insulation])
    temps = t["temp_c"][ok]
    assert_allclose(t[insulation][ok], _sqrt_rule(theta_max, temps, 30.0), atol=0.01)
    # interpolated values between the rows too (the curve is smooth, 5 °C steps)
    grid = np.arange(10.0, temps[-1] - 5.0, 0.5)
    assert_allclose(air_temp_factor(grid, insulation), _sqrt_rule(theta_max, grid, 30.0), atol=0.01)
    # confirmed cells: 40, 45, 50, 55 °C
    expected = {"PVC": [0.87, 0.79, 0.71, 0.61], "XLPE": [0.91, 0.87, 0.82, 0.76]}[insulation]
    assert_allclose(air_temp_factor([40.0, 45.0, 50.0, 55.0], insulation), expected)


@pytest.mark.parametrize(("insulation", "theta_max"), [("PVC", 70.0), ("XLPE", 90.0)])
def test_ground_temperature_factor_follows_sqrt_rule(insulation, theta_max):
    # IEC 60364-5-52:2009 Table B.52.15 (ref 20 °C) vs √((θmax − θ)/(θmax − 20)), within 0.01
    t = load_table("iec60364_5_52_2009_b52_15_ground_temperature.csv")
    ok = ~np.isnan(t[insulation])
    assert_allclose(t[insulation][ok], _sqrt_rule(theta_max, t["temp_c"][ok], 20.0), atol=0.01)
    grid = np.arange(10.0, t["temp_c"][ok][-1] - 5.0, 0.5)
    assert_allclose(
        ground_temp_factor(grid, insulation), _sqrt_rule(theta_max, grid, 20.0), atol=0.01
    )
    assert ground_temp_factor([20.0], insulation)[0] == 1.0  # reference temperature


def test_pv_cable_ambient_factor():
    # EN 50618:2014 Table A.4 (from memory): 1.00 up to 60 °C, then √((120 − θ)/60) within 0.01
    temps = np.array([70.0, 80.0, 90.0, 100.0, 110.0])
    assert_allclose(air_temp_factor(temps, "PV"), _sqrt_rule(120.0, temps, 60.0), atol=0.01)
    assert_allclose(air_temp_factor([20.0, 60.0], "PV"), [1.0, 1.0])


def test_temperature_off_the_table_raises():
    with pytest.raises(TableRangeError):
        air_temp_factor([65.0], "PVC")  # B.52.14 PVC ends at 60 °C


def test_soil_factor_tabulated_points_and_interpolation():
    # IEC 60364-5-52:2009 Table B.52.16
    rho = [0.5, 0.7, 1.0, 1.5, 2.0, 2.5, 3.0]
    assert_allclose(soil_factor(rho, 1), [1.28, 1.20, 1.18, 1.10, 1.05, 1.00, 0.96])
    assert_allclose(soil_factor(rho, 0), [1.88, 1.62, 1.50, 1.28, 1.12, 1.00, 0.90])
    assert_allclose(soil_factor([1.25], 0), [1.39])  # midway between 1.0 and 1.5 (linear)
    assert_allclose(soil_factor([0.3], 0), [1.88])  # below the table: 0.5 value (conservative)
    # beyond 3 K.m/W: F(3) √(3/ρ) (stated IEC 60287-based extension), decreasing
    assert_allclose(soil_factor([6.0], 0), [0.90 * np.sqrt(0.5)])


# IEC 60364-5-52:2009 Table B.52.18 (direct in ground): columns nil, 0.125, 0.25, 0.5 m
B52_18 = {
    2: (0.75, 0.85, 0.90, 0.90),
    3: (0.65, 0.75, 0.80, 0.85),
    4: (0.60, 0.70, 0.75, 0.80),
    5: (0.55, 0.65, 0.70, 0.80),
    6: (0.50, 0.60, 0.70, 0.80),
    7: (0.45, 0.59, 0.67, 0.76),
    8: (0.43, 0.57, 0.65, 0.75),
    9: (0.41, 0.55, 0.63, 0.74),
    12: (0.36, 0.51, 0.59, 0.71),
    16: (0.32, 0.47, 0.56, 0.68),
    20: (0.29, 0.44, 0.53, 0.66),
}
# IEC 60364-5-52:2009 Table B.52.19 part B (single-core, ducts): columns nil, 0.25, 0.5, 1.0 m
B52_19 = {
    2: (0.80, 0.90, 0.90, 0.95),
    3: (0.70, 0.80, 0.85, 0.90),
    4: (0.65, 0.75, 0.80, 0.90),
    5: (0.60, 0.70, 0.80, 0.90),
    6: (0.60, 0.70, 0.80, 0.90),
    7: (0.53, 0.66, 0.76, 0.87),
    8: (0.50, 0.63, 0.74, 0.87),
    9: (0.47, 0.61, 0.73, 0.86),
    10: (0.45, 0.59, 0.72, 0.85),
    12: (0.41, 0.56, 0.69, 0.84),
    16: (0.34, 0.52, 0.66, 0.83),
    20: (0.29, 0.48, 0.63, 0.81),
}


@pytest.mark.parametrize(
    ("laying", "table", "spacings"),
    [
        (0, B52_18, (0.0, 0.125, 0.25, 0.5)),
        (1, B52_19, (0.0, 0.25, 0.5, 1.0)),
    ],
)
def test_group_factor_at_every_tabulated_cell(laying, table, spacings):
    for n, row in table.items():
        assert_allclose(group_factor([n] * 4, spacings, laying), row, err_msg=f"n={n}")


def test_group_factor_single_circuit_is_one():
    assert_allclose(group_factor([1, 1], [0.0, 0.0], [0, 1]), [1.0, 1.0])


def test_group_factor_between_counts_and_spacings():
    # between counts the next larger row: 10 circuits direct, touching, between 9 (0.41) and
    # 12 (0.36) -> 0.36 (calc.ampacity.group_factor Notes: a line between rows would overstate
    # the factor)
    assert_allclose(group_factor([10], [0.0], 0), [0.36])
    # linear in spacing: 3 circuits direct, 0.375 m, between 0.25 (0.80) and 0.5 m (0.85)
    assert_allclose(group_factor([3], [0.375], 0), [0.825])
    # beyond the widest column: its value
    assert_allclose(group_factor([3], [2.0], 1), [0.90])
    # direct, 0 < s < 0.125 m: capped at the one-cable-diameter column (4 circuits: 0.60)
    assert_allclose(group_factor([4], [0.05], 0), [0.60])
    # 2 circuits: linear 0.75 -> 0.85 gives 0.79 at 0.05 m, below the 0.80 one-diameter value
    assert_allclose(group_factor([2], [0.05], 0), [0.79])


@pytest.mark.parametrize("laying", [0, 1])
def test_group_factor_beyond_table_is_monotone_and_conservative(laying):
    n = np.arange(20, 61)
    f = group_factor(n, np.zeros(n.size), laying)
    assert np.all(np.diff(f) < 0)  # more circuits, lower factor
    assert f[0] == pytest.approx(0.29)
    # stated method: 1/F² linear in n from rows 16 and 20
    f16, f20 = (0.32, 0.29) if laying == 0 else (0.34, 0.29)
    slope = (1 / f20**2 - 1 / f16**2) / 4
    assert_allclose(f[-1], 1 / np.sqrt(1 / f20**2 + slope * 40))


def test_depth_factor_iec60287_t4():
    # IEC 60287-2-1: T4 ∝ ln(u + √(u² − 1)), u = 2L/De; F = √(T4(0.7)/T4(L)) capped at 1
    de = 0.04
    assert depth_factor([0.7], de)[0] == 1.0  # reference depth
    assert depth_factor([0.4], de)[0] == 1.0  # no credit for shallow laying
    u_ref, u = 1.4 / de, 2.0 / de
    expected = np.sqrt(np.log(u_ref + np.sqrt(u_ref**2 - 1)) / np.log(u + np.sqrt(u**2 - 1)))
    assert_allclose(depth_factor([1.0], de), [expected])
    assert np.all(np.diff(depth_factor([0.8, 1.0, 1.5, 2.0], de)) < 0)


def test_base_capacity_cells():
    # IEC 60364-5-52:2009 Table B.52.12, method F trefoil, XLPE Cu (confirmed): 240 mm² 607 A
    assert free_air_capacity_a([240, 25], "Cu", "XLPE", 3).tolist() == [607.0, 135.0]
    # Table B.52.10 method F trefoil, PVC Cu (confirmed): 120 mm² 308 A
    assert free_air_capacity_a([120], "Cu", "PVC", 3).tolist() == [308.0]
    # Table B.52.5 XLPE 3 loaded D2, 95 mm² 226 A; Table B.52.2 PVC 2 loaded D1 2.5 mm² 29 A
    # (values from memory)
    assert buried_capacity_a([95], "Cu", "XLPE", 3, "D2").tolist() == [226.0]
    assert buried_capacity_a([2.5], "Cu", "PVC", 2, "D1").tolist() == [29.0]
    # EN 50618 Table A.3 (memory): 4 mm² free in air 55 A
    assert pv_cable_capacity_a([4], "free_air").tolist() == [55.0]


def test_derived_al_free_air_ratio_is_in_the_tabulated_al_cu_band():
    # derived Al ratings (Cu × √(R_Cu/R_Al)) should show the Al/Cu ratio of the buried tables,
    # 0.74-0.79 (IEC 60364-5-52:2009 B.52.2-B.52.5)
    sizes = [16, 25, 50, 95, 150, 240, 300]
    ratio = free_air_capacity_a(sizes, "Al", "XLPE", 3) / free_air_capacity_a(
        sizes, "Cu", "XLPE", 3
    )
    assert np.all((ratio > 0.74) & (ratio < 0.80))
    buried = buried_capacity_a(sizes, "Al", "XLPE", 3, "D2") / buried_capacity_a(
        sizes, "Cu", "XLPE", 3, "D2"
    )
    assert np.all((buried > 0.74) & (buried < 0.80))


def test_depth_must_exceed_half_the_diameter():
    # IEC 60287-2-1: u = 2L/De must exceed 1 (the axis below the surface by more than De/2)
    for depth in (0.02, 0.015):  # 0.04 m cable: L = De/2 and below
        with pytest.raises(InputError) as e:
            depth_factor([depth], 0.04)
        assert str(e.value) == (
            "depth to the cable axis must exceed half the cable or duct diameter"
        )
    # 0.05 m is deeper than De/2 = 0.02 m: valid, and shallower than 0.7 m: no credit
    assert depth_factor([0.05], 0.04).tolist() == [1.0]


def test_aluminium_in_air_only_at_the_al_sizes_of_iec60228():
    # IEC 60228:2004 Table 2 lists Al from 10 mm²: 4 mm² has no Al rating (nan); 16 mm² is
    # the Cu value (method E, 100 A) × √(R20 Cu / R20 Al) = 100 √(1.15 / 1.91)
    got = free_air_capacity_a([4, 16], "Al", "XLPE", 3)
    assert np.isnan(got[0])
    assert_allclose(got[1], 100.0 * np.sqrt(1.15 / 1.91))


def test_unknown_options_list_the_valid_ones():
    with pytest.raises(UnknownOptionError) as e:
        free_air_capacity_a([16], "Fe", "XLPE", 3)
    assert str(e.value) == "material must be one of 'Cu', 'Al'; got 'Fe'"
    with pytest.raises(UnknownOptionError) as e:
        free_air_capacity_a([16], "Cu", "EPR", 3)
    assert str(e.value) == "insulation must be one of 'PVC', 'XLPE'; got 'EPR'"
    with pytest.raises(UnknownOptionError) as e:
        reference_condition("depth")
    assert str(e.value) == (
        "reference condition must be one of 'air_temp_c', 'ground_temp_c', 'soil_k_m_w', "
        "'depth_m'; got 'depth'"
    )
