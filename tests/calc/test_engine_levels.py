"""Sub-array levels: a chain of sub-array parents must end at an array cable.

Invented trees. A sub-array whose parents loop back on themselves never reaches an array
cable, so its level (and the inverter input it belongs to) is undefined: the engine refuses
the input naming every circuit of the loop.
"""

import numpy as np
import pytest

from calc import InputError, SizingInput, size_circuits


def _inp(kind, parent) -> SizingInput:
    n = len(kind)
    return SizingInput(
        kind=np.array(kind, dtype=np.int8),
        cable_m=np.full(n, 10.0),
        air_m=np.full(n, 10.0),
        parent=np.array(parent),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.ones(n),
    )


def test_a_loop_of_sub_arrays_is_refused_naming_its_circuits():
    # 0: array; 1: sub-array of 0 (fine); 2 and 3: sub-arrays that are each other's parent
    with pytest.raises(InputError) as e:
        size_circuits(_inp([1, 3, 3, 3], [-1, 0, 3, 2]))
    assert str(e.value) == ("sub-array circuits [2, 3] do not lead to an array circuit (a cycle)")
