"""The sizing engine at the edges of its input rules: the limits of kind, power factor and the
a.c. values, parents at the first and last index, defaults of omitted fields, the incidence of
circuits and trench segments (floats, duplicates, any order), the soil of a duct, and tiny
backfeeds. Invented circuits; expected values from the tables and rules named beside them.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc import DesignParams, InputError, SizingInput, UnknownOptionError, size_circuits

PARENT_MESSAGE = (
    "parent must be the index of an array or sub-array circuit (strings: or -1; sub-array "
    "circuits: always; others: -1) at circuits "
)


def _input(**changes):
    """Circuits of 20 m: modules of 13 A I_SC, 12 A I_MP, strings of 1000 V; inverters of
    100 kVA at 400 V three-phase. ``changes`` sets any field (lists allowed)."""
    n = len(changes["kind"])
    base = dict(
        cable_m=np.full(n, 20.0),
        air_m=np.zeros(n),
        parent=np.full(n, -1),
        isc_a=np.full(n, 13.0),
        imp_a=np.full(n, 12.0),
        vmp_v=np.full(n, 1000.0),
        n_strings=np.ones(n),
        ac_kva=np.full(n, 100.0),
        ac_v=np.full(n, 400.0),
        phases=np.full(n, 3),
    )
    base.update({k: np.asarray(v) for k, v in changes.items()})
    return SizingInput(**base)


def _refusal(inp, design=None):
    with pytest.raises(InputError) as err:
        size_circuits(inp, design)
    return str(err.value)


def test_kind_4_is_refused():
    # kinds are 0 string, 1 array, 2 a.c., 3 sub-array: 4 is the first value past them
    msg = _refusal(_input(kind=[0, 1, 4]))
    assert msg == "kind must be 0, 1, 2 or 3 at circuits [2]"


def test_a_power_factor_of_zero_is_refused():
    # cos φ in (0, 1]: 0 would mean no active power at all; 1 is valid
    msg = _refusal(_input(kind=[2, 2], pf=[0.0, 1.0]))
    assert msg == "pf must be in (0, 1] at a.c. circuits [0]"


def test_a_microinverter_below_1_kva_and_1_a_is_sized():
    # 300 VA single-phase at 230 V: I = S / U = 300 / 230 = 1.304 A; a datasheet maximum of
    # 0.9 A where given is the design current instead (calc.pv.ac_max_current_a)
    res = size_circuits(
        _input(
            kind=[2, 2],
            ac_kva=[0.3, 0.2],
            ac_v=[230.0, 230.0],
            phases=[1, 1],
            ac_max_a=[np.nan, 0.9],
        )
    )
    assert_allclose(res.operating_current_a, [300.0 / 230.0, 0.9], rtol=1e-12)
    assert res.ok.tolist() == [True, True]
    assert res.rules == "iec"


def test_a_string_under_another_string_is_refused_at_the_first_and_last_index():
    # circuit 0 is a string, so no string may name it as its parent
    assert _refusal(_input(kind=[0, 0], parent=[-1, 0])) == PARENT_MESSAGE + "[1]"
    # circuit 2 (the last) is a string; circuit 1 beside it is an array
    assert _refusal(_input(kind=[0, 1, 0], parent=[2, -1, -1])) == PARENT_MESSAGE + "[0]"
    # and a string under the array at index 0 is valid
    res = size_circuits(_input(kind=[1, 0], parent=[-1, 0], n_strings=[1, 1]))
    assert res.ok.tolist() == [True, True]


def test_arrays_without_a_dc_group_are_each_alone_on_their_input():
    # dc_group omitted = −1 = alone: nothing fed back (IEC 62548:2016, from memory: B = 0 A)
    res = size_circuits(_input(kind=[1, 1, 0, 0], parent=[-1, -1, 0, 1]))
    assert res.protection[:2].tolist() == ["alone on its inverter input: no backfeed"] * 2


def test_a_backfeed_below_1_a_is_still_a_backfeed():
    # Two arrays of one string of tiny 0.3 A modules on one input: each receives
    # B = 1.25 × 0.3 A = 0.375 A from the other (IEC 62548:2016, from memory), carried by any
    # cable; the schedule names it (rounded to 0 A), it does not call the array alone.
    res = size_circuits(_input(kind=[1, 1], isc_a=[0.3, 0.3], imp_a=[0.28, 0.28], dc_group=[5, 5]))
    for text in res.protection:
        assert text.startswith("no array fuse needed: backfeed 0 A ≤ Iz ")


def _trench(**changes):
    """Three arrays of 10 strings, each alone in its own trench segment at 0.7 m, direct in the
    ground, soil 1.0, 2.5 and 3.0 K·m/W."""
    base = dict(
        kind=[1, 1, 1],
        n_strings=[10, 10, 10],
        seg_depth_m=[0.7, 0.7, 0.7],
        seg_laying=[0, 0, 0],
        seg_spacing_m=[0.0, 0.0, 0.0],
        seg_soil_k_m_w=[1.0, 2.5, 3.0],
        inc_circuit=[0, 1, 2],
        inc_segment=[0, 1, 2],
    )
    base.update(changes)
    return _input(**base)


@pytest.mark.parametrize(
    "incidence",
    [
        ([0, 2, 1], [0, 2, 1]),  # any order
        ([0.0, 1.0, 2.0], [0.0, 1.0, 2.0]),  # whole numbers read as floats from a table
        ([0, 0, 1, 2], [0, 0, 1, 2]),  # a pair given twice counts once
        ([0, 1, 1, 2], [0, 1, 1, 2]),  # also after the first pair
    ],
)
def test_each_circuit_is_rated_in_its_own_segment_however_the_incidence_is_given(incidence):
    circuits, segments = incidence
    res = size_circuits(_trench(inc_circuit=circuits, inc_segment=segments))
    assert res.governing_segment.tolist() == [0, 1, 2]
    # IEC 60364-5-52:2009 Table B.52.16, direct in the ground (from memory): 1.0 K·m/W -> 1.50,
    # 2.5 -> 1.00 (the reference), 3.0 -> 0.90
    assert_allclose(res.factor_soil, [1.50, 1.00, 0.90], rtol=1e-12)
    # one circuit per segment: no grouping (B.52.18: one circuit = 1.0)
    assert res.group_count.tolist() == [1.0, 1.0, 1.0]
    assert_allclose(res.factor_group, [1.0, 1.0, 1.0], rtol=0)


def test_a_duct_takes_the_duct_row_of_the_soil_table():
    # IEC 60364-5-52:2009 Table B.52.16 (from memory): 1.0 K·m/W, cable in a duct -> 1.18
    # (direct in the ground it would be 1.50)
    res = size_circuits(_trench(seg_laying=[1, 0, 0]))
    assert_allclose(res.factor_soil, [1.18, 1.00, 0.90], rtol=1e-12)


@pytest.mark.parametrize(
    ("design", "message"),
    [
        (
            DesignParams(material_subarray="Fe"),
            "material_subarray must be one of 'Cu', 'Al'; got 'Fe'",
        ),
        (
            DesignParams(insulation_subarray="EPR"),
            "insulation_subarray must be one of 'XLPE', 'PVC'; got 'EPR'",
        ),
    ],
)
def test_an_unknown_sub_array_cable_is_refused_naming_the_setting(design, message):
    with pytest.raises(UnknownOptionError) as err:
        size_circuits(_input(kind=[1]), design)
    assert str(err.value) == message
