"""Array cables exactly on a backfeed limit. The engine compares currents with a relative
tolerance of 1e-9 (values equal up to rounding count as equal); these tests put an array cable
exactly on that tolerance, where "≤" and "<" part (as test_engine_on_the_limit does for the
design current, the drop and the short-circuit minimum).

Two arrays on one inverter d.c. input (invented), each alone in a trench segment at the tables'
reference conditions (0.7 m, 2.5 K·m/W, 20 °C ground, no grouping). The cable: 16 mm² Cu XLPE,
two loaded conductors, direct in the ground (method D2): Iz = 100 A (IEC 60364-5-52:2009
Table B.52.3, from memory, as calc's table carries it). The backfeed into a fault on one array
cable is B = 1.25 × I_SC of the other array (IEC 62548:2016, from memory; calc.protection's
``backfeed_a`` is the formula searched below); its own design current is 1.25 × I_SC.
"""

import numpy as np

from calc import DesignParams, SizingInput, size_circuits
from calc.protection import backfeed_a

IZ_16_A = 100.0
DOWN = 1.0 - 1e-9  # "at least, up to rounding"
UP = 1.0 + 1e-9  # "more than, beyond rounding"


def _two_arrays(isc_x, isc_y):
    return SizingInput(
        kind=np.array([1, 1]),
        cable_m=np.array([10.0, 10.0]),
        isc_a=np.array([isc_x, isc_y]),
        imp_a=0.9 * np.array([isc_x, isc_y]),
        vmp_v=np.full(2, 1000.0),
        n_strings=np.ones(2),
        dc_group=np.array([3, 3]),
        seg_depth_m=[0.7, 0.7],
        seg_laying=[0, 0],
        seg_spacing_m=[0.0, 0.0],
        seg_soil_k_m_w=[2.5, 2.5],
        inc_circuit=[0, 1],
        inc_segment=[0, 1],
    )


def _backfeed_on_x(isc_x, isc_y):
    return float(backfeed_a(np.array([isc_x, isc_y]), np.array([3, 3]))[0])


def _other_isc(isc_x, f, target):
    """The float I_SC of the other array (one ulp at a time) with f(B on x) == target exactly,
    or None where rounding steps over the target."""
    y, seen = target / (1.25 * f(1.0)), set()  # f is B times a constant
    for _ in range(300):
        v = f(_backfeed_on_x(isc_x, y))
        if v == target:
            return y
        if (y, v < target) in seen:
            return None
        seen.add((y, v < target))
        y = float(np.nextafter(y, np.inf if v < target else -np.inf))
    return None


def test_an_array_cable_whose_capacity_equals_the_backfeed_carries_it():
    # array_protection "cable": the array cable must carry B itself (Iz ≥ B). Array x of
    # 8 A (design current 10 A) and the other array's I_SC such that B × (1 − 1e-9) = 100 A
    # exactly: 16 mm² carries it; 10 mm² (77 A) does not, 25 mm² is not needed.
    y = _other_isc(8.0, lambda b: b * DOWN, IZ_16_A)
    assert y is not None and abs(y - 80.0) < 1e-6
    r = size_circuits(_two_arrays(8.0, y), DesignParams(array_protection="cable"))
    assert r.backfeed_a[0] * DOWN == IZ_16_A and r.ampacity_a[0] == IZ_16_A
    assert r.size_mm2[0] == 16.0
    assert r.protection[0] == "cable carries backfeed 100 A ≤ Iz 100 A"
    assert r.ok.all()


def test_an_array_fuse_whose_required_capacity_equals_iz_keeps_the_size():
    # array fuses (the default): x's cable cannot carry the other array's B = 1.25 × 200 A
    # = 250 A, so an array fuse In within 1.25 … 2.4 × I_SC protects it and the cable needs
    # Iz ≥ max(1.25 × I_SC, In, I2/1.45) (IEC 62548:2016 from memory; IEC 60364-4-43:2008
    # 433.1). I_SC of x such that 1.25 × I_SC × (1 − 1e-9) = 100 A exactly: In = 100 A gPV (equal
    # to 1.25 × I_SC up to rounding), and the 16 mm² cable's 100 A meets what it needs.
    isc_x = IZ_16_A / 1.25 / DOWN
    for _ in range(300):
        got = (1.25 * isc_x) * DOWN
        if got == IZ_16_A:
            break
        isc_x = float(np.nextafter(isc_x, np.inf if got < IZ_16_A else -np.inf))
    assert (1.25 * isc_x) * DOWN == IZ_16_A
    r = size_circuits(_two_arrays(isc_x, 200.0))
    assert r.ampacity_a[0] == IZ_16_A and r.design_current_a[0] * DOWN == IZ_16_A
    assert r.size_mm2[0] == 16.0 and r.array_fuse_a[0] == 100.0
    assert r.protection[0] == "array fuse 100 A gPV: backfeed 250 A > Iz 100 A"
    assert r.ok.all()


def test_a_backfeed_equal_to_the_design_current_is_not_named_as_what_the_cable_needs():
    # Only 16 mm², one conductor per pole, array_protection "cable": x needs max(1.25 × I_SC,
    # B) and fails. Where B equals 1.25 × I_SC up to rounding (B = 1.25 × I_SC × (1 + 1e-9)
    # exactly), the note gives the design current alone, without naming the backfeed.
    design = DesignParams(array_protection="cable", sizes_array_mm2=(16.0,), max_parallel=1)
    isc_x, y = 100.0, None
    for _ in range(50):  # a float x for which rounding does not step over the target
        y = _other_isc(isc_x, lambda b: b, (1.25 * isc_x) * UP)
        if y is not None:
            break
        isc_x = float(np.nextafter(isc_x, np.inf))
    assert y is not None
    r = size_circuits(_two_arrays(isc_x, y), design)
    assert r.backfeed_a[0] == (1.25 * isc_x) * UP
    assert r.note[0] == "needs 125 A after derating 1.00; largest allowed 16 mm² Cu carries 100 A"
    # a backfeed clearly above (the other array 10 % larger) is named
    r = size_circuits(_two_arrays(100.0, 110.0), design)
    assert r.note[0] == (
        "needs 138 A (backfeed 138 A from its input, with no array fuses) after derating 1.00; "
        "largest allowed 16 mm² Cu carries 100 A"
    )
