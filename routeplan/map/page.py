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
See :mod:`routeplan.map.scales` for the colour scales and their sources.

Review tools (:data:`routeplan.map.script._REVIEW_JS`, data from :mod:`routeplan.map.details`):
a search box and ``map.html#find=<id>`` select any circuit, row, item of equipment or trench
segment, zoom to it and show its details; a circuit's route, ends and governing stretch are
highlighted; a trench segment lists its circuits and draws them side by side; a colour view
control recolours circuits (utilisation spread, voltage drop ÷ limit, status); the failing
circuits are listed by block.

Above ``aggregate_strings_above`` string circuits, strings are drawn one line per row and
destination (:func:`routeplan.map.features.aggregate_strings`).

Every layer group is drawn in tiles of about 1,000 features by id, the most loaded circuits on
top within each tile; a re-plan redraws only the tiles whose features changed
(:mod:`routeplan.map.tiles`).

Every drawn thing is one interactive SVG path; casings and halos are drawn as separate,
non-interactive paths (CSS classes ``rp-fail-casing`` and ``rp-over-halo``). Above
``CANVAS_ABOVE`` drawn features (large plants) everything is drawn on one canvas instead, which
opens about three times faster; above ``ROWS_SHOWN_UP_TO`` rows, the rows start switched off.

Leaflet and jQuery are inlined (:mod:`routeplan.map.assets`); the only network use is the
optional online basemap. Every string shown is escaped
(:func:`routeplan.map.text.escape_text`).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely

from routeplan import parallel
from routeplan.map.details import review_data_html, review_json
from routeplan.map.features import (
    CircuitLayers,
    circuit_kind,
    circuit_layers,
    count_colours,
    drawable_mask,
    equipment_layer,
    equipment_stats,
    is_fail,
    row_layer,
    row_stats,
    segment_layers,
    segment_values,
    shared_columns,
    string_group_layers,
    text_values,
)
from routeplan.map.panel import failing_html, legend_html, panel_html, plan_totals, review_html
from routeplan.map.plantview import BLOCK_GROUP, BLOCK_GROUP_NAME, DETAIL_GROUPS, plant_view
from routeplan.map.script import script_json
from routeplan.map.text import escape_text
from routeplan.map.tiles import MapMemo, Role, mixed, tiles
from routeplan.network import paused_gc
from routeplan.outputs.reuse import row_hashes

__all__ = [
    "MapError",
    "escape_text",
    "read_output_folder",
    "render_folder",
    "render_map",
    "render_map_bytes",
    "write_map",
]

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
    "subarray": "Sub-array circuits",
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


#: Where the layers' scripts and the panel go in the page (text that escaped user text can
#: never contain: it holds "<").
_LAYERS_SLOT = "<!--rp:layers-->"
_PANEL_SLOT = "<!--rp:panel-->"
#: … and the plant view's script, after the layer list and scale bar exist
_PLANT_SLOT = "<!--rp:plantview-->"


def group_var(key: str) -> str:
    """The script name of the layer group ``key`` (folium's name of a FeatureGroup whose id is
    ``key``; checked when the page is made)."""
    return f"feature_group_{key}"


def _circuit_roles(css: str) -> tuple[Role, ...]:
    return (
        Role("ok", f"rp-circuit {css}"),
        Role("casing", "rp-fail-casing", interactive=False),
        Role("fail", f"rp-circuit rp-fail {css}"),
    )


_SEGMENT_ROLES = (
    Role("ok", "rp-segment"),
    Role("halo", "rp-over-halo", interactive=False),
    Role("over", "rp-segment rp-over"),
)


def review_constants() -> dict:
    """What the review script needs to know of the page: the layer groups, labels, the
    colours of the views and of the highlight (:mod:`routeplan.map.scales`)."""
    from routeplan.map.features import EQUIPMENT_LABEL, KIND_LABEL
    from routeplan.map.scales import DROP_SHARE, NAN_COLOUR, STATUS_COLOURS, UTILISATION

    return {
        "groups": ["rows", "segments", "string", "subarray", "array", "ac", "equipment"],
        "kinds": KIND_LABEL,
        "equipment": EQUIPMENT_LABEL,
        "stops": {"util": list(UTILISATION.stops), "drop": list(DROP_SHARE.stops)},
        "gradients": {"util": UTILISATION.css_gradient(), "drop": DROP_SHARE.css_gradient()},
        "status": STATUS_COLOURS,
        "nan": NAN_COLOUR,
        # Okabe–Ito: black casing, sky blue route, reddish purple governing stretch
        "hl": {"casing": "#000000", "line": "#56B4E9", "governing": "#CC79A7"},
        "hits": 20,
        # circuits of a selected trench segment drawn side by side, this many px apart
        "fan": 4,
    }


