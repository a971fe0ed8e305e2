"""Quantities from untrusted text: ``layers.units.to_number`` accepts only ``<number> <unit>``.

Conversions are checked against exact definitions, not against pint:

- SI prefixes milli (1e-3), centi (1e-2), kilo (1e3), mega (1e6): SI Brochure, 9th edition
  (2019), Table 7.
- Celsius temperature t/°C = T/K − 273.15: SI Brochure, 9th edition (2019), section 2.3.1.
- 1 yd = 0.9144 m exactly, so 1 ft = 0.3048 m and 1 in = 0.0254 m exactly: international
  yard and pound agreement (1959).
- t/°F = 1.8 · t/°C + 32: NIST Special Publication 811 (2008), Appendix B (from memory).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from layers import units
from layers.units import MAX_QUANTITY_CHARS, canonical_unit, to_number

NOT_A_QUANTITY = "is not a quantity: expected '<number> <unit>', e.g. '800 mm'"


@pytest.mark.parametrize(
    ("text", "key", "expected"),
    [
        ("800 mm", "depth_m", 0.8),  # milli = 1e-3 (SI Brochure 9th ed., Table 7)
        ("0.8 m", "depth_m", 0.8),
        ("80 cm", "depth_m", 0.8),  # centi = 1e-2
        ("800mm", "depth_m", 0.8),  # no blank between number and unit
        ("  800 mm  ", "depth_m", 0.8),
        ("1 ft", "depth_m", 0.3048),  # exact: international yard and pound agreement 1959
        ("1 inch", "depth_m", 0.0254),  # exact: 1 in = 1/36 yd = 0.0254 m
        ("1.2 K*m/W", "soil_k_m_w", 1.2),
        ("1.2 K·m/W", "soil_k_m_w", 1.2),
        ("1.2 K m/W", "soil_k_m_w", 1.2),
        ("25 degC", "air_temp_c", 25.0),
        ("-5 °C", "air_temp_c", -5.0),
        ("298.15 K", "air_temp_c", 25.0),  # t/°C = T/K − 273.15 (SI Brochure 9th ed. 2.3.1)
        ("77 degF", "air_temp_c", 25.0),  # (77 − 32) / 1.8 (NIST SP 811, from memory)
        ("2 mm²", "size_mm2", 2.0),
        ("2 mm^2", "size_mm2", 2.0),
        ("2 mm**2", "size_mm2", 2.0),
        ("2 mm2", "size_mm2", 2.0),  # the cable trade's way of writing mm²
        ("2.5 MVA", "ac_kva", 2500.0),  # mega / kilo = 1e3
        ("1.5 kV", "ac_v", 1500.0),
        ("200 ms", "clear_s", 0.2),
        ("1.5 %", "drop_pct", 1.5),
        ("+1.5e3 mm", "depth_m", 1.5),
        ("3", "strings", 3.0),
        (" 3 ", "strings", 3.0),
        (2, "soil_k_m_w", 2.0),
        (0.7, "depth_m", 0.7),
    ],
)
def test_quantities_convert_to_the_unit_of_the_key(text, key, expected):
    assert to_number(text, key) == expected


@pytest.mark.parametrize(
    ("value", "key", "message"),
    [
        ("9**9**9 mm", "depth_m", f"'9**9**9 mm' {NOT_A_QUANTITY}"),  # never evaluated
        ("1e999999 m", "depth_m", f"'1e999999 m' {NOT_A_QUANTITY}"),  # exponent > 3 digits
        ("(1+1) m", "depth_m", f"'(1+1) m' {NOT_A_QUANTITY}"),
        ("2*3 m", "depth_m", f"'2*3 m' {NOT_A_QUANTITY}"),
        ("1_000 mm", "depth_m", f"'1_000 mm' {NOT_A_QUANTITY}"),
        ("deep", "depth_m", f"'deep' {NOT_A_QUANTITY}"),
        ("", "depth_m", f"'' {NOT_A_QUANTITY}"),
        ("1 m; 2 m", "depth_m", f"'1 m; 2 m' {NOT_A_QUANTITY}"),
        ("inf mm", "depth_m", f"'inf mm' {NOT_A_QUANTITY}"),
        ("1e999 m", "depth_m", "'1e999 m' is not a finite number"),
        ("1 kV", "isc_a", "'1 kV' is not a quantity in A: kV cannot be converted to A"),
        ("3 m", "isc_a", "'3 m' is not a quantity in A: m cannot be converted to A"),
        ("1 furlongz", "depth_m", "'1 furlongz' is not a quantity in m: unknown unit 'furlongz'"),
        ("3 A", "strings", "'3 A' is not a number (no unit may be given for strings)"),
        ("three", "strings", "'three' is not a number"),
        ("nan", "strings", "'nan' is not a number"),
        (True, "depth_m", "True is not a number"),  # booleans are never numbers
        (False, "strings", "False is not a number"),
        ([1], "depth_m", "[1] is not a number"),
        (float("inf"), "depth_m", "inf is not a finite number"),
        (10**400, "strings", "is not a finite number (too large)"),
    ],
)
def test_anything_else_is_refused_with_a_reason(value, key, message):
    with pytest.raises(ValueError) as info:
        to_number(value, key)
    assert message in str(info.value)


def test_long_text_is_refused_before_it_is_parsed():
    text = "1" * 50 + " mm"
    assert to_number(text, "depth_m") == 1.11111111111e46  # 53 characters: within the limit
    padded = text.center(MAX_QUANTITY_CHARS + 1)
    with pytest.raises(ValueError, match="not a quantity"):
        to_number(padded, "depth_m")  # 65 characters, blanks included
    with pytest.raises(ValueError) as info:
        to_number("9" * 10_000, "depth_m")
    assert len(str(info.value)) < 120  # the message quotes a cut value, not 10,000 digits


@pytest.mark.parametrize(
    ("token", "canonical"),
    [
        ("K·m/W", "K*m/W"),
        ("K m/W", "K*m/W"),
        ("K * m / W", "K*m/W"),
        ("mm²", "mm**2"),
        ("mm^2", "mm**2"),
        ("mm2", "mm**2"),
        ("m^-1", "m**-1"),
        ("°C", "°C"),
        ("%", "%"),
    ],
)
def test_canonical_unit(token, canonical):
    assert canonical_unit(token) == canonical


class _RecordingRegistry:
    """Stands in for pint's registry: records every text pint is given, converts m and mm."""

    def __init__(self):
        self.seen: list[str] = []

    def parse_units(self, text):
        self.seen.append(text)
        return {"mm": 1e-3, "m": 1.0}[text]

    def Quantity(self, x, factor):  # noqa: N802 - pint's name
        class Q:
            def to(self, target):
                return type("M", (), {"magnitude": x * factor})()

        return Q()


