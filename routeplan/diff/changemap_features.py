"""The drawn layers of the change map: changed circuits in both plans, changed trench segments,
moved, added and removed equipment, and the new plan as a faint background.

Every layer is a :class:`routeplan.map.features.Layer` (the plan map's GeoJSON by
column, its style table and tooltip fields), so the page draws it with the plan map's script
(:func:`routeplan.map.script.layer_script`). Every text property is escaped here with
:func:`routeplan.map.text.escape_text`; geometries go through the plan map's
:func:`routeplan.map.features.display_geometry` (light simplification, EPSG:4326,
6 decimals). Nothing here imports folium.

Colours
-------
The changed circuits of the new plan are coloured by their kind of change with the
Okabe–Ito categorical palette (M. Okabe, K. Ito, "Color Universal Design (CUD): how to make
figures and presentations that are friendly to colorblind people", 2008), whose eight colours
stay apart for the common colour-vision deficiencies. Vermillion marks a circuit that now
fails, as on the plan map, and such a line is drawn thicker too (a cue that survives greyscale
print). Yellow, the palette's palest colour, is the highlighter band under changed trench
segments, never a line colour. "other" (a change of none of the named kinds) is a neutral
dark grey outside the palette. The old plan's route of a changed circuit is a wide, dashed,
mid-grey line drawn *under* the new one: where the two coincide the grey dashes show on both
sides of the coloured line, where they part the dashed line runs alone.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routeplan.map.features import (
    EQUIPMENT_LABEL,
    EQUIPMENT_POLYGON_STYLE,
    EQUIPMENT_STYLE,
    KIND_LABEL,
    OTHER_EQUIPMENT_STYLE,
    ROW_LINE_STYLE,
    ROW_POLYGON_STYLE,
    Layer,
    _conductor,
    _escaped,
    _keyed_styles,
    _num,
    display_geometry,
    drawable_mask,
    make_layer,
    text_values,
)
from routeplan.map.text import MISSING, escape_all, fmt_number, join_limited

#: The kinds of change of a circuit (``look`` of the diff's circuits table), in legend order.
LOOKS: tuple[str, ...] = (
    "added",
    "removed",
    "longer",
    "shorter",
    "size up",
    "size down",
    "now failing",
    "now passing",
    "other",
)

#: Okabe–Ito palette (Okabe & Ito 2008): black, orange, sky blue, bluish green, yellow, blue,
#: vermillion, reddish purple.
OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky blue": "#56B4E9",
    "bluish green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish purple": "#CC79A7",
}

#: Line colour of a changed circuit in the new plan, by kind of change ("removed" has no new
#: line: its old one is drawn alone).
LOOK_COLOUR = {
    "added": OKABE_ITO["blue"],
    "longer": OKABE_ITO["orange"],
    "shorter": OKABE_ITO["sky blue"],
    "size up": OKABE_ITO["reddish purple"],
    "size down": OKABE_ITO["bluish green"],
    "now failing": OKABE_ITO["vermillion"],
    "now passing": OKABE_ITO["black"],
    "other": "#616161",
}
#: Weight of a new circuit line [px]; a circuit that now fails is drawn thicker.
NEW_WEIGHT = 3.0
FAILING_WEIGHT = 5.0
#: The old route of a changed circuit: wider than the new line, dashed, mid grey.
OLD_COLOUR = "#8C8C8C"
OLD_WEIGHT = 7.0
OLD_DASH = "8 6"
OLD_STYLE = {"color": OLD_COLOUR, "weight": OLD_WEIGHT, "opacity": 0.9, "dashArray": OLD_DASH,
             "lineCap": "butt"}  # fmt: skip

#: The band under a changed trench segment (highlighter); dashed when it is drawn from the old
#: plan (a segment that is no more).
SEGMENT_COLOUR = OKABE_ITO["yellow"]
SEGMENT_WEIGHT = 18
SEGMENT_STYLE = {"color": SEGMENT_COLOUR, "weight": SEGMENT_WEIGHT, "opacity": 0.8,
                 "lineCap": "butt"}  # fmt: skip
SEGMENT_OLD_STYLE = dict(SEGMENT_STYLE, dashArray="10 6")

#: Equipment moved by more than this [m] is shown as moved.
MOVED_ABOVE_M = 0.01
#: The arrow from an old position to a new one: black, its head a chevron of this length
#: (a quarter of the move, within these limits [m]) and half-angle [°].
ARROW_COLOUR = "#000000"
ARROW_WEIGHT = 2.5
ARROW_HEAD_M = (1.0, 6.0)
ARROW_HEAD_ANGLE_DEG = 28.0
#: An old position (or removed equipment): dashed grey outline, no fill to speak of.
OLD_EQUIPMENT_STYLE = {"color": "#616161", "weight": 2, "fillColor": "#FFFFFF",
                       "fillOpacity": 0.15, "dashArray": "3 3"}  # fmt: skip
#: Ring colour of equipment that is new in the new plan.
ADDED_RING = LOOK_COLOUR["added"]

#: The new plan as background: faint, takes no pointer events.
CONTEXT_SEGMENT_STYLE = {"color": "#BDBDBD", "weight": 4, "opacity": 0.9, "lineCap": "butt"}
CONTEXT_ROW_POLYGON_STYLE = dict(ROW_POLYGON_STYLE, fillOpacity=0.25, color="#9E9E9E")
CONTEXT_ROW_LINE_STYLE = dict(ROW_LINE_STYLE, opacity=0.4)
CONTEXT_EQUIPMENT_OPACITY = 0.45

#: Tooltip fields (property, label) of each layer.
CIRCUIT_FIELDS = (
    ("circuit", "Circuit"),
    ("plan", "Plan"),
    ("change", "Change"),
    ("summary", "What changed"),
    ("kind", "Kind"),
    ("between", "From → to"),
    ("conductor", "Conductor"),
    ("length", "Route / cable"),
    ("status", "Status"),
    ("same", "Same line"),
)
SEGMENT_FIELDS = (
    ("segment", "Trench segment"),
    ("plan", "Drawn from"),
    ("event", "Change"),
    ("trench", "Trench"),
    ("old_ids", "Segments, old"),
    ("new_ids", "Segments, new"),
    ("text", "What changed"),
)
EQUIPMENT_FIELDS = (
    ("equipment", "Equipment"),
    ("kind", "Kind"),
    ("change", "Change"),
    ("plan", "Plan"),
)
ARROW_FIELDS = (("moved", "Moved"), ("kind", "Kind"))

#: Plan labels shown in the tooltips.
OLD_PLAN = "old (dashed grey)"
NEW_PLAN = "new"


def look_key(look: object) -> str:
    """The kind of change a ``look`` value is drawn as: one of :data:`LOOKS` ("other" for
    anything else).

    Examples
    --------
    >>> look_key(" Size Up "), look_key("renamed"), look_key(None)
    ('size up', 'other', 'other')
    """
    key = str(look).strip().lower() if isinstance(look, str) else ""
    return key if key in LOOKS else "other"


def look_keys(values) -> np.ndarray:
    """:func:`look_key` of each value (once per distinct value), as an object array."""
    codes, uniques = pd.factorize(pd.Series(list(values), dtype=object), use_na_sentinel=False)
    keys = np.array([look_key(u) for u in uniques] + ["other"], dtype=object)
    return keys[codes] if len(codes) else np.zeros(0, dtype=object)


def look_class(key: str) -> str:
    """CSS class of the new lines of one kind of change (``rp-look-size-up``)."""
    return "rp-look-" + key.replace(" ", "-")


def ids_of(value: object) -> list[str]:
    """Segment ids of a ``old_ids``/``new_ids`` cell: a tuple or list of ids (a lone string is
    one id; None or NaN none).

    Examples
    --------
    >>> ids_of(("T1#1", "T1#2")), ids_of("T2#1"), ids_of(None), ids_of(float("nan"))
    (['T1#1', 'T1#2'], ['T2#1'], [], [])
    """
    if value is None or (isinstance(value, float) and np.isnan(value)):
        return []
    if isinstance(value, str):
        return [value] if value else []
    return [str(v) for v in value if v is not None and str(v) != ""]


def _positions(index: pd.Index, ids: Sequence[str]) -> np.ndarray:
    """Position in ``index`` (unique ids) of each of ``ids``; -1 where absent."""
    return index.get_indexer(pd.Index(list(ids), dtype=object))


def id_index(gdf: gpd.GeoDataFrame, column: str) -> pd.Index:
    """The ids of ``column`` as an index; a second row with the same id (and rows without a
    geometry) get an id no lookup matches, so each id finds its first drawable row."""
    ids = text_values(gdf, column).astype(object)
    bad = pd.Index(ids).duplicated() | ~drawable_mask(gdf)
    ids = ids.copy()
    ids[bad] = [f"\x00{i}" for i in np.flatnonzero(bad)]  # ids never hold NUL here
    return pd.Index(ids, dtype=object)


# ---------------------------------------------------------------------------------------------
# circuits


@dataclass
class CircuitDrawing:
    """The changed circuits as drawn: old routes, and the new ones by kind of change."""

    old: Layer
    new: dict[str, Layer]
    #: changed circuits found in neither plan's routes (not drawn)
    missing: list[str]

    @property
    def drawn(self) -> int:
        return len(self.old) + sum(len(v) for v in self.new.values())


def _circuit_props(rows: gpd.GeoDataFrame, table: pd.DataFrame, plan: str) -> dict:
    """Tooltip fields of ``rows`` (circuits of one plan) changed as ``table`` (same order)
    says."""
    route = fmt_number(_num(rows, "route_m"), 1, "m")
    cable = fmt_number(_num(rows, "cable_m"), 1, "m")
    kinds = [str(k).strip().lower() for k in text_values(rows, "kind").tolist()]
    frm = [v or MISSING for v in text_values(rows, "from_id").tolist()]
    to = [v or MISSING for v in text_values(rows, "to_id").tolist()]
    return _escaped(
        {
            "circuit": text_values(table, "circuit_id"),
            "plan": [plan] * len(rows),
            "change": text_values(table, "look"),
            "summary": text_values(table, "summary"),
            "kind": [KIND_LABEL.get(k, k) for k in kinds],
            "between": [f"{a} → {b}" for a, b in zip(frm, to, strict=True)],
            "conductor": _conductor(rows) if len(rows) else [],
            "length": [f"{a} / {b}" for a, b in zip(route, cable, strict=True)],
            "status": text_values(rows, "status"),
        }
    )


def same_line(geoms: np.ndarray, ids: Sequence[str]) -> list[str]:
    """For each drawn line, the changed circuits of its layer drawn along exactly the same
    line ("" when it is alone): they hide one another, so each tooltip names them all.

    Examples
    --------
    >>> a, b = shapely.LineString([(0, 0), (1, 0)]), shapely.LineString([(0, 1), (1, 1)])
    >>> same_line(np.array([a, b, a]), ["R1/S1", "R2/S1", "R1/S2"])
    ['2 circuits: R1/S1, R1/S2', '', '2 circuits: R1/S1, R1/S2']
    """
    n = len(geoms)
    if n == 0:
        return []
    codes = pd.factorize(pd.Series(shapely.to_wkb(geoms), dtype=object))[0]
    counts = np.bincount(codes)
    if counts.max() < 2:
        return [""] * n
    ids = np.asarray(list(ids), dtype=object)
    text = np.full(len(counts), "", dtype=object)
    order = np.argsort(codes, kind="stable")
    starts = np.r_[0, np.cumsum(counts)[:-1]]
    for code in np.flatnonzero(counts > 1).tolist():
        members = ids[order[starts[code] : starts[code] + counts[code]]].tolist()
        text[code] = f"{len(members):,} circuits: {join_limited(members)}"
    return text[codes].tolist()


def _line_layer(rows: gpd.GeoDataFrame, table: pd.DataFrame, plan: str, style: dict) -> Layer:
    """One layer of changed circuits: ``rows`` of a plan's routes changed as ``table`` says
    (same order), all drawn in ``style``."""
    geoms = display_geometry(rows)
    props = _circuit_props(rows, table, plan)
    props["same"] = np.asarray(
        escape_all(same_line(geoms, text_values(table, "circuit_id"))), dtype=object
    )
    n = len(rows)
    return make_layer(
        geoms, props, ([dict(style)] if n else [], np.zeros(n, dtype=np.int64)), CIRCUIT_FIELDS
    )


def circuit_layers(
    old: gpd.GeoDataFrame, new: gpd.GeoDataFrame, table: pd.DataFrame
) -> CircuitDrawing:
    """The changed circuits of ``table`` (columns ``circuit_id``, ``look``, ``summary``) in
    the old plan's routes ``old`` (all but "added") and the new plan's ``new`` (all but
    "removed"), both in the same CRS."""
    ids = text_values(table, "circuit_id")
    keys = look_keys(table["look"])
    at_old = _positions(id_index(old, "circuit_id"), ids)
    at_new = _positions(id_index(new, "circuit_id"), ids)
    use_old = (at_old >= 0) & (keys != "added")
    use_new = (at_new >= 0) & (keys != "removed")

    old_layer = _line_layer(old.iloc[at_old[use_old]], table[use_old], OLD_PLAN, OLD_STYLE)
    new_layers: dict[str, Layer] = {}
    for key in LOOKS:
        pick = use_new & (keys == key)
        if not pick.any():
            continue
        weight = FAILING_WEIGHT if key == "now failing" else NEW_WEIGHT
        style = {"color": LOOK_COLOUR[key], "weight": weight, "opacity": 1}
        new_layers[key] = _line_layer(new.iloc[at_new[pick]], table[pick], NEW_PLAN, style)
    missing = [str(i) for i in ids[~(use_old | use_new)]]
    return CircuitDrawing(old_layer, new_layers, missing)


# ---------------------------------------------------------------------------------------------
# trench segments


@dataclass
class SegmentDrawing:
    """Changed trench segments: those of the new plan, and those drawn from the old plan
    (events that name no new segment, such as a removed one)."""

    new: Layer
    old: Layer
    #: events none of whose segments has a geometry in either plan (not drawn)
    missing: int

    @property
    def drawn(self) -> int:
        return len(self.new) + len(self.old)


def segment_layers(
    old: gpd.GeoDataFrame, new: gpd.GeoDataFrame, events: pd.DataFrame
) -> SegmentDrawing:
    """The segments of each event of ``events`` (columns ``event``, ``trench_id``,
    ``old_ids``, ``new_ids``, ``text``): its new segments from ``new``, or, when it names
    none found there, its old ones from ``old``."""
    old_ids = [ids_of(v) for v in events["old_ids"].tolist()]
    new_ids = [ids_of(v) for v in events["new_ids"].tolist()]

    def flat(ids: list[list[str]], frame: gpd.GeoDataFrame) -> tuple[np.ndarray, np.ndarray]:
        """(event number, row position in ``frame`` or -1) of every id named."""
        counts = np.array([len(i) for i in ids], dtype=np.int64)
        event = np.repeat(np.arange(len(ids)), counts)
        names = [x for i in ids for x in i]
        return event, _positions(id_index(frame, "segment_id"), names)

    new_event, new_pos = flat(new_ids, new)
    old_event, old_pos = flat(old_ids, old)
    in_new = np.zeros(len(events), dtype=bool)
    in_new[new_event[new_pos >= 0]] = True
    in_old = np.zeros(len(events), dtype=bool)
    keep_old = (old_pos >= 0) & ~in_new[old_event]
    in_old[old_event[keep_old]] = True
    picks = {
        "new": (new_pos[new_pos >= 0], new_event[new_pos >= 0]),
        "old": (old_pos[keep_old], old_event[keep_old]),
    }
    missing = int((~(in_new | in_old)).sum())
    text = {
        "event": text_values(events, "event"),
        "trench": text_values(events, "trench_id"),
        "old_ids": np.array([join_limited(i) for i in old_ids] or [], dtype=object),
        "new_ids": np.array([join_limited(i) for i in new_ids] or [], dtype=object),
        "text": text_values(events, "text"),
    }
    layers = {}
    for plan, frame, style, label in (
        ("new", new, SEGMENT_STYLE, NEW_PLAN),
        ("old", old, SEGMENT_OLD_STYLE, "old (the segment is no more)"),
    ):
        pos, ev = picks[plan]
        rows = frame.iloc[pos]
        props = {k: np.asarray(v, dtype=object)[ev] for k, v in text.items()}
        props["segment"] = text_values(rows, "segment_id")
        props["plan"] = np.full(len(pos), label, dtype=object)
        layers[plan] = make_layer(
            display_geometry(rows),
            _escaped(props),
            ([dict(style)] if len(pos) else [], np.zeros(len(pos), dtype=np.int64)),
            SEGMENT_FIELDS,
        )
    return SegmentDrawing(layers["new"], layers["old"], missing)


# ---------------------------------------------------------------------------------------------
# equipment


@dataclass
class EquipmentDrawing:
    """Equipment that moved (both positions and an arrow), was added or removed; and the
    distances moved, by (kind, id), for the panel and for checks."""

    markers: Layer
    arrows: Layer
    moved_m: dict[tuple[str, str], float]
    added: list[tuple[str, str]]
    removed: list[tuple[str, str]]

    @property
    def drawn(self) -> int:
        return len(self.markers) + len(self.arrows)


def _keyed(eq: gpd.GeoDataFrame) -> pd.DataFrame:
    """Drawable equipment by (kind, id): first row of each key, its position (a point, or a
    polygon's centroid) in the frame's CRS."""
    ok = drawable_mask(eq)
    eq = eq[ok]
    kinds = [str(k).strip().lower() for k in text_values(eq, "kind").tolist()]
    frame = pd.DataFrame(
        {
            "kind": kinds,
            "id": text_values(eq, "id"),
            "pos": np.arange(len(eq)),
        }
    )
    centre = shapely.centroid(eq.geometry.to_numpy())
    frame["x"] = shapely.get_x(centre)
    frame["y"] = shapely.get_y(centre)
    frame = frame.drop_duplicates(["kind", "id"], keep="first")
    return frame.set_index(["kind", "id"])


def moved_text(eq_id: str, distance_m: float) -> str:
    """The arrow's tooltip text.

    Examples
    --------
    >>> moved_text("CB1", 20.0), moved_text("CB1", 0.034)
    ('CB1 moved 20.0 m', 'CB1 moved 0.03 m')
    """
    decimals = 1 if distance_m >= 0.1 else 2
    return f"{eq_id} moved {distance_m:.{decimals}f} m"


def arrow(x0: float, y0: float, x1: float, y1: float) -> shapely.MultiLineString:
    """An arrow from (x0, y0) to (x1, y1) in a metric CRS: the shaft and a chevron head at
    (x1, y1), ``ARROW_HEAD_M`` long (a quarter of the length, within those limits, never
    longer than the arrow) at ``ARROW_HEAD_ANGLE_DEG`` either side of the shaft."""
    dx, dy = x1 - x0, y1 - y0
    length = float(np.hypot(dx, dy))
    head = min(float(np.clip(0.25 * length, *ARROW_HEAD_M)), length)
    back = np.arctan2(-dy, -dx)
    a = np.radians(ARROW_HEAD_ANGLE_DEG)
    left = (x1 + head * np.cos(back + a), y1 + head * np.sin(back + a))
    right = (x1 + head * np.cos(back - a), y1 + head * np.sin(back - a))
    return shapely.MultiLineString([[(x0, y0), (x1, y1)], [left, (x1, y1), right]])


def _marker_style(kind: str, polygonal: bool, change: str) -> dict:
    if change in ("old", "removed"):
        style = dict(OLD_EQUIPMENT_STYLE)
        style["radius"] = EQUIPMENT_STYLE.get(kind, OTHER_EQUIPMENT_STYLE)["radius"]
        return style
    style = dict(
        EQUIPMENT_POLYGON_STYLE if polygonal else EQUIPMENT_STYLE.get(kind, OTHER_EQUIPMENT_STYLE)
    )
    if change == "added":
        style.update(color=ADDED_RING, weight=4)
    return style


def equipment_layers(
    old: gpd.GeoDataFrame, new: gpd.GeoDataFrame, crs
) -> tuple[EquipmentDrawing, np.ndarray]:
    """Equipment in both plans with the same (kind, id) that moved more than
    ``MOVED_ABOVE_M``, and equipment in one plan only. ``old`` and ``new`` are in ``crs``, a
    metric CRS (distances in metres).

    Returns
    -------
    EquipmentDrawing
    unchanged : numpy.ndarray of int
        Positions in ``new`` of the equipment that did not change (for the background).
    """
    a, b = _keyed(old), _keyed(new)
    both = a.index.intersection(b.index, sort=False)
    dist = np.hypot(b.loc[both, "x"] - a.loc[both, "x"], b.loc[both, "y"] - a.loc[both, "y"])
    moved = both[dist.to_numpy() > MOVED_ABOVE_M]
    added = b.index.difference(a.index, sort=False)
    removed = a.index.difference(b.index, sort=False)
    old_geoms = old[drawable_mask(old)].geometry.to_numpy()
    new_geoms = new[drawable_mask(new)].geometry.to_numpy()

    geoms, styles, props = [], [], {k: [] for k, _ in EQUIPMENT_FIELDS}
    moved_m = {}

    def add(geom, key, change_text, plan, style):
        geoms.append(geom)
        styles.append(style)
        props["equipment"].append(key[1])
        props["kind"].append(EQUIPMENT_LABEL.get(key[0], key[0]))
        props["change"].append(change_text)
        props["plan"].append(plan)

    arrow_geoms, arrow_props = [], {"moved": [], "kind": []}
    for key in moved:
        d = float(dist.loc[key])
        moved_m[key] = d
        g0 = old_geoms[a.loc[key, "pos"]]
        g1 = new_geoms[b.loc[key, "pos"]]
        poly0 = shapely.get_type_id(g0) in (3, 6)
        poly1 = shapely.get_type_id(g1) in (3, 6)
        text = moved_text(key[1], d).removeprefix(key[1]).strip()
        add(g0, key, text, "old position", _marker_style(key[0], poly0, "old"))
        add(g1, key, text, "new position", _marker_style(key[0], poly1, "new"))
        arrow_geoms.append(
            arrow(a.loc[key, "x"], a.loc[key, "y"], b.loc[key, "x"], b.loc[key, "y"])
        )
        arrow_props["moved"].append(moved_text(key[1], d))
        arrow_props["kind"].append(EQUIPMENT_LABEL.get(key[0], key[0]))
    for key in added:
        g = new_geoms[b.loc[key, "pos"]]
        add(
            g, key, "added", "new", _marker_style(key[0], shapely.get_type_id(g) in (3, 6), "added")
        )
    for key in removed:
        g = old_geoms[a.loc[key, "pos"]]
        add(g, key, "removed", "old", _marker_style(key[0], False, "removed"))

    frame = gpd.GeoDataFrame(geometry=list(geoms), crs=crs)
    arrows = gpd.GeoDataFrame(geometry=list(arrow_geoms), crs=crs)
    drawing = EquipmentDrawing(
        markers=make_layer(display_geometry(frame), _escaped(props), styles, EQUIPMENT_FIELDS),
        arrows=make_layer(
            display_geometry(arrows),
            _escaped(arrow_props),
            [{"color": ARROW_COLOUR, "weight": ARROW_WEIGHT, "opacity": 1}] * len(arrow_geoms),
            ARROW_FIELDS,
        ),
        moved_m=moved_m,
        added=list(added),
        removed=list(removed),
    )
    changed = set(moved) | set(added)
    keep = np.array([k not in changed for k in b.index], dtype=bool)
    unchanged = b["pos"].to_numpy()[keep] if len(b) else np.zeros(0, dtype=np.int64)
    # positions in the drawable part of ``new``: back to positions in ``new``
    return drawing, np.flatnonzero(drawable_mask(new))[unchanged]


# ---------------------------------------------------------------------------------------------
# background


def context_layers(
    rows: gpd.GeoDataFrame, segments: gpd.GeoDataFrame, equipment: gpd.GeoDataFrame
) -> dict[str, Layer]:
    """The new plan's module rows, trench segments and unchanged equipment, faint and without
    tooltips (keys ``rows``, ``segments``, ``equipment``)."""
    rows = rows[drawable_mask(rows)]
    polygonal = np.isin(shapely.get_type_id(rows.geometry.to_numpy()), (3, 6))
    row_styles = _keyed_styles(
        [polygonal],
        lambda p: dict(CONTEXT_ROW_POLYGON_STYLE) if p else dict(CONTEXT_ROW_LINE_STYLE),
    )
    segments = segments[drawable_mask(segments)]
    n_seg = len(segments)
    equipment = equipment[drawable_mask(equipment)]
    kinds = [str(k).strip().lower() for k in text_values(equipment, "kind").tolist()]
    types = shapely.get_type_id(equipment.geometry.to_numpy())

    def faint(kind: str, polygonal: bool) -> dict:
        base = (
            EQUIPMENT_POLYGON_STYLE
            if polygonal
            else EQUIPMENT_STYLE.get(kind, OTHER_EQUIPMENT_STYLE)
        )
        return dict(base, opacity=CONTEXT_EQUIPMENT_OPACITY, fillOpacity=CONTEXT_EQUIPMENT_OPACITY)

    eq_styles = _keyed_styles([np.asarray(kinds, dtype=object), np.isin(types, (3, 6))], faint)
    return {
        "rows": make_layer(display_geometry(rows), None, row_styles),
        "segments": make_layer(
            display_geometry(segments),
            None,
            ([dict(CONTEXT_SEGMENT_STYLE)] if n_seg else [], np.zeros(n_seg, dtype=np.int64)),
        ),
        "equipment": make_layer(display_geometry(equipment), None, eq_styles),
    }