def _element_id(spec: dict, element: str) -> str:
    """The name of one of the page's folium elements (32 hex digits, as folium's random ones):
    from the page's spec, so the same page always has the same bytes."""
    text = json.dumps([element, spec], sort_keys=True, default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:32]


def page_parts(spec: dict) -> list[str]:
    """The page around the layers (folium), cut at the slots: [before the panel, between the
    panel and the layers' scripts, between them and the plant view's script, after it].
    Imports folium only here."""
    import folium

    from routeplan.map.assets import offline_header
    from routeplan.map.elements import MetricScale, RawHTML, ScriptSlot
    from routeplan.map.script import PAGE_SCRIPT, review_script

    m = folium.Map(
        location=None,
        tiles=None,
        control_scale=False,  # metric only, added below
        max_zoom=22,
        zoom_control=True,
        prefer_canvas=spec["canvas"],
    )
    # a name of the page's own, not folium's random one: a page made again from the same spec
    # (a cold run, or the memo's copy) has the same bytes
    m._id = _element_id(spec, "map")
    # never the module-level lists (add_js_link/add_css_link mutate them for every map)
    m.default_js = []
    m.default_css = []
    root = m.get_root()
    root.title = escape_text(spec["title"])
    # after branca's <meta charset>, which the Figure added first
    root.header.add_child(RawHTML(offline_header()), name="rp_offline_libraries")
    root.header.add_child(RawHTML(PAGE_SCRIPT), name="rp_page_script")
    if spec.get("review"):  # the plan's map (not the change map of routeplan diff)
        root.header.add_child(RawHTML(review_script(review_constants())), name="rp_review")
    if spec["basemap"]:
        folium.TileLayer(
            "OpenStreetMap",
            name="Basemap (online)",
            overlay=False,
            control=True,
            max_native_zoom=19,
            max_zoom=22,
        ).add_to(m)
    # the view first: layers added later are projected and drawn once, at this view
    if spec["bounds"] is not None:
        m.fit_bounds(spec["bounds"], padding=(20, 20))
    for key, name, show in spec["groups"]:
        group = folium.FeatureGroup(name=name, show=show)
        group._id = key  # a fixed name, known to the layers' scripts
        if group.get_name() != group_var(key):
            raise RuntimeError(f"folium named a group {group.get_name()!r}: not {group_var(key)}")
        group.add_to(m)
    ScriptSlot(_LAYERS_SLOT).add_to(m)
    control = folium.LayerControl(collapsed=False, position="topright")
    control._id = _element_id(spec, "layer_control")
    control.add_to(m)
    root.html.add_child(RawHTML(_PANEL_SLOT), name="rp_panel")
    MetricScale().add_to(m)
    ScriptSlot(_PLANT_SLOT).add_to(m)
    head, rest = root.render().split(_PANEL_SLOT)  # the panel, in the body …
    middle, rest = rest.split(_LAYERS_SLOT)  # … comes before the scripts
    between, tail = rest.split(_PLANT_SLOT)
    return [head, middle, between, tail]


def _bounds(frames: list[gpd.GeoDataFrame]) -> list[list[float]] | None:
    """The lon/lat box of ``frames`` (drawable features only: [[south, west], [north, east]]),
    from each frame's box in its CRS with densified edges (pyproj ``transform_bounds``)."""
    boxes = []
    for f in frames:
        if not len(f) or f.crs is None:
            continue
        b = shapely.total_bounds(f.geometry.to_numpy())
        if not f.crs.equals("EPSG:4326"):
            to_geo = pyproj.Transformer.from_crs(f.crs, "EPSG:4326", always_xy=True)
            b = np.array(to_geo.transform_bounds(*b, densify_pts=21))
        if np.isfinite(b).all():
            boxes.append(b)
    if not boxes:
        return None
    b = np.array(boxes)
    return [[b[:, 1].min(), b[:, 0].min()], [b[:, 3].max(), b[:, 2].max()]]


