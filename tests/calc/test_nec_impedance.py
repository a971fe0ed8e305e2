"""NEC 2023 Chapter 9 Table 8 (d.c. resistance) and Table 9 (a.c. resistance, reactance, Z).

Published values in Ω per 1000 ft (confirmed, sources in the data files' seen_in columns);
calc returns Ω/km, so each check divides by 0.3048.
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.nec.impedance import (
    ac_resistance_ohm_km,
    dc_resistance_ohm_km,
    effective_z_ohm_km,
    reactance_ohm_km,
)
from calc.nec.sizes import size_from_label

FT = 0.3048
SIZES = ["14 AWG", "12 AWG", "10 AWG", "8 AWG", "6 AWG", "4 AWG", "3 AWG", "2 AWG", "1 AWG",
         "1/0 AWG", "2/0 AWG", "3/0 AWG", "4/0 AWG", "250 kcmil", "300 kcmil", "350 kcmil",
         "400 kcmil", "500 kcmil", "600 kcmil", "700 kcmil", "750 kcmil", "800 kcmil",
         "900 kcmil", "1000 kcmil"]  # fmt: skip
# NEC 2023 Chapter 9 Table 8, stranded conductors, d.c. resistance at 75 °C [Ω/kft] (confirmed)
T8_CU = [3.14, 1.98, 1.24, 0.778, 0.491, 0.308, 0.245, 0.194, 0.154, 0.122, 0.0967, 0.0766,
         0.0608, 0.0515, 0.0429, 0.0367, 0.0321, 0.0258, 0.0214, 0.0184, 0.0171, 0.0161, 0.0143,
         0.0129]  # fmt: skip
T8_CU_COATED = [3.26, 2.05, 1.29, 0.809, 0.510, 0.321, 0.254, 0.201, 0.160, 0.127, 0.101, 0.0797,
                0.0626, 0.0535, 0.0446, 0.0382, 0.0331, 0.0265, 0.0223, 0.0189, 0.0176, 0.0166,
                0.0147, 0.0132]  # fmt: skip
T8_AL = [5.17, 3.25, 2.04, 1.28, 0.808, 0.508, 0.403, 0.319, 0.253, 0.201, 0.159, 0.126, 0.100,
         0.0847, 0.0707, 0.0605, 0.0529, 0.0424, 0.0353, 0.0303, 0.0282, 0.0265, 0.0235,
         0.0212]  # fmt: skip


@pytest.mark.parametrize(
    "material,coated,want", [("Cu", False, T8_CU), ("Cu", True, T8_CU_COATED), ("Al", False, T8_AL)]
)
def test_table8_every_stranded_value_at_75_c(material, coated, want):
    got = dc_resistance_ohm_km(size_from_label(SIZES), material, 75.0, coated) * FT
    assert_allclose(got, want, rtol=1e-12)


def test_table8_stranded_not_solid_trap():
    # solid 14–8 AWG Cu is 3.07 / 1.93 / 1.21 / 0.764 Ω/kft; calc uses the stranded column
    got = dc_resistance_ohm_km(size_from_label(SIZES[:4]), "Cu") * FT
    assert_allclose(got, [3.14, 1.98, 1.24, 0.778])


def test_table8_temperature_note_by_hand():
    # Table 8 note: R2 = R1 [1 + α (T2 − 75)], α = 0.00323 Cu, 0.00330 Al
    s = size_from_label(["10 AWG", "4/0 AWG"])
    assert_allclose(
        dc_resistance_ohm_km(s, "Cu", 20.0) * FT, [1.24, 0.0608] * np.array(1 + 0.00323 * -55)
    )
    assert_allclose(
        dc_resistance_ohm_km(s, "Al", 90.0) * FT, [2.04, 0.100] * np.array(1 + 0.00330 * 15)
    )


def test_table8_against_annealed_copper_and_aluminium_resistivity():
    # derived cross-check: ρ75 = R75 · A lies 0–5 % above the solid-metal value (stranding lay
    # adds length); IEC 60287-1-1 Table 1: Cu ρ20 1.7241e-8 Ω·m, α20 3.93e-3; Al 2.8264e-8,
    # 4.03e-3 (Al resistivity from memory)
    s = size_from_label(SIZES)
    for material, rho20, a20 in (("Cu", 1.7241e-8, 3.93e-3), ("Al", 2.8264e-8, 4.03e-3)):
        rho75 = dc_resistance_ohm_km(s, material) / 1000 * s * 1e-6  # Ω/m · m²
        ratio = rho75 / (rho20 * (1 + a20 * 55))
        assert np.all((ratio > 0.995) & (ratio < 1.05)), (material, ratio)


def test_table9_cells_and_gaps():
    # NEC 2023 Chapter 9 Table 9 [Ω/kft] (confirmed): 250 kcmil Cu: R 0.052 PVC, 0.057 Al,
    # 0.054 steel; X_L 0.041 PVC/Al, 0.052 steel; 1000 kcmil Al in steel 0.025; no Al 14 AWG
    s = size_from_label(["250 kcmil"])
    r = [ac_resistance_ohm_km(s, "Cu", c)[0] * FT for c in ("pvc", "al", "steel")]
    assert_allclose(r, [0.052, 0.057, 0.054])
    assert_allclose(
        [reactance_ohm_km(s, c)[0] * FT for c in ("pvc", "al", "steel")], [0.041, 0.041, 0.052]
    )
    assert ac_resistance_ohm_km(size_from_label(["1000 kcmil"]), "Al", "steel")[0] * FT == (
        pytest.approx(0.025)
    )
    assert np.isnan(ac_resistance_ohm_km(size_from_label(["14 AWG"]), "Al", "pvc")[0])
    assert np.isnan(reactance_ohm_km(size_from_label(["700 kcmil"]), "pvc")[0])  # no row


def test_table9_ac_resistance_is_not_below_table8_dc_for_large_sizes():
    # skin effect: from 4/0 AWG up, Table 9 R_ac ≥ Table 8 R_dc (both at 75 °C)
    big = size_from_label(["4/0 AWG", "250 kcmil", "500 kcmil", "750 kcmil", "1000 kcmil"])
    for m in ("Cu", "Al"):
        assert np.all(ac_resistance_ohm_km(big, m, "pvc") >= dc_resistance_ohm_km(big, m) * 0.99)


def test_effective_z_table9_note_2_by_hand():
    # Z = R cos θ + X sin θ: 250 kcmil Cu in steel conduit at PF 0.85:
    # 0.054 × 0.85 + 0.052 × √(1 − 0.85²) = 0.07329 Ω/kft
    s = size_from_label(["250 kcmil"])
    z = effective_z_ohm_km(
        ac_resistance_ohm_km(s, "Cu", "steel"), reactance_ohm_km(s, "steel"), 0.85
    )
    assert z[0] * FT == pytest.approx(0.054 * 0.85 + 0.052 * math.sqrt(1 - 0.85**2))
    # unity power factor: Z = R
    assert effective_z_ohm_km(0.2, 0.1, 1.0) == pytest.approx(0.2)
    with pytest.raises(InputError):
        effective_z_ohm_km(0.2, 0.1, 0.0)


def test_coated_aluminium_is_refused():
    with pytest.raises(InputError, match="coated"):
        dc_resistance_ohm_km(size_from_label(["10 AWG"]), "Al", coated=True)
