"""Quantities at the boundary: numbers or pint-parsable strings, converted once to SI.

A key's unit lives in its name (``depth_m``, ``isc_a``, ``soil_k_m_w``). A value may be a
plain number (taken in that unit) or a string with a unit (``"800 mm"``, ``"1.2 K*m/W"``),
which pint converts. Nothing downstream sees pint.
"""

from __future__ import annotations

import math
import numbers
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


@lru_cache(maxsize=1)
def _registry():  # pint is imported lazily: only config parsing needs it
    import pint

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


def unit_of(key: str) -> str | None:
    """The pint unit implied by a key name's suffix, or None (dimensionless / unknown)."""
    for suffix in sorted(SUFFIX_UNITS, key=len, reverse=True):
        if key.endswith(suffix):
            return SUFFIX_UNITS[suffix]
    return None


def to_number(value: Any, key: str) -> float:
    """Convert a config value for ``key`` to a float in the unit named by the key.

    Raises ``ValueError`` with a short reason when the value is not a number, not a
    quantity, or of the wrong dimension.

    >>> to_number("800 mm", "depth_m")
    0.8
    >>> to_number(2, "soil_k_m_w")
    2.0
    """
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is not a number")
    if isinstance(value, numbers.Real):  # int, float and numpy scalars
        x = float(value)
    elif isinstance(value, str):
        unit = unit_of(key)
        text = value.strip()
        try:
            x = float(text)
        except ValueError:
            if unit is None:
                raise ValueError(f"{value!r} is not a number") from None
            reg = _registry()
            try:
                q = reg.Quantity(text)
                x = float(q.to(unit).magnitude)
            except Exception as exc:  # pint raises several unrelated types
                raise ValueError(f"{value!r} is not a quantity in {unit}: {exc}") from None
    else:
        raise ValueError(f"{value!r} is not a number")
    if not math.isfinite(x):
        raise ValueError(f"{value!r} is not a finite number")
    return float(f"{x:.12g}")  # drop unit-conversion noise (700 mm -> 0.7, not 0.7000000000000001)
