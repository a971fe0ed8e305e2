"""The rule sets' declared capabilities (``RuleSet.grouping_uses_spacing``,
``terminal_condition``, ``short_section_exception``, ``buried_review``, ``short_circuit_checked``,
``protection_per_size``)
against the hooks they stand for: the engine and ``routeplan.remedy`` read the declarations, so a
declaration that the hook contradicts would change a plan silently.

Sources of the values:

* IEC 60364-5-52:2009 Table B.52.18 (direct in the ground; 4 circuits: touching 0.60, 0.5 m apart
  0.80, the 0.5 m cell confirmed by BS 7671 Table 4C2) and Table B.52.19 part B (single-core in
  ducts; 4 ducts: touching 0.65, 0.5 m apart 0.80, from memory) — ../shared/REFERENCE_VALUES.md
  §3.8, §3.9;
* NEC 2023 Table 310.15(C)(1) (4-6 conductors 0.80, 7-9 0.70, confirmed in calc/data), applied by
  the nec rule set to a trench's conductors as one bundle whatever the spacing;
* NEC 2023 110.14(C)(1): terminations rated from Table 310.16 (10 AWG Cu, 75 °C column 35 A,
  confirmed, REFERENCE_VALUES §4.3) also for a conductor in free air;
* NEC 2023 310.14(A)(2) exception: 10 ft (3.048 m) or 10 % of the circuit, whichever is less;
* IEC 60364-4-43:2008 Table 43A: k = 143 for Cu/XLPE (confirmed).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.engine import DesignParams
from calc.nec.sizes import size_from_label, sizes_mm2
from calc.rules import get_rules, rule_names


@pytest.mark.parametrize("name", rule_names())
def test_grouping_uses_spacing_as_the_group_factor_does(name):
    rs = get_rules(name)
    count = np.array([2.0, 4.0, 12.0, 2.0, 4.0, 12.0])
    laying = np.array([0, 0, 0, 1, 1, 1])  # direct in the ground, then in ducts
    touching = rs.group_factor(count, np.zeros(6), laying)
    apart = rs.group_factor(count, np.full(6, 0.5), laying)
    assert rs.grouping_uses_spacing == (not np.allclose(touching, apart))


def test_iec_grouping_changes_with_spacing_and_nec_grouping_does_not():
    iec, nec = get_rules("iec"), get_rules("nec")
    assert iec.grouping_uses_spacing and not nec.grouping_uses_spacing
    # 4 circuits: B.52.18 touching 0.60, 0.5 m 0.80; B.52.19 (B) touching 0.65, 0.5 m 0.80
    got = iec.group_factor(np.array([4.0] * 4), np.array([0.0, 0.5, 0.0, 0.5]), [0, 0, 1, 1])
    assert_allclose(got, [0.60, 0.80, 0.65, 0.80])
    # Table 310.15(C)(1): 6 conductors 0.80, 7 conductors 0.70, at any spacing
    got = nec.group_factor(
        np.array([6.0, 6.0, 7.0, 7.0]), np.array([0.0, 0.5, 0.0, 0.5]), [0, 1, 0, 1]
    )
    assert_allclose(got, [0.80, 0.80, 0.70, 0.70])


@pytest.mark.parametrize("name", rule_names())
def test_terminal_condition_declared_as_the_hook_gives_it(name):
    rs = get_rules(name)
    ten = size_from_label(["10 AWG"]) if name == "nec" else np.array([10.0])
    ins = "90C" if name == "nec" else "XLPE"
    got = rs.terminal_capacity_a(1, "Cu", ins, ten, DesignParams())
    assert rs.terminal_condition == (got is not None)


@pytest.mark.parametrize("name", rule_names())
def test_short_section_exception_declared_as_the_hook_gives_it(name):
    rs = get_rules(name)
    got = rs.short_section(np.array([2.0, 4.0]), np.array([100.0, 100.0]))
    assert rs.short_section_exception == (got is not None)
    if got is not None:  # 2 m ≤ 3.048 m and ≤ 9.8 m; 4 m > 10 ft
        assert got.tolist() == [True, False]


@pytest.mark.parametrize("name", rule_names())
def test_buried_review_declared_as_the_hook_gives_it(name):
    rs = get_rules(name)
    notes = [rs.buried_note(env) for env in ("D1", "D2", "D1+D2")]
    assert rs.buried_review == all(notes)
    assert rs.buried_review or not any(notes)


@pytest.mark.parametrize("name", rule_names())
def test_short_circuit_checked_declared_as_the_hook_gives_it(name):
    rs = get_rules(name)
    assert rs.short_circuit_checked == (rs.short_circuit_note() == "")


def test_iec_checks_the_withstand_and_nec_says_it_does_not():
    iec, nec = get_rules("iec"), get_rules("nec")
    assert iec.short_circuit_checked and iec.k_adiabatic("Cu", "XLPE", np.array([95.0]))[0] == 143
    assert not nec.short_circuit_checked and "not checked" in nec.short_circuit_note()
    assert nec.terminal_condition and not iec.terminal_condition
    assert nec.short_section_exception and not iec.short_section_exception
    assert nec.buried_review and not iec.buried_review


@pytest.mark.parametrize("name", rule_names())
def test_protection_per_size_declared_as_the_hook_gives_it(name):
    """NEC 2023 240.4(D): 10 AWG Cu protected at no more than 30 A (confirmed,
    REFERENCE_VALUES §10.1; calc/data/nec_2023_240_4_d_small_conductors.csv): with an
    ampacity of 35 A, a 25 A device protects it and a 35 A device does not. IEC has no per-size
    device check (433.1 through the design current)."""
    rs = get_rules(name)
    ten = size_from_label(["10 AWG"]) if name == "nec" else np.array([10.0])
    got = rs.conductor_protected(np.array([25.0, 35.0]), np.array([35.0, 35.0]), ten, "Cu")
    assert rs.protection_per_size == (got is not None)
    if got is not None:
        assert np.asarray(got).reshape(-1).tolist() == [True, False]
    # the engine checks it with the terminal-limited ampacity
    assert not rs.protection_per_size or rs.terminal_condition


def test_standard_size_is_the_nominal_size_a_value_stands_for():
    """IEC 60228:2004 Table 1's nominal cross-sections include 2.5 and 240 mm², not 3 or
    7 mm²: a value within a relative 1e-6 of a nominal size (one converted from other units)
    is that size, one 1e-4 off is none. NEC sizes are areas computed from their definitions
    (AWG diameters of ASTM B258, circular mils): each label's area is its size, while the area
    rounded as NEC 2023 Chapter 9 Table 8 prints it (10 AWG: 5.261 mm²) stands for none."""
    iec = get_rules("iec")
    got = iec.standard_size_mm2([2.5, 2.5 * (1 + 1e-9), 240.0, 3.0, 7.0, 2.5 * (1 + 1e-4)])
    assert_allclose(got, [2.5, 2.5, 240.0, np.nan, np.nan, np.nan], rtol=0, atol=0)
    nec = get_rules("nec")
    every = sizes_mm2()
    assert np.array_equal(nec.standard_size_mm2(every), every)
    labels = size_from_label(["10 AWG", "1/0 AWG", "250 kcmil"])
    assert np.array_equal(nec.standard_size_mm2(labels), labels)
    assert np.isnan(nec.standard_size_mm2(5.261))
