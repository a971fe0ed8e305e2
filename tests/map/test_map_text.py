"""The map's text helpers (:mod:`routeplan.map.text`) against outside references:
the standard library's HTML parser (``html.unescape``) undoes every escape exactly, numbers
read as Python's format mini-language writes them, lists as ``str.join`` joins them.

(The module's docstring examples do not count under mutation testing: a mutated function is
wrapped, and ``doctest`` skips functions defined outside the module. These tests do.)"""

from __future__ import annotations

import html
import json
import math

import numpy as np
import pandas as pd
import pytest

from routeplan.map.text import (
    MISSING,
    escape_all,
    escape_text,
    fmt_number,
    ints_json,
    join_limited,
)

#: characters live in HTML, in an attribute, in a JavaScript template literal or in Jinja
LIVE = set("<>\"'`$\\{}&")


def assert_safe_and_exact(raw: str, shown: str) -> None:
    """``shown`` holds no live character outside an entity, and the HTML parser reads it back
    as ``raw`` (Python's html.unescape, HTML5 character references)."""
    assert html.unescape(shown) == raw
    bare = shown
    for entity in ("&lt;", "&gt;", "&quot;", "&#x27;", "&amp;", "&#96;", "&#36;", "&#92;"):
        bare = bare.replace(entity, "")
    bare = bare.replace("&#123;", "").replace("&#125;", "")
    assert not set(bare) & LIVE, (raw, shown)


def test_escape_all_of_mixed_items_escapes_each_and_keeps_plain_text():
    # a list mixing plain ids, hostile ids and non-text goes one by one: every item is
    # shown as it was given, plain text untouched
    values = ["T1", "T<2>", "plain id", "${alert(1)}", "`x`", "a\\b{c}", 7, None]
    out = escape_all(values)
    assert len(out) == len(values)
    for raw, shown in zip(values[:6], out[:6], strict=True):
        assert_safe_and_exact(raw, shown)
    assert out[0] == "T1" and out[2] == "plain id"  # nothing to escape: the same text
    assert out[6:] == ["7", ""]  # a number as text, None as nothing


def test_escape_all_of_text_only_needing_no_escape_is_the_text():
    values = np.array(["T1#1", "R1/S1 → CB1", "INV-E"], dtype=object)
    assert escape_all(values) == ["T1#1", "R1/S1 → CB1", "INV-E"]


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_escape_all_shows_nan_of_any_float_array_as_nothing(dtype):
    # escape_text's rule "NaN gives ''" holds for an array of any float type, as read from a
    # file (single-precision GeoPackage/shapefile fields included)
    assert escape_all(np.array([np.nan, 1.5, np.nan], dtype=dtype)) == ["", "1.5", ""]
    assert escape_all(pd.Series([np.nan, 2.5], dtype=dtype)) == ["", "2.5"]


def test_escape_text_of_hostile_text_reads_back_exactly():
    for raw in ["<b>", "x\"y'z", "&amp;", "`${1}`", "\\{{ 7*7 }}", "{% raw %}", "{# c #}"]:
        assert_safe_and_exact(raw, escape_text(raw))


def python_format(values, decimals: int, unit: str = "", scale: float = 1.0) -> list[str]:
    """The reference: Python's format mini-language, ``,`` grouping, fixed decimals."""
    out = []
    suffix = f" {unit}" if unit else ""
    for v in values:
        x = float(v) * scale
        out.append(MISSING if math.isnan(x) else format(x, f",.{decimals}f") + suffix)
    return out


@pytest.mark.parametrize("decimals", [0, 1, 2])
def test_fmt_number_writes_as_python_format(decimals):
    values = [0.0, -0.0, 1234.5, -0.004, 0.125, 2.675, 1e7, -98765.4321, 0.0, -0.0]
    assert fmt_number(values, decimals, "m") == python_format(values, decimals, "m")
    assert fmt_number(values, decimals) == python_format(values, decimals)


def test_fmt_number_keeps_the_sign_of_zero_in_either_order():
    # -0.0 and 0.0 are equal numbers but Python writes them "-0.0" and "0.0"
    assert fmt_number([-0.0, 0.0], 1, "m") == ["-0.0 m", "0.0 m"]
    assert fmt_number([0.0, -0.0], 1, "m") == ["0.0 m", "-0.0 m"]


def test_fmt_number_of_integers_with_an_integer_scale():
    # whole numbers (an int array, a list of ints) and an int scale: as Python writes the floats
    assert fmt_number([1, 2, 1], 0, "%", scale=100) == ["100 %", "200 %", "100 %"]
    assert fmt_number(np.array([3, 40], dtype=np.int64), 1, "A") == ["3.0 A", "40.0 A"]


def test_fmt_number_shows_missing_for_nan_none_and_text():
    assert fmt_number([float("nan"), None, 2.5, "n/a", ""], 1, "m") == [
        MISSING,
        MISSING,
        "2.5 m",
        MISSING,
        MISSING,
    ]
    assert fmt_number(np.full(3, np.nan), 2, "%") == [MISSING] * 3


def test_join_limited_up_to_the_limit_is_str_join():
    items = [f"T{i}" for i in range(5)]
    assert join_limited(items, limit=5) == ", ".join(items)  # exactly the limit: all shown
    assert join_limited(items, limit=4) == ", ".join(items[:4]) + " … (+1 more)"
    assert join_limited(items, limit=4, sep=";") == ";".join(items[:4]) + " … (+1 more)"
    assert join_limited([], limit=3) == ""


def test_join_limited_default_limit_is_eight():
    # the documented default (the signature): eight shown, then the count of the rest
    items = [f"S{i}" for i in range(9)]
    assert join_limited(items[:8]) == ", ".join(items[:8])
    assert join_limited(items) == ", ".join(items[:8]) + " … (+1 more)"


@pytest.mark.parametrize("top", [0, 1, 9, 10, 11, 99, 100, 65_535, 2**32 - 1, 2**32, 10**15])
def test_integer_lists_are_what_json_writes(top):
    """ints_json against the standard library's json.dumps (no spaces): every width of
    number, leading zeros dropped, 0 itself kept; lists and arrays alike."""
    rng = np.random.default_rng(top % 1000)
    values = np.r_[rng.integers(0, top + 1, 500), 0, top]
    want = json.dumps(values.tolist(), separators=(",", ":"))
    assert ints_json(values) == want
    assert ints_json(values.tolist()) == want
    assert ints_json(values[:1]) == json.dumps(values[:1].tolist())


def test_integer_lists_empty_and_negative():
    assert ints_json([]) == "[]" == json.dumps([])
    values = [-1, 0, 5, -12345, 10]
    assert ints_json(values) == json.dumps(values, separators=(",", ":"))
