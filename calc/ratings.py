"""Picking protective-device ratings from a list of standard ratings.

One rule serves every device the rule sets pick: string fuses (:func:`calc.pv.string_protection`;
nec 690.9), array fuses and a.c. breakers (:mod:`calc.protection`; nec 690.9(B), 240.6(A)) — the
smallest standard rating at or above the current the device must carry, a rating equal to that
current (within a relative 1e-9, for currents computed from factors) fitting it. The lists and
the currents are the callers' (each with its source); this module holds no number of a standard.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["FuseChoice", "fuse_in_range", "smallest_rating_a"]

#: relative tolerance of the rating comparisons: a value equal to a rating fits it
_REL = 1e-9


def smallest_rating_a(ratings_a: ArrayLike, current_a: ArrayLike) -> np.ndarray:
    """The smallest of the ascending ``ratings_a`` [A] at or above each ``current_a`` [A]; nan
    above the largest (and for an empty list).

    >>> smallest_rating_a([10.0, 16.0, 20.0], [10.0, 10.5, 20.0000000001, 25.0]).tolist()
    [10.0, 16.0, 20.0, nan]
    """
    ratings = np.asarray(ratings_a, dtype=float)
    x = np.asarray(current_a, dtype=float)
    idx = np.searchsorted(ratings, x * (1.0 - _REL), side="left")
    pick = ratings[np.minimum(idx, len(ratings) - 1)] if len(ratings) else np.full(x.shape, np.nan)
    return np.where(idx < len(ratings), pick, np.nan)


class FuseChoice(NamedTuple):
    """Result of :func:`fuse_in_range` (arrays of one shape)."""

    fuse_a: np.ndarray  # the fuse [A]; nan = none (not required, or no rating fits)
    ok: np.ndarray  # False where a fixed fuse lies outside the range or no rating fits it


def fuse_in_range(
    lower_a: ArrayLike,
    upper_a: ArrayLike,
    required: ArrayLike,
    fixed_a: ArrayLike,
    ratings_a: ArrayLike,
) -> FuseChoice:
    """The fuse of each circuit within its permitted range ``lower_a`` … ``upper_a`` [A].

    A fuse fixed by the equipment (``fixed_a``; nan = none) is kept and must lie within the
    range. Otherwise, where a fuse is ``required``, it is the smallest of the ascending
    ``ratings_a`` at or above ``lower_a`` (:func:`smallest_rating_a`), which must not exceed
    ``upper_a``; where none is required, none (nan) and ok. The ranges are the callers'
    (:func:`calc.pv.string_protection`: IEC 62548; the nec rule set: NEC 2023 690.9(B)).

    >>> c = fuse_in_range([15.0] * 3, [20.0] * 3, [True, True, False], [np.nan, 25.0, np.nan],
    ...                   [10.0, 16.0, 20.0])
    >>> c.fuse_a.tolist(), c.ok.tolist()
    ([16.0, 25.0, nan], [True, False, True])
    """
    lower = np.asarray(lower_a, dtype=float)
    upper = np.asarray(upper_a, dtype=float)
    fixed = np.asarray(fixed_a, dtype=float)
    required = np.asarray(required, dtype=bool)
    pick = smallest_rating_a(ratings_a, lower)
    pick_ok = pick <= upper * (1.0 + _REL)
    has_fixed = ~np.isnan(fixed)
    fixed_ok = (fixed >= lower * (1.0 - _REL)) & (fixed <= upper * (1.0 + _REL))
    fuse = np.where(has_fixed, fixed, np.where(required & pick_ok, pick, np.nan))
    ok = np.where(has_fixed, fixed_ok, ~required | pick_ok)
    return FuseChoice(fuse, ok)
