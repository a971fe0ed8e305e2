"""Conductor resistance and impedance, NEC 2023 Chapter 9 Tables 8 and 9.

* Table 8: d.c. resistance at 75 °C of stranded conductors (uncoated Cu, coated Cu, Al), corrected
  to another temperature by the table's note R2 = R1 · [1 + α (T2 − 75)], α = 0.00323 (Cu),
  0.00330 (Al);
* Table 9: a.c. resistance and reactance of three single conductors in conduit (PVC, aluminium or
  steel), 600 V, 60 Hz, 75 °C; effective Z = R cos θ + X sin θ (Table 9 note 2).

The tables are per 1000 ft; results here are Ω/km (÷ 0.3048).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, check_option
from calc.nec.sizes import foot_m, size_index, size_labels
from calc.tables import load_table

__all__ = [
    "CONDUITS",
    "ac_resistance_ohm_km",
    "dc_resistance_ohm_km",
    "effective_z_ohm_km",
    "reactance_ohm_km",
    "table8_alpha_per_k",
]

#: conduit materials of Table 9 ("al" = aluminium conduit)
CONDUITS = ("pvc", "al", "steel")
_T8 = "nec_2023_chapter9_table8_conductors.csv"
_T8A = "nec_2023_chapter9_table8_temperature.csv"
_T9 = "nec_2023_chapter9_table9_ac_impedance.csv"


def _per_km(ohm_kft: np.ndarray) -> np.ndarray:
    return ohm_kft / foot_m()  # Ω per 1000 ft = Ω per 304.8 m


def table8_alpha_per_k(material: str) -> tuple[float, float]:
    """(α [1/K], reference temperature [°C]) of the Table 8 temperature note.

    >>> table8_alpha_per_k("Cu"), table8_alpha_per_k("Al")
    ((0.00323, 75.0), (0.0033, 75.0))
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_T8A)
    row = t.where(material=material)
    return float(t["alpha_per_k"][row][0]), float(t["t_ref_c"][row][0])


def dc_resistance_ohm_km(
    sizes_mm2: ArrayLike, material: str, temp_c: ArrayLike = 75.0, coated: bool = False
) -> np.ndarray:
    """d.c. resistance of a stranded conductor [Ω/km], Table 8 at 75 °C corrected to ``temp_c``.

    Examples
    --------
    >>> from calc.nec.sizes import size_from_label
    >>> s = size_from_label(["10 AWG"])
    >>> dc_resistance_ohm_km(s, "Cu") * 0.3048  # Table 8: 1.24 Ω/kft
    array([1.24])
    """
    check_option("material", material, ("Cu", "Al"))
    if coated and material != "Cu":
        raise InputError("coated conductors are copper (Table 8 has no coated aluminium column)")
    cu_col = "r_cu_coated_ohm_kft" if coated else "r_cu_ohm_kft"
    col = {"Cu": cu_col, "Al": "r_al_ohm_kft"}[material]
    r75 = load_table(_T8)[col][size_index(sizes_mm2)]
    alpha, t_ref = table8_alpha_per_k(material)
    return _per_km(r75 * (1.0 + alpha * (np.asarray(temp_c, dtype=float) - t_ref)))


def ac_resistance_ohm_km(sizes_mm2: ArrayLike, material: str, conduit: str) -> np.ndarray:
    """a.c. resistance at 75 °C, 60 Hz, Table 9 [Ω/km]; nan where not tabulated.

    >>> from calc.nec.sizes import size_from_label
    >>> ac_resistance_ohm_km(size_from_label(["250 kcmil"]), "Cu", "steel") * 0.3048
    array([0.054])
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("conduit", conduit, CONDUITS)
    return _per_km(_table9(f"r_{material.lower()}_{conduit}_ohm_kft", sizes_mm2))


def reactance_ohm_km(sizes_mm2: ArrayLike, conduit: str) -> np.ndarray:
    """Reactance X_L at 60 Hz, Table 9 (PVC and aluminium conduit share a column) [Ω/km]."""
    check_option("conduit", conduit, CONDUITS)
    col = "xl_steel_ohm_kft" if conduit == "steel" else "xl_pvc_al_ohm_kft"
    return _per_km(_table9(col, sizes_mm2))


def _table9(col: str, sizes_mm2: ArrayLike) -> np.ndarray:
    t = load_table(_T9)
    # row of Table 9 for each row of Table 8 (Table 9 has no 700, 800, 900 kcmil rows): -1 = none
    t9 = {lab: i for i, lab in enumerate(t["size_label"].tolist())}
    to9 = np.array([t9.get(lab, -1) for lab in size_labels()])
    idx = to9[size_index(sizes_mm2)]
    return np.where(idx >= 0, t[col][np.maximum(idx, 0)], np.nan)


def effective_z_ohm_km(r_ohm_km: ArrayLike, x_ohm_km: ArrayLike, pf: ArrayLike) -> np.ndarray:
    """Effective impedance Z = R cos θ + X sin θ at power factor ``pf`` = cos θ (Table 9 note 2).

    >>> float(effective_z_ohm_km(1.0, 0.0, 0.85)), float(effective_z_ohm_km(0.0, 1.0, 0.6))
    (0.85, 0.8)
    """
    pf = np.asarray(pf, dtype=float)
    if np.any(~((pf > 0) & (pf <= 1))):
        raise InputError("power factor must be in (0, 1]")
    return np.asarray(r_ohm_km) * pf + np.asarray(x_ohm_km) * np.sqrt(1.0 - pf**2)
