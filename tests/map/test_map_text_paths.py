"""The map's text helpers (:mod:`routeplan.map.text`) on the paths the older tests do
not take: a list of text only, one item of which needs escaping (the quick path must not
return it as it is), and a unit that numpy's fixed-width text would cut. References: the
standard library's HTML parser (``html.unescape``) and Python's format mini-language."""

from __future__ import annotations

import html

import numpy as np

from routeplan.map.text import escape_all, escape_text, fmt_number


def test_escape_all_of_text_only_escapes_the_hostile_items():
    # all items are text (the quick path is tried first) and two need escaping
    values = ["T1", "<img src=x onerror=alert(1)>", "R1/S1", "${x}`\\"]
    out = escape_all(values)
    assert out[0] == "T1" and out[2] == "R1/S1"
    assert out[1] == "&lt;img src=x onerror=alert(1)&gt;"
    assert out[3] == "&#36;&#123;x&#125;&#96;&#92;"
    assert [html.unescape(s) for s in out] == values
    # the same from an array of Python strings (as read from a GeoDataFrame column)
    assert escape_all(np.array(values, dtype=object)) == out
    assert out == [escape_text(v) for v in values]


def test_fmt_number_appends_the_unit_exactly_as_given():
    # Python's format: f"{1234.5:,.1f}" + " " + unit, whatever the unit's last character
    # (numpy's fixed-width text drops trailing NUL characters: the result must not)
    assert fmt_number([1234.5, 2.0], 1, "m\x00") == ["1,234.5 m\x00", "2.0 m\x00"]
    assert fmt_number([0.5], 0, "kV") == [format(0.5, ",.0f") + " kV"]
