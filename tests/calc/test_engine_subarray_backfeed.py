"""Backfeed into sub-array cables: a sub-array belongs to the inverter input of its array cable.

IEC 62548:2016 (from memory): the current the rest of an input can drive into a fault on a
cable is 1.25 · I_SC of every string of the input not below that cable (B = 1.25 · (Σ I_SC of
the input − I_SC below the cable)). Worked out by hand for an invented site: modules of 13 A
I_SC, monofacial, so a cable's design I_SC is 13 A × its strings.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import SizingInput, size_circuits


def two_arrays_with_sub_arrays() -> SizingInput:
    """Arrays A (0, 10 strings) and B (1, 2 strings) on inverter input 5; sub-array 2 (4
    strings) feeds A, sub-array 3 (1 string) feeds 2; module Isc 13 A."""
    return SizingInput(
        kind=np.array([1, 1, 3, 3], dtype=np.int8),
        cable_m=np.full(4, 10.0),
        air_m=np.full(4, 10.0),
        parent=np.array([-1, -1, 0, 2]),
        isc_a=np.full(4, 13.0),
        imp_a=np.full(4, 12.0),
        vmp_v=np.full(4, 1000.0),
        n_strings=np.array([10.0, 2.0, 4.0, 1.0]),
        dc_group=np.array([5, 5, -1, -1]),
    )


def test_sub_arrays_two_levels_down_take_their_array_cables_input():
    # 0: array A, 10 strings (130 A), on input 5; 1: array B, 2 strings (26 A), on input 5;
    # 2: sub-array of A, 4 strings (52 A); 3: sub-array of 2, 1 string (13 A). The sub-arrays
    # give no input of their own (-1): they are on A's. Input 5 carries 130 + 26 = 156 A.
    inp = two_arrays_with_sub_arrays()
    r = size_circuits(inp)
    assert_allclose(r.isc_design_a, [130.0, 26.0, 52.0, 13.0])
    # A: 1.25 × (156 − 130) = 32.5 A; B: 1.25 × (156 − 26) = 162.5 A;
    # sub-array 2: 1.25 × (156 − 52) = 130 A; sub-array 3: 1.25 × (156 − 13) = 178.75 A
    assert_allclose(r.backfeed_a, [32.5, 162.5, 130.0, 178.75])
    # B alone on its own input: nothing feeds back into A's tree from B
    inp.dc_group = np.array([5, 6, -1, -1])
    r = size_circuits(inp)
    # A alone: 0; sub-array 2: 1.25 × (130 − 52) = 97.5 A; sub-array 3: 1.25 × (130 − 13)
    assert_allclose(r.backfeed_a, [0.0, 0.0, 97.5, 146.25])
