"""a.c. resistance of conductors: skin and proximity effect (IEC 60287-1-1 clause 2.1)."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.special import bei, beip, ber, berp

from calc.errors import InputError, TableRangeError, UnknownOptionError
from calc.resistance import (
    ac_resistance_factor,
    cable_diameter_mm,
    conductor_diameter_mm,
    proximity_effect_factor,
    r20_ohm_km,
    r_at_temp_ohm_km,
    skin_effect_factor,
    skin_proximity_coefficients,
)
from calc.rules import get_rules
from calc.tables import load_table

MU0_H_M = 4e-7 * math.pi  # magnetic constant (pre-2019 SI exact value; 2019 SI differs by 1e-10)
RHO_CU_OHM_M = 1.7241e-8  # IEC 60287-1-1 Table 1, annealed Cu at 20 °C


def _kelvin_ratio(x: np.ndarray) -> np.ndarray:
    """Exact R_ac/R_dc of an isolated solid round conductor (Kelvin/Rayleigh, Bessel functions).

    R_ac/R_dc = (x/2) [ber(x) bei'(x) - bei(x) ber'(x)] / [ber'(x)^2 + bei'(x)^2],
    x = r sqrt(omega mu0 / rho); Kelvin functions from scipy.special (reference library).
    """
    return (x / 2) * (ber(x) * beip(x) - bei(x) * berp(x)) / (berp(x) ** 2 + beip(x) ** 2)


# --------------------------------------------------------------------------------------------
# skin effect: IEC 60287-1-1 approximation against the exact solution


# (x range, tolerance on R_ac/R_dc). Measured maximum differences on a 200 000-point grid:
# 3.4e-5 for x <= 2.0, 1.34e-3 at x = 2.8 (edge of the x^4/(192 + 0.8 x^4) formula), 6.57e-3 at
# x = 3.8 (edge of the quadratic range) and 9.06e-3 just above 3.8 (linear range). Each tolerance is
# the measured maximum rounded up, so a wrong coefficient or a wrong unit of R' fails.
SKIN_RANGES = [
    ((0.05, 2.0), 4e-5),
    ((2.0, 2.8), 1.4e-3),
    ((2.8, 3.8), 7e-3),
    ((3.8, 5.0), 1e-2),
]


@pytest.mark.parametrize(("x_range", "tol"), SKIN_RANGES)
def test_skin_effect_matches_exact_bessel_solution_for_solid_round_conductor(x_range, tol):
    ks, _ = skin_proximity_coefficients("Cu", "round_solid")  # IEC 60287-1-1 Table 2: 1
    f_hz = 50.0
    x = np.linspace(*x_range, 402)[1:-1]  # inside the range: each edge belongs to one formula
    # a solid Cu conductor whose radius gives that Kelvin argument at 50 Hz
    radius_m = x / np.sqrt(2 * np.pi * f_hz * MU0_H_M / RHO_CU_OHM_M)
    r_dc_ohm_km = RHO_CU_OHM_M / (np.pi * radius_m**2) * 1e3
    ours = 1.0 + skin_effect_factor(r_dc_ohm_km, f_hz, ks)
    assert_allclose(ours, _kelvin_ratio(x), rtol=0, atol=tol)


def test_skin_effect_limit_of_exact_solution_is_x4_over_192():
    # series of the exact solution: R_ac/R_dc = 1 + x^4/192 - ... (low-frequency limit); the
    # IEC formula has the same leading term, so the two agree to 1e-9 at x = 0.5
    x = np.array([0.5])
    radius_m = x / np.sqrt(2 * np.pi * 50.0 * MU0_H_M / RHO_CU_OHM_M)
    r = RHO_CU_OHM_M / (np.pi * radius_m**2) * 1e3
    assert_allclose(skin_effect_factor(r, 50.0, 1.0), x**4 / 192, rtol=1e-3)
    assert_allclose(_kelvin_ratio(x) - 1.0, x**4 / 192, rtol=1e-3)


# --------------------------------------------------------------------------------------------
# limiting cases


def test_dc_factor_is_exactly_one():
    # f = 0 (d.c.): x_s = x_p = 0, so y_s = y_p = 0 and R = R' exactly
    s = np.array([16.0, 95.0, 300.0, 630.0])
    r = np.array([1.5, 0.25, 0.077, 0.06])
    for conductors in (2, 3):
        got = ac_resistance_factor(
            r, 0.0, conductor_diameter_mm(s), cable_diameter_mm(s), 1.0, 1.0, conductors
        )
        assert got.tolist() == [1.0, 1.0, 1.0, 1.0]


@pytest.mark.parametrize("material", ["Cu", "Al"])
def test_small_size_effects_are_negligible(material):
    # 16 mm² at 90 °C and 50 Hz, cables touching: y_s and y_p far below 1 % (below 0.01 %)
    r = r_at_temp_ohm_km(r20_ohm_km([16.0], material), 90.0, material)
    ks, kp = skin_proximity_coefficients(material)
    dc, s = conductor_diameter_mm([16.0]), cable_diameter_mm([16.0])
    assert skin_effect_factor(r, 50.0, ks)[0] < 1e-4
    for conductors in (2, 3):
        assert proximity_effect_factor(r, 50.0, dc, s, kp, conductors)[0] < 1e-4


def test_proximity_vanishes_with_large_spacing():
    r, dc = 0.0601 * 1.2751, 20.43  # 300 mm² Cu at 90 °C
    spacing = dc * np.array([1.4, 3.0, 10.0, 100.0, 1000.0])
    yp = proximity_effect_factor(r, 50.0, dc, spacing, 1.0)
    assert np.all(np.diff(yp) < 0)  # decreasing with spacing
    # s -> infinity: y_p -> F (d_c/s)^2 1.18/(F + 0.27) -> 0 like 1/s^2
    f_big = (1.6398**2) / (192 + 0.8 * 1.6398**2)
    lead = f_big * (dc / spacing[-1]) ** 2 * 1.18 / (f_big + 0.27)
    assert_allclose(yp[-1], lead, rtol=1e-4)
    assert proximity_effect_factor(r, 50.0, dc, np.inf, 1.0).tolist() == 0.0  # no neighbour


def test_two_cable_coefficient_against_three_cable_formula():
    # IEC 60287-1-1 2.1.3 (from memory): two cables y_p = 2.9 F (d_c/s)^2. Cross-check (derived):
    # for d_c << s the three-cable formula (2.1.4.1) tends to (1.18/0.27) F (d_c/s)^2, and the
    # mean-square field that two trefoil neighbours (currents 120° apart, fields 60° apart) set up
    # at a conductor is 1 + 1 + 2 cos(240°) cos(60°) = 1.5 times that of one return conductor, so
    # the two-cable coefficient is (2/3)(1.18/0.27) = 2.914; 2.9 is that to 0.5 %.
    r, dc = 0.0601 * 1.2751, 20.43
    y2, y3 = proximity_effect_factor(r, 1.0, dc, 1000 * dc, 1.0, [2, 3])  # low f, far apart
    assert_allclose(y2 / y3, 2.0 / 3.0, rtol=5e-3)


# --------------------------------------------------------------------------------------------
# hand-computed cases, 90 °C, 50 Hz, three single-core XLPE cables in trefoil touching


def _by_formula_text(r20_ohm_km, alpha20, theta_c, f_hz, area_mm2, fill, s_mm, ks, kp):
    """Every step of IEC 60287-1-1 2.1 written out with the math module (no calc code)."""
    r_ohm_m = r20_ohm_km * (1 + alpha20 * (theta_c - 20)) / 1000  # R' [ohm/m]
    xs2 = 8 * math.pi * f_hz / r_ohm_m * 1e-7 * ks
    ys = xs2**2 / (192 + 0.8 * xs2**2)
    xp2 = 8 * math.pi * f_hz / r_ohm_m * 1e-7 * kp
    big_f = xp2**2 / (192 + 0.8 * xp2**2)
    dc_mm = math.sqrt(4 * area_mm2 / (math.pi * fill))
    q = (dc_mm / s_mm) ** 2
    yp = big_f * q * (0.312 * q + 1.18 / (big_f + 0.27))
    return {"r": r_ohm_m, "xs2": xs2, "ys": ys, "F": big_f, "dc": dc_mm, "yp": yp}


def test_hand_computed_300mm2_copper():
    # inputs: IEC 60228:2004 Table 2, 300 mm² Cu class 2: R20 = 0.0601 ohm/km;
    # IEC 60287-1-1 Table 1: alpha20 = 3.93e-3 /K; Table 2: Cu round stranded extruded ks = kp = 1;
    # d_c from fill 0.915 (common practice), s = D = 28.0 mm (typical cable, common practice)
    # R' = 0.0601 * (1 + 0.00393 * 70) / 1000            = 7.66335e-5 ohm/m
    # x_s^2 = 8 pi 50 / 7.66335e-5 * 1e-7 * 1            = 1.63980   (x_s = 1.2805 <= 2.8)
    # y_s = 1.63980^2 / (192 + 0.8 * 1.63980^2)           = 2.68895 / 194.151 = 0.0138498
    # F = y_s (k_p = k_s)                                   = 0.0138498
    # d_c = sqrt(4 * 300 / (pi * 0.915))                   = 20.4317 mm; (d_c/s)^2 = 0.532469
    # y_p = 0.0138498 * 0.532469 * (0.312 * 0.532469 + 1.18 / 0.283850) = 0.0318822
    # R/R' = 1 + 0.0138498 + 0.0318822                    = 1.045732
    hand = {"r": 7.66335e-5, "xs2": 1.63980, "ys": 0.0138498, "F": 0.0138498, "dc": 20.4317}
    hand["yp"] = 0.0318822
    text = _by_formula_text(0.0601, 3.93e-3, 90.0, 50.0, 300.0, 0.915, 28.0, 1.0, 1.0)
    for key, value in hand.items():
        assert_allclose(text[key], value, rtol=2e-5, err_msg=key)  # hand values to 6 digits
    assert skin_proximity_coefficients("Cu") == (1.0, 1.0)
    assert_allclose(conductor_diameter_mm([300.0]), [20.4317], rtol=2e-5)
    assert cable_diameter_mm([300.0]).tolist() == [28.0]
    r = r_at_temp_ohm_km(r20_ohm_km([300.0], "Cu"), 90.0, "Cu")
    assert_allclose(skin_effect_factor(r, 50.0, 1.0), [0.0138498], rtol=2e-5)
    assert_allclose(proximity_effect_factor(r, 50.0, 20.4317, 28.0, 1.0), [0.0318822], rtol=2e-5)
    got = get_rules("iec").ac_resistance_factor(np.array([300.0]), "Cu", r, 50.0, 3)
    assert_allclose(got, [1.045732], rtol=2e-6)
    # single phase, two cables touching (2.1.3, from memory): y_p = 2.9 * 0.0138498 * 0.532469
    # = 0.0213862, R/R' = 1.035236
    got1 = get_rules("iec").ac_resistance_factor(np.array([300.0]), "Cu", r, 50.0, 1)
    assert_allclose(got1, [1.035236], rtol=2e-6)


def test_hand_computed_630mm2_aluminium():
    # inputs: IEC 60228:2004 Table 2, 630 mm² Al class 2: R20 = 0.0469 ohm/km (from memory; the
    # same value stands in the class 1 table of a public reproduction of IEC 60228);
    # IEC 60287-1-1 Table 1: alpha20 = 4.03e-3 /K; Table 2: Al round stranded ks = 1, kp = 0.8;
    # d_c from fill 0.915, s = D = 39.0 mm (typical cable, common practice)
    # R' = 0.0469 * (1 + 0.00403 * 70) / 1000            = 6.01305e-5 ohm/m
    # x_s^2 = 8 pi 50 / 6.01305e-5 * 1e-7 * 1            = 2.08985   (x_s = 1.4456 <= 2.8)
    # y_s = 2.08985^2 / (192 + 0.8 * 2.08985^2)           = 4.36747 / 195.494 = 0.0223407
    # x_p^2 = 2.08985 * 0.8 = 1.67188; F = 2.79518 / 194.236 = 0.0143906
    # d_c = sqrt(4 * 630 / (pi * 0.915))                   = 29.6084 mm; (d_c/s)^2 = 0.576369
    # y_p = 0.0143906 * 0.576369 * (0.312 * 0.576369 + 1.18 / 0.284391) = 0.0359065
    # R/R' = 1 + 0.0223407 + 0.0359065                    = 1.058247
    hand = {"r": 6.01305e-5, "xs2": 2.08985, "ys": 0.0223407, "F": 0.0143906, "dc": 29.6084}
    hand["yp"] = 0.0359065
    text = _by_formula_text(0.0469, 4.03e-3, 90.0, 50.0, 630.0, 0.915, 39.0, 1.0, 0.8)
    for key, value in hand.items():
        assert_allclose(text[key], value, rtol=2e-5, err_msg=key)
    assert skin_proximity_coefficients("Al") == (1.0, 0.8)
    r = r_at_temp_ohm_km([0.0469], 90.0, "Al")  # 630 mm² Al is beyond the packaged IEC 60228 rows
    got = get_rules("iec").ac_resistance_factor(np.array([630.0]), "Al", r, 50.0, 3)
    assert_allclose(got, [1.058247], rtol=2e-6)


# --------------------------------------------------------------------------------------------
# refusals and input errors


def test_proximity_beyond_formula_range_is_refused():
    # R' = 0.012 ohm/km at 50 Hz (about 1400 mm² Cu hot): x_p^2 = 10.47, x_p = 3.24 > 2.8
    with pytest.raises(TableRangeError, match=r"valid for x_p <= 2\.8.*x_p = 3\.236"):
        proximity_effect_factor([0.012], 50.0, 42.0, 60.0, 1.0)
    # the skin effect has the standard's own ranges beyond 2.8: 0.354 x_s - 0.733 above 3.8
    # (x_s = 3.2360 lies in the quadratic range: -0.136 - 0.0177 x + 0.0563 x^2 = 0.39629)
    assert_allclose(skin_effect_factor([0.012], 50.0, 1.0), [0.39629], rtol=2e-5)
    # no neighbour: no proximity term, nothing to refuse
    assert proximity_effect_factor([0.012], 50.0, 42.0, np.inf, 1.0).tolist() == [0.0]


def test_invalid_inputs_name_the_argument():
    with pytest.raises(InputError, match=r"frequency_hz must be zero \(d\.c\.\) or positive"):
        ac_resistance_factor([0.1], -50.0, 10.0, 20.0, 1.0, 1.0)
    with pytest.raises(InputError, match=r"s_mm must be at least the conductor diameter dc_mm"):
        ac_resistance_factor([0.1], 50.0, 10.0, 8.0, 1.0, 1.0)
    with pytest.raises(
        InputError, match=r"r_dc_ohm_km must be positive and finite \[ohm/km\]; got \[0\.0\]"
    ):
        skin_effect_factor([0.0], 50.0, 1.0)
    with pytest.raises(InputError, match=r"conductors must be 2 or 3; got \[4\.0\]"):
        proximity_effect_factor([0.1], 50.0, 10.0, 20.0, 1.0, 4)


def test_rule_set_broadcasts_and_checks_phases():
    rs = get_rules("iec")
    sizes = np.array(rs.default_sizes_mm2(2, "Cu"))  # [S]
    r = r_at_temp_ohm_km(r20_ohm_km(sizes, "Cu"), 90.0, "Cu")
    phases = np.array([0, 1, 3])[:, None]  # [k, 1]
    got = rs.ac_resistance_factor(sizes, "Cu", np.broadcast_to(r, (3, sizes.size)), 50.0, phases)
    assert got.shape == (3, sizes.size)
    assert got[0].tolist() == [1.0] * sizes.size  # d.c. row
    assert np.all(got[2] > got[1]) and np.all(got[1] > 1.0)  # trefoil pair sees more field
    assert rs.ac_resistance_factor(sizes, "Cu", r, 0.0, 3).tolist() == [1.0] * sizes.size
    with pytest.raises(InputError, match=r"phases must be 0 \(d\.c\.\), 1 or 3; got \[2\]"):
        rs.ac_resistance_factor(sizes, "Cu", r, 50.0, 2)
    with pytest.raises(UnknownOptionError, match="material must be one of 'Cu', 'Al'; got 'Fe'"):
        rs.ac_resistance_factor(sizes, "Fe", r, 50.0, 3)
    with pytest.raises(TableRangeError, match=r"size\(s\) \[800\.0\] mm²"):
        rs.ac_resistance_factor(np.array([800.0]), "Cu", np.array([0.03]), 50.0, 3)


def test_table2_unlisted_combination_is_refused():
    with pytest.raises(TableRangeError, match="lists no Al milliken_insulated_wires"):
        skin_proximity_coefficients("Al", "milliken_insulated_wires")
    with pytest.raises(UnknownOptionError, match="construction must be one of"):
        skin_proximity_coefficients("Cu", "sector")


# --------------------------------------------------------------------------------------------
# data files


def test_table2_loads_with_known_cells():
    # IEC 60287-1-1 Table 2 (as reproduced for the 2023 text): 7 Cu rows, 3 Al rows
    t = load_table("iec60287_1_1_table2_skin_proximity.csv")
    assert len(t) == 10
    row = t.where(material="Cu", construction="milliken", insulation="impregnated")
    assert (t["ks"][row].tolist(), t["kp"][row].tolist()) == ([0.435], [0.37])
    assert skin_proximity_coefficients("Cu", "milliken", "impregnated") == (0.435, 0.37)
    assert skin_proximity_coefficients("Cu", "round_stranded", "impregnated") == (1.0, 0.8)


def test_cable_geometry_loads_with_known_cells():
    # typical single-core 0.6/1 kV XLPE cables, 1.5-630 mm² (19 sizes), common practice
    t = load_table("lv_single_core_xlpe_cable_geometry.csv")
    assert len(t) == 19
    assert t["cable_diameter_mm"][t["size_mm2"] == 300].tolist() == [28.0]
    assert np.all(np.diff(t["size_mm2"]) > 0) and np.all(np.diff(t["cable_diameter_mm"]) > 0)
    with pytest.raises(TableRangeError, match=r"no typical single-core cable geometry.*\[5\.0\]"):
        cable_diameter_mm([5.0])


# IEC 60502-1 (from memory): nominal XLPE insulation thickness t_i [mm] for 0.6/1 kV, and the
# nominal non-metallic sheath of unarmoured single-core cables t_s = 0.035 D_under + 1.0, not less
# than 1.4 mm
IEC60502_XLPE_TI_MM = {
    16: 0.7,
    25: 0.9,
    35: 0.9,
    50: 1.0,
    70: 1.1,
    95: 1.1,
    120: 1.2,
    150: 1.4,
    185: 1.6,
    240: 1.7,
    300: 1.8,
    400: 2.0,
    500: 2.2,
    630: 2.4,
}


def test_typical_cable_diameters_agree_with_iec60502_construction():
    sizes = np.array(list(IEC60502_XLPE_TI_MM), dtype=float)
    under = conductor_diameter_mm(sizes) + 2 * np.array(list(IEC60502_XLPE_TI_MM.values()))
    estimate = under + 2 * np.maximum(1.4, 0.035 * under + 1.0)
    # catalogue diameters sit 0-7 % above the nominal build-up (measured -0.4 % to +6.5 %: the
    # build-up ignores tapes, tolerances and the thicker sheaths of small cables)
    ratio = cable_diameter_mm(sizes) / estimate
    assert np.all((ratio > 0.98) & (ratio < 1.07)), ratio.round(3).tolist()


def test_table2_refusals_name_the_rows_it_has():
    with pytest.raises(TableRangeError) as e:
        skin_proximity_coefficients("Al", "milliken_insulated_wires")
    assert str(e.value) == (
        "IEC 60287-1-1 Table 2 lists no Al milliken_insulated_wires conductor with extruded "
        "insulation; Al rows: round_solid/any, round_stranded/any, milliken/any"
    )
    with pytest.raises(UnknownOptionError) as e:
        skin_proximity_coefficients("Fe")
    assert str(e.value) == "material must be one of 'Cu', 'Al'; got 'Fe'"
    with pytest.raises(UnknownOptionError) as e:
        skin_proximity_coefficients("Cu", insulation="paper")
    assert str(e.value) == "insulation must be one of 'extruded', 'impregnated'; got 'paper'"


def test_geometry_of_the_smallest_size():
    # 1.5 mm², the first size of the file: a 7-wire conductor fills 7/9 of its circle (the file
    # rounds it to 0.778), d_c = √(4 A / (π · 7/9)); overall diameter 5.5 mm (typical catalogue)
    assert_allclose(conductor_diameter_mm([1.5]), [math.sqrt(4 * 1.5 / (math.pi * 7 / 9))], 1e-3)
    assert cable_diameter_mm([1.5]).tolist() == [5.5]


def test_an_integer_size_off_the_file_is_named_in_mm2():
    with pytest.raises(TableRangeError) as e:
        cable_diameter_mm(np.array([5, 240]))
    assert str(e.value).startswith("no typical single-core cable geometry for size(s) [5.0] mm²")


def _x_squared(r_ohm_km, f_hz, k):
    """IEC 60287-1-1 2.1.2: x² = 8πf / R' · 10⁻⁷ · k, R' in Ω/m."""
    return 8.0 * np.pi * f_hz / (r_ohm_km * 1e-3) * 1e-7 * k


def test_every_invalid_argument_in_one_message():
    # up to five distinct bad values are shown, in ascending order; inf is not finite
    r = np.array([-6.0, -5.0, -4.0, -3.0, -2.0, -1.0])
    with pytest.raises(InputError) as e:
        skin_effect_factor(r, np.inf, -1.0)
    assert str(e.value) == (
        "r_dc_ohm_km must be positive and finite [ohm/km]; got [-6.0, -5.0, -4.0, -3.0, -2.0]; "
        "frequency_hz must be zero (d.c.) or positive and finite [Hz]; got [inf]; "
        "ks must be non-negative and finite; got [-1.0]"
    )
    with pytest.raises(InputError) as e:
        skin_effect_factor([0.1], 50.0, np.inf)
    assert str(e.value) == "ks must be non-negative and finite; got [inf]"
    with pytest.raises(InputError) as e:
        proximity_effect_factor([0.0, np.inf], -50.0, [0.0, np.inf], 30.0, [-1.0, np.inf], 1)
    assert str(e.value) == (
        "r_dc_ohm_km must be positive and finite [ohm/km]; got [0.0, inf]; "
        "frequency_hz must be zero (d.c.) or positive and finite [Hz]; got [-50.0]; "
        "dc_mm must be positive and finite [mm]; got [0.0, inf]; "
        "s_mm must be at least the conductor diameter dc_mm (inf: no neighbour) [mm]; got [30.0]; "
        "kp must be non-negative and finite; got [-1.0, inf]; "
        "conductors must be 2 or 3; got [1.0]"
    )
    with pytest.raises(InputError) as e:
        proximity_effect_factor([0.1], np.inf, 10.0, 20.0, 1.0)
    assert str(e.value) == (
        "frequency_hz must be zero (d.c.) or positive and finite [Hz]; got [inf]"
    )


def test_limiting_arguments_are_valid():
    r = 0.0601 * 1.2751  # 300 mm² Cu at 90 °C
    # k_s = k_p = 0: no skin and no proximity effect
    assert skin_effect_factor([r], 50.0, 0.0).tolist() == [0.0]
    assert proximity_effect_factor([r], 50.0, 20.43, 28.0, 0.0).tolist() == [0.0]
    # conductors touching with no insulation between them: s = d_c, (d_c/s)² = 1
    f = _x_squared(r, 50.0, 1.0) ** 2 / (192.0 + 0.8 * _x_squared(r, 50.0, 1.0) ** 2)
    expected = f * (0.312 + 1.18 / (f + 0.27))  # IEC 60287-1-1 2.1.4.1 at d_c/s = 1
    assert_allclose(proximity_effect_factor([r], 50.0, 20.43, 20.43, 1.0), [expected])
    # a thin conductor (d_c 0.5 mm) is valid
    assert proximity_effect_factor([r], 50.0, 0.5, 28.0, 1.0)[0] > 0.0


def test_skin_effect_formula_ranges_include_their_upper_ends():
    # IEC 60287-1-1 2.1.2: x_s ≤ 2.8 uses x⁴/(192 + 0.8 x⁴); 2.8 < x_s ≤ 3.8 the quadratic
    r28 = 8 * np.pi * 50.0 * 1e-7 / 2.8**2 * 1e3  # x_s = 2.8 exactly in floats
    assert np.sqrt(_x_squared(r28, 50.0, 1.0)) == 2.8
    assert_allclose(skin_effect_factor([r28], 50.0, 1.0), [2.8**4 / (192.0 + 0.8 * 2.8**4)])
    r38 = np.nextafter(8 * np.pi * 50.0 * 1e-7 / 3.8**2 * 1e3, 1.0)  # x_s = 3.8 exactly
    assert np.sqrt(_x_squared(r38, 50.0, 1.0)) == 3.8
    assert_allclose(skin_effect_factor([r38], 50.0, 1.0), [-0.136 - 0.0177 * 3.8 + 0.0563 * 3.8**2])


def test_proximity_formula_up_to_its_range_end():
    # valid for x_p ≤ 2.8 (IEC 60287-1-1 2.1.3/2.1.4.1): x_p = 2.6 is computed, no refusal
    r26 = 8 * np.pi * 50.0 * 1e-7 / 2.6**2 * 1e3
    assert proximity_effect_factor([r26], 50.0, 40.0, 50.0, 1.0)[0] > 0.0
    # at x_p = 2.8 itself (k_p one unit in the last place below 1 makes x_p² = 2.8² exactly)
    r28 = 8 * np.pi * 50.0 * 1e-7 / 2.8**2 * 1e3
    kp = 1.0
    while _x_squared(r28, 50.0, kp) > 2.8**2:
        kp = np.nextafter(kp, 0.0)
    assert _x_squared(r28, 50.0, kp) == 2.8**2
    assert proximity_effect_factor([r28], 50.0, 40.0, 50.0, kp)[0] > 0.0
    with pytest.raises(TableRangeError) as e:
        proximity_effect_factor([0.012], 50.0, 42.0, 60.0, 1.0)
    assert str(e.value) == (
        "IEC 60287-1-1 proximity-effect formula is valid for x_p <= 2.8 and states no extension; "
        "got x_p = 3.236 at R' = 0.012 ohm/km, f = 50 Hz, k_p = 1 (1 value(s) off)"
    )


def test_rule_set_result_has_the_shape_of_all_arguments():
    rs = get_rules("iec")
    # d.c. or 0 Hz: exactly 1 in the broadcast shape, even for a size without geometry data
    assert rs.ac_resistance_factor(np.array([95.0, 240.0]), "Cu", 0.2, 0.0, 3).tolist() == [
        1.0,
        1.0,
    ]
    assert rs.ac_resistance_factor(np.array([800.0]), "Cu", [0.03], 50.0, 0).tolist() == [1.0]
    # one size at three conductor temperatures (three resistances)
    r = 0.0601 * np.array([1.0, 1.2, 1.2751])
    assert rs.ac_resistance_factor(300.0, "Cu", r, 50.0, 3).shape == (3,)
    # sizes × phases: [S] and [3, 1] give [3, S]
    sizes = np.array([95.0, 240.0])
    got = rs.ac_resistance_factor(sizes, "Cu", np.array([0.25, 0.1]), 50.0, [[0], [1], [3]])
    assert got.shape == (3, 2) and got[0].tolist() == [1.0, 1.0]
    # at 1 Hz the effects are tiny but present: not cut off above some frequency
    f1 = rs.ac_resistance_factor(300.0, "Cu", 0.0601 * 1.2751, 1.0, 3)
    assert 1.0 < f1 < 1.0001
