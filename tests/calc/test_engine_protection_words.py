"""The schedule's ``protection`` words for arrays and sub-arrays of one inverter input.

Invented site (the tree of tests/calc/test_engine_subarray_backfeed.py): modules of 13 A I_SC,
monofacial. Backfeed by hand, IEC 62548:2016 (from memory): B = 1.25 · (Σ I_SC of the input −
I_SC below the cable). Array fuse by hand: the smallest default gPV rating with In ≥ 1.25 · I_SC
of the cable (IEC 62548:2016, from memory). Iz depends on the cable picked, so only its form is
checked here.
"""

import re

import numpy as np

from calc import DesignParams, SizingInput, size_circuits

from .test_engine_subarray_backfeed import two_arrays_with_sub_arrays


def test_each_feeder_names_its_kind_its_backfeed_and_its_fuse():
    # 0: array A, 10 strings (130 A); 1: array B, 2 strings (26 A), both on input 5;
    # 2: sub-array of A, 4 strings (52 A); 3: sub-array of 2, 1 string (13 A).
    inp = two_arrays_with_sub_arrays()
    text = size_circuits(inp).protection
    # A: B = 1.25 × 26 = 32.5 A, carried by its cable (no fuse)
    assert re.fullmatch(r"no array fuse needed: backfeed 32 A ≤ Iz \d+ A", text[0])
    # B: B = 1.25 × 130 = 162.5 A; 1.25 × 26 = 32.5 A -> 35 A fuse
    assert re.fullmatch(r"array fuse 35 A gPV: backfeed 162 A > Iz \d+ A", text[1])
    # sub-array 2: B = 1.25 × 104 = 130 A; 1.25 × 52 = 65 A -> 80 A fuse
    assert re.fullmatch(r"sub-array fuse 80 A gPV: backfeed 130 A > Iz \d+ A", text[2])
    # sub-array 3: B = 1.25 × 143 = 178.75 A; 1.25 × 13 = 16.25 A -> 20 A fuse
    assert re.fullmatch(r"sub-array fuse 20 A gPV: backfeed 179 A > Iz \d+ A", text[3])
    # B alone on its own input: A has nothing fed back
    inp.dc_group = np.array([5, 6, -1, -1])
    text = size_circuits(inp).protection
    assert text[0] == "alone on its inverter input: no backfeed"
    assert text[1] == "alone on its inverter input: no backfeed"


def test_an_array_alone_on_its_input_says_so_when_array_fuses_are_used():
    # two arrays of 2 strings of 13 A, each alone on its input: no backfeed, whatever the
    # array protection chosen (IEC 62548:2016, from memory: B = 1.25 × 0 A)
    inp = SizingInput(
        kind=np.array([1, 1], dtype=np.int8),
        cable_m=np.full(2, 10.0),
        air_m=np.full(2, 10.0),
        parent=np.array([-1, -1]),
        isc_a=np.full(2, 13.0),
        imp_a=np.full(2, 12.0),
        vmp_v=np.full(2, 1000.0),
        n_strings=np.array([2.0, 2.0]),
        dc_group=np.array([5, 6]),
    )
    text = size_circuits(inp, DesignParams(array_protection="fuse")).protection
    assert text.tolist() == ["alone on its inverter input: no backfeed"] * 2
