"""A d.c. circuit has no a.c. voltage: a blank (None) there must not stop the marking of it or of
the a.c. circuits beside it (calc.marking reads ``ac_v`` as float, None = nan = not given).
"""

from calc.marking import conductor_marking


def test_a_dc_circuit_with_a_blank_ac_voltage_is_marked_beside_a_480_v_circuit():
    # us convention (calc.marking's table): d.c. red (+) / black (−) is common practice, the
    # equipment grounding conductor per NEC 250.119 (from memory); three-phase above 250 V
    # line-to-line: brown / orange / yellow (common practice), grounded conductor white or gray
    # (NEC 200.6, from memory).
    got = conductor_marking([0, 2], [0, 3], [None, 480.0], "us").tolist()
    assert got == [
        "positive red, negative black, EGC green or green-yellow or bare",
        "L1 brown, L2 orange, L3 yellow, N white or gray (if run), "
        "EGC green or green-yellow or bare",
    ]


def test_iec_dc_and_three_phase_with_a_blank_ac_voltage():
    # IEC 60445:2017 (from memory): L1 brown, L2 black, L3 grey, N blue, PE green-and-yellow at
    # any voltage; d.c. red / black common practice with the marks L+ / L−.
    got = conductor_marking([1, 2], [0, 3], [None, 400.0], "iec").tolist()
    assert got == [
        "L+ red (marked L+), L- black (marked L-) [colours: common practice]",
        "L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow",
    ]
