"""Voltage drop and conductor temperature for resistance.

Voltage drop by Ohm's law on the loop (the method of IEC 60364-5-52:2009 Annex G, G.52.2, with the
resistance taken at conductor temperature by the IEC 60287-1-1 coefficient instead of 1.25 · ρ20):

* d.c.:          ΔU = 2 · L · I · R
* single-phase:  ΔU = 2 · L · I · (R cos φ + X sin φ)
* three-phase:   ΔU = √3 · L · I · (R cos φ + X sin φ)   (line-to-line)

L route length [m], I current [A], R and X per conductor [Ω/m]; with p identical conductors in
parallel per pole or phase, R and X are divided by p (equal current sharing assumed). The percentage
is taken on the operating voltage: string Vmp for d.c., U_LL for three-phase, U_LN for single-phase.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import check_option

__all__ = ["CONDUCTOR_TEMP_MODES", "conductor_temp_c", "vdrop_pct", "vdrop_v"]

CONDUCTOR_TEMP_MODES = ("max", "loading")


def conductor_temp_c(
    mode: str,
    theta_max_c: ArrayLike,
    ambient_c: ArrayLike,
    current_a: ArrayLike,
    ampacity_a: ArrayLike,
) -> np.ndarray:
    """Conductor temperature used for the resistance [°C].

    ``"max"``: the temperature on which the capacity rating is based (insulation maximum,
    conservative). ``"loading"``: θ = θamb + (θmax − θamb) · (I / Iz)², the steady-state rise
    scaling with the losses (I²), with Iz the derated capacity in the same environment; limited to
    θmax (common practice estimate).

    Examples
    --------
    >>> conductor_temp_c("loading", [90.0, 90.0], [30.0, 30.0], [0.0, 50.0], [100.0, 100.0])
    array([30., 45.])
    >>> conductor_temp_c("max", [90.0], [30.0], [50.0], [100.0])
    array([90.])
    """
    check_option("conductor_temp", mode, CONDUCTOR_TEMP_MODES)
    tmax = np.asarray(theta_max_c, dtype=float)
    if mode == "max":
        return np.broadcast_to(tmax, np.broadcast(tmax, np.asarray(current_a)).shape).copy()
    amb = np.asarray(ambient_c, dtype=float)
    ratio = np.asarray(current_a, dtype=float) / np.asarray(ampacity_a, dtype=float)
    return np.minimum(amb + (tmax - amb) * ratio**2, tmax)


def vdrop_v(
    cable_m: ArrayLike,
    current_a: ArrayLike,
    r_ohm_km: ArrayLike,
    x_ohm_km: ArrayLike = 0.0,
    pf: ArrayLike = 1.0,
    phases: ArrayLike = 0,
    parallel: ArrayLike = 1,
) -> np.ndarray:
    """Voltage drop [V] of a d.c. (``phases`` 0), single-phase (1) or three-phase (3) circuit.

    Parameters
    ----------
    cable_m : array_like
        Route length L of the circuit [m] (one way).
    current_a : array_like
        Current I [A] (total of the pole or phase).
    r_ohm_km, x_ohm_km : array_like
        Resistance and reactance of one conductor [Ω/km]; X is ignored for d.c.
    pf : array_like
        Power factor cos φ [1] (a.c.).
    phases : array_like
        0 = d.c., 1 = single-phase, 3 = three-phase.
    parallel : array_like
        Identical conductors in parallel per pole or phase.

    Examples
    --------
    >>> vdrop_v([0.0, 100.0, 200.0], 10.0, 4.61)  # zero length -> zero drop; doubles with length
    array([ 0.  ,  9.22, 18.44])
    >>> np.round(vdrop_v(100.0, 100.0, 0.2, 0.08, 1.0, 3), 3)  # cos phi = 1: sqrt(3) I R L
    np.float64(3.464)
    """
    length_km = np.asarray(cable_m, dtype=float) / 1e3
    i = np.asarray(current_a, dtype=float)
    ph = np.asarray(phases)
    cos = np.clip(np.asarray(pf, dtype=float), 0.0, 1.0)
    sin = np.sqrt(1.0 - cos**2)
    r = np.asarray(r_ohm_km, dtype=float)
    x = np.asarray(x_ohm_km, dtype=float)
    z = np.where(ph == 0, r, r * cos + x * sin)
    b = np.where(ph == 3, np.sqrt(3.0), 2.0)
    return b * length_km * i * z / np.asarray(parallel, dtype=float)


def vdrop_pct(drop_v: ArrayLike, voltage_v: ArrayLike) -> np.ndarray:
    """Voltage drop in percent of the operating voltage [%].

    >>> vdrop_pct([9.22], [922.0])
    array([1.])
    """
    return 100.0 * np.asarray(drop_v, dtype=float) / np.asarray(voltage_v, dtype=float)
