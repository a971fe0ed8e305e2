"""Conductor resistance and reactance.

* d.c. resistance at 20 °C: IEC 60228:2004, Table 2 (class 2) and Table 3 (class 5), plain and
  tinned Cu, Al (file ``iec60228_2004_conductor_resistance.csv``).
* resistance at temperature: IEC 60287-1-1 (Ed.2.1 2014), R(θ) = R20 · [1 + α20 (θ − 20)], with α20
  from its Table 1 (file ``iec60287_1_1_conductor_material.csv``).
* a.c. resistance: IEC 60287-1-1 (Ed.2.1 2014) clause 2.1, R = R' (1 + y_s + y_p), skin effect
  y_s (2.1.2) and proximity effect y_p (2.1.3 two cables, 2.1.4.1 three cables), with k_s, k_p from
  its Table 2 (file ``iec60287_1_1_table2_skin_proximity.csv``) and the conductor and cable
  diameters of typical single-core 0.6/1 kV XLPE cables (file
  ``lv_single_core_xlpe_cable_geometry.csv``, common practice).
* reactance per conductor: BS 7671 Appendix 4, Tables 4D1B / 4E1B, x columns (file
  ``bs7671_appendix4_reactance.csv``).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, TableRangeError, check_option
from calc.tables import load_table

__all__ = [
    "ac_resistance_factor",
    "alpha20_per_k",
    "cable_diameter_mm",
    "conductor_diameter_mm",
    "proximity_effect_factor",
    "r20_ohm_km",
    "r_at_temp_ohm_km",
    "reactance_ohm_km",
    "skin_effect_factor",
    "skin_proximity_coefficients",
    "tabulated_sizes_mm2",
]

_R20 = "iec60228_2004_conductor_resistance.csv"
_MAT = "iec60287_1_1_conductor_material.csv"
_X = "bs7671_appendix4_reactance.csv"
_KSKP = "iec60287_1_1_table2_skin_proximity.csv"
_GEOM = "lv_single_core_xlpe_cable_geometry.csv"


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


# --------------------------------------------------------------------------------------------
# a.c. resistance: skin and proximity effect, IEC 60287-1-1 (Ed.2.1 2014) clause 2.1

_X_TABLE_MAX = 2.8  # upper end of the xs/xp range of the F(x) = x^4 / (192 + 0.8 x^4) formula
_XS_MID_MAX = 3.8  # upper end of the quadratic skin-effect range (see skin_effect_factor)


def skin_proximity_coefficients(
    material: str, construction: str = "round_stranded", insulation: str = "extruded"
) -> tuple[float, float]:
    """Skin- and proximity-effect coefficients (k_s, k_p) [1], IEC 60287-1-1 Table 2.

    Parameters
    ----------
    material : {"Cu", "Al"}
    construction : str
        ``"round_solid"``, ``"round_stranded"`` (circular or circular compacted) or a Milliken
        (segmental) construction: ``"milliken"`` and, for extruded-insulated Cu,
        ``"milliken_bare_unidirectional"``, ``"milliken_bare_bidirectional"``,
        ``"milliken_insulated_wires"``.
    insulation : {"extruded", "impregnated"}
        Extruded (XLPE, EPR, PVC, PE) or dried and impregnated (paper, PPLP).

    Returns
    -------
    tuple of float
        (k_s, k_p). Raises :class:`~calc.errors.TableRangeError` for a combination the table does
        not list.

    Examples
    --------
    >>> skin_proximity_coefficients("Cu")  # round stranded, XLPE
    (1.0, 1.0)
    >>> skin_proximity_coefficients("Al")  # Table 2 gives k_p 0.8 for every Al round stranded
    (1.0, 0.8)
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("insulation", insulation, ("extruded", "impregnated"))
    t = load_table(_KSKP)
    check_option("construction", construction, tuple(dict.fromkeys(t["construction"].tolist())))
    rows = t.where(material=material, construction=construction)
    rows &= (t["insulation"] == insulation) | (t["insulation"] == "any")
    if not np.any(rows):
        listed = t.where(material=material)
        pairs = zip(t["construction"][listed], t["insulation"][listed], strict=True)
        have = [f"{c}/{i}" for c, i in pairs]
        raise TableRangeError(
            f"IEC 60287-1-1 Table 2 lists no {material} {construction} conductor with "
            f"{insulation} insulation; {material} rows: {', '.join(have)}"
        )
    i = int(np.flatnonzero(rows)[0])
    return float(t["ks"][i]), float(t["kp"][i])


