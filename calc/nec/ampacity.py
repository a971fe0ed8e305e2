"""Conductor ampacity, NEC 2023 Article 310 and 110.14(C).

* Table 310.16 (≤ 3 current-carrying conductors in raceway, cable or earth, 30 °C) and Table
  310.17 (single conductors in free air, 30 °C) — ``location`` ``"raceway"`` / ``"free_air"``;
* 310.15(B)(1) ambient correction: the table (30 °C base) and the section's formula
  I' = I · √((Tc − Ta') / (Tc − 30));
* Table 310.15(C)(1) adjustment for more than three current-carrying conductors;
* 110.14(C) terminal limit: the conductor's corrected ampacity may not exceed the table value of
  the termination's temperature column;
* 310.14(A)(2) exception: the higher ampacity of two adjacent portions may be used beyond the
  transition for 10 ft or 10 % of the circuit length, whichever is less.

Columns are the conductor temperature ratings 60, 75 and 90 °C (e.g. 90 °C: THWN-2, XHHW-2,
USE-2, PV wire). Direct burial: Table 310.16 includes earth, but the installation's soil and
depth are not represented; engineered ratings (310.14(B)) are not provided here (see
:mod:`calc.rules.nec`).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, check_option
from calc.nec.sizes import foot_m, size_index
from calc.tables import load_table

__all__ = [
    "LOCATIONS",
    "RATINGS_C",
    "adjustment_factor",
    "ambient_factor",
    "ambient_factor_formula",
    "ampacity_a",
    "nec_rule",
    "short_section_max_m",
    "table_ampacity_a",
]

#: conductor temperature ratings (columns of Tables 310.16 / 310.17) [°C]
RATINGS_C = (60, 75, 90)
#: "raceway" = Table 310.16 (raceway, cable or earth); "free_air" = Table 310.17
LOCATIONS = ("raceway", "free_air")
_TABLES = {
    "raceway": "nec_2023_table_310_16_ampacity.csv",
    "free_air": "nec_2023_table_310_17_free_air.csv",
}
_AMB = "nec_2023_table_310_15_b_1_ambient.csv"
_ADJ = "nec_2023_table_310_15_c_1_adjustment.csv"
_RULES = "nec_2023_rules.csv"


def nec_rule(name: str) -> float:
    """A constant of ``nec_2023_rules.csv`` (e.g. ``"source_isc_factor"``, ``"ambient_base_c"``).

    >>> nec_rule("source_isc_factor"), nec_rule("next_size_up_max_a")
    (1.25, 800.0)
    """
    t = load_table(_RULES)
    check_option("NEC rule", name, tuple(t["name"].tolist()))
    return float(t["value"][t.where(name=name)][0])


def _rating(rating_c: int) -> str:
    if rating_c not in RATINGS_C:
        raise InputError(f"conductor temperature rating must be 60, 75 or 90 °C; got {rating_c!r}")
    return f"{int(rating_c)}c"


def table_ampacity_a(
    sizes_mm2: ArrayLike, material: str, rating_c: int, location: str = "raceway"
) -> np.ndarray:
    """Allowable ampacity of NEC 2023 Table 310.16 or 310.17 [A]; nan where not tabulated.

    Parameters
    ----------
    sizes_mm2 : array_like
        NEC sizes [mm²] (see :func:`calc.nec.sizes.size_from_label`).
    material : {"Cu", "Al"}
    rating_c : {60, 75, 90}
        Column: conductor (or termination) temperature rating [°C].
    location : {"raceway", "free_air"}

    Examples
    --------
    >>> from calc.nec.sizes import size_from_label
    >>> table_ampacity_a(size_from_label(["10 AWG", "250 kcmil"]), "Cu", 90)
    array([ 40., 290.])
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("location", location, LOCATIONS)
    col = f"amp_{_rating(rating_c)}_a"
    t = load_table(_TABLES[location])
    rows = t.where(material=material)
    return t[col][rows][size_index(sizes_mm2)]


def ambient_factor(ambient_c: ArrayLike, rating_c: int) -> np.ndarray:
    """Ambient correction factor of the NEC 2023 310.15(B)(1) table (30 °C base) [1].

    Rows cover whole degrees ("31–35"); an ambient between rows is rounded up to the next whole
    degree (the hotter row, conservative). At or below 10 °C the first row. nan where the table
    gives no factor (the conductor may not be used at that ambient, e.g. 60 °C above 55 °C).

    Examples
    --------
    >>> ambient_factor([30, 30.5, 45, 58], 90)
    array([1.  , 0.96, 0.87, 0.71])
    >>> ambient_factor([58], 60)
    array([nan])
    """
    t = load_table(_AMB)
    col = f"f_{_rating(rating_c)}"
    amb = np.ceil(np.asarray(ambient_c, dtype=float))
    if np.any(np.isnan(amb)):
        raise InputError("ambient temperature is missing (NaN)")
    upper = t["temp_max_c"]
    idx = np.searchsorted(upper, amb, side="left")
    out = np.full(amb.shape, np.nan)
    inside = idx < len(upper)
    out[inside] = t[col][idx[inside]]
    return out


