"""NEC 2023 ampacity: Tables 310.16 / 310.17, 310.15(B)(1), Table 310.15(C)(1), 110.14(C),
310.14(A)(2).

Published values transcribed below name their table; "confirmed" = seen in the public
reproductions listed in the data files' seen_in columns, "from memory" otherwise.
"""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError
from calc.nec.ampacity import (
    adjustment_factor,
    ambient_factor,
    ambient_factor_formula,
    ampacity_a,
    short_section_max_m,
    table_ampacity_a,
)
from calc.nec.sizes import size_from_label

SIZES = ["14 AWG", "12 AWG", "10 AWG", "8 AWG", "6 AWG", "4 AWG", "3 AWG", "2 AWG", "1 AWG",
         "1/0 AWG", "2/0 AWG", "3/0 AWG", "4/0 AWG", "250 kcmil", "300 kcmil", "350 kcmil",
         "400 kcmil", "500 kcmil", "600 kcmil", "700 kcmil", "750 kcmil", "800 kcmil",
         "900 kcmil", "1000 kcmil"]  # fmt: skip

# NEC 2023 Table 310.16, Cu 60/75/90 °C [A]: confirmed 14 AWG–600, 750, 1000 kcmil (2023-edition
# reproduction); 700, 800, 900 kcmil from memory (2014-and-later values)
T310_16_CU = [(15, 20, 25), (20, 25, 30), (30, 35, 40), (40, 50, 55), (55, 65, 75), (70, 85, 95),
              (85, 100, 115), (95, 115, 130), (110, 130, 145), (125, 150, 170), (145, 175, 195),
              (165, 200, 225), (195, 230, 260), (215, 255, 290), (240, 285, 320), (260, 310, 350),
              (280, 335, 380), (320, 380, 430), (350, 420, 475), (385, 460, 520), (400, 475, 535),
              (410, 490, 555), (435, 520, 585), (455, 545, 615)]  # fmt: skip
# NEC 2023 Table 310.16, Al 60/75/90 °C [A] (14 AWG not tabulated); same tags as Cu
T310_16_AL = [None, (15, 20, 25), (25, 30, 35), (35, 40, 45), (40, 50, 55), (55, 65, 75),
              (65, 75, 85), (75, 90, 100), (85, 100, 115), (100, 120, 135), (115, 135, 150),
              (130, 155, 175), (150, 180, 205), (170, 205, 230), (195, 230, 260), (210, 250, 280),
              (225, 270, 305), (260, 310, 350), (285, 340, 385), (315, 375, 425), (320, 385, 435),
              (330, 395, 445), (355, 425, 480), (375, 445, 500)]  # fmt: skip


@pytest.mark.parametrize("material,table", [("Cu", T310_16_CU), ("Al", T310_16_AL)])
@pytest.mark.parametrize("col,rating", [(0, 60), (1, 75), (2, 90)])
def test_table_310_16_every_cell(material, table, col, rating):
    got = table_ampacity_a(size_from_label(SIZES), material, rating, "raceway")
    want = [np.nan if row is None else row[col] for row in table]
    assert_allclose(got, want, equal_nan=True)


def test_table_310_16_is_the_2014_and_later_edition():
    # NEC 2014 changed Cu 14 AWG 60 °C 20 → 15 A and Cu 3 AWG 90 °C 110 → 115 A (the trap)
    s = size_from_label(["14 AWG", "3 AWG"])
    assert table_ampacity_a(s[:1], "Cu", 60).tolist() == [15.0]
    assert table_ampacity_a(s[1:], "Cu", 90).tolist() == [115.0]


def test_table_310_17_free_air_cells_from_memory():
    # NEC 2023 Table 310.17 (from memory): Cu 10 AWG 40/50/55, Cu 4/0 AWG 300/360/405,
    # Cu 500 kcmil 515/620/700, Al 4/0 AWG 235/280/315
    s = size_from_label(["10 AWG", "4/0 AWG", "500 kcmil"])
    for rating, want in ((60, [40, 300, 515]), (75, [50, 360, 620]), (90, [55, 405, 700])):
        assert table_ampacity_a(s, "Cu", rating, "free_air").tolist() == want
    assert table_ampacity_a(s[1:2], "Al", 90, "free_air").tolist() == [315.0]
    # free air rates higher than raceway for every tabulated cell
    allsz = size_from_label(SIZES)
    for m in ("Cu", "Al"):
        for r in (60, 75, 90):
            air, rac = (table_ampacity_a(allsz, m, r, loc) for loc in ("free_air", "raceway"))
            ok = ~np.isnan(rac)
            assert np.all(air[ok] > rac[ok])


