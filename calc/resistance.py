"""Conductor resistance and reactance.

* d.c. resistance at 20 °C: IEC 60228:2004, Table 2 (class 2) and Table 3 (class 5), plain and
  tinned Cu, Al (file ``iec60228_2004_conductor_resistance.csv``).
* resistance at temperature: IEC 60287-1-1 (Ed.2.1 2014), R(θ) = R20 · [1 + α20 (θ − 20)], with α20
  from its Table 1 (file ``iec60287_1_1_conductor_material.csv``).
* reactance per conductor: BS 7671 Appendix 4, Tables 4D1B / 4E1B, x columns (file
  ``bs7671_appendix4_reactance.csv``).

Skin and proximity effects are neglected, so the a.c. resistance is taken equal to the d.c.
resistance (the IEC 60287-1-1 skin-effect term is about 1.4 % for 300 mm² Cu at 50 Hz and 90 °C and
below 1 % up to 240 mm²; derived).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import TableRangeError, check_option
from calc.tables import load_table

__all__ = [
    "alpha20_per_k",
    "r20_ohm_km",
    "r_at_temp_ohm_km",
    "reactance_ohm_km",
    "tabulated_sizes_mm2",
]

_R20 = "iec60228_2004_conductor_resistance.csv"
_MAT = "iec60287_1_1_conductor_material.csv"
_X = "bs7671_appendix4_reactance.csv"


def tabulated_sizes_mm2(
    material: str = "Cu", conductor_class: int = 2, tinned: bool = False
) -> np.ndarray:
    """Sizes [mm²] tabulated in IEC 60228:2004 for a conductor material, class and coating.

    >>> tabulated_sizes_mm2("Al")[:3]
    array([10., 16., 25.])
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_R20)
    rows = t.where(material=material, coating="tinned" if tinned else "plain")
    rows &= t["conductor_class"] == conductor_class
    return t["size_mm2"][rows].copy()


def r20_ohm_km(
    size_mm2: ArrayLike, material: str = "Cu", conductor_class: int = 2, tinned: bool = False
) -> np.ndarray:
    """Maximum d.c. conductor resistance at 20 °C [Ω/km], IEC 60228:2004 Tables 2 and 3.

    Parameters
    ----------
    size_mm2 : array_like
        Nominal cross-sections [mm²]; each must be a tabulated size.
    material : {"Cu", "Al"}
    conductor_class : {2, 5}
        2 = stranded (Table 2), 5 = flexible (Table 3; Cu only).
    tinned : bool
        Metal-coated (tinned) Cu wires; EN 50618 PV cable is class 5 tinned Cu.

    Returns
    -------
    numpy.ndarray
        R20 [Ω/km]. Raises :class:`~calc.errors.TableRangeError` for an untabulated size.

    Examples
    --------
    >>> r20_ohm_km([4, 240])
    array([4.61  , 0.0754])
    >>> r20_ohm_km(4, conductor_class=5, tinned=True)  # EN 50618 PV cable
    array([5.09])
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_R20)
    rows = t.where(material=material, coating="tinned" if tinned else "plain")
    rows &= t["conductor_class"] == conductor_class
    sizes = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    tab_s = t["size_mm2"][rows]
    tab_r = t["r20_ohm_km"][rows]
    idx = np.searchsorted(tab_s, sizes)
    idx_c = np.clip(idx, 0, len(tab_s) - 1)
    found = (
        (idx < len(tab_s)) & (tab_s[idx_c] == sizes) if len(tab_s) else np.zeros_like(sizes, bool)
    )
    if not np.all(found):
        coat = "tinned" if tinned else "plain"
        raise TableRangeError(
            f"IEC 60228 class {conductor_class} {coat} {material} has no size(s) "
            f"{sorted(set(sizes[~found].tolist()))} mm²; tabulated: {tab_s.tolist()}"
        )
    return tab_r[idx_c].copy()


def alpha20_per_k(material: str) -> float:
    """Temperature coefficient of resistance at 20 °C [1/K], IEC 60287-1-1 Table 1.

    >>> alpha20_per_k("Cu"), alpha20_per_k("Al")
    (0.00393, 0.00403)
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_MAT)
    return float(t["alpha20_per_k"][t.where(material=material)][0])


def r_at_temp_ohm_km(r20: ArrayLike, temp_c: ArrayLike, material: str = "Cu") -> np.ndarray:
    """Resistance at conductor temperature [Ω/km], IEC 60287-1-1: R = R20 · [1 + α20 (θ − 20)].

    Parameters
    ----------
    r20 : array_like
        Resistance at 20 °C [Ω/km] (e.g. from :func:`r20_ohm_km`).
    temp_c : array_like
        Conductor temperature θ [°C].
    material : {"Cu", "Al"}

    Examples
    --------
    >>> r_at_temp_ohm_km([1.0], [20.0])  # factor 1.0 at the reference temperature
    array([1.])
    >>> r_at_temp_ohm_km([1.0], [90.0])  # XLPE maximum, Cu: 1 + 0.00393 * 70
    array([1.2751])
    """
    a = alpha20_per_k(material)
    return np.asarray(r20, dtype=float) * (1.0 + a * (np.asarray(temp_c, dtype=float) - 20.0))


def reactance_ohm_km(size_mm2: ArrayLike, insulation: str, phases: ArrayLike) -> np.ndarray:
    """Series reactance per conductor at 50 Hz [Ω/km], from BS 7671 Appendix 4 Tables 4D1B/4E1B.

    X = x_1ph / 2 for single-phase (two cables touching) and X = x_3ph / √3 for three-phase (trefoil
    touching), since the tabulated mV/A/m already contain the factor 2 or √3 of the circuit. Sizes
    below 25 mm² (no x tabulated, reactance negligible there) take the 25 mm² value; sizes above 300
    mm² take the 300 mm² value. Al cables take the Cu value of the same size (reactance depends on
    geometry, not on the conductor metal; assumption). PV cable (d.c. only) is given the XLPE value.

    Parameters
    ----------
    size_mm2 : array_like
        Nominal cross-sections [mm²].
    insulation : {"PVC", "XLPE", "PV"}
    phases : array_like
        1 or 3 (broadcast against ``size_mm2``).

    Examples
    --------
    >>> np.round(reactance_ohm_km([95], "XLPE", 3), 4)  # 0.145 mV/A/m / sqrt(3)
    array([0.0837])
    >>> reactance_ohm_km([95], "XLPE", 1)  # 0.170 mV/A/m / 2
    array([0.085])
    """
    check_option("insulation", insulation, ("PVC", "XLPE", "PV"))
    t = load_table(_X)
    rows = t.where(insulation="PVC" if insulation == "PVC" else "XLPE")
    s = np.asarray(size_mm2, dtype=float)
    x1 = np.interp(s, t["size_mm2"][rows], t["x_1ph_mv_a_m"][rows]) / 2.0
    x3 = np.interp(s, t["size_mm2"][rows], t["x_3ph_mv_a_m"][rows]) / np.sqrt(3.0)
    return np.where(np.asarray(phases) == 3, x3, x1)