def ambient_limit_c(rating_c: int) -> float:
    """The highest ambient [°C] the 310.15(B)(1) table corrects a conductor of this
    temperature rating for (the upper end of its last row with a factor; NEC 2023).

    >>> ambient_limit_c(90), ambient_limit_c(60)
    (85.0, 55.0)
    """
    t = load_table(_AMB)
    given = np.flatnonzero(np.isfinite(t[f"f_{_rating(rating_c)}"]))
    return float(t["temp_max_c"][given[-1]]) if len(given) else math.nan


def ambient_factor_formula(
    ambient_c: ArrayLike, rating_c: float, base_c: float | None = None
) -> np.ndarray:
    """Ambient correction by the 310.15(B) formula √((Tc − Ta') / (Tc − Ta)) [1].

    ``Ta`` is the table's ambient (30 °C for Tables 310.16 / 310.17, ``nec_2023_rules.csv``); nan
    where the ambient reaches the conductor rating.

    >>> round(float(ambient_factor_formula(45, 90)), 4)
    0.866
    """
    base = nec_rule("ambient_base_c") if base_c is None else base_c
    amb = np.asarray(ambient_c, dtype=float)
    ratio = (rating_c - amb) / (rating_c - base)
    return np.where(ratio > 0, np.sqrt(np.where(ratio > 0, ratio, 1.0)), np.nan)


def adjustment_factor(current_carrying: ArrayLike) -> np.ndarray:
    """Table 310.15(C)(1) adjustment factor for the number of current-carrying conductors [1].

    >>> adjustment_factor([1, 3, 4, 6, 7, 20, 21, 41, 90])
    array([1.  , 1.  , 0.8 , 0.8 , 0.7 , 0.5 , 0.45, 0.35, 0.35])
    """
    n = np.asarray(current_carrying, dtype=float)
    if np.any(~(n >= 1)) or np.any(n != np.round(n)):
        raise InputError("number of current-carrying conductors must be a whole number ≥ 1")
    t = load_table(_ADJ)
    idx = np.searchsorted(t["conductors_min"], n, side="right") - 1
    return t["factor"][idx]


def ampacity_a(
    sizes_mm2: ArrayLike,
    material: str,
    insulation_c: int,
    ambient_c: ArrayLike,
    current_carrying: ArrayLike = 3,
    location: str = "raceway",
    terminal_c: int | None = None,
    formula: bool = False,
) -> np.ndarray:
    """Ampacity after correction and adjustment, limited by the terminations [A].

    I = min(I_table(insulation) · F_ambient · F_adjustment, I_310.16(terminal)), the second term
    only when ``terminal_c`` is given (110.14(C)(1): the termination's column of Table 310.16,
    uncorrected, whatever the location — unless the equipment is listed and marked otherwise).
    ``formula`` chooses the 310.15(B) formula instead of the table for the ambient factor.

    Examples
    --------
    >>> from calc.nec.sizes import size_from_label
    >>> s = size_from_label(["12 AWG"])
    >>> ampacity_a(s, "Cu", 90, 45, 4)  # 30 A × 0.87 × 0.80
    array([20.88])
    >>> ampacity_a(s, "Cu", 90, 20, 3, terminal_c=75)  # 30 × 1.08 = 32.4, limited to 25 A
    array([25.])
    """
    base = table_ampacity_a(sizes_mm2, material, insulation_c, location)
    f_amb = (ambient_factor_formula if formula else ambient_factor)(ambient_c, insulation_c)
    amp = base * f_amb * adjustment_factor(current_carrying)
    if terminal_c is not None:
        # 110.14(C)(1): termination provisions are based on Table 310.16, also in free air
        amp = np.fmin(amp, table_ampacity_a(sizes_mm2, material, terminal_c, "raceway"))
        amp = np.where(np.isnan(base * f_amb), np.nan, amp)
    return amp


def short_section_max_m(circuit_m: ArrayLike) -> np.ndarray:
    """Longest stretch [m] beyond a transition where 310.14(A)(2)'s exception lets the higher
    ampacity apply: the lesser of 10 ft and 10 % of the circuit length.

    >>> short_section_max_m([20.0, 200.0])  # 10 % of 20 m = 2 m; 10 ft = 3.048 m
    array([2.   , 3.048])
    """
    length = np.asarray(circuit_m, dtype=float)
    return np.minimum(
        nec_rule("short_section_ft") * foot_m(), nec_rule("short_section_fraction") * length
    )
