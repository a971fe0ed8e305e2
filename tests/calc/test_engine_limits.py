"""Limits met exactly are met: capacity, backfeed, voltage drop and short-circuit withstand.

Limiting cases built on published values: at 30 °C (IEC 60364-5-52:2009 Table B.52.14
reference, factor 1.00) a 35 mm² XLPE Cu pair in free air carries 200 A (Table B.52.12 method
F, from memory); 1.25 · I_SC (IEC 62548:2016, from memory) of 16 strings of 10 A is 200 A; the
adiabatic minimum S = I √t / k (IEC 60364-4-43:2008 434.5.2, k = 143 for Cu XLPE, Table 43A).
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits

AT_30C = DesignParams(air_temp_c=30.0)


def _arrays(n_strings, dc_group, **changes):
    n = len(n_strings)
    base = dict(
        kind=np.ones(n, dtype=np.int8),
        cable_m=np.full(n, 20.0),
        air_m=np.full(n, 20.0),
        isc_a=np.full(n, 10.0),
        imp_a=np.full(n, 9.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.array(n_strings),
        dc_group=np.array(dc_group),
    )
    base.update(changes)
    return SizingInput(**base)


def test_design_current_equal_to_the_capacity():
    # an array of 16 strings alone: 200 A on 35 mm² at 30 °C, 200 A: exactly enough
    r = size_circuits(_arrays([16], [-1]), AT_30C)
    assert r.size_mm2.tolist() == [35.0] and r.ok.all()
    assert_allclose(r.utilisation, [1.0])


def test_backfeed_equal_to_the_capacity():
    # array 1 (1 string) beside array 0 (16 strings): backfeed 1.25 × 160 = 200 A, carried
    # without a fuse by 35 mm² (200 A); with fuses the same 35 mm² takes the 200 A fuse that
    # array 0 needs (1.25 × 160 = 200 A lower bound, a gPV rating)
    design = DesignParams(air_temp_c=30.0, array_protection="cable")
    r = size_circuits(_arrays([16, 1], [3, 3]), design)
    assert r.size_mm2[1] == 35.0 and r.backfeed_a[1] == 200.0 and r.ok.all()
    assert r.protection[1] == "cable carries backfeed 200 A ≤ Iz 200 A"
    # array 0 (16 strings) needs 200 A; backfeed 12.5 A: 35 mm²
    assert r.size_mm2[0] == 35.0


def test_fuse_rating_equal_to_the_capacity():
    # three arrays of 16 strings on one input: backfeed 400 A each; array fuse 200 A (range
    # 200-384 A), the cable needs max(200, In 200, I2 / 1.45 = 200) = 200 A: 35 mm² exactly
    r = size_circuits(_arrays([16, 16, 16], [1, 1, 1]), AT_30C)
    assert r.size_mm2.tolist() == [35.0] * 3 and r.ok.all()
    assert r.array_fuse_a.tolist() == [200.0] * 3


def test_voltage_drop_equal_to_the_limit():
    # a string, 100 m, 12 A, 1000 V: 10 mm² PV cable at 120 °C gives
    # 100 · 2 · 0.1 · 12 · 1.95 · 1.393 / 1000 = 0.652 %; a limit of exactly that is met
    pct = 100 * 2 * 0.1 * 12.0 * 1.95 * (1 + 0.00393 * 100) / 1000.0
    inp = SizingInput(
        kind=np.array([0], dtype=np.int8),
        cable_m=np.array([100.0]),
        air_m=np.array([100.0]),
        isc_a=np.array([13.0]),
        imp_a=np.array([12.0]),
        vmp_v=np.array([1000.0]),
    )
    r = size_circuits(inp, DesignParams(drop_string_pct=pct))
    assert r.size_mm2.tolist() == [10.0] and r.ok.all()
    assert_allclose(r.vdrop_pct, [pct])


def test_size_equal_to_the_adiabatic_minimum():
    # 13.585 kA for 1 s: S = 13585 / 143 = 95 mm² exactly; 95 mm² passes, 70 mm² does not
    inp = SizingInput(
        kind=np.array([2], dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        ac_kva=np.array([20.0]),
        ac_v=np.array([400.0]),
    )
    design = DesignParams(fault_ka=13.585, clear_s=1.0, sizes_ac_mm2=(70.0, 95.0, 120.0))
    r = size_circuits(inp, design)
    assert r.size_mm2.tolist() == [95.0] and r.ok.all()
    assert_allclose(r.sc_min_mm2, [95.0])
