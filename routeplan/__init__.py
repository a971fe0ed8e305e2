"""routeplan: trench networks, circuit routing, the plan pipeline, outputs and the CLI.

Results are a design aid. Installations must follow local codes and be checked by a
qualified, licensed person.
"""

__version__ = "0.1.0"

CAUTION = (
    "Results are a design aid: cable sizes, voltage drops and trench fills must follow local "
    "codes and manufacturer data and be checked by a qualified, licensed person before "
    "construction."
)
