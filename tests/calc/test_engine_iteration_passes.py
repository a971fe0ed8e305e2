"""The parallel-sets / grouping iteration runs until it settles, however many passes a plan
needs: each extra conductor set counts as one more circuit in its trench (IEC 60364-5-52:2009
B.52.18 grouping), which may push a neighbour over its capacity in the next pass.

The plan (invented): c array cables, each alone on its inverter input (no backfeed), share one
trench segment at the tables' reference conditions (0.7 m, 2.5 K·m/W, direct, touching); one
size (240 mm²) and at most 2 conductors per pole are allowed. With C sets in the trench one
set carries Iz(C) = Iz(1) × F(C), F the B.52.18 factor (touching; beyond its 20 circuits the
1/F² extension of calc.ampacity.group_factor, which falls with every circuit). Array j is given
a design current halfway between Iz(c + j) and Iz(c + j − 1). By hand:

* pass 1: C = c. Array 0 (I_0 > Iz(c)) takes a second set; every other fits one set.
* pass k: C = c + k − 1. Array k − 1 now exceeds Iz(C) and takes a second set (2 × Iz(C + 1)
  still carries it); arrays with two sets keep them (2 × F(2c) ≥ F(c − 1), checked below).
* pass c + 1: C = 2c, nothing changes: settled, every array in 2 sets.

So the plan needs c + 1 passes.
"""

import numpy as np
import pytest

from calc import DesignParams, SizingInput, size_circuits
from calc.ampacity import group_factor

DESIGN = DesignParams(sizes_array_mm2=(240.0,), max_parallel=2)


def _arrays(isc_a):
    n = isc_a.size
    return SizingInput(
        kind=np.ones(n, np.int8),
        cable_m=np.full(n, 10.0),
        isc_a=isc_a,
        imp_a=0.9 * isc_a,
        vmp_v=np.full(n, 1000.0),
        n_strings=np.ones(n),
        seg_depth_m=[0.7],
        seg_laying=[0],
        seg_spacing_m=[0.0],
        seg_soil_k_m_w=[2.5],
        inc_circuit=np.arange(n),
        inc_segment=np.zeros(n, np.int64),
    )


def _cascade(c):
    """The c arrays of the module docstring: I_SC = I / 1.25 (IEC 62548, from memory)."""
    alone = size_circuits(_arrays(np.array([100.0])), DESIGN)
    iz1 = float(alone.ampacity_a[0])  # one 240 mm² set alone in the trench
    count = c + np.arange(c, dtype=float)
    f_now, f_before = group_factor(count, 0.0, 0), group_factor(count - 1, 0.0, 0)
    assert np.all(f_now < f_before)  # every further circuit lowers the factor
    assert 2 * group_factor(2 * c, 0.0, 0) >= f_before[0]  # two sets carry each, at the end
    i_design = iz1 * (f_now + f_before) / 2
    return _arrays(i_design / 1.25)


@pytest.mark.parametrize("c", [98, 99])
def test_a_plan_settling_in_its_99th_or_100th_pass_is_sized(c):
    r = size_circuits(_cascade(c), DESIGN)
    assert r.iterations == c + 1
    assert r.parallel.tolist() == [2] * c
    assert r.seg_count_final.tolist() == [2.0 * c]
    assert r.ok.all()


def test_a_plan_settling_after_100_passes_is_sized_not_refused():
    # 100 arrays: 101 passes, which is also the bound the engine allows itself,
    # 1 + n × (max_parallel − 1) = 1 + 100 × 1 (each unsettled pass adds a set; none exceeds 2)
    r = size_circuits(_cascade(100), DESIGN)
    assert r.iterations == 101
    assert r.parallel.tolist() == [2] * 100
    assert r.ok.all()
