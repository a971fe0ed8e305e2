"""Current-carrying capacity: tabulated base values and correction factors.

Sources (data files in ``calc/data``, each with its ``confirmed`` / ``memory`` tags):

* IEC 60364-5-52:2009 (Ed.3) Annex B — Tables B.52.2–B.52.5 (buried methods D1/D2), B.52.10/B.52.12
  (free air, methods E/F, Cu), B.52.14 (air temperature), B.52.15 (ground temperature), B.52.16
  (soil thermal resistivity), B.52.17 (grouping in air), B.52.18 (grouping direct in ground),
  B.52.19 (grouping in ducts).
* EN 50618:2014 Annex A — Table A.3 (PV cable ratings in air, 60 °C ambient) and Table A.4 (ambient
  factors). Values from memory.
* IEC 60287-2-1 (Ed.2 2015) — external thermal resistance T4 of a buried cable, used for the depth
  factor.

Stated extensions beyond the tables (each conservative, see the function docstrings):

* temperatures below the first tabulated row take that row's factor; above the last row → error;
* soil resistivity below 0.5 K·m/W takes the 0.5 value; above 3 K·m/W the 3 K·m/W factor is scaled
  by √(3/ρ) (IEC 60287 method with the cable's internal thermal resistance neglected);
* grouping: counts rounded up to whole circuits; between tabulated counts the factor of the next
  larger tabulated count (the factor falls with the count, so the next row never overstates the
  capacity, where interpolating between rows would: derived, see :func:`group_factor`); beyond
  the last tabulated count, 1/F² is extrapolated linearly in the count from the last two rows;
  linear interpolation in spacing;
* grouping in air (B.52.17): counts rounded up to whole circuits, between rows the next larger
  tabulated count; beyond 20 bunched circuits the same 1/F² extrapolation as buried; single-layer
  items constant beyond 9 circuits (the table's own rule);
* depth: F = min(1, √(T4(0.7 m) / T4(L))) from IEC 60287-2-1, internal thermal resistance neglected;
* Al in free air (Tables B.52.11/B.52.13 not at hand): the Cu rating × √(R20,Cu / R20,Al), the IEC
  60287 relation I ∝ R^-1/2 for equal thermal resistances (derived);
* PV cable buried (EN 50618 gives no buried rating): the XLPE 90 °C Cu rating × √(R20,cl.2 plain /
  R20,cl.5 tinned) (derived; 90 °C is the PV cable's continuous design temperature).

All results are a design aid: check them against the edition of the standard in force.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, TableRangeError, check_option
from calc.resistance import r20_ohm_km, tabulated_sizes_mm2
from calc.tables import load_table

__all__ = [
    "AIR_ARRANGEMENTS",
    "LAYING_DIRECT",
    "LAYING_DUCT",
    "PV_INSTALLATIONS",
    "air_group_factor",
    "air_temp_factor",
    "buried_capacity_a",
    "depth_factor",
    "free_air_capacity_a",
    "ground_temp_factor",
    "group_factor",
    "pv_cable_buried_capacity_a",
    "pv_cable_capacity_a",
    "reference_condition",
    "soil_factor",
    "table_count",
]

LAYING_DIRECT = 0  # method D2, cable direct in the ground
LAYING_DUCT = 1  # method D1, cable in a duct in the ground
PV_INSTALLATIONS = ("free_air", "on_surface", "two_adjacent_surface")
#: arrangements of cables in air, IEC 60364-5-52:2009 Table B.52.17 items 1-5 (names of our own)
AIR_ARRANGEMENTS = ("bunched", "wall", "ceiling", "tray", "ladder", "spaced")

_B14 = "iec60364_5_52_2009_b52_14_air_temperature.csv"
_B15 = "iec60364_5_52_2009_b52_15_ground_temperature.csv"
_B16 = "iec60364_5_52_2009_b52_16_soil_resistivity.csv"
_B17 = "iec60364_5_52_2009_b52_17_group_air.csv"
_B18 = "iec60364_5_52_2009_b52_18_group_direct.csv"
_B19 = "iec60364_5_52_2009_b52_19_group_duct.csv"
_BUR = "iec60364_5_52_2009_buried_capacity.csv"
_AIR = "iec60364_5_52_2009_free_air_capacity.csv"
_REF = "iec60364_5_52_2009_reference_conditions.csv"
_A3 = "en50618_2014_table_a3_pv_cable_capacity.csv"
_A4 = "en50618_2014_table_a4_ambient.csv"


def reference_condition(name: str) -> float:
    """Reference condition of IEC 60364-5-52:2009 Annex B tables (air_temp_c, ground_temp_c, ...).

    >>> reference_condition("depth_m"), reference_condition("soil_k_m_w")
    (0.7, 2.5)
    """
    t = load_table(_REF)
    check_option("reference condition", name, tuple(t["name"].tolist()))
    return float(t["value"][t.where(name=name)][0])


def _temp_table_factor(table: str, column: str, temp_c: ArrayLike, what: str) -> np.ndarray:
    t = load_table(table)
    ok = ~np.isnan(t[column])
    x, y = t["temp_c"][ok], t[column][ok]
    temp = np.asarray(temp_c, dtype=float)
    if np.any(np.isnan(temp)):
        raise TableRangeError(f"{what} {column}: a temperature is missing (NaN)")
    if np.any(temp > x[-1]):
        raise TableRangeError(f"{what} {column}: temperature above {x[-1]:g} °C is off the table")
    return np.interp(temp, x, y)  # below the first row: first row's factor (conservative)


def air_temp_factor(temp_c: ArrayLike, insulation: str) -> np.ndarray:
    """Correction factor for ambient air temperature [1].

    PVC / XLPE: IEC 60364-5-52:2009 Table B.52.14 (reference 30 °C). PV cable: EN 50618:2014 Table
    A.4 (reference 60 °C; 1.00 up to 60 °C; from memory). Linear interpolation between the 5 °C rows
    (the tabulated values follow √((θmax − θ)/(θmax − θref)) to ±0.01); below the first row the
    first row's factor; above the last row :class:`~calc.errors.TableRangeError`.

    Examples
    --------
    >>> air_temp_factor([30.0, 40.0, 42.5], "XLPE")  # 1.0 at the reference; 0.91 at 40 °C
    array([1.  , 0.91, 0.89])
    >>> air_temp_factor([40.0, 70.0], "PV")
    array([1.  , 0.91])
    """
    check_option("insulation", insulation, ("PVC", "XLPE", "PV"))
    if insulation == "PV":
        return _temp_table_factor(_A4, "factor", temp_c, "EN 50618 Table A.4")
    return _temp_table_factor(_B14, insulation, temp_c, "IEC 60364-5-52 Table B.52.14")


def ground_temp_factor(temp_c: ArrayLike, insulation: str) -> np.ndarray:
    """Correction factor for ground temperature [1], IEC 60364-5-52:2009 Table B.52.15 (ref 20 °C).

    PV cable buried is rated from the XLPE columns, so it takes the XLPE factor. Interpolation and
    range as :func:`air_temp_factor`.

    >>> ground_temp_factor([20.0, 30.0], "XLPE")
    array([1.  , 0.93])
    """
    check_option("insulation", insulation, ("PVC", "XLPE", "PV"))
    col = "PVC" if insulation == "PVC" else "XLPE"
    return _temp_table_factor(_B15, col, temp_c, "IEC 60364-5-52 Table B.52.15")


def soil_factor(soil_k_m_w: ArrayLike, laying: ArrayLike) -> np.ndarray:
    """Correction factor for soil thermal resistivity [1], IEC 60364-5-52:2009 Table B.52.16.

    Parameters
    ----------
    soil_k_m_w : array_like
        Soil thermal resistivity ρ [K·m/W].
    laying : array_like
        ``LAYING_DIRECT`` (0, method D2, "direct" row) or ``LAYING_DUCT`` (1, method D1, "duct"
        row).

    Notes
    -----
    Linear interpolation between tabulated resistivities. Below 0.5 K·m/W the 0.5 value is used
    (conservative). Above 3 K·m/W: F(ρ) = F(3) · √(3/ρ), from the IEC 60287 rating I ∝ (T_int +
    T4)^-1/2 with T4 ∝ ρ and the internal thermal resistance T_int neglected, which overstates the
    reduction (conservative; derived, not tabulated).

    Examples
    --------
    >>> soil_factor([2.5, 1.0, 1.0], [0, 0, 1])  # 1.0 at the reference 2.5 K.m/W
    array([1.  , 1.5 , 1.18])
    >>> np.round(soil_factor([4.0], [0]), 3)  # beyond the table: 0.90 * sqrt(3/4)
    array([0.779])
    """
    t = load_table(_B16)
    rho = np.asarray(soil_k_m_w, dtype=float)
    lay = np.asarray(laying)
    if np.any(~(rho > 0)):
        raise InputError("soil thermal resistivity must be > 0 K.m/W")
    x = t["soil_k_m_w"]
    f_direct = np.interp(rho, x, t["direct"])
    f_duct = np.interp(rho, x, t["duct"])
    f = np.where(lay == LAYING_DUCT, f_duct, f_direct)
    beyond = rho > x[-1]
    return np.where(beyond, f * np.sqrt(x[-1] / np.where(beyond, rho, 1.0)), f)


def depth_factor(depth_m: ArrayLike, diameter_m: ArrayLike, ref_depth_m: float = 0.7) -> np.ndarray:
    """Correction factor for laying depth [1], derived from IEC 60287-2-1 (Ed.2 2015) T4.

    The external thermal resistance of an isolated buried cable (or duct) of outer diameter De at
    depth L to its axis is T4 = (ρ/2π) · ln(u + √(u² − 1)), u = 2L/De (IEC 60287-2-1, from memory).
    With the
    cable's internal thermal resistances neglected (I ∝ T4^-1/2):

        F = min(1, √(T4(L_ref) / T4(L))),  L_ref = 0.7 m (IEC 60364-5-52 reference depth)

    ρ cancels. Neglecting the internal thermal resistance overstates the reduction for L > L_ref
    (conservative); for L < L_ref no credit is taken (F capped at 1). The grouping factors of Tables
    B.52.18/B.52.19 are used as tabulated for 0.7 m (mutual heating at other depths not corrected).

    Parameters
    ----------
    depth_m : array_like
        Depth to the cable (or duct) axis L [m]; must exceed De/2.
    diameter_m : array_like
        Outer diameter De of the cable group (direct) or of the duct [m].
    ref_depth_m : float
        Reference depth of the capacity tables [m].

    Examples
    --------
    >>> depth_factor([0.7, 0.5], 0.04)  # 1.0 at the reference depth; no credit shallower
    array([1., 1.])
    >>> np.round(depth_factor([1.0, 1.5], 0.04), 3)
    array([0.96 , 0.921])
    """
    depth = np.asarray(depth_m, dtype=float)
    de = np.asarray(diameter_m, dtype=float)
    if np.any(~(depth > de / 2)):
        raise InputError("depth to the cable axis must exceed half the cable or duct diameter")
    t4_ref = np.arccosh(2.0 * ref_depth_m / de)
    t4 = np.arccosh(2.0 * depth / de)
    return np.minimum(1.0, np.sqrt(t4_ref / t4))


def table_count(counts: ArrayLike, n: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """How a grouping table (B.52.17, B.52.18, B.52.19) is read for ``n`` circuits: the count
    rounded up to whole circuits, at least 1 (a count within 1e-9 of a whole number is that
    number: float noise), and the row read for it — the first tabulated count at or above it
    (the next larger row between rows), the last row beyond the table. ``counts``: the
    table's tabulated counts, ascending. Returns ``(whole counts, row counts)``.

    >>> table_count([2, 3, 9, 12, 16, 20], [1.5, 3 + 1e-12, 10, 24])
    (array([ 2.,  3., 10., 24.]), array([ 2.,  3., 12., 20.]))
    """
    xs = np.asarray(counts, dtype=float)
    k = np.ceil(np.maximum(np.asarray(n, dtype=float), 1.0) - 1e-9)
    return k, xs[np.minimum(np.searchsorted(xs, k, side="left"), xs.size - 1)]


def _by_count(counts: np.ndarray, col: np.ndarray, n: np.ndarray) -> np.ndarray:
    """Factor at circuit count n for one spacing column (:func:`table_count`: the next larger
    row between rows), 1/F² linear beyond the last."""
    xs = np.concatenate([[1.0], counts])
    ys = np.concatenate([[1.0], col])
    k, row = table_count(xs, n)
    inside = ys[np.searchsorted(xs, row)]
    inv_a, inv_b = 1.0 / ys[-2] ** 2, 1.0 / ys[-1] ** 2
    slope = (inv_b - inv_a) / (xs[-1] - xs[-2])
    beyond = 1.0 / np.sqrt(inv_b + slope * np.maximum(k - xs[-1], 0.0))
    return np.where(np.isnan(n), np.nan, np.where(k > xs[-1], beyond, inside))


def _by_spacing(nodes: np.ndarray, vals: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Piecewise-linear interpolation in spacing with per-element node values vals[k, i]."""
    s = np.clip(s, nodes[0], nodes[-1])
    k = np.clip(np.searchsorted(nodes, s, side="right") - 1, 0, len(nodes) - 2)
    w = (s - nodes[k]) / (nodes[k + 1] - nodes[k])
    cols = np.arange(s.size)
    lo = vals[k, cols]
    hi = vals[k + 1, cols]
    return lo + w * (hi - lo)


