"""Conductor identification by regional system, each colour against its named source.

Sources (as in calc/data/conductor_identification.csv, which tags each row):
IEC 60445:2021 clause 6.2 (6.2.1 PE green-and-yellow, 6.2.2 neutral/mid-point blue, 6.2.3 a.c.
lines black/brown/grey, 6.2.4 d.c. L+ red and L− white; confirmed in a public reproduction of
the clause text); CENELEC HD 308 S2 order L1 brown, L2 black, L3 grey; BS 7671:2018 Table 51
(d.c. L+ brown, L− grey, mid-wire blue; confirmed in a public reproduction of the table);
AS/NZS 3000:2018 Table 3.4, IS 732:2019, GB 50303-2015 / GB/T 7947-2010, JIS C 0446 and
GOST R 50462-2009 (from memory, as public summaries give them); NEC 2023 200.6 and 250.119 with
the US phase colours by voltage (common practice); CSA C22.1 Rule 4-038(3) (confirmed in a
public reproduction of the rule).
"""

import pytest

from calc.errors import UnknownOptionError
from calc.marking import (
    MARKING_SYSTEMS,
    conductor_marking,
    default_marking,
    identification_rows,
    marking_text,
)

# kinds: 0 string, 1 array, 2 a.c., 3 sub-array
STRING, ARRAY, AC, SUBARRAY = 0, 1, 2, 3


def test_the_regions_the_issue_names_are_all_offered():
    assert set(MARKING_SYSTEMS) >= {"iec", "gb", "au", "in", "us", "ca", "cn", "jp", "ru"}


def test_iec_60445_ac_and_dc_colours():
    # IEC 60445:2021 6.2.1-6.2.4; the L1-L3 order of CENELEC HD 308 S2
    assert marking_text("iec", "ac3") == (
        "L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow"
    )
    assert marking_text("iec", "ac1") == "L brown, N blue, PE green-and-yellow"
    # 6.2.4: RED for the positive, WHITE for the negative line conductor (not a practice choice)
    assert marking_text("iec", "dc") == "L+ red, L- white"
    # 6.2.2: a mid-point conductor is BLUE
    assert marking_text("iec", "dc3") == "L+ red, M blue, L- white"


def test_bs_7671_table_51_dc_differs_from_iec():
    # BS 7671:2018 Table 51: two-wire unearthed d.c. positive brown, negative grey; three-wire
    # mid-wire blue; a.c. as the harmonised colours
    assert marking_text("gb", "dc") == "L+ brown, L- grey"
    assert marking_text("gb", "dc3") == "L+ brown, M blue, L- grey"
    assert marking_text("gb", "ac3") == marking_text("iec", "ac3")


def test_regional_ac_colours():
    # AS/NZS 3000:2018 Table 3.4 (from memory): red, white, dark blue actives; neutral black or
    # light blue; earth green/yellow
    assert marking_text("au", "ac3") == (
        "A1 red, A2 white, A3 dark blue, N black or light blue (if run), E green-and-yellow"
    )
    # IS 732:2019 (from memory): R, Y, B phases, black neutral, green (or green-and-yellow) earth
    assert marking_text("in", "ac3").startswith("L1 red, L2 yellow, L3 blue, N black")
    # CSA C22.1 Rule 4-038(3): phase A red, B black, C blue; neutral white or natural grey
    assert marking_text("ca", "ac3").startswith("A red, B black, C blue, N white or natural grey")
    # GB 50303-2015 (from memory): L1 yellow, L2 green, L3 red, N light blue, PE green-and-yellow
    assert marking_text("cn", "ac3") == (
        "L1 yellow, L2 green, L3 red, N light blue (if run), PE green-and-yellow"
    )
    # GOST R 50462-2009 (= IEC 60446:2007, from memory): brown, black, grey; N blue
    assert marking_text("ru", "ac3") == marking_text("iec", "ac3")


def test_a_colour_the_standard_leaves_open_is_never_invented():
    # AS/NZS 3000, IS 732, GB/T 7947 and GOST R 50462 name no d.c. line colours (from memory)
    for system in ("au", "in", "cn", "ru"):
        assert marking_text(system, "dc") == (
            "L+ per project specification, L- per project specification"
        ), system
    # JIS C 0446 names only the grounded and earthing conductors (from memory): phases per
    # project specification, with the common practice (public works specification) as a hint
    jp = marking_text("jp", "ac3")
    assert jp.startswith("L1 per project specification (common practice: red), ")
    assert "N white (if run)" in jp and "E green or green-and-yellow" in jp
    # CEC Rule 4-038(3) gives a two-wire d.c. circuit "black and red" without polarity
    assert marking_text("ca", "dc") == (
        "L+ per project specification (common practice: red), "
        "L- per project specification (common practice: black)"
    )


