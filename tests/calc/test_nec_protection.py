"""NEC 2023 overcurrent protection (240.6(A), 240.4, 690.9(B)) and Table 250.122."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.errors import InputError, TableRangeError
from calc.nec.protection import (
    conductor_protected,
    egc_size_label,
    egc_size_mm2,
    next_standard_rating_a,
    pv_ocpd,
    small_conductor_limit_a,
    standard_ratings_a,
)
from calc.nec.sizes import round_up_size_mm2, size_from_label, size_label

# NEC 2023 240.6(A) standard ampere ratings (confirmed, two public code summaries of the 2023 text)
STANDARD = [15, 20, 25, 30, 35, 40, 45, 50, 60, 70, 80, 90, 100, 110, 125, 150, 175, 200, 225,
            250, 300, 350, 400, 450, 500, 600, 700, 800, 1000, 1200, 1600, 2000, 2500, 3000,
            4000, 5000, 6000]  # fmt: skip


def test_standard_ratings_240_6_a():
    assert standard_ratings_a().tolist() == STANDARD
    # additional standard ratings for fuses: 1, 3, 6, 10 A
    assert standard_ratings_a(fuses=True).tolist() == [1, 3, 6, 10, *STANDARD]


def test_next_standard_rating():
    assert_allclose(next_standard_rating_a([0.5, 14.9, 15, 15.01, 801, 6000]),
                    [15, 15, 15, 20, 1000, 6000])  # fmt: skip
    assert np.isnan(next_standard_rating_a([6000.5])[0])


def test_pv_ocpd_690_9_b_within_module_max_series_fuse():
    # ≥ 1.25 × I_max: 1.25 × 16.25 = 20.3 A → 25 A; a module listed for 20 A maximum fuse refuses it
    p = pv_ocpd([16.25, 16.25, 8.0], [25.0, 20.0, 15.0])
    assert p.rating_a.tolist() == [25.0, 25.0, 15.0]
    assert_allclose(p.min_a, [20.3125, 20.3125, 10.0])
    assert p.ok.tolist() == [True, False, True]


def test_small_conductor_limits_240_4_d():
    # Cu 14/12/10 AWG: 15/20/30 A (confirmed); Al 12/10 AWG: 15/25 A (confirmed, older edition text)
    s = size_from_label(["14 AWG", "12 AWG", "10 AWG", "8 AWG"])
    assert small_conductor_limit_a(s, "Cu").tolist() == [15, 20, 30, np.inf]
    assert small_conductor_limit_a(s[1:], "Al").tolist() == [15, 25, np.inf]


def test_conductor_protection_240_4_b_c_d():
    s = size_from_label(["4/0 AWG", "4/0 AWG", "1000 kcmil", "1000 kcmil", "12 AWG"])
    # 240.4(B): 230 A conductor on a 250 A device (next standard rating above 230) is protected;
    # on 300 A it is not. 240.4(C): above 800 A the device must not exceed the ampacity (900 A
    # conductor on 1000 A: not protected; 2 × 1000 kcmil on 1200 A with 1230 A: protected).
    # 240.4(D): 12 AWG Cu at 25 A ampacity still only 20 A.
    got = conductor_protected([250, 300, 1000, 1200, 25], [230, 230, 900, 1230, 25], s, "Cu")
    assert got.tolist() == [True, False, False, True, False]
    # 760 A conductor on 800 A: next standard rating, ≤ 800 A → protected
    assert conductor_protected([800], [760], s[2:3], "Cu")[0]


# NEC 2023 Table 250.122 (confirmed): device rating not exceeding → Cu, Al
T250_122 = [(15, "14 AWG", "12 AWG"), (20, "12 AWG", "10 AWG"), (60, "10 AWG", "8 AWG"),
            (100, "8 AWG", "6 AWG"), (200, "6 AWG", "4 AWG"), (300, "4 AWG", "2 AWG"),
            (400, "3 AWG", "1 AWG"), (500, "2 AWG", "1/0 AWG"), (600, "1 AWG", "2/0 AWG"),
            (800, "1/0 AWG", "3/0 AWG"), (1000, "2/0 AWG", "4/0 AWG"),
            (1200, "3/0 AWG", "250 kcmil"), (1600, "4/0 AWG", "350 kcmil"),
            (2000, "250 kcmil", "400 kcmil"), (2500, "350 kcmil", "600 kcmil"),
            (3000, "400 kcmil", "600 kcmil"), (4000, "500 kcmil", "750 kcmil"),
            (5000, "700 kcmil", "1250 kcmil"), (6000, "800 kcmil", "1250 kcmil")]  # fmt: skip


def test_table_250_122_every_row_and_between_rows():
    top = [r[0] for r in T250_122]
    assert egc_size_label(top, "Cu").tolist() == [r[1] for r in T250_122]
    assert egc_size_label(top, "Al").tolist() == [r[2] for r in T250_122]
    # a rating between rows takes the next row up: 70 A → the 100 A row
    assert egc_size_label([70, 225], "Cu").tolist() == ["8 AWG", "4 AWG"]
    with pytest.raises(TableRangeError):
        egc_size_label([7000], "Cu")
    with pytest.raises(InputError):
        egc_size_label([0], "Cu")


def test_egc_increase_250_122_b_by_hand():
    # 100 A circuit: EGC 8 AWG Cu (16 510 cmil). Ungrounded conductors upsized for voltage drop
    # from 3 AWG (minimum) to 1/0 AWG: EGC area × (1/0 area / 3 AWG area) (areas from ASTM B258)
    eight, three, one_0 = size_from_label(["8 AWG", "3 AWG", "1/0 AWG"])
    got = egc_size_mm2([100], "Cu", [one_0], [three])
    assert got[0] == pytest.approx(eight * one_0 / three)
    # 16 510 × 105 600 / 52 620 ≈ 33 130 cmil (Table 8 areas): above 6 AWG (26 240), so 4 AWG
    assert size_label(round_up_size_mm2(got)).tolist() == ["4 AWG"]
    # never larger than the ungrounded conductors (250.122(A)): 10 AWG conductors on a 100 A
    # device (e.g. a tap) need no more than 10 AWG
    ten = size_from_label(["10 AWG"])
    assert egc_size_mm2([100], "Cu", ten)[0] == pytest.approx(ten[0])
