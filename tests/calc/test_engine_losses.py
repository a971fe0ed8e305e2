"""Operating currents, conductor temperatures, losses and marking through the engine.

Recomputed by hand: R20 from IEC 60228:2004 Tables 2/3, R(θ) = R20 (1 + 0.00393 (θ − 20))
(IEC 60287-1-1, Cu), the a.c. resistance ratio from an independent reading of IEC 60287-1-1
(tests/iec60287.py), Joule's law P = n I² R L, the equivalent loss hours E = P · h, capacities
from IEC 60364-5-52:2009 Table B.52.12 (method F, from memory) × Table B.52.14 (0.91 at 40 °C),
colours from IEC 60445:2017 (a.c., from memory) and common practice (d.c.). Site invented.
"""

import warnings

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits
from tests.iec60287 import ac_over_dc


def _plant():
    """Array 0 (two strings, 400 m), strings 1 and 2 (100 m), a.c. circuit 3 (250 kVA, 10 m)."""
    return SizingInput(
        kind=np.array([1, 0, 0, 2], dtype=np.int8),
        cable_m=np.array([400.0, 100.0, 100.0, 10.0]),
        air_m=np.array([400.0, 100.0, 100.0, 10.0]),
        parent=np.array([-1, 0, 0, -1]),
        isc_a=np.array([13.0, 13.0, 13.0, np.nan]),
        imp_a=np.array([12.0, 12.0, 12.0, np.nan]),
        vmp_v=np.array([1000.0, 1000.0, 1000.0, np.nan]),
        n_strings=np.array([2, 1, 1, 1]),
        ac_kva=np.array([np.nan, np.nan, np.nan, 250.0]),
        ac_v=np.array([np.nan, np.nan, np.nan, 800.0]),
    )


def _r_km(r20, theta):
    return r20 * (1 + 0.00393 * (theta - 20.0))


def test_losses_of_each_kind_and_their_totals():
    r = size_circuits(_plant(), DesignParams(loss_hours_h=2000.0))
    # sizes: array 35 mm² (25 mm² gives 1.78 % > 2 − 0.65 %), strings 10 mm², a.c. 70 mm²
    assert r.size_mm2.tolist() == [35.0, 10.0, 10.0, 70.0] and r.ok.all()
    ib = 250e3 / (np.sqrt(3) * 800.0)
    assert_allclose(r.operating_current_a, [24.0, 12.0, 12.0, ib])
    assert r.conductor_temp_c.tolist() == [90.0, 120.0, 120.0, 90.0]
    r_arr = _r_km(0.524, 90.0)  # Ω/km
    r_str = _r_km(1.95, 120.0)  # class 5 tinned, PV cable at 120 °C
    r_ac = _r_km(0.268, 90.0) * float(ac_over_dc(_r_km(0.268, 90.0) / 1e3, 70.0, "Cu"))
    loss = np.array(
        [
            2 * 24.0**2 * r_arr * 0.4,
            2 * 12.0**2 * r_str * 0.1,
            2 * 12.0**2 * r_str * 0.1,
            3 * ib**2 * r_ac * 0.01,
        ]
    )
    power = np.array([24e3, 12e3, 12e3, 250e3 * 0.9])  # Vmp · I; S · cos φ
    assert_allclose(r.loss_w, loss, rtol=1e-9)
    assert_allclose(r.loss_pct, 100 * loss / power, rtol=1e-9)
    assert_allclose(r.energy_loss_kwh, loss * 2000.0 / 1000.0, rtol=1e-9)
    # string, array, a.c., sub-array (none here: 0 W of 0 W, reported as 0 %)
    per_kind = np.array([loss[1] + loss[2], loss[0], loss[3], 0.0])
    assert_allclose(r.total_loss_w, per_kind, rtol=1e-9)
    assert_allclose(r.total_loss_pct[:3], 100 * per_kind[:3] / [24e3, 24e3, 225e3], rtol=1e-9)
    assert r.total_loss_pct[3] == 0.0
    assert_allclose(r.total_energy_loss_kwh, per_kind * 2.0, rtol=1e-9)