def _plant_scale(
    frames: dict[str, gpd.GeoDataFrame], ok: dict[str, np.ndarray], kinds, aggregated: bool
) -> int:
    """The number of features the map draws (rows as shown at first; strings one per row and
    destination when aggregated) when it calls for a plant view
    (:func:`routeplan.map.plantview.detail_delta`) and its circuits name their blocks
    (:func:`routeplan.map.plantview.block_of`), else 0."""
    from routeplan.map.plantview import block_of, detail_delta

    c = frames["circuits"]
    strings = (kinds == "string") & ok["circuits"]
    n_strings = int(strings.sum())
    if aggregated:  # distinct (from, to) pairs
        a = pd.factorize(text_values(c, "from_id")[strings])[0].astype(np.int64)
        b, to = pd.factorize(text_values(c, "to_id")[strings])
        n_strings = len(np.unique(a * len(to) + b))
    n_rows = int(ok["rows"].sum())
    n = (
        int(ok["segments"].sum())
        + int((ok["circuits"] & (kinds != "string")).sum())
        + n_strings
        + int(ok["equipment"].sum())
        + (n_rows if n_rows <= ROWS_SHOWN_UP_TO else 0)
    )
    if detail_delta(n) is None:
        return 0
    given = text_values(c, "inverter_id")[ok["circuits"]] if "inverter_id" in c.columns else None
    if given is None or not (given != "").any():  # block_of follows the circuits' chain
        given = block_of(c[ok["circuits"]])
    if not (given != "").any():
        return 0
    return n


def _parts(
    ids: np.ndarray, hashes: np.ndarray, cells: np.ndarray | None = None
) -> list[tuple[np.ndarray, np.ndarray]]:
    """Tiles of features (positions in the frame) with their rows' hashes; cut by ``cells``
    too when given (:func:`routeplan.map.tiles.tiles`)."""
    return [(p, hashes[p]) for p in tiles(ids, cells)]


#: At plant scale, the site is cut into squares of about 1/8 of its size a side for the tiles
#: of the groups made when zoomed in (each tile then covers one square: the page makes those
#: near the view).
CELLS_A_SIDE = 8


def _cells(gdf: gpd.GeoDataFrame, box: np.ndarray | None) -> np.ndarray | None:
    """The square that each feature's box centre lies in (its band, the row of squares, in
    the bits above 32; :func:`routeplan.map.tiles.tiles`), or None without a box.

    The squares are a fixed grid in EPSG:4326 whose side is the power of two degrees nearest
    to 1/``CELLS_A_SIDE`` of the site's ``box`` [west, south, east, north]: an edit that
    changes the site's box a little leaves every square, and so every other tile, as it was.
    """
    return _cells_of(gdf.geometry.to_numpy(), gdf.crs, box)


def _cells_of(geoms: np.ndarray, crs, box: np.ndarray | None) -> np.ndarray | None:
    """:func:`_cells` of geometries ``geoms`` in ``crs`` (pyproj CRS or None)."""
    if box is None or not len(geoms):
        return None
    b = shapely.bounds(geoms)
    x, y = (b[:, 0] + b[:, 2]) / 2, (b[:, 1] + b[:, 3]) / 2
    if crs is not None and not crs.equals("EPSG:4326"):  # the centres only
        to_geo = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
        x, y = to_geo.transform(x, y)
    extent = max(box[2] - box[0], box[3] - box[1], 1e-9)
    side = 2.0 ** round(np.log2(extent / CELLS_A_SIDE))
    i = np.nan_to_num(np.floor(x / side), nan=0).astype(np.int64)
    j = np.nan_to_num(np.floor(y / side), nan=0).astype(np.int64)
    return (j << 32) + (i & 0xFFFFFFFF)


def render_map(
    circuits: gpd.GeoDataFrame,
    segments: gpd.GeoDataFrame,
    rows: gpd.GeoDataFrame,
    equipment: gpd.GeoDataFrame,
    *,
    site_name: str,
    basemap: bool = False,
    aggregate_strings_above: int = 20000,
    memo: MapMemo | None = None,
    hashes: dict[str, np.ndarray] | None = None,
    geometry_hashes: dict[str, np.ndarray] | None = None,
    drop_limits_pct: dict[str, float] | None = None,
) -> str:
    """Draw a plan as one self-contained HTML page: :func:`render_map_bytes` as text (see
    there for the parameters)."""
    return render_map_bytes(
        circuits,
        segments,
        rows,
        equipment,
        site_name=site_name,
        basemap=basemap,
        aggregate_strings_above=aggregate_strings_above,
        memo=memo,
        hashes=hashes,
        geometry_hashes=geometry_hashes,
        drop_limits_pct=drop_limits_pct,
    ).decode("utf-8")


