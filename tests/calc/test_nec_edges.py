"""NEC 2023 functions of calc.nec at their edges: refusals that name the input, missing values,
table ends, tolerances, defaults and arrays of several circuits.

Values as in the other tests/calc/test_nec_*.py files (NEC 2023; "confirmed" = seen in the public
reproductions named in the data files' seen_in columns, "from memory" otherwise): Table 310.16 Cu
10 AWG 30/35/40 A, 12 AWG 20/25/30 A, 400 kcmil 280/335/380 A, 500 kcmil 320/380/430 A
(confirmed); Table 310.17 Cu 10 AWG 40/50/55 A (from memory); 310.15(B)(1) 90 °C column: 0.87 at
41–45 °C, 0.65 at 61–65 °C, none above 85 °C; 60 °C column: none above 55 °C (confirmed); Table
310.15(C)(1) 0.80 for 4–6 and 0.50 for 10–20 conductors (confirmed); 240.6(A) ratings with the
fuse-only 1, 3, 6, 10 A (confirmed); 240.4(B), (C), (D) (confirmed); Table 250.122 (confirmed).
calc follows one convention for missing numbers (tests/calc/test_drop_loss_missing_values.py): a
``None`` is read as nan — the result is nan, or the input is refused with an InputError — never a
TypeError.
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError, TableRangeError, UnknownOptionError
from calc.nec.ampacity import (
    adjustment_factor,
    ambient_factor,
    ambient_factor_formula,
    ampacity_a,
    nec_rule,
    short_section_max_m,
    table_ampacity_a,
)
from calc.nec.impedance import (
    ac_resistance_ohm_km,
    dc_resistance_ohm_km,
    effective_z_ohm_km,
    reactance_ohm_km,
    table8_alpha_per_k,
)
from calc.nec.protection import (
    conductor_protected,
    egc_size_label,
    egc_size_mm2,
    next_standard_rating_a,
    pv_ocpd,
    small_conductor_limit_a,
)
from calc.nec.pv import (
    conductor_ampacity_ok,
    max_voltage_v,
    output_circuit_max_current_a,
    required_table_ampacity_a,
    smallest_size_mm2,
    source_circuit_max_current_a,
    voc_table_factor,
)
from calc.nec.sizes import (
    awg_diameter_mm,
    kcmil_area_mm2,
    round_up_size_mm2,
    size_from_label,
    size_index,
    size_label,
    sizes_mm2,
)

TEN = size_from_label(["10 AWG"])
SMALL = size_from_label(["14 AWG", "12 AWG", "10 AWG"])
STRING = size_from_label(["12 AWG", "10 AWG", "8 AWG", "6 AWG"])
FEEDER_LABELS = ["6 AWG", "4 AWG", "2 AWG", "1/0 AWG", "2/0 AWG", "3/0 AWG", "4/0 AWG",
                 "250 kcmil", "300 kcmil", "350 kcmil", "400 kcmil", "500 kcmil"]  # fmt: skip
FEEDER = size_from_label(FEEDER_LABELS)
MATERIALS = "must be one of 'Cu', 'Al'; got 'Fe'"


# --- refusals name the setting and the value ---------------------------------------------------


def test_unknown_options_are_refused_naming_the_option():
    cases = [
        (lambda: table_ampacity_a(TEN, "Fe", 90), f"^material {MATERIALS}"),
        (lambda: table_ampacity_a(TEN, "Cu", 90, "tray"), "^location must be one of 'raceway'"),
        (lambda: table8_alpha_per_k("Fe"), f"^material {MATERIALS}"),
        (lambda: dc_resistance_ohm_km(TEN, "Fe"), f"^material {MATERIALS}"),
        (lambda: ac_resistance_ohm_km(TEN, "Fe", "pvc"), f"^material {MATERIALS}"),
        (lambda: ac_resistance_ohm_km(TEN, "Cu", "hdpe"), "^conduit must be one of 'pvc', 'al'"),
        (lambda: reactance_ohm_km(TEN, "hdpe"), "^conduit must be one of 'pvc', 'al', 'steel'"),
        (lambda: small_conductor_limit_a(TEN, "Fe"), f"^material {MATERIALS}"),
        (lambda: egc_size_label([20.0], "Fe"), f"^material {MATERIALS}"),
        (lambda: nec_rule("no_such_rule"), "^NEC rule must be one of 'source_isc_factor'"),
    ]
    for call, message in cases:
        with pytest.raises(UnknownOptionError, match=message):
            call()


def test_bad_numbers_are_refused_with_one_line_naming_them():
    cases = [
        (lambda: adjustment_factor([0]), "^number of current-carrying conductors must be a whole"),
        (lambda: ambient_factor([float("nan")], 90), r"^ambient temperature is missing \(NaN\)$"),
        (lambda: effective_z_ohm_km(0.2, 0.1, 0.0), r"^power factor must be in \(0, 1\]$"),
        (lambda: egc_size_label([0.0], "Cu"), "^overcurrent device rating must be > 0 A$"),
        (lambda: output_circuit_max_current_a([1.0], [-1]), "^output circuit numbers must be ≥ 0$"),
        (lambda: source_circuit_max_current_a([-1.0]), "^module Isc must be ≥ 0 A$"),
        (
            lambda: voc_table_factor([float("nan")]),
            r"^lowest expected ambient temperature is missing \(NaN\)$",
        ),
        (
            lambda: dc_resistance_ohm_km(TEN, "Al", coated=True),
            r"^coated conductors are copper \(Table 8 has no coated aluminium column\)$",
        ),
        (lambda: size_index([10.0]), "^size_mm2: 10 mm² is not an NEC size"),
        (lambda: size_index([5.0, 10.0, 5.0]), "^size_mm2: 5, 10 mm² is not an NEC size"),
        (
            lambda: size_from_label(["10 mm2", "10 AWG", "6 sq mm"]),
            "^size labels '10 mm2', '6 sq mm' are not 'N AWG'",
        ),
    ]
    for call, message in cases:
        with pytest.raises(InputError, match=message):
            call()
    with pytest.raises(TableRangeError, match=r"^Table 250\.122 ends at 6000 A$"):
        egc_size_label([6001.0], "Cu")
    with pytest.raises(
        TableRangeError, match=r"^Table 690\.7\(A\) ends at -40 °C; use the module's"
    ):
        voc_table_factor([-41.0])


def test_a_power_factor_above_one_is_refused():
    with pytest.raises(InputError):
        effective_z_ohm_km(0.2, 0.1, 1.2)


# --- missing values ------------------------------------------------------------------------------


def test_missing_numbers_give_nan_where_the_result_can_be_unknown():
    assert np.isnan(short_section_max_m([None])).all()
    assert np.isnan(ambient_factor_formula([None], 90)).all()
    assert np.isnan(dc_resistance_ohm_km(TEN, "Cu", [None])).all()
    assert np.isnan(next_standard_rating_a([None])).all()
    assert np.isnan(round_up_size_mm2([None])).all()
    assert np.isnan(awg_diameter_mm([None])).all()
    assert np.isnan(kcmil_area_mm2([None])).all()
    assert np.isnan(required_table_ampacity_a([None])).all()
    # 250.122: an EGC cannot be increased or capped by an unknown ungrounded size
    assert np.isnan(egc_size_mm2([100.0], "Cu", [None])).all()
    assert np.isnan(egc_size_mm2([100.0], "Cu", TEN, [None])).all()
    # an output circuit fed by a source circuit of unknown current has an unknown current
    got = output_circuit_max_current_a([16.25, None, 12.5], [0, 1, 1])
    assert got[0] == 16.25 and np.isnan(got[1])
    # 690.7(A): an unknown Voc, module count or (with the coefficient) temperature: unknown voltage
    got = max_voltage_v([49.5, None, 49.5, 49.5], [24, 24, None, 24], [-10, -10, -10, None], -0.27)
    assert got[0] == pytest.approx(24 * 49.5 * (1 + 0.0027 * 35)) and np.isnan(got[1:]).all()
    # no size fits an unknown current
    assert np.isnan(smallest_size_mm2(STRING, "Cu", [None], 90, 75, 30, 3)).all()


def test_a_missing_coefficient_falls_back_to_table_690_7_a():
    # 690.7(A): without the module's coefficient, Table 690.7(A) (−10 °C → 1.14, from memory)
    got = max_voltage_v(49.5, 24, -10.0, [None, -0.27])
    assert_allclose(got, [24 * 49.5 * 1.14, 24 * 49.5 * (1 + 0.0027 * 35)])


def test_missing_numbers_are_refused_where_a_rule_needs_them():
    # an unknown count, ambient, Isc, temperature, power factor or device rating is an input
    # error (one line), not a TypeError
    for call in (
        lambda: adjustment_factor([None]),
        lambda: ambient_factor([None], 90),
        lambda: source_circuit_max_current_a([None]),
        lambda: voc_table_factor([None]),
        lambda: effective_z_ohm_km(0.2, 0.1, [None]),
        lambda: egc_size_label([None], "Cu"),
        lambda: size_index([None]),
    ):
        with pytest.raises(InputError):
            call()


def test_unknown_currents_or_ratings_are_never_protected_or_ok():
    assert not conductor_protected([None], [30.0], TEN, "Cu")[0]
    assert not conductor_protected([30.0], [None], TEN, "Cu")[0]
    assert not conductor_ampacity_ok(TEN, "Cu", None, 90, 75, 30, 3)[0]
    p = pv_ocpd([None, 16.25], [25.0, None])
    assert p.ok.tolist() == [False, False]
    assert np.isnan(p.rating_a[0]) and p.rating_a[1] == 25.0


# --- table ends, tolerances ----------------------------------------------------------------------


def test_above_85_c_the_ambient_table_gives_no_factor():
    # 310.15(B)(1): the last row is 81–85 °C; a hotter ambient has no factor (nan)
    got = ambient_factor([86.0, 30.0, 120.0], 90)
    assert np.isnan(got[0]) and got[1] == 1.0 and np.isnan(got[2])


def test_the_formula_gives_no_factor_at_the_conductor_rating():
    # √((Tc − Ta') / (Tc − 30)) is 0 at Ta' = Tc: no current at all, given as nan (not usable)
    assert np.isnan(ambient_factor_formula(90.0, 90))
    assert float(ambient_factor_formula(89.0, 90)) == pytest.approx(math.sqrt(1 / 60))


def test_the_formula_takes_another_table_base():
    # 310.15(B) formula with Ta = 40 °C (tables based on 40 °C ambient): √((90 − 50)/(90 − 40))
    assert float(ambient_factor_formula(50.0, 90, 40.0)) == pytest.approx(math.sqrt(40 / 50))


def test_an_ambient_beyond_the_column_is_not_rescued_by_the_terminal_limit():
    # 60 °C conductor at 58 °C: the table has no factor; a 60 °C terminal column (30 A) must not
    # stand in for it
    assert np.isnan(ampacity_a(TEN, "Cu", 60, 58.0, 3, terminal_c=60)).all()


def test_ampacity_without_a_count_is_not_adjusted():
    # Tables 310.16/310.17 are for up to three current-carrying conductors: no adjustment
    assert ampacity_a(TEN, "Cu", 90, 30.0)[0] == 40.0
    # in free air, Table 310.17 (from memory: 10 AWG Cu 90 °C 55 A)
    assert ampacity_a(TEN, "Cu", 90, 30.0, location="free_air")[0] == 55.0


def test_690_8_b_in_free_air_uses_table_310_17_for_the_conductor():
    # 10 AWG Cu, 90 °C insulation and terminals, 32 A at 45 °C (0.87) with 4 conductors (0.80):
    # (B)(1) 1.25 × 32 = 40 A ≤ Table 310.16 90 °C 40 A (the terminals, 110.14(C)(1)) and
    # Table 310.17 55 A (from memory); (B)(2) in free air 55 × 0.696 = 38.3 A ≥ 32 A, in a raceway
    # 40 × 0.696 = 27.8 A < 32 A
    assert conductor_ampacity_ok(TEN, "Cu", 32.0, 90, 90, 45.0, 4, "free_air")[0]
    assert not conductor_ampacity_ok(TEN, "Cu", 32.0, 90, 90, 45.0, 4)[0]
    got = smallest_size_mm2(STRING, "Cu", [32.0, 32.0], 90, 90, 45.0, 4, "free_air")
    assert size_label(got).tolist() == ["10 AWG", "10 AWG"]
    assert size_label(smallest_size_mm2(STRING, "Cu", [32.0], 90, 90, 45.0, 4)).tolist() == [
        "8 AWG"
    ]
    # 75 °C insulation on 90 °C terminals, 30 A at 30 °C: (B)(1) 37.5 A ≤ Table 310.17 75 °C
    # 50 A (from memory) and Table 310.16 90 °C 40 A; in a raceway Table 310.16 75 °C 35 A < 37.5 A
    assert conductor_ampacity_ok(TEN, "Cu", 30.0, 75, 90, 30.0, 3, "free_air")[0]
    assert not conductor_ampacity_ok(TEN, "Cu", 30.0, 75, 90, 30.0, 3)[0]


def test_terminations_are_rated_from_table_310_16_also_in_free_air():
    # NEC 2023 110.14(C)(1): "conductor ampacities used in determining equipment termination
    # provisions shall be based on Table 310.16" unless the equipment is listed and marked
    # otherwise (confirmed in a public reproduction of the text). 10 AWG Cu 90 °C in free air
    # (Table 310.17: 55 A) on 75 °C terminals: limited to Table 310.16's 35 A, not 310.17's 50 A
    assert ampacity_a(TEN, "Cu", 90, 30.0, 3, "free_air", terminal_c=75)[0] == 35.0
    # 690.8(B)(1) at the terminals: 30 A needs 37.5 A > 35 A → not ok, also in free air
    assert not conductor_ampacity_ok(TEN, "Cu", 30.0, 90, 75, 30.0, 3, "free_air")[0]
    assert conductor_ampacity_ok(TEN, "Cu", 28.0, 90, 75, 30.0, 3, "free_air")[0]


def test_690_8_b_on_the_limit_of_both_conditions():
    # 10 AWG Cu, 90 °C terminals, 10 conductors (0.50): (B)(1) 40 ≥ 1.25 × 20; (B)(2) 40 × 0.50
    # = 20 ≥ 20 — both exactly met
    assert conductor_ampacity_ok(TEN, "Cu", 20.0, 90, 90, 30.0, 10)[0]
    assert not conductor_ampacity_ok(TEN, "Cu", 20.001, 90, 90, 30.0, 10)[0]


def test_690_8_b_without_a_count_is_three_conductors():
    # 10 AWG Cu at 65 °C (0.65): 40 × 0.65 = 26 ≥ 25 A with up to three conductors; four (0.80)
    # would give 20.8 A (tests/calc/test_nec_pv.py::test_conductor_rule_both_conditions)
    assert conductor_ampacity_ok(TEN, "Cu", 25.0, 90, 75, 65.0)[0]
    assert size_label(smallest_size_mm2(STRING, "Cu", [25.0], 90, 75, 65.0)).tolist() == ["10 AWG"]


def test_required_ampacity_with_only_one_factor():
    # 690.8(B)(2) with a correction only (0.58) or an adjustment only (0.50): 16.25 / factor
    assert float(required_table_ampacity_a(16.25, 0.58)) == pytest.approx(16.25 / 0.58)
    assert float(required_table_ampacity_a(16.25, adjustment=0.5)) == pytest.approx(32.5)


def test_sizes_match_within_a_relative_millionth_only():
    ten = float(TEN[0])
    assert size_index([ten * (1 + 0.9e-6)]).tolist() == [2]
    for off in (ten * 5e-6, ten * 1e-6 + 5e-9, 0.26):
        with pytest.raises(InputError):
            size_index([ten + off])


def test_one_unknown_size_among_known_ones_is_refused():
    with pytest.raises(InputError, match=r"^size_mm2: 10 mm²"):
        size_index([float(TEN[0]), 10.0])


def test_round_up_at_the_top_of_the_list():
    top = sizes_mm2()[-1]  # 1000 kcmil
    assert size_label(round_up_size_mm2([top])).tolist() == ["1000 kcmil"]
    got = round_up_size_mm2([top * 1.01, 600.0])
    assert got.dtype == float and np.isnan(got).all()


def test_labels_given_as_byte_strings_are_read_as_text():
    assert size_label(size_from_label(np.array([b"10 AWG", b"250 kcmil"]))).tolist() == [
        "10 AWG",
        "250 kcmil",
    ]


def test_table_250_122_for_the_small_fuse_ratings_and_the_top_within_tolerance():
    # 240.6(A) fuse-only ratings 1 and 10 A are in the first row (≤ 15 A): 14 AWG Cu, 12 AWG Al
    assert egc_size_label([1.0, 10.0], "Cu").tolist() == ["14 AWG", "14 AWG"]
    assert egc_size_label([1.0], "Al").tolist() == ["12 AWG"]
    # 6000 A computed with a rounding error (within the relative 1e-9) is still the last row
    assert egc_size_label([6000.0 * (1 + 1e-9)], "Cu").tolist() == ["800 kcmil"]


def test_egc_is_not_increased_when_the_conductors_are_the_minimum_size():
    # 250.122(B) applies only where the ungrounded conductors are increased
    eight, three = size_from_label(["8 AWG", "3 AWG"])
    assert egc_size_mm2([100.0], "Cu", [three], [three])[0] == pytest.approx(eight)


# --- 240.4 and 240.6(A) --------------------------------------------------------------------------


def test_240_4_c_above_800_a_a_device_equal_to_the_ampacity_protects():
    # 240.4(C): above 800 A the ampacity must be ≥ the rating; equal is enough
    big = size_from_label(["1000 kcmil"])
    assert conductor_protected([1000.0], [1000.0], big, "Cu")[0]
    # a non-standard (adjustable) rating equal to the ampacity: at the ampacity is protected
    # (240.4), though 52 A is no next standard rating (8 AWG: no 240.4(D) limit)
    eight = size_from_label(["8 AWG"])
    assert conductor_protected([52.0], [52.0], eight, "Cu")[0]


def test_fuse_only_ratings_in_the_next_rating_and_the_pv_device():
    # 240.6(A) adds 1, 3, 6, 10 A for fuses: 2 A → 3 A fuse; 690.9(B): 1.25 × 4 A = 5 A → 6 A
    assert next_standard_rating_a([2.0], fuses=True).tolist() == [3.0]
    assert next_standard_rating_a([2.0]).tolist() == [15.0]
    assert pv_ocpd([4.0], fuses=True).rating_a.tolist() == [6.0]
    assert pv_ocpd([4.0]).rating_a.tolist() == [15.0]


def test_a_module_limit_equal_to_the_rating_within_tolerance_is_met():
    # a maximum series fuse of 25 A given with a rounding error (25 / (1 + 1e-9)) allows 25 A
    assert pv_ocpd([16.25], [25.0 / (1 + 1e-9)]).ok.tolist() == [True]


# --- 690.8(A) ------------------------------------------------------------------------------------


def test_source_circuit_with_modules_in_parallel_and_small_or_zero_isc():
    # 690.8(A)(1)(a)(1): 1.25 × the sum of the parallel modules' Isc: 2 × 10 A → 25 A
    assert source_circuit_max_current_a([10.0], 2).tolist() == [25.0]
    assert source_circuit_max_current_a([0.0, 0.5]).tolist() == [0.0, 0.625]


def test_output_circuits_listed_in_full_and_circuit_numbers_as_floats():
    # an output circuit without source circuits carries 0 A; no source circuits, no currents
    assert output_circuit_max_current_a([16.25], [0], 3).tolist() == [16.25, 0.0, 0.0]
    assert output_circuit_max_current_a([], []).tolist() == []
    # circuit numbers read from a table as whole floats
    assert output_circuit_max_current_a([16.25, 12.5], [1.0, 0.0]).tolist() == [12.5, 16.25]


# --- the smallest size, several circuits at once -------------------------------------------------


def test_smallest_size_per_circuit_with_ambient_count_and_device_per_circuit():
    # circuit 1: 16.25 A at 45 °C, 4 conductors, 25 A device → 10 AWG (12 AWG: 240.4(D) 20 A);
    # circuit 2: 16.25 A at 30 °C, 3 conductors, 20 A device → 12 AWG (25 A, 30 A, 240.4(D) 20 A);
    # circuit 3: 100 A → no string size (6 AWG: 75 °C 65 A < 125 A) → nan
    got = smallest_size_mm2(
        STRING, "Cu", [16.25, 16.25, 100.0], 90, 75, [45.0, 30.0, 30.0], [4, 3, 3],
        ocpd_a=[25.0, 20.0, 125.0],
    )  # fmt: skip
    assert got[2] != got[2]  # nan
    assert size_label(got[:2]).tolist() == ["10 AWG", "12 AWG"]
    # a scalar device rating for every circuit
    got = smallest_size_mm2(STRING, "Cu", [16.25, 8.0], 90, 75, 30.0, 3, ocpd_a=20.0)
    assert size_label(got).tolist() == ["12 AWG", "12 AWG"]


def test_a_protected_size_must_still_carry_the_current():
    # 16.25 A on a 15 A device (both given): 14 AWG is protected (240.4(D) 15 A) but fails
    # 690.8(B)(1) (75 °C 20 A < 20.3 A) → 12 AWG
    got = smallest_size_mm2(SMALL, "Cu", [16.25], 90, 75, 30.0, 3, ocpd_a=[15.0])
    assert size_label(got).tolist() == ["12 AWG"]


def test_protection_uses_the_ampacity_after_the_terminal_limit():
    # 250 A on a 400 A device, 75 °C terminals: 400 kcmil is 380 A at 90 °C but 335 A at the
    # terminals (110.14(C)); 240.4(B) allows only 350 A above 335 A → not protected; 500 kcmil
    # (380 A at the terminals, next standard rating 400 A) is
    got = smallest_size_mm2(FEEDER, "Cu", [250.0], 90, 75, 30.0, 3, ocpd_a=[400.0])
    assert size_label(got).tolist() == ["500 kcmil"]


def test_candidate_sizes_and_ratings_given_as_text_are_read_as_numbers():
    # numbers read from a text file arrive as text; calc reads numeric arguments as float
    text = [f"{v!r}" for v in STRING.tolist()]
    got = smallest_size_mm2(text, "Cu", [16.25], 90, 75, "45", "4", ocpd_a=["25"])
    assert got.dtype == float and size_label(got).tolist() == ["10 AWG"]


def test_a_device_equal_to_the_ampacity_within_tolerance_protects():
    # 240.4: a device at the ampacity protects; a rating equal to it up to a rounding error
    # (relative 1e-9) counts as equal — 52 A is no standard rating, so 240.4(B) cannot help
    eight = size_from_label(["8 AWG"])
    assert conductor_protected([52.0 * (1 + 1e-9)], [52.0], eight, "Cu")[0]
    assert not conductor_protected([52.0 * (1 + 1e-8)], [52.0], eight, "Cu")[0]