# NEC 2023 310.15(B)(1), 30 °C base (confirmed): upper bound of the row → 60 / 75 / 90 °C factors
AMBIENT = [(10, 1.29, 1.20, 1.15), (15, 1.22, 1.15, 1.12), (20, 1.15, 1.11, 1.08),
           (25, 1.08, 1.05, 1.04), (30, 1.00, 1.00, 1.00), (35, 0.91, 0.94, 0.96),
           (40, 0.82, 0.88, 0.91), (45, 0.71, 0.82, 0.87), (50, 0.58, 0.75, 0.82),
           (55, 0.41, 0.67, 0.76), (60, None, 0.58, 0.71), (65, None, 0.47, 0.65),
           (70, None, 0.33, 0.58), (75, None, None, 0.50), (80, None, None, 0.41),
           (85, None, None, 0.29)]  # fmt: skip


@pytest.mark.parametrize("row", AMBIENT)
def test_ambient_table_every_row(row):
    t, *factors = row
    for rating, f in zip((60, 75, 90), factors, strict=True):
        got = ambient_factor([t, t - 4], rating)  # both ends of the 5-degree row
        assert_allclose(got, [np.nan if f is None else f] * 2, equal_nan=True)


def test_ambient_table_equals_the_310_15_b_formula_at_each_rows_upper_bound():
    # derived check: every tabulated factor is √((Tc − Ta)/(Tc − 30)) at the row's upper
    # temperature, rounded to two decimals (tolerance half a unit of the last digit)
    for t, *factors in AMBIENT:
        for tc, f in zip((60, 75, 90), factors, strict=True):
            if f is not None:
                assert abs(f - math.sqrt((tc - t) / (tc - 30))) <= 0.005 + 1e-12


def test_ambient_between_rows_takes_the_hotter_row_and_below_10_the_first():
    assert ambient_factor([30.2, 0.0, -20.0], 90).tolist() == [0.96, 1.15, 1.15]


def test_ambient_formula_by_hand():
    # 310.15(B): 90 °C conductor at 45 °C: √(45/60) = 0.8660
    assert float(ambient_factor_formula(45, 90)) == pytest.approx(math.sqrt(45 / 60))
    assert np.isnan(ambient_factor_formula(95, 90))


def test_adjustment_table_310_15_c_1():
    # NEC 2023 Table 310.15(C)(1) (confirmed): 4–6 80 %, 7–9 70 %, 10–20 50 %, 21–30 45 %,
    # 31–40 40 %, 41 and above 35 %; 1–3 conductors: no adjustment
    n = [1, 2, 3, 4, 6, 7, 9, 10, 20, 21, 30, 31, 40, 41, 200]
    want = [1, 1, 1, 0.8, 0.8, 0.7, 0.7, 0.5, 0.5, 0.45, 0.45, 0.4, 0.4, 0.35, 0.35]
    assert_allclose(adjustment_factor(n), want)
    with pytest.raises(InputError):
        adjustment_factor([0])
    with pytest.raises(InputError):
        adjustment_factor([2.5])


def test_corrected_and_adjusted_ampacity_by_hand():
    # 12 AWG Cu 90 °C (Table 310.16: 30 A) at 45 °C (0.87) with 4 current-carrying conductors (0.80)
    s = size_from_label(["12 AWG"])
    assert ampacity_a(s, "Cu", 90, 45, 4)[0] == pytest.approx(30 * 0.87 * 0.80)
    # with the formula instead of the table: 30 × √(45/60) × 0.80
    assert ampacity_a(s, "Cu", 90, 45, 4, formula=True)[0] == pytest.approx(
        30 * math.sqrt(45 / 60) * 0.80
    )


def test_terminal_limit_110_14_c():
    # 1/0 AWG Cu 90 °C at 20 °C: 170 × 1.08 = 183.6 A, limited by 75 °C terminals to 150 A
    s = size_from_label(["1/0 AWG"])
    assert ampacity_a(s, "Cu", 90, 20, 3, terminal_c=75)[0] == 150.0
    # derated below the terminal value: the derated value governs (170 × 0.82 × 0.8 = 111.52)
    assert ampacity_a(s, "Cu", 90, 50, 6, terminal_c=75)[0] == pytest.approx(111.52)


def test_short_section_exception_310_15_a():
    # the lesser of 10 ft (3.048 m) and 10 % of the circuit length
    assert_allclose(short_section_max_m([10.0, 30.48, 300.0]), [1.0, 3.048, 3.048])


def test_invalid_rating_is_refused():
    with pytest.raises(InputError, match="60, 75 or 90"):
        table_ampacity_a(size_from_label(["10 AWG"]), "Cu", 105)
