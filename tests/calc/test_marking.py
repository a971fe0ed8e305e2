"""Conductor identification: IEC 60445:2017 and NEC 200.6 / 250.119."""

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
