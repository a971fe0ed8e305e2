"""The map of a placement search (``placement.html``): one self-contained page, no network.

``routeplan place`` writes it beside ``placement.csv`` in the plan folder. It shows

* the trench network near the search (the trenches within the view of the candidates and the
  block), the block's module rows and equipment (its inverter, combiners and grid point, at
  their current positions; :data:`routeplan.map.features.EQUIPMENT_STYLE`);
* every candidate position of ``placement.csv`` as a circle (CSS class ``rp-cand``), filled by
  its objective on :data:`OBJECTIVE` (viridis, lighter = smaller = better) over the range of
  the feasible candidates' objectives, with a legend in the objective's unit;
* candidates that do not meet every limit hollow, with a dashed grey outline (``rp-infeasible``),
  whatever their objective; the reason (failing circuits of the block, new failures, trench
  segments or inverter inputs over a limit, or why the position could not be routed) on hover
  and in the details;
* the best position (rank 1) in a thick black ring labelled "best", the current position in a
  dashed ring labelled "current"; where circles overlap, better ranks are drawn on top
  (:func:`draw_order`);
* a details box that a click on a candidate fills with its row of ``placement.csv``, each value
  exactly as the CSV file holds it (the page is made from the written file; a text cell less
  the ``'`` that guards it against formulas);
* the safety caution (:data:`routeplan.CAUTION`), always visible.

Leaflet is inlined (:func:`routeplan.map.assets.offline_header`). Data from users' files (ids,
the site's name, the currency) reaches the page only as escaped HTML
(:func:`routeplan.map.text.escape_text`) in the panel, and as JSON inside a
``<script type="application/json">`` element (made safe by
:func:`routeplan.map.script.script_json`) that the page script shows with ``textContent`` only.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pyproj
import shapely

import routeplan
from routeplan.map.features import EQUIPMENT_POLYGON_STYLE, EQUIPMENT_STYLE, ROW_LINE_STYLE
from routeplan.map.scales import OBJECTIVE
from routeplan.map.script import script_json
from routeplan.map.text import MISSING, escape_text
from routeplan.outputs.schedules import csv_unguard

__all__ = ["PLACEMENT_MAP", "placement_map_html", "write_placement_map"]

#: The file name in the plan folder.
PLACEMENT_MAP = "placement.html"

#: The trenches drawn are those within this share of the candidates' and the block's extent
#: around them; the view opens on the candidates with the same share around them.
MARGIN = 0.25

#: The view opens on the candidates, at least this far around them [m].
VIEW_PAD_M = 10.0

#: Candidate circles [px]: radius, the rings of the best and the current position.
CANDIDATE_RADIUS = 7
RING_RADIUS = 12

#: Styles of the drawn things (Leaflet path options).
STYLES = {
    "trench": {"color": "#757575", "weight": 4, "opacity": 0.9},
    "row": dict(ROW_LINE_STYLE, weight=3),
    "feasible": {"radius": CANDIDATE_RADIUS, "color": "#212121", "weight": 1, "fillOpacity": 1},
    "infeasible": {
        "radius": CANDIDATE_RADIUS,
        "color": "#616161",
        "weight": 2,
        "dashArray": "3 3",
        "fillColor": "#FFFFFF",
        "fillOpacity": 1,
    },
    "best": {"radius": RING_RADIUS, "color": "#000000", "weight": 4, "fill": False},
    "current": {
        "radius": RING_RADIUS + 4,
        "color": "#000000",
        "weight": 2,
        "dashArray": "2 4",
        "fill": False,
    },
    "equipment": EQUIPMENT_STYLE,
    "pad": EQUIPMENT_POLYGON_STYLE,
}

_CSS = """
html,body{margin:0;height:100%}
#rp-map{position:absolute;inset:0;background:#fafafa}
.rp-box{position:absolute;z-index:1001;max-width:330px;overflow:auto;
 background:rgba(255,255,255,.96);border:1px solid #757575;border-radius:4px;padding:4px 9px;
 font:12px/1.35 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;color:#212121}
#rp-panel{left:54px;top:10px;max-height:calc(100vh - 60px)}
#rp-legend{left:10px;bottom:10px}
#rp-details{right:10px;top:10px;width:340px;max-height:calc(100vh - 200px);background:#fff}
#rp-details[hidden]{display:none}
#rp-details h2{font-size:13px;margin:2px 24px 4px 0;overflow-wrap:anywhere}
#rp-close{position:absolute;right:4px;top:2px;border:1px solid #9e9e9e;background:#fff;
 border-radius:3px;padding:0 6px;font:inherit;cursor:pointer}
