"""calc.size_list_mm2 and calc.larger_sizes_mm2: the sizes a kind is chosen from, and the
IEC 60228 sizes beyond them that calc can still size (what a failing circuit could be given).

IEC 60228:2004 Tables 2 and 3 list the nominal cross-sections ... 95, 120, 150, 185, 240, 300,
400 ... mm²; IEC 60364-5-52:2009 Tables B.52.2–B.52.5 (methods D1/D2) end at 300 mm², and
EN 50618:2014 Table A.3 (PV cable, from memory) at 240 mm²: a size without a capacity in every
environment is not offered. The default lists are calc/data/default_size_lists.csv (common
practice): PV string cable 4, 6, 10 mm²; feeders 16 to 300 mm².
"""

from __future__ import annotations

import calc

FEEDERS = [16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0, 150.0, 185.0, 240.0, 300.0]


def test_the_lists_are_the_designs_else_the_default_for_the_kind():
    assert calc.size_list_mm2(calc.KIND_STRING).tolist() == [4.0, 6.0, 10.0]
    assert calc.size_list_mm2(calc.KIND_SUBARRAY).tolist() == FEEDERS
    assert calc.size_list_mm2(calc.KIND_AC, calc.DesignParams(material_ac="Al")).tolist() == FEEDERS
    dp = calc.DesignParams(sizes_subarray_mm2=(95, 120))
    assert calc.size_list_mm2(calc.KIND_SUBARRAY, dp).tolist() == [95.0, 120.0]
    assert calc.size_list_mm2(calc.KIND_ARRAY, dp).tolist() == FEEDERS  # another kind's list


def test_larger_sizes_stop_where_the_capacity_tables_stop():
    # 400 mm² has a resistance (IEC 60228 Table 2) but no capacity in methods D1/D2: not offered
    dp = calc.DesignParams(sizes_subarray_mm2=(95, 120))
    assert calc.larger_sizes_mm2(calc.KIND_SUBARRAY, dp).tolist() == [150.0, 185.0, 240.0, 300.0]
    dp = calc.DesignParams(sizes_ac_mm2=(240,), material_ac="Al")
    assert calc.larger_sizes_mm2(calc.KIND_AC, dp).tolist() == [300.0]
    dp = calc.DesignParams(sizes_array_mm2=(300,))
    assert calc.larger_sizes_mm2(calc.KIND_ARRAY, dp).tolist() == []
    # PV string cable: EN 50618 Table A.3 ends at 240 mm²
    dp = calc.DesignParams(sizes_string_mm2=(150,))
    assert calc.larger_sizes_mm2(calc.KIND_STRING, dp).tolist() == [185.0, 240.0]
    assert calc.larger_sizes_mm2(calc.KIND_STRING).tolist()[:3] == [16.0, 25.0, 35.0]
    assert calc.larger_sizes_mm2(calc.KIND_STRING, rules="iec").dtype == float


def test_a_size_without_a_resistance_is_skipped_not_the_end_of_the_series():
    # Al: calc/data's IEC 60228 Table 2 rows start at 10 mm² (6 mm² has none: skipped) and the
    # Al capacities of IEC 60364-5-52 at 16 mm² (10 mm² skipped too); the series goes on to 300
    dp = calc.DesignParams(sizes_ac_mm2=(4,), material_ac="Al")
    assert calc.larger_sizes_mm2(calc.KIND_AC, dp).tolist() == FEEDERS
    # an empty list: every Cu size calc can size, from IEC 60228's 1.5 mm²
    dp = calc.DesignParams(sizes_ac_mm2=())
    assert calc.larger_sizes_mm2(calc.KIND_AC, dp).tolist() == [1.5, 2.5, 4.0, 6.0, 10.0, *FEEDERS]
