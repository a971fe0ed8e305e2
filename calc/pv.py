"""PV design currents and string overcurrent protection, IEC 62548:2016; inverter a.c. output
current.

The clause text of IEC 62548:2016 was not at hand: the rules and multipliers below are from memory
(file ``iec62548_2016_pv_dc_rules.csv``, tags memory / memory-low; the string fuse bounds 1.5 and
2.4 · I_SC were confirmed in a third-party worked example) and must be checked against the standard
before use.

Rules implemented (I_SC = module short-circuit current at STC, S = strings in parallel at the point
where the string is connected, I_SC MAX = 1.25 · I_SC):

* string overcurrent protection is required when (S − 1) · I_SC MAX > I_MOD_MAX_OCPR (module maximum
  series fuse rating). IEC 60364-7-712:2017 puts a factor 1.35 on I_MOD_MAX_OCPR; calc uses the
  stricter 1.0. When I_MOD_MAX_OCPR is not given (nan), calc assumes protection is required for S ≥
  3 and not for S ≤ 2 (one parallel string cannot drive more than I_SC MAX backwards) — an
  assumption, flagged in the note;
* the string fuse rating I_n satisfies 1.5 · I_SC ≤ I_n ≤ 2.4 · I_SC and I_n ≤ I_MOD_MAX_OCPR; calc
  picks the smallest standard rating (IEC 60269-1 preferred values, file
  ``iec60269_1_fuse_ratings.csv``) at or above the lower bound;
* minimum current-carrying capacity of a string cable: with a string fuse, I_n; without,
  1.25 · I_SC · (S − 1); never below 1.25 · I_SC;
* array (sub-array) cable without its own overcurrent device: 1.25 · I_SC · N_strings (its own
  current; the backfeed of the other arrays on the same inverter input, array fuses and the
  bifacial design I_SC are in :mod:`calc.protection`).

a.c. design current Ib: the inverter's maximum continuous output current where the datasheet gives
it, else its rated current S / (√3 · U) or S / U (:func:`ac_max_current_a`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, check_option
from calc.ratings import fuse_in_range
from calc.tables import load_table

__all__ = [
    "StringProtection",
    "ac_current_a",
    "ac_max_current_a",
    "ac_max_implausible",
    "array_design_current_a",
    "fuse_ratings_a",
    "max_modules_in_series",
    "pv_rule",
    "string_design_current_a",
    "string_protection",
    "voc_above_rating",
    "voc_max_v",
]

_RULES = "iec62548_2016_pv_dc_rules.csv"
_INVERTER = "inverter_plausibility.csv"
_FUSES = "iec60269_1_fuse_ratings.csv"


def pv_rule(name: str) -> float:
    """A multiplier of the IEC 62548:2016 rules (from memory), e.g. ``isc_factor``.

    >>> pv_rule("isc_factor"), pv_rule("fuse_min_x_isc"), pv_rule("fuse_max_x_isc")
    (1.25, 1.5, 2.4)
    """
    t = load_table(_RULES)
    check_option("IEC 62548 rule", name, tuple(t["name"].tolist()))
    return float(t["value"][t.where(name=name)][0])


def fuse_ratings_a() -> np.ndarray:
    """Standard fuse-link rated currents [A], IEC 60269-1:2006 cl.5.3.1 (memory), ascending.

    The default list of :func:`string_protection`. The gPV list of PV fuse-links (IEC 60269-6,
    catalogue practice, with 15 A and 30 A) is :func:`calc.protection.gpv_fuse_ratings_a`.

    >>> fuse_ratings_a()[:6]
    array([ 2.,  4.,  6.,  8., 10., 12.])
    """
    return np.sort(load_table(_FUSES)["rating_a"])


def ac_current_a(ac_kva: ArrayLike, ac_v: ArrayLike, phases: ArrayLike) -> np.ndarray:
    """Rated a.c. output current [A] of an inverter.

    Three-phase: I = S / (√3 · U_LL) with ``ac_v`` the line-to-line voltage. Single-phase:
    I = S / U with ``ac_v`` the inverter's output voltage line-to-neutral.

    Examples
    --------
    >>> np.round(ac_current_a([100.0, 5.0], [400.0, 230.0], [3, 1]), 2)
    array([144.34,  21.74])
    """
    s_va = np.asarray(ac_kva, dtype=float) * 1e3
    u = np.asarray(ac_v, dtype=float)
    ph = np.asarray(phases)
    if np.any((ph != 1) & (ph != 3)):
        raise InputError("phases must be 1 or 3")
    return np.where(ph == 3, s_va / (np.sqrt(3.0) * u), s_va / u)


def ac_max_current_a(
    ac_kva: ArrayLike, ac_v: ArrayLike, phases: ArrayLike, ac_max_a: ArrayLike
) -> np.ndarray:
    """Design current Ib of an inverter's a.c. circuit [A].

    Parameters
    ----------
    ac_kva : array_like
        Rated apparent power S [kVA].
    ac_v : array_like
        Line-to-line voltage (three-phase) or output voltage (single-phase) [V].
    phases : array_like
        1 or 3.
    ac_max_a : array_like
        Maximum continuous output current from the inverter datasheet [A]; nan = not given.

    Returns
    -------
    numpy.ndarray
        ``ac_max_a`` where finite, else :func:`ac_current_a` (S / (√3 · U) three-phase, S / U
        single-phase). The datasheet maximum is the better Ib: at an output voltage below nominal
        the inverter delivers its power at a higher current.

    Examples
    --------
    >>> np.round(ac_max_current_a([100.0, 100.0], [400.0, 400.0], [3, 3], [160.0, np.nan]), 2)
    array([160.  , 144.34])
    """
    imax = np.asarray(ac_max_a, dtype=float)
    bad = np.isfinite(imax) & (imax <= 0.0)
    if np.any(bad):
        i = int(np.flatnonzero(np.atleast_1d(bad))[0])
        raise InputError(
            f"ac_max_a must be > 0 (nan = not given); got {imax.flat[i]:g} at index {i}"
        )
    with np.errstate(divide="ignore", invalid="ignore"):
        rated = ac_current_a(ac_kva, ac_v, phases)
    imax, rated = np.broadcast_arrays(imax, rated)
    return np.where(np.isfinite(imax), imax, rated)


def ac_max_implausible(
    ac_max_a: ArrayLike, ac_kva: ArrayLike, ac_v: ArrayLike, phases: ArrayLike
) -> np.ndarray:
    """Where an inverter's maximum continuous output current ``ac_max_a`` [A] is below
    ``ac_max_min_x_rated`` (0.5, ``inverter_plausibility.csv``, common practice) × the current
    of its rating (:func:`ac_current_a`): an inverter that could not deliver its rating, most
    likely a lost digit. False where ``ac_max_a`` is not given (nan).

    >>> ac_max_implausible([10.0, 578.0, 577.0, np.nan], 1600.0, 800.0, 3).tolist()
    [True, False, True, False]
    """
    t = load_table(_INVERTER)
    share = float(t["value"][t.where(name="ac_max_min_x_rated")][0])
    imax = np.asarray(ac_max_a, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return imax < share * ac_current_a(ac_kva, ac_v, phases)


@dataclass(frozen=True)
class StringProtection:
    """String overcurrent protection per circuit (arrays of one length).

    Attributes
    ----------
    required : bool array — protection required by the IEC 62548 rule (or by the stated assumption).
    fuse_a : float array — fuse rating fitted [A] (selected or fixed by the combiner); nan = none.
    lower_a, upper_a : float arrays — permitted range of the rating [A].
    ok : bool array — False where a fixed fuse is outside the range or no standard rating fits.
    note : str array — reason or assumption, "" if none.
    """

    required: np.ndarray
    fuse_a: np.ndarray
    lower_a: np.ndarray
    upper_a: np.ndarray
    ok: np.ndarray
    note: np.ndarray


def string_protection(
    isc_a: ArrayLike,
    strings_in_parallel: ArrayLike,
    max_fuse_a: ArrayLike,
    fuse_a: ArrayLike,
    ratings_a: ArrayLike | None = None,
) -> StringProtection:
    """Decide string overcurrent protection and pick the fuse rating (IEC 62548:2016, from memory).

    Parameters
    ----------
    isc_a : array_like
        Module (= string) short-circuit current at STC [A].
    strings_in_parallel : array_like
        Strings paralleled at the string's destination without an intermediate overcurrent device.
    max_fuse_a : array_like
        Module maximum series fuse rating I_MOD_MAX_OCPR [A]; nan = not given.
    fuse_a : array_like
        Fuse rating fixed by the combiner [A]; nan = let calc pick.
    ratings_a : array_like, optional
        Standard ratings to pick from [A]; default :func:`fuse_ratings_a`.

    Examples
    --------
    >>> p = string_protection([10.0, 10.0], [2, 12], [20.0, 20.0], [np.nan, np.nan])
    >>> p.required.tolist(), p.fuse_a.tolist()  # 2 strings: no fuse; 12 strings: 16 A in 15..20 A
    ([False, True], [nan, 16.0])
    """
    isc = np.asarray(isc_a, dtype=float)
    s = np.asarray(strings_in_parallel, dtype=float)
    ocpr = np.asarray(max_fuse_a, dtype=float)
    fixed = np.asarray(fuse_a, dtype=float)
    isc, s, ocpr, fixed = np.broadcast_arrays(isc, s, ocpr, fixed)
    ratings = np.sort(np.asarray(fuse_ratings_a() if ratings_a is None else ratings_a, float))

    k = pv_rule("isc_factor")
    no_ocpr = np.isnan(ocpr)
    required = np.where(
        no_ocpr,
        s > pv_rule("unfused_max_strings_no_ocpr"),
        (s - 1.0) * k * isc > pv_rule("ocpr_threshold") * np.where(no_ocpr, 0.0, ocpr),
    )
    lower = pv_rule("fuse_min_x_isc") * isc
    upper = pv_rule("fuse_max_x_isc") * isc
    upper = np.where(no_ocpr, upper, np.minimum(upper, ocpr))

    fuse, ok = fuse_in_range(lower, upper, required, fixed, ratings)
    has_fixed = ~np.isnan(fixed)

    note = np.full(isc.shape, "", dtype=object)
    assumed = no_ocpr & (required | has_fixed)
    most = pv_rule("unfused_max_strings_no_ocpr")
    note[assumed] = (
        f"max_fuse_a not given: string fuses assumed required for {most + 1:g} or more parallel "
        "strings; check the fuse against the module maximum series fuse rating"
    )
    for i in np.flatnonzero(has_fixed & ~ok):
        note[i] = (
            f"fixed string fuse {fixed[i]:g} A outside the IEC 62548 range "
            f"{lower[i]:.1f}-{upper[i]:.1f} A"
        )
    for i in np.flatnonzero(~has_fixed & ~ok):  # a fuse required, none fits
        note[i] = (
            f"no standard fuse rating within the IEC 62548 range {lower[i]:.1f}-{upper[i]:.1f} A"
        )
    return StringProtection(required, fuse, lower, upper, ok, note.astype(str))


def string_design_current_a(
    isc_a: ArrayLike, strings_in_parallel: ArrayLike, fuse_a: ArrayLike
) -> np.ndarray:
    """Minimum current-carrying capacity of a string cable [A] (IEC 62548:2016, from memory).

    With a string fuse (``fuse_a`` finite): max(I_n, 1.25 · I_SC). Without: 1.25 · I_SC · (S − 1),
    not less than 1.25 · I_SC.

    >>> string_design_current_a([10.0, 10.0, 10.0], [1, 4, 12], [np.nan, np.nan, 16.0])
    array([12.5, 37.5, 16. ])
    """
    isc = np.asarray(isc_a, dtype=float)
    s = np.asarray(strings_in_parallel, dtype=float)
    fuse = np.asarray(fuse_a, dtype=float)
    base = pv_rule("isc_factor") * isc
    unfused = base * np.maximum(s - 1.0, 1.0)
    return np.where(np.isnan(fuse), unfused, np.maximum(np.nan_to_num(fuse), base))


def array_design_current_a(isc_a: ArrayLike, n_strings: ArrayLike) -> np.ndarray:
    """Minimum capacity of an array cable without its own overcurrent device [A]: 1.25 · I_SC · N.

    IEC 62548:2016 (from memory); the cable then withstands the array's own maximum current.

    >>> array_design_current_a([10.0], [16])
    array([200.])
    """
    return pv_rule("isc_factor") * np.asarray(isc_a, float) * np.asarray(n_strings, float)


def voc_max_v(
    voc_v: ArrayLike, voc_coeff_pct_per_c: ArrayLike, min_temp_c: float, stc_temp_c: float = 25.0
) -> np.ndarray:
    """Highest open-circuit voltage of a string [V]: at the lowest expected module temperature.

    IEC 62548:2016 (from memory): V_OC corrected to the lowest expected module temperature with
    the maker's temperature coefficient, V_OC,max = V_OC STC · (1 + β/100 · (T_min − 25 °C))
    (β < 0 %/°C, so a cold module gives a higher voltage); where no coefficient is given
    (NaN), V_OC,max = 1.2 · V_OC STC for crystalline silicon (``voc_factor_no_data``, from
    memory). The lowest module temperature is taken as the lowest expected ambient (a module
    at dawn is at ambient temperature).

    Parameters
    ----------
    voc_v : array_like
        String open-circuit voltage at STC (module V_OC × modules in series) [V].
    voc_coeff_pct_per_c : array_like
        Temperature coefficient of V_OC, β [%/°C] (negative); NaN = not given.
    min_temp_c : float
        Lowest expected module (ambient) temperature [°C].
    stc_temp_c : float
        The temperature of the datasheet values [°C] (STC 25 °C).

    Examples
    --------
    >>> voc_max_v([1000.0, 1000.0], [-0.3, np.nan], -10.0)  # 35 K below STC: +10.5 %; +20 %
    array([1105., 1200.])
    """
    voc = np.asarray(voc_v, dtype=float)
    beta = np.asarray(voc_coeff_pct_per_c, dtype=float)
    corrected = voc * (1.0 + beta / 100.0 * (float(min_temp_c) - stc_temp_c))
    return np.where(np.isnan(beta), pv_rule("voc_factor_no_data") * voc, corrected)


def voc_above_rating(voc_max_v: ArrayLike, rated_v: float) -> np.ndarray:
    """Where a d.c. circuit's highest open-circuit voltage is above the rated d.c. voltage of
    its cables and equipment (IEC 62548:2016, NEC 2023 690.7(A); from memory): True beyond a
    relative 1e-9 (a string exactly at the rating passes); False where the Voc is not known.

    >>> voc_above_rating([1500.0, 1500.1, np.nan], 1500.0).tolist()
    [False, True, False]
    """
    voc = np.asarray(voc_max_v, dtype=float)
    return np.isfinite(voc) & (voc > float(rated_v) * (1.0 + 1e-9))


def max_modules_in_series(
    voc_max_v: ArrayLike, modules_in_series: ArrayLike, rated_v: float
) -> np.ndarray:
    """Most modules a string of the same module may hold in series with its highest
    open-circuit voltage at or below the rated d.c. voltage: ⌊U_rated / V_OC,max per module⌋.

    A string's V_OC,max is its modules' V_OC,max summed (:func:`voc_max_v` is linear in the
    string's V_OC: the coefficient or the factor for missing data applies per module), so one
    module's is ``voc_max_v / modules_in_series``; IEC 62548:2016 (from memory) and NEC 690.7(A)
    bound the string's V_OC,max by the rated voltage of the equipment and cables. NaN where the
    count or the voltage is not known (or not positive).

    Parameters
    ----------
    voc_max_v : array_like
        The string's highest open-circuit voltage [V] (:func:`voc_max_v`).
    modules_in_series : array_like
        Modules in series in the string.
    rated_v : float
        Rated d.c. voltage of the cables and equipment [V].

    Examples
    --------
    >>> max_modules_in_series([1565.5, 1400.0], [27, 28], 1500.0)  # 57.98 V, 50 V per module
    array([25., 30.])
    """
    voc = np.asarray(voc_max_v, dtype=float)
    n = np.asarray(modules_in_series, dtype=float)
    known = (voc > 0) & (n > 0)
    per_module = np.where(known, voc, 1.0) / np.where(known, n, 1.0)
    # a count whose string meets the rating exactly fits: a relative margin of 1e-9 keeps
    # 1500.0000000001 V from the division's last digit off
    most = np.floor(float(rated_v) / per_module * (1.0 + 1e-9))
    return np.where(known, most, np.nan)
