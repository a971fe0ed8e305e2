"""Remedies under ``rules = "nec"`` for a device that does not protect its conductor (NFPA 70
NEC 2023 240.4), on small circuits built by hand (tests/calc/test_nec_engine's builders).

Expected values from the NEC 2023 tables as published (``../shared/REFERENCE_VALUES.md`` §4.3
and §10.1; calc/data's public reproductions):

* Table 310.16, Cu, ≤ 3 current-carrying conductors, 30 °C (confirmed), 75/90 °C: 10 AWG 35/40 A,
  8 AWG 50/55 A, 1 AWG 130/145 A, 1/0 AWG 150/170 A, 1000 kcmil 545/615 A;
* 310.15(B)(1), 90 °C column, 16–20 °C: 1.08 (confirmed);
* Table 310.15(C)(1): 7–9 current-carrying conductors 0.70, 10–20 0.50, 21–30 0.45;
* 690.8(A)(1)(a)(1) I_max = 1.25 × Isc; 690.9(B) device ≥ 1.25 × I_max; 240.6(A) standard
  ratings … 20, 25 … 100, 110, 125 … 450, 500, 600 A (confirmed); 240.4(B): the next standard
  rating above the ampacity, ≤ 800 A; 240.4(D) 10 AWG Cu ≤ 30 A;
* Chapter 9 Table 9 has no 700, 800 and 900 kcmil rows (confirmed, calc/data).

Every circuit is invented.
"""

from __future__ import annotations

import numpy as np

import calc
from calc import protection_failures
from calc.nec.sizes import size_from_label, size_label
from routeplan.pipeline import MAX_PARALLEL
from routeplan.remedy import WhatIfs, remedies
from tests.calc.test_nec_engine import _ac, _dc, _design, _inp

UNPROTECTED = "its overcurrent device does not protect the conductor (240.4)"


def _combiner_10_awg():
    """12 source circuits (Isc 13 A, maximum series fuse 25 A) in one raceway, strings allowed
    10 AWG only; the output circuit alone in a second raceway."""
    strings = [_dc(0, 30.0, 13.0, 12.0, 1200.0, parent=12) for _ in range(12)]
    array = _dc(1, 100.0, 13.0, 12.0, 1200.0, n_strings=12.0)
    inp = _inp([*strings, array], [(1, 12), (1, 1)], [*((i, 0) for i in range(12)), (12, 1)])
    d = _design(ground_temp_c=20.0, sizes_string_mm2=tuple(size_from_label(["10 AWG"])))
    return inp, d


def _three_ac(i_cont_a: float, size: str):
    """Three inverter output circuits (Cu, three-phase, continuous current ``i_cont_a``) in one
    raceway in the ground at 20 °C, one size allowed, one set."""
    kva = i_cont_a * 800.0 * np.sqrt(3) / 1e3
    inp = _inp([_ac(60.0, kva, 800.0, i_cont_a) for _ in range(3)], [(1, 3)], [(i, 0) for i in
               range(3)])  # fmt: skip
    d = _design(ground_temp_c=20.0, max_parallel=1, material_ac="Cu",
                sizes_ac_mm2=tuple(size_from_label([size])))  # fmt: skip
    return inp, d


def _remedies(inp, d, r, ids):
    n = len(ids)
    return remedies(inp, d, "nec", r, np.array(ids), np.array(["seg"] * n), np.array(["T1", "T2"]),
                    MAX_PARALLEL)  # fmt: skip