def test_loading_mode_conductor_temperature():
    # θ = θamb + (θmax − θamb)(I/Iz)²: a.c. 90 °C XLPE in 40 °C air, I 180.4 A, Iz 268 × 0.91
    r = size_circuits(_plant(), DesignParams(conductor_temp="loading"))
    ib = 250e3 / (np.sqrt(3) * 800.0)
    theta = 40.0 + (90.0 - 40.0) * (ib / (268.0 * 0.91)) ** 2
    assert r.size_mm2[3] == 70.0
    assert_allclose(r.conductor_temp_c[3], theta)
    r_dc = _r_km(0.268, theta) / 1e3
    r_ac = r_dc * float(ac_over_dc(r_dc, 70.0, "Cu"))
    assert_allclose(r.loss_w[3], 3 * ib**2 * r_ac * 10.0, rtol=1e-9)


def test_kind_with_no_power_has_no_loss_percentage():
    # only strings: the array, a.c. and sub-array totals are 0 W of 0 W, reported as 0 %
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([50.0]),
        air_m=np.array([50.0]),
        isc_a=np.array([13.0]),
        imp_a=np.array([12.0]),
        vmp_v=np.array([1000.0]),
    )
    r = size_circuits(inp)
    assert r.total_loss_w[1:].tolist() == [0.0, 0.0, 0.0]
    assert r.total_loss_pct[1:].tolist() == [0.0, 0.0, 0.0]
    assert r.total_loss_pct[0] > 0.0


def test_marking_of_each_circuit():
    r = size_circuits(_plant())
    dc = "L+ red, L- white"  # IEC 60445:2021 6.2.4
    assert r.marking.tolist() == [
        dc,
        dc,
        dc,
        "L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow",
    ]


def test_loading_mode_in_the_ground_and_behind_the_modules():
    # buried: θamb is the ground temperature (20 °C); a string in air behind the modules:
    # the row temperature (70 °C), PV cable rated at 120 °C (EN 50618 Table A.3 basis)
    inp = SizingInput(
        kind=np.array([2, 0], dtype=np.int8),
        cable_m=np.array([10.0, 30.0]),
        air_m=np.array([0.0, 30.0]),
        isc_a=np.array([np.nan, 13.0]),
        imp_a=np.array([np.nan, 12.0]),
        vmp_v=np.array([np.nan, 1000.0]),
        ac_kva=np.array([50.0, np.nan]),
        ac_v=np.array([400.0, np.nan]),
        seg_depth_m=np.array([0.7]),
        seg_laying=np.array([0]),
        seg_spacing_m=np.array([0.0]),
        seg_soil_k_m_w=np.array([2.5]),
        seg_count=np.array([1]),
        inc_circuit=np.array([0]),
        inc_segment=np.array([0]),
    )
    r = size_circuits(inp, DesignParams(conductor_temp="loading", row_air_temp_c=70.0))
    ib = 50e3 / (np.sqrt(3) * 400.0)
    # a.c.: 16 mm² B.52.5 D2 XLPE 3 loaded 84 A at reference conditions (memory)
    assert r.size_mm2[0] == 16.0 and r.governing_env[0] == "D2"
    assert_allclose(r.conductor_temp_c[0], 20.0 + 70.0 * (ib / 84.0) ** 2)
    # string: 4 mm² pair 44 A × 0.91 (Table A.4, 70 °C), I = 12 A
    assert r.size_mm2[1] == 4.0
    assert_allclose(r.conductor_temp_c[1], 70.0 + 50.0 * (12.0 / (44.0 * 0.91)) ** 2)


def test_aluminium_feeder_resistance():
    # IEC 60287-1-1 Table 1: α20 Al 4.03e-3; 50 mm² Al class 2, R20 0.641 Ω/km (IEC 60228
    # Table 2), at 90 °C; one set (drop limits raised so that it passes)
    design = DesignParams(
        material_array="Al", sizes_array_mm2=(50.0,), drop_array_pct=5.0, drop_dc_total_pct=6.0
    )
    r = size_circuits(_plant(), design)
    assert r.material[0] == "Al" and r.size_mm2[0] == 50.0 and r.parallel[0] == 1
    r_al = 0.641 * (1 + 0.00403 * 70.0)
    assert_allclose(r.vdrop_v[0], 2 * 0.4 * 24.0 * r_al)


