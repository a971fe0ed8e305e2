"""A circuit exactly on a limit passes: a voltage drop equal to its budget (IEC 60364-5-52:2009
Annex G gives the drop; the budget is the designer's), and a capacity equal to the design
current (IEC 60364-4-43:2008 433.1: Ib ≤ Iz). The engine compares with a tolerance of 1e-9
(absolute in %, relative in A) so that values equal up to rounding count as equal; the tests
put the circuit exactly on that tolerance, where "≤" and "<" part.
"""

import numpy as np

from calc import DesignParams, size_circuits

from .test_engine_input_edges import _input


def _solve(f, target, x):
    """The float x (searched one ulp at a time from ``x``) with f(x) == target exactly."""
    for _ in range(200):
        y = f(x)
        if y == target:
            return x
        x = np.nextafter(x, np.inf if y < target else -np.inf)
    raise AssertionError("no float hits the target")


def test_a_string_whose_drop_is_exactly_its_budget_keeps_the_smallest_size():
    # A lone string of 200 m: with a loose budget the smallest PV size (4 mm²) is taken.
    inp = _input(kind=[0], cable_m=[200.0])
    loose = size_circuits(inp, DesignParams(drop_string_pct=50.0, drop_dc_total_pct=50.0))
    assert loose.size_mm2.tolist() == [4.0]
    drop = float(loose.vdrop_pct[0])
    # the budget b with b + 1e-9 == that drop: the drop is on the budget (string and total)
    b = _solve(lambda x: x + 1e-9, drop, drop - 1e-9)
    res = size_circuits(inp, DesignParams(drop_string_pct=b, drop_dc_total_pct=b))
    assert res.size_mm2.tolist() == [4.0]
    assert res.ok.tolist() == [True]
    assert res.vdrop_pct.tolist() == [drop]


def test_a_string_whose_design_current_is_exactly_the_capacity_keeps_the_smallest_size():
    # A lone string with a string fuse fixed by its combiner: its cable must carry
    # max(In, 1.25 · I_SC) = In (IEC 62548:2016, from memory). I_SC 20 A, module maximum fuse
    # 50 A: In may be 30 .. 48 A. The In that equals the 4 mm² capacity (within 1e-9) keeps 4 mm².
    first = size_circuits(_input(kind=[0], isc_a=[20.0], imp_a=[18.0], max_fuse_a=[50.0]))
    assert first.size_mm2.tolist() == [4.0]
    iz = float(first.ampacity_a[0])
    assert 30.0 <= iz <= 48.0
    fuse = _solve(lambda x: x * (1.0 - 1e-9), iz, iz / (1.0 - 1e-9))
    inp = _input(kind=[0], isc_a=[20.0], imp_a=[18.0], max_fuse_a=[50.0], fuse_a=[fuse])
    res = size_circuits(inp)
    assert res.design_current_a.tolist() == [fuse]
    assert res.ampacity_a.tolist() == [iz]
    assert res.size_mm2.tolist() == [4.0]
    assert res.ok.tolist() == [True]


def test_a_size_exactly_at_the_short_circuit_minimum_is_allowed():
    # IEC 60364-4-43:2008 434.5.2: S ≥ I · √t / k, k = 143 for XLPE-insulated copper (Table 43A,
    # from memory). With t = 1 s the fault current whose minimum is 95 mm² (within the 1e-9
    # tolerance) is about 95 · 143 / 1000 = 13.585 kA; 95 mm² is then allowed, not 120 mm².
    # The a.c. circuit itself (10 kVA at 400 V, 14.4 A) needs far less.
    fault_ka = _solve(
        lambda x: (x * 1e3 * np.sqrt(1.0) / 143.0) * (1.0 - 1e-9), 95.0, 13.585 / (1.0 - 1e-9)
    )
    assert abs(fault_ka - 13.585) < 1e-6
    res = size_circuits(
        _input(kind=[2], ac_kva=[10.0]), DesignParams(fault_ka=fault_ka, clear_s=1.0)
    )
    assert res.size_mm2.tolist() == [95.0]
    assert res.ok.tolist() == [True]