#: clearance columns of the grouping tables and their clearances [m]
_B18_COLUMNS: dict[str, float] = {
    "s_nil": 0.0,
    "s_0_125_m": 0.125,
    "s_0_25_m": 0.25,
    "s_0_5_m": 0.5,
}
_B19_COLUMNS: dict[str, float] = {"s_nil": 0.0, "s_0_25_m": 0.25, "s_0_5_m": 0.5, "s_1_0_m": 1.0}


def _group_by_spacing(t, columns: dict[str, float], count: np.ndarray, spacing: np.ndarray):
    """Grouping factor read by count in each clearance column (:func:`_by_count`), then
    interpolated by clearance."""
    vals = np.stack([_by_count(t["circuits"], t[col], count) for col in columns])
    return _by_spacing(np.array(list(columns.values())), vals, spacing)


def group_factor(count: ArrayLike, spacing_m: ArrayLike, laying: ArrayLike) -> np.ndarray:
    """Reduction factor for grouped buried circuits [1], IEC 60364-5-52:2009 B.52.18 / B.52.19.

    Parameters
    ----------
    count : array_like
        Circuits in the trench section (each parallel conductor set counted as a circuit).
    spacing_m : array_like
        Clear distance between circuits (direct) or between ducts (duct) [m]; 0 = touching.
    laying : array_like
        ``LAYING_DIRECT`` (Table B.52.18) or ``LAYING_DUCT`` (Table B.52.19 part B, single-core
        cables, one circuit per duct).

    Notes
    -----
    * Counts are rounded up to whole circuits; count ≤ 1 → 1.0.
    * Between tabulated counts (B.52.18 gives 2–9, 12, 16, 20; B.52.19 2–10, 12, 16, 20): the
      factor of the next larger tabulated count (11 circuits touching, direct: the 12-circuit
      0.36). 1/F² − 1 is the mutual heating relative to self-heating (IEC 60287-2-1 image
      method, equal losses); each further circuit adds less mutual heating than the one
      before, so a straight line between two rows — in F or in 1/F² — lies on the side of too
      little mutual heating, too high a factor; the next larger row cannot overstate the
      factor, whatever the curve (derived; the tables give no reading between their rows;
      :func:`air_group_factor` reads B.52.17 so).
    * Beyond the last tabulated count (20): 1/F² extrapolated linearly in the count from the last
      two rows: by the same argument the linear extension overstates the mutual heating
      (conservative; derived).
    * Spacing: linear interpolation between the tabulated clearances (direct: 0, 0.125, 0.25, 0.5 m;
      duct: 0, 0.25, 0.5, 1.0 m); beyond the widest column its value. Direct in ground, for
      0 < spacing < 0.125 m the value is further capped at the "one cable diameter" column, since
      calc does not know the cable diameter and that column can lie below the straight line.

    Examples
    --------
    >>> group_factor([1, 4, 4, 20], [0.0, 0.0, 0.5, 0.0], 0)  # Table B.52.18 cells
    array([1.  , 0.6 , 0.8 , 0.29])
    >>> group_factor([3], [0.375], 1)  # duct, midway between the 0.25 m and 0.5 m columns
    array([0.825])
    """
    n = np.atleast_1d(np.asarray(count, dtype=float))
    s = np.atleast_1d(np.asarray(spacing_m, dtype=float))
    lay = np.atleast_1d(np.asarray(laying))
    n, s, lay = np.broadcast_arrays(n, s, lay)
    if np.any(~(s >= 0)):
        raise InputError("spacing between circuits must be >= 0 m")
    out = np.ones(n.shape, dtype=float)

    d = lay == LAYING_DIRECT
    if np.any(d):
        t = load_table(_B18)
        nd, sd = n[d], s[d]
        f = _group_by_spacing(t, _B18_COLUMNS, nd, sd)
        one_d = _by_count(t["circuits"], t["s_one_diameter"], nd)
        first = _B18_COLUMNS["s_0_125_m"]  # the first clearance column (B.52.18)
        f = np.where((sd > 0) & (sd < first), np.minimum(f, one_d), f)
        out[d] = np.where(nd <= 1, 1.0, f)

    u = lay == LAYING_DUCT
    if np.any(u):
        nu = n[u]
        out[u] = np.where(nu <= 1, 1.0, _group_by_spacing(load_table(_B19), _B19_COLUMNS, nu, s[u]))

    bad = ~(d | u)
    if np.any(bad):
        raise InputError("laying must be 0 (direct, D2) or 1 (duct, D1)")
    return out


