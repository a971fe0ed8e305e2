"""Conductor losses (Joule's law, P = I² R) and an annual energy-loss estimate.

Annual energy loss uses the equivalent full-load loss hours method: E = P_loss · h_loss, where
h_loss = Σ (I_t / I_op)² Δt over a year, the time that the loss at operating current would need to
produce the year's energy loss. calc takes h_loss as a setting (``DesignParams.loss_hours_h``); the
result is an estimate, only as good as that figure (best taken from an hourly yield simulation of
the site).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["energy_loss_kwh", "loss_w"]


def loss_w(
    current_a: ArrayLike,
    cable_m: ArrayLike,
    r_ohm_km: ArrayLike,
    phases: ArrayLike = 0,
    parallel: ArrayLike = 1,
) -> np.ndarray:
    """Conductor loss of a circuit [W]: n · I² · R · L / p.

    n = 2 current-carrying conductors for d.c. (``phases`` 0) and single-phase, 3 for three-phase;
    p conductors in parallel per pole or phase share the current equally.

    Examples
    --------
    >>> loss_w([10.0, 20.0], 100.0, 4.61)  # d.c.; four times the loss at twice the current
    array([ 92.2, 368.8])
    """
    n = np.where(np.asarray(phases) == 3, 3.0, 2.0)
    i = np.asarray(current_a, dtype=float)
    return (
        n
        * i**2
        * np.asarray(r_ohm_km, float)
        * np.asarray(cable_m, float)
        / 1e3
        / np.asarray(parallel, dtype=float)
    )


def energy_loss_kwh(loss_w_: ArrayLike, loss_hours_h: float) -> np.ndarray:
    """Annual energy-loss estimate [kWh] = loss at operating current [W] × loss hours [h] / 1000.

    >>> energy_loss_kwh([100.0], 1000.0)
    array([100.])
    """
    return np.asarray(loss_w_, dtype=float) * float(loss_hours_h) / 1e3
