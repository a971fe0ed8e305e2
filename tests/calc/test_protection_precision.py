"""Single-precision (float32) arguments of calc.protection are computed in double precision.

calc converts every numeric argument to float64: a float32 column gives the float64 result of the
same numbers, and the results are float64 arrays, whose elements are Python floats (what the
JSON writer and the workbook take). Reference values are the rules written out by hand.
"""

import numpy as np

from calc.protection import ac_breaker, array_fuse, array_min_capacity_a, breaker_ratings_a

F32 = np.float32


def test_float32_ratings_give_a_float64_breaker_rating():
    # IEC 60947-2 list (R10 from 160 A, memory): Ib 180.42 A -> In 200 A; I2 = 1.30 · In = 260 A
    ratings = breaker_ratings_a("iec60947-2").astype(F32)
    b = ac_breaker([180.42], ratings, 1.30)
    assert b.in_a.tolist() == [200.0] and b.in_a.dtype == np.float64
    assert isinstance(b.in_a[0], float)


def test_float32_array_isc_gives_the_double_precision_fuse_range():
    # IEC 62548:2016 (from memory): 1.25 · I_SC ≤ In ≤ 2.4 · I_SC, I_SC the float32 value nearest
    # 96.1 A (96.09999847412109): lower 120.12499809265137 A, upper 230.63999633789062 A; the
    # smallest gPV rating at or above the lower bound is 125 A
    isc = float(F32(96.1))
    f = array_fuse(np.array([96.1], dtype=F32))
    assert f.lower_a.tolist() == [1.25 * isc] and f.upper_a.tolist() == [2.4 * isc]
    assert f.fuse_a.tolist() == [125.0] and f.ok.tolist() == [True]


def test_float32_ratings_give_a_float64_array_fuse():
    f = array_fuse([96.1], ratings_a=np.array([100.0, 125.0, 160.0], dtype=F32))
    assert f.fuse_a.tolist() == [125.0] and f.fuse_a.dtype == np.float64
    assert isinstance(f.fuse_a[0], float)


def test_float32_array_isc_gives_the_double_precision_capacity():
    # an array alone on its input, no fuse: Iz ≥ 1.25 · I_SC = 1.25 × 96.09999847412109 A
    isc = float(F32(96.1))
    got = array_min_capacity_a(np.array([96.1], dtype=F32), [0.0], [np.nan])
    assert got.tolist() == [1.25 * isc]
