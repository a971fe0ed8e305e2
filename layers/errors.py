"""Errors raised by :mod:`layers`.

Hierarchy::

    LayerError          base of every error raised by this package
    └── SiteError     the site could not be read or failed validation; carries every Problem found

The library never prints or exits: the CLI catches :class:`LayerError`, prints one line per
problem and exits with status 2.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass


@dataclass(frozen=True, order=True)
class Problem:
    """One thing wrong with the input: which layer (or file), which feature, what is wrong."""

    layer: str
    feature_id: str | None
    message: str

    def __str__(self) -> str:
        where = self.layer if self.feature_id is None else f"{self.layer} {self.feature_id!r}"
        return f"{where}: {self.message}"


class LayerError(Exception):
    """Base class of errors raised by the layers package."""


class SiteError(LayerError):
    """The site could not be read or is invalid; ``problems`` lists every problem found."""

    def __init__(self, problems: Iterable[Problem]):
        self.problems: list[Problem] = list(problems)
        n = len(self.problems)
        head = str(self.problems[0]) if n else "invalid site"
        super().__init__(head if n == 1 else f"{n} problems, first: {head}")