def test_us_colours_depend_on_the_system_voltage():
    # NEC 2023 200.6 (grounded conductor white or gray) and 250.119 (EGC green, green with yellow
    # stripes, or bare); phase colours common practice: black/red/blue at or below 250 V line-to-
    # line, brown/orange/yellow above; 250 V itself is "at or below"
    got = conductor_marking([AC, AC, AC, AC], [3, 3, 3, 1], [480.0, 250.5, 250.0, 120.0], "us")
    assert [m.split(",")[0] for m in got] == ["L1 brown", "L1 brown", "L1 black", "L black"]
    assert got[0] == (
        "L1 brown, L2 orange, L3 yellow, N white or gray (if run), "
        "EGC green or green-yellow or bare [common practice: L1, L2, L3]"
    )
    assert "N white or gray" in got[3] and got[3].endswith("[common practice: L]")


def test_each_circuit_kind_gets_its_system():
    # strings, arrays and sub-arrays are two-wire d.c.; a.c. single- or three-phase; IEC colours
    # do not depend on the voltage, and a blank a.c. voltage (d.c. circuits) is accepted
    got = conductor_marking(
        [STRING, ARRAY, SUBARRAY, AC, AC, AC],
        [0, 0, 0, 1, 3, 3],
        [None, None, None, 230.0, 400.0, 208.0],
    ).tolist()
    dc = "L+ red, L- white"
    ac3 = "L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow"
    assert got == [dc, dc, dc, "L brown, N blue, PE green-and-yellow", ac3, ac3]
    us = conductor_marking([STRING, AC], [0, 3], [None, 480.0], "us").tolist()
    assert us[0] == (
        "positive red, negative black, EGC green or green-yellow or bare "
        "[common practice: positive, negative]"
    )
    assert us[1].startswith("L1 brown")


def test_the_default_follows_the_rule_set():
    assert default_marking("iec") == "iec"
    assert default_marking("nec") == "us"


def test_unknown_system_is_refused_with_the_list():
    with pytest.raises(UnknownOptionError) as e:
        marking_text("uk", "dc")
    assert str(e.value).startswith("marking must be one of 'iec', 'gb', 'au'")
    assert "got 'uk'" in str(e.value)


def test_every_row_names_a_source_and_older_colours_are_reported_not_used():
    for system in MARKING_SYSTEMS:
        rows = identification_rows(system)
        assert rows and all(r["source"] and r["tag"] for r in rows), system
    # PUE 7th ed. 1.1.30 (from memory): yellow, green, red phases, still met on site in Russia
    older = [r for r in identification_rows("ru") if r["basis"] == "older"]
    assert {(r["conductor"], r["colour"]) for r in older if r["circuit"] == "ac3"} == {
        ("L1", "yellow"),
        ("L2", "green"),
        ("L3", "red"),
    }
    assert "L1 yellow" not in marking_text("ru", "ac3")


def test_tags_say_how_each_colour_is_known():
    tags = {r["tag"] for s in MARKING_SYSTEMS for r in identification_rows(s)}
    assert tags <= {"confirmed", "memory", "common practice"}
    iec = {(r["conductor"], r["tag"]) for r in identification_rows("iec") if r["circuit"] == "dc"}
    assert iec == {("L+", "confirmed"), ("L-", "confirmed")}


def test_the_report_rows_give_the_voltage_limit_of_the_us_phase_colours():
    # the us phase colours (common practice) change above 250 V line-to-line: the design basis
    # says so on the rows it applies to; rows for any voltage leave the limit blank
    ac3 = [r for r in identification_rows("us") if r["circuit"] == "ac3"]
    assert [
        (r["ac_v_max"], r["conductor"], r["colour"]) for r in ac3 if r["conductor"] == "L1"
    ] == [
        ("250", "L1", "black"),
        ("", "L1", "brown"),
    ]
    assert {r["ac_v_max"] for r in identification_rows("iec")} == {""}


def test_unknown_system_or_rule_set_is_refused_naming_the_setting():
    with pytest.raises(UnknownOptionError, match=r"^marking must be one of 'iec', 'gb'.*got 'uk'"):
        identification_rows("uk")
    with pytest.raises(UnknownOptionError, match=r"^marking must be one of 'iec', 'gb'.*got 'uk'"):
        conductor_marking([STRING], [0], [None], "uk")
    with pytest.raises(UnknownOptionError, match=r"^rules must be one of 'iec', 'nec'; got 'bs'"):
        default_marking("bs")


def test_the_texts_are_an_object_array_of_python_str_as_documented():
    # the schedule's column takes Python str (not numpy's fixed-width str) per circuit
    got = conductor_marking([STRING, AC], [0, 3], [None, 480.0], "us")
    assert got.dtype == object and all(type(t) is str for t in got)