def _geometry(size_mm2: ArrayLike, column: str) -> np.ndarray:
    t = load_table(_GEOM)
    sizes = np.asarray(size_mm2, dtype=float)
    tab_s = t["size_mm2"]
    idx = np.clip(np.searchsorted(tab_s, sizes), 0, len(tab_s) - 1)
    found = tab_s[idx] == sizes
    if not np.all(found):
        raise TableRangeError(
            f"no typical single-core cable geometry for size(s) "
            f"{sorted(set(sizes[~found].tolist()))} mm²; tabulated: {tab_s.tolist()} "
            f"(file {_GEOM})"
        )
    return t[column][idx]


def conductor_diameter_mm(size_mm2: ArrayLike) -> np.ndarray:
    """Conductor diameter d_c [mm] of a class 2 conductor, derived from its nominal area.

    d_c = √(4 A / (π · fill)), with the fill factor of file
    ``lv_single_core_xlpe_cable_geometry.csv``: 0.915 for circular compacted conductors of 16 mm²
    and above (common practice), 7/9 for the 7-wire conductors of 1.5–10 mm² (geometry). Derived
    values, not a standard's table. Same for Cu and Al of equal nominal area.

    Parameters
    ----------
    size_mm2 : array_like
        Nominal cross-sections [mm²], each a size of the file (1.5–630 mm²); the shape is kept.

    Examples
    --------
    >>> np.round(conductor_diameter_mm([16, 300, 630]), 2)
    array([ 4.72, 20.43, 29.61])
    """
    a = np.asarray(size_mm2, dtype=float)
    return np.sqrt(4.0 * a / (np.pi * _geometry(a, "fill_factor")))


def cable_diameter_mm(size_mm2: ArrayLike) -> np.ndarray:
    """Overall diameter D [mm] of a typical single-core 0.6/1 kV XLPE cable (common practice).

    Typical catalogue values (no maker), Cu or Al; for cables touching, side by side or in trefoil,
    the axial spacing s of IEC 60287-1-1 equals D.

    Examples
    --------
    >>> cable_diameter_mm([240, 300])
    array([25.5, 28. ])
    """
    return _geometry(size_mm2, "cable_diameter_mm")


def _x_squared(r_dc_ohm_km: np.ndarray, frequency_hz: np.ndarray, k: np.ndarray) -> np.ndarray:
    """x² = 8πf / R' · 10⁻⁷ · k with R' in Ω/m (IEC 60287-1-1 2.1.2), i.e. 2 μ0 f k / R'."""
    r_ohm_m = r_dc_ohm_km * 1e-3
    return 8.0 * np.pi * frequency_hz / r_ohm_m * 1e-7 * k


def _f_of_x(x2: np.ndarray) -> np.ndarray:
    """x⁴ / (192 + 0.8 x⁴), from x² (IEC 60287-1-1 2.1.2 and 2.1.4.1)."""
    x4 = x2 * x2
    return x4 / (192.0 + 0.8 * x4)


def _problems(**checks: tuple[np.ndarray, np.ndarray, str]) -> None:
    """Raise one InputError naming every argument whose ``bad`` mask has a hit."""
    msgs = []
    for name, (values, bad, rule) in checks.items():
        if np.any(bad):
            shown = np.unique(values[bad])[:5].tolist()
            msgs.append(f"{name} must be {rule}; got {shown}")
    if msgs:
        raise InputError("; ".join(msgs))


def _as_float(*arrays: ArrayLike) -> list[np.ndarray]:
    return [np.asarray(a, dtype=float) for a in np.broadcast_arrays(*arrays)]


