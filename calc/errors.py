"""Errors raised by :mod:`calc`.

Hierarchy::

    CalcError                      base of every error raised by calc
    ├── InputError (ValueError)    an input array or design parameter is invalid
    │   └── UnknownOptionError     a string option is not one of the valid choices
    ├── TableRangeError            a value is off a standard's table, with no stated extension
    ├── DataFileError              a packaged data table is missing or malformed
    └── ConvergenceError           the parallel-conductor / grouping iteration did not settle

A circuit that cannot be sized is *not* an error: it is reported with ``ok = False`` and a note.
"""

from __future__ import annotations


class CalcError(Exception):
    """Base class of every error raised by calc."""


class InputError(CalcError, ValueError):
    """An input array or design parameter is invalid (message lists every problem found)."""


class UnknownOptionError(InputError):
    """A string option is not one of the valid choices (message lists the valid ones)."""


class TableRangeError(CalcError):
    """A value lies outside a standard's table and calc states no extension for it."""


class DataFileError(CalcError):
    """A packaged data table is missing or malformed."""


class ConvergenceError(CalcError):
    """The parallel-conductor and grouping iteration did not settle."""


def check_option(name: str, value: object, choices: tuple[str, ...]) -> str:
    """Return ``value`` if it is one of ``choices``, else raise :class:`UnknownOptionError`.

    >>> check_option("material", "Cu", ("Cu", "Al"))
    'Cu'
    >>> check_option("material", "Fe", ("Cu", "Al"))
    Traceback (most recent call last):
    ...
    calc.errors.UnknownOptionError: material must be one of 'Cu', 'Al'; got 'Fe'
    """
    if value not in choices:
        valid = ", ".join(repr(c) for c in choices)
        raise UnknownOptionError(f"{name} must be one of {valid}; got {value!r}")
    return value  # type: ignore[return-value]