#: B.52.17 items 2-5 (single layers): the table gives no further reduction beyond 9 circuits
_B17_NO_FURTHER_REDUCTION = ("wall", "ceiling", "tray", "ladder", "spaced")


def _air_by_count(counts: np.ndarray, col: np.ndarray, k: np.ndarray, hold: bool) -> np.ndarray:
    """Factor at whole circuit counts k >= 1 for one B.52.17 item (see :func:`air_group_factor`)."""
    ok = ~np.isnan(col)
    xs, ys = counts[ok], col[ok]
    f = ys[np.searchsorted(xs, table_count(xs, k)[1])]  # the next larger row; the last past it
    if hold:
        return f
    several = xs > 1  # rows of 2+ circuits: _by_count supplies the one-circuit 1.0 itself
    beyond = _by_count(xs[several], ys[several], k)  # the buried policy, beyond the last row
    return np.where(k > xs[-1], beyond, f)


def air_group_factor(count: ArrayLike, arrangement: str | ArrayLike) -> np.ndarray:
    """Reduction factor for groups of circuits in air [1], IEC 60364-5-52:2009 Table B.52.17.

    Parameters
    ----------
    count : array_like
        Circuits in the group [1] (each parallel conductor set counted as a circuit; a multicore
        cable is one circuit). Must be >= 0; counts below 1 are taken as one circuit.
    arrangement : str or array_like of str
        One name per circuit (or one for all), from :data:`AIR_ARRANGEMENTS` (names of our own):

        * ``"bunched"`` — item 1: bunched in air, on a surface, embedded or enclosed (methods A–F);
        * ``"wall"`` — item 2: single layer on a wall, floor or unperforated tray (method C);
        * ``"ceiling"`` — item 3: single layer fixed directly under a wooden ceiling (method C);
        * ``"tray"`` — item 4: single layer on a perforated horizontal or vertical tray (E, F);
        * ``"ladder"`` — item 5: single layer on a cable ladder support or cleats (E, F).

    Returns
    -------
    numpy.ndarray
        Factor per circuit (at least 1-d).

    Raises
    ------
    UnknownOptionError
        An arrangement name is not one of :data:`AIR_ARRANGEMENTS` (the message lists them).
    InputError
        A count is negative or nan.

    Notes
    -----
    Table values: ``calc/data/iec60364_5_52_2009_b52_17_group_air.csv`` (every cell confirmed in
    public third-party reproductions of the table; see its header). Cables touching; the table
    applies to uniform groups of equally loaded cables, to groups of two or three single-core
    cables and to multicore cables alike; where the horizontal clearance between adjacent cables
    exceeds twice their diameter no factor is needed (the caller then passes a count of 1).

    * Counts are first rounded up to whole circuits (a fraction of a circuit has no meaning; up is
      the conservative side). count ≤ 1 → the one-circuit value: 1.0, except ``"ceiling"`` whose
      one-circuit value in the table is 0.95.
    * Between tabulated counts (the table gives 1–9, 12, 16, 20): the factor of the next larger
      tabulated count (10 bunched circuits take the 12-circuit 0.45). Factors fall with the count,
      so this is the conservative choice, as the buried :func:`group_factor` reads its tables.
    * ``"wall"``, ``"ceiling"``, ``"tray"``, ``"ladder"``: the table gives no further reduction
      beyond 9 circuits, so the 9-circuit value holds for any larger count.
    * ``"bunched"`` beyond 20 circuits: the buried policy of :func:`group_factor` — 1/F²
      extrapolated linearly in the count from the 16- and 20-circuit rows (1/F² − 1 is the mutual
      heating relative to self-heating; each further circuit adds less than the one before, so the
      linear extension overstates it: conservative, derived). Monotone, below 0.38.

    PV string cable: the EN 50618:2014 Table A.3 ratings (from memory) are for one cable alone
    (free in air, on a surface) or for one pair of loaded cables touching on a surface, i.e. one
    string circuit; EN 50618 tabulates no grouping factor of its own (from memory). Applied to
    the pair column (``"two_adjacent_surface"``), the count is the number of strings, each string
    being one circuit of two loaded single-core cables (the table's note on single-core cables).

    Examples
    --------
    >>> air_group_factor([1, 2, 4, 10, 20], "bunched")  # 10 takes the 12-circuit value
    array([1.  , 0.8 , 0.65, 0.45, 0.38])
    >>> air_group_factor([1, 9, 30], "ceiling")  # 0.95 alone; no further reduction beyond 9
    array([0.95, 0.61, 0.61])
    >>> air_group_factor([3, 3], ["tray", "ladder"])
    array([0.82, 0.82])

    Worked check: four 4 mm² PV strings bunched along a module row at 60 °C (EN 50618 reference
    ambient, factor 1.00): 0.65 × 44 A (Table A.3, two cables touching on a surface, from memory)
    = 28.6 A per string.

    >>> pair_a = pv_cable_capacity_a([4], "two_adjacent_surface")
    >>> round(float(air_group_factor(4, "bunched")[0] * pair_a[0]), 1)
    28.6
    """
    n = np.atleast_1d(np.asarray(count, dtype=float))
    names = np.asarray(arrangement, dtype=str)
    if names.ndim == 0:  # one name for every circuit
        groups = {str(check_option("air arrangement", str(names), AIR_ARRANGEMENTS)): None}
    else:
        n, names = np.broadcast_arrays(n, names)
        groups = {a: names == a for a in AIR_ARRANGEMENTS}
        known = np.logical_or.reduce(list(groups.values()))
        if not np.all(known):
            check_option("air arrangement", str(names[~known][0]), AIR_ARRANGEMENTS)
    if np.any(~(n >= 0)):
        raise InputError("number of circuits in air must be >= 0")
    k = table_count([1.0], n)[0]  # whole circuits
    t = load_table(_B17)
    out = np.empty(n.shape, dtype=float)
    for name, m in groups.items():  # at most five arrangements, each vectorised over its circuits
        hold = name in _B17_NO_FURTHER_REDUCTION
        if m is None:
            out[:] = _air_by_count(t["circuits"], t[name], k, hold)
        elif np.any(m):
            out[m] = _air_by_count(t["circuits"], t[name], k[m], hold)
    return out


