"""Overcurrent protection and equipment grounding conductors, NEC 2023.

* 240.6(A): standard ampere ratings of fuses and inverse-time circuit breakers (plus the
  fuse-only ratings 1, 3, 6, 10 A);
* 690.9(B)(1): a PV overcurrent device is rated ≥ 1.25 × the circuit's maximum current (690.8(A));
  for a source circuit it must also not exceed the module's maximum series fuse rating (listing);
* 240.4: a conductor is protected at its ampacity (after correction, adjustment and terminal
  limit); 240.4(B) allows the next higher standard rating for devices ≤ 800 A, 240.4(C) not above;
  240.4(D) caps small conductors (Cu 14/12/10 AWG: 15/20/30 A; Al 12/10 AWG: 15/25 A);
* Table 250.122: minimum equipment grounding conductor by the device rating, 250.122(B) increase in
  proportion to the ungrounded conductors' circular-mil increase.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import InputError, TableRangeError, check_option
from calc.nec.ampacity import nec_rule
from calc.nec.sizes import size_from_label, size_index, size_labels
from calc.ratings import smallest_rating_a
from calc.tables import load_table

__all__ = [
    "PvOcpd",
    "conductor_protected",
    "egc_size_label",
    "egc_size_mm2",
    "next_standard_rating_a",
    "pv_ocpd",
    "small_conductor_limit_a",
    "standard_ratings_a",
]

_RATINGS = "nec_2023_240_6_a_standard_ratings.csv"
_SMALL = "nec_2023_240_4_d_small_conductors.csv"
_EGC = "nec_2023_table_250_122_egc.csv"
_REL = 1e-9


def standard_ratings_a(fuses: bool = False) -> np.ndarray:
    """Standard ampere ratings of 240.6(A) [A], ascending; ``fuses`` adds the fuse-only ratings.

    >>> standard_ratings_a()[:8].tolist()
    [15.0, 20.0, 25.0, 30.0, 35.0, 40.0, 45.0, 50.0]
    >>> standard_ratings_a(fuses=True)[:5].tolist()
    [1.0, 3.0, 6.0, 10.0, 15.0]
    """
    t = load_table(_RATINGS)
    keep = t.where(device="both") | (t.where(device="fuse") if fuses else False)
    return np.sort(t["rating_a"][keep])


def next_standard_rating_a(current_a: ArrayLike, fuses: bool = False) -> np.ndarray:
    """Smallest 240.6(A) rating ≥ ``current_a`` [A] (a rating equal to it fits); nan above 6000 A.

    >>> next_standard_rating_a([20.3125, 25.0, 6001.0])
    array([25., 25., nan])
    """
    return smallest_rating_a(standard_ratings_a(fuses), current_a)


class PvOcpd(NamedTuple):
    """Result of :func:`pv_ocpd` (arrays of one length)."""

    #: smallest standard rating ≥ 1.25 × maximum current [A] (nan above the list)
    rating_a: np.ndarray
    #: minimum rating 1.25 × maximum current [A]
    min_a: np.ndarray
    #: True where the rating exists and is ≤ the module's maximum series fuse rating
    ok: np.ndarray


def pv_ocpd(
    i_max_a: ArrayLike, max_series_fuse_a: ArrayLike = np.inf, fuses: bool = False
) -> PvOcpd:
    """PV overcurrent device, 690.9(B)(1): the smallest 240.6(A) rating ≥ 1.25 × I_max, which must
    not exceed the module's maximum series fuse rating (``max_series_fuse_a``, source circuits).

    >>> p = pv_ocpd([16.25, 16.25], [25.0, 20.0])
    >>> p.rating_a.tolist(), p.ok.tolist()
    ([25.0, 25.0], [True, False])
    """
    i = np.asarray(i_max_a, dtype=float)
    min_a = nec_rule("ocpd_factor") * i
    rating = next_standard_rating_a(min_a, fuses)
    limit = np.asarray(max_series_fuse_a, dtype=float)
    ok = ~np.isnan(rating) & (rating <= limit * (1.0 + _REL))
    return PvOcpd(rating, min_a, ok)


def small_conductor_limit_a(sizes_mm2: ArrayLike, material: str) -> np.ndarray:
    """Largest device rating allowed by 240.4(D) for each size [A]; inf for sizes it does not cap.

    >>> small_conductor_limit_a(size_from_label(["14 AWG", "12 AWG", "10 AWG", "8 AWG"]), "Cu")
    array([15., 20., 30., inf])
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_SMALL)
    rows = t.where(material=material)
    per_size = np.full(len(size_labels()), np.inf)
    per_size[size_index(size_from_label(t["size_label"][rows]))] = t["max_ocpd_a"][rows]
    return per_size[size_index(sizes_mm2)]


