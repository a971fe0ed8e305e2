"""Overcurrent protection of PV array and a.c. circuits, and the bifacial design Isc (IEC rule set).

Editions
--------
The rules follow IEC 62548:2016 (rules from memory; its clause text was not at hand) with the
bifacial gain that IEC 62548-1:2023 (1st ed., which cancels and replaces IEC 62548:2016) adds in
its Annex F ("K_I factor calculations for bifacial and non-optimally oriented systems", publisher's
summary, https://webstore.iec.ch/publication/64171). The Annex F formula itself was not seen; calc
uses the usual bifacial short-circuit current I_SC,BIFI = I_SC · (1 + φ · G_rear / G_front) (from
memory) and applies the 1.25 factor of IEC 62548:2016 on top of it. a.c. overload protection
follows IEC 60364-4-43:2008 (Ed.3) clause 433.1.

Data files (``calc/data``): ``iec60269_6_gpv_fuse_ratings.csv`` (gPV fuse ratings, catalogue
practice), ``iec60898_1_breaker_ratings.csv`` and ``iec60947_2_breaker_ratings.csv``
(circuit-breaker ratings), ``overcurrent_device_conventional_currents.csv`` (I2 / In of each device
kind), ``iec61215_1_2021_bifacial_irradiance.csv`` (BNPI, the default rear irradiance ratio) and the
array fuse bounds in ``iec62548_2016_pv_dc_rules.csv``. Each row carries its ``confirmed`` /
``memory`` tag.

Decision rule for array (sub-array) cables — to be followed by the sizing engine
-------------------------------------------------------------------------------
Arrays paralleled on one inverter d.c. input (``group``: the point where they are joined with no
device between them — a d.c. input, or a common d.c. bus joining several inputs) feed a fault on any
one array cable from all the others.

1. Design I_SC of each array: the sum of its strings' :func:`bifacial_isc_a` (monofacial: the
   datasheet I_SC).
2. Own current: every array cable carries Iz ≥ 1.25 · I_SC (:func:`calc.pv.array_design_current_a`).
3. Backfeed B = :func:`backfeed_a` (1.25 · Σ I_SC of the other arrays of the input).
4. Protection is needed where B > Iz, Iz the cable's derated capacity (after sizing). Then either

   a. the design uses array fuses: fit F = :func:`array_fuse` (1.25 · I_SC ≤ In ≤ 2.4 · I_SC, from
      memory) and require Iz ≥ In and I2 ≤ 1.45 · Iz (IEC 60364-4-43:2008 433.1). For gPV fuse-links
      I2 = 1.45 · In (IEC 60269-6, from memory), so both reduce to Iz ≥ In; or
   b. the design uses no array fuses: the cable itself carries the backfeed, Iz ≥ B.

   :func:`array_min_capacity_a` gives the capacity to size for (a: max(1.25 · I_SC, In, I2 / 1.45);
   b: max(1.25 · I_SC, B)); :func:`array_cable_check` reports, after sizing, whether protection was
   needed and which condition fails. Where the design uses array fuses, a non-iterative sequence is:
   size for 1.25 · I_SC; where B > Iz, fit the fuse and re-size those circuits for
   :func:`array_min_capacity_a` — the check then holds by construction.

   Limiting cases: one array on an input has B = 0; two equal arrays have B = 1.25 · I_SC, which a
   cable sized for its own array already carries, so protection is first needed from three arrays
   (or two unequal ones) on one input.

a.c. circuits (IEC 60364-4-43:2008 433.1): Ib = :func:`calc.pv.ac_max_current_a`; the breaker
:func:`ac_breaker` is the smallest standard In ≥ Ib; the cable needs Iz ≥ max(In, I2 / 1.45)
(``Breaker.iz_min_a``); after sizing :func:`overload_check` verifies Ib ≤ In ≤ Iz and
I2 ≤ 1.45 · Iz.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, check_option
from calc.pv import pv_rule
from calc.ratings import smallest_rating_a
from calc.tables import load_table

__all__ = [
    "BREAKER_DEVICES",
    "ArrayFuse",
    "Breaker",
    "OverloadCheck",
    "ProtectionCheck",
    "ac_breaker",
    "array_cable_check",
    "array_fuse",
    "array_min_capacity_a",
    "backfeed_a",
    "bifacial_isc_a",
    "bnpi_rear_ratio",
    "breaker_ratings_a",
    "gpv_fuse_ratings_a",
    "i2_factor",
    "overload_check",
]

_GPV = "iec60269_6_gpv_fuse_ratings.csv"
_BREAKERS = {
    "iec60898-1": "iec60898_1_breaker_ratings.csv",
    "iec60947-2": "iec60947_2_breaker_ratings.csv",
}
_CONVENTIONAL = "overcurrent_device_conventional_currents.csv"
_BIFACIAL = "iec61215_1_2021_bifacial_irradiance.csv"

#: Circuit-breaker kinds with a rating list: IEC 60898-1 (In ≤ 125 A) and IEC 60947-2.
BREAKER_DEVICES: tuple[str, ...] = tuple(_BREAKERS)

_REL = 1e-9  # relative tolerance of the rating comparisons (a value equal to a rating fits it)


def _i2_max_x_iz() -> float:
    """IEC 60364-4-43:2008 433.1: I2 ≤ 1.45 · Iz (``iec60364_4_43_2008_433_1_coordination.csv``,
    from memory)."""
    t = load_table("iec60364_4_43_2008_433_1_coordination.csv")
    return float(t["value"][t.where(name="i2_max_x_iz")][0])


# --------------------------------------------------------------------------------------------
# rating lists


def _sorted_column(name: str) -> np.ndarray:
    return np.sort(load_table(name)["rating_a"])


def _restrict(standard_a: np.ndarray, allowed_a: ArrayLike | None, setting: str, what: str):
    """The standard ratings named in ``allowed_a`` (ascending); any other value is an error."""
    if allowed_a is None:
        return standard_a.copy()
    try:
        allowed = np.atleast_1d(np.asarray(allowed_a, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"{setting}: ratings must be numbers [A]") from None
    if allowed.ndim != 1 or allowed.size == 0:
        raise InputError(f"{setting}: must be a non-empty list of ratings [A]")
    match = np.isclose(allowed[:, None], standard_a[None, :], rtol=_REL, atol=0.0)
    unknown = allowed[~match.any(axis=1)]
    if unknown.size:
        names = ", ".join(f"{v:g} A" for v in unknown)
        verb = "is" if unknown.size == 1 else "are"
        valid = ", ".join(f"{v:g}" for v in standard_a)
        raise InputError(f"{setting}: {names} {verb} not in the {what} list ({valid} A)")
    return standard_a[match.any(axis=0)]


def gpv_fuse_ratings_a(
    allowed_a: ArrayLike | None = None, setting: str = "fuse_ratings_a"
) -> np.ndarray:
    """gPV fuse-link rated currents [A] (IEC 60269-6:2010 fuse-links; catalogue list), ascending.

    The standard gives no closed list of ratings that was seen: the values are catalogue practice
    (``iec60269_6_gpv_fuse_ratings.csv``, memory-low as a whole, rows confirmed where a public
    catalogue offering them was seen). One list serves string fuses and sub-array / array fuses.

    Parameters
    ----------
    allowed_a : array_like, optional
        The project's own ratings [A] (a design setting); each must be in the list, else
        :class:`calc.errors.InputError` naming the value.
    setting : str
        Name of the design setting, used in the error message.

    Examples
    --------
    >>> gpv_fuse_ratings_a()[:12]
    array([ 1.,  2.,  3.,  4.,  5.,  6.,  8., 10., 12., 15., 16., 20.])
    >>> gpv_fuse_ratings_a([20, 15, 200.0])
    array([ 15.,  20., 200.])
    """
    return _restrict(_sorted_column(_GPV), allowed_a, setting, "IEC 60269-6 gPV fuse rating")


def breaker_ratings_a(
    device: str, allowed_a: ArrayLike | None = None, setting: str = "breaker_ratings_a"
) -> np.ndarray:
    """Circuit-breaker rated currents In [A] of a device kind, ascending.

    ``"iec60898-1"``: IEC 60898-1 preferred values 6–125 A (confirmed except 8 A, memory).
    ``"iec60947-2"``: moulded-case and air breakers, 16–4000 A: the R10 series of IEC 60059 from
    160 A (memory; 160–630 A seen in a catalogue), the IEC 60898-1 values below (common practice),
    and the catalogue values 320 A and 3200 A beside R10 315 A and 3150 A.

    Parameters
    ----------
    device : {"iec60898-1", "iec60947-2"}
    allowed_a : array_like, optional
        The project's own ratings [A]; each must be in the device's list, else
        :class:`calc.errors.InputError` naming the value.
    setting : str
        Name of the design setting, used in the error message.

    Examples
    --------
    >>> breaker_ratings_a("iec60898-1").tolist()
    [6.0, 8.0, 10.0, 13.0, 16.0, 20.0, 25.0, 32.0, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0]
    >>> breaker_ratings_a("iec60947-2", [400, 250])
    array([250., 400.])
    """
    check_option("breaker device", device, BREAKER_DEVICES)
    what = f"{device.upper().replace('IEC', 'IEC ')} breaker rating"
    return _restrict(_sorted_column(_BREAKERS[device]), allowed_a, setting, what)


def i2_factor(device: str) -> float:
    """Conventional operating current I2 as a multiple of In [1] for a device kind.

    I2 is the current ensuring operation within the conventional time (1 h for In ≤ 63 A).
    ``"iec60898-1"`` 1.45 and ``"iec60947-2"`` 1.30 are confirmed (a maker's public summary of both
    standards); ``"gpv"`` (IEC 60269-6 gPV fuse-links) 1.45 is from memory.

    >>> i2_factor("iec60898-1"), i2_factor("iec60947-2"), i2_factor("gpv")
    (1.45, 1.3, 1.45)
    """
    t = load_table(_CONVENTIONAL)
    check_option("protective device", device, tuple(t["device"].tolist()))
    return float(t["i2_factor"][t.where(device=device)][0])


# --------------------------------------------------------------------------------------------
# bifacial design Isc


def bnpi_rear_ratio() -> float:
    """Rear / front irradiance of the bifacial nameplate irradiance (BNPI) [1]: 135 / 1000.

    IEC 61215-1:2021 term (confirmed through a public page; file
    ``iec61215_1_2021_bifacial_irradiance.csv``).

    >>> bnpi_rear_ratio()
    0.135
    """
    t = load_table(_BIFACIAL)
    row = t.where(name="bnpi")
    return float(t["g_rear_w_m2"][row][0] / t["g_front_w_m2"][row][0])


def _first_bad(mask: np.ndarray, values: np.ndarray) -> str:
    i = int(np.flatnonzero(mask)[0])
    return f"got {values.flat[i]:g} at index {i}"


def bifacial_isc_a(
    isc_a: ArrayLike,
    bifaciality: ArrayLike,
    rear_irradiance_ratio: ArrayLike | None = None,
    isc_bifacial_a: ArrayLike = np.nan,
) -> np.ndarray:
    """Design short-circuit current of a (bifacial) module at STC front irradiance [A].

    Parameters
    ----------
    isc_a : array_like
        Datasheet I_SC at STC, front side only [A].
    bifaciality : array_like
        Bifaciality of I_SC, φ = I_SC,rear / I_SC,front, within [0, 1]; nan = monofacial.
    rear_irradiance_ratio : array_like, optional
        Design rear / front irradiance G_rear / G_front [1]; default :func:`bnpi_rear_ratio`
        (0.135, the bifacial nameplate irradiance of IEC 61215-1).
    isc_bifacial_a : array_like, optional
        Datasheet bifacial I_SC at the design rear irradiance [A]; where finite it is used as is.

    Returns
    -------
    numpy.ndarray
        ``isc_bifacial_a`` where finite, else I_SC · (1 + φ · G_rear / G_front), I_SC for nan φ.

    Notes
    -----
    I_SC,BIFI = I_SC · (1 + φ · G_rear / G_front) (from memory): the rear side adds its current in
    proportion to its irradiance and its bifaciality. IEC 62548-1:2023 Annex F derives the current
    factor K_I of bifacial systems (publisher's summary); its formula was not seen. The cable and
    fuse rules then apply 1.25 · I_SC,BIFI (IEC 62548:2016, from memory).

    Raises
    ------
    calc.errors.InputError
        φ outside [0, 1], a negative or non-finite ratio, or a datasheet bifacial I_SC below I_SC.

    Examples
    --------
    >>> bifacial_isc_a([14.0, 14.0, 14.0, 14.0], [0.8, np.nan, 0.0, 0.8],
    ...                isc_bifacial_a=[np.nan, np.nan, np.nan, 15.2])
    array([15.512, 14.   , 14.   , 15.2  ])
    """
    isc = np.asarray(isc_a, dtype=float)
    phi = np.asarray(bifaciality, dtype=float)
    ratio = np.asarray(
        bnpi_rear_ratio() if rear_irradiance_ratio is None else rear_irradiance_ratio, dtype=float
    )
    datasheet = np.asarray(isc_bifacial_a, dtype=float)
    isc, phi, ratio, datasheet = np.broadcast_arrays(isc, phi, ratio, datasheet)
    bad = ~np.isnan(phi) & ((phi < 0.0) | (phi > 1.0))
    if bad.any():
        raise InputError(
            f"bifaciality must be within 0-1 (nan = monofacial); {_first_bad(bad, phi)}"
        )
    bad = ~np.isfinite(ratio) | (ratio < 0.0)
    if bad.any():
        raise InputError(f"rear_irradiance_ratio must be finite and >= 0; {_first_bad(bad, ratio)}")
    given = np.isfinite(datasheet)
    bad = given & (datasheet < isc * (1.0 - _REL))
    if bad.any():
        raise InputError(f"isc_bifacial_a below isc_a; {_first_bad(bad, datasheet)}")
    gain = 1.0 + np.where(np.isnan(phi), 0.0, phi) * ratio
    return np.where(given, datasheet, isc * gain)


# --------------------------------------------------------------------------------------------
# array (sub-array) cables: backfeed and array fuses


def backfeed_a(
    isc_array_a: ArrayLike, group: ArrayLike, source: ArrayLike | None = None
) -> np.ndarray:
    """Current the rest of an inverter d.c. input drives into a fault on one array or sub-array
    cable [A].

    Parameters
    ----------
    isc_array_a : array_like
        Design I_SC at STC of each cable (sum over the strings below it, bifacial gain included)
        [A].
    group : array_like of int
        Id of the inverter d.c. input (or common d.c. bus) each cable is joined to.
    source : array_like of bool, optional
        Which cables together make up their input's whole current (the array cables: those that
        end at the inverter); the others are sub-array cables below them. Default: all.

    Returns
    -------
    numpy.ndarray
        B_i = 1.25 · (Σ_{j in group(i), source} I_SC,j − I_SC,i) [A]: every string of the input
        not below the faulted cable can feed the fault, each at most its own maximum short-
        circuit current (a device in a healthy branch carries that branch's current forward and
        does not limit it); 0 for an array alone on its input.

    Notes
    -----
    The factor 1.25 is ``pv_rule("isc_factor")`` (IEC 62548:2016 I_SC MAX, from memory). For
    array cables this is 1.25 · Σ of the other arrays of the input. Computed per group with one
    ``numpy.bincount`` (no loop over cables).

    Examples
    --------
    >>> backfeed_a([100.0, 100.0, 100.0, 100.0, 80.0], [7, 7, 7, 7, 9])
    array([375., 375., 375., 375.,   0.])
    >>> # two sub-array cables (40 A, 60 A) below one array cable (100 A), alone on its input
    >>> backfeed_a([100.0, 40.0, 60.0], [1, 1, 1], [True, False, False])
    array([ 0., 75., 50.])
    """
    isc = np.asarray(isc_array_a, dtype=float)
    grp = np.asarray(group)
    src = np.ones(isc.shape, dtype=bool) if source is None else np.asarray(source, dtype=bool)
    if isc.ndim != 1 or grp.shape != isc.shape or src.shape != isc.shape:
        raise InputError("isc_array_a, group and source must be 1-D arrays of one length")
    if isc.size and not np.issubdtype(grp.dtype, np.integer):
        raise InputError("group must hold integer ids of the inverter d.c. inputs")
    bad = ~np.isfinite(isc) | (isc < 0.0)
    if bad.any():
        raise InputError(f"isc_array_a must be finite and >= 0; {_first_bad(bad, isc)}")
    _, inverse = np.unique(grp, return_inverse=True)
    total = np.bincount(inverse.ravel(), weights=np.where(src, isc, 0.0))
    others = np.maximum(total[inverse.ravel()] - isc, 0.0)
    return pv_rule("isc_factor") * others


@dataclass(frozen=True)
class ArrayFuse:
    """Sub-array / array fuse per array (arrays of one length).

    Attributes
    ----------
    fuse_a : float array — smallest standard rating within the range [A]; nan = none fits.
    lower_a, upper_a : float arrays — permitted range 1.25 · I_SC … 2.4 · I_SC [A].
    ok : bool array — False where no standard rating lies within the range.
    note : str array — reason, "" if none.
    """

    fuse_a: np.ndarray
    lower_a: np.ndarray
    upper_a: np.ndarray
    ok: np.ndarray
    note: np.ndarray


def array_fuse(isc_array_a: ArrayLike, ratings_a: ArrayLike | None = None) -> ArrayFuse:
    """Permitted range and smallest standard rating of a sub-array / array fuse.

    Parameters
    ----------
    isc_array_a : array_like
        Design I_SC at STC of each array [A].
    ratings_a : array_like, optional
        Ratings to pick from [A]; default :func:`gpv_fuse_ratings_a`.

    Notes
    -----
    1.25 · I_SC ≤ In ≤ 2.4 · I_SC (IEC 62548:2016, from memory; factors ``array_fuse_min_x_isc``
    and ``array_fuse_max_x_isc`` of the rules file). The rating picked is the smallest standard one
    at or above the lower bound; where it exceeds the upper bound, no rating fits (nan, ``ok``
    False).

    Examples
    --------
    >>> f = array_fuse([100.0, 600.0])  # 750 A is above the largest gPV rating, 630 A
    >>> f.fuse_a.tolist(), f.lower_a.tolist(), f.upper_a.tolist(), f.ok.tolist()
    ([125.0, nan], [125.0, 750.0], [240.0, 1440.0], [True, False])
    """
    isc = np.atleast_1d(np.asarray(isc_array_a, dtype=float))
    bad = ~np.isfinite(isc) | (isc < 0.0)
    if bad.any():
        raise InputError(f"isc_array_a must be finite and >= 0; {_first_bad(bad, isc)}")
    ratings = np.sort(np.asarray(gpv_fuse_ratings_a() if ratings_a is None else ratings_a, float))
    lower = pv_rule("array_fuse_min_x_isc") * isc
    upper = pv_rule("array_fuse_max_x_isc") * isc
    pick = smallest_rating_a(ratings, lower)
    ok = pick <= upper * (1.0 + _REL)
    fuse = np.where(ok, pick, np.nan)
    note = np.full(isc.shape, "", dtype=object)
    for i in np.flatnonzero(~ok):
        note[i] = (
            f"no standard fuse rating within the IEC 62548 array range "
            f"{lower[i]:.1f}-{upper[i]:.1f} A"
        )
    return ArrayFuse(fuse, lower, upper, ok, note.astype(str))


def array_min_capacity_a(
    isc_array_a: ArrayLike,
    backfeed_current_a: ArrayLike,
    fuse_a: ArrayLike,
    fuse_i2_factor: float | None = None,
) -> np.ndarray:
    """Minimum current-carrying capacity Iz of an array cable [A], backfeed included.

    Parameters
    ----------
    isc_array_a : array_like
        Design I_SC at STC of each array [A].
    backfeed_current_a : array_like
        :func:`backfeed_a` of each array [A].
    fuse_a : array_like
        Array fuse rating In [A]; nan = no array fuse.
    fuse_i2_factor : float, optional
        I2 / In of the fuse; default ``i2_factor("gpv")`` (1.45, from memory).

    Returns
    -------
    numpy.ndarray
        With a fuse: max(1.25 · I_SC, In, I2 / 1.45) (IEC 62548:2016 from memory;
        IEC 60364-4-43:2008 433.1). Without: max(1.25 · I_SC, B).

    Examples
    --------
    >>> array_min_capacity_a([100.0, 100.0], [375.0, 375.0], [125.0, np.nan])
    array([125., 375.])
    """
    isc = np.asarray(isc_array_a, dtype=float)
    b = np.asarray(backfeed_current_a, dtype=float)
    fuse = np.asarray(fuse_a, dtype=float)
    k2 = i2_factor("gpv") if fuse_i2_factor is None else float(fuse_i2_factor)
    own = pv_rule("isc_factor") * isc
    fused = np.isfinite(fuse)
    f = np.where(fused, fuse, 0.0)
    with_fuse = np.maximum(own, np.maximum(f, k2 * f / _i2_max_x_iz()))
    return np.where(fused, with_fuse, np.maximum(own, b))


@dataclass(frozen=True)
class ProtectionCheck:
    """Result of :func:`array_cable_check` (arrays of one length).

    Attributes
    ----------
    needed : bool array — the backfeed exceeds the cable's capacity Iz (or Iz is not known).
    ok : bool array — not needed, or an array fuse with In ≤ Iz and I2 ≤ 1.45 · Iz is fitted.
    note : str array — the failing condition with its numbers, "" if ok.
    """

    needed: np.ndarray
    ok: np.ndarray
    note: np.ndarray


def array_cable_check(
    iz_a: ArrayLike,
    backfeed_current_a: ArrayLike,
    fuse_a: ArrayLike,
    fuse_i2_factor: float | None = None,
) -> ProtectionCheck:
    """Check an array cable against the backfeed of the other arrays on its input (after sizing).

    Parameters
    ----------
    iz_a : array_like
        Derated current-carrying capacity of the cable as laid (all parallel sets) [A].
    backfeed_current_a : array_like
        :func:`backfeed_a` [A]; nan (unknown) is never passed: not verified, like an unknown
        Iz.
    fuse_a : array_like
        Array fuse rating In [A]; nan = none.
    fuse_i2_factor : float, optional
        I2 / In of the fuse; default ``i2_factor("gpv")`` (1.45, from memory).

    Notes
    -----
    Protection is needed where B > Iz; it is then given by an array fuse with In ≤ Iz and
    I2 ≤ 1.45 · Iz (IEC 60364-4-43:2008 433.1). Whether the fuse lies within the IEC 62548 range is
    :func:`array_fuse`'s result.

    Examples
    --------
    >>> c = array_cable_check([400.0, 300.0, 300.0, 120.0], [375.0] * 4,
    ...                       [np.nan, np.nan, 125.0, 125.0])
    >>> c.needed.tolist(), c.ok.tolist()
    ([False, True, True, True], [True, False, True, False])
    >>> str(c.note[3])
    'array fuse 125 A above Iz 120.0 A; I2 181.2 A above 1.45·Iz 174.0 A'
    """
    iz = np.asarray(iz_a, dtype=float)
    b = np.asarray(backfeed_current_a, dtype=float)
    fuse = np.asarray(fuse_a, dtype=float)
    iz, b, fuse = np.broadcast_arrays(iz, b, fuse)
    k2 = i2_factor("gpv") if fuse_i2_factor is None else float(fuse_i2_factor)
    unknown = ~np.isfinite(iz) | np.isnan(b)  # either unknown: not verified, never "ok"
    needed = unknown | (b > iz * (1.0 + _REL))
    fused = np.isfinite(fuse)
    in_ok = fused & (fuse <= iz * (1.0 + _REL))
    i2_ok = fused & (k2 * fuse <= _i2_max_x_iz() * iz * (1.0 + _REL))
    ok = ~needed | (in_ok & i2_ok)
    note = np.full(iz.shape, "", dtype=object)
    for i in np.flatnonzero(~ok):
        if unknown[i]:
            what = "cable capacity Iz" if not np.isfinite(iz[i]) else "backfeed"
            note[i] = f"{what} not known: backfeed protection not verified"
            continue
        if not fused[i]:
            note[i] = (
                f"backfeed {b[i]:.1f} A from the other arrays of the input exceeds Iz "
                f"{iz[i]:.1f} A and no array fuse is fitted"
            )
            continue
        parts = []
        if not in_ok[i]:
            parts.append(f"array fuse {fuse[i]:g} A above Iz {iz[i]:.1f} A")
        if not i2_ok[i]:
            parts.append(f"I2 {k2 * fuse[i]:.1f} A above 1.45·Iz {_i2_max_x_iz() * iz[i]:.1f} A")
        note[i] = "; ".join(parts)
    return ProtectionCheck(needed, ok, note.astype(str))


# --------------------------------------------------------------------------------------------
# a.c. circuits: IEC 60364-4-43:2008 433.1


@dataclass(frozen=True)
class Breaker:
    """Circuit-breaker of each a.c. circuit (arrays of one length).

    Attributes
    ----------
    in_a : float array — smallest standard rated current In ≥ Ib [A]; nan = none fits.
    i2_a : float array — conventional tripping current I2 = k2 · In [A].
    iz_min_a : float array — capacity the cable needs: max(In, I2 / 1.45) [A].
    ok : bool array — False where Ib exceeds the largest rating.
    note : str array — reason, "" if none.
    """

    in_a: np.ndarray
    i2_a: np.ndarray
    iz_min_a: np.ndarray
    ok: np.ndarray
    note: np.ndarray


def ac_breaker(ib_a: ArrayLike, ratings_a: ArrayLike, i2_factor: ArrayLike) -> Breaker:
    """Pick the circuit-breaker of a.c. circuits: the smallest standard In ≥ Ib.

    Parameters
    ----------
    ib_a : array_like
        Design current Ib [A] (:func:`calc.pv.ac_max_current_a`).
    ratings_a : array_like
        Standard ratings [A] (:func:`breaker_ratings_a`).
    i2_factor : array_like
        I2 / In of the device kind (:func:`i2_factor`: 1.45 IEC 60898-1, 1.30 IEC 60947-2).

    Notes
    -----
    IEC 60364-4-43:2008 433.1: Ib ≤ In ≤ Iz and I2 ≤ 1.45 · Iz, hence the cable needs
    Iz ≥ max(In, I2 / 1.45): In for I2 = 1.45 · In (IEC 60898-1), still In for 1.30 · In
    (IEC 60947-2).

    Examples
    --------
    >>> b = ac_breaker([144.34, 160.0, 5000.0], breaker_ratings_a("iec60947-2"), 1.30)
    >>> b.in_a.tolist(), b.ok.tolist()  # Ib equal to a rating picks that rating
    ([160.0, 160.0, nan], [True, True, False])
    """
    ib = np.atleast_1d(np.asarray(ib_a, dtype=float))
    bad = ~np.isfinite(ib) | (ib < 0.0)
    if bad.any():
        raise InputError(f"ib_a must be finite and >= 0; {_first_bad(bad, ib)}")
    ratings = np.sort(np.asarray(ratings_a, dtype=float))
    if ratings.ndim != 1 or ratings.size == 0:
        raise InputError("ratings_a must be a non-empty list of ratings [A]")
    k2 = np.asarray(i2_factor, dtype=float)
    pick = smallest_rating_a(ratings, ib)
    i2 = k2 * pick
    iz_min = np.maximum(pick, i2 / _i2_max_x_iz())
    ok = np.isfinite(pick)
    note = np.full(ib.shape, "", dtype=object)
    for i in np.flatnonzero(~ok):
        note[i] = f"Ib {ib[i]:.1f} A above the largest breaker rating {ratings[-1]:g} A"
    return Breaker(pick, i2, iz_min, ok, note.astype(str))


@dataclass(frozen=True)
class OverloadCheck:
    """Result of :func:`overload_check` (arrays of one length).

    Attributes
    ----------
    ib_ok : bool array — Ib ≤ In.
    iz_ok : bool array — In ≤ Iz.
    i2_ok : bool array — I2 ≤ 1.45 · Iz.
    ok : bool array — all three hold.
    note : str array — each failing condition with its numbers ("; "-joined), "" if ok.
    """

    ib_ok: np.ndarray
    iz_ok: np.ndarray
    i2_ok: np.ndarray
    ok: np.ndarray
    note: np.ndarray


def overload_check(
    ib_a: ArrayLike, in_a: ArrayLike, iz_a: ArrayLike, i2_a: ArrayLike
) -> OverloadCheck:
    """Coordination of a cable and its overload device, IEC 60364-4-43:2008 433.1.

    Ib ≤ In ≤ Iz and I2 ≤ 1.45 · Iz, with Ib the design current, In the rated current of the
    device, Iz the cable's derated capacity and I2 the current ensuring operation of the device
    within its conventional time. A missing device (In nan) fails every condition, as does an
    unknown capacity (Iz nan) the conditions on Iz.

    Examples
    --------
    >>> c = overload_check([144.3, 144.3, 170.0], [160.0, 160.0, 160.0], [175.0, 150.0, 175.0],
    ...                    [208.0, 208.0, 208.0])
    >>> c.ok.tolist(), c.iz_ok.tolist(), c.ib_ok.tolist()
    ([True, False, False], [True, False, True], [True, True, False])
    >>> str(c.note[1])
    'In 160 A > Iz 150.0 A'
    """
    ib, inn, iz, i2 = np.broadcast_arrays(
        *(np.atleast_1d(np.asarray(v, dtype=float)) for v in (ib_a, in_a, iz_a, i2_a))
    )
    ib_ok = ib <= inn * (1.0 + _REL)
    iz_ok = inn <= iz * (1.0 + _REL)
    i2_ok = i2 <= _i2_max_x_iz() * iz * (1.0 + _REL)
    ok = ib_ok & iz_ok & i2_ok
    note = np.full(ib.shape, "", dtype=object)
    for i in np.flatnonzero(~ok):
        if np.isnan(inn[i]):
            note[i] = "no overload protective device"
            continue
        if not np.isfinite(iz[i]):
            note[i] = "cable capacity Iz not known: overload protection not verified"
            continue
        parts = []
        if not ib_ok[i]:
            parts.append(f"Ib {ib[i]:.1f} A > In {inn[i]:g} A")
        if not iz_ok[i]:
            parts.append(f"In {inn[i]:g} A > Iz {iz[i]:.1f} A")
        if not i2_ok[i]:
            parts.append(f"I2 {i2[i]:.1f} A > 1.45·Iz {_i2_max_x_iz() * iz[i]:.1f} A")
        note[i] = "; ".join(parts)
    return OverloadCheck(ib_ok, iz_ok, i2_ok, ok, note.astype(str))
