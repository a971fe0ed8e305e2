"""Quantities at the boundary: numbers or ``<number> <unit>`` strings, converted once to SI.

A key's unit lives in its name (``depth_m``, ``isc_a``, ``soil_k_m_w``). A value may be a
plain number (taken in that unit) or a string ``<number> <unit>`` (``"800 mm"``,
``"1.2 K*m/W"``, ``"2 mm²"``). Nothing downstream sees pint.

Untrusted text never reaches pint as an expression: a string is first matched against a
strict grammar (:data:`QUANTITY_GRAMMAR`, at most :data:`MAX_QUANTITY_CHARS` characters):

- the number: an optional sign, decimal digits with an optional fraction, and an optional
  exponent of at most three digits (``-5``, ``0.8``, ``1.5e3``);
- the unit: unit words (letters of any script, so ``µm`` and ``Ω`` pass; ``°C``, ``%``)
  joined by ``*``, ``·``, ``/`` or a space, each word with an optional small integer power
  (``^2``, ``**2``, ``²``, ``³``, ``^-1``; one digit; the trade's ``mm2`` is ``mm²``).

Only the unit part, rewritten to a canonical form (``K*m/W``), is handed to pint's unit
parser, once per (unit, target) pair (the conversion is cached as ``y = a·x + b``); the
number is parsed by Python's ``float``. Anything else is "not a quantity". Arithmetic such
as ``9**9**9 mm`` is therefore never evaluated, and every input returns or raises within
microseconds once the pint registry is loaded.
"""

from __future__ import annotations

import math
import numbers
import re
from functools import lru_cache
from typing import Any

#: unit suffix of a key name → pint unit expression
SUFFIX_UNITS: dict[str, str] = {
    "_m": "m",
    "_mm2": "mm**2",
    "_a": "A",
    "_v": "V",
    "_w": "W",
    "_kva": "kVA",
    "_ka": "kA",
    "_s": "s",
    "_h": "h",
    "_c": "degC",
    "_k_m_w": "K*m/W",
    "_pct": "percent",
}

#: an example quantity per key unit, for messages
EXAMPLES: dict[str, str] = {
    "m": "800 mm",
    "mm**2": "4 mm²",
    "A": "25 A",
    "V": "1.5 kV",
    "W": "580 W",
    "kVA": "2.5 MVA",
    "kA": "25 kA",
    "s": "200 ms",
    "h": "1000 h",
    "degC": "25 °C",
    "K*m/W": "1.2 K*m/W",
    "percent": "1.5 %",
}

#: how a key's unit is written in messages, where pint's spelling differs
DISPLAY: dict[str, str] = {"mm**2": "mm²", "degC": "°C", "K*m/W": "K·m/W", "percent": "%"}

#: longest quantity string accepted (characters, surrounding blanks included)
MAX_QUANTITY_CHARS = 64

_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]{1,3})?"
#: a letter of any script: a word character that is no digit, '_' or super/subscript digit
_LETTER = r"[^\W\d_\u00b2\u00b3\u00b9\u2070-\u209f]"
_WORD = rf"(?:°?{_LETTER}(?:{_LETTER}|_)*|%)"  # a letter, then letters or '_'; or '%'
_POWER = r"(?:(?:\^|\*\*)-?[1-9]|[²³23])"
_FACTOR = rf"{_WORD}{_POWER}?"
_UNIT = rf"{_FACTOR}(?:\s*[*·/]\s*{_FACTOR}|\s+{_FACTOR})*"
#: the accepted form of a quantity string: number, then optionally a unit
QUANTITY_GRAMMAR = re.compile(rf"\s*(?P<number>{_NUMBER})\s*(?P<unit>{_UNIT})?\s*")
_TOKEN = re.compile(rf"(?P<word>{_WORD})(?P<power>{_POWER})?|\s*(?P<op>[*·/])\s*|\s+")
_SUPERSCRIPT = {"²": "2", "³": "3"}


@lru_cache(maxsize=1)
def _registry():  # pint is imported lazily: only quantities with a unit need it
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


def unit_of(key: str) -> str | None:
    """The pint unit implied by a key name's suffix, or None (dimensionless / unknown)."""
    for suffix in sorted(SUFFIX_UNITS, key=len, reverse=True):
        if key.endswith(suffix):
            return SUFFIX_UNITS[suffix]
    return None


