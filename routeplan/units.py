"""How the outputs name conductor sizes and lengths: size labels per rule set, and feet.

- **Size labels** (``size_labels``): each rule set names its own standard sizes
  (``RuleSet.size_text`` of :meth:`calc.rules.RuleSet.standard_size_mm2`): under
  ``rules = "iec"`` the IEC 60228 nominal cross-section, ``"10 mm²"``; under ``rules = "nec"``
  the NEC 2023 Chapter 9 Table 8 designation, ``"10 AWG"``, ``"1/0 AWG"``, ``"250 kcmil"``
  (:func:`calc.nec.sizes.size_label`, areas from circular mils). A size outside the rule set's
  list (none its sizing chooses) keeps its mm² label rather than a wrong AWG one. Labels are
  built once per distinct size (``np.unique``), never per circuit.
- **Feet**: the international foot, exactly 0.3048 m (the 1959 international yard and pound
  agreement; NIST SP 811 — the US survey foot, 1200/3937 m, was retired for new work by NIST at
  the end of 2022 and is used here only where a layer's CRS is in it, which ``layers``
  reprojects). The constant is :func:`calc.nec.sizes.foot_m` (``calc/data/us_customary_units.csv``).
- **Unit system** (``[design] units``): ``"si"`` (default) writes the bill of quantities in metres;
  ``"us"`` writes its lengths in feet. The schedules carry both (``route_m`` and ``route_ft``,
  ``cable_m`` and ``cable_ft``) either way.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import check_option
from calc.nec import sizes as nec_sizes
from calc.rules import get_rules

__all__ = ["FOOT_M", "UNIT_SYSTEMS", "feet", "length_unit", "size_labels"]

#: the international foot [m], exactly 0.3048 (from ``calc/data/us_customary_units.csv``)
FOOT_M: float = nec_sizes.foot_m()
#: values of ``[design] units``
UNIT_SYSTEMS: tuple[str, ...] = ("si", "us")


def feet(metres: ArrayLike) -> np.ndarray:
    """Lengths in international feet: metres / 0.3048 (NaN stays NaN).

    >>> feet([0.3048, 100.0]).round(4).tolist()
    [1.0, 328.084]
    """
    return np.asarray(metres, dtype=float) / FOOT_M


def length_unit(units: str) -> str:
    """The bill's length unit for a unit system: ``"m"`` (si) or ``"ft"`` (us).

    >>> length_unit("us"), length_unit("si")
    ('ft', 'm')
    """
    check_option("units", units, UNIT_SYSTEMS)
    return "ft" if units == "us" else "m"


def _mm2_text(size: float) -> str:
    return f"{size:g} mm²"


def size_labels(sizes_mm2: ArrayLike, rules: str) -> np.ndarray:
    """The label of each conductor size [mm²] under a rule set (object array; ``""`` for NaN).

    >>> size_labels([10.0, 2.5, np.nan], "iec").tolist()
    ['10 mm²', '2.5 mm²', '']
    >>> size_labels(nec_sizes.size_from_label(["10 AWG", "250 kcmil", "2/0 AWG"]), "nec").tolist()
    ['10 AWG', '250 kcmil', '2/0 AWG']
    """
    s = np.asarray(sizes_mm2, dtype=float).ravel()
    out = np.full(s.shape, "", dtype=object)
    ok = np.isfinite(s)
    if not ok.any():
        return out
    uniq, inverse = np.unique(s[ok], return_inverse=True)
    rule_set = get_rules(rules)
    standard = rule_set.standard_size_mm2(uniq)  # nan: none of the rule set's sizes
    labels = np.array(
        [
            _mm2_text(float(v)) if np.isnan(n) else rule_set.size_text(float(n))
            for v, n in zip(uniq.tolist(), standard.tolist(), strict=True)
        ],
        dtype=object,
    )
    out[ok] = labels[inverse.ravel()]
    return out
