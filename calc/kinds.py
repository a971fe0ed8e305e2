"""Circuit kinds: the codes of :attr:`calc.SizingInput.kind` and their names.

A module of its own so that both the engine (:mod:`calc.engine`) and the rule sets
(:mod:`calc.rules`, which the engine imports) can name the kinds.

IEC 62548 terms: a string cable joins a string to its combiner (or an inverter), a sub-array
cable a combiner to the combiner above it, the array cable the last combiner to the inverter;
the a.c. cable runs from the inverter.

>>> KIND_NAMES[KIND_AC], FEEDER_KINDS
('ac', (1, 3))
"""

from __future__ import annotations

__all__ = ["FEEDER_KINDS", "KIND_AC", "KIND_ARRAY", "KIND_NAMES", "KIND_STRING", "KIND_SUBARRAY"]

KIND_STRING = 0
KIND_ARRAY = 1
KIND_AC = 2
KIND_SUBARRAY = 3
#: the kinds' names, indexed by their codes
KIND_NAMES = ("string", "array", "ac", "subarray")
#: the d.c. cables between a combiner and the next combiner or the inverter
FEEDER_KINDS = (KIND_ARRAY, KIND_SUBARRAY)
