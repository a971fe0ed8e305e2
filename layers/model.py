"""The validated site: what :func:`layers.read_site` returns.

All layers are in one projected, metric working CRS (``Site.crs``); coordinates are metres.
Attribute columns keep the names of the site format (see README, "Site format"); missing
optional attributes are ``NaN`` / ``None`` — filling them with design defaults is the job
of the caller, which knows the design.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import geopandas as gpd
import pyproj

#: layer names of the site format, in reading order; ``grid`` is optional.
LAYER_NAMES: tuple[str, ...] = ("rows", "combiners", "inverters", "trenches", "grid")
REQUIRED_LAYERS: tuple[str, ...] = ("rows", "combiners", "inverters", "trenches")


@dataclass(frozen=True)
class Module:
    """One PV module type from ``[modules.<key>]`` (STC datasheet values).

    Attributes are SI: currents in A, voltages in V. ``per_string`` is the number of
    modules in series in one string. ``max_fuse_a`` is the module's maximum series fuse
    rating (NaN when not given). ``bifaciality`` is the bifaciality of Isc, φ (rear over
    front; NaN = not given, a monofacial module) and ``isc_bifacial_a`` a datasheet Isc that
    includes the rear side's gain (NaN = not given). ``voc_temp_coeff_pct_per_c`` is the
    temperature coefficient of Voc [%/°C] (negative; NaN = not given).
    """

    key: str
    isc_a: float
    imp_a: float
    voc_v: float
    vmp_v: float
    per_string: int
    max_fuse_a: float = float("nan")
    bifaciality: float = float("nan")
    isc_bifacial_a: float = float("nan")
    voc_temp_coeff_pct_per_c: float = float("nan")
    extra: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class Site:
    """A validated site layout in one metric CRS.

    Frames (all :class:`geopandas.GeoDataFrame`, index reset, ordered as in the input):

    - ``rows``: ``id`` (str), ``strings`` (int), ``module`` (str), ``to`` (str or None),
      ``input`` (the inverter DC input its strings land on, float; NaN = not given);
      LineString/Polygon.
    - ``combiners``: ``id``, ``to``, ``max_strings`` (float, NaN = unlimited), ``fuse_a``
      (NaN), ``input`` (the inverter DC input it connects to, float; NaN = not given); Point.
    - ``inverters``: ``id``, ``ac_kva``, ``ac_v``, ``phases`` (int), ``pf`` (NaN = design default),
      ``to``, ``ac_max_a`` (maximum continuous output current, NaN = not given),
      ``dc_inputs`` (float, default 1: all arrays in parallel on one DC input), and per DC
      input ``input_max_a`` (maximum operating current), ``input_max_isc_a`` (maximum
      short-circuit current), ``input_max_strings`` (string terminals), NaN = not given;
      Point or Polygon.
    - ``trenches``: ``id``, ``depth_m``, ``laying`` (str or None), ``spacing_m``, ``soil_k_m_w``,
      ``max_circuits`` or ``max_cable_sets`` (the capacity, one way; NaN where not given);
      LineString/MultiLineString.
    - ``grid``: ``id``; Point. Empty frame when the site has no grid layer.

    ``config`` is the parsed ``site.toml`` (a plain mapping); ``design`` and ``allowances`` are its
    ``[design]`` and ``[allowances]`` tables, validated by the caller that knows their meaning.
    """

    root: Path
    name: str
    crs: pyproj.CRS
    crs_note: str
    rows: gpd.GeoDataFrame
    combiners: gpd.GeoDataFrame
    inverters: gpd.GeoDataFrame
    trenches: gpd.GeoDataFrame
    grid: gpd.GeoDataFrame
    modules: dict[str, Module]
    config: dict[str, Any]
    sources: dict[str, str]

    @property
    def design(self) -> dict[str, Any]:
        """The ``[design]`` table of site.toml (empty when absent)."""
        return dict(self.config.get("design", {}))

    @property
    def allowances(self) -> dict[str, Any]:
        """The ``[allowances]`` table of site.toml (empty when absent)."""
        return dict(self.config.get("allowances", {}))

    def layer(self, name: str) -> gpd.GeoDataFrame:
        """The frame of layer ``name`` (one of :data:`LAYER_NAMES`)."""
        return getattr(self, name)
