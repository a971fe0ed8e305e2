"""The highest open-circuit voltage of every d.c. circuit of a tree of arrays and sub-arrays.

IEC 62548:2016 (from memory): V_OC,max = V_OC STC · (1 + β/100 · (T_min − 25 °C)) with the
module's temperature coefficient β, or 1.2 · V_OC STC where β is not given (crystalline
silicon, from memory). A feeder's is the highest of the strings below it, through every level
of sub-arrays; a feeder given without strings takes its own. Each value below is worked out by
hand at the default lowest ambient of −10 °C (35 K below STC). Site invented.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import DesignParams, SizingInput, size_circuits

# index: what it is (parent) — V_OC STC, β
_TREE = [
    (1, -1, np.nan, np.nan),  # 0: array A, strings 1 and 3 (one through sub-array 2)
    (0, 0, 1200.0, np.nan),  # 1: string on A: 1.2 × 1200 = 1440 V
    (3, 0, np.nan, np.nan),  # 2: sub-array of A
    (0, 2, 1000.0, -0.3),  # 3: string on 2: 1000 × (1 + 0.003 × 35) = 1105 V
    (1, -1, np.nan, np.nan),  # 4: array B, strings 7, 8, 9
    (3, 4, np.nan, np.nan),  # 5: sub-array of B (level 1)
    (3, 5, np.nan, np.nan),  # 6: sub-array of 5 (level 2)
    (0, 6, 1250.0, -0.25),  # 7: string on 6: 1250 × (1 + 0.0025 × 35) = 1359.375 V
    (0, 5, 1000.0, -0.3),  # 8: string on 5: 1105 V
    (0, 4, 1100.0, -0.3),  # 9: string on B: 1100 × 1.105 = 1215.5 V
    (1, -1, 1050.0, -0.3),  # 10: array C given without its strings: 1050 × 1.105 = 1160.25 V
    (0, -1, 1000.0, -0.3),  # 11: string straight to an inverter: 1105 V
    (2, -1, 1000.0, -0.3),  # 12: a.c. circuit: d.c. fields ignored
]


def _tree():
    kind, parent, voc, beta = (np.array(col) for col in zip(*_TREE, strict=True))
    n = kind.size
    dc = kind != 2
    return SizingInput(
        kind=kind.astype(np.int8),
        cable_m=np.full(n, 10.0),
        air_m=np.full(n, 10.0),
        parent=parent,
        isc_a=np.where(dc, 13.0, np.nan),
        imp_a=np.where(dc, 12.0, np.nan),
        vmp_v=np.where(dc, 1000.0, np.nan),
        n_strings=np.array([2, 1, 1, 1, 3, 2, 1, 1, 1, 1, 4, 1, 1], dtype=float),
        # B's 3 strings in parallel: (3 − 1) × 1.25 × 13 A = 32.5 A ≤ 35 A, no string fuse
        # (IEC 62548, from memory), so no protection note stands beside the voltage's
        max_fuse_a=np.where(dc, 35.0, np.nan),
        voc_v=voc,
        voc_coeff_pct_per_c=beta,
        ac_kva=np.where(dc, np.nan, 100.0),
        ac_v=np.where(dc, np.nan, 400.0),
    )


_EXPECTED_V = [
    1440.0,  # A: its own string 1 (1440) above sub-array 2's 1105
    1440.0,
    1105.0,
    1105.0,
    1359.375,  # B: string 7, two sub-array levels down
    1359.375,
    1359.375,
    1359.375,
    1105.0,
    1215.5,
    1160.25,
    1105.0,
    np.nan,
]


def test_highest_voc_through_every_level_of_the_tree():
    r = size_circuits(_tree())
    assert_allclose(r.voc_max_v, _EXPECTED_V)
    # all below the default rated 1500 V: no note, every circuit passes
    assert r.note.tolist() == [""] * 13
    assert r.ok.all()


def test_circuits_above_the_rated_voltage_fail_with_the_numbers():
    r = size_circuits(_tree(), DesignParams(dc_rated_v=1400.0))
    # only array A and its string 1 reach 1440 V > 1400 V
    assert r.ok.tolist() == [False, False] + [True] * 11
    note = "Voc 1440 V at -10 °C exceeds the rated 1400 V (IEC 62548)"
    assert r.note.tolist() == [note, note] + [""] * 11
    # at −25 °C (50 K below STC) string 7 gives 1250 × (1 + 0.0025 × 50) = 1406.25 V, the
    # strings without β still 1.2 × V_OC
    r = size_circuits(_tree(), DesignParams(dc_rated_v=1420.0, min_ambient_c=-25.0))
    assert_allclose(r.voc_max_v[[0, 4, 7, 10]], [1440.0, 1406.25, 1406.25, 1050.0 * 1.15])
    note = "Voc 1440 V at -25 °C exceeds the rated 1420 V (IEC 62548)"
    assert r.note.tolist() == [note, note] + [""] * 11
