"""Design I_SC of feeders over a tree of sub-arrays: the mean of the strings below, times the
feeder's strings.

IEC 62548:2016 (from memory): an array or sub-array cable carries the short-circuit current of
the strings it collects, I_SC,ARRAY = I_SC,MOD · S_A. Where the strings below a feeder differ,
the engine takes their mean design I_SC (monofacial here, so a string's own I_SC). Worked out by
hand for an invented tree; the feeders' own ``isc_a`` (10 A) is deliberately different from the
strings' so that using it instead of the strings' shows.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import SizingInput, size_circuits

# index: kind (0 string, 1 array, 3 sub-array), parent, I_SC [A], strings
_TREE = [
    (1, -1, 10.0, 3.0),  # 0: array, level 0: strings 3, 4, 5
    (3, 0, 10.0, 2.0),  # 1: sub-array of 0, level 1: strings 3, 4
    (3, 1, 10.0, 1.0),  # 2: sub-array of 1, level 2: string 3
    (0, 2, 13.0, 1.0),  # 3: string on 2
    (0, 1, 15.0, 1.0),  # 4: string on 1
    (0, 0, 12.0, 1.0),  # 5: string on 0
]


def _inp() -> SizingInput:
    kind, parent, isc, n_str = (np.array(col) for col in zip(*_TREE, strict=True))
    n = kind.size
    return SizingInput(
        kind=kind.astype(np.int8),
        cable_m=np.full(n, 10.0),
        air_m=np.full(n, 10.0),
        parent=parent,
        isc_a=isc,
        imp_a=np.full(n, 9.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=n_str,
    )


def test_feeder_isc_is_the_mean_of_its_strings_through_every_level():
    r = size_circuits(_inp())
    # 2: one string of 13 A -> 13 × 1 = 13 A (not its own 10 A)
    # 1: strings 13 and 15 A -> mean 14 A × 2 = 28 A
    # 0: strings 13, 15, 12 A -> mean 40/3 A × 3 = 40 A
    # strings: their own I_SC
    assert_allclose(r.isc_design_a, [40.0, 28.0, 13.0, 13.0, 15.0, 12.0])