@paused_gc()
def render_map_bytes(
    circuits: gpd.GeoDataFrame,
    segments: gpd.GeoDataFrame,
    rows: gpd.GeoDataFrame,
    equipment: gpd.GeoDataFrame,
    *,
    site_name: str,
    basemap: bool = False,
    aggregate_strings_above: int = 20000,
    memo: MapMemo | None = None,
    hashes: dict[str, np.ndarray] | None = None,
    geometry_hashes: dict[str, np.ndarray] | None = None,
    drop_limits_pct: dict[str, float] | None = None,
) -> bytes:
    """Draw a plan as one self-contained HTML page, its UTF-8 bytes (the scripts of the tiles
    the memo keeps are bytes already: :class:`routeplan.map.tiles.MapMemo`).

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
    memo : MapMemo, optional
        The last map's tiles and page (:mod:`routeplan.map.tiles`): tiles whose rows
        did not change are reused; the memo then holds what this map used.
    hashes : dict, optional
        Content hashes of the frames' rows (:func:`routeplan.outputs.reuse.row_hashes` of
        attributes and geometry, by layer name), when the caller has them already.
    geometry_hashes : dict, optional
        The hashes of the frames' geometries alone
        (:func:`routeplan.outputs.reuse.geometry_hashes`, by layer name), when the caller has
        them: the plant view's block areas are then kept by the geometries they are drawn
        from (re-sizing a block's circuits leaves its area as it was), else by ``hashes``.
    drop_limits_pct : dict, optional
        Voltage-drop limits [%] by circuit kind and ``dc_total`` (``summary.json``'s
        ``drop_limits_pct``), for the view "voltage drop ÷ its limit".

    Returns
    -------
    bytes
        The HTML page, UTF-8.

    Raises
    ------
    MapError
        A required column or the CRS of a layer is missing.
    """
    frames = {"circuits": circuits, "segments": segments, "rows": rows, "equipment": equipment}
    for name, gdf in frames.items():
        _check_columns(name, gdf)
    with shared_columns(*frames.values()):  # each text column converted once
        return _render(
            frames,
            site_name=site_name,
            basemap=basemap,
            aggregate_strings_above=aggregate_strings_above,
            memo=memo if memo is not None else MapMemo(),
            hashes=hashes,
            geometry_hashes=geometry_hashes,
            drop_limits_pct=drop_limits_pct,
        )


def _render(
    frames: dict[str, gpd.GeoDataFrame],
    *,
    site_name: str,
    basemap: bool,
    aggregate_strings_above: int,
    memo: MapMemo,
    hashes: dict[str, np.ndarray] | None,
    geometry_hashes: dict[str, np.ndarray] | None,
    drop_limits_pct: dict[str, float] | None,
) -> bytes:
    """:func:`render_map_bytes` of checked ``frames``."""
    h = {}
    for name, gdf in frames.items():
        given = (hashes or {}).get(name)
        if given is None or len(given) != len(gdf):
            given = row_hashes(gdf.drop(columns=gdf.geometry.name), gdf.geometry.to_numpy())
        h[name] = np.asarray(given, dtype=np.uint64)
    # what the plant view's block areas are kept by: their geometries' hashes where given
    area_h = {}
    for name in ("circuits", "rows"):
        given = (geometry_hashes or {}).get(name)
        ok_length = given is not None and len(given) == len(frames[name])
        area_h[name] = np.asarray(given, dtype=np.uint64) if ok_length else h[name]
    review_data = _ReviewData(frames, h, memo, drop_limits_pct)
    try:
        return _draw(
            frames, h, area_h, review_data, site_name=site_name, basemap=basemap,
            aggregate_strings_above=aggregate_strings_above, memo=memo,
        )  # fmt: skip
    finally:
        review_data.cancel()  # a drawing that failed: the review's child is not waited for


