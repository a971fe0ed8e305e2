"""The NEC 2023 rule set's methods wired into the engine (calc.rules.nec.NecRules), each on small
hand-built inputs at the edges of its clause: equal values, the ends of the rating list, the
one-line texts a user reads.

Values (NFPA 70 NEC 2023; tags as in ../shared/REFERENCE_VALUES.md and calc/data):

* 690.8(A)(1)(a)(1): source-circuit maximum current I_max = 1.25 × Isc (confirmed);
* 690.9(A): a source-circuit device is needed where the other parallel circuits can feed more
  than the module's maximum series fuse (confirmed); 690.9(B)(1): rated ≥ 1.25 × I_max
  (confirmed), so ≥ 1.5625 × Isc;
* 240.6(A) standard ratings 15, 20, 25, 30 … 800, 1000 … 6000 A and the fuse-only 1, 3, 6, 10 A
  (confirmed);
* 240.4(B): the next higher standard rating may protect a conductor for devices ≤ 800 A; 240.4(C):
  above 800 A the device may not exceed the ampacity (confirmed);
* Table 310.15(C)(1): 1–3 current-carrying conductors 1.00, 4–6 0.80, 7–9 0.70, 10–20 0.50
  (confirmed);
* 310.14(A)(2) exception: 10 ft (3.048 m) or 10 % of the circuit length, whichever is less
  (confirmed, calc/data/nec_2023_rules.csv);
* Table 310.16 Cu 60/75/90 °C: 12 AWG 20/25/30 A, 10 AWG 30/35/40 A (confirmed); Table 310.17 Cu
  12 AWG 30/35/40 A, 10 AWG 40/50/55 A (from memory);
* 110.14(C)(1): "Unless the equipment is listed and marked otherwise, conductor ampacities used in
  determining equipment termination provisions shall be based on Table 310.16" (confirmed, as
  for calc.nec.ampacity.ampacity_a);
* 310.15(B)(1) ambient correction, 90 °C column: 26–30 °C 1.00 (confirmed).
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.engine import DesignParams, SizingInput, size_circuits
from calc.errors import InputError, UnknownOptionError
from calc.nec.sizes import size_from_label, size_label
from calc.rules.nec import NecRules

R = NecRules()
NAN = np.nan
INF = np.inf
FUSES = R.gpv_fuse_ratings_a()  # 240.6(A) with the fuse-only ratings
ASSUMED = (
    "max_fuse_a not given: source-circuit fuses assumed required from 3 parallel strings "
    "(690.9(A)); check the fuse against the module maximum series fuse rating"
)


def _sp(isc, n, ocpr, fixed, ratings=FUSES):
    return R.string_protection(
        np.asarray(isc, dtype=float),
        np.asarray(n, dtype=float),
        np.asarray(ocpr, dtype=float),
        np.asarray(fixed, dtype=float),
        ratings,
    )


# ---- 690.9(A)/(B) source-circuit fuses


def test_690_9_a_others_feeding_exactly_the_maximum_series_fuse_need_no_fuse():
    # Isc 8 A: I_max = 1.25 × 8 = 10 A (690.8(A)(1)(a)(1)); 3 in parallel: the other two feed
    # 2 × 10 = 20 A. Module maximum series fuse 20 A: not exceeded, no device (690.9(A));
    # 19.99 A: exceeded, a device ≥ 1.25 × 10 = 12.5 A → 15 A (240.6(A)) ≤ 19.99 A; 4 in parallel
    # feed 30 A > 29 A
    p = _sp([8.0, 8.0, 8.0], [3.0, 3.0, 4.0], [20.0, 19.99, 29.0], NAN)
    assert p.required.tolist() == [False, True, True]
    assert_allclose(p.fuse_a, [NAN, 15.0, 15.0])
    assert_allclose(p.lower_a, [12.5, 12.5, 12.5])
    assert_allclose(p.upper_a, [20.0, 19.99, 29.0])
    assert p.ok.tolist() == [True, True, True]
    assert p.note.tolist() == ["", "", ""]
    # one or two strings alone never need one (0 or 1 × 10 A ≤ 10 A)
    p = _sp([8.0, 8.0], [1.0, 2.0], [10.0, 10.0], NAN)
    assert p.required.tolist() == [False, False] and p.ok.all()


def test_690_9_b_a_rating_equal_to_1_25_i_max_fits_and_one_equal_to_the_maximum_fuse_too():
    # Isc 16 A: I_max 20 A, device ≥ 1.25 × 20 = 25 A exactly → the 25 A rating itself
    # (240.6(A)), which equals the module's maximum series fuse of the second circuit
    p = _sp([16.0, 16.0], [4.0, 4.0], [30.0, 25.0], NAN)
    assert p.required.all()
    assert_allclose(p.lower_a, [25.0, 25.0])
    assert_allclose(p.fuse_a, [25.0, 25.0])
    assert p.ok.tolist() == [True, True]
    # a maximum series fuse of 20 A: no 240.6(A) rating lies in 25 … 20 A
    p = _sp([16.0], [4.0], [20.0], NAN)
    assert np.isnan(p.fuse_a[0]) and not p.ok[0]
    assert p.note[0] == (
        "no 240.6(A) fuse rating within 1.25 × I_max 25.0 A … module maximum series fuse 20 A "
        "(690.9(B))"
    )


def test_690_9_b_ratings_given_in_any_order_and_the_end_of_the_list():
    # the given ratings are sorted; 25 A as the last of the list is still picked
    assert _sp([16.0], [4.0], [30.0], NAN, [35.0, 25.0, 15.0]).fuse_a.tolist() == [25.0]
    assert _sp([16.0], [4.0], [30.0], NAN, [20.0, 25.0]).fuse_a.tolist() == [25.0]
    # none ≥ 25 A in the list: no device, the circuit fails with the range in its note
    p = _sp([16.0], [4.0], [30.0], NAN, [15.0, 20.0])
    assert np.isnan(p.fuse_a[0]) and p.required[0] and not p.ok[0]
    assert p.note[0] == (
        "no 240.6(A) fuse rating within 1.25 × I_max 25.0 A … module maximum series fuse 30 A "
        "(690.9(B))"
    )


def test_a_fuse_fixed_by_the_combiner_is_held_to_the_same_range():
    # I_max 20 A: 25 A (= 1.25 × I_max) and 30 A (= the maximum series fuse) are within the range,
    # 20 A and 35 A are not; the fixed fuse is the circuit's fuse in every case
    p = _sp([16.0] * 4, [4.0] * 4, [30.0] * 4, [25.0, 30.0, 20.0, 35.0])
    assert_allclose(p.fuse_a, [25.0, 30.0, 20.0, 35.0])
    assert p.ok.tolist() == [True, True, False, False]
    assert p.note.tolist() == [
        "",
        "",
        "fixed fuse 20 A within 1.25 × I_max 25.0 A … module maximum series fuse 30 A (690.9(B))",
        "fixed fuse 35 A within 1.25 × I_max 25.0 A … module maximum series fuse 30 A (690.9(B))",
    ]
    # a fixed fuse where none is required (one string) is still the circuit's fuse
    p = _sp([16.0], [1.0], [30.0], [25.0])
    assert not p.required[0] and p.fuse_a.tolist() == [25.0] and p.ok[0] and p.note[0] == ""


def test_without_the_maximum_series_fuse_three_strings_need_fuses_and_the_note_says_so():
    # max_fuse_a not given: 2 in parallel cannot feed more than one string's own current, from 3
    # on a fuse is assumed required (the rule set's stated assumption); no upper limit
    p = _sp([8.0] * 3, [2.0, 3.0, 2.0], NAN, [NAN, NAN, 15.0])
    assert p.required.tolist() == [False, True, False]
    assert_allclose(p.fuse_a, [NAN, 15.0, 15.0])
    assert p.upper_a.tolist() == [INF, INF, INF]
    assert p.ok.tolist() == [True, True, True]
    assert p.note.tolist() == ["", ASSUMED, ASSUMED]
    # a fixed fuse below 1.25 × I_max: the assumption and the range, joined
    p = _sp([16.0], [3.0], NAN, [20.0])
    assert not p.ok[0]
    assert p.note[0] == (
        f"{ASSUMED}; fixed fuse 20 A within 1.25 × I_max 25.0 A … module maximum series fuse "
        "inf A (690.9(B))"
    )


def test_string_protection_broadcasts_scalars_and_returns_typed_arrays():
    p = R.string_protection(16.0, [1.0, 4.0, 4.0], 30.0, NAN, [25, 15, 20])
    assert p.required.tolist() == [False, True, True] and p.required.dtype == bool
    assert_allclose(p.fuse_a, [NAN, 25.0, 25.0])
    assert p.ok.dtype == bool and p.note.dtype.kind == "U"


# ---- 690.9(B) output-circuit device


def test_output_circuit_device_is_the_next_240_6_a_rating_from_1_5625_isc():
    # 1.25 × 1.25 × Isc: 192 A → 300 A exactly (a rating equal to it fits); 0.64 A → 1 A and
    # 4 A → 6.25 A → 10 A (fuse-only ratings); 3840 A → 6000 A, the largest; 3900 A → 6093.75 A:
    # none
    f = R.array_fuse(np.array([192.0, 0.64, 4.0, 3840.0, 3900.0]))
    assert_allclose(f.lower_a, [300.0, 1.0, 6.25, 6000.0, 6093.75])
    assert_allclose(f.fuse_a, [300.0, 1.0, 10.0, 6000.0, NAN])
    assert f.ok.tolist() == [True, True, True, True, False]
    assert f.note.tolist() == ["", "", "", "", "no 240.6(A) rating ≥ 1.25 × I_max"]
    assert f.upper_a.tolist() == [INF] * 5 and f.note.dtype.kind == "U"


def test_output_circuit_device_from_a_given_list_in_any_order():
    f = R.array_fuse(np.array([192.0, 200.0, 260.0]), [400, 300])
    assert_allclose(f.fuse_a, [300.0, 400.0, NAN])  # 300, 312.5 → 400, 406.25 → none
    assert f.ok.tolist() == [True, True, False]


def test_output_circuit_conductor_carries_the_backfeed_or_has_a_device():
    # 690.9(A): backfeed 390 A; an ampacity of exactly 390 A carries it; 378 A does not, and is
    # then ok only with a device
    c = R.array_cable_check([390.0, 378.0, 378.0], [390.0, 390.0, 390.0], [NAN, NAN, 400.0])
    assert c.needed.tolist() == [False, True, True]
    assert c.ok.tolist() == [True, False, True]
    assert c.note.tolist() == [
        "",
        "backfeed 390 A > ampacity 378 A and no device (690.9(A))",
        "",
    ]
    assert c.note.dtype.kind == "U"
    # an unknown ampacity never carries it
    assert R.array_cable_check([NAN], [390.0], [NAN]).ok.tolist() == [False]


# ---- inverter output breaker and 240.4


def test_inverter_output_breaker_is_the_next_rating_from_1_25_times_the_current():
    # 1.25 × 20 = 25 A (a rating equal to it); 160 → 200 A; 4800 → 6000 A, the largest; 4900 A →
    # 6125 A: none
    b = R.ac_breaker(np.array([20.0, 160.0, 4800.0, 4900.0]), "nec240.6a")
    assert_allclose(b.in_a, [25.0, 200.0, 6000.0, NAN])
    assert b.ok.tolist() == [True, True, True, False]
    assert b.note.tolist() == ["", "", "", "1.25 × I 6125.0 A above the largest rating 6000 A"]
    assert np.isnan(b.i2_a).all() and b.i2_a.shape == (4,)
    # the conductor needs the continuous current itself (690.8(B)(2)); floats whatever is given
    assert_allclose(b.iz_min_a, [20.0, 160.0, 4800.0, 4900.0])
    ints = R.ac_breaker([20, 160], "nec240.6a")
    assert ints.iz_min_a.dtype == float and ints.in_a.tolist() == [25.0, 200.0]
    # one current: arrays of one
    one = R.ac_breaker(20.0, "nec240.6a")
    assert one.in_a.tolist() == [25.0] and one.note.dtype.kind == "U"


def test_inverter_output_breaker_from_a_restricted_list():
    # the design's list [200, 100]: 1.25 × 160 = 200 A → 200 A (the last); 1.25 × 170 = 212.5 A →
    # none
    b = R.ac_breaker(np.array([160.0, 170.0, 60.0]), "nec240.6a", [200, 100])
    assert_allclose(b.in_a, [200.0, NAN, 100.0])
    assert b.note.tolist() == ["", "1.25 × I 212.5 A above the largest rating 200 A", ""]
    with pytest.raises(InputError) as e:
        R.ac_breaker(np.array([160.0]), "nec240.6a", [16], "ac_breaker_ratings_a")
    assert str(e.value) == (
        "ac_breaker_ratings_a: 16 A not in the NEC 2023 240.6(A) standard ratings"
    )
    with pytest.raises(InputError) as e:
        R.ac_breaker(np.array([160.0]), "nec240.6a", [16])
    assert str(e.value) == "breaker_ratings_a: 16 A not in the NEC 2023 240.6(A) standard ratings"
    with pytest.raises(UnknownOptionError) as e:
        R.ac_breaker(np.array([160.0]), "iec60898")
    assert str(e.value) == "breaker device must be one of 'nec240.6a'; got 'iec60898'"


def test_overload_check_1_25_times_the_current_and_240_4_b_c():
    ib = [20.0, 20.5, 640.0, 800.0, 20.0, 20.5, 800.0]
    inn = [25.0, 25.0, 800.0, 1000.0, 25.0, 25.0, 1000.0]
    iz = [25.0, 25.0, 750.0, 950.0, 19.0, 19.0, 1000.0]
    c = R.overload_check(np.array(ib), np.array(inn), np.array(iz), np.full(7, NAN))
    # 0: 25 A = 1.25 × 20 A and = the ampacity; 1: 25 A < 1.25 × 20.5 = 25.625 A;
    # 2: 800 A (≤ 800 A) is the next rating above 750 A (240.4(B)); 3: 1000 A > 800 A is the next
    # rating above 950 A but 240.4(C) needs ≤ the ampacity; 4: 25 A is not the next rating above
    # 19 A (20 A); 5: both fail; 6: 1000 A = the ampacity (240.4(C))
    assert c.ib_ok.tolist() == [True, False, True, True, True, False, True]
    assert c.iz_ok.tolist() == [True, True, True, False, False, False, True]
    assert c.ok.tolist() == [True, False, True, False, False, False, True]
    assert c.i2_ok.tolist() == [True] * 7 and c.i2_ok.dtype == bool
    assert c.note.tolist() == [
        "",
        "In 25 A < 1.25 × I 25.6 A",
        "",
        "In 1000 A does not protect ampacity 950.0 A (240.4)",
        "In 25 A does not protect ampacity 19.0 A (240.4)",
        "In 25 A < 1.25 × I 25.6 A; In 25 A does not protect ampacity 19.0 A (240.4)",
        "",
    ]
    assert c.note.dtype.kind == "U"
    # lists are read as numbers
    assert R.overload_check([20.0], [25.0], [25.0], [NAN]).ok.tolist() == [True]


def test_breaker_text_names_the_factor_and_240_4():
    assert R.breaker_text(300.0, 240.0, 310.0, "nec240.6a") == (
        "breaker 300 A (240.6(A)): ≥ 1.25 × 240 A continuous; conductor ampacity 310 A (240.4)"
    )


# ---- grouping, short sections, buried notes, design settings


def test_air_grouping_by_table_310_15_c_1_bunched_or_spaced_per_circuit():
    # no conductor counted is taken as one; a fractional count rounds up (3.5 → 4: 0.80)
    got = R.air_group_factor(np.array([0.0, 3.0, 3.5, 4.0, 9.0, 10.0]), "bunched")
    assert got.tolist() == [1.0, 1.0, 0.8, 0.8, 0.7, 0.5]
    # per circuit: spaced (not in a raceway, spacing maintained) takes no adjustment
    got = R.air_group_factor([20, 20, 7], np.array(["spaced", "bunched", "bunched"]))
    assert got.tolist() == [1.0, 0.5, 0.7]
    with pytest.raises(UnknownOptionError) as e:
        R.air_group_factor(np.array([4.0, 4.0]), np.array(["bunched", "stacked"]))
    assert str(e.value) == "air_arrangement must be one of 'bunched', 'spaced'; got 'stacked'"


def test_trench_grouping_counts_at_least_one_and_rounds_up():
    got = R.group_factor([0.0, 3.2, 9.0, 21.0], np.zeros(4), np.zeros(4, dtype=int))
    assert got.tolist() == [1.0, 0.8, 0.7, 0.45]  # Table 310.15(C)(1): 21–30 0.45 (confirmed)


def test_310_15_a_short_section_at_both_limits():
    # 10 % of the rest: 2.0 m of a 22 m circuit (rest 20 m → 2.0 m) is short, 2.1 m of 22 m
    # (rest 19.9 m → 1.99 m) is not; 10 ft: 3.048 m of 100 m is short, 3.06 m is not
    got = R.short_section([2.0, 2.1, 3.048, 3.06], [22.0, 22.0, 100.0, 100.0])
    assert got.tolist() == [True, False, True, False]


def test_buried_notes_name_the_installation_and_ask_for_review():
    tail = (
        ": NEC 2023 Table 310.16 at the ground temperature, the trench's conductors as one "
        "bundle; soil, depth and spacing not represented (no 310.14(B) calculation): review"
    )
    assert R.buried_note("D1") == "in duct" + tail
    assert R.buried_note("D2") == "direct-buried" + tail
    assert R.buried_note("D1+D2") == "in duct and direct-buried" + tail
    with pytest.raises(UnknownOptionError) as e:
        R.buried_note("air")
    assert str(e.value) == "buried environment must be one of 'D1', 'D2', 'D1+D2'; got 'air'"


def test_design_settings_110_14_c_and_the_buried_rating():
    for t in (None, 60, 75, 90):
        R.check_design(DesignParams(terminal_temp_c=t))
    with pytest.raises(InputError) as e:
        R.check_design(DesignParams(terminal_temp_c=80))
    assert str(e.value) == "terminal_temp_c must be 60, 75 or 90 (°C, 110.14(C)); got 80"
    with pytest.raises(UnknownOptionError) as e:
        R.check_design(DesignParams(buried_rating="soil"))
    assert str(e.value) == "buried_rating must be one of 'table', 'engineered'; got 'soil'"
    with pytest.raises(InputError) as e:
        R.check_design(DesignParams(buried_rating="engineered"))
    assert str(e.value) == (
        "buried_rating = 'engineered' (NEC 2023 310.14(B): IEC 60287 / Neher–McGrath) is "
        "not available yet: set 'table' (Table 310.16; each buried circuit noted for review)"
    )
    # 75 °C unless the equipment is marked otherwise (common practice), as a whole number
    assert R.terminal_c(DesignParams()) == 75
    assert R.terminal_c(DesignParams(terminal_temp_c=90.0)) == 90
    assert type(R.terminal_c(DesignParams(terminal_temp_c=90.0))) is int


def test_terminal_capacity_is_table_310_16_in_the_lower_of_the_two_columns():
    # 110.14(C): the termination's column, never above the insulation's; 10 AWG Cu in Table
    # 310.16: 60/75/90 °C 30/35/40 A
    ten = size_from_label(["10 AWG"])
    d75, d90 = DesignParams(), DesignParams(terminal_temp_c=90)
    assert R.terminal_capacity_a(0, "Cu", "90C", ten, d75).tolist() == [35.0]
    assert R.terminal_capacity_a(0, "Cu", "90C", ten, d90).tolist() == [40.0]
    assert R.terminal_capacity_a(0, "Cu", "60C", ten, d90).tolist() == [30.0]
    assert R.terminal_capacity_a(0, "Cu", "PV", ten, d90).tolist() == [40.0]
    # 690.8(B)(1): 1.25 × the maximum current
    assert_allclose(R.terminal_required_a([16.25, 195.0]), [20.3125, 243.75])


# ---- 110.14(C)(1): terminations rated from Table 310.16 also in free air


def test_terminal_capacity_in_free_air_is_table_310_16():
    # a conductor in free air is rated by Table 310.17, but its terminations by Table 310.16
    # (110.14(C)(1)): 10 AWG Cu at a 75 °C termination 35 A (Table 310.16), not 50 A (310.17)
    ten = size_from_label(["10 AWG"])
    assert R.terminal_capacity_a(0, "Cu", "90C", ten, DesignParams()).tolist() == [35.0]
    assert R.base_capacity_a(0, "Cu", "90C", 2, "air", ten, "").tolist() == [55.0]


def test_a_string_in_free_air_is_sized_for_its_terminations_by_table_310_16():
    # one source circuit, Isc 20 A, all of its 10 m in free air at 30 °C (310.15(B)(1) 1.00), alone
    # (2 conductors: no adjustment). 690.8(A): I_max = 25 A; (B)(2): 12 AWG in Table 310.17 at
    # 90 °C, 40 A ≥ 25 A; (B)(1): 1.25 × 25 = 31.25 A in the 75 °C column of Table 310.16 (110.14(C)
    # (1)): 12 AWG 25 A < 31.25 A, 10 AWG 35 A ≥ 31.25 A → 10 AWG. (Table 310.17's 75 °C column
    # would have let 12 AWG through: 35 A ≥ 31.25 A.)
    inp = SizingInput(
        kind=np.zeros(1, dtype=np.int8),
        cable_m=np.array([10.0]),
        air_m=np.array([10.0]),
        isc_a=np.array([20.0]),
        imp_a=np.array([19.0]),
        vmp_v=np.array([1000.0]),
    )
    d = DesignParams(insulation_array="90C", insulation_subarray="90C", insulation_ac="90C",
                     ac_breaker_device="nec240.6a", frequency_hz=60.0, air_temp_c=30.0)  # fmt: skip
    r = size_circuits(inp, d, "nec")
    assert r.governing_env[0] == "air"
    assert r.design_current_a[0] == pytest.approx(25.0)
    assert r.terminal_required_a[0] == pytest.approx(31.25)
    assert size_label(r.size_mm2[0]) == "10 AWG"
    assert r.terminal_ampacity_a[0] == 35.0
    assert r.ampacity_a[0] == pytest.approx(55.0)
    assert r.ok[0]


# ---- the other wired hooks


def test_short_circuit_note_says_the_withstand_is_not_checked():
    assert R.short_circuit_note() == (
        "short-circuit withstand not checked: NEC 2023 has no adiabatic table (ICEA P-32-382 "
        "not applied): review"
    )


def test_backfeed_of_sub_array_cables_counts_only_the_source_cables():
    # one output circuit (Isc 100 A) alone on its inverter input, with two sub-array circuits
    # (40 A, 60 A) below it: a fault on the 40 A one is fed by the rest, 1.25 × (100 − 40) = 75 A
    # (690.8(A) maximum currents), on the 60 A one by 1.25 × 40 = 50 A; the output circuit by none
    got = R.backfeed_a([100.0, 40.0, 60.0], [1, 1, 1], [True, False, False])
    assert_allclose(got, [0.0, 75.0, 50.0])


def test_bifacial_isc_takes_each_of_its_inputs():
    # the IEC rule set's design Isc (calc.protection.bifacial_isc_a): Isc (1 + φ G_rear/G_front)
    # (from memory), 14 × (1 + 0.8 × 0.1) = 15.12 A; a datasheet bifacial Isc where given; Isc
    # alone for a monofacial module (φ nan)
    got = R.bifacial_isc_a([14.0, 14.0, 14.0], [0.8, 0.8, NAN], 0.1, [NAN, 15.2, NAN])
    assert_allclose(got, [15.12, 15.2, 14.0])


def test_depth_factor_takes_the_shape_of_both_inputs():
    # Table 310.16 has no depth correction: ones, shaped as the depths and diameters broadcast
    assert R.depth_factor(np.array([0.5, 0.8, 1.0]), 0.04).tolist() == [1.0, 1.0, 1.0]
    assert R.depth_factor(0.8, np.array([0.02, 0.04])).tolist() == [1.0, 1.0]


def test_ambient_beyond_the_column_is_refused_in_one_line():
    # 310.15(B)(1): the 60 °C column has no factor above 55 °C, the 90 °C one above 85 °C
    # (its last row 81–85 °C; from memory): the message names the column's end
    with pytest.raises(InputError) as e:
        R.air_temp_factor(58.0, "60C")
    assert str(e.value) == (
        "NEC 2023 310.15(B)(1): no ambient correction for 60C conductors at 58 °C (the table "
        "corrects a 60 °C conductor up to 55 °C ambient)"
    )
    assert R.air_temp_factor(85.0, "PV") > 0
    with pytest.raises(InputError, match=r"at 87 °C \(the table corrects a 90 °C conductor up "):
        R.air_temp_factor(87.0, "PV")


def test_resistance_at_75_c_is_chapter_9_table_8():
    # Chapter 9 Table 8: 10 AWG stranded uncoated Cu 1.24 Ω/kft at 75 °C (confirmed); a missing
    # resistance stays unknown
    r20 = R.r20_ohm_km(0, "Cu", size_from_label(["10 AWG"]))[0]
    got = R.r_at_temp_ohm_km([r20, None], 75.0, "Cu")
    assert got[0] * 0.3048 == pytest.approx(1.24, rel=1e-12) and np.isnan(got[1])


# ---- missing numbers (None) are read as unknown (nan), never a TypeError


def test_missing_numbers_are_unknown_in_the_currents_and_protection():
    # 690.8(A): an unknown Isc or string count gives an unknown maximum current
    got = R.array_design_current_a([None, 13.0], [12, 12])
    assert np.isnan(got[0]) and got[1] == pytest.approx(195.0)
    assert_allclose(R.terminal_required_a([None, 16.25]), [NAN, 20.3125])
    got = R.string_design_current_a([13.0, 13.0, 13.0], [None, 3.0, 3.0], [NAN, None, 25.0])
    # an unknown count: unknown; an unknown fuse is no fuse: the others' 2 × 16.25 A; fused: 16.25
    assert np.isnan(got[0]) and got[1:].tolist() == [32.5, 16.25]
    # no device given: the conductor needs none to be protected (240.4 not applied)
    ten = size_from_label(["10 AWG"])
    assert R.conductor_protected([None], [1.0], ten, "Cu").tolist() == [True]


def test_missing_numbers_in_the_protection_checks_fail_safe():
    # an unknown ampacity, backfeed or device: the conductor is not shown to carry the backfeed
    c = R.array_cable_check([None, 378.0, 378.0], [390.0, None, 390.0], [NAN, NAN, None])
    assert c.needed.tolist() == [True, True, True] and c.ok.tolist() == [False] * 3
    # an unknown current, device or ampacity: not shown to be protected
    c = R.overload_check([None, 20.0, 20.0], [25.0, None, 25.0], [25.0, 25.0, None], NAN)
    assert c.ok.tolist() == [False, False, False]
    assert c.ib_ok.tolist() == [False, False, True] and c.iz_ok.tolist() == [True, False, False]
    # an unknown stretch or circuit length: not a short section (no exception taken)
    assert R.short_section([None, 2.0], [22.0, None]).tolist() == [False, False]
    # an unknown conductor count cannot be adjusted: refused in one line
    for call in (
        lambda: R.group_factor([None], 0.0, 0),
        lambda: R.air_group_factor([None], "bunched"),
    ):
        with pytest.raises(InputError, match="current-carrying conductors must be a whole number"):
            call()


def test_missing_numbers_in_the_source_circuit_fuse_decision():
    # string count unknown: nothing shows the others can backfeed, no fuse required
    p = R.string_protection([8.0], [None], [20.0], [NAN], FUSES)
    assert p.required.tolist() == [False] and p.ok.tolist() == [True]
    # maximum series fuse unknown: as not given (assumed required from 3 strings, noted)
    p = R.string_protection([8.0], [3.0], [None], [NAN], FUSES)
    assert p.required.tolist() == [True] and p.fuse_a.tolist() == [15.0]
    assert p.note.tolist() == [ASSUMED]
    # fixed fuse unknown: none fixed, one is chosen
    p = R.string_protection([8.0], [3.0], [19.0], [None], FUSES)
    assert p.fuse_a.tolist() == [15.0] and p.ok.tolist() == [True]
    # ratings written as text are read as numbers
    p = R.string_protection([16.0], [4.0], [30.0], [NAN], ["35", "25"])
    assert p.fuse_a.tolist() == [25.0]


# ---- comparisons hold within a relative 1e-9 (floating point), as the rule set's _REL


def test_limits_hold_within_a_relative_billionth():
    rel = 1e-9
    # 690.9(A): the other string feeds exactly the maximum series fuse × (1 + 1e-9): no fuse
    t = 20.0 * (1.0 + rel)
    isc = t / 1.25
    assert 1.25 * isc == t  # I_max is exactly that current
    assert R.string_protection([isc], [2.0], [20.0], [NAN], FUSES).required.tolist() == [False]
    # 690.9(B): a 25 A rating against a maximum series fuse 25 / (1 + 1e-9) still fits
    ocpr = 25.0 / (1.0 + rel)
    assert ocpr * (1.0 + rel) == 25.0
    p = R.string_protection([16.0], [4.0], [ocpr], [NAN], FUSES)
    assert p.fuse_a.tolist() == [25.0] and p.ok.tolist() == [True]
    # a fixed fuse at 1.25 × I_max × (1 − 1e-9) and one at the maximum fuse × (1 + 1e-9) fit
    p = R.string_protection(16.0, 4.0, 30.0, [25.0 * (1.0 - rel), 30.0 * (1.0 + rel)], FUSES)
    assert p.ok.tolist() == [True, True]
    # 240.4: a breaker 1.25 × I × (1 − 1e-9) is large enough; above 800 A one equal to the
    # ampacity × (1 + 1e-9) protects it
    c = R.overload_check([20.0, 800.0], [1.25 * 20.0 * (1.0 - rel), 1000.0 * (1.0 + rel)],
                         [25.0, 1000.0], NAN)  # fmt: skip
    assert c.ib_ok.tolist() == [True, True] and c.iz_ok.tolist() == [True, True]
    # 690.9(A): an ampacity of the backfeed × (1 − 1e-9) carries it
    assert R.array_cable_check([390.0 * (1.0 - rel)], [390.0], [NAN]).ok.tolist() == [True]
    # 310.14(A)(2): a stretch of 10 ft × (1 + 1e-9) is still short
    assert R.short_section([10 * 0.3048 * (1.0 + rel)], [100.0]).tolist() == [True]
