"""The NEC 2023 rule set class (calc.rules.nec.NecRules): the methods no other test called, the
a.c. resistance factor's shapes and frequencies, the rating lists, and the exact one-line refusals.

Values: NEC 2023 310.15(B)(1) ambient factors (confirmed: 0.96 at 31–35 °C for 90 °C, 0.82 at
41–45 °C for 75 °C, 1.15 at 16–20 °C for 60 °C); Chapter 9 Table 9 X_L 250 kcmil 0.041 Ω/kft in PVC
conduit, R 500 kcmil Cu 0.027 Ω/kft (PVC) and Table 8 0.0258 Ω/kft (confirmed); 240.6(A) standard
ratings with the fuse-only 1, 3, 6, 10 A (confirmed); 690.8(A) (confirmed). a.c. current of an
inverter: I = S / (√3 · U) three-phase, S / U single-phase (the definition of apparent power).

The refusal texts are what a user reads in the one-line failure; each names what is missing and
why (calc/rules/nec.py).
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError, UnknownOptionError
from calc.nec.sizes import size_from_label
from calc.rules.nec import NecRules

FT = 0.3048
R = NecRules()
S500 = size_from_label(["500 kcmil"])
RATIO_500 = 0.027 / 0.0258  # Table 9 PVC / Table 8, 500 kcmil Cu, both at 75 °C


def test_temperature_factors_in_the_ground_follow_310_15_b_1():
    assert R.ground_temp_factor(35.0, "90C") == 0.96
    assert R.ground_temp_factor(45.0, "75C") == 0.82
    assert R.ground_temp_factor(20.0, "60C") == 1.15
    assert R.ground_temp_factor(35.0, "PV") == 0.96  # PV wire: 90 °C (from memory)


def test_reactance_is_table_9_in_pvc_conduit():
    got = R.reactance_ohm_km(size_from_label(["250 kcmil"]), "90C", np.array([3]))
    assert got[0] * FT == pytest.approx(0.041)


def test_inverter_currents_from_the_apparent_power():
    # 250 kVA at 480 V three-phase: 250,000 / (√3 × 480) = 300.7 A; 10 kVA at 240 V: 41.67 A
    got = R.ac_current_a(np.array([250.0, 10.0]), np.array([480.0, 240.0]), np.array([3, 1]))
    assert_allclose(got, [250e3 / (math.sqrt(3) * 480.0), 10e3 / 240.0])
    # 690.8(A)(3): the inverter's continuous output current rating where given, else the rated
    got = R.ac_max_current_a(
        np.array([250.0, 250.0]),
        np.array([480.0, 480.0]),
        np.array([3, 3]),
        np.array([320.0, np.nan]),
    )
    assert_allclose(got, [320.0, 250e3 / (math.sqrt(3) * 480.0)])


def test_array_current_of_an_unknown_string_count_is_unknown():
    got = R.array_design_current_a(np.array([13.0, 13.0]), [12, None])
    assert got[0] == pytest.approx(195.0) and np.isnan(got[1])


def test_ac_resistance_factor_takes_the_shape_of_all_three_inputs():
    one = np.array([1.0])
    # sizes carry the shape
    got = R.ac_resistance_factor(np.repeat(S500, 2), "Cu", 1.0, 60.0, np.array(3))
    assert_allclose(got, [RATIO_500] * 2)
    # the resistance carries it
    got = R.ac_resistance_factor(S500[0], "Cu", np.ones(2), 60.0, np.array(3))
    assert got.shape == (2,)
    assert_allclose(got, [RATIO_500] * 2)
    # the phases carry it
    got = R.ac_resistance_factor(S500[0], "Cu", 1.0, 60.0, np.array([3, 1]))
    assert_allclose(got, [RATIO_500] * 2)
    # d.c. only: ones of that shape
    assert (
        R.ac_resistance_factor(S500[0], "Cu", np.ones(3), 60.0, np.array(0)).tolist() == [1.0] * 3
    )
    assert R.ac_resistance_factor(S500, "Cu", one, 60.0, np.array([0])).dtype == float


def test_dc_circuits_need_no_table_9_and_mix_with_ac_ones():
    # d.c.: no skin effect, R_ac/R_dc = 1 — also for sizes Table 9 lacks (700 kcmil)
    s700 = size_from_label(["700 kcmil"])
    assert R.ac_resistance_factor(s700, "Cu", np.array([1.0]), 60.0, np.array([0])).tolist() == [
        1.0
    ]
    # a d.c. and a 60 Hz circuit together
    s = np.repeat(S500, 2)
    got = R.ac_resistance_factor(s, "Cu", np.ones(2), 60.0, np.array([0, 3]))
    assert got.dtype == float
    assert got[0] == 1.0 and got[1] == pytest.approx(RATIO_500)


def test_every_frequency_other_than_60_hz_is_refused_however_low():
    for f in (50.0, 16.7, 0.5):
        with pytest.raises(InputError) as e:
            R.ac_resistance_factor(S500, "Cu", np.array([1.0]), f, np.array([3]))
        assert str(e.value) == (
            "rules 'nec' (NEC 2023): a.c. resistance is from Chapter 9 Table 9, for 60 Hz: "
            "set frequency_hz = 60"
        )


def test_sizes_table_9_lacks_are_refused():
    with pytest.raises(InputError) as e:
        R.ac_resistance_factor(
            size_from_label(["700 kcmil"]), "Cu", np.array([1.0]), 60.0, np.array([3])
        )
    assert str(e.value) == (
        "rules 'nec' (NEC 2023): a.c. resistance of 700, 800, 900 kcmil is not available yet: "
        "not in Chapter 9 Table 9"
    )


def test_rating_lists_of_240_6_a_and_their_restriction():
    assert R.gpv_fuse_ratings_a()[:5].tolist() == [1.0, 3.0, 6.0, 10.0, 15.0]
    assert R.breaker_ratings_a("nec240.6a", [200, 100]).tolist() == [100.0, 200.0]
    with pytest.raises(InputError, match=r"^fuse_ratings_a: 16 A not in the NEC 2023 240\.6"):
        R.gpv_fuse_ratings_a([16])
    with pytest.raises(InputError, match=r"^breaker_ratings_a: 16 A, 32 A not in the NEC 2023"):
        R.breaker_ratings_a("nec240.6a", [16, 100, 32])
    # a standard rating is matched within a relative 1e-9 only
    for near in (100.0005, 15.00000002, None):
        with pytest.raises(InputError):
            R.breaker_ratings_a("nec240.6a", [near])


def test_unknown_options_are_refused_naming_the_setting():
    s = size_from_label(["4/0 AWG"])
    with pytest.raises(UnknownOptionError, match=r"^insulation must be one of '90C', '75C', '60C'"):
        R.theta_max_c("XLPE", "air")
    with pytest.raises(UnknownOptionError, match=r"^environment must be one of 'air', 'D1', 'D2'"):
        R.base_capacity_a(1, "Cu", "90C", 3, "D3", s, "")
    with pytest.raises(UnknownOptionError, match=r"^breaker device must be one of 'nec240\.6a'"):
        R.breaker_ratings_a("iec60898")


NOT_YET = "rules 'nec' (NEC 2023): {} is not available yet: {}"
A = np.array([1.0])
# the parts the wired rule set still refuses (calc/rules/nec.py)
REFUSALS = [
    (lambda: R.k_adiabatic("Cu", "90C", A), "adiabatic short-circuit k",
     "the NEC has no such table"),
    (lambda: R.i2_factor("nec240.6a"), "conventional operating current I2",
     "an IEC 60364-4-43 concept"),
]  # fmt: skip


@pytest.mark.parametrize(("call", "what", "why"), REFUSALS, ids=[r[1] for r in REFUSALS])
def test_each_part_not_available_yet_is_refused_in_one_line_with_its_reason(call, what, why):
    with pytest.raises(InputError) as e:
        call()
    assert str(e.value) == NOT_YET.format(what, why)
