"""The IEC rule set's interface (calc.rules.iec): each method gives the published value.

The engine calls some methods of the interface only; these tests call every one directly, with
the standard, edition and table or formula named beside each check.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.rules import get_rules, rule_names

IEC = get_rules("iec")


def test_registered_rule_sets():
    assert rule_names() == ("iec", "nec")
    assert IEC.name == "iec"


def test_temperature_coefficient_iec60287_table_1():
    # IEC 60287-1-1 Table 1: α20 Cu 3.93e-3 /K, Al 4.03e-3 /K
    assert IEC.alpha20_per_k("Cu") == 0.00393
    assert IEC.alpha20_per_k("Al") == 0.00403


def test_rated_ac_current():
    # three-phase I = S / (√3 · U_LL); single-phase I = S / U
    assert_allclose(
        IEC.ac_current_a([250.0, 4.6], [800.0, 230.0], [3, 1]),
        [250e3 / (np.sqrt(3) * 800.0), 20.0],
    )


def test_breaker_ratings_of_a_device_kind():
    # IEC 60898-1 preferred rated currents 6-125 A (8 A from memory); a project's own subset
    assert IEC.breaker_ratings_a("iec60898-1").tolist() == [
        6.0, 8.0, 10.0, 13.0, 16.0, 20.0, 25.0, 32.0, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0,
    ]  # fmt: skip
    assert IEC.breaker_ratings_a("iec60898-1", [125, 16]).tolist() == [16.0, 125.0]
    with pytest.raises(ValueError, match="breaker_ratings_a: 30 A is not in the IEC 60898-1"):
        IEC.breaker_ratings_a("iec60898-1", [30])


def test_default_size_lists():
    # strings 4, 6, 10 mm² (PV cable ≥ 4 mm², common practice); feeders IEC 60228 16-300 mm²
    assert IEC.default_sizes_mm2(0, "Cu") == (4.0, 6.0, 10.0)
    feeders = (16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0, 185.0, 240.0, 300.0)
    assert IEC.default_sizes_mm2(1, "Al") == feeders
    assert IEC.default_sizes_mm2(2, "Cu") == feeders


def test_conductor_resistance_of_each_kind():
    # strings: EN 50618 PV cable, IEC 60228:2004 Table 3 class 5 tinned Cu (4 mm² 5.09 Ω/km);
    # feeders: Table 2 class 2 plain (Cu 95 mm² 0.193, Al 95 mm² 0.320 Ω/km)
    assert IEC.r20_ohm_km(0, "Al", [4.0]).tolist() == [5.09]
    assert IEC.r20_ohm_km(1, "Cu", [95.0]).tolist() == [0.193]
    assert IEC.r20_ohm_km(2, "Al", [95.0]).tolist() == [0.320]


def test_rating_temperatures():
    # IEC 60364-5-52:2009 Table 52.1: PVC 70 °C, XLPE 90 °C; EN 50618:2014: PV cable 120 °C in
    # air (Table A.3 basis), 90 °C continuous (calc's buried rating)
    assert [IEC.theta_max_c(i, "air") for i in ("PVC", "XLPE", "PV")] == [70.0, 90.0, 120.0]
    assert [IEC.theta_max_c(i, "D2") for i in ("PVC", "XLPE", "PV")] == [70.0, 90.0, 90.0]


def test_base_capacity_of_each_kind_and_environment():
    # strings in air: EN 50618:2014 Table A.3 (from memory), 4 mm² 44 A (two adjacent on a
    # surface) and 55 A (free air)
    assert IEC.base_capacity_a(0, "Cu", "PV", 2, "air", [4.0], "two_adjacent_surface").tolist() == [
        44.0
    ]
    assert IEC.base_capacity_a(0, "Cu", "PV", 2, "air", [4.0], "free_air").tolist() == [55.0]
    # strings buried: B.52.3 XLPE 2 loaded D1 43 A × √(R20 cl.2 / R20 cl.5 tinned) (derived)
    buried = IEC.base_capacity_a(0, "Cu", "PV", 2, "D1", [4.0], "free_air")
    assert_allclose(buried, [43.0 * np.sqrt(4.61 / 5.09)])
    # feeders in air: B.52.12 method F XLPE Cu, 240 mm² 607 A (trefoil, 3 loaded), 679 A (2)
    assert IEC.base_capacity_a(2, "Cu", "XLPE", 3, "air", [240.0], "free_air").tolist() == [607.0]
    assert IEC.base_capacity_a(1, "Cu", "XLPE", 2, "air", [240.0], "free_air").tolist() == [679.0]
    # feeders buried: B.52.5 XLPE 3 loaded D2, 95 mm² 226 A; B.52.3 2 loaded D1 239 A (memory)
    assert IEC.base_capacity_a(2, "Cu", "XLPE", 3, "D2", [95.0], "free_air").tolist() == [226.0]
    assert IEC.base_capacity_a(1, "Cu", "XLPE", 2, "D1", [95.0], "free_air").tolist() == [239.0]
    with pytest.raises(ValueError, match="environment must be one of 'air', 'D1', 'D2'; got 'E'"):
        IEC.base_capacity_a(1, "Cu", "XLPE", 2, "E", [95.0], "free_air")


def test_correction_factors():
    # B.52.14 (air, ref 30 °C): XLPE 40 °C 0.91; EN 50618 Table A.4: PV 70 °C 0.91 (memory)
    assert IEC.air_temp_factor(40.0, "XLPE") == 0.91
    assert IEC.air_temp_factor(70.0, "PV") == 0.91
    # B.52.15 (ground, ref 20 °C): XLPE 30 °C 0.93
    assert IEC.ground_temp_factor(30.0, "XLPE") == 0.93
    # B.52.16: 1.0 K·m/W, direct 1.50, duct 1.18
    assert IEC.soil_factor(np.array([1.0, 1.0]), np.array([0, 1])).tolist() == [1.50, 1.18]
    # depth: 1.0 at the IEC 60364-5-52 reference depth 0.7 m; IEC 60287-2-1 T4 ratio at 1.0 m
    u_ref, u = 1.4 / 0.04, 2.0 / 0.04
    t4 = np.sqrt(np.arccosh(u_ref) / np.arccosh(u))
    assert_allclose(IEC.depth_factor(np.array([0.7, 1.0]), np.array([0.04, 0.04])), [1.0, t4])
    # B.52.18 direct, 4 circuits touching 0.60; B.52.19 ducts, 4 circuits at 0.25 m 0.75
    assert_allclose(IEC.group_factor(np.array([4, 4]), np.array([0.0, 0.25]), [0, 1]), [0.6, 0.75])
    # B.52.17 item 1: 4 circuits bunched 0.65; item 4 (tray) 0.77
    assert_allclose(IEC.air_group_factor([4, 4], ["bunched", "tray"]), [0.65, 0.77])


def test_reactance_and_adiabatic_k():
    # BS 7671 Table 4E1B, 95 mm²: 0.170 mV/A/m (two cables) / 2 and 0.145 (trefoil) / √3
    assert_allclose(IEC.reactance_ohm_km([95.0], "XLPE", 1), [0.085])
    assert_allclose(IEC.reactance_ohm_km([95.0], "XLPE", 3), [0.145 / np.sqrt(3)])
    # IEC 60364-4-43:2008 Table 43A: Cu XLPE 143, Al PVC > 300 mm² 68 (memory)
    assert IEC.k_adiabatic("Cu", "XLPE", [95.0]).tolist() == [143.0]
    assert IEC.k_adiabatic("Al", "PVC", [400.0]).tolist() == [68.0]


def test_pv_design_currents():
    # IEC 62548:2016 (from memory): 12 strings of 10 A, I_MOD_MAX_OCPR 20 A -> protection
    # required, fuse the smallest gPV rating ≥ 1.5 · 10 A = 15 A within 15-20 A
    p = IEC.string_protection([10.0], [12], [20.0], [np.nan], np.array([10.0, 15.0, 20.0]))
    assert p.required.tolist() == [True] and p.fuse_a.tolist() == [15.0]
    # string cable: the fuse rating, never below 1.25 · I_SC; unfused 1.25 · I_SC · (S − 1)
    assert_allclose(IEC.string_design_current_a([10.0, 10.0], [12, 4], [15.0, np.nan]), [15, 37.5])
    # array cable without its own device: 1.25 · I_SC · N
    assert_allclose(IEC.array_design_current_a([10.0], [16]), [200.0])
    # a.c.: the datasheet maximum where given, else S / (√3 · U)
    assert_allclose(
        IEC.ac_max_current_a([100.0, 100.0], [400.0, 400.0], [3, 3], [160.0, np.nan]),
        [160.0, 100e3 / (np.sqrt(3) * 400.0)],
    )


def test_protection_lists_and_factors():
    # gPV fuse ratings (catalogue practice), a project's subset named by its setting
    assert IEC.gpv_fuse_ratings_a([20, 15]).tolist() == [15.0, 20.0]
    with pytest.raises(ValueError) as e:
        IEC.gpv_fuse_ratings_a([17], "array_fuse_ratings_a")
    assert str(e.value).startswith("array_fuse_ratings_a: 17 A is not in the IEC 60269-6 gPV")
    with pytest.raises(ValueError) as e:
        IEC.gpv_fuse_ratings_a([17])
    assert str(e.value).startswith("fuse_ratings_a: 17 A is not in the IEC 60269-6 gPV")
    # I2 / In: IEC 60947-2 1.30 (confirmed), gPV 1.45 (from memory)
    assert IEC.i2_factor("iec60947-2") == 1.30 and IEC.i2_factor("gpv") == 1.45


def test_bifacial_backfeed_and_array_fuse():
    # I_SC,BIFI = I_SC (1 + φ G_rear/G_front): 13.9 × (1 + 0.8 × 0.135) = 15.4012 A (BNPI,
    # IEC 61215-1); at 0.3 (BSI) 17.236 A; a datasheet value is taken as is
    assert_allclose(IEC.bifacial_isc_a([13.9], [0.8]), [15.4012])
    assert_allclose(IEC.bifacial_isc_a([13.9], [0.8], 0.3), [17.236])
    assert_allclose(IEC.bifacial_isc_a([13.9], [0.8], 0.3, [16.0]), [16.0])
    # backfeed: 1.25 × the other arrays' I_SC on the same input (IEC 62548:2016, from memory)
    assert IEC.backfeed_a(np.array([100.0, 60.0, 80.0]), np.array([1, 1, 2])).tolist() == [
        75.0,
        125.0,
        0.0,
    ]
    # array fuse: 1.25-2.4 × I_SC, the smallest listed rating in the range (from memory)
    f = IEC.array_fuse([100.0], np.array([100.0, 160.0, 200.0]))
    assert f.fuse_a.tolist() == [160.0] and f.lower_a.tolist() == [125.0]
    assert IEC.array_fuse([100.0]).fuse_a.tolist() == [125.0]  # whole gPV list


def test_array_capacity_and_check():
    # with a fuse: max(1.25 · I_SC, In, I2 / 1.45); without: max(1.25 · I_SC, B)
    # (IEC 62548:2016 from memory; IEC 60364-4-43:2008 433.1)
    need = IEC.array_min_capacity_a([100.0, 100.0], [375.0, 375.0], [160.0, np.nan])
    assert need.tolist() == [160.0, 375.0]
    # B 375 A > Iz 300 A: protected by a 160 A fuse (In ≤ Iz, I2 ≤ 1.45 Iz), unprotected without
    c = IEC.array_cable_check([300.0, 300.0, 400.0], [375.0] * 3, [160.0, np.nan, np.nan])
    assert c.needed.tolist() == [True, True, False] and c.ok.tolist() == [True, False, True]


def test_ac_breaker_and_overload_check():
    # IEC 60947-2 ratings (R10 from 160 A, memory): Ib 144.3 A -> In 160 A, I2 = 1.30 · In
    b = IEC.ac_breaker([144.3], "iec60947-2")
    assert b.in_a.tolist() == [160.0] and b.i2_a.tolist() == [208.0]
    assert IEC.ac_breaker([144.3], "iec60947-2", [250.0]).in_a.tolist() == [250.0]
    with pytest.raises(ValueError) as e:
        IEC.ac_breaker([144.3], "iec60947-2", [170.0], "ac_breaker_ratings_a")
    assert str(e.value).startswith("ac_breaker_ratings_a: 170 A is not in the IEC 60947-2 breaker")
    with pytest.raises(ValueError) as e:
        IEC.ac_breaker([144.3], "iec60947-2", [170.0])
    assert str(e.value).startswith("breaker_ratings_a: 170 A is not in the IEC 60947-2 breaker")
    # IEC 60364-4-43:2008 433.1: Ib ≤ In ≤ Iz and I2 ≤ 1.45 Iz
    c = IEC.overload_check([144.3, 144.3], [160.0, 160.0], [175.0, 150.0], [208.0, 208.0])
    assert c.ok.tolist() == [True, False] and c.iz_ok.tolist() == [True, False]
