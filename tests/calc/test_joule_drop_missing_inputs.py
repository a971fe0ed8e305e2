"""Missing values (None) in every numeric argument of the Joule loss, the voltage drop and the
conductor temperature: calc reads numeric arguments as float, so a ``None`` from a user's table
is nan (not known) and only that circuit's result is nan — never a TypeError, and the other
circuits keep their hand-calculated values.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.losses import loss_w
from calc.vdrop import conductor_temp_c, vdrop_v

# An invented d.c. circuit: 20 A over 250 m of a conductor of 1.91 Ω/km (IEC 60228:2004 Table 3,
# 10 mm² class 5 plain copper, from memory), one conductor per pole.
DC = {"current_a": 20.0, "cable_m": 250.0, "r_ohm_km": 1.91, "parallel": 1}

# Joule's law, d.c. loop of n = 2 conductors (hand calculation):
# P = 2 · 20² · 1.91 Ω/km · 0.250 km / 1 = 382 W
LOSS_W = 382.0


@pytest.mark.parametrize("missing", ["current_a", "cable_m", "r_ohm_km", "parallel"])
def test_joule_loss_with_a_missing_value_is_unknown_for_that_circuit_only(missing):
    args = {k: [v, v] for k, v in DC.items()}
    args[missing] = [DC[missing], None]
    got = loss_w(
        args["current_a"], args["cable_m"], args["r_ohm_km"], phases=0, parallel=args["parallel"]
    )
    assert_allclose(got[0], LOSS_W, rtol=1e-12)
    assert np.isnan(got[1])


# An invented three-phase circuit: 100 A over 400 m, R = 0.387 Ω/km (IEC 60228:2004 Table 2,
# 50 mm² class 2 copper, from memory), X = 0.08 Ω/km, cos φ = 0.8 (sin φ = 0.6), 2 in parallel.
AC = {
    "cable_m": 400.0,
    "current_a": 100.0,
    "r_ohm_km": 0.387,
    "x_ohm_km": 0.08,
    "pf": 0.8,
    "parallel": 2,
}

# IEC 60364-5-52:2009 Annex G (G.52.2), three-phase, R and X per phase divided by the 2 conductors
# in parallel (hand calculation):
# ΔU = √3 · 0.400 km · 100 A · (0.387 · 0.8 + 0.08 · 0.6) Ω/km / 2
#    = √3 · 40 · (0.3096 + 0.048) / 2 = √3 · 7.152 = 12.38763 V
AC_DROP_V = np.sqrt(3.0) * 40.0 * 0.3576 / 2.0


@pytest.mark.parametrize("missing", list(AC))
def test_three_phase_drop_with_a_missing_value_is_unknown_for_that_circuit_only(missing):
    args = {k: [v, v] for k, v in AC.items()}
    args[missing] = [AC[missing], None]
    got = vdrop_v(
        args["cable_m"],
        args["current_a"],
        args["r_ohm_km"],
        args["x_ohm_km"],
        args["pf"],
        3,
        args["parallel"],
    )
    assert_allclose(got[0], AC_DROP_V, rtol=1e-12)
    assert_allclose(AC_DROP_V, 12.38763, rtol=1e-6)  # the written-out value above
    assert np.isnan(got[1])


def test_dc_drop_ignores_a_missing_reactance_and_power_factor():
    # d.c.: ΔU = 2 · L · I · R; X and cos φ play no part, so a missing one changes nothing:
    # 2 · 0.250 km · 20 A · 1.91 Ω/km = 19.1 V (hand calculation)
    got = vdrop_v(250.0, 20.0, 1.91, [0.08, None], [1.0, None], 0, 1)
    assert_allclose(got, [19.1, 19.1], rtol=1e-12)


@pytest.mark.parametrize("missing", ["ambient_c", "current_a", "ampacity_a"])
def test_loading_temperature_with_a_missing_value_is_unknown_for_that_circuit_only(missing):
    # θ = θamb + (θmax − θamb) · (I / Iz)² (calc.vdrop, common practice estimate):
    # 90 °C insulation, 30 °C ambient, 60 A of 80 A: 30 + 60 · 0.75² = 63.75 °C (hand calculation)
    args = {"ambient_c": [30.0, 30.0], "current_a": [60.0, 60.0], "ampacity_a": [80.0, 80.0]}
    args[missing] = [args[missing][0], None]
    got = conductor_temp_c(
        "loading", [90.0, 90.0], args["ambient_c"], args["current_a"], args["ampacity_a"]
    )
    assert_allclose(got[0], 63.75, rtol=1e-12)
    assert np.isnan(got[1])
