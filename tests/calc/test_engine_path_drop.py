"""Cumulative d.c. voltage drop along a string's path through two sub-array levels.

Kirchhoff's voltage law: the drop from a string to the inverter is the sum of the drops of the
cables in series on its path (string + each sub-array + array cable); a feeder's cumulative
drop is its own, the worst path below it and the feeders above it. Invented tree, one string.
"""

import numpy as np
from numpy.testing import assert_allclose

from calc import SizingInput, size_circuits


def test_the_string_path_sums_every_cable_up_to_the_inverter():
    # 0: array; 1: sub-array of 0 (level 1); 2: sub-array of 1 (level 2); 3: string on 2
    inp = SizingInput(
        kind=np.array([1, 3, 3, 0], dtype=np.int8),
        cable_m=np.array([200.0, 120.0, 80.0, 40.0]),
        air_m=np.full(4, 10.0),
        parent=np.array([-1, 0, 1, 2]),
        isc_a=np.full(4, 13.0),
        imp_a=np.full(4, 12.0),
        vmp_v=np.full(4, 1000.0),
        n_strings=np.ones(4),
    )
    r = size_circuits(inp)
    own = r.vdrop_pct
    path = own.sum()  # the one path: string 3 -> 2 -> 1 -> 0 -> inverter
    assert np.all(own > 0)
    assert_allclose(r.vdrop_total_pct, [path, path, path, path])
