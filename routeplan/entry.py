"""The console command ``routeplan`` (and ``python -m routeplan``): the command line of
:mod:`routeplan.cli`, whose imports (numpy, pandas, geopandas, pyproj, …) take about half a
second. Ctrl-C meanwhile ends it in one line with exit 130, as during a command, instead of
a traceback."""

from __future__ import annotations

import sys


def main() -> None:
    """Import the command line and run it."""
    try:
        from .cli import app
    except KeyboardInterrupt:
        sys.stderr.write("interrupted: nothing was written\n")
        raise SystemExit(130) from None
    app()