def _lookup(tab_sizes: np.ndarray, tab_vals: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """Tabulated value per size; nan where the size (or the cell) is not tabulated."""
    idx = np.clip(np.searchsorted(tab_sizes, sizes), 0, len(tab_sizes) - 1)
    hit = tab_sizes[idx] == sizes
    return np.where(hit, tab_vals[idx], np.nan)


def buried_capacity_a(
    size_mm2: ArrayLike, material: str, insulation: str, loaded: int, method: str
) -> np.ndarray:
    """Tabulated capacity [A] for buried methods D1/D2, IEC 60364-5-52:2009 Tables B.52.2–B.52.5.

    Reference conditions: ground 20 °C, 2.5 K·m/W, 0.7 m. Cu from memory; Al memory-low (16–300
    mm²). nan where not tabulated.

    >>> buried_capacity_a([95, 400], "Cu", "XLPE", 3, "D2")
    array([226.,  nan])
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("insulation", insulation, ("PVC", "XLPE"))
    check_option("method", method, ("D1", "D2"))
    t = load_table(_BUR)
    rows = t.where(material=material)
    col = f"{insulation}_{int(loaded)}_{method}"
    s = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    return _lookup(t["size_mm2"][rows], t[col][rows], s)


def free_air_capacity_a(
    size_mm2: ArrayLike, material: str, insulation: str, loaded: int
) -> np.ndarray:
    """Capacity [A] of single-core cables in free air, IEC 60364-5-52:2009 B.52.10 / B.52.12 (30
    °C).

    Method F (two single-core touching for 2 loaded conductors; trefoil for 3) where tabulated
    (25 mm² and above); below 25 mm² the method E (multicore) value, which is lower than a
    single-core rating would be (conservative). Al: Cu value × √(R20,Cu / R20,Al) from IEC 60228
    (IEC 60287 I ∝ R^-1/2; derived, Tables B.52.11/B.52.13 not at hand). nan where not tabulated.

    >>> free_air_capacity_a([16, 240], "Cu", "XLPE", 3)  # 16: method E; 240: method F trefoil
    array([100., 607.])
    """
    check_option("material", material, ("Cu", "Al"))
    check_option("insulation", insulation, ("PVC", "XLPE"))
    t = load_table(_AIR)
    s = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    rows = t.where(material="Cu")
    f_col = t[f"{insulation}_{int(loaded)}_F"][rows]
    e_col = t[f"{insulation}_{int(loaded)}_E"][rows]
    vals = np.where(np.isnan(f_col), e_col, f_col)
    cu = _lookup(t["size_mm2"][rows], vals, s)
    if material == "Cu":
        return cu
    out = np.full(s.shape, np.nan)
    ok = np.isin(s, tabulated_sizes_mm2("Al")) & ~np.isnan(cu)
    if np.any(ok):
        ratio = r20_ohm_km(s[ok], "Cu") / r20_ohm_km(s[ok], "Al")
        out[ok] = cu[ok] * np.sqrt(ratio)
    return out


def pv_cable_capacity_a(size_mm2: ArrayLike, installation: str = "free_air") -> np.ndarray:
    """Capacity [A] of EN 50618 PV cable in air at 60 °C ambient, EN 50618:2014 Table A.3 (memory).

    ``installation``: "free_air", "on_surface" or "two_adjacent_surface" (two loaded cables touching
    on a surface). nan where not tabulated.

    >>> pv_cable_capacity_a([4, 6], "two_adjacent_surface")
    array([44., 57.])
    """
    check_option("installation", installation, PV_INSTALLATIONS)
    t = load_table(_A3)
    s = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    return _lookup(t["size_mm2"], t[installation], s)


def pv_cable_buried_capacity_a(size_mm2: ArrayLike, method: str) -> np.ndarray:
    """Capacity [A] of an EN 50618 PV cable pair buried (method D1 or D2), derived.

    EN 50618 tabulates no buried rating. calc takes the IEC 60364-5-52:2009 Table B.52.3 (XLPE, 2
    loaded, Cu) value and scales it by √(R20 cl.2 plain / R20 cl.5 tinned) (IEC 60228), the IEC
    60287 relation I ∝ R^-1/2 for equal thermal resistances; 90 °C is the PV cable's continuous
    design temperature.

    >>> np.round(pv_cable_buried_capacity_a([4], "D1"), 1)  # 43 A x sqrt(4.61 / 5.09)
    array([40.9])
    """
    s = np.atleast_1d(np.asarray(size_mm2, dtype=float))
    base = buried_capacity_a(s, "Cu", "XLPE", 2, method)
    ok = ~np.isnan(base)
    out = np.full(s.shape, np.nan)
    if np.any(ok):
        ratio = r20_ohm_km(s[ok], "Cu", 2) / r20_ohm_km(s[ok], "Cu", 5, tinned=True)
        out[ok] = base[ok] * np.sqrt(ratio)
    return out
