"""The HTML map of a plan: one self-contained file that opens with no network.

:func:`render_map` draws in-memory GeoDataFrames (the plan pipeline calls it directly);
:func:`write_map` reads an output folder of ``routeplan plan`` and writes ``map.html``
(``routeplan map OUT_DIR`` calls it).

What the map shows
------------------
* circuits coloured by utilisation on a reversed viridis scale, line weight by conductor
  cross-section; failing circuits vermillion with a dashed black outline; string, array and AC
  circuits as separate layers that the layer control switches;
* trench segments as wide bands coloured by fill (ColorBrewer Blues), over-capacity ones on a
  wide, hatched vermillion halo;
* module rows, combiners, inverters (point or pad) and the grid point, with tooltips;
* a panel with the site, totals and the safety caution, and a plain HTML/CSS legend.
See :mod:`routeplan.outputs.map_scales` for the colour scales and their sources.

Above ``aggregate_strings_above`` string circuits, strings are drawn one line per row and
destination (:func:`routeplan.outputs.map_features.aggregate_strings`).

Every drawn thing is one interactive SVG path; casings and halos are drawn as separate,
non-interactive paths (CSS classes ``rp-fail-casing`` and ``rp-over-halo``). Above
``CANVAS_ABOVE`` drawn features (large plants) everything is drawn on one canvas instead, which
opens about three times faster; above ``ROWS_SHOWN_UP_TO`` rows, the rows start switched off.

Leaflet and jQuery are inlined (:mod:`routeplan.outputs.map_assets`); the only network use is the
optional online basemap. Every string shown is escaped
(:func:`routeplan.outputs.map_text.escape_text`).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import folium
import geopandas as gpd
import numpy as np
import pyproj
import shapely

from routeplan.network import paused_gc
from routeplan.outputs.map_assets import offline_header
from routeplan.outputs.map_elements import PAGE_SCRIPT, GeoJsonLayer, MetricScale, RawHTML
from routeplan.outputs.map_features import (
    CircuitLayers,
    Layer,
    SegmentLayers,
    circuit_kind,
    circuit_layers,
    drawable,
    equipment_layer,
    row_layer,
    segment_layers,
    segment_values,
    string_group_layers,
)
from routeplan.outputs.map_panel import legend_html, panel_html, plan_totals
from routeplan.outputs.map_text import escape_text

__all__ = ["MapError", "escape_text", "read_output_folder", "render_map", "write_map"]

#: File names in an output folder of ``routeplan plan``.
ROUTES_FILE = "routes.gpkg"
SUMMARY_FILE = "summary.json"
MAP_FILE = "map.html"
LAYERS = ("circuits", "segments", "rows", "equipment")

#: Columns the map cannot do without; the others are shown as "–" when missing.
REQUIRED_COLUMNS = {
    "circuits": ("circuit_id", "kind", "from_id", "to_id", "utilisation", "status"),
    "segments": ("segment_id",),
    "rows": ("id",),
    "equipment": ("id", "kind"),
}

#: Above this many drawn features the map draws on a canvas instead of one SVG path per
#: feature: a 1 GW plant's ~54,000 SVG paths take about three times as long to open.
CANVAS_ABOVE = 10_000
#: Above this many module rows, the rows layer starts switched off (it opens faster).
ROWS_SHOWN_UP_TO = 5_000

#: Names in the layer control.
LAYER_NAMES = {
    "rows": "Module rows",
    "segments": "Trench segments (fill)",
    "string": "String circuits",
    "string_grouped": "String circuits (one line per row)",
    "array": "Array circuits",
    "ac": "AC circuits",
    "equipment": "Combiners, inverters, grid point",
}


class MapError(Exception):
    """The map cannot be drawn: a file, layer, column or CRS is missing."""


def _check_columns(name: str, gdf: gpd.GeoDataFrame) -> None:
    missing = [c for c in REQUIRED_COLUMNS[name] if c not in gdf.columns]
    if missing:
        raise MapError(f"{name}: missing column(s) {', '.join(missing)}")
    if gdf.crs is None and len(gdf):
        raise MapError(f"{name}: no CRS")


def _new_map(basemap: bool, title: str, *, canvas: bool) -> folium.Map:
    m = folium.Map(
        location=None,
        tiles=None,
        control_scale=False,  # metric only, added in render_map
        max_zoom=22,
        zoom_control=True,
        prefer_canvas=canvas,
    )
    # never the module-level lists (add_js_link/add_css_link mutate them for every map)
    m.default_js = []
    m.default_css = []
    root = m.get_root()
    root.title = escape_text(title)
    # after branca's <meta charset>, which the Figure added first
    root.header.add_child(RawHTML(offline_header()), name="rp_offline_libraries")
    root.header.add_child(RawHTML(PAGE_SCRIPT), name="rp_page_script")
    if basemap:
        folium.TileLayer(
            "OpenStreetMap",
            name="Basemap (online)",
            overlay=False,
            control=True,
            max_native_zoom=19,
            max_zoom=22,
        ).add_to(m)
    return m


def _add_geojson(parent, layer: Layer, *, class_name: str, interactive: bool = True) -> None:
    """Add one GeoJSON layer to ``parent`` unless it is empty (lazily if it starts hidden)."""
    if len(layer):
        lazy = not getattr(parent, "show", True)
        GeoJsonLayer(layer, class_name=class_name, interactive=interactive, lazy=lazy).add_to(
            parent
        )


def _add_circuits(m: folium.Map, layers: CircuitLayers, name: str, css: str) -> None:
    if not layers.drawn:
        return
    group = folium.FeatureGroup(name=name, show=True).add_to(m)
    _add_geojson(group, layers.ok, class_name=f"rp-circuit {css}")
    _add_geojson(group, layers.casing, class_name="rp-fail-casing", interactive=False)
    _add_geojson(group, layers.fail, class_name=f"rp-circuit rp-fail {css}")


def _add_segments(m: folium.Map, layers: SegmentLayers) -> None:
    if not layers.drawn:
        return
    group = folium.FeatureGroup(name=LAYER_NAMES["segments"], show=True).add_to(m)
    _add_geojson(group, layers.ok, class_name="rp-segment")
    _add_geojson(group, layers.halo, class_name="rp-over-halo", interactive=False)
    _add_geojson(group, layers.over, class_name="rp-segment rp-over")


def _bounds(frames: list[gpd.GeoDataFrame]) -> list[list[float]] | None:
    boxes = [_lonlat_bounds(f) for f in frames if len(f) and f.crs is not None]
    boxes = [b for b in boxes if np.isfinite(b).all()]
    if not boxes:
        return None
    b = np.array(boxes)
    return [[b[:, 1].min(), b[:, 0].min()], [b[:, 3].max(), b[:, 2].max()]]


def _lonlat_bounds(gdf: gpd.GeoDataFrame) -> np.ndarray:
    """``gdf.to_crs("EPSG:4326").total_bounds`` from the coordinates alone (no new geometries)."""
    xy = shapely.get_coordinates(gdf.geometry.to_numpy())
    if len(xy) == 0:
        return np.full(4, np.nan)
    if not gdf.crs.equals("EPSG:4326"):
        to_geo = pyproj.Transformer.from_crs(gdf.crs, "EPSG:4326", always_xy=True)
        xy = np.column_stack(to_geo.transform(xy[:, 0], xy[:, 1]))
    return np.r_[np.nanmin(xy, axis=0), np.nanmax(xy, axis=0)]


@paused_gc()
def render_map(
    circuits: gpd.GeoDataFrame,
    segments: gpd.GeoDataFrame,
    rows: gpd.GeoDataFrame,
    equipment: gpd.GeoDataFrame,
    *,
    site_name: str,
    basemap: bool = False,
    aggregate_strings_above: int = 20000,
) -> str:
    """Draw a plan as one self-contained HTML page.

    Parameters
    ----------
    circuits, segments, rows, equipment : geopandas.GeoDataFrame
        The layers of ``routes.gpkg`` (see the output-folder contract), in the site's metric
        working CRS; any CRS is accepted and reprojected to EPSG:4326 for display.
    site_name : str
        Shown in the panel and the page title (escaped).
    basemap : bool
        Add an online OpenStreetMap basemap. Its tiles are then the page's only network use;
        without it the page makes no request at all.
    aggregate_strings_above : int
        When there are more string circuits than this, draw one line per row and destination
        instead of one per string.

    Returns
    -------
    str
        The HTML page.

    Raises
    ------
    MapError
        A required column or the CRS of a layer is missing.
    """
    frames = {"circuits": circuits, "segments": segments, "rows": rows, "equipment": equipment}
    for name, gdf in frames.items():
        _check_columns(name, gdf)

    kinds = circuit_kind(circuits)
    strings = circuits[kinds == "string"]
    aggregated = len(strings) > aggregate_strings_above
    row_l = row_layer(rows, strings)
    seg_layers = segment_layers(segments)
    string_layers = string_group_layers(strings) if aggregated else circuit_layers(strings)
    array_layers = circuit_layers(circuits[kinds == "array"])
    ac_layers = circuit_layers(circuits[~np.isin(kinds, ("string", "array"))])
    eq_l = equipment_layer(equipment, circuits)
    drawn = len(row_l) + seg_layers.drawn + len(eq_l)
    drawn += string_layers.drawn + array_layers.drawn + ac_layers.drawn

    m = _new_map(basemap, f"{site_name} – cable routes", canvas=drawn > CANVAS_ABOVE)
    # the view first: layers added later are projected and drawn once, at this view
    bounds = _bounds([drawable(f) for f in frames.values()])
    if bounds is not None:
        m.fit_bounds(bounds, padding=(20, 20))
    rows_group = folium.FeatureGroup(
        name=LAYER_NAMES["rows"], show=len(row_l) <= ROWS_SHOWN_UP_TO
    ).add_to(m)
    _add_geojson(rows_group, row_l, class_name="rp-row")
    _add_segments(m, seg_layers)
    strings_name = LAYER_NAMES["string_grouped" if aggregated else "string"]
    _add_circuits(m, string_layers, strings_name, "rp-string")
    _add_circuits(m, array_layers, LAYER_NAMES["array"], "rp-array")
    _add_circuits(m, ac_layers, LAYER_NAMES["ac"], "rp-ac")
    eq_group = folium.FeatureGroup(name=LAYER_NAMES["equipment"]).add_to(m)
    _add_geojson(eq_group, eq_l, class_name="rp-equipment")
    folium.LayerControl(collapsed=False, position="topright").add_to(m)

    _, over, _ = segment_values(segments)
    totals = plan_totals(circuits, segments, over)
    if aggregated:
        totals.extra.append(
            f"{len(strings):,} strings drawn as one line per row "
            f"(more than {aggregate_strings_above:,})"
        )
    if len(row_l) > ROWS_SHOWN_UP_TO:
        totals.extra.append(f"{len(row_l):,} module rows: switch them on in the layer list")
    not_drawn = sum(len(f) - len(drawable(f)) for f in frames.values())
    if not_drawn:
        totals.extra.append(f"{not_drawn:,} features without geometry are not drawn")
    crs = circuits.crs or segments.crs
    crs_name = crs.to_string() if crs is not None else "unknown"
    legend = legend_html(segment_reference=seg_layers.reference, aggregated=aggregated)
    m.get_root().html.add_child(
        RawHTML(panel_html(site_name, totals, crs_name=crs_name, legend=legend)),
        name="rp_panel",
    )

    MetricScale().add_to(m)
    return m.get_root().render()


def _read_layer(path: Path, layer: str) -> gpd.GeoDataFrame:
    try:
        return gpd.read_file(path, layer=layer)
    except Exception as exc:  # pyogrio raises several kinds for a missing layer
        raise MapError(f"{path}: cannot read layer {layer!r}: {exc}") from exc


def site_name_from_summary(summary: dict) -> str:
    """The site's name from a parsed ``summary.json``.

    Examples
    --------
    >>> site_name_from_summary({"site": {"name": "North field", "crs": "EPSG:32633"}})
    'North field'
    """
    try:
        return str(summary["site"]["name"])
    except (KeyError, TypeError) as exc:
        raise MapError("summary.json: no site.name") from exc


def read_output_folder(out_dir: Path) -> tuple[dict[str, gpd.GeoDataFrame], str]:
    """Read the four layers of ``routes.gpkg`` and the site name from ``summary.json``."""
    out_dir = Path(out_dir)
    gpkg = out_dir / ROUTES_FILE
    summary_path = out_dir / SUMMARY_FILE
    for p in (gpkg, summary_path):
        if not p.is_file():
            raise MapError(f"{p}: not found (is {out_dir} an output folder of 'routeplan plan'?)")
    try:
        summary = json.loads(summary_path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise MapError(f"{summary_path}: {exc}") from exc
    frames = {name: _read_layer(gpkg, name) for name in LAYERS}
    return frames, site_name_from_summary(summary)


def write_map(
    out_dir: Path,
    *,
    basemap: bool = False,
    aggregate_strings_above: int = 20000,
    dest: Path | None = None,
) -> Path:
    """Read an output folder of ``routeplan plan`` and write its map.

    Parameters
    ----------
    out_dir : pathlib.Path
        Folder holding ``routes.gpkg`` and ``summary.json``.
    basemap, aggregate_strings_above
        As for :func:`render_map`.
    dest : pathlib.Path, optional
        Where to write; ``out_dir / "map.html"`` by default.

    Returns
    -------
    pathlib.Path
        The file written (replaced atomically).
    """
    frames, site_name = read_output_folder(Path(out_dir))
    html = render_map(
        frames["circuits"],
        frames["segments"],
        frames["rows"],
        frames["equipment"],
        site_name=site_name,
        basemap=basemap,
        aggregate_strings_above=aggregate_strings_above,
    )
    dest = Path(dest) if dest is not None else Path(out_dir) / MAP_FILE
    dest.parent.mkdir(parents=True, exist_ok=True)
    tmp = dest.with_name(f".{dest.name}.{os.getpid()}.tmp")
    try:
        tmp.write_text(html, encoding="utf-8")
        os.replace(tmp, dest)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return dest
