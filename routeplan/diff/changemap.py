"""The change map of ``routeplan diff OLD NEW --map FILE``: one self-contained HTML page, no
network, that shows where two plans differ.

What it shows
-------------
* every changed circuit twice: its route in the old plan as a wide, dashed, grey line, and its
  route in the new plan on top, coloured by the kind of change (Okabe–Ito palette; see
  :mod:`routeplan.diff.changemap_features`): an added circuit has only the new line, a removed
  one only the old;
* changed trench segments as a yellow band under the lines (the new plan's segment; dashed
  when the segment exists only in the old plan);
* equipment that moved (same kind and id in both plans, moved more than 0.01 m) at both
  positions with an arrow whose tooltip gives the distance; added and removed equipment;
* the new plan's rows, trench segments and unchanged equipment as a faint background;
* a panel with the counts, the plant-level table and the safety caution; a legend.

It is the plan map's page (:mod:`routeplan.map.page`): the same inlined Leaflet and jQuery,
page script, layer control, scale bar and panel boxes, and every text escaped with
:func:`routeplan.map.text.escape_text`. Geometry is read from each folder's
``routes.gpkg``; the old plan is reprojected onto the new plan's CRS when they differ, and
distances are measured there (in a UTM zone estimated by geopandas when that CRS is not
projected).
"""

from __future__ import annotations

import json
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pyproj
import shapely

from routeplan.folder import reading
from routeplan.map.features import Layer, text_values
from routeplan.map.page import (
    CANVAS_ABOVE,
    ROUTES_FILE,
    ROWS_SHOWN_UP_TO,
    SUMMARY_FILE,
    MapError,
    group_var,
    page_parts,
    site_name_from_summary,
)
from routeplan.map.script import layer_script, script_json
from routeplan.network import paused_gc

from .changemap_features import (
    LOOKS,
    circuit_layers,
    context_layers,
    equipment_layers,
    ids_of,
    look_class,
    look_keys,
    segment_layers,
)
from .changemap_panel import ChangeCounts, count_values, panel_html
from .core import DiffError

__all__ = ["GROUPS", "render_change_map"]

#: Layer groups, bottom to top: (key, name in the layer control).
GROUPS = (
    ("cm_rows", "Rows (new plan)"),
    ("cm_trench", "Trenches (new plan)"),
    ("cm_equipment", "Equipment, unchanged"),
    ("cm_segments", "Changed trench segments"),
    ("cm_old", "Old routes (dashed grey)"),
    ("cm_new", "New routes, by change"),
    ("cm_moves", "Equipment changes"),
)
#: Margin around the changes in the first view [m].
VIEW_MARGIN_M = 20.0
#: Segment events of the diff, in the panel's order.
EVENTS = ("added", "removed", "changed", "split", "merged", "reshaped")


#: Columns read from each layer of ``routes.gpkg`` (those the layer has): the rest is never
#: shown, and reading a 1 GW plant's circuits takes a third of the time without it.
READ_COLUMNS = {
    "circuits": ("circuit_id", "kind", "from_id", "to_id", "material", "size_mm2", "parallel",
                 "route_m", "cable_m", "status"),
    "segments": ("segment_id", "trench_id"),
    "rows": ("id",),
    "equipment": ("id", "kind"),
}  # fmt: skip


def _read(folder: Path, layers: tuple[str, ...]) -> tuple[dict[str, gpd.GeoDataFrame], str]:
    """The ``layers`` of a folder's ``routes.gpkg`` (the columns of ``READ_COLUMNS``) and
    the site name from its ``summary.json``, the folder held steady meanwhile."""
    gpkg, summary = folder / ROUTES_FILE, folder / SUMMARY_FILE
    for p in (gpkg, summary):
        if not p.is_file():
            raise DiffError(f"{p}: not found (is {folder} an output folder of 'routeplan plan'?)")
    with reading(folder):
        try:
            site = site_name_from_summary(json.loads(summary.read_text(encoding="utf-8")))
        except (OSError, ValueError) as exc:
            raise DiffError(f"{summary}: {exc}") from None
        except MapError:
            raise DiffError(f"{summary}: no site.name") from None
        frames = {}
        for layer in layers:
            try:
                fields = set(pyogrio.read_info(gpkg, layer=layer)["fields"])
                columns = [c for c in READ_COLUMNS[layer] if c in fields]
                frames[layer] = gpd.read_file(gpkg, layer=layer, columns=columns)
            except Exception as exc:  # pyogrio raises several kinds for a missing layer
                raise DiffError(f"{gpkg}: cannot read layer {layer!r}: {exc}") from None
    return frames, site


