"""Life-cycle cost parts of a cable design: conductor mass and capitalised losses.

Pure, vectorised functions for ranking design alternatives (``routeplan place``):

* conductor mass [kg] = nominal cross-section [mm²] × 1e-6 × conductor length [m] × density
  [kg/m³] (``conductor_density.csv``: IEC 60028 for copper) — a comparison measure, not a
  purchasing weight;
* the present value of a constant yearly amount paid at the end of each of ``n`` years at the
  discount rate ``r``: the uniform-series present-worth (annuity) factor
  ``(1 − (1 + r)^−n) / r``, which is ``n`` when ``r`` = 0;
* capitalised losses = yearly energy loss [kWh] × energy price [per kWh] × that factor.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, check_option
from calc.tables import load_table

__all__ = ["annuity_factor", "capitalised_loss", "conductor_mass_kg", "density_kg_m3"]


def density_kg_m3(material: ArrayLike) -> np.ndarray:
    """Density [kg/m³] of each conductor material ("Cu", "Al"); an unknown material is refused.

    >>> density_kg_m3(["Cu", "Al"]).tolist()
    [8890.0, 2703.0]
    """
    t = load_table("conductor_density.csv")
    names = tuple(t["material"].tolist())
    m = np.asarray(material, dtype=str)
    values, inverse = np.unique(m.ravel(), return_inverse=True)
    for value in values:
        check_option("material", str(value), names)
    rows = np.array([names.index(str(v)) for v in values], dtype=int)[inverse.ravel()]
    return t["density_kg_m3"][rows.reshape(m.shape)]


def conductor_mass_kg(
    size_mm2: ArrayLike,
    conductor_m: ArrayLike,
    material: ArrayLike,
    materials: ArrayLike | None = None,
) -> np.ndarray:
    """Mass [kg] of conductors of nominal cross-section ``size_mm2`` [mm²] and total conductor
    length ``conductor_m`` [m] (cable length × conductors), per element. ``material``: each
    element's material name, or, with ``materials`` (the names), its index into
    ``materials`` (codes, as a categorical column has them: each name looked up once).

    >>> conductor_mass_kg([240.0], [1000.0], ["Al"]).round(1).tolist()
    [648.7]
    >>> conductor_mass_kg([240.0, 10.0], [1000.0, 1000.0], [1, 0], ["Cu", "Al"]).round(1).tolist()
    [648.7, 88.9]
    """
    s = np.asarray(size_mm2, dtype=float)
    length = np.asarray(conductor_m, dtype=float)
    if np.any(s < 0) or np.any(length < 0):
        raise InputError("conductor size and length must be ≥ 0")
    if materials is None:
        density = density_kg_m3(material)
    else:
        names = np.asarray(materials, dtype=str)
        codes = np.asarray(material)
        if codes.size and (
            not np.issubdtype(codes.dtype, np.integer)
            or codes.min() < 0
            or codes.max() >= names.size
        ):
            raise InputError(f"material codes must index the {names.size} materials given")
        density = density_kg_m3(names)[codes]
    return s * 1e-6 * length * density


def annuity_factor(rate_pct: float, years: float) -> float:
    """Present value of 1 paid at the end of each year for ``years`` years, discounted at
    ``rate_pct`` % a year: ``(1 − (1 + r)^−n) / r``, or ``n`` at ``r`` = 0 (uniform-series
    present-worth factor).

    >>> round(annuity_factor(5.0, 20), 4)
    12.4622
    >>> annuity_factor(0.0, 25)
    25.0

    Computed as ``−expm1(−n · log1p(r)) / r``, the same value without the cancellation of
    ``1 − (1 + r)^−n`` at a tiny rate (which gave 0 below about 1e-14 %):

    >>> annuity_factor(1e-300, 25)
    25.0
    """
    r = float(rate_pct) / 100.0
    n = float(years)
    if not (np.isfinite(r) and np.isfinite(n)) or r < 0 or n < 0:
        raise InputError(f"discount rate {rate_pct} % and {years} years must be ≥ 0")
    if r == 0.0:
        return n
    return float(-np.expm1(-n * np.log1p(r)) / r)


def capitalised_loss(
    energy_kwh_per_year: ArrayLike, price_per_kwh: float, rate_pct: float, years: float
) -> np.ndarray:
    """Present value of the yearly energy losses ``energy_kwh_per_year`` [kWh] priced at
    ``price_per_kwh`` over ``years`` years at ``rate_pct`` % (see :func:`annuity_factor`).

    >>> capitalised_loss([1000.0], 0.05, 0.0, 10).tolist()
    [500.0]
    """
    e = np.asarray(energy_kwh_per_year, dtype=float)
    price = float(price_per_kwh)
    if not np.isfinite(price) or price < 0:
        raise InputError(f"energy price {price_per_kwh} must be ≥ 0")
    return e * price * annuity_factor(rate_pct, years)
