"""AWG and kcmil conductor sizes (NEC 2023 Chapter 9 Table 8 sizes, 14 AWG – 1000 kcmil).

Areas in mm² come from the definitions, not from rounded tables: one circular mil is the area of a
circle of 1 mil (0.001 in) diameter, π/4 · (0.0254 mm)²; an AWG gauge ``n`` has the ASTM B258
diameter d = 0.005 in · 92^((36 − n)/39) (1/0 = 0, 2/0 = −1, 3/0 = −2, 4/0 = −3). Constants in
``us_customary_units.csv`` and ``astm_b258_awg.csv``. Sizes are passed around as mm² floats
(as the IEC rule set does); :func:`size_label` names them ("10 AWG", "1/0 AWG", "250 kcmil").
"""

from __future__ import annotations

import re

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError
from calc.tables import load_table

__all__ = [
    "awg_area_mm2",
    "awg_diameter_mm",
    "cmil_mm2",
    "foot_m",
    "kcmil_area_mm2",
    "round_up_size_mm2",
    "size_from_label",
    "size_index",
    "size_label",
    "size_labels",
    "sizes_mm2",
]

_UNITS = "us_customary_units.csv"
_B258 = "astm_b258_awg.csv"
_T8 = "nec_2023_chapter9_table8_conductors.csv"
#: relative tolerance of a size against the NEC sizes (that of calc.rules.SIZE_RTOL)
_REL = 1e-6


def _value(table: str, name: str) -> float:
    t = load_table(table)
    return float(t["value"][t.where(name=name)][0])


def foot_m() -> float:
    """Length of one foot [m] (exactly 0.3048).

    >>> foot_m()
    0.3048
    """
    return _value(_UNITS, "foot_m")


def cmil_mm2() -> float:
    """Area of one circular mil [mm²]: π/4 · (0.001 in · 25.4 mm/in)².

    >>> round(cmil_mm2() * 1e4, 4)
    5.0671
    """
    d_mm = _value(_UNITS, "mil_in") * _value(_UNITS, "inch_mm")
    return float(np.pi / 4.0 * d_mm**2)


def awg_diameter_mm(n: ArrayLike) -> np.ndarray:
    """ASTM B258 diameter of AWG gauge ``n`` [mm] (1/0 = 0, 2/0 = −1, 3/0 = −2, 4/0 = −3).

    >>> round(float(awg_diameter_mm(-3)) / 25.4, 12)  # 4/0 AWG: 0.46 in
    0.46
    """
    n = np.asarray(n, dtype=float)
    d36 = _value(_B258, "d36_in") * _value(_UNITS, "inch_mm")
    return d36 * _value(_B258, "ratio") ** ((36.0 - n) / _value(_B258, "steps"))


def awg_area_mm2(n: ArrayLike) -> np.ndarray:
    """Cross-section of AWG gauge ``n`` [mm²] from its ASTM B258 diameter."""
    return np.pi / 4.0 * awg_diameter_mm(n) ** 2


def kcmil_area_mm2(kcmil: ArrayLike) -> np.ndarray:
    """Cross-section of a size given in kcmil [mm²] (1 kcmil = 1000 circular mils)."""
    return np.asarray(kcmil, dtype=float) * 1000.0 * cmil_mm2()


def sizes_mm2() -> np.ndarray:
    """The NEC sizes 14 AWG … 1000 kcmil [mm²], ascending (rows of Chapter 9 Table 8).

    >>> s = sizes_mm2()
    >>> len(s), round(float(s[2]), 3), round(float(s[13]), 2)  # 10 AWG, 250 kcmil
    (24, 5.261, 126.68)
    """
    t = load_table(_T8)
    awg, kcmil = t["awg_n"], t["kcmil"]
    return np.where(np.isnan(awg), kcmil_area_mm2(np.nan_to_num(kcmil)), awg_area_mm2(awg))


def size_labels() -> tuple[str, ...]:
    """Labels of :func:`sizes_mm2`, e.g. ``"14 AWG"`` … ``"1000 kcmil"``."""
    return tuple(load_table(_T8)["size_label"].tolist())


def size_index(sizes: ArrayLike, what: str = "size_mm2") -> np.ndarray:
    """Row of each size in the NEC size list (Chapter 9 Table 8); an unknown size raises
    :class:`~calc.errors.InputError` naming it."""
    s = np.asarray(sizes, dtype=float)
    ref = sizes_mm2()
    match = np.isclose(s[..., None], ref, rtol=_REL, atol=0.0)
    bad = ~match.any(axis=-1)
    if np.any(bad):
        vals = ", ".join(f"{v:g}" for v in np.unique(s[bad]))
        raise InputError(f"{what}: {vals} mm² is not an NEC size (14 AWG … 1000 kcmil)")
    return match.argmax(axis=-1)


def size_label(sizes: ArrayLike) -> np.ndarray:
    """Label of each NEC size given in mm², e.g. ``"10 AWG"``, ``"1/0 AWG"``, ``"250 kcmil"``.

    >>> size_label(size_from_label(["10 AWG", "1/0 AWG", "250 kcmil"])).tolist()
    ['10 AWG', '1/0 AWG', '250 kcmil']
    """
    return np.asarray(size_labels())[size_index(sizes)]


def round_up_size_mm2(area_mm2: ArrayLike) -> np.ndarray:
    """Smallest NEC size (14 AWG … 1000 kcmil) whose area is ≥ ``area_mm2`` [mm²]; nan above
    1000 kcmil (e.g. an equipment grounding conductor increased per 250.122(B)).

    >>> size_label(round_up_size_mm2([5.0, 5.261154954510373])).tolist()
    ['10 AWG', '10 AWG']
    """
    ref = sizes_mm2()
    a = np.asarray(area_mm2, dtype=float)
    idx = np.searchsorted(ref, a * (1.0 - _REL), side="left")
    return np.where(idx < len(ref), ref[np.minimum(idx, len(ref) - 1)], np.nan)


_LABEL = re.compile(r"^\s*(?:(\d+)/0\s*AWG|(\d+)\s*AWG|(\d+(?:\.\d+)?)\s*kcmil)\s*$", re.IGNORECASE)


def size_from_label(labels: ArrayLike) -> np.ndarray:
    """Area [mm²] of each label ``"N AWG"``, ``"k/0 AWG"`` or ``"K kcmil"`` (any AWG gauge or kcmil
    value, from the definitions); anything else raises :class:`~calc.errors.InputError`.

    >>> [round(float(v), 3) for v in size_from_label(["4/0 AWG", "1250 kcmil"])]
    [107.219, 633.384]
    """
    arr = np.asarray(labels, dtype=str)
    out = np.empty(arr.shape, dtype=float)
    bad = []
    # labels are a short list (a design's sizes, a table's rows), not per-circuit data
    for idx, lab in np.ndenumerate(arr):
        m = _LABEL.match(lab)
        if m is None:
            bad.append(str(lab))  # np.str_ would print as np.str_(...)
            continue
        aught, gauge, kcmil = m.groups()
        if aught is not None:
            out[idx] = awg_area_mm2(1 - int(aught))
        elif gauge is not None:
            out[idx] = awg_area_mm2(int(gauge))
        else:
            out[idx] = kcmil_area_mm2(float(kcmil))
    if bad:
        raise InputError(
            f"size labels {', '.join(repr(b) for b in bad)} are not 'N AWG', 'k/0 AWG' or 'K kcmil'"
        )
    return out
