"""Second pass of the sizing: a string re-sized because of another circuit's extra parallel set,
and the feeders above it re-sized for the voltage-drop budget the string then leaves.

Hand calculation (sources: EN 50618:2014 Tables A.3/A.4, 4 mm² pair on a surface 44 A, 6 mm²
57 A, 0.91 at 70 °C, from memory; IEC 60364-5-52:2009 Table B.52.17 item 1, 16 circuits 0.41,
17-20 circuits 0.38, confirmed, and Table B.52.14 XLPE at 40 °C 0.91; IEC 60228:2004 R20:
class 5 tinned 4 mm² 5.09, 6 mm² 3.39 Ω/km, class 2 Cu 16 mm² 1.15, 25 mm² 0.727 Ω/km;
R at temperature with α20 = 3.93e-3 (IEC 60287-1-1); IEC 62548:2016 design current 1.25 · Isc,
from memory). Site invented.

The string (Isc 13 A, Imp 12 A, 1000 V, 50 m) shares a row run behind the modules, counted 16
circuits by routing, with an a.c. circuit (Ib 300 A -> In 315 A, IEC 60947-2). One set of
300 mm² there gives 703 A × 0.91 × 0.41 = 262 A < 315 A: the a.c. circuit takes two sets, the
run then holds 17 circuits (factor 0.38).

* first pass, 16 circuits: 4 mm², 44 × 0.91 × 0.41 = 16.42 A ≥ 16.25 A; drop
  2 · 50 m · 12 A · 5.09 · 1.393 Ω/km (120 °C) = 8.508 V = 0.851 %
* second pass, 17 circuits: 4 mm² 44 × 0.91 × 0.38 = 15.22 A < 16.25 A -> 6 mm²,
  57 × 0.91 × 0.38 = 19.71 A; drop 2 · 0.05 · 12 · 3.39 · 1.393 = 5.667 V = 0.567 %
* sub-array, 10 m, 16 mm² (90 °C: 1.15 · 1.2751 = 1.4664 Ω/km): 0.352 V = 0.035 %
* array, 370 m: 16 mm² gives 2 · 0.37 · 12 · 1.4664 = 13.02 V = 1.302 %; its budget is
  2 % less the worst path below it: first 2 − 0.035 − 0.851 = 1.114 % (25 mm² needed,
  0.727 · 1.2751 Ω/km: 0.823 %), then 2 − 0.035 − 0.567 = 1.398 %: 16 mm² suffices.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits

_ARRAY, _SUB, _STRING, _AC = "array", "sub", "string", "ac"
_ROWS = {  # kind, cable_m
    _ARRAY: (1, 370.0),
    _SUB: (3, 10.0),
    _STRING: (0, 50.0),
    _AC: (2, 10.0),
}


def _site(order):
    """The four circuits in the given order (names of ``_ROWS``)."""
    pos = {name: i for i, name in enumerate(order)}
    kind = np.array([_ROWS[name][0] for name in order], dtype=np.int8)
    dc = kind != 2
    parent = np.full(4, -1)
    parent[pos[_SUB]] = pos[_ARRAY]
    parent[pos[_STRING]] = pos[_SUB]
    return SizingInput(
        kind=kind,
        cable_m=np.array([_ROWS[name][1] for name in order]),
        air_m=np.full(4, 10.0),
        parent=parent,
        isc_a=np.where(dc, 13.0, np.nan),
        imp_a=np.where(dc, 12.0, np.nan),
        vmp_v=np.where(dc, 1000.0, np.nan),
        ac_kva=np.where(dc, np.nan, 300.0),
        ac_v=np.where(dc, np.nan, 800.0),
        ac_max_a=np.where(dc, np.nan, 300.0),
        air_count=np.array([16.0]),
        air_behind_modules=np.array([True]),
        air_inc_circuit=np.array([pos[_STRING], pos[_AC]]),
        air_inc_stretch=np.array([0, 0]),
    )


def _check(order):
    r = size_circuits(_site(order), DesignParams(row_air_temp_c=70.0))
    i = {name: k for k, name in enumerate(order)}
    assert r.air_count_final.tolist() == [17.0]
    assert r.parallel[i[_AC]] == 2
    assert r.size_mm2[i[_STRING]] == 6.0
    assert_allclose(r.factor_group[i[_STRING]], 0.38)
    assert_allclose(r.ampacity_a[i[_STRING]], 57.0 * 0.91 * 0.38)
    assert_allclose(r.vdrop_pct[i[_STRING]], 2 * 0.05 * 12 * 3.39 * 1.393 / 10, rtol=1e-3)
    assert r.size_mm2[i[_SUB]] == 16.0
    assert r.size_mm2[i[_ARRAY]] == 16.0
    assert_allclose(r.vdrop_pct[i[_ARRAY]], 2 * 0.37 * 12 * 1.15 * 1.2751 / 10, rtol=1e-3)
    assert_allclose(r.vdrop_limit_pct[i[_ARRAY]], 1.398, atol=1e-3)
    assert r.ok.all() and r.iterations == 2


def test_the_array_above_a_re_sized_string_is_sized_again():
    _check([_ARRAY, _SUB, _STRING, _AC])


def test_the_same_with_the_sub_array_listed_first():
    _check([_SUB, _ARRAY, _STRING, _AC])