def _draw(
    frames: dict[str, gpd.GeoDataFrame],
    h: dict[str, np.ndarray],
    area_h: dict[str, np.ndarray],
    review_data: _ReviewData,
    *,
    site_name: str,
    basemap: bool,
    aggregate_strings_above: int,
    memo: MapMemo,
) -> bytes:
    """The page of :func:`_render`, its rows' hashes ``h`` and block areas' ``area_h`` known,
    its review data made meanwhile (``review_data``)."""
    circuits, segments = frames["circuits"], frames["segments"]
    rows, equipment = frames["rows"], frames["equipment"]
    ok = {name: drawable_mask(gdf) for name, gdf in frames.items()}
    # what a tile's drawing depends on besides its rows: the CRS its coordinates are in
    wkt = {name: gdf.crs.to_wkt() if gdf.crs is not None else None for name, gdf in frames.items()}

    kinds = circuit_kind(circuits)
    # the string circuits' columns the rows' tooltips need (not the whole frame)
    strings = pd.DataFrame(circuits[[c for c in ("from_id", "vdrop_total_pct") if c in circuits]])
    strings = strings[kinds == "string"]
    aggregated = len(strings) > aggregate_strings_above
    groups: list[tuple[str, str, bool]] = []
    scripts: list[bytes] = []
    drawn = 0
    # plant view (routeplan.map.plantview): above a size, the detail groups start unmade
    lod = _plant_scale(frames, ok, kinds, aggregated)
    # whether the detail groups are made near the view: a tile's key holds this flag, never
    # the count (one feature more would change every lazy tile's key)
    lazy = lod > 0
    bounds = _bounds([frames[k][ok[k]] for k in frames])
    box = None  # [west, south, east, north] of the site, for the tiles' squares
    if lod and bounds is not None:
        box = np.array([bounds[0][1], bounds[0][0], bounds[1][1], bounds[1][0]])

    # module rows (hidden at first, and made when switched on, for very large plants)
    row_pos = np.flatnonzero(ok["rows"])
    row_ids = text_values(rows, "id")[row_pos]
    show_rows = len(row_pos) <= ROWS_SHOWN_UP_TO
    worst, routed = row_stats(row_ids, strings)
    row_h = mixed(h["rows"][row_pos], worst, routed)
    groups.append(("rows", LAYER_NAMES["rows"], show_rows))

    def draw_rows(p: np.ndarray) -> dict:
        sub = rows.iloc[row_pos[p]]
        return {"ok": row_layer(sub, stats=(worst[p], routed[p]))}

    s, n = memo.group(
        "rows", wkt["rows"], group_var("rows"), (Role("ok", "rp-row"),),
        _parts(row_ids, row_h, _cells_of(rows.geometry.to_numpy()[row_pos], rows.crs, box)),
        draw_rows,
        lazy=not show_rows or lazy,
    )  # fmt: skip
    scripts += s
    n_rows = n["ok"]
    drawn += n_rows

    # trench segments, coloured against the whole plant's busiest segment: one without a
    # capacity by the page's colour of its count, so that the tiles are kept when only the
    # busiest count changes
    seg = segments[ok["segments"]]
    _, over, reference = segment_values(seg)
    if len(seg) < len(segments):  # the totals count every segment over capacity
        over = segment_values(segments)[1]
    seg_h = h["segments"][ok["segments"]]
    s, n = memo.group(
        "segments", ("by count", wkt["segments"]), group_var("segments"), _SEGMENT_ROLES,
        _parts(text_values(seg, "segment_id"), seg_h, _cells(seg, box)),
        lambda p: vars(segment_layers(seg.iloc[p], reference, by_count=True)), lazy=lazy,
    )  # fmt: skip
    if n["ok"] + n["over"]:
        groups.append(("segments", LAYER_NAMES["segments"], True))
        colours = script_json(count_colours(seg, reference))
        scripts.append(f"rpCountColours = {colours};".encode())
        scripts += s
        drawn += n["ok"] + n["over"]

    # circuits by kind: strings (one per row and destination above the threshold), sub-arrays,
    # arrays, AC
    circuit_ids = text_values(circuits, "circuit_id")
    from_ids = text_values(circuits, "from_id")
    circuit_geoms = circuits.geometry.to_numpy()
    for kind, label, css, mask in (
        ("string", "string_grouped" if aggregated else "string", "rp-string", kinds == "string"),
        ("subarray", "subarray", "rp-array", kinds == "subarray"),
        ("array", "array", "rp-array", kinds == "array"),
        ("ac", "ac", "rp-ac", ~np.isin(kinds, ("string", "subarray", "array"))),
    ):
        pos = np.flatnonzero(mask & ok["circuits"])
        grouped = kind == "string" and aggregated

        taken: list[gpd.GeoDataFrame] = []  # the kind's circuits, taken when a tile is
        # first drawn (on a re-plan most tiles are kept)

        def draw_circuits(p: np.ndarray, pos=pos, grouped=grouped, taken=taken) -> dict:
            if not taken:
                taken.append(circuits.iloc[pos])
            layers: CircuitLayers = (string_group_layers if grouped else circuit_layers)(
                taken[0].iloc[p]
            )
            return vars(layers)

        keys = from_ids[pos] if grouped else circuit_ids[pos]
        cells = _cells_of(circuit_geoms[pos], circuits.crs, box) if kind in DETAIL_GROUPS else None
        s, n = memo.group(
            kind, (grouped, wkt["circuits"]), group_var(kind), _circuit_roles(css),
            _parts(keys, h["circuits"][pos], cells), draw_circuits,
            lazy=lazy and kind in DETAIL_GROUPS,
        )  # fmt: skip
        if n["ok"] + n["fail"]:
            groups.append((kind, LAYER_NAMES[label], True))
            scripts += s
            drawn += n["ok"] + n["fail"]

    # combiners, inverters, grid points
    eq_pos = np.flatnonzero(ok["equipment"])
    eq_ids = text_values(equipment, "id")[eq_pos]
    incoming, outgoing = equipment_stats(eq_ids, circuits)
    eq_h = mixed(h["equipment"][eq_pos], np.asarray(incoming), np.asarray(outgoing))
    groups.append(("equipment", LAYER_NAMES["equipment"], True))

    def draw_equipment(p: np.ndarray) -> dict:
        stats = ([incoming[i] for i in p], [outgoing[i] for i in p])
        return {"ok": equipment_layer(equipment.iloc[eq_pos[p]], stats=stats)}

    s, n = memo.group(
        "equipment", wkt["equipment"], group_var("equipment"), (Role("ok", "rp-equipment"),),
        _parts(eq_ids, eq_h, _cells_of(equipment.geometry.to_numpy()[eq_pos], equipment.crs, box)),
        draw_equipment, lazy=lazy,
    )  # fmt: skip
    scripts += s
    drawn += n["ok"]

    totals = plan_totals(circuits, segments, over)
    if aggregated:
        totals.extra.append(
            f"{len(strings):,} strings drawn as one line per row "
            f"(more than {aggregate_strings_above:,})"
        )
    if n_rows > ROWS_SHOWN_UP_TO:
        totals.extra.append(f"{n_rows:,} module rows: switch them on in the layer list")
    not_drawn = sum(int((~m).sum()) for m in ok.values())
    if not_drawn:
        totals.extra.append(f"{not_drawn:,} features without geometry are not drawn")
    plant = plant_view(
        circuits,
        rows,
        n_features=lod,
        groups=groups,
        bounds=bounds,
        areas=memo.geometries,
        hashes=(area_h["circuits"], area_h["rows"]),
    )
    if plant.note():
        totals.extra.append(plant.note())
    if plant.blocks:  # under the others; shown at plant zoom
        groups.insert(0, (BLOCK_GROUP, BLOCK_GROUP_NAME, True))
    if lod:  # detail groups are added when the user zooms in
        groups = [(k, name, show and k not in DETAIL_GROUPS) for k, name, show in groups]
    crs = circuits.crs or segments.crs
    crs_name = crs.to_string() if crs is not None else "unknown"
    legend = legend_html(segment_reference=reference, aggregated=aggregated)
    legend += plant.legend_html()
    fail = is_fail(circuits)
    blocks = text_values(circuits, "inverter_id")[fail].tolist()
    failing = circuit_ids[fail].tolist()
    # the list of failing circuits, kept with the page parts under a digest of its input
    listed = hashlib.sha256(json.dumps([failing, blocks]).encode("utf-8")).hexdigest()
    listing = review_html(
        memo.page(f"failing:{listed}", lambda: [failing_html(failing, blocks)])[0]
    )
    panel = panel_html(site_name, totals, crs_name=crs_name, legend=legend, review=listing)
    panel += review_data_html(review_data())

    spec = {
        "title": f"{site_name} – cable routes",
        "basemap": bool(basemap),
        "canvas": drawn > CANVAS_ABOVE,
        "bounds": bounds,
        "groups": groups,
        "review": True,
        "parts": 4,  # page_parts' pieces (a memo of an older page has fewer)
    }
    head, middle, between, tail = memo.page(
        json.dumps(spec, sort_keys=True), lambda: page_parts(spec)
    )
    page = [t.encode("utf-8") for t in (head, panel, middle, between, plant.script, tail)]
    return b"".join([*page[:3], b"\n".join(scripts), *page[3:]])


