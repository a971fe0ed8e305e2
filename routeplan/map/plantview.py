"""The plant view of the HTML map: blocks as areas at plant zoom, details as the user zooms in.

A 1 GW plant holds about 240 inverter blocks and 60,000 drawn lines; at the zoom that shows the
whole plant every line is a pixel or two long and fixed-size equipment markers cover them all.
Above ``PLANT_VIEW_ABOVE`` drawn features the map therefore opens on a *plant view*:

* each block (the circuits that feed one inverter: its ``inverter_id``) is one area, the
  concave hull of its DC circuits' vertices, its module rows and its inverter, buffered by
  ``BLOCK_BUFFER_M`` (:func:`block_table`, vectorised with shapely 2);
* a block is filled by its worst utilisation on the circuits' scale
  (:data:`routeplan.map.scales.UTILISATION`); a block holding a failing circuit is vermillion
  with a dashed black outline and carries a label (a button: Tab, Enter zooms to it) with its
  number of failing circuits;
* the detail groups (rows, trench segments, string, sub-array and array circuits, equipment)
  stay unmade until the user zooms to ``detail zoom`` = the opening zoom + ``delta``
  (:func:`detail_delta`: about ``DETAIL_FEATURES`` features in view), where the blocks give way
  to them; AC circuits are drawn at every zoom. A layer switched off in the layer list stays
  off; one switched on at plant zoom stays on. The detail groups are cut into tiles by band
  of squares of the site (:func:`routeplan.map.page._cells`, :func:`routeplan.map.tiles.tiles`)
  and a tile is made only when it comes near the view (``rpLazy`` in
  :data:`routeplan.map.script.PAGE_SCRIPT`).

Smaller maps have no plant view: they open on their details, labels included. Code that
needs a detail group at once (e.g. to find a feature in it) calls
``rpPlantView.showDetails(key)`` (shows and makes the group ``key``) or ``rpMakeAll(group)``.

At every zoom from the detail zoom in, ids of equipment, rows and array/AC circuits are
labelled where their boxes do not overlap labels already placed (inverters first), at most
``LABEL_CAP`` at a time, recomputed after each zoom or pan.

At the opening view the panel, legend and layer list never cover the site: the page fits the
site into the part of the window they leave free (each box pads the side it stands at,
whichever way fits the site larger); the legend starts folded when the site then shows
larger. Both fold with their ``<summary>`` (a button to the keyboard).

Ids are user text: the block data are embedded as JSON made safe for ``<script>``
(:func:`routeplan.map.script.script_json`) and reach the page only through ``textContent``;
ids read back from the other layers (escaped there with
:func:`routeplan.map.text.escape_text`) are decoded and set as ``textContent`` too.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import math
from collections.abc import Callable
from dataclasses import dataclass

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routeplan.map.features import circuit_kind, drawable_mask, is_fail, text_values
from routeplan.map.scales import CASING_COLOUR, PROBLEM_COLOUR, UTILISATION
from routeplan.map.script import script_json
from routeplan.outputs.reuse import geometry_hashes

#: Above this many drawn features (all layers) the map opens on the plant view.
PLANT_VIEW_ABOVE = 5_000
#: About this many features in view when the details appear.
DETAIL_FEATURES = 4_000
#: Most id labels shown at a time.
LABEL_CAP = 150
#: Most failing-count labels of blocks shown at a time.
BLOCK_LABEL_CAP = 1_000
#: Buffer around each block's hull [m]: the hull's own vertices (circuit ends) then lie inside.
BLOCK_BUFFER_M = 4.0
#: Concave hull ratio (shapely ``concave_hull``: 0 = most concave, 1 = convex hull).
HULL_RATIO = 0.3
#: Simplification of a block's outline [m].
BLOCK_SIMPLIFY_M = 1.0
#: The outline points are taken one per square metre of a grid whose origin is the smallest
#: coordinates of the plant's points rounded down to a multiple of this [m] (2**20 m): a
#: trench moved at the plant's edge leaves the grid (and so every other block's area) as it
#: was, unless the plant straddles a line of that coarse grid. Points lie within 2**21 m of
#: the origin, as the points' keys need, for any plant smaller than 1,000 km.
ORIGIN_STEP_M = float(1 << 20)
#: The layer groups shown only from the detail zoom in (page.py's group keys).
DETAIL_GROUPS = ("rows", "segments", "string", "subarray", "array", "equipment")
#: The layer group of the block areas.
BLOCK_GROUP = "blocks"
BLOCK_GROUP_NAME = "Blocks (plant view)"
#: Most hops from a circuit to its inverter when ``inverter_id`` is absent (the chain of
#: combiners; ``layers.validate`` allows fewer).
_MAX_HOPS = 8


def detail_delta(n_features: int) -> int | None:
    """Zoom levels between the opening (plant) view and the details, or None (no plant view).

    Each zoom level in shows a quarter of the area, so ``n`` features spread over the plant
    leave about ``DETAIL_FEATURES`` in view after ``ceil(log4(n / DETAIL_FEATURES))`` levels.

    Examples
    --------
    >>> detail_delta(120), detail_delta(62_000), detail_delta(200_000)
    (None, 2, 3)
    """
    if n_features <= PLANT_VIEW_ABOVE:
        return None
    return max(1, math.ceil(0.5 * math.log2(n_features / DETAIL_FEATURES)))


def block_of(circuits: pd.DataFrame) -> np.ndarray:
    """Each circuit's block (the inverter it feeds) as text, ``""`` where unknown.

    The ``inverter_id`` column where it is given (the schedule's); otherwise the chain of
    ``to_id`` is followed from each circuit (at most 8 hops) to the node whose outgoing circuit
    is an AC circuit (the inverter); an AC circuit's block is its ``from_id``.
    """
    if "inverter_id" in circuits.columns:
        given = text_values(circuits, "inverter_id")
        if (given != "").any():
            return given
    kinds = circuit_kind(circuits)
    frm = text_values(circuits, "from_id")
    to = text_values(circuits, "to_id")
    ac = kinds == "ac"
    inverters = set(frm[ac].tolist())
    nxt = pd.Series(to[~ac], index=frm[~ac])
    nxt = nxt[~nxt.index.duplicated()]
    node = pd.Series(np.where(ac, frm, to))
    for _ in range(_MAX_HOPS):
        done = node.isin(inverters).to_numpy()
        if done.all():
            break
        node = node.where(done, node.map(nxt))
    out = node.where(node.isin(inverters), "").fillna("")
    return out.astype(str).to_numpy(dtype=object)


def _metric(gdf: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """``gdf`` in a metric CRS (its own if projected, else its UTM zone)."""
    if gdf.crs is None or gdf.crs.is_projected:
        return gdf
    return gdf.to_crs(gdf.estimate_utm_crs())


#: ``areas(keys, make)``: a block area for each key, the last run's where it has the key,
#: else ``make(positions in keys)`` (:meth:`routeplan.map.tiles.MapMemo.geometries`)
Areas = Callable[[list[str], Callable[[np.ndarray], np.ndarray]], np.ndarray]


def block_table(
    circuits: gpd.GeoDataFrame,
    rows: gpd.GeoDataFrame | None = None,
    *,
    areas: Areas | None = None,
    hashes: tuple[np.ndarray, np.ndarray | None] | None = None,
) -> gpd.GeoDataFrame:
    """One row per block: its area and values, in the circuits' CRS.

    The area is the concave hull (shapely ``concave_hull``, ratio ``HULL_RATIO``) of the
    vertices of the block's DC circuits, the first point of its AC circuits (the inverter) and
    the vertices of its module rows (a row's block is that of its string circuits), buffered
    by ``BLOCK_BUFFER_M`` [m] in a metric CRS and simplified by ``BLOCK_SIMPLIFY_M`` [m]. Its
    route to a distant grid point is not part of the block.

    Columns: ``block`` (id), ``circuits``, ``failing`` (count of status "fail"),
    ``worst_utilisation`` [–], ``worst_vdrop_total_pct`` [%], ``geometry``.

    With ``areas`` (the memo of the last map), a block whose circuits and rows are exactly
    those of the last run keeps its area; only the others are drawn (each area depends on its
    own points alone, rounded from the smallest coordinates of the site, which are found
    without the points). A block is known by a digest of its circuits' and rows' content
    hashes (``hashes``: one per row of ``circuits`` and of ``rows``, e.g. those of
    :func:`routeplan.outputs.reuse.row_hashes`; by default those of their geometries), which
    of its circuits are AC, the CRSs and the drawing's values.
    """
    crs = circuits.crs
    cols = ["block", "circuits", "failing", "worst_utilisation", "worst_vdrop_total_pct"]
    empty = gpd.GeoDataFrame({c: [] for c in cols}, geometry=[], crs=crs)
    if not len(circuits):
        return empty
    block = block_of(circuits)
    ok = drawable_mask(circuits) & (block != "")
    if not ok.any():
        return empty
    metric = _metric(circuits[ok])
    g = metric.geometry.to_numpy()
    b = block[ok]
    kinds = circuit_kind(circuits)[ok]
    ac = kinds == "ac"
    # each circuit's and row's block as a code (factorized once, not per point)
    block_code, block_names = pd.factorize(b)
    row_g = np.empty(0, dtype=object)
    row_code = np.zeros(0, dtype=np.int64)
    row_keep = np.zeros(0, dtype=bool)
    if rows is not None and len(rows) and "id" in rows.columns:
        strings = kinds == "string"
        row_block = pd.Series(
            block_code[strings], index=text_values(circuits, "from_id")[ok][strings]
        )
        row_block = row_block[~row_block.index.duplicated()]
        rb = pd.Series(text_values(rows, "id")).map(row_block)
        row_keep = rb.notna().to_numpy() & drawable_mask(rows)
        if row_keep.any():
            rows_m = rows[row_keep].to_crs(metric.crs) if rows.crs is not None else rows[row_keep]
            row_g = rows_m.geometry.to_numpy()
            row_code = rb.to_numpy()[row_keep].astype(np.int64)
    # the outline points, in this order: the DC circuits' vertices, the AC circuits' first
    # points, the rows' vertices; blocks numbered in order of their first point
    by_first = pd.unique(np.concatenate([block_code[~ac], block_code[ac], row_code]))
    renumber = np.zeros(len(block_names), dtype=np.int64)
    renumber[by_first] = np.arange(len(by_first))
    names = np.asarray(block_names, dtype=object)[by_first]
    circuit_block, row_block_code = renumber[block_code], renumber[row_code]
    inverter = shapely.get_point(g[ac], 0)
    # one point per square metre per block is enough for its outline: a key of the block and
    # the coordinates rounded on a grid from the smallest of all points rounded down to
    # ORIGIN_STEP_M (each point within 2**21 m of it)
    box = np.concatenate(
        [
            shapely.bounds(g[~ac]),
            np.tile(shapely.get_coordinates(inverter)[:, :2], 2),
            shapely.bounds(row_g),
        ]
    )
    low, high = np.nanmin(box[:, :2], axis=0), np.nanmax(box[:, 2:], axis=0)
    origin = np.floor(low / ORIGIN_STEP_M) * ORIGIN_STEP_M
    if (high - origin >= 1 << 21).any():  # a plant of 1,000 km or more: its own corner
        origin = low

    def outline_points(which: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The outline points of the blocks ``which`` (codes, ascending) and their blocks,
        sorted by block."""
        mine = np.isin(circuit_block, which)
        dc, at = mine & ~ac, mine[ac]
        xy, idx = shapely.get_coordinates(g[dc], return_index=True)
        rxy, ridx = shapely.get_coordinates(
            row_g[np.isin(row_block_code, which)], return_index=True
        )
        first = shapely.get_coordinates(inverter[at])[:, :2]
        pts = np.concatenate([xy[:, :2], first, rxy[:, :2]])
        codes = np.concatenate(
            [
                circuit_block[dc][idx],
                circuit_block[ac][at],
                row_block_code[np.isin(row_block_code, which)][ridx],
            ]
        )
        grid = np.round(pts - origin).astype(np.int64)
        grid = np.clip(grid, 0, (1 << 21) - 1)
        key = (codes << 42) | (grid[:, 0] << 21) | grid[:, 1]
        _, sel = np.unique(key, return_index=True)  # sorted by key: by block
        return pts[sel], codes[sel]

    def make(which: np.ndarray) -> np.ndarray:
        """The areas of the blocks ``which`` (codes, ascending), in ``crs``."""
        pts, codes = outline_points(which)
        multi = shapely.multipoints(pts, indices=np.searchsorted(which, codes))
        hull = shapely.concave_hull(multi, ratio=HULL_RATIO)
        area = shapely.buffer(hull, BLOCK_BUFFER_M, quad_segs=4)
        area = gpd.GeoSeries(shapely.simplify(area, BLOCK_SIMPLIFY_M), crs=metric.crs)
        if crs is not None and not metric.crs.equals(crs):
            area = area.to_crs(crs)
        return area.to_numpy()

    if areas is None:
        area = make(np.arange(len(names)))
    else:  # a block's area by a digest of what its points come from (see _block_keys)
        circuit_h, row_h = hashes if hashes is not None else (None, None)
        if circuit_h is None:
            circuit_h = geometry_hashes(circuits.geometry.to_numpy())
        wkt = [c.to_wkt() if c is not None else None for c in (metric.crs, crs)]
        if len(row_keep):
            wkt.append(rows.crs.to_wkt() if rows.crs is not None else None)
            row_h = row_h if row_h is not None else geometry_hashes(rows.geometry.to_numpy())
            row_h = np.asarray(row_h)[row_keep]
        else:
            row_h = np.zeros(0, dtype=np.uint64)
        # the origin of the rounding too: each block's points depend on it
        frame = repr((HULL_RATIO, BLOCK_BUFFER_M, BLOCK_SIMPLIFY_M, *wkt)).encode()
        frame += origin.tobytes()
        keys = _block_keys(
            frame,
            len(names),
            (circuit_block, np.asarray(circuit_h)[ok], ac),
            (row_block_code, row_h, np.zeros(len(row_h), dtype=bool)),
        )
        area = areas(keys, make)

    df = circuits[ok]
    util = pd.to_numeric(df.get("utilisation"), errors="coerce")
    drop = (
        pd.to_numeric(df["vdrop_total_pct"], errors="coerce")
        if "vdrop_total_pct" in df.columns
        else pd.Series(np.nan, index=df.index)
    )
    stats = pd.DataFrame(
        {
            "block": pd.Categorical(b, categories=names),
            "fail": is_fail(df),
            "util": util.to_numpy(dtype=float),
            "drop": drop.to_numpy(dtype=float),
        }
    ).groupby("block", observed=False)
    return gpd.GeoDataFrame(
        {
            "block": np.asarray(names, dtype=object),
            "circuits": stats.size().to_numpy(dtype=np.int64),
            "failing": stats["fail"].sum().to_numpy(dtype=np.int64),
            "worst_utilisation": stats["util"].max().to_numpy(dtype=float),
            "worst_vdrop_total_pct": stats["drop"].max().to_numpy(dtype=float),
        },
        geometry=area,
        crs=crs,
    )


def _block_keys(
    frame: bytes, n: int, *members: tuple[np.ndarray, np.ndarray, np.ndarray]
) -> list[str]:
    """A digest for each of ``n`` blocks: of ``frame`` and, for each kind of member (block
    code, content hash and a flag per member), its members' hashes and flags in order."""
    parts: list[list[bytes]] = [[frame] for _ in range(n)]
    for code, hashes, flag in members:
        order = np.argsort(code, kind="stable")
        ends = np.searchsorted(code[order], np.arange(n + 1))
        h = np.asarray(hashes, dtype=np.uint64)[order].tobytes()
        f = np.asarray(flag, dtype=np.uint8)[order].tobytes()
        for k, (a, b) in enumerate(itertools.pairwise(ends.tolist())):
            parts[k] += [b"|", h[8 * a : 8 * b], f[a:b]]
    return [hashlib.blake2b(b"".join(p), digest_size=16).hexdigest() for p in parts]


def _round_coords(geoms: np.ndarray) -> np.ndarray:
    return shapely.transform(geoms, lambda xy: np.round(xy, 6))


def block_data(blocks: gpd.GeoDataFrame) -> list[dict]:
    """The blocks as the page's script reads them: raw ids (shown with ``textContent``),
    GeoJSON geometry in EPSG:4326, values and the fill colour."""
    if not len(blocks):
        return []
    geo = blocks.to_crs("EPSG:4326") if blocks.crs is not None else blocks
    g = _round_coords(geo.geometry.to_numpy())
    label = _round_coords(shapely.point_on_surface(g))
    colour = UTILISATION.colours(blocks["worst_utilisation"].to_numpy(dtype=float))
    fail = blocks["failing"].to_numpy() > 0
    columns = zip(
        blocks["block"].tolist(),
        blocks["circuits"].to_numpy().tolist(),
        blocks["failing"].to_numpy().tolist(),
        blocks["worst_utilisation"].to_numpy(dtype=float).tolist(),
        blocks["worst_vdrop_total_pct"].to_numpy(dtype=float).tolist(),
        shapely.to_geojson(g).tolist(),
        shapely.get_coordinates(label).tolist(),
        strict=True,
    )
    out = []
    for i, (block, n, failing, u, d, gj, p) in enumerate(columns):
        out.append(
            {
                "id": str(block),
                "g": json.loads(gj),
                "at": [p[1], p[0]],
                "n": int(n),
                "fail": int(failing),
                "util": None if math.isnan(u) else round(u, 4),
                "drop": None if math.isnan(d) else round(d, 3),
                "fill": PROBLEM_COLOUR if fail[i] else str(colour[i]),
            }
        )
    return out


@dataclass
class PlantView:
    """What the plant view adds to a page: its script, legend entry and panel note."""

    delta: int | None
    blocks: int
    failing_blocks: int
    script: str

    def legend_html(self) -> str:
        """The legend's entry for block areas (empty without a plant view)."""
        if not self.blocks or self.delta is None:
            return ""
        swatch = (
            '<svg width="22" height="16" aria-hidden="true"><rect x="2" y="2" width="18" '
            f'height="12" fill="{PROBLEM_COLOUR}" fill-opacity="0.75" stroke="{CASING_COLOUR}" '
            'stroke-width="2" stroke-dasharray="4 3"/></svg>'
        )
        return (
            "<b>Blocks (plant view)</b>"
            '<div class="rp-note">one area per inverter block, filled by its worst '
            "utilisation (scale above); zoom in for its circuits</div>"
            f'<div class="rp-key">{swatch}<span><span class="rp-fail">block with failing '
            "circuits</span>, labelled with their number</span></div>"
        )

    def note(self) -> str | None:
        """The panel's note (plain text, escaped by the panel)."""
        if self.delta is None or not self.blocks:
            return None
        return (
            f"Plant view: {self.blocks:,} blocks ({self.failing_blocks:,} with failing "
            f"circuits); zoom in {self.delta} level{'s' if self.delta > 1 else ''} for circuits, "
            "trenches and equipment"
        )


def plant_view(
    circuits: gpd.GeoDataFrame,
    rows: gpd.GeoDataFrame,
    *,
    n_features: int,
    groups: list[tuple[str, str, bool]],
    bounds: list[list[float]] | None,
    areas: Areas | None = None,
    hashes: tuple[np.ndarray, np.ndarray | None] | None = None,
) -> PlantView:
    """The plant view of a map of ``n_features`` drawn features (see the module docstring).

    ``groups`` are the page's layer groups (key, name, shown at first) as they will be made;
    ``bounds`` the site's [[south, west], [north, east]]; ``areas`` and ``hashes`` as for
    :func:`block_table`. Without a plant view the script still fits the site beside the panels
    and labels ids.
    """
    delta = detail_delta(n_features)
    blocks = block_table(circuits, rows, areas=areas, hashes=hashes) if delta is not None else None
    data = block_data(blocks) if blocks is not None else []
    spec = {
        "delta": delta,
        "blocks": data,
        "blockGroup": BLOCK_GROUP,
        "detail": [k for k, _, _ in groups if k in DETAIL_GROUPS],
        "want": {k: bool(show) for k, _, show in groups} | ({BLOCK_GROUP: True} if data else {}),
        "bounds": bounds,
        "labelCap": LABEL_CAP,
        "blockLabelCap": BLOCK_LABEL_CAP,
        "casing": CASING_COLOUR,
    }
    return PlantView(
        delta=delta,
        blocks=len(data),
        failing_blocks=sum(1 for d in data if d["fail"]),
        script=f"(function(D) {{\n{PLANT_SCRIPT}\n}})({script_json(spec)});",
    )


#: The page's plant-view script, run once after the layers' scripts with ``D`` (see
#: :func:`plant_view`). Shown text is set with textContent only.
PLANT_SCRIPT = r"""
var map = window[document.querySelector('.folium-map').id];
var groups = {};
Object.keys(D.want).forEach(function(k) { groups[k] = window['feature_group_' + k]; });
var bounds = D.bounds ? L.latLngBounds(D.bounds) : null;
map.options.zoomSnap = 0.25;

// --- the opening view: the site beside the panel, the legend and the layer list ----------
function bestFit() {
    var box = map.getContainer().getBoundingClientRect(), size = map.getSize();
    var covers = [];
    ['#rp-panel', '#rp-legend', '.leaflet-control-layers'].forEach(function(sel) {
        var el = document.querySelector(sel);
        if (!el) { return; }
        var r = el.getBoundingClientRect();
        if (!r.width || !r.height) { return; }
        var left = r.left - box.left, top = r.top - box.top;
        var cx = left + r.width / 2, cy = top + r.height / 2;
        covers.push({
            h: cx < size.x / 2 ? ['l', left + r.width] : ['r', size.x - left],
            v: cy < size.y / 2 ? ['t', top + r.height] : ['b', size.y - top]
        });
    });
    var best = null;
    for (var m = 0; m < (1 << covers.length); m++) {
        var pad = {l: 10, r: 10, t: 10, b: 10};
        covers.forEach(function(c, i) {
            var side = (m >> i) & 1 ? c.v : c.h;
            pad[side[0]] = Math.max(pad[side[0]], side[1] + 8);
        });
        if (pad.l + pad.r >= size.x - 40 || pad.t + pad.b >= size.y - 40) { continue; }
        var z = map.getBoundsZoom(bounds, false, L.point(pad.l + pad.r, pad.t + pad.b));
        if (!best || z > best.z) { best = {z: z, pad: pad}; }
    }
    return best || {z: -Infinity, pad: {l: 10, r: 10, t: 10, b: 10}};
}
function fitFree() {
    if (!bounds) { return; }
    var best = bestFit(), legend = document.querySelector('#rp-legend details');
    if (legend && legend.open) {  // folded, if the site then shows larger
        legend.open = false;
        var folded = bestFit();
        if (folded.z > best.z) { best = folded; } else { legend.open = true; }
    }
    map.fitBounds(bounds, {paddingTopLeft: [best.pad.l, best.pad.t],
                           paddingBottomRight: [best.pad.r, best.pad.b], animate: false});
}
fitFree();
var detailZoom = D.delta === null ? -Infinity : map.getZoom() + D.delta;

// --- text: ids of other layers are escaped HTML; decode them for textContent -------------
var ENT = {amp: '&', lt: '<', gt: '>', quot: '"', apos: "'"};
function decode(s) {
    return String(s).replace(/&(#x[0-9a-f]+|#[0-9]+|[a-z]+);/gi, function(all, e) {
        if (e[0] === '#') {
            var hex = e[1] === 'x' || e[1] === 'X';
            var n = hex ? parseInt(e.slice(2), 16) : parseInt(e.slice(1), 10);
            return isFinite(n) ? String.fromCodePoint(n) : all;
        }
        return ENT[e.toLowerCase()] !== undefined ? ENT[e.toLowerCase()] : all;
    });
}
function pct(v, digits) { return v === null ? '–' : (100 * v).toFixed(digits) + ' %'; }

// --- block areas ------------------------------------------------------------------------
var blockGroup = groups[D.blockGroup];
var blockPane = map.createPane('rpBlocks');
blockPane.style.zIndex = 350;  // under the circuits (overlay pane, 400)
var labelPane = map.createPane('rpLabels');
labelPane.style.zIndex = 650;
labelPane.style.pointerEvents = 'none';
var blockRenderer = L.svg({pane: 'rpBlocks'});
function tipOf(b) {
    return function() {
        var t = document.createElement('table'), rows = [
            ['Block (inverter)', b.id], ['Circuits', b.n.toLocaleString('en')],
            ['Failing', String(b.fail)], ['Utilisation, worst', pct(b.util, 0)],
            ['Voltage drop, total, worst', b.drop === null ? '–' : b.drop.toFixed(2) + ' %']];
        rows.forEach(function(r) {
            var tr = t.insertRow(), th = document.createElement('th');
            th.textContent = r[0]; tr.appendChild(th); tr.insertCell().textContent = r[1];
        });
        return t;
    };
}
var blockLayers = [];
if (blockGroup) {
    D.blocks.forEach(function(b) {
        var bad = b.fail > 0;
        var layer = L.geoJson({type: 'Feature', geometry: b.g, properties: {}}, {
            pane: 'rpBlocks', renderer: blockRenderer,
            style: {color: bad ? D.casing : '#616161', weight: bad ? 2 : 1,
                    dashArray: bad ? '5 4' : null, fillColor: b.fill,
                    fillOpacity: bad ? 0.75 : 0.55,
                    className: 'rp-block' + (bad ? ' rp-block-fail' : '')}
        });
        layer.bindTooltip(tipOf(b), {sticky: true, className: 'rp-tip'});
        layer.on('click', function() { zoomTo(layer); });
        layer.rpBlock = b;
        blockLayers.push(layer);
        blockGroup.addLayer(layer);
    });
}
function zoomTo(layer) {
    var z = Math.max(detailZoom, Math.min(map.getBoundsZoom(layer.getBounds()), map.getMaxZoom()));
    map.setView(layer.getBounds().getCenter(), z);
}

// --- level of detail ---------------------------------------------------------------------
var busy = false, pinned = {}, want = D.want;
map.on('overlayadd overlayremove', function(e) {
    if (busy) { return; }
    Object.keys(groups).forEach(function(k) {
        if (groups[k] === e.layer) {
            want[k] = e.type === 'overlayadd';
            pinned[k] = want[k];
        }
    });
    placeLabels();
});
function applyDetail() {
    if (D.delta === null) { return; }
    var detail = map.getZoom() >= detailZoom;
    busy = true;
    Object.keys(groups).forEach(function(k) {
        var g = groups[k];
        if (!g) { return; }
        var isDetail = D.detail.indexOf(k) >= 0, isBlock = k === D.blockGroup;
        if (!isDetail && !isBlock) { return; }
        var show = want[k] && (pinned[k] || (isDetail ? detail : !detail));
        if (show && !map.hasLayer(g)) { map.addLayer(g); }
        if (!show && map.hasLayer(g)) { map.removeLayer(g); }
    });
    if (blockGroup && map.hasLayer(blockGroup)) { blockGroup.bringToBack(); }
    busy = false;
}

// --- labels: block failing counts (buttons) and ids (text), no two boxes overlapping ----
var labelBox = L.DomUtil.create('div', 'rp-labels', labelPane);
var buttonPane = map.createPane('rpBlockLabels');
buttonPane.style.zIndex = 660;
var buttonBox = L.DomUtil.create('div', 'rp-labels', buttonPane);
var LABEL_ORDER = {inverter: 0, 'grid point': 1, combiner: 2};
function candidates() {
    var out = [], view = map.getBounds().pad(0.05);
    ['equipment', 'rows', 'ac', 'array', 'subarray'].forEach(function(k, rank) {
        var g = groups[k];
        if (!g || !map.hasLayer(g)) { return; }
        g.eachLayer(function(tile) {
            if (!tile.eachLayer) { return; }
            tile.eachLayer(function(l) {
                var p = l.feature && l.feature.properties;
                if (!p) { return; }
                var text = p.equipment || p.row || p.circuit;
                if (!text) { return; }
                var at = l.getLatLng ? l.getLatLng() : l._map ? l.getCenter() : null;
                if (!at) { return; }
                if (!view.contains(at)) { return; }
                var r = 4 + rank;
                if (k === 'equipment') {
                    r = LABEL_ORDER[p.kind] !== undefined ? LABEL_ORDER[p.kind] : 3;
                }
                out.push({text: decode(text), at: at, rank: r});
            });
        });
    });
    out.sort(function(a, b) { return a.rank - b.rank; });
    return out;
}
function overlaps(a, placed) {
    for (var i = 0; i < placed.length; i++) {
        var b = placed[i];
        if (a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h) {
            return true;
        }
    }
    return false;
}
function place(items, box, make, placed, cap) {
    var n = 0;
    for (var i = 0; i < items.length && n < cap; i++) {
        var it = items[i], p = map.latLngToLayerPoint(it.at);
        var w = 7 * it.text.length + 10, h = 18;
        var r = {x: p.x - w / 2, y: p.y - h - 4, w: w, h: h};
        if (overlaps(r, placed)) { continue; }
        placed.push(r);
        var el = make(it);
        L.DomUtil.setPosition(el, L.point(r.x, r.y));
        box.appendChild(el);
        n++;
    }
    return n;
}
function placeLabels() {
    rpMakeInView(map);  // the tiles now in view first
    labelBox.replaceChildren();
    buttonBox.replaceChildren();
    var placed = [];
    if (blockGroup && map.hasLayer(blockGroup)) {
        var bad = blockLayers.filter(function(l) { return l.rpBlock.fail > 0; });
        bad.sort(function(a, b) { return b.rpBlock.fail - a.rpBlock.fail; });
        var view = map.getBounds();
        var items = bad.filter(function(l) { return view.contains(L.latLng(l.rpBlock.at)); })
            .map(function(l) {
                return {text: String(l.rpBlock.fail), at: L.latLng(l.rpBlock.at), layer: l};
            });
        place(items, buttonBox, function(it) {
            var b = L.DomUtil.create('button', 'rp-block-label');
            b.type = 'button';
            b.textContent = it.text;
            b.setAttribute('aria-label', 'Block ' + it.layer.rpBlock.id + ': ' + it.text +
                           ' failing circuits; zoom to it');
            b.title = 'Block ' + it.layer.rpBlock.id;
            L.DomEvent.disableClickPropagation(b);
            L.DomEvent.on(b, 'click', function() { zoomTo(it.layer); });
            return b;
        }, placed, D.blockLabelCap);
    }
    if (map.getZoom() >= detailZoom) {
        place(candidates(), labelBox, function(it) {
            var d = L.DomUtil.create('div', 'rp-id-label');
            d.textContent = it.text;
            return d;
        }, placed, D.labelCap);
    }
    window.rpPlantView.labels = labelBox.childElementCount;
    window.rpPlantView.blockLabels = buttonBox.childElementCount;
}
window.rpPlantView = {
    detailZoom: detailZoom, blocks: blockLayers.length, labels: 0,
    // show a detail group now and keep it (e.g. to find a feature in it)
    showDetails: function(key) {
        pinned[key] = true; want[key] = true; applyDetail(); rpMakeAll(groups[key]);
    }
};
var style = document.createElement('style');
style.textContent = '.rp-labels{position:absolute;left:0;top:0}' +
    '.rp-id-label,.rp-block-label{position:absolute;white-space:nowrap;' +
    'font:11px/16px system-ui,sans-serif;padding:0 4px;border-radius:3px;color:#212121;' +
    'background:rgba(255,255,255,.85);border:1px solid #9e9e9e}' +
    '.rp-block-label{pointer-events:auto;cursor:pointer;font-weight:700;color:#000;' +
    'border-color:#000}' +
    '.rp-block-label:focus{outline:3px solid #0072B2;outline-offset:1px}' +
    '.leaflet-zoom-anim .rp-labels{display:none}';
document.head.appendChild(style);
map.on('zoomend', applyDetail);
map.on('zoomend moveend', placeLabels);
applyDetail();
placeLabels();
window.rpPlantView.ready = true;
"""
