"""Input refusals of the sizing engine that name the exact field and position, and the buried
check with a depth left blank. Invented circuits (the helpers of test_engine_input_edges).
"""

import numpy as np
import pytest

from calc import DesignParams, InputError, buried_deep_enough, size_circuits

from .test_engine_input_edges import PARENT_MESSAGE, _input, _trench


def _refusal(inp):
    with pytest.raises(InputError) as err:
        size_circuits(inp)
    return str(err.value)


def test_a_parent_far_below_minus_one_is_refused_not_read_from_the_end():
    # −9 in a list of 3 circuits is no circuit (and must not be read as a Python index counted
    # from the end); −1 (a string straight on an inverter) stays valid
    msg = _refusal(_input(kind=[1, 0, 0, 0], parent=[-1, 0, -9, -1]))
    assert msg == PARENT_MESSAGE + "[2]"


def test_a_fractional_circuit_index_in_the_trench_incidence_is_refused():
    msg = _refusal(_trench(inc_circuit=[0, 1.5, 2]))
    assert msg == "inc_circuit must be a whole number at positions [1]"


def test_a_fractional_stretch_index_in_the_air_incidence_is_refused():
    inp = _input(
        kind=[1, 1],
        air_m=[5.0, 5.0],
        air_inc_circuit=np.array([0, 1]),
        air_inc_stretch=np.array([0, 0.5]),
    )
    assert _refusal(inp) == "air_inc_stretch must be a whole number at positions [1]"


def test_a_depth_left_blank_is_not_deep_enough():
    # A buried cable (or duct) of outer diameter De with its axis at depth L has its top at
    # L − De/2: it is buried only for L > De/2 (the external thermal resistance of
    # IEC 60287-2-1:2015, T4 = ρ/2π · ln(u + √(u² − 1)) with u = 2L/De, needs u > 1; from
    # memory). Cable 0.04 m: L > 0.02 m; duct 0.11 m: L > 0.055 m. A depth column read with a
    # blank (object values, None) is no depth, like nan.
    design = DesignParams(cable_od_m=0.04, duct_od_m=0.11)
    depth = np.array([0.7, None, 0.03, 0.05, 0.06], dtype=object)
    in_duct = np.array([False, False, False, True, True])
    assert buried_deep_enough(depth, in_duct, design).tolist() == [True, False, True, False, True]


def test_an_open_circuit_voltage_of_zero_or_below_is_refused():
    # V_OC of a string is a positive number of volts (IEC 60891 / the module datasheet); NaN
    # leaves the maximum-voltage check out, zero or a negative value is an input error
    inp = _input(kind=[1, 0, 0], parent=[-1, 0, 0], voc_v=[np.nan, 0.0, -1200.0])
    assert _refusal(inp) == "voc_v must be > 0 (or NaN: not checked) at d.c. circuits [1, 2]"
    ok = size_circuits(_input(kind=[1, 0], parent=[-1, 0], voc_v=[np.nan, 1200.0]))
    assert ok.voc_max_v[1] > 1200.0  # colder than 25 °C: above the STC value
    # any positive value is a voltage, however small (one cell's V_OC is about 0.6-0.7 V,
    # common practice): 0.5 V and 1 V are accepted
    small = size_circuits(_input(kind=[1, 0, 0], parent=[-1, 0, 0], voc_v=[np.nan, 0.5, 1.0]))
    assert (small.voc_max_v[1:] > [0.5, 1.0]).all()


def test_a_count_of_modules_in_series_below_one_or_not_whole_is_refused():
    # modules in series are counted: 1, 2, … (NaN: not given)
    inp = _input(kind=[1, 0, 0, 0], parent=[-1, 0, 0, 0], modules_in_series=[np.nan, 0, 2.5, 27])
    assert _refusal(inp) == "modules_in_series must be a whole number >= 1 at circuits [1, 2]"
    ok = size_circuits(_input(kind=[1, 0], parent=[-1, 0], modules_in_series=[np.nan, 27]))
    assert ok.ok.all()  # not used in the sizing