def test_single_phase_drop():
    # 1-phase: ΔU = 2 · L · I · (R cos φ + X sin φ), X = 0.180 mV/A/m / 2 (BS 7671 Table 4E1B,
    # 35 mm², two cables touching); 20 kVA at 230 V, 87.0 A -> IEC 60947-2 In 100 A, 35 mm²
    # method F two loaded 200 A × 0.91
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([20.0]),
        air_m=np.array([20.0]),
        ac_kva=np.array([20.0]),
        ac_v=np.array([230.0]),
        phases=np.array([1]),
        pf=np.array([0.8]),
    )
    r = size_circuits(inp, DesignParams(drop_ac_pct=3.0, sizes_ac_mm2=(35.0,)))
    i = 20e3 / 230.0
    r_dc = 0.524 * 1.2751 / 1e3
    r_ac = r_dc * float(ac_over_dc(r_dc, 35.0, "Cu", phases=1))
    x = 0.180 / 2 / 1e3
    assert_allclose(r.vdrop_v, [2 * 20.0 * i * (r_ac * 0.8 + x * 0.6)], rtol=1e-6)
    assert_allclose(r.ampacity_a, [200.0 * 0.91])


def test_result_arrays_and_their_types():
    # numbers are float arrays (nan where a value does not apply), counts and indices integers
    r = size_circuits(_plant())
    ib = 250e3 / (np.sqrt(3) * 800.0)
    assert_allclose(r.ac_ib_a, [np.nan, np.nan, np.nan, ib])
    assert_allclose(r.ac_breaker_a, [np.nan, np.nan, np.nan, 200.0])
    for name in (
        "size_mm2",
        "derating",
        "ampacity_a",
        "conductor_temp_c",
        "sc_min_mm2",
        "ac_ib_a",
        "design_current_a",
        "vdrop_pct",
    ):
        assert getattr(r, name).dtype.kind == "f", name
    for name in ("parallel", "governing_segment", "governing_air"):
        assert getattr(r, name).dtype.kind == "i", name


def test_totals_with_absent_kinds_and_tiny_powers():
    # no array, sub-array or a.c. circuit: their totals are 0 W and 0 %, without a numpy warning; a
    # string of 0.5 W (0.5 mA at 1000 V) still has its loss percentage
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([50.0]),
        air_m=np.array([50.0]),
        isc_a=np.array([0.001]),
        imp_a=np.array([0.0005]),
        vmp_v=np.array([1000.0]),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        r = size_circuits(inp)
    assert r.total_loss_pct[1:].tolist() == [0.0, 0.0, 0.0]
    loss = 2 * 0.0005**2 * _r_km(5.09, 120.0) * 0.05
    assert_allclose(r.total_loss_pct[0], 100 * loss / 0.5)


def test_marking_conventions_and_single_phase():
    # IEC 60445:2017 single-phase L brown, N blue (from memory); NEC 200.6 / 250.119 with the
    # common-practice phase colours: brown/orange/yellow above 250 V, black/red/blue at or below
    inp = SizingInput(
        kind=np.array([2, 2, 2], dtype=np.int8),
        cable_m=np.full(3, 10.0),
        air_m=np.full(3, 10.0),
        ac_kva=np.array([5.0, 100.0, 50.0]),
        ac_v=np.array([230.0, 480.0, 208.0]),
        phases=np.array([1, 3, 3]),
    )
    r = size_circuits(inp)
    assert r.marking[0] == "L brown, N blue, PE green-and-yellow"
    assert r.rules == "iec"
    r = size_circuits(inp, DesignParams(marking="us"))
    assert r.marking[1].startswith("L1 brown") and r.marking[2].startswith("L1 black")
    assert all("N white or gray" in m for m in r.marking)


def test_values_that_do_not_apply_are_nan_or_empty():
    r = size_circuits(_plant())
    assert_allclose(r.backfeed_a, [0.0, np.nan, np.nan, np.nan])
    assert_allclose(r.isc_design_a, [26.0, 13.0, 13.0, np.nan])
    assert_allclose(r.array_fuse_a, [np.nan] * 4)
    assert_allclose(r.fuse_a, [np.nan] * 4)
    # no trench segments: no per-segment values
    assert r.seg_group_factor.tolist() == [] and r.seg_count_final.tolist() == []
    assert r.seg_soil_factor.tolist() == [] and r.seg_depth_factor.tolist() == []
