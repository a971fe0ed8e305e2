"""``python -m routeplan``: the command line (:mod:`routeplan.cli`)."""

from .cli import run

run()