def _check(frames: dict[str, gpd.GeoDataFrame], folder: Path) -> None:
    for layer, column in (
        ("circuits", "circuit_id"),
        ("segments", "segment_id"),
        ("equipment", "id"),
        ("equipment", "kind"),
    ):
        if column not in frames[layer].columns:
            raise DiffError(f"{folder / 'routes.gpkg'}: layer {layer}: no column {column}")
    for layer, gdf in frames.items():
        if gdf.crs is None and len(gdf):
            raise DiffError(f"{folder / 'routes.gpkg'}: layer {layer}: no CRS")


def _working_crs(new: dict[str, gpd.GeoDataFrame], old: dict[str, gpd.GeoDataFrame]):
    """The new plan's CRS (the old plan's when the new one is empty); a UTM zone estimated
    by geopandas when it is not projected, so that distances are in metres."""
    crs = next((f.crs for f in (*new.values(), *old.values()) if f.crs is not None), None)
    if crs is None:
        return None
    crs = pyproj.CRS(crs)
    if crs.is_projected:
        return crs
    every = [f for f in (*new.values(), *old.values()) if len(f) and f.crs is not None]
    return every[0].estimate_utm_crs() if every else crs


def _in(frames: dict[str, gpd.GeoDataFrame], crs) -> dict[str, gpd.GeoDataFrame]:
    out = {}
    for name, gdf in frames.items():
        if gdf.crs is None:  # an empty layer
            gdf = gdf.set_crs(crs, allow_override=True)
        elif not pyproj.CRS(gdf.crs).equals(crs):
            gdf = gdf.to_crs(crs)
        out[name] = gdf
    return out


def _view(geoms: list[np.ndarray], crs) -> list[list[float]] | None:
    """The lon/lat box [[south, west], [north, east]] of ``geoms`` (in ``crs``, metric) with
    ``VIEW_MARGIN_M`` around them."""
    parts = [g for g in geoms if len(g)]
    if not parts:
        return None
    g = np.concatenate(parts)
    g = g[~shapely.is_missing(g) & ~shapely.is_empty(g)]
    if not len(g):
        return None
    x0, y0, x1, y1 = shapely.total_bounds(g)
    m = VIEW_MARGIN_M
    to_geo = pyproj.Transformer.from_crs(crs, "EPSG:4326", always_xy=True)
    w, s, e, n = to_geo.transform_bounds(x0 - m, y0 - m, x1 + m, y1 + m, densify_pts=21)
    if not np.isfinite([w, s, e, n]).all():
        return None
    return [[s, w], [n, e]]


def view_script(bounds: list[list[float]] | None) -> str:
    """Script that fits the first view to ``bounds`` in the part of the map the boxes leave
    free (summary at the top left, layer list and legend on the right); on a screen too narrow
    for that, in the whole map. It runs before the layers are added, so they are drawn once."""
    if bounds is None:
        return ""
    return (
        "(function() {\n"
        "    var map = window[document.querySelector('.folium-map').id];\n"
        "    var c = map.getContainer().getBoundingClientRect();\n"
        "    var panel = document.getElementById('rp-panel');\n"
        "    var right = 20;\n"
        "    [document.getElementById('rp-legend'),\n"
        "     document.querySelector('.leaflet-control-layers')].forEach(function(e) {\n"
        "        if (!e) { return; }\n"
        "        right = Math.max(right, c.right - e.getBoundingClientRect().left + 10);\n"
        "    });\n"
        "    var left = panel ? panel.getBoundingClientRect().right - c.left + 10 : 20;\n"
        "    if (c.width - left - right < 240) { left = 20; right = 20; }\n"
        "    map.options.zoomSnap = 0.25;  // the changes fill the free part\n"
        f"    map.fitBounds({script_json(bounds)}, {{paddingTopLeft: [left, 20],\n"
        "                  paddingBottomRight: [right, 20], animate: false});\n"
        "})();"
    )