def test_source_circuit_not_protected_is_given_the_next_size():
    inp, d = _combiner_10_awg()
    r = calc.size_circuits(inp, d, "nec")
    # 10 AWG carries I_max: (2) 40 × 1.08 × 0.45 (24 conductors) = 19.44 A ≥ 16.25 A and (1)
    # 1.25 × 16.25 = 20.31 A ≤ 35 A; but the 690.9 fuse, 1.25 × 16.25 → 25 A, is above 19.44 A
    # and not the next 240.6(A) rating above it (20 A): 240.4 fails
    s = 0
    assert not r.ok[s] and r.fuse_a[s] == 25.0
    assert np.isclose(r.ampacity_a[s], 40 * 1.08 * 0.45)
    assert not calc.failure_causes(r)["capacity"][s] and not calc.failure_causes(r)["drop"][s]
    assert protection_failures(r, "nec")[:12].all() and not protection_failures(r, "nec")[12]
    ids = [f"S{i}" for i in range(12)] + ["A"]
    out = _remedies(inp, d, r, ids)
    # 8 AWG: 55 × 1.08 × 0.45 = 26.73 A ≥ 25 A, protected (240.4(D) does not cap 8 AWG)
    assert out[s] == (
        f"{UNPROTECTED}; limited by largest size in design.sizes_mm2.string (10 AWG); "
        'passes with 8 AWG (add "8 AWG" to design.sizes_mm2.string)'
    )
    assert out[12] == ""


def test_inverter_output_circuit_not_protected_takes_a_larger_size():
    inp, d = _three_ac(100.0, "1 AWG")
    r = calc.size_circuits(inp, d, "nec")
    # breaker 1.25 × 100 = 125 A (240.6(A)); 1 AWG: (1) 130 A ≥ 125 A, (2) 145 × 1.08 × 0.70
    # (9 conductors) = 109.6 A ≥ 100 A; 240.4: 125 A > 109.6 A and the next rating above it is
    # 110 A → not protected
    assert (r.ac_breaker_a == 125.0).all() and not r.ok.any()
    assert np.allclose(r.ampacity_a, 145 * 1.08 * 0.70)
    assert protection_failures(r, "nec").all()
    out = _remedies(inp, d, r, ["AC1", "AC2", "AC3"])
    # 1/0 AWG: 170 × 1.08 × 0.70 = 128.5 A ≥ 125 A
    assert out[0] == (
        f"{UNPROTECTED}; limited by largest size in design.sizes_mm2.ac (1 AWG), "
        'design.max_parallel (1); passes with 1/0 AWG (add "1/0 AWG" to design.sizes_mm2.ac)'
    )


def test_inverter_output_circuit_at_the_largest_size_takes_more_sets():
    inp, d = _three_ac(420.0, "1000 kcmil")
    r = calc.size_circuits(inp, d, "nec")
    # breaker 1.25 × 420 = 525 A → 600 A; 1000 kcmil: (1) 545 A ≥ 525 A, (2) 615 × 1.08 × 0.70 =
    # 464.9 A ≥ 420 A; 240.4: the next rating above 464.9 A is 500 A, not 600 A → not protected
    assert (r.ac_breaker_a == 600.0).all() and not r.ok.any()
    assert protection_failures(r, "nec").all()
    # no NEC size is larger: more sets. 2 × 1000 kcmil, 18 conductors (0.50):
    # 2 × 615 × 1.08 × 0.50 = 664.2 A ≥ 600 A
    out = _remedies(inp, d, r, ["AC1", "AC2", "AC3"])
    assert out[0] == (
        f"{UNPROTECTED}; limited by largest size in design.sizes_mm2.ac (1000 kcmil), "
        "design.max_parallel (1); passes with 2 × 1000 kcmil (design.max_parallel = 2)"
    )


def test_larger_ac_sizes_are_those_table_9_has():
    # the remedies' candidates for a.c. circuits: Chapter 9 Table 9 has no 700-900 kcmil rows
    d = _design(material_ac="Cu", sizes_ac_mm2=tuple(size_from_label(["500 kcmil"])))
    more = size_label(calc.larger_sizes_mm2(calc.KIND_AC, d, "nec")).tolist()
    assert more == ["600 kcmil", "750 kcmil", "1000 kcmil"]
    # d.c. output circuits use Table 8 only: every larger size
    d = _design(sizes_array_mm2=tuple(size_from_label(["500 kcmil"])))
    more = size_label(calc.larger_sizes_mm2(calc.KIND_ARRAY, d, "nec")).tolist()
    assert more == ["600 kcmil", "700 kcmil", "750 kcmil", "800 kcmil", "900 kcmil", "1000 kcmil"]


