"""Grouping of circuits in air, IEC 60364-5-52:2009 (Ed.3) Annex B, Table B.52.17.

Expected values are typed here from the published table, not read from calc's data file. Every
cell was seen in several public third-party reproductions of Table B.52.17 (data tables in public
code repositories; one also reproduces the table's notes, including the rule "no further reduction
beyond nine circuits" for the single-layer items); item 1 also matches /work/shared
REFERENCE_VALUES 10.5 (from memory there, its 20-circuit 0.38 confirmed via BS 7671 Table 4C1).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from calc.ampacity import (
    AIR_ARRANGEMENTS,
    air_group_factor,
    air_temp_factor,
    pv_cable_capacity_a,
)
from calc.errors import InputError, UnknownOptionError
from calc.rules import RuleSet, get_rules
from calc.tables import load_table

COUNTS = (1, 2, 3, 4, 5, 6, 7, 8, 9, 12, 16, 20)
# IEC 60364-5-52:2009 Table B.52.17, items 1-5, circuits 1-9, 12, 16, 20 (confirmed, see above)
B52_17 = {
    "bunched": (1.00, 0.80, 0.70, 0.65, 0.60, 0.57, 0.54, 0.52, 0.50, 0.45, 0.41, 0.38),  # item 1
    "wall": (1.00, 0.85, 0.79, 0.75, 0.73, 0.72, 0.72, 0.71, 0.70),  # item 2
    "ceiling": (0.95, 0.81, 0.72, 0.68, 0.66, 0.64, 0.63, 0.62, 0.61),  # item 3
    "tray": (1.00, 0.88, 0.82, 0.77, 0.75, 0.73, 0.73, 0.72, 0.72),  # item 4
    "ladder": (1.00, 0.87, 0.82, 0.80, 0.80, 0.79, 0.79, 0.78, 0.78),  # item 5
}
SINGLE_LAYER = ("wall", "ceiling", "tray", "ladder")
ERR_ARRANGEMENT = (
    "air arrangement must be one of 'bunched', 'wall', 'ceiling', 'tray', 'ladder', 'spaced'; "
    "got {!r}"
)


@pytest.mark.parametrize("arrangement", list(B52_17))
def test_every_tabulated_cell(arrangement):
    # IEC 60364-5-52:2009 Table B.52.17 (confirmed in public reproductions)
    row = B52_17[arrangement]
    counts = COUNTS[: len(row)]
    assert_allclose(air_group_factor(counts, arrangement), row, err_msg=arrangement)


def test_bunched_matches_reference_values_10_5():
    # REFERENCE_VALUES 10.5 (item 1, from memory; 20 circuits 0.38 confirmed via BS 7671 Table 4C1)
    expected = [1.00, 0.80, 0.70, 0.65, 0.60, 0.57, 0.54, 0.52, 0.50, 0.45, 0.41, 0.38]
    assert_allclose(air_group_factor(COUNTS, "bunched"), expected)


def test_one_circuit():
    # one circuit -> 1.0 (no neighbour), for every item but the ceiling
    for name in ("bunched", "wall", "tray", "ladder"):
        assert air_group_factor([1], name).tolist() == [1.0], name
    # item 3: a single circuit fixed directly under a ceiling already takes 0.95 (table value)
    assert air_group_factor([1], "ceiling").tolist() == [0.95]
    # count below one (no circuit or a fraction): taken as one circuit
    assert air_group_factor([0, 0.5], "bunched").tolist() == [1.0, 1.0]


def test_count_between_rows_takes_the_larger_counts_factor():
    # 10 and 11 circuits: the 12-circuit 0.45 (not the interpolated 0.483 / 0.467)
    assert_allclose(air_group_factor([10, 11], "bunched"), [0.45, 0.45])
    # 13-15 -> 16 circuits 0.41; 17-19 -> 20 circuits 0.38
    assert_allclose(air_group_factor([13, 15, 17, 19], "bunched"), [0.41, 0.41, 0.38, 0.38])
    # a fractional count is rounded up to whole circuits: 2.5 -> 3 circuits
    assert_allclose(air_group_factor([2.5, 2.5], ["bunched", "tray"]), [0.70, 0.82])


@pytest.mark.parametrize("arrangement", SINGLE_LAYER)
def test_single_layer_no_further_reduction_beyond_nine(arrangement):
    # Table B.52.17 rule for items 2-5: no further reduction for more than nine circuits
    nine = B52_17[arrangement][8]
    counts = [10, 12, 16, 20, 21, 100, 5000]
    assert_allclose(air_group_factor(counts, arrangement), [nine] * len(counts))


def test_bunched_beyond_the_table():
    # stated extension (same policy as the buried grouping): 1/F² linear in the count from the
    # 16- and 20-circuit rows. By hand, at 40 circuits:
    #   1/0.38² = 6.92521, 1/0.41² = 5.94884, slope = (6.92521 - 5.94884) / 4 = 0.24409 per circuit
    #   1/F² = 6.92521 + 0.24409 × 20 = 11.80705  ->  F = 1/√11.80705 = 0.29102
    # atol: the hand value is rounded to 5 decimals
    assert_allclose(air_group_factor([40], "bunched"), [0.29102], atol=5e-6)
    # 20.5 circuits is rounded up to 21: 1/F² = 6.92521 + 0.24409 = 7.16930 -> F = 0.37348
    assert_allclose(air_group_factor([20.5, 21], "bunched"), [0.37348, 0.37348], atol=5e-6)
    n = np.arange(20, 201)
    f = air_group_factor(n, "bunched")
    assert f[0] == pytest.approx(0.38)  # continuous with the last row
    assert np.all(np.diff(f) < 0)  # more circuits, lower factor
    assert np.all(f <= 0.38)  # never above the last tabulated value
    assert np.all(f > 0)


def test_monotone_non_increasing_over_all_counts():
    n = np.arange(1, 60)
    for name in AIR_ARRANGEMENTS:
        assert np.all(np.diff(air_group_factor(n, name)) <= 0), name


def test_mixed_arrangements_in_one_call():
    # one arrangement per circuit, vectorised; Table B.52.17 cells
    counts = [4, 4, 4, 4, 4, 25]
    names = ["bunched", "wall", "ceiling", "tray", "ladder", "wall"]
    assert_allclose(air_group_factor(counts, names), [0.65, 0.75, 0.68, 0.77, 0.80, 0.70])


def test_worked_check_four_pv_strings_bunched():
    # A 4 mm² PV string cable pair, EN 50618:2014 Annex A Table A.3, two loaded cables touching on
    # a surface: 44 A at the table's 60 °C reference ambient (from memory; Table A.4 factor 1.00 up
    # to 60 °C). Bunched with 3 other strings -> 4 circuits, Table B.52.17 item 1: 0.65.
    #   0.65 × 44 A = 28.6 A
    rating_a = pv_cable_capacity_a([4], "two_adjacent_surface")[0]
    assert rating_a == 44.0
    capacity_a = rating_a * air_temp_factor([60.0], "PV")[0] * air_group_factor([4], "bunched")[0]
    assert capacity_a == pytest.approx(28.6)


@pytest.mark.parametrize(
    ("arrangement", "bad"),
    [("stacked", "stacked"), (["bunched", "Tray"], "Tray"), ("", "")],
)
def test_invalid_arrangement_lists_the_valid_names(arrangement, bad):
    with pytest.raises(UnknownOptionError) as err:
        air_group_factor([2] * (2 if isinstance(arrangement, list) else 1), arrangement)
    assert str(err.value) == ERR_ARRANGEMENT.format(bad)


@pytest.mark.parametrize("count", [-1.0, np.nan])
def test_invalid_count(count):
    with pytest.raises(InputError) as err:
        air_group_factor([2.0, count], "bunched")
    assert str(err.value) == "number of circuits in air must be >= 0"


def test_rule_set_exposes_the_arrangements_and_the_factor():
    rs = get_rules("iec")
    assert rs.air_arrangements == ("bunched", "wall", "ceiling", "tray", "ladder", "spaced")
    # Table B.52.17: item 1 at 4 circuits 0.65, item 4 at 6 circuits 0.73
    assert_allclose(rs.air_group_factor(np.array([4.0, 6.0]), ["bunched", "tray"]), [0.65, 0.73])
    assert "air_group_factor" in RuleSet.__abstractmethods__
    with pytest.raises(UnknownOptionError) as err:
        rs.air_group_factor(np.array([2.0]), "stacked")
    assert str(err.value) == ERR_ARRANGEMENT.format("stacked")


def test_b52_17_data_file_loads():
    # IEC 60364-5-52:2009 Table B.52.17: 12 rows (1-9, 12, 16, 20 circuits); items 2-5 blank
    # beyond 9 circuits as in the table
    t = load_table("iec60364_5_52_2009_b52_17_group_air.csv")
    assert len(t) == 12
    assert t["circuits"].tolist() == list(COUNTS)
    assert t["ceiling"][t["circuits"] == 1].tolist() == [0.95]
    assert t["bunched"][t["circuits"] == 20].tolist() == [0.38]
    assert np.all(np.isnan(t["wall"][t["circuits"] > 9]))
    assert set(t["tag"].tolist()) == {"confirmed"}


def test_spaced_cables_need_no_factor():
    # IEC 60364-5-52:2009 Table B.52.17, note: no reduction factor where the horizontal clearance
    # between adjacent cables exceeds twice their overall diameter
    assert air_group_factor([1, 2, 9, 20, 200], "spaced").tolist() == [1.0] * 5


def test_the_last_tabulated_count_returns_the_cell_itself():
    # IEC 60364-5-52:2009 Table B.52.17 item 1: the last rows' cells exactly, 20 circuits 0.38
    assert air_group_factor([20, 16], "bunched").tolist() == [0.38, 0.41]
