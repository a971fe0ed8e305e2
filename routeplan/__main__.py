"""``python -m routeplan``: the command line (:mod:`routeplan.entry`)."""

from .entry import main

main()
