"""Array backfeed protection and a.c. breakers through the sizing engine, recomputed by hand.

Sources: IEC 62548:2016 (1.25 · I_SC, the backfeed of the other arrays and the array fuse range
1.25-2.4 · I_SC; from memory), gPV fuse ratings (IEC 60269-6, catalogue practice),
IEC 60364-4-43:2008 433.1, IEC 60364-5-52:2009 Table B.52.12 method F, two loaded XLPE Cu
conductors in free air (values from memory: 25 mm² 161 A, 35 mm² 200 A, 50 mm² 242 A, 70 mm²
310 A, 95 mm² 377 A) and Table B.52.14 (XLPE at 40 °C: 0.91, confirmed). The site is invented.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits

F40 = 0.91  # IEC 60364-5-52:2009 Table B.52.14, XLPE, 40 °C air


def _arrays():
    """Six array cables in air, 50 m: three on input 5, one alone, two on input 8."""
    n = 6
    return SizingInput(
        kind=np.ones(n, dtype=np.int8),
        cable_m=np.full(n, 50.0),
        air_m=np.full(n, 50.0),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.array([10, 10, 10, 10, 8, 8]),
        dc_group=np.array([5, 5, 5, -1, 8, 8]),
    )


def test_array_fuses_where_the_backfeed_exceeds_the_cable():
    r = size_circuits(_arrays())
    # I_SC of an array 10 × 13 = 130 A, own design current 1.25 × 130 = 162.5 A; input 5:
    # backfeed 1.25 × 260 = 325 A; input 8: 8 × 13 = 104 A each, backfeed 1.25 × 104 = 130 A
    assert_allclose(r.isc_design_a, [130.0, 130.0, 130.0, 130.0, 104.0, 104.0])
    assert_allclose(r.backfeed_a, [325.0, 325.0, 325.0, 0.0, 130.0, 130.0])
    # input 5: a fuse in 162.5-312 A, the smallest gPV rating 200 A; the cable needs
    # max(162.5, In 200, I2/1.45 = 200) = 200 A: 50 mm² (242 × 0.91 = 220.2 A; 35 mm² has 182)
    # alone: 162.5 A -> 35 mm²; input 8: carries 130 A itself at 25 mm² (161 × 0.91 = 146.5 A)
    assert r.size_mm2.tolist() == [50.0, 50.0, 50.0, 35.0, 25.0, 25.0]
    assert_allclose(r.ampacity_a, F40 * np.array([242.0, 242.0, 242.0, 200.0, 161.0, 161.0]))
    assert_allclose(r.design_current_a, [200.0, 200.0, 200.0, 162.5, 130.0, 130.0])
    assert_allclose(r.array_fuse_a, [200.0, 200.0, 200.0, np.nan, np.nan, np.nan])
    assert r.protection.tolist() == [
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "array fuse 200 A gPV: backfeed 325 A > Iz 220 A",
        "alone on its inverter input: no backfeed",
        "no array fuse needed: backfeed 130 A ≤ Iz 147 A",
        "no array fuse needed: backfeed 130 A ≤ Iz 147 A",
    ]
    assert r.ok.all() and r.note.tolist() == [""] * 6
    assert (r.governing_env == "air").all() and (r.parallel == 1).all()
    assert_allclose(r.utilisation, r.design_current_a / r.ampacity_a)


def test_without_array_fuses_the_cable_carries_the_backfeed():
    r = size_circuits(_arrays(), DesignParams(array_protection="cable"))
    # input 5: Iz ≥ 325 A -> 95 mm² (377 × 0.91 = 343.1 A; 70 mm² has 282.1 A)
    assert r.size_mm2.tolist() == [95.0, 95.0, 95.0, 35.0, 25.0, 25.0]
    assert_allclose(r.design_current_a, [325.0, 325.0, 325.0, 162.5, 130.0, 130.0])
    assert np.isnan(r.array_fuse_a).all()
    assert r.protection.tolist() == [
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "cable carries backfeed 325 A ≤ Iz 343 A",
        "alone on its inverter input: no backfeed",
        "cable carries backfeed 130 A ≤ Iz 147 A",
        "cable carries backfeed 130 A ≤ Iz 147 A",
    ]
    assert r.ok.all()
