"""NEC 2023 Article 690: maximum current 690.8(A), conductor ampacity 690.8(B), OCPD 690.9(B),
maximum voltage 690.7 — hand-checked circuits computed here from the published tables.

Table values used (NEC 2023; confirmed unless marked): Table 310.16 Cu 12 AWG 25/30 A, 10 AWG
35/40 A (75/90 °C), 250 kcmil 255/290 A, 350 kcmil 310 A, 400 kcmil 335/380 A; 310.15(B)(1)
90 °C factors 0.87 (41–45 °C), 0.91 (36–40 °C); Table 310.15(C)(1) 0.80 for 4–6 conductors;
240.6(A) ratings; 240.4(D) 12 AWG Cu 20 A; Table 250.122; Table 690.7(A) (from memory).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import TableRangeError
from calc.nec.ampacity import ampacity_a
from calc.nec.protection import conductor_protected, egc_size_label, pv_ocpd
from calc.nec.pv import (
    conductor_ampacity_ok,
    max_voltage_v,
    output_circuit_max_current_a,
    required_table_ampacity_a,
    smallest_size_mm2,
    source_circuit_max_current_a,
    voc_table_factor,
)
from calc.nec.sizes import size_from_label, size_label

STRING = size_from_label(["12 AWG", "10 AWG", "8 AWG", "6 AWG"])
FEEDER_LABELS = ["6 AWG", "4 AWG", "2 AWG", "1/0 AWG", "2/0 AWG", "3/0 AWG", "4/0 AWG",
                 "250 kcmil", "300 kcmil", "350 kcmil", "400 kcmil", "500 kcmil"]  # fmt: skip
FEEDER = size_from_label(FEEDER_LABELS)


def test_source_circuit_maximum_current_690_8_a():
    # 1.25 × Isc; with 690.8(B)(1) the conductor needs 1.25 × 1.25 × Isc = 1.5625 × Isc
    assert source_circuit_max_current_a([13.0])[0] == pytest.approx(16.25)
    assert float(required_table_ampacity_a(16.25)) == pytest.approx(1.5625 * 13.0)  # 20.3125 A


def test_output_circuit_is_the_sum_of_its_source_circuits():
    src = source_circuit_max_current_a([13.0] * 12 + [10.0] * 3)
    out = output_circuit_max_current_a(src, [0] * 12 + [1] * 3)
    assert_allclose(out, [12 * 16.25, 3 * 12.5])


def test_source_circuit_by_hand_isc_13_a_45_c_four_conductors():
    i_max = 1.25 * 13.0  # 16.25 A
    # (B)(1) before correction, 75 °C terminal column: 1.25 × 16.25 = 20.3 A → 12 AWG (25 A)
    # (B)(2) after correction, 90 °C column: 16.25 / (0.87 × 0.80) = 23.3 A → 12 AWG (30 A)
    assert 1.25 * i_max <= 25 and i_max <= 30 * 0.87 * 0.80
    got = smallest_size_mm2(STRING, "Cu", [i_max], 90, 75, 45, 4)
    assert size_label(got).tolist() == ["12 AWG"]
    # OCPD 690.9(B): ≥ 1.25 × 16.25 = 20.3 A → 25 A (240.6(A)); the module allows 25 A
    ocpd = pv_ocpd([i_max], [25.0])
    assert ocpd.rating_a.tolist() == [25.0] and ocpd.ok.tolist() == [True]
    # 12 AWG: 240.4(D) caps it at 20 A, so the 25 A device does not protect it → 10 AWG
    # (10 AWG: 40 × 0.87 × 0.80 = 27.84 A ≥ 25 A, and 240.4(D) allows 30 A)
    amp12 = ampacity_a(STRING[:1], "Cu", 90, 45, 4, terminal_c=75)
    assert amp12[0] == pytest.approx(20.88)
    assert not conductor_protected([25.0], amp12, STRING[:1], "Cu")[0]
    got = smallest_size_mm2(STRING, "Cu", [i_max], 90, 75, 45, 4, ocpd_a=[25.0])
    assert size_label(got).tolist() == ["10 AWG"]
    # equipment grounding conductor for a 25 A device: 10 AWG Cu (Table 250.122, ≤ 60 A)
    assert egc_size_label([25.0], "Cu").tolist() == ["10 AWG"]


def test_output_circuit_by_hand_twelve_strings_40_c():
    i_max = 12 * 1.25 * 13.0  # 195 A
    # (B)(1) 75 °C column ≥ 1.25 × 195 = 243.75 A → 250 kcmil (255 A; 4/0 AWG 230 A is short)
    # (B)(2) 90 °C column × 0.91 ≥ 195 A: 250 kcmil 290 × 0.91 = 263.9 A
    got = smallest_size_mm2(FEEDER, "Cu", [i_max], 90, 75, 40, 3)
    assert size_label(got).tolist() == ["250 kcmil"]
    ocpd = pv_ocpd([i_max])
    assert ocpd.rating_a.tolist() == [250.0]  # ≥ 243.75 A
    amp = ampacity_a(got, "Cu", 90, 40, 3, terminal_c=75)  # min(263.9, 255) = 255 A
    assert amp[0] == pytest.approx(255.0)
    assert conductor_protected(ocpd.rating_a, amp, got, "Cu")[0]
    assert egc_size_label(ocpd.rating_a, "Cu").tolist() == ["4 AWG"]  # ≤ 300 A


def test_inverter_output_circuit_by_hand_next_size_up():
    # 690.8(A)(3): the inverter's continuous output current, here 250 A (an invented inverter)
    i_max = 250.0
    # (B)(1) 75 °C ≥ 312.5 A → 400 kcmil (335 A; 350 kcmil 310 A is short)
    got = smallest_size_mm2(FEEDER, "Cu", [i_max], 90, 75, 30, 3)
    assert size_label(got).tolist() == ["400 kcmil"]
    ocpd = pv_ocpd([i_max])  # ≥ 312.5 A → 350 A
    assert ocpd.rating_a.tolist() == [350.0]
    amp = ampacity_a(got, "Cu", 90, 30, 3, terminal_c=75)  # min(380, 335) = 335 A < 350 A
    assert amp[0] == 335.0
    # 240.4(B): 350 A is the next standard rating above 335 A and ≤ 800 A → protected
    assert conductor_protected(ocpd.rating_a, amp, got, "Cu")[0]
    assert egc_size_label(ocpd.rating_a, "Cu").tolist() == ["3 AWG"]  # ≤ 400 A


def test_no_size_fits_gives_nan():
    assert np.isnan(smallest_size_mm2(STRING, "Cu", [200.0], 90, 75, 30, 3))[0]


def test_conductor_rule_both_conditions():
    s = size_from_label(["10 AWG"])
    # 10 AWG: 75 °C 35 A, 90 °C 40 A. I = 28 A: (B)(1) 35 ≥ 35 ok; (B)(2) at 55 °C 40 × 0.76 =
    # 30.4 ≥ 28 ok. I = 28.1 A fails (B)(1); I = 25 A at 65 °C fails (B)(2): 40 × 0.65 = 26 ≥ 25 ok,
    # with 4 conductors 26 × 0.8 = 20.8 < 25
    assert conductor_ampacity_ok(s, "Cu", 28.0, 90, 75, 55, 3)[0]
    assert not conductor_ampacity_ok(s, "Cu", 28.1, 90, 75, 55, 3)[0]
    assert conductor_ampacity_ok(s, "Cu", 25.0, 90, 75, 65, 3)[0]
    assert not conductor_ampacity_ok(s, "Cu", 25.0, 90, 75, 65, 4)[0]


def test_max_voltage_690_7_coefficient_method_by_hand():
    # 24 modules, Voc 49.5 V, β = −0.27 %/K, lowest expected ambient −10 °C:
    # 24 × 49.5 × (1 + 0.0027 × 35) = 1300.27 V (exceeds a 1000 V rating, within 1500 V)
    assert float(max_voltage_v(49.5, 24, -10.0, -0.27)) == pytest.approx(24 * 49.5 * 1.0945)


def test_max_voltage_690_7_table_alternative():
    # Table 690.7(A) (from memory except 1.02): −10 °C → 1.14 (row −6 to −10)
    assert float(max_voltage_v(49.5, 24, -10.0)) == pytest.approx(24 * 49.5 * 1.14)
    # a nan coefficient falls back to the table
    got = max_voltage_v([49.5, 49.5], 24, -10.0, [-0.27, np.nan])
    assert_allclose(got, [24 * 49.5 * 1.0945, 24 * 49.5 * 1.14])


def test_table_690_7_a_factors_from_memory():
    # NEC 2023 Table 690.7(A): 24 to 20 °C 1.02 … −36 to −40 °C 1.25 (from memory)
    upper = [24, 19, 14, 9, 4, -1, -6, -11, -16, -21, -26, -31, -36]
    want = [1.02, 1.04, 1.06, 1.08, 1.10, 1.12, 1.14, 1.16, 1.18, 1.20, 1.21, 1.23, 1.25]
    assert_allclose(voc_table_factor(upper), want)
    assert_allclose(voc_table_factor(np.array(upper) - 4), want)
    # between rows: the colder row; at and above 25 °C no correction
    assert voc_table_factor([19.5, 25.0, 30.0]).tolist() == [1.04, 1.0, 1.0]
    with pytest.raises(TableRangeError):
        voc_table_factor([-41.0])