def _scripts(key: str, layers: list[tuple[str, Layer, str, bool]], *, lazy: bool = False):
    """The layer scripts of group ``key``: (name suffix, layer, CSS classes, interactive)."""
    out = []
    for suffix, layer, css, interactive in layers:
        if len(layer):
            out.append(
                layer_script(
                    f"rp_{key}_{suffix}",
                    group_var(key),
                    layer,
                    class_name=css,
                    interactive=interactive,
                    lazy=lazy,
                )
            )
    return out


def _text_column(df: pd.DataFrame, name: str, where: str) -> None:
    if name not in df.columns:
        raise DiffError(f"change map: the {where} table has no column {name}")


@paused_gc()
def render_change_map(
    old_dir: Path,
    new_dir: Path,
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    plant: pd.DataFrame,
) -> str:
    """The change map's HTML (one self-contained page, no network).

    Parameters
    ----------
    old_dir, new_dir : pathlib.Path
        Output folders of ``routeplan plan`` (``routes.gpkg`` and ``summary.json`` are read;
        each is held steady while it is read, :func:`routeplan.folder.reading`).
    circuits : pandas.DataFrame
        One row per changed circuit: ``circuit_id``, ``kind``, ``look`` (added, removed,
        longer, shorter, size up, size down, now failing, now passing, other; anything else is
        drawn as "other"), ``summary`` (one line, the tooltip's "What changed").
    segments : pandas.DataFrame
        One row per changed trench-segment event: ``event``, ``trench_id``, ``old_ids`` and
        ``new_ids`` (tuples of segment ids in each plan), ``text`` (one line).
    plant : pandas.DataFrame
        The plant-level block: ``item``, ``unit``, ``old``, ``new``, ``delta`` (floats, NaN
        where absent), shown as a table in the panel.

    Returns
    -------
    str
        The HTML page. Its only requests are for ``data:`` URIs.

    Raises
    ------
    DiffError
        A folder, its ``routes.gpkg``, ``summary.json``, a layer, a column or a CRS is missing
        or unreadable, or a table lacks a column (one line naming it).
    """
    old_dir, new_dir = Path(old_dir), Path(new_dir)
    for name in ("circuit_id", "look", "summary"):
        _text_column(circuits, name, "circuits")
    for name in ("event", "trench_id", "old_ids", "new_ids", "text"):
        _text_column(segments, name, "segments")
    old, old_site = _read(old_dir, ("circuits", "segments", "equipment"))
    new, new_site = _read(new_dir, ("circuits", "segments", "rows", "equipment"))
    _check(old, old_dir)
    _check(new, new_dir)
    crs = _working_crs(new, old)
    if crs is None:
        raise DiffError(f"{new_dir / 'routes.gpkg'}: no layer has a CRS")
    old, new = _in(old, crs), _in(new, crs)

    lines = circuit_layers(old["circuits"], new["circuits"], circuits)
    bands = segment_layers(old["segments"], new["segments"], segments)
    equipment, unchanged = equipment_layers(old["equipment"], new["equipment"], crs)
    background = context_layers(new["rows"], new["segments"], new["equipment"].iloc[unchanged])

    drawn = lines.drawn + bands.drawn + equipment.drawn + sum(len(v) for v in background.values())
    show_rows = len(background["rows"]) <= ROWS_SHOWN_UP_TO
    scripts = {
        "cm_rows": _scripts(
            "cm_rows", [("ok", background["rows"], "rp-context", False)], lazy=not show_rows
        ),
        "cm_trench": _scripts("cm_trench", [("ok", background["segments"], "rp-context", False)]),
        "cm_equipment": _scripts(
            "cm_equipment", [("ok", background["equipment"], "rp-context", False)]
        ),
        "cm_segments": _scripts(
            "cm_segments",
            [
                ("old", bands.old, "rp-cm-segment rp-cm-segment-old", True),
                ("new", bands.new, "rp-cm-segment rp-cm-segment-new", True),
            ],
        ),
        "cm_old": _scripts("cm_old", [("ok", lines.old, "rp-cm-circuit rp-cm-old", True)]),
        "cm_new": _scripts(
            "cm_new",
            [
                (look.replace(" ", "_"), layer, f"rp-cm-circuit rp-cm-new {look_class(look)}", True)
                for look, layer in lines.new.items()
            ],
        ),
        "cm_moves": _scripts(
            "cm_moves",
            [
                ("markers", equipment.markers, "rp-cm-equipment", True),
                ("arrows", equipment.arrows, "rp-cm-arrow", True),
            ],
        ),
    }
    groups = [(key, name, key != "cm_rows" or show_rows) for key, name in GROUPS if scripts[key]]

    changed = [
        old["circuits"].geometry.to_numpy()[_present(old["circuits"], circuits, "added")],
        new["circuits"].geometry.to_numpy()[_present(new["circuits"], circuits, "removed")],
        *_segment_geoms(old, new, segments),
        *_equipment_geoms(old, new, equipment),
    ]
    bounds = _view(changed, crs)
    if bounds is None:  # nothing changed that has a place: the whole new plan
        bounds = _view([f.geometry.to_numpy() for f in new.values()], crs)

    notes = []
    if lines.missing:
        notes.append(
            f"{len(lines.missing):,} changed circuits have no route in either routes.gpkg "
            "(not drawn)"
        )
    if bands.missing:
        notes.append(
            f"{bands.missing:,} segment changes name no segment found in either routes.gpkg "
            "(not drawn)"
        )
    if not show_rows:
        notes.append(f"{len(background['rows']):,} module rows: switch them on in the layer list")
    counts = ChangeCounts(
        looks=count_values(circuits["look"].tolist(), LOOKS),
        events=count_values(segments["event"].tolist(), EVENTS),
        moved=len(equipment.moved_m),
        added=len(equipment.added),
        removed=len(equipment.removed),
        notes=notes,
    )
    panel = panel_html(
        old_site=old_site,
        new_site=new_site,
        old_dir=str(old_dir),
        new_dir=str(new_dir),
        counts=counts,
        plant=plant,
        crs_name=pyproj.CRS(crs).to_string(),
    )
    spec = {
        "title": f"{new_site} – changes",
        "basemap": False,
        "canvas": drawn > CANVAS_ABOVE,
        "bounds": bounds,
        "groups": groups,
    }
    head, middle, *rest = page_parts(spec)  # rest: the page after the layers (empty slots)
    body = [view_script(bounds), *(s for key, _ in GROUPS for s in scripts[key])]
    return "".join([head, panel, middle, "\n".join(body), *rest])


