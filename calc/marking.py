"""Conductor identification (colours and alphanumeric marks) per circuit.

Conventions (file ``conductor_identification.csv``):

* ``"iec"`` — IEC 60445:2017: a.c. L1 brown, L2 black, L3 grey, N blue, PE green-and-yellow (from
  memory). For unearthed d.c. PV conductors IEC 60445 gives the alphanumeric marks L+ / L− but (as
  recalled) prescribes no colour; red (+) / black (−) is common practice, marked as such.
* ``"us"`` — NEC 200.6 (grounded conductor white or gray) and 250.119 (equipment grounding conductor
  green, green with yellow stripes, or bare); phase colours are common practice (brown/orange/yellow
  above 250 V line-to-line, black/red/blue at or below), as is red (+) / black (−) for d.c.
"""

from __future__ import annotations

import functools

import numpy as np
from numpy.typing import ArrayLike

from calc.errors import check_option
from calc.tables import load_table

__all__ = ["MARKING_CONVENTIONS", "conductor_marking", "marking_text"]

MARKING_CONVENTIONS = ("iec", "us")


@functools.cache
def marking_text(convention: str, system: str) -> str:
    """One line listing each conductor and its identification, with the tag where not a standard.

    >>> marking_text("iec", "ac3")
    'L1 brown, L2 black, L3 grey, N blue (if run), PE green-and-yellow'
    >>> marking_text("iec", "dc")
    'L+ red (marked L+), L- black (marked L-) [colours: common practice]'
    """
    check_option("marking", convention, MARKING_CONVENTIONS)
    t = load_table("conductor_identification.csv")
    rows = np.flatnonzero(t.where(convention=convention, system=system))
    parts = [f"{t['conductor'][r]} {t['colour'][r]}" for r in rows]
    text = ", ".join(parts)
    if all(t["tag"][r] == "common practice" for r in rows):
        return text + " [colours: common practice]"
    return text


def conductor_marking(
    kind: ArrayLike, phases: ArrayLike, ac_v: ArrayLike, convention: str = "iec"
) -> np.ndarray:
    """Identification string per circuit (object array of str; d.c. for kinds 0/1/3, a.c. for 2).

    >>> conductor_marking([0, 2], [0, 1], [0.0, 230.0]).tolist()[1]
    'L brown, N blue, PE green-and-yellow'
    """
    k = np.asarray(kind)
    ph = np.asarray(phases)
    u = np.asarray(ac_v, dtype=float)
    low = np.nan_to_num(u) <= 250.0
    ac3 = "ac3_lv" if convention == "us" else "ac3"
    choices = [
        marking_text(convention, "dc"),
        marking_text(convention, "ac1"),
        marking_text(convention, "ac3"),
        marking_text(convention, ac3),
    ]
    sel = np.select(
        [k != 2, ph == 1, ~low | (convention == "iec")],
        [0, 1, 2],
        default=3,
    )
    return np.asarray(choices, dtype=object)[sel]