.rp-box table{border-collapse:collapse;margin:2px 0 4px}
.rp-box th{text-align:left;font-weight:500;padding:1px 8px 1px 0;vertical-align:top;color:#424242}
.rp-box td{padding:1px 0;vertical-align:top;overflow-wrap:anywhere}
.rp-site{font-size:14px;font-weight:700;margin:0 0 2px}
.rp-caution{margin:6px 0 2px;padding:4px 6px;border-left:4px solid #212121;background:#eeeeee}
.rp-bar{height:12px;border:1px solid #616161;margin:2px 0 0}
.rp-ticks{display:flex;justify-content:space-between;font-size:11px;color:#424242}
.rp-key{display:flex;align-items:center;gap:6px;margin:2px 0}
.rp-note{font-size:11px;color:#424242;margin:1px 0 4px}
.rp-why{margin:2px 0 6px;padding:3px 6px;border-left:4px solid #616161;background:#f5f5f5}
.leaflet-tooltip.rp-tip{padding:3px 6px;width:max-content;max-width:320px;white-space:normal}
"""

#: The page script: draws the layers from the JSON data and fills the details box. Every
#: data text is shown with textContent (never as HTML).
_SCRIPT = r"""
(function() {
var d = JSON.parse(document.getElementById('rp-place-data').textContent);
var S = d.styles;
var map = L.map('rp-map', {zoomSnap: 0.25, maxZoom: 24});
window.rpPlaceMap = map;
L.control.scale({imperial: false, maxWidth: 150, position: 'bottomright'}).addTo(map);
// beside the panel and legend (left) and the details box (right)
map.fitBounds(d.bounds, {paddingTopLeft: [400, 20], paddingBottomRight: [370, 20]});
function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined) { e.textContent = text; }
    if (cls) { e.className = cls; }
    return e;
}
function opts(style, cls, interactive) {
    var o = {className: cls, interactive: interactive};
    for (var k in style) { o[k] = style[k]; }
    return o;
}
function tip(layer, text) {
    layer.bindTooltip(el('span', text), {sticky: true, className: 'rp-tip'});
}
d.rows.forEach(function(r) {
    L.polyline(r.c, opts(S.row, 'rp-row', false)).addTo(map);
});
d.trenches.forEach(function(t) {
    var l = L.polyline(t.c, opts(S.trench, 'rp-trench', true)).addTo(map);
    tip(l, 'trench ' + t.id);
});
d.equipment.forEach(function(q) {
    var l = q.p ? L.polygon(q.p, opts(S.pad, 'rp-equipment', true))
                : L.circleMarker(q.c, opts(S.equipment[q.kind], 'rp-equipment', true));
    l.addTo(map);
    tip(l, q.label + ' ' + q.id + (q.moved ? ' (current position)' : ''));
});
var body = document.getElementById('rp-details-body');
var box = document.getElementById('rp-details');
document.getElementById('rp-close').addEventListener('click', function() { box.hidden = true; });
function show(i) {
    var c = d.candidates, row = c.rows[i];
    while (body.firstChild) { body.removeChild(body.firstChild); }
    body.appendChild(el('h2', 'Candidate ' + row[c.col.candidate] + ' (rank ' +
                        row[c.col.rank] + ')'));
    if (c.why[i]) { body.appendChild(el('div', 'Not feasible: ' + c.why[i], 'rp-why')); }
    var table = el('table');
    table.id = 'rp-details-table';
    for (var j = 0; j < c.columns.length; j++) {
        var tr = el('tr');
        var th = el('th', c.columns[j]);
        var td = el('td', row[j] === '' ? d.missing : row[j]);
        td.setAttribute('data-column', c.columns[j]);
        tr.appendChild(th);
        tr.appendChild(td);
        table.appendChild(tr);
    }
    body.appendChild(table);
    box.hidden = false;
    box.setAttribute('data-candidate', row[c.col.candidate]);
}
var c = d.candidates;
window.rpCandidates = new Array(c.rows.length);
for (var k = 0; k < c.order.length; k++) {
    var i = c.order[k];
    var ok = c.feasible[i];
    var st = ok ? S.feasible : S.infeasible;
    var o = opts(st, 'rp-cand ' + (ok ? 'rp-feasible' : 'rp-infeasible') +
                 (i === c.best ? ' rp-best' : '') + (i === c.current ? ' rp-current' : ''), true);
    if (ok) { o.fillColor = c.colour[i]; }
    var m = L.circleMarker(c.ll[i], o).addTo(map);
    var row = c.rows[i];
    var text = 'candidate ' + row[c.col.candidate] + ' · rank ' + row[c.col.rank] + ' · ' +
               (ok ? 'objective ' + row[c.col.objective] + ' ' + row[c.col.objective_unit]
                   : 'not feasible: ' + c.why[i]);
    tip(m, text);
    m.on('click', (function(k) { return function() { show(k); }; })(i));
    window.rpCandidates[i] = m;
}
function ring(i, style, cls, label, dir) {
    if (i === null || i === undefined) { return; }
    var r = L.circleMarker(c.ll[i], opts(style, cls, false)).addTo(map);
    r.bindTooltip(label, {permanent: true, direction: dir, offset: [dir === 'right' ? 14 : -14, 0],
                          className: 'rp-tip ' + cls + '-label', interactive: false});
    r.bringToBack();
}
ring(c.best, S.best, 'rp-best-ring', 'best', 'right');
ring(c.current, S.current, 'rp-current-ring', 'current', 'left');
})();
"""


def _read_csv(path: Path) -> tuple[list[str], list[list[str]]]:
    """Header and rows of ``placement.csv``, each cell the text the file holds, less the guard
    against formulas (:func:`routeplan.outputs.schedules.csv_unguard`): the value itself."""
    with path.open(encoding="utf-8", newline="") as f:
        rows = [[csv_unguard(c) for c in r] for r in csv.reader(f)]
    if not rows:
        raise ValueError(f"{path.name}: empty")
    return rows[0], rows[1:]


def _numbers(header: list[str], rows: list[list[str]], name: str) -> np.ndarray:
    """Column ``name`` as floats (an empty cell or no such column: NaN)."""
    if name not in header:
        return np.full(len(rows), np.nan)
    j = header.index(name)
    return pd.to_numeric(pd.Series([r[j] for r in rows], dtype=object), errors="coerce").to_numpy(
        dtype=float
    )


def _texts(header: list[str], rows: list[list[str]], name: str) -> list[str]:
    j = header.index(name) if name in header else None
    return ["" if j is None else r[j] for r in rows]


def _count(value: float, one: str, many: str) -> str:
    n = int(value)
    return f"{n} {one if n == 1 else many}"


def reasons(header: list[str], rows: list[list[str]], block: str) -> list[str]:
    """Why each candidate is not feasible ("" for a feasible one), from its ``placement.csv``
    cells and those of the current position (candidate 0): failing circuits of the block, new
    failures, more trench segments or inverter inputs over a limit than at the current
    position, or the note of a position that could not be routed.

    Examples
    --------
    >>> h = ["candidate", "feasible", "failing_in_block", "new_failures", "segments_over",
    ...      "inputs_over", "note"]
    >>> rows = [["0", "True", "0", "0", "1", "0", "current position"],
    ...         ["1", "False", "2", "1", "3", "0", ""],
    ...         ["2", "False", "", "", "", "", "not routable here: no path"]]
    >>> reasons(h, rows, "INV1")
    ['', '2 circuits of block INV1 fail; 1 circuit fails that passes at the current position; 3 trench segments over a limit (current position: 1)', 'not routable here: no path']
    """  # noqa: E501
    feasible = [t == "True" for t in _texts(header, rows, "feasible")]
    cand = _numbers(header, rows, "candidate")
    in_block = _numbers(header, rows, "failing_in_block")
    new = _numbers(header, rows, "new_failures")
    seg = _numbers(header, rows, "segments_over")
    inp = _numbers(header, rows, "inputs_over")
    notes = _texts(header, rows, "note")
    at = np.flatnonzero(cand == 0)
    seg0 = seg[at[0]] if at.size else 0.0
    inp0 = inp[at[0]] if at.size else 0.0
    out = []
    for i in range(len(rows)):
        if feasible[i]:
            out.append("")
            continue
        parts = []
        if in_block[i] > 0:
            parts.append(
                _count(in_block[i], "circuit", "circuits")
                + f" of block {block} {'fails' if in_block[i] == 1 else 'fail'}"
            )
        if new[i] > 0:
            parts.append(
                _count(new[i], "circuit fails that passes", "circuits fail that pass")
                + " at the current position"
            )
        if seg[i] > seg0:
            parts.append(
                _count(seg[i], "trench segment", "trench segments")
                + f" over a limit (current position: {int(seg0)})"
            )
        if inp[i] > inp0:
            parts.append(
                _count(inp[i], "inverter input", "inverter inputs")
                + f" over a limit (current position: {int(inp0)})"
            )
        if notes[i] and notes[i] != "current position":
            parts.append(notes[i])
        out.append("; ".join(parts) or "does not meet every limit")
    return out


def objective_colours(
    objective: np.ndarray, feasible: np.ndarray
) -> tuple[list[str], float, float]:
    """Fill colours of the candidates on :data:`OBJECTIVE`, over the range [lo, hi] of the
    feasible candidates' objectives (lo → t = 0, the lightest; one value only: all at 0).
    Returns the colours (infeasible ones: the scale's NaN colour; they are drawn hollow) and
    ``lo``, ``hi`` (NaN when no candidate is feasible).

    Examples
    --------
    >>> objective_colours(np.array([10.0, 20.0, 15.0, 5.0]), np.array([1, 1, 1, 0], bool))
    (['#fde725', '#440154', '#21908c', '#9e9e9e'], 10.0, 20.0)
    """
    ok = feasible & np.isfinite(objective)
    if not ok.any():
        return [OBJECTIVE.colour(math.nan)] * len(objective), math.nan, math.nan
    lo, hi = float(objective[ok].min()), float(objective[ok].max())
    t = (objective - lo) / (hi - lo) if hi > lo else np.zeros_like(objective)
    t = np.where(ok, t, np.nan)
    return OBJECTIVE.colours(t).tolist(), lo, hi


def draw_order(rank: np.ndarray, feasible: np.ndarray) -> np.ndarray:
    """The order the candidates are drawn in (later on top, where circles overlap): the
    infeasible ones first, then the feasible ones from the worst rank to the best, so that the
    best position is never hidden.

    Examples
    --------
    >>> draw_order(np.array([3.0, 1.0, 4.0, 2.0]), np.array([True, True, False, True])).tolist()
    [2, 0, 3, 1]
    """
    return np.lexsort((-rank, feasible))


def _block(plan, kind: str, feature_id: str) -> str:
    """The block (inverter id) of the placed feature, from the delivered plan's circuits."""
    if kind == "inverter":
        return feature_id
    c = plan.circuits if plan is not None else None
    if c is None or "inverter_id" not in c.columns:
        return ""
    own = c.loc[c["from_id"].astype(str) == feature_id, "inverter_id"]
    return str(own.iloc[0]) if len(own) else ""


def _block_ids(plan, block: str, kind: str, feature_id: str) -> set[str]:
    """Ids of the rows and equipment of ``block``: the ends of its circuits in the plan."""
    ids = {feature_id, block}
    if plan is None:
        return ids
    c = plan.circuits
    mine = c["inverter_id"].astype(str) == block
    ids |= set(c.loc[mine, "from_id"].astype(str)) | set(c.loc[mine, "to_id"].astype(str))
    return ids


def _latlng(coords: np.ndarray, to_geo: pyproj.Transformer | None) -> list[list[float]]:
    """[[lat, lon], …] of projected ``coords`` (n, 2), rounded to 1e-7° (about 1 cm)."""
    x, y = coords[:, 0], coords[:, 1]
    if to_geo is not None:
        x, y = to_geo.transform(x, y)
    return np.round(np.column_stack([y, x]), 7).tolist()


def _lines(geoms: np.ndarray, ids: list[str], to_geo) -> list[dict]:
    parts, owner = shapely.get_parts(geoms, return_index=True)
    out = []
    for p, o in zip(parts, owner, strict=True):
        if p.geom_type == "Polygon":
            p = p.exterior
        out.append({"id": ids[o], "c": _latlng(shapely.get_coordinates(p), to_geo)})
    return out


_LABELS = {"inverter": "inverter", "combiner": "combiner", "grid": "grid point"}


def _equipment(site, ids: set[str], kind: str, feature_id: str, to_geo):
    """The equipment of ``ids`` to draw (points and pads, lat/lon) and their coordinates."""
    out: list[dict] = []
    coords = [np.zeros((0, 2))]
    for name, frame in (("inverter", site.inverters), ("combiner", site.combiners),
                        ("grid", site.grid)):  # fmt: skip
        if not len(frame):
            continue
        fid = frame["id"].astype(str).to_numpy()
        mine = np.isin(fid, list(ids))
        for g, i in zip(frame.geometry.to_numpy()[mine], fid[mine], strict=True):
            item = {"id": i, "kind": name, "label": _LABELS[name],
                    "moved": bool(name == kind and i == feature_id)}  # fmt: skip
            if g.geom_type == "Point":
                item["c"] = _latlng(shapely.get_coordinates(g), to_geo)[0]
            else:
                ring = shapely.get_coordinates(shapely.get_exterior_ring(g))
                item["p"] = _latlng(ring, to_geo)
            out.append(item)
            coords.append(shapely.get_coordinates(g))
    return out, coords


def placement_map_html(
    csv_path: Path | str,
    site,
    kind: str,
    feature_id: str,
    plan=None,
    *,
    radius_m: float | None = None,
    step_m: float | None = None,
) -> str:
    """The page of a placement search (see the module docstring).

    Parameters
    ----------
    csv_path : path
        The written ``placement.csv`` (values are shown as it holds them).
    site : layers.Site
        The site as read (equipment at the current positions), in its metric working CRS.
    kind : {'inverter', 'combiner'}
        What was placed, and ``feature_id`` its id.
    plan : routeplan.pipeline.Plan, optional
        The delivered (best) plan: its circuits tell the block's rows and equipment. Without
        it, only the placed feature and its inverter are drawn.
    radius_m, step_m : float, optional
        The search's radius and step [m], for the panel.
    """
    header, rows = _read_csv(Path(csv_path))
    crs = site.crs
    to_geo = None
    if crs is not None and not pyproj.CRS(crs).equals("EPSG:4326"):
        to_geo = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    block = _block(plan, kind, feature_id)
    ids = _block_ids(plan, block, kind, feature_id)

    xy = np.column_stack([_numbers(header, rows, "x"), _numbers(header, rows, "y")])
    feasible = np.array([t == "True" for t in _texts(header, rows, "feasible")], dtype=bool)
    objective = _numbers(header, rows, "objective")
    colours, lo, hi = objective_colours(objective, feasible)
    rank = _numbers(header, rows, "rank")
    cand = _numbers(header, rows, "candidate")
    best = int(np.flatnonzero(rank == 1)[0]) if (rank == 1).any() else None
    current = int(np.flatnonzero(cand == 0)[0]) if (cand == 0).any() else None

    # the block's equipment and rows
    equipment, boxes = _equipment(site, ids, kind, feature_id, to_geo)
    boxes.append(xy[np.isfinite(xy).all(axis=1)])
    row_ids = site.rows["id"].astype(str).to_numpy()
    mine = np.isin(row_ids, list(ids))
    row_geoms = site.rows.geometry.to_numpy()[mine]
    rows_drawn = _lines(row_geoms, row_ids[mine].tolist(), to_geo)
    boxes.append(shapely.get_coordinates(row_geoms))
    pts = np.vstack(boxes)
    if not len(pts):
        pts = np.zeros((1, 2))
    x0, y0 = pts.min(axis=0)
    x1, y1 = pts.max(axis=0)
    pad = MARGIN * max(x1 - x0, y1 - y0, 20.0)
    view = shapely.box(x0 - pad, y0 - pad, x1 + pad, y1 + pad)
    t = site.trenches
    near = shapely.intersects(t.geometry.to_numpy(), view)
    trenches = _lines(
        shapely.intersection(t.geometry.to_numpy()[near], view),
        t["id"].astype(str).to_numpy()[near].tolist(),
        to_geo,
    )
    # the view opens on the candidates (the block is drawn around them, for zooming out)
    c = xy[np.isfinite(xy).all(axis=1)]
    c = c if len(c) else pts
    (cx0, cy0), (cx1, cy1) = c.min(axis=0), c.max(axis=0)
    cpad = max(MARGIN * max(cx1 - cx0, cy1 - cy0), VIEW_PAD_M)
    corners = _latlng(np.array([[cx0 - cpad, cy0 - cpad], [cx1 + cpad, cy1 + cpad]]), to_geo)

    unit = _texts(header, rows, "objective_unit")
    unit = next((u for u in unit if u), "")
    data = {
        "styles": STYLES,
        "missing": MISSING,
        "bounds": corners,
        "trenches": trenches,
        "rows": rows_drawn,
        "equipment": equipment,
        "candidates": {
            "columns": header,
            "col": {name: j for j, name in enumerate(header)},
            "rows": rows,
            "ll": _latlng(np.nan_to_num(xy), to_geo),
            "feasible": feasible.tolist(),
            "colour": colours,
            "why": reasons(header, rows, block),
            "best": best,
            "current": current,
            "order": draw_order(rank, feasible).tolist(),
        },
    }
    panel = _panel_html(
        site.name,
        kind,
        feature_id,
        header,
        rows,
        best,
        feasible,
        unit,
        radius_m=radius_m,
        step_m=step_m,
    )
    legend = _legend_html(lo, hi, unit, _objective_name(header, rows, unit))
    title = escape_text(f"Placement of {kind} {feature_id} — {site.name}")
    from routeplan.map.assets import offline_header

    return "\n".join(
        [
            "<!DOCTYPE html>",
            '<html lang="en"><head><meta charset="utf-8">',
            '<meta name="viewport" content="width=device-width, initial-scale=1">',
            f"<title>{title}</title>",
            offline_header(),
            f"<style>{_CSS}</style>",
            "</head><body>",
            '<div id="rp-map"></div>',
            panel,
            legend,
            '<div class="rp-box" id="rp-details" role="region" aria-label="Details" hidden>'
            '<button type="button" id="rp-close" aria-label="Close the details">×</button>'
            '<div id="rp-details-body" aria-live="polite"></div></div>',
            f'<script type="application/json" id="rp-place-data">{script_json(data)}</script>',
            f"<script>{_SCRIPT}</script>",
            "</body></html>",
        ]
    )


def _objective_name(header: list[str], rows: list[list[str]], unit: str) -> str:
    """What the objective is (:func:`routeplan.placement.objective`)."""
    if unit == "kg":
        return "conductor mass"
    if any(_texts(header, rows, "capitalised_loss")):
        return "conductor cost + capitalised losses"
    return "conductor cost"


def _panel_html(
    site_name, kind, feature_id, header, rows, best, feasible, unit, *, radius_m, step_m
) -> str:
    where = ""
    if radius_m is not None and step_m is not None:
        where = f" within {radius_m:g} m, every {step_m:g} m along the trenches"
    lines = [
        f'<div class="rp-site">{escape_text(site_name)}</div>',
        f"<div>Placement of {escape_text(kind)} <b>{escape_text(feature_id)}</b></div>",
        f'<div class="rp-note">{len(rows):,} candidate positions{where}; '
        f"{int(feasible.sum()):,} meet every limit.</div>",
    ]
    if best is not None:
        cell = dict(zip(header, rows[best], strict=True))
        lines.append(
            '<table id="rp-best">'
            f"<tr><th>Best</th><td>candidate {escape_text(cell.get('candidate', ''))}"
            f"{' (current position)' if cell.get('candidate') == '0' else ''}</td></tr>"
            f"<tr><th>Objective</th><td>{escape_text(cell.get('objective') or MISSING)} "
            f"{escape_text(unit)}</td></tr>"
            f"<tr><th>Against current</th><td>{escape_text(cell.get('delta_objective') or MISSING)}"
            f" {escape_text(unit)}</td></tr>"
            f"<tr><th>Trench</th><td>{escape_text(cell.get('trench_id') or MISSING)}</td></tr>"
            "</table>"
        )
    lines.append(
        '<div class="rp-note">A local search along the trenches: terrain, access, civil works '
        "and their cost are not considered. Click a candidate for its values.</div>"
    )
    caution = escape_text(routeplan.CAUTION)
    lines.append(f'<div class="rp-caution" role="note"><b>Caution.</b> {caution}</div>')
    return f'<div class="rp-box" id="rp-panel">{"".join(lines)}</div>'


def _circle_svg(style: dict, fill: str | None = None) -> str:
    dash = f' stroke-dasharray="{style["dashArray"]}"' if "dashArray" in style else ""
    f = fill or (style.get("fillColor", "none") if style.get("fill", True) else "none")
    return (
        '<svg width="30" height="30" aria-hidden="true">'
        f'<circle cx="15" cy="15" r="{min(style["radius"], 13)}" stroke="{style["color"]}" '
        f'stroke-width="{style["weight"]}" fill="{f}"{dash}/></svg>'
    )


def _legend_html(lo: float, hi: float, unit: str, name: str) -> str:
    u = escape_text(unit)
    if math.isfinite(lo):
        ticks = f'<div class="rp-ticks"><span>{lo:,.2f} {u}</span><span>{hi:,.2f} {u}</span></div>'
        bar = f'<div class="rp-bar" style="background:{OBJECTIVE.css_gradient()}"></div>'
    else:
        ticks, bar = '<div class="rp-note">No candidate meets every limit.</div>', ""
    keys = [
        (_circle_svg(STYLES["feasible"], OBJECTIVE.stops[0]), "candidate, by objective"),
        (_circle_svg(STYLES["infeasible"]), "not feasible (hover or click: why)"),
        (_circle_svg(STYLES["best"]), "best position (rank 1)"),
        (_circle_svg(STYLES["current"]), "current position"),
        (_circle_svg(EQUIPMENT_STYLE["inverter"]), "inverter"),
        (_circle_svg(EQUIPMENT_STYLE["combiner"]), "combiner"),
        (_circle_svg(EQUIPMENT_STYLE["grid"]), "grid point"),
    ]
    return (
        '<div class="rp-box" id="rp-legend"><b>Objective</b>: '
        f"{escape_text(name)} [{u}], lower is better"
        f"{bar}{ticks}"
        f'<div class="rp-note">{escape_text(OBJECTIVE.name)}, over the feasible candidates</div>'
        + "".join(f'<div class="rp-key">{s}<span>{t}</span></div>' for s, t in keys)
        + "</div>"
    )


def write_placement_map(
    folder: Path | str,
    site,
    kind: str,
    feature_id: str,
    plan=None,
    *,
    radius_m: float | None = None,
    step_m: float | None = None,
) -> list[str]:
    """Write ``placement.html`` into ``folder`` from the ``placement.csv`` written there;
    returns the file name (for the folder's commit)."""
    folder = Path(folder)
    html = placement_map_html(
        folder / "placement.csv", site, kind, feature_id, plan, radius_m=radius_m, step_m=step_m
    )
    (folder / PLACEMENT_MAP).write_text(html, encoding="utf-8")
    return [PLACEMENT_MAP]
