"""Voltage drop (Ohm's law, R by IEC 60287-1-1 at conductor temperature)."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.engine import DesignParams, SizingInput, size_circuits
from calc.errors import UnknownOptionError
from calc.resistance import r20_ohm_km, r_at_temp_ohm_km
from calc.vdrop import conductor_temp_c, vdrop_pct, vdrop_v


def test_zero_length_zero_drop_and_doubles_with_length():
    d = vdrop_v([0.0, 50.0, 100.0], 20.0, 1.83, 0.08, 0.9, 3)
    assert d[0] == 0.0  # zero length -> zero drop
    assert_allclose(d[2], 2 * d[1])  # doubles with length


def test_three_phase_unity_pf_is_sqrt3_i_r_l():
    # cos φ = 1: ΔU = √3 · I · R · L, reactance drops out
    assert_allclose(vdrop_v(200.0, 150.0, 0.2, 0.08, 1.0, 3), np.sqrt(3) * 150 * 0.2e-3 * 200)


def test_dc_and_single_phase_loop():
    assert_allclose(vdrop_v(100.0, 10.0, 5.0), 2 * 100 * 10 * 5e-3)  # d.c.: 2·L·I·R
    # 1-phase: 2·L·I·(R cos φ + X sin φ)
    assert_allclose(vdrop_v(100.0, 10.0, 1.0, 0.1, 0.8, 1), 2 * 0.1 * 10 * (0.8 + 0.1 * 0.6))
    assert_allclose(vdrop_v(100.0, 10.0, 1.0, 0.1, 1.0, 1, parallel=2), 1.0)


def test_conductor_temperature_modes():
    # "loading": θ = θamb + (θmax − θamb)(I/Iz)²; at I = Iz the rating temperature
    assert_allclose(conductor_temp_c("loading", 90.0, 20.0, [50.0, 100.0], 100.0), [37.5, 90.0])
    assert_allclose(vdrop_pct([5.0], [500.0]), [1.0])


def _one(kind, **kw):
    base = dict(kind=np.array([kind]), cable_m=np.array([100.0]), air_m=np.array([100.0]))
    base.update({k: np.atleast_1d(v) for k, v in kw.items()})
    return SizingInput(**base)


def test_percent_uses_the_right_reference_voltage():
    # frequency 0: the a.c. resistance equals the d.c. one (the skin and proximity effect is
    # checked in tests/calc/test_ac_resistance.py and test_engine.py)
    design = DesignParams(
        drop_ac_pct=100.0,
        drop_string_pct=100.0,
        drop_dc_total_pct=100.0,
        power_factor=1.0,
        frequency_hz=0.0,
    )
    # d.c.: percent of string Vmp
    r = size_circuits(_one(0, isc_a=10.0, imp_a=9.0, vmp_v=800.0), design)
    assert_allclose(r.vdrop_pct, 100 * r.vdrop_v / 800.0)
    # 3-phase: percent of U_LL; 1-phase: percent of U_LN (inverter output voltage)
    r3 = size_circuits(_one(2, ac_kva=100.0, ac_v=400.0, phases=3), design)
    assert_allclose(r3.vdrop_pct, 100 * r3.vdrop_v / 400.0)
    r1 = size_circuits(_one(2, ac_kva=5.0, ac_v=230.0, phases=1), design)
    assert_allclose(r1.vdrop_pct, 100 * r1.vdrop_v / 230.0)
    # drop at the rating temperature ("max", default): XLPE 90 °C, 3-phase √3·I·R·L at cos φ = 1
    i = 100e3 / (np.sqrt(3) * 400.0)
    rr = r_at_temp_ohm_km(r20_ohm_km(r3.size_mm2), 90.0)
    assert_allclose(r3.vdrop_v, np.sqrt(3) * i * rr * 0.1)


def test_dc_total_is_string_plus_array():
    inp = SizingInput(
        kind=np.array([1, 0, 0]),
        cable_m=np.array([200.0, 50.0, 80.0]),
        air_m=np.array([200.0, 50.0, 80.0]),
        parent=np.array([-1, 0, 0]),
        isc_a=np.full(3, 10.0),
        imp_a=np.full(3, 9.5),
        vmp_v=np.full(3, 1000.0),
        n_strings=np.array([2, 1, 1]),
        strings_in_parallel=np.array([1, 2, 2]),
    )
    r = size_circuits(inp)
    assert_allclose(r.vdrop_total_pct[1:], r.vdrop_pct[1:] + r.vdrop_pct[0])
    assert_allclose(r.vdrop_total_pct[0], r.vdrop_pct[0] + r.vdrop_pct[1:].max())
    assert np.all(r.vdrop_total_pct <= 2.0 + 1e-9)  # default dc_total limit
    # array budget: min(array limit, dc_total − its worst string)
    assert_allclose(r.vdrop_limit_pct[0], min(1.5, 2.0 - r.vdrop_pct[1:].max()))


def test_conductor_temperature_limits_and_shapes():
    # "max": the rating temperature for every circuit, in the shape of the currents
    assert conductor_temp_c("max", 90.0, 30.0, [10.0, 20.0, 30.0], 100.0).tolist() == [90.0] * 3
    # "loading": never above the rating temperature, even for I > Iz; no current: ambient
    got = conductor_temp_c("loading", 90.0, 30.0, [0.0, 100.0, 200.0], 100.0)
    assert got.tolist() == [30.0, 90.0, 90.0]
    with pytest.raises(UnknownOptionError) as e:
        conductor_temp_c("hot", 90.0, 30.0, 10.0, 100.0)
    assert str(e.value) == "conductor_temp must be one of 'max', 'loading'; got 'hot'"


def test_power_factor_and_parallel_conductors():
    # cos φ above 1 is taken as 1 (sin φ 0); cos φ 0: the whole reactance, ΔU = √3 L I X
    assert_allclose(vdrop_v(100.0, 10.0, 1.0, 0.5, 1.2, 3), vdrop_v(100.0, 10.0, 1.0, 0.5, 1.0, 3))
    assert_allclose(vdrop_v(1000.0, 10.0, 1.0, 0.5, 0.0, 3), np.sqrt(3) * 1.0 * 10.0 * 0.5)
    assert_allclose(vdrop_v(1000.0, 10.0, 1.0, 0.5, -0.5, 3), np.sqrt(3) * 1.0 * 10.0 * 0.5)
    # d.c. ignores reactance and power factor; p conductors in parallel divide the drop by p
    assert_allclose(vdrop_v(1000.0, 10.0, 1.0, 0.5, 0.0, 0), 2 * 10.0 * 1.0)
    assert_allclose(vdrop_v(1000.0, 10.0, 1.0, 0.5, 0.8, 1, parallel=4), 2 * 10.0 * 1.1 / 4)
    assert_allclose(vdrop_pct([4.0, 1.0], [400.0, 230.0]), [1.0, 100 / 230])


def test_defaults_are_dc_without_reactance():
    # phases 0 (d.c.) by default: X and cos φ do not enter, ΔU = 2 L I R
    assert_allclose(vdrop_v(100.0, 10.0, 1.0, 0.5, 0.8), 2 * 0.1 * 10.0 * 1.0)
    # reactance 0 by default: three-phase at cos φ 0.8 is √3 L I R cos φ
    assert_allclose(vdrop_v(100.0, 10.0, 1.0, pf=0.8, phases=3), np.sqrt(3) * 0.1 * 10.0 * 0.8)
    # integer temperatures give float temperatures
    assert conductor_temp_c("max", 90, 30, [10], 100).dtype.kind == "f"
