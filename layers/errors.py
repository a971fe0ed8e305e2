"""Errors raised by :mod:`layers`.

Hierarchy::

    LayerError          base of every error raised by this package
    └── SiteError     the site could not be read or failed validation; carries every Problem found

The library never prints or exits: the CLI catches :class:`LayerError`, prints one line per
problem and exits with status 2.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .model import Site


@dataclass(frozen=True, order=True)
class Problem:
    """One thing wrong with the input: which layer (or file), which feature, what is wrong;
    ``attribute``: the feature's attribute whose value is wrong, where the problem is about
    one (not compared: the message names it too)."""

    layer: str
    feature_id: str | None
    message: str
    attribute: str | None = field(default=None, compare=False)

    def __str__(self) -> str:
        where = self.layer if self.feature_id is None else f"{self.layer} {self.feature_id!r}"
        return f"{where}: {self.message}"


class LayerError(Exception):
    """Base class of errors raised by the layers package."""


class SiteError(LayerError):
    """The site could not be read or is invalid; ``problems`` lists every problem found.

    ``partial`` is the site as far as validation could vouch for it, or None: every layer
    was read, its geometry is valid and in the working CRS, but some attributes (or
    site.toml's modules) are wrong — they are NaN / None where a value was refused, and an
    id missing is its position label ``#n``. Checks that need the geometry alone (e.g. the
    trench network's) may run on it, so that one run reports their problems too; nothing
    may be planned from it.
    """

    def __init__(self, problems: Iterable[Problem], partial: Site | None = None):
        self.problems: list[Problem] = list(problems)
        self.partial = partial
        n = len(self.problems)
        head = str(self.problems[0]) if n else "invalid site"
        super().__init__(head if n == 1 else f"{n} problems, first: {head}")
