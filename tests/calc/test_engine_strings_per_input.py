"""The strings the IEC 62548 string rule counts: every string of the inverter d.c. input.

IEC 62548:2016 (from memory; the rule calc's data file carries): a string needs overcurrent
protection where (S − 1) × I_SC MAX > I_MOD_MAX_OCPR, I_SC MAX = 1.25 × I_SC STC, S the strings
that can feed a fault on it up to the nearest overcurrent device; without a fuse its cable
carries 1.25 × I_SC × (S − 1), never less than 1.25 × I_SC; with one, max(I_n, 1.25 × I_SC).
Array and sub-array cables rated for the backfeed carry no fuse, so a string at a combiner is in
parallel with every string of its inverter input (README, "Design currents and protection").

The tree (invented): modules of I_SC 6 A, I_MOD_MAX_OCPR 25 A.

* input 7: array A (index 0) with a string of its own (2) and sub-array B (1) with one string
  (3); array C (4) with two strings (5, 6): S = 2 + 2 = 4 for each of the four strings.
* array D (7) alone on its input (no dc_group) with three strings (8, 9, 10): S = 3.
* string 11 straight on an inverter input where 5 strings meet (``strings_in_parallel`` 5).
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import SizingInput, size_circuits

ISC_A, OCPR_A = 6.0, 25.0
# index: kind, parent, dc_group, n_strings, strings_in_parallel
_TREE = [
    (1, -1, 7, 2, 1),  # 0 array A
    (3, 0, -1, 1, 1),  # 1 sub-array B of A
    (0, 0, -1, 1, 1),  # 2 string on A
    (0, 1, -1, 1, 1),  # 3 string on B
    (1, -1, 7, 2, 1),  # 4 array C
    (0, 4, -1, 1, 1),  # 5 string on C
    (0, 4, -1, 1, 1),  # 6 string on C
    (1, -1, -1, 3, 1),  # 7 array D, alone
    (0, 7, -1, 1, 1),  # 8
    (0, 7, -1, 1, 1),  # 9
    (0, 7, -1, 1, 1),  # 10
    (0, -1, -1, 1, 5),  # 11 string straight on an input of 5
]
STRINGS = [2, 3, 5, 6, 8, 9, 10, 11]


def _tree():
    kind, parent, group, n_strings, s_par = (np.array(col) for col in zip(*_TREE, strict=True))
    n = kind.size
    return SizingInput(
        kind=kind,
        cable_m=np.full(n, 10.0),
        air_m=np.full(n, 10.0),
        parent=parent,
        dc_group=group,
        n_strings=n_strings.astype(float),
        strings_in_parallel=s_par.astype(float),
        isc_a=np.full(n, ISC_A),
        imp_a=np.full(n, 5.6),
        vmp_v=np.full(n, 800.0),
        max_fuse_a=np.full(n, OCPR_A),
    )


def test_a_string_at_a_combiner_counts_every_string_of_its_input():
    r = size_circuits(_tree())
    k = 1.25 * ISC_A  # I_SC MAX = 7.5 A
    # input 7, S = 4: (4 − 1) × 7.5 = 22.5 A ≤ 25 A, no fuse; cable 22.5 A
    # D, S = 3: (3 − 1) × 7.5 = 15 A ≤ 25 A, no fuse; cable 15 A
    # string 11, S = 5: (5 − 1) × 7.5 = 30 A > 25 A, fuse in 1.5 × 6 = 9 A … min(2.4 × 6, 25)
    #   = 14.4 A: 10 A gPV (catalogue ratings, memory-low); cable max(10, 7.5) = 10 A
    assert r.fuse_required[STRINGS].tolist() == [False] * 7 + [True]
    assert (4 - 1) * k < OCPR_A < (5 - 1) * k  # neither S = 4 nor S = 5 is on the limit
    assert_allclose(
        r.design_current_a[STRINGS],
        [(4 - 1) * k] * 4 + [(3 - 1) * k] * 3 + [10.0],
        rtol=1e-12,
    )
    assert r.fuse_a[11] == 10.0
    assert r.ok.all()


def test_the_schedule_names_the_strings_the_rule_counted():
    # the protection text gives S as the rule used it (4 on input 7, 3 at D), not the strings
    # that meet at the string's own combiner (1 at B, 2 at A and C, 3 at D)
    r = size_circuits(_tree())
    assert r.protection[STRINGS].tolist() == (
        ["no string fuse needed; 4 string(s) in parallel"] * 4
        + ["no string fuse needed; 3 string(s) in parallel"] * 3
        + ["string fuse 10 A gPV; 5 strings in parallel"]
    )