class _ReviewData:
    """The page's review data (:func:`review_json` of the four tables, with ``memo``'s review
    tables) made in a child process (:func:`routeplan.parallel.compute`) while this one draws
    the tiles: the map's two parts share the cores with the other writers (1 GW, a trench
    moved: the review data is about a third of the map's work). Calling it waits for the text
    and takes the child's review tables (this run's state of ``memo.review``) into ``memo``,
    for the next run (made here where the child fails)."""

    def __init__(
        self,
        frames: dict[str, gpd.GeoDataFrame],
        h: dict[str, np.ndarray],
        memo: MapMemo,
        drop_limits_pct: dict[str, float] | None,
    ) -> None:
        self.memo = memo

        def work() -> tuple[str, dict]:
            text = review_json(
                frames["circuits"],
                frames["segments"],
                frames["rows"],
                frames["equipment"],
                drop_limits_pct=drop_limits_pct,
                memo=memo.review,
                hashes=(h["circuits"], h["segments"], h["rows"], h["equipment"]),
            )
            r = memo.review
            return text, (r.now, r.found, r.ids)

        self._pending = parallel.compute(work)

    def __call__(self) -> str:
        text, (now, found, ids) = self._pending.result()
        r = self.memo.review
        r.now, r.found, r.ids = now, found, ids
        return text

    def cancel(self) -> None:
        """Stop the child where its text was not taken."""
        self._pending.cancel()  # nothing left to stop once the value was taken


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
    force: bool = False,
) -> Path:
    """Read an output folder of ``routeplan plan`` and write its map: ``out_dir /
    "map.html"`` is replaced through the folder's manifest (:mod:`routeplan.folder`), only in
    a folder routeplan wrote, and only a map.html it wrote (or, with ``force``, one edited
    since). :func:`render_folder` gives the page without writing it.

    Parameters
    ----------
    out_dir : pathlib.Path
        Folder holding ``routes.gpkg`` and ``summary.json``.
    basemap, aggregate_strings_above
        As for :func:`render_map`.
    force : bool
        Replace a map.html edited since routeplan wrote it.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    MapError
        A file, layer, column or CRS of the folder is missing or unreadable.
    routeplan.errors.FolderError
        The folder is not one routeplan wrote, is locked by another run, or map.html is not
        routeplan's.
    """
    from routeplan.folder import OutputFolder

    out_dir = Path(out_dir)
    if not out_dir.is_dir():
        raise MapError(f"{out_dir}: not found (is it an output folder of 'routeplan plan'?)")
    with OutputFolder.open(
        out_dir, "plan", force=force, expect=(MAP_FILE,), must_exist=True
    ) as folder:
        html = render_folder(
            folder.real, basemap=basemap, aggregate_strings_above=aggregate_strings_above
        )
        (folder.work / MAP_FILE).write_text(html, encoding="utf-8")
        folder.commit([MAP_FILE], keep_others=True)
    return out_dir / MAP_FILE


def render_folder(
    out_dir: Path, *, basemap: bool = False, aggregate_strings_above: int = 20000
) -> str:
    """The map page of an output folder of ``routeplan plan`` as HTML text, written nowhere
    (:func:`write_map` writes it into the folder). Raises :class:`MapError` as it does."""
    frames, site_name = read_output_folder(out_dir)
    limits = None
    try:
        summary = json.loads((Path(out_dir) / SUMMARY_FILE).read_text(encoding="utf-8"))
        limits = summary.get("drop_limits_pct")
    except (OSError, ValueError, AttributeError):
        pass
    return render_map(
        frames["circuits"],
        frames["segments"],
        frames["rows"],
        frames["equipment"],
        site_name=site_name,
        basemap=basemap,
        aggregate_strings_above=aggregate_strings_above,
        drop_limits_pct=limits if isinstance(limits, dict) else None,
    )