def conductor_protected(
    ocpd_a: ArrayLike, ampacity_a: ArrayLike, sizes_mm2: ArrayLike, material: str
) -> np.ndarray:
    """True where a device of ``ocpd_a`` protects a conductor of ``ampacity_a`` (240.4).

    ``ampacity_a`` is the conductor's ampacity after correction, adjustment and terminal limit.
    Protected when OCPD ≤ ampacity, or (240.4(B)) OCPD ≤ 800 A and OCPD is the next standard
    rating above the ampacity; and in every case OCPD ≤ the 240.4(D) limit of small conductors.

    >>> s = size_from_label(["12 AWG", "12 AWG", "10 AWG"])
    >>> conductor_protected([25, 20, 25], [20.88, 20.88, 27.84], s, "Cu").tolist()
    [False, True, True]
    """
    ocpd = np.asarray(ocpd_a, dtype=float)
    amp = np.asarray(ampacity_a, dtype=float)
    at_or_below = ocpd <= amp * (1.0 + _REL)
    next_up = (ocpd <= nec_rule("next_size_up_max_a")) & (ocpd == next_standard_rating_a(amp))
    return (at_or_below | next_up) & (ocpd <= small_conductor_limit_a(sizes_mm2, material))


def egc_size_label(ocpd_a: ArrayLike, material: str) -> np.ndarray:
    """Minimum equipment grounding conductor of Table 250.122 for each device rating (label).

    >>> egc_size_label([15, 20, 25, 100, 800, 6000], "Cu").tolist()
    ['14 AWG', '12 AWG', '10 AWG', '8 AWG', '1/0 AWG', '800 kcmil']
    >>> egc_size_label([60, 6000], "Al").tolist()
    ['8 AWG', '1250 kcmil']
    """
    check_option("material", material, ("Cu", "Al"))
    t = load_table(_EGC)
    x = np.asarray(ocpd_a, dtype=float)
    if np.any(~(x > 0)):
        raise InputError("overcurrent device rating must be > 0 A")
    top = t["ocpd_max_a"]
    if np.any(x > top[-1] * (1.0 + _REL)):
        raise TableRangeError(f"Table 250.122 ends at {top[-1]:g} A")
    idx = np.searchsorted(top, x * (1.0 - _REL), side="left")
    return t["cu_label" if material == "Cu" else "al_label"][idx]


def egc_size_mm2(
    ocpd_a: ArrayLike,
    material: str,
    ungrounded_mm2: ArrayLike | None = None,
    ungrounded_min_mm2: ArrayLike | None = None,
) -> np.ndarray:
    """Equipment grounding conductor area [mm²]: Table 250.122, increased per 250.122(B) in
    proportion to the ungrounded conductors' area over the minimum size for the circuit when both
    are given (the result is an area, to be rounded up to a standard size by the caller), and
    never larger than the ungrounded conductors (250.122(A)).

    >>> round(float(egc_size_mm2(60, "Cu")[()]), 3)  # 10 AWG
    5.261
    """
    egc = size_from_label(egc_size_label(ocpd_a, material))
    if ungrounded_mm2 is None:
        return egc
    ung = np.asarray(ungrounded_mm2, dtype=float)
    if ungrounded_min_mm2 is not None:
        egc = egc * np.maximum(1.0, ung / np.asarray(ungrounded_min_mm2, dtype=float))
    return np.minimum(egc, ung)