def skin_effect_factor(
    r_dc_ohm_km: ArrayLike, frequency_hz: ArrayLike, ks: ArrayLike
) -> np.ndarray:
    """Skin-effect factor y_s [1], IEC 60287-1-1 (Ed.2.1 2014) 2.1.2.

    Parameters
    ----------
    r_dc_ohm_km : array_like
        d.c. resistance R' of the conductor at its operating temperature [Ω/km] (e.g.
        :func:`r_at_temp_ohm_km`). The standard's formula takes R' in Ω/m; the conversion is done
        here.
    frequency_hz : array_like
        Supply frequency f [Hz]; 0 for d.c. (y_s = 0).
    ks : array_like
        Skin-effect coefficient k_s [1] (:func:`skin_proximity_coefficients`).

    Returns
    -------
    numpy.ndarray
        y_s, broadcast over the arguments.

    Notes
    -----
    x_s² = 8πf / R' · 10⁻⁷ · k_s with R' [Ω/m] (8π·10⁻⁷ H/m = 2 μ0, so x_s is dimensionless and,
    for a solid round conductor of radius r and resistivity ρ, equals r·√(ωμ0/ρ), the argument
    of the Kelvin functions of the exact solution), then

    * 0 < x_s ≤ 2.8: y_s = x_s⁴ / (192 + 0.8 x_s⁴)
    * 2.8 < x_s ≤ 3.8: y_s = −0.136 − 0.0177 x_s + 0.0563 x_s²
    * x_s > 3.8: y_s = 0.354 x_s − 0.733

    The three ranges are confirmed in a third-party reproduction (cableizer.com documentation page
    "y_s"); the clause number 2.1.2 is from memory, corroborated by a public implementation.
    Against the exact Bessel (Kelvin-function) result for a solid round conductor R_ac/R_dc agrees
    within 3.4·10⁻⁵ for x_s ≤ 2, 1.4·10⁻³ for x_s ≤ 2.8, 6.6·10⁻³ up to 3.8 and 9.1·10⁻³ up to
    5 (tests/calc/test_ac_resistance.py).

    Examples
    --------
    300 mm² Cu class 2 at 90 °C, 50 Hz: R' = 0.0601 · (1 + 0.00393 · 70) = 0.07663 Ω/km, so
    x_s² = 1.640 and y_s = 2.689 / (192 + 2.151):

    >>> np.round(skin_effect_factor([0.0601 * 1.2751], 50.0, 1.0), 5)
    array([0.01385])
    >>> skin_effect_factor([0.0766], 0.0, 1.0)  # d.c.
    array([0.])
    """
    r, f, k = _as_float(r_dc_ohm_km, frequency_hz, ks)
    _problems(
        r_dc_ohm_km=(r, ~(np.isfinite(r) & (r > 0)), "positive and finite [ohm/km]"),
        frequency_hz=(f, ~(np.isfinite(f) & (f >= 0)), "zero (d.c.) or positive and finite [Hz]"),
        ks=(k, ~(np.isfinite(k) & (k >= 0)), "non-negative and finite"),
    )
    xs2 = _x_squared(r, f, k)
    xs = np.sqrt(xs2)
    return np.asarray(
        np.where(
            xs <= _X_TABLE_MAX,
            _f_of_x(xs2),
            np.where(xs <= _XS_MID_MAX, -0.136 - 0.0177 * xs + 0.0563 * xs2, 0.354 * xs - 0.733),
        )
    )


