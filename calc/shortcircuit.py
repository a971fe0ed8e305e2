"""Adiabatic short-circuit withstand of conductors.

IEC 60364-4-43:2008 clause 434.5.2: S ≥ √(I² t) / k, with k from Table 43A (file
``iec60364_4_43_2008_table_43a_k.csv``). Cross-check: the IEC 60949 adiabatic formula

    k = √( Qc (β + 20) / ρ20 · ln(1 + (θf − θi) / (β + θi)) )

with the material constants of ``iec60949_adiabatic_constants.csv`` (from memory).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import TableRangeError, check_option
from calc.tables import load_table

__all__ = ["k_iec60949", "k_table_43a", "min_size_adiabatic_mm2"]

_K = "iec60364_4_43_2008_table_43a_k.csv"
_C = "iec60949_adiabatic_constants.csv"


def k_table_43a(material: str, insulation: str, size_mm2: ArrayLike) -> np.ndarray:
    """k [A·s^0.5/mm²] of a line conductor, IEC 60364-4-43:2008 Table 43A.

    >>> k_table_43a("Cu", "PVC", [240, 400]), k_table_43a("Al", "XLPE", [95])
    (array([115., 103.]), array([94.]))
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("insulation", insulation, ("PVC", "XLPE"))
    t = load_table(_K)
    rows = np.flatnonzero(t.where(material=material, insulation=insulation))
    s = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    out = np.full(s.shape, np.nan)
    for r in rows:  # two rows at most (<= 300 mm² / > 300 mm²)
        sel = (s > t["size_min_mm2"][r]) & (s <= t["size_max_mm2"][r])
        out[sel] = t["k"][r]
    if np.any(np.isnan(out)):
        raise TableRangeError(f"Table 43A has no k for {material}/{insulation} at these sizes")
    return out


def k_iec60949(material: str, theta_i_c: float, theta_f_c: float) -> float:
    """k [A·s^0.5/mm²] from the IEC 60949 adiabatic formula (constants from memory).

    >>> round(k_iec60949("Cu", 90.0, 250.0), 1), round(k_iec60949("Al", 70.0, 160.0), 1)
    (142.9, 76.1)
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_C)
    r = t.where(material=material)
    qc, beta, rho = (float(t[c][r][0]) for c in ("qc_j_k_mm3", "beta_k", "rho20_ohm_mm"))
    return float(
        np.sqrt(qc * (beta + 20.0) / rho * np.log1p((theta_f_c - theta_i_c) / (beta + theta_i_c)))
    )


def min_size_adiabatic_mm2(fault_a: ArrayLike, clear_s: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Minimum cross-section [mm²] for a fault current and clearing time: √(I² t) / k.

    >>> np.round(min_size_adiabatic_mm2([20e3], [0.2], [143.0]), 1)  # 20 kA for 0.2 s, Cu XLPE
    array([62.5])
    """
    i = np.asarray(fault_a, dtype=float)
    return np.sqrt(i**2 * np.asarray(clear_s, dtype=float)) / np.asarray(k, dtype=float)
