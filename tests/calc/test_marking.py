"""Conductor identification: IEC 60445:2017 and NEC 200.6 / 250.119."""

import pytest

from calc.errors import UnknownOptionError
from calc.marking import conductor_marking, marking_text


def test_iec_ac_colours():
    # IEC 60445:2017: L1 brown, L2 black, L3 grey, N blue, PE green-and-yellow
    text = marking_text("iec", "ac3")
    for part in ("L1 brown", "L2 black", "L3 grey", "N blue", "PE green-and-yellow"):
        assert part in text


def test_iec_dc_is_marked_common_practice():
    assert "common practice" in marking_text("iec", "dc")


def test_us_grounded_and_egc():
    # NEC 200.6 grounded conductor white or gray; 250.119 EGC green / green-yellow / bare
    m = conductor_marking([2, 2], [3, 1], [480.0, 240.0], "us")
    assert "N white or gray" in m[0] and "EGC green" in m[0]
    assert m[0].startswith("L1 brown")  # 480 V: brown/orange/yellow (common practice)
    assert "N white or gray" in m[1]


def test_each_circuit_gets_its_system():
    # kinds 0 and 1 are d.c.; a.c. single-phase and three-phase; IEC ignores the voltage
    dc = marking_text("iec", "dc")
    got = conductor_marking([0, 1, 2, 2, 2], [0, 0, 1, 3, 3], [0.0, 0.0, 230.0, 400.0, 208.0])
    assert got.tolist() == [
        dc,
        dc,
        "L brown, N blue, PE green-and-yellow",
        marking_text("iec", "ac3"),
        marking_text("iec", "ac3"),
    ]
    # US: at or below 250 V line-to-line black/red/blue (common practice), above brown/orange/
    # yellow; 250 V itself is "at or below"
    us = conductor_marking([2, 2, 2, 2], [3, 3, 3, 1], [480.0, 250.0, 208.0, 120.0], "us")
    assert [m.split(",")[0] for m in us] == ["L1 brown", "L1 black", "L1 black", "L black"]


def test_marking_texts_in_full():
    assert marking_text("iec", "ac3") == (
        "L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow"
    )
    assert marking_text("iec", "dc") == (
        "L+ red (marked L+), L- black (marked L-) [colours: common practice]"
    )
    with pytest.raises(UnknownOptionError) as e:
        marking_text("uk", "dc")
    assert str(e.value) == "marking must be one of 'iec', 'us'; got 'uk'"


def test_us_low_voltage_ends_at_250_v():
    # above 250 V line-to-line (common practice): brown/orange/yellow, even just above
    got = conductor_marking([2, 2], [3, 3], [250.5, 250.0], "us")
    assert [m.split(",")[0] for m in got] == ["L1 brown", "L1 black"]
    assert got.dtype == object  # an object array of str, as documented