def test_pint_sees_only_the_vetted_unit_token(monkeypatch):
    fake = _RecordingRegistry()
    monkeypatch.setattr(units, "_registry", lambda: fake)
    units._affine.cache_clear()
    try:
        for text in ("9**9**9 mm", "1e999999 m", "__import__('os') m", "2*3 mm", "(800) mm"):
            with pytest.raises(ValueError, match="not a quantity"):
                to_number(text, "depth_m")
        assert fake.seen == []  # refused before pint
        assert to_number("800 mm", "depth_m") == 0.8
        assert to_number("-2 mm", "depth_m") == -0.002  # cached: pint is asked once per unit
        assert fake.seen == ["mm"]
    finally:
        units._affine.cache_clear()


KEYS = ("depth_m", "isc_a", "air_temp_c", "soil_k_m_w", "strings", "size_mm2", "drop_pct")
#: text close to the grammar: numbers with and without units, powers, operators, junk
NEAR_QUANTITY = st.from_regex(
    r"\s?[+-]?[0-9]{0,4}(\.[0-9]{0,3})?([eE][+-]?[0-9]{1,4})?\s?"
    r"([a-zA-Zµ°%*()^]{1,5}([\^]-?[0-9]|[²³23]|\*\*[0-9]{1,3})?"
    r"(\s?[*·/ ]\s?[a-zA-Z°%]{1,4}){0,3})?\s?",
    fullmatch=True,
)


def _returns_finite_or_raises(text: str, key: str) -> None:
    try:
        x = to_number(text, key)
    except ValueError:
        return
    assert isinstance(x, float) and math.isfinite(x)


# no deadline (no test is timed): that pint never evaluates the text is
# test_pint_sees_only_the_vetted_unit_token's check
@settings(max_examples=500, deadline=None)
@given(text=st.text(), key=st.sampled_from(KEYS))
def test_any_text_returns_a_finite_float_or_raises_value_error(text, key):
    _returns_finite_or_raises(text, key)


@settings(max_examples=500, deadline=None)
@given(text=NEAR_QUANTITY, key=st.sampled_from(KEYS))
def test_near_quantities_return_a_finite_float_or_raise_value_error(text, key):
    _returns_finite_or_raises(text, key)