def canonical_unit(token: str) -> str:
    """The vetted unit part of a quantity in pint's syntax: ``"K·m/W"`` → ``"K*m/W"``,
    ``"mm²"`` → ``"mm**2"``, ``"kV A"`` → ``"kV*A"``.

    ``token`` must match the unit part of :data:`QUANTITY_GRAMMAR` (ValueError otherwise).
    """
    out: list[str] = []
    pos = 0
    for m in _TOKEN.finditer(token):
        if m.start() != pos:
            break
        pos = m.end()
        if m["word"]:
            if not m["word"].lstrip("°").replace("_", "").isalpha() and m["word"] != "%":
                break  # a numeric character such as '½' that the pattern lets through
            power = m["power"] or ""
            power = power.lstrip("^*")  # '^2', '**2', '²' and 'mm2' all mean a square
            out.append(m["word"] + (f"**{_SUPERSCRIPT.get(power, power)}" if power else ""))
        elif m["op"]:
            out.append("*" if m["op"] in "*·" else "/")
        elif out and out[-1] not in ("*", "/"):  # a blank between two words multiplies
            out.append("*")
    if pos != len(token) or not out or out[-1] in ("*", "/"):
        raise ValueError(f"{token!r} is not a unit")
    return "".join(out)


@lru_cache(maxsize=512)
def _affine(unit: str, target: str) -> tuple[float, float]:
    """(a, b) with ``value in target = a · value in unit + b`` (b ≠ 0 only for °C/°F/K)."""
    reg = _registry()
    parsed = reg.parse_units(unit)  # ``unit`` is canonical: words, '*', '/', '**<digit>'
    b = float(reg.Quantity(0.0, parsed).to(target).magnitude)
    a = float(reg.Quantity(1.0, parsed).to(target).magnitude) - b
    return a, b


def example(key: str) -> str | None:
    """An example quantity for ``key`` (``'800 mm'`` for ``depth_m``), None without a unit."""
    unit = unit_of(key)
    return None if unit is None else EXAMPLES.get(unit, f"1 {unit}")


def to_number(value: Any, key: str) -> float:
    """Convert a config or attribute value for ``key`` to a float in the unit named by the key.

    Parameters
    ----------
    value : int, float, str
        A number (taken in the key's unit) or a string: a number, or ``<number> <unit>``
        (see the module docstring for the grammar) when the key's name carries a unit.
    key : str
        The key or attribute name; its suffix names the unit (:data:`SUFFIX_UNITS`).

    Returns
    -------
    float
        A finite number in the key's unit, rounded to 12 significant digits (unit
        conversion noise: ``700 mm`` gives 0.7, not 0.7000000000000001).

    Raises
    ------
    ValueError
        With a short reason: not a number, not a quantity, unknown unit, wrong dimension,
        not finite. Booleans are never numbers.

    >>> to_number("800 mm", "depth_m")
    0.8
    >>> to_number(2, "soil_k_m_w")
    2.0
    >>> to_number("-5 °C", "air_temp_c")
    -5.0
    """
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is not a number")
    if isinstance(value, numbers.Real):  # int, float, fractions and numpy scalars
        try:
            x = float(value)
        except OverflowError:  # an integer beyond the float range
            raise ValueError(f"{show_value(value)} is not a finite number (too large)") from None
    elif isinstance(value, str):
        x = _parse_text(value, key)
    else:
        raise ValueError(f"{show_value(value)} is not a number")
    if not math.isfinite(x):
        raise ValueError(f"{show_value(value)} is not a finite number")
    return float(f"{x:.12g}")


def _parse_text(value: str, key: str) -> float:
    unit = unit_of(key)
    m = QUANTITY_GRAMMAR.fullmatch(value) if len(value) <= MAX_QUANTITY_CHARS else None
    if m is None:
        if unit is None:
            raise ValueError(f"{show_value(value)} is not a number")
        raise ValueError(_not_a_quantity(value, key))
    x = float(m["number"])
    token = m["unit"]
    if token is None:
        return x
    if unit is None:
        raise ValueError(f"{show_value(value)} is not a number (no unit may be given for {key})")
    try:
        canonical = canonical_unit(token)
    except ValueError:
        raise ValueError(_not_a_quantity(value, key)) from None
    try:
        a, b = _affine(canonical, unit)
    except Exception as exc:  # pint raises several unrelated types (undefined, dimension)
        reason = (
            f"unknown unit {token!r}"
            if type(exc).__name__ == "UndefinedUnitError"
            else f"{token} cannot be converted to {DISPLAY.get(unit, unit)}"
        )
        shown = DISPLAY.get(unit, unit)
        raise ValueError(f"{show_value(value)} is not a quantity in {shown}: {reason}") from None
    return a * x + b


def _not_a_quantity(value: str, key: str) -> str:
    return (
        f"{show_value(value)} is not a quantity: expected '<number> <unit>', e.g. {example(key)!r}"
    )


def show_value(value: Any) -> str:
    """``repr`` of a value for a message, cut to 40 characters (user text may be long)."""
    text = repr(value)
    return text if len(text) <= 40 else text[:36] + "...'"