def _present(frame: gpd.GeoDataFrame, circuits: pd.DataFrame, other: str) -> np.ndarray:
    """Rows of ``frame`` that are changed circuits, other than those whose look is
    ``other`` (added ones have no old route, removed ones no new route)."""
    keys = look_keys(circuits["look"])
    ids = set(text_values(circuits, "circuit_id")[keys != other].tolist())
    return pd.Index(text_values(frame, "circuit_id")).isin(ids)


def _segment_geoms(old, new, segments: pd.DataFrame) -> list[np.ndarray]:
    out = []
    for frame, column in ((new["segments"], "new_ids"), (old["segments"], "old_ids")):
        ids = {i for v in segments[column].tolist() for i in ids_of(v)}
        mask = pd.Index(text_values(frame, "segment_id")).isin(ids)
        out.append(frame.geometry.to_numpy()[mask])
    return out


def _equipment_geoms(old, new, drawing) -> list[np.ndarray]:
    keys = set(drawing.moved_m) | set(drawing.added) | set(drawing.removed)
    out = []
    for frame in (old["equipment"], new["equipment"]):
        kinds = [str(k).strip().lower() for k in text_values(frame, "kind").tolist()]
        pairs = list(zip(kinds, text_values(frame, "id").tolist(), strict=True))
        mask = np.array([p in keys for p in pairs], dtype=bool)
        out.append(frame.geometry.to_numpy()[mask] if len(mask) else np.zeros(0, dtype=object))
    return out
