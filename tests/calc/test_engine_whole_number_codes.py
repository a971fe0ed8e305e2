"""Codes and indices given with a fractional part (phases 1.5, a parent 0.6) are refused, never
truncated to a neighbouring code: phases 1.5 is not a phase count, and truncated it would be
read as single-phase, a parent index 0.6 as circuit 0. Whole numbers read as floats (3.0, from
a table with blanks) are accepted.
"""

import numpy as np
import pytest

from calc import InputError, size_circuits

from .test_engine_input_edges import _input, _trench


def _refusal(inp):
    with pytest.raises(InputError) as err:
        size_circuits(inp)
    return str(err.value)


def test_fractional_phases_are_refused_not_truncated():
    msg = _refusal(_input(kind=[2, 2, 2], phases=[3.0, 3.7, 1.5]))
    assert msg == "phases must be a whole number at circuits [1, 2]"


def test_fractional_kind_parent_and_dc_group_are_refused():
    msg = _refusal(_input(kind=[1.0, 0.5, 1.0], parent=[-1, 0.6, -1], dc_group=[5, -1, 5.5]))
    assert msg.startswith(
        "kind must be a whole number at circuits [1]; parent must be a whole number at circuits "
        "[1]; dc_group must be a whole number at circuits [2]"
    )


def test_fractional_laying_and_incidence_are_refused():
    msg = _refusal(_trench(seg_laying=[0.0, 0.5, 1.0], inc_segment=[0.0, 1.0, 2.25]))
    assert msg == (
        "seg_laying must be a whole number at segments [1]; "
        "inc_segment must be a whole number at positions [2]"
    )


def test_fractional_air_incidence_is_refused():
    inp = _input(
        kind=[1, 1],
        air_m=[5.0, 5.0],
        air_inc_circuit=np.array([0, 1.5]),
        air_inc_stretch=np.array([0, 0]),
    )
    assert _refusal(inp) == "air_inc_circuit must be a whole number at positions [1]"


def test_whole_numbers_read_as_floats_are_accepted():
    res = size_circuits(_input(kind=[2.0, 1.0], phases=[3.0, 3.0], dc_group=[-1.0, 4.0]))
    assert res.ok.tolist() == [True, True]
