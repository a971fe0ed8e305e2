"""routeplan: trench networks, circuit routing, the plan pipeline, outputs and the CLI.

Results are a design aid. Installations must follow local codes and be checked by a
qualified, licensed person.
"""

__version__ = "0.1.0"

CAUTION = (
    "Design aid only: cable sizes, voltage drops and trench fills must be checked against "
    "local codes and the manufacturers' data, and reviewed by a qualified, licensed person "
    "before construction."
)