def test_no_trench_spacing_is_offered_under_nec():
    # 12 source circuits limited to 12 AWG: (2) 30 × 1.08 × 0.45 (24 conductors) = 14.58 A
    # < 16.25 A fails on capacity through the adjustment; Table 310.15(C)(1) counts the trench's
    # conductors as one bundle whatever their spacing, so only a larger size is offered
    inp, d = _combiner_10_awg()
    d = _design(ground_temp_c=20.0, sizes_string_mm2=tuple(size_from_label(["12 AWG"])))
    r = calc.size_circuits(inp, d, "nec")
    assert calc.failure_causes(r)["capacity"][:12].all() and r.factor_group[0] == 0.45
    out = _remedies(inp, d, r, [f"S{i}" for i in range(12)] + ["A"])
    assert "spacing_m" not in out[0] and UNPROTECTED not in out[0]
    assert out[0].startswith("governed by seg; limited by largest size in design.sizes_mm2.string")
    assert "passes with " in out[0]


def test_an_unlisted_design_takes_the_nec_default_sizes_as_its_list():
    # test_inverter_output_circuit_at_the_largest_size_takes_more_sets with no a.c. list in the
    # design: the NEC default list (6 AWG to 1000 kcmil) is the list, so the sets' size is not
    # a size to add. 2 sets, 18 conductors (0.50), 90 °C column at 16–20 °C (1.08):
    # 500 kcmil 2 × 430 × 1.08 × 0.50 = 464.4 A, the next 240.6(A) rating above it 500 A < 600 A:
    # not protected (240.4(B)); 600 kcmil 2 × 475 × 1.08 × 0.50 = 513 A, the next rating above
    # it 600 A: protected, and 420 A ≤ 513 A (Table 310.16 Cu 90 °C, 500 kcmil 430 A and
    # 600 kcmil 475 A, confirmed)
    inp, _ = _three_ac(420.0, "1000 kcmil")
    d = _design(ground_temp_c=20.0, max_parallel=1, material_ac="Cu")
    assert size_label(calc.size_list_mm2(calc.KIND_AC, d, "nec"))[[0, -1]].tolist() == [
        "6 AWG",
        "1000 kcmil",
    ]
    r = calc.size_circuits(inp, d, "nec")
    assert size_label(r.size_mm2).tolist() == ["1000 kcmil"] * 3 and not r.ok.any()
    assert _remedies(inp, d, r, ["AC1", "AC2", "AC3"])[0] == (
        f"{UNPROTECTED}; limited by largest size in design.sizes_mm2.ac (1000 kcmil), "
        "design.max_parallel (1); passes with 2 × 600 kcmil (design.max_parallel = 2)"
    )


def test_no_spacing_whatif_is_sized_under_nec():
    # the 12 source circuits of test_no_trench_spacing_is_offered_under_nec: Table
    # 310.15(C)(1) counts the trench's conductors whatever their spacing, so the remedies size
    # no spacing what-if (only the larger sizes, more sets and both)
    inp, _ = _combiner_10_awg()
    d = _design(ground_temp_c=20.0, sizes_string_mm2=tuple(size_from_label(["12 AWG"])))
    r = calc.size_circuits(inp, d, "nec")
    whatifs = WhatIfs("nec")
    ids = np.array([f"S{i}" for i in range(12)] + ["A"])
    remedies(inp, d, "nec", r, ids, np.array(["seg"] * 13), np.array(["T1", "T2"]),
             MAX_PARALLEL, whatifs)  # fmt: skip
    assert whatifs.kept and not [k for k in whatifs.kept if "spacing" in k]