def proximity_effect_factor(
    r_dc_ohm_km: ArrayLike,
    frequency_hz: ArrayLike,
    dc_mm: ArrayLike,
    s_mm: ArrayLike,
    kp: ArrayLike,
    conductors: ArrayLike = 3,
) -> np.ndarray:
    """Proximity-effect factor y_p [1] of round conductors, IEC 60287-1-1 (Ed.2.1) 2.1.3, 2.1.4.1.

    Parameters
    ----------
    r_dc_ohm_km : array_like
        d.c. resistance R' at the operating temperature [Ω/km] (converted to Ω/m for the formula).
    frequency_hz : array_like
        Supply frequency f [Hz]; 0 for d.c. (y_p = 0).
    dc_mm : array_like
        Conductor diameter d_c [mm] (:func:`conductor_diameter_mm`).
    s_mm : array_like
        Distance between conductor axes s [mm], at least ``dc_mm``; ``inf`` for no neighbour.
        Cables touching: s = cable diameter (:func:`cable_diameter_mm`).
    kp : array_like
        Proximity-effect coefficient k_p [1] (:func:`skin_proximity_coefficients`).
    conductors : array_like of {2, 3}
        2: two-core cable or two single-core cables (single-phase); 3: three-core cable or three
        single-core cables (three-phase).

    Returns
    -------
    numpy.ndarray
        y_p, broadcast over the arguments. Raises :class:`~calc.errors.TableRangeError` where
        x_p > 2.8 (the standard gives no formula beyond; no extrapolation) and
        :class:`~calc.errors.InputError` for invalid arguments.

    Notes
    -----
    x_p² = 8πf / R' · 10⁻⁷ · k_p with R' [Ω/m], F = x_p⁴ / (192 + 0.8 x_p⁴), valid for x_p ≤ 2.8;
    only the ratio d_c/s enters, so both may be in any one unit.

    * three cables (2.1.4.1): y_p = F (d_c/s)² [0.312 (d_c/s)² + 1.18 / (F + 0.27)] — formula
      confirmed in two public implementations that cite IEC 60287-1-1; for three single-core cables
      in flat formation the standard takes s = √(s1·s2) (memory); trefoil touching, used by
      :mod:`calc.rules.iec`, gives the larger y_p.
    * two cables (2.1.3): y_p = 2.9 F (d_c/s)² — from memory. Cross-check (derived): at low
      frequency the three-cable formula tends to (1.18/0.27) F (d_c/s)², and the mean-square field
      that two neighbours in trefoil set up at a conductor is 1.5 times that of the one return
      conductor of a single-phase pair at the same spacing, so the two-cable factor should be
      (2/3)(1.18/0.27) = 2.91.

    Examples
    --------
    300 mm² Cu, 90 °C, 50 Hz, three single-core XLPE cables in trefoil touching: d_c = 20.43 mm,
    s = 28.0 mm, F = 0.01385:

    >>> r = 0.0601 * 1.2751
    >>> np.round(proximity_effect_factor(r, 50.0, 20.43, 28.0, 1.0, [3, 2]), 4)
    array([0.0319, 0.0214])
    >>> proximity_effect_factor([r], 50.0, 20.43, np.inf, 1.0)  # no neighbour
    array([0.])
    """
    r, f, d, s, k, n = _as_float(r_dc_ohm_km, frequency_hz, dc_mm, s_mm, kp, conductors)
    _problems(
        r_dc_ohm_km=(r, ~(np.isfinite(r) & (r > 0)), "positive and finite [ohm/km]"),
        frequency_hz=(f, ~(np.isfinite(f) & (f >= 0)), "zero (d.c.) or positive and finite [Hz]"),
        dc_mm=(d, ~(np.isfinite(d) & (d > 0)), "positive and finite [mm]"),
        s_mm=(s, ~(s >= d), "at least the conductor diameter dc_mm (inf: no neighbour) [mm]"),
        kp=(k, ~(np.isfinite(k) & (k >= 0)), "non-negative and finite"),
        conductors=(n, ~np.isin(n, (2.0, 3.0)), "2 or 3"),
    )
    xp2 = _x_squared(r, f, k)
    ratio2 = (d / s) ** 2
    off = (xp2 > _X_TABLE_MAX**2) & (ratio2 > 0)
    if np.any(off):
        i = np.flatnonzero(off.ravel())[0]
        x, ri, fi, ki = np.sqrt(xp2.ravel()[i]), r.ravel()[i], f.ravel()[i], k.ravel()[i]
        raise TableRangeError(
            "IEC 60287-1-1 proximity-effect formula is valid for x_p <= 2.8 and states no "
            f"extension; got x_p = {x:.3f} at R' = {ri:.4g} ohm/km, f = {fi:g} Hz, "
            f"k_p = {ki:g} ({int(off.sum())} value(s) off)"
        )
    big_f = _f_of_x(xp2)
    three = big_f * ratio2 * (0.312 * ratio2 + 1.18 / (big_f + 0.27))
    two = 2.9 * big_f * ratio2
    return np.asarray(np.where(n == 3, three, two))


def ac_resistance_factor(
    r_dc_ohm_km: ArrayLike,
    frequency_hz: ArrayLike,
    dc_mm: ArrayLike,
    s_mm: ArrayLike,
    ks: ArrayLike,
    kp: ArrayLike,
    conductors: ArrayLike = 3,
) -> np.ndarray:
    """Ratio of a.c. to d.c. resistance R/R' = 1 + y_s + y_p [1], IEC 60287-1-1 (Ed.2.1 2014) 2.1.

    R = R' (1 + y_s + y_p), R' the d.c. resistance at the operating temperature. Arguments as in
    :func:`skin_effect_factor` and :func:`proximity_effect_factor`, all broadcast together (e.g.
    circuits × sizes). Exactly 1 at f = 0.

    Examples
    --------
    300 mm² Cu class 2 at 90 °C and 50 Hz in trefoil touching (y_s 0.0139 + y_p 0.0319), and a
    single-phase pair of the same cables (y_p 0.0214):

    >>> np.round(ac_resistance_factor(0.0601 * 1.2751, 50.0, 20.43, 28.0, 1.0, 1.0, [3, 2]), 4)
    array([1.0457, 1.0352])
    >>> ac_resistance_factor([0.0766], 0.0, 20.43, 28.0, 1.0, 1.0)  # d.c.
    array([1.])
    """
    ys = skin_effect_factor(r_dc_ohm_km, frequency_hz, ks)
    yp = proximity_effect_factor(r_dc_ohm_km, frequency_hz, dc_mm, s_mm, kp, conductors)
    return np.asarray(1.0 + ys + yp)
