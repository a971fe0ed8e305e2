"""Site layers: reading, reprojecting and validating a PV site's GIS layers.

``read_site(folder)`` reads ``site.toml`` and the layers (module rows, combiners, inverters,
trenches, grid) in any format pyogrio reads, brings them into one metric CRS and validates
them, raising :class:`SiteError` with every problem found. ``build_site(frames, config)``
does the same for in-memory frames. Nothing here knows about cables.

Of site.toml, this package reads and checks the tables :data:`SITE_TABLES` (``[site]``,
``[modules]``, ``[layers]``); the caller checks the rest and that no unknown table is present.
"""

from .errors import LayerError, Problem, SiteError
from .model import LAYER_NAMES, REQUIRED_LAYERS, Module, Site
from .read import read_site
from .validate import SITE_TABLES, build_site, parse_modules

__all__ = [
    "LAYER_NAMES",
    "REQUIRED_LAYERS",
    "SITE_TABLES",
    "LayerError",
    "Module",
    "Problem",
    "Site",
    "SiteError",
    "build_site",
    "parse_modules",
    "read_site",
]
