"""Errors raised by :mod:`routeplan` while building the trench network and routing circuits.

Hierarchy::

    RoutingError            base; carries every Problem found (layer, feature id, message)
    ├── NotConnectedError   equipment farther than ``snap_m`` from every trench, or no trench
    ├── UnreachableError    a circuit's two ends join separate islands of the trench network
    ├── AssignmentError     a missing ``to`` could not be filled, or a ``to`` names no feature
    ├── ParameterError      a routing parameter is out of range or not one of the valid choices
    ├── DesignError         the design settings cannot be applied by the rule set (e.g. a
    │                       candidate size its tables do not cover)
    └── FolderError         a folder routeplan was asked to write into cannot be used (it is
                            the site's, holds files routeplan did not write, is locked by
                            another run, cannot be written, or its disk is full)

Routing collects the problems of every step before raising, so one run reports all of them.
When they are of several kinds, the base :class:`RoutingError` is raised with all of them.
The library never prints or exits: the CLI catches :class:`RoutingError`, prints one line per
problem and exits with status 2.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

from layers.errors import Problem

__all__ = [
    "AssignmentError",
    "DesignError",
    "FolderError",
    "NotConnectedError",
    "ParameterError",
    "Problem",
    "RoutingError",
    "UnreachableError",
    "raise_for",
]


class RoutingError(Exception):
    """Base class of routing errors; ``problems`` lists every problem found."""

    def __init__(self, problems: Iterable[Problem]):
        self.problems: list[Problem] = list(problems)
        n = len(self.problems)
        head = str(self.problems[0]) if n else "routing failed"
        super().__init__(head if n <= 1 else f"{n} problems, first: {head}")


class NotConnectedError(RoutingError):
    """Equipment lies farther than ``snap_m`` from every trench (or there is no trench)."""


class UnreachableError(RoutingError):
    """A circuit's source and destination join separate islands of the trench network."""


class AssignmentError(RoutingError):
    """A missing destination (``to``) could not be assigned, or a given one does not exist."""


class ParameterError(RoutingError, ValueError):
    """A routing parameter is out of range or not one of the valid choices."""


class DesignError(RoutingError):
    """The design settings cannot be applied by the chosen rule set."""


class FolderError(RoutingError):
    """A folder routeplan was asked to write into cannot be used as it is (one problem: the
    folder's path and what to do)."""

    def __init__(self, path: object, message: str):
        super().__init__([Problem(str(path), None, message)])


def raise_for(found: Sequence[tuple[type[RoutingError], Problem]]) -> None:
    """Raise one error carrying every problem in ``found``; do nothing when it is empty.

    Parameters
    ----------
    found : sequence of (error class, Problem)
        Each problem with the class of failure it belongs to.

    Raises
    ------
    RoutingError
        The common class when all problems are of one kind, else :class:`RoutingError`.
    """
    if not found:
        return
    kinds = {cls for cls, _ in found}
    cls = kinds.pop() if len(kinds) == 1 else RoutingError
    raise cls([problem for _, problem in found])
