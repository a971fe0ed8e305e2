"""From the plan's GeoDataFrames to GeoJSON for the HTML map.

Each drawn layer becomes one GeoJSON FeatureCollection (:class:`Layer`) whose features carry

* their display fields, as text that is already escaped and formatted with units, and
* the index ``s`` of their Leaflet path style (colour, weight, dash, radius) in the layer's
  small table of distinct styles, precomputed here; the page's style function is a table
  look-up, so it needs neither per-feature JavaScript nor folium's per-feature style map.

Geometry is simplified lightly in the metric working CRS, reprojected to EPSG:4326 and rounded to
6 decimals (about 0.1 m), which keeps a 1 GW plant's map small. Nothing here imports folium.
"""

from __future__ import annotations

import json
from dataclasses import dataclass

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from routeplan.outputs.map_scales import (
    CASING_COLOUR,
    FILL,
    PROBLEM_COLOUR,
    UTILISATION,
    circuit_weight,
)
from routeplan.outputs.map_text import MISSING, escape_all, escape_text, fmt_number, join_limited

#: Tolerance of the light simplification, in the working CRS [m].
SIMPLIFY_M = 0.1
#: Decimals of longitude/latitude kept: 1e-6° is about 0.1 m.
COORD_DECIMALS = 6

#: Display name of each circuit kind.
KIND_LABEL = {"string": "string", "array": "array", "ac": "AC circuit"}
#: Display name of each equipment kind.
EQUIPMENT_LABEL = {"combiner": "combiner", "inverter": "inverter", "grid": "grid point"}

#: (property, label) of a circuit's tooltip, in order.
CIRCUIT_FIELDS = (
    ("circuit", "Circuit"),
    ("kind", "Kind"),
    ("between", "From → to"),
    ("conductor", "Conductor"),
    ("current", "Design current"),
    ("ampacity", "Ampacity (base × derating)"),
    ("utilisation", "Utilisation"),
    ("length", "Route / cable"),
    ("grouping", "Most circuits grouped"),
    ("vdrop", "Voltage drop"),
    ("vdrop_total", "Voltage drop, total"),
    ("loss", "Loss"),
    ("status", "Status"),
    ("note", "Note"),
)

#: (property, label) of an aggregated string feature (one per row and destination).
STRING_GROUP_FIELDS = (
    ("row", "Strings of row"),
    ("between", "From → to"),
    ("strings", "Strings"),
    ("conductor", "Conductor"),
    ("utilisation", "Utilisation, worst"),
    ("vdrop_total", "Voltage drop, total, worst"),
    ("cable", "Cable, sum"),
    ("loss", "Loss, sum"),
    ("failing", "Failing"),
)

#: (property, label) of a trench segment.
SEGMENT_FIELDS = (
    ("segment", "Trench segment"),
    ("trench", "Trench"),
    ("length", "Length"),
    ("circuits", "Circuits"),
    ("capacity", "Capacity"),
    ("fill", "Fill"),
    ("group_factor", "Grouping factor"),
    ("depth", "Depth"),
    ("laying", "Laying"),
    ("status", "Status"),
    ("circuit_ids", "Circuit ids"),
)

#: (property, label) of a module row.
ROW_FIELDS = (
    ("row", "Module row"),
    ("strings", "Strings"),
    ("module", "Module"),
    ("to", "To"),
    ("worst_drop", "Voltage drop, total, worst"),
)

#: (property, label) of an item of equipment.
EQUIPMENT_FIELDS = (
    ("equipment", "Equipment"),
    ("kind", "Kind"),
    ("incoming", "Circuits in"),
    ("outgoing", "Circuits out"),
)

#: Width of a trench segment's band [px] and of the halo of an over-capacity one.
SEGMENT_WEIGHT = 10
SEGMENT_HALO_WEIGHT = 20
#: Dash pattern of that halo [px]: in greyscale print it reads as hatching.
HALO_DASH = "8 5"
#: Extra width of the dashed black outline (casing) under a failing circuit [px].
CASING_EXTRA = 6
#: Dash pattern of that outline [px]. The failing line itself stays solid, so that the pointer
#: finds it along its whole length (the gaps of a dashed SVG stroke take no pointer events).
FAIL_DASH = "6 4"

ROW_POLYGON_STYLE = {"color": "#616161", "weight": 1, "fillColor": "#BDBDBD", "fillOpacity": 0.5}
ROW_LINE_STYLE = {"color": "#9E9E9E", "weight": 4, "opacity": 0.8}


def _marker(radius: float, stroke: str, weight: float, fill: str) -> dict:
    return {"radius": radius, "color": stroke, "weight": weight, "fillColor": fill,
            "fillOpacity": 1}  # fmt: skip


#: Circle markers of point equipment, by kind: combiners small and white, inverters large and
#: black, the grid point a thick black ring. Sizes and fills differ, so print needs no colour.
EQUIPMENT_STYLE = {
    "combiner": _marker(6, "#212121", 2, "#FFFFFF"),
    "inverter": _marker(9, "#FFFFFF", 2, "#212121"),
    "grid": _marker(9, "#000000", 4, "#FFFFFF"),
}
OTHER_EQUIPMENT_STYLE = _marker(6, "#616161", 2, "#E0E0E0")
#: An inverter pad (polygon).
EQUIPMENT_POLYGON_STYLE = {
    "color": "#000000",
    "weight": 2,
    "fillColor": "#212121",
    "fillOpacity": 0.85,
}


#: Property holding a feature's index in its layer's style table.
STYLE_KEY = "s"


@dataclass
class Layer:
    """One drawn layer: a FeatureCollection, its style table, the tooltip fields (property,
    label) of its features. Feature ``i`` is drawn with ``styles[properties["s"]]``."""

    features: dict
    styles: list[dict]
    fields: tuple[tuple[str, str], ...] = ()

    def __len__(self) -> int:
        return len(self.features["features"])

    def style_of(self, i: int) -> dict:
        """The style of feature ``i``."""
        return self.styles[self.features["features"][i]["properties"][STYLE_KEY]]


# ---------------------------------------------------------------------------------------------
# columns and geometry


def _column(df: pd.DataFrame, name: str, default=np.nan) -> pd.Series:
    if name in df.columns:
        return df[name]
    return pd.Series(default, index=df.index, dtype=object if isinstance(default, str) else None)


def _num(df: pd.DataFrame, name: str) -> np.ndarray:
    return pd.to_numeric(_column(df, name), errors="coerce").to_numpy(dtype=float)


def _text(df: pd.DataFrame, name: str) -> pd.Series:
    """A column as raw text: NaN/None → ""."""
    s = _column(df, name, "")
    return s.astype(object).where(s.notna(), "").astype(str)


def drawable(gdf: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """The rows of ``gdf`` that have a non-empty geometry."""
    geom = gdf.geometry
    return gdf[geom.notna().to_numpy() & ~geom.is_empty.to_numpy()]


def display_geometry(gdf: gpd.GeoDataFrame) -> np.ndarray:
    """Geometries of ``gdf`` as drawn: simplified lightly, in EPSG:4326, rounded to 6 decimals.

    Simplification (tolerance ``SIMPLIFY_M`` [m]) happens in the working CRS when it is
    projected; a geographic CRS is reprojected as is.
    """
    geoms = gdf.geometry
    if geoms.crs is None:
        raise ValueError("layer has no CRS")
    values = geoms.to_numpy()
    if geoms.crs.is_projected:
        values = shapely.simplify(values, SIMPLIFY_M, preserve_topology=True)
    values = gpd.GeoSeries(values, crs=geoms.crs).to_crs("EPSG:4326").to_numpy()
    return shapely.transform(values, lambda xy: np.round(xy, COORD_DECIMALS))


#: Text properties of a layer's features: property name -> one escaped string per feature.
Props = dict[str, list[str]]


def make_layer(geoms, props: Props | None, styles: list[dict], fields=()) -> Layer:
    """A :class:`Layer` from geometries, text properties and one style per feature.

    Equal styles share one entry of the layer's style table.
    """
    table: list[dict] = []
    seen: dict[tuple, int] = {}
    index = []
    for st in styles:
        key = tuple(sorted(st.items()))
        if key not in seen:
            seen[key] = len(table)
            table.append(st)
        index.append(seen[key])
    if props:
        names = list(props)
        rows = zip(*props.values(), strict=True)
        # empty values are left out: the tooltip skips missing fields
        records = [{k: v for k, v in zip(names, values, strict=True) if v} for values in rows]
    else:
        records = [{} for _ in styles]
    geometries = [json.loads(g) for g in shapely.to_geojson(np.asarray(geoms, dtype=object))]
    features = []
    for geom, rec, i in zip(geometries, records, index, strict=True):
        rec[STYLE_KEY] = i
        features.append({"type": "Feature", "geometry": geom, "properties": rec})
    return Layer({"type": "FeatureCollection", "features": features}, table, tuple(fields))


def _escaped(table: dict) -> Props:
    return {k: escape_all(v) for k, v in table.items()}


def _subset(geoms, props: Props, styles: list[dict], mask: np.ndarray, fields) -> Layer:
    idx = np.flatnonzero(mask)
    sub = {k: [v[i] for i in idx] for k, v in props.items()}
    return make_layer(geoms[idx], sub, [styles[i] for i in idx], fields)


# ---------------------------------------------------------------------------------------------
# circuits


def _conductor(df: pd.DataFrame) -> list[str]:
    size = _num(df, "size_mm2")
    par = _num(df, "parallel")
    mat = _text(df, "material").to_numpy()
    out = []
    for s, p, m in zip(size, par, mat, strict=True):
        if np.isnan(s):
            text = MISSING
        else:
            text = f"{s:g} mm²"
            if not np.isnan(p) and p > 1:
                text = f"{p:g} × {text}"
        out.append(f"{text} {m}".strip())
    return out


def _between(df: pd.DataFrame) -> list[str]:
    return [
        f"{a or MISSING} → {b or MISSING}"
        for a, b in zip(_text(df, "from_id"), _text(df, "to_id"), strict=True)
    ]


def is_fail(df: pd.DataFrame) -> np.ndarray:
    """True where a circuit's ``status`` is "fail" (any case)."""
    return _text(df, "status").str.strip().str.lower().eq("fail").to_numpy()


def circuit_kind(df: pd.DataFrame) -> np.ndarray:
    """The ``kind`` column in lower case without spaces: "string", "array" or "ac"."""
    return _text(df, "kind").str.strip().str.lower().to_numpy()


def circuit_props(df: pd.DataFrame) -> Props:
    """Escaped, formatted tooltip fields of individual circuits (``CIRCUIT_FIELDS``)."""
    amp = fmt_number(_num(df, "ampacity_a"), 1, "A")
    base = fmt_number(_num(df, "ampacity_base_a"), 1, "A")
    der = fmt_number(_num(df, "derating"), 2)
    ampacity = [
        a if b == MISSING else f"{a} ({b} × {d})" for a, b, d in zip(amp, base, der, strict=True)
    ]
    vd_v = fmt_number(_num(df, "vdrop_v"), 2, "V")
    vd_p = fmt_number(_num(df, "vdrop_pct"), 2, "%")
    route = fmt_number(_num(df, "route_m"), 1, "m")
    cable = fmt_number(_num(df, "cable_m"), 1, "m")
    group = _num(df, "group_max")
    kinds = circuit_kind(df)
    status = np.where(is_fail(df), "FAIL", _text(df, "status").to_numpy())
    table = {
        "circuit": _text(df, "circuit_id"),
        "kind": [KIND_LABEL.get(k, k) for k in kinds],
        "between": _between(df),
        "conductor": _conductor(df),
        "current": fmt_number(_num(df, "design_current_a"), 1, "A"),
        "ampacity": ampacity,
        "utilisation": fmt_number(_num(df, "utilisation"), 0, "%", scale=100),
        "length": [f"{r} / {c}" for r, c in zip(route, cable, strict=True)],
        "grouping": [MISSING if np.isnan(g) else f"{g:g} circuits" for g in group],
        "vdrop": [f"{v} ({p})" for v, p in zip(vd_v, vd_p, strict=True)],
        "vdrop_total": fmt_number(_num(df, "vdrop_total_pct"), 2, "%"),
        "loss": fmt_number(_num(df, "loss_w"), 1, "W"),
        "status": status,
        "note": _text(df, "note"),
    }
    return _escaped(table)


def line_styles(colours, weights, fail: np.ndarray) -> list[dict]:
    """Leaflet styles of circuit lines: the scale colour, or vermillion if failing."""
    styles = []
    for c, w, f in zip(colours, weights, fail, strict=True):
        w = round(float(w), 1)
        if f:
            styles.append({"color": PROBLEM_COLOUR, "weight": w, "opacity": 1})
        else:
            styles.append({"color": c, "weight": w, "opacity": 0.95})
    return styles


def casing_styles(weights) -> list[dict]:
    """Dashed black outline (casing) drawn under failing circuits."""
    return [
        {"color": CASING_COLOUR, "weight": round(float(w) + CASING_EXTRA, 1), "opacity": 1,
         "dashArray": FAIL_DASH, "lineCap": "butt"}
        for w in weights
    ]  # fmt: skip


@dataclass
class CircuitLayers:
    """The circuits of one kind: lines that pass, casings of failing ones, failing lines."""

    ok: Layer
    casing: Layer
    fail: Layer

    @property
    def drawn(self) -> int:
        """Number of interactive features (one per circuit, or per row if aggregated)."""
        return len(self.ok) + len(self.fail)


def _split_circuit_layers(geoms, props, styles, weights, fail, fields) -> CircuitLayers:
    return CircuitLayers(
        ok=_subset(geoms, props, styles, ~fail, fields),
        casing=make_layer(geoms[fail], None, casing_styles(weights[fail])),
        fail=_subset(geoms, props, styles, fail, fields),
    )


def circuit_layers(df: gpd.GeoDataFrame) -> CircuitLayers:
    """Layers of individual circuits, drawn in order of increasing utilisation."""
    df = drawable(df)
    util = _num(df, "utilisation")
    order = np.argsort(np.nan_to_num(util, nan=-1.0), kind="stable")
    df = df.iloc[order]
    util = util[order]
    geoms = display_geometry(df)
    weights = circuit_weight(_num(df, "size_mm2"), _num(df, "parallel"))
    fail = is_fail(df)
    styles = line_styles(UTILISATION.colours(util), weights, fail)
    return _split_circuit_layers(geoms, circuit_props(df), styles, weights, fail, CIRCUIT_FIELDS)


def aggregate_strings(strings: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """One feature per (row, destination) from string circuits, for very large plants.

    The row is the strings' ``from_id``, the destination their ``to_id``. The geometry is the
    longest string route of the group (it shows the whole way to the destination); the values
    are the group's worst utilisation and total voltage drop, its sums of cable and loss, its
    number of strings and of failing ones, and the line weight of its largest conductor.

    Returns
    -------
    geopandas.GeoDataFrame
        Columns ``from_id, to_id, n_strings, n_fail, utilisation, vdrop_total_pct, cable_m,
        loss_w, weight, conductor, failing`` and the geometry, in the CRS of ``strings``,
        sorted by ``from_id, to_id``.
    """
    df = drawable(strings)
    keys = ["from_id", "to_id"]
    work = pd.DataFrame(
        {
            "from_id": _text(df, "from_id").to_numpy(),
            "to_id": _text(df, "to_id").to_numpy(),
            "utilisation": _num(df, "utilisation"),
            "vdrop_total_pct": _num(df, "vdrop_total_pct"),
            "cable_m": _num(df, "cable_m"),
            "loss_w": _num(df, "loss_w"),
            "weight": circuit_weight(_num(df, "size_mm2"), _num(df, "parallel")),
            "fail": is_fail(df),
            "conductor": _conductor(df),
            "length": shapely.length(df.geometry.to_numpy()),
            "pos": np.arange(len(df)),
        }
    )
    grouped = work.groupby(keys, sort=True)
    out = grouped.agg(
        n_strings=("pos", "size"),
        n_fail=("fail", "sum"),
        utilisation=("utilisation", "max"),
        vdrop_total_pct=("vdrop_total_pct", "max"),
        cable_m=("cable_m", "sum"),
        loss_w=("loss_w", "sum"),
        weight=("weight", "max"),
    )
    for col in ("cable_m", "loss_w"):  # all missing -> missing, not 0
        out.loc[grouped[col].count() == 0, col] = np.nan
    out["pos"] = work.loc[grouped["length"].idxmax(), "pos"].to_numpy()
    conductors = work.drop_duplicates([*keys, "conductor"]).sort_values("conductor")
    conductors = conductors.groupby(keys, sort=False)["conductor"]
    out["conductor"] = conductors.first()
    many = conductors.size()
    for key in many.index[many.to_numpy() > 1]:  # rows with mixed conductors: rare
        out.loc[key, "conductor"] = ", ".join(conductors.get_group(key))
    bad = work[work["fail"]]
    ids = _text(df, "circuit_id").to_numpy()[bad["pos"]]
    notes = _text(df, "note").to_numpy()[bad["pos"]]
    texts = [f"{c}: {n}" if n else c for c, n in zip(ids, notes, strict=True)]
    failing = (
        bad.assign(text=texts)
        .groupby(keys)["text"]
        .agg(lambda s: join_limited(s, limit=3, sep="; "))
    )
    out["failing"] = failing.reindex(out.index).fillna("").to_numpy()
    out = out.reset_index()
    geometry = df.geometry.to_numpy()[out["pos"].to_numpy()]
    return gpd.GeoDataFrame(out.drop(columns="pos"), geometry=geometry, crs=strings.crs)


def string_group_layers(strings: gpd.GeoDataFrame) -> CircuitLayers:
    """Layers of strings aggregated per (row, destination); see :func:`aggregate_strings`."""
    agg = aggregate_strings(strings)
    util = agg["utilisation"].to_numpy(dtype=float)
    order = np.argsort(np.nan_to_num(util, nan=-1.0), kind="stable")
    agg = agg.iloc[order].reset_index(drop=True)
    util = util[order]
    fail = agg["n_fail"].to_numpy() > 0
    n = agg["n_strings"].to_numpy()
    nf = agg["n_fail"].to_numpy()
    table = {
        "row": agg["from_id"],
        "between": _between(agg),
        "strings": [f"{a} ({b} failing)" if b else f"{a}" for a, b in zip(n, nf, strict=True)],
        "conductor": agg["conductor"],
        "utilisation": fmt_number(util, 0, "%", scale=100),
        "vdrop_total": fmt_number(agg["vdrop_total_pct"], 2, "%"),
        "cable": fmt_number(agg["cable_m"], 0, "m"),
        "loss": fmt_number(agg["loss_w"], 1, "W"),
        "failing": agg["failing"],
    }
    props = _escaped(table)
    w = agg["weight"].to_numpy(dtype=float)
    geoms = display_geometry(agg)
    styles = line_styles(UTILISATION.colours(util), w, fail)
    return _split_circuit_layers(geoms, props, styles, w, fail, STRING_GROUP_FIELDS)


# ---------------------------------------------------------------------------------------------
# trench segments


def segment_values(df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, int]:
    """Scale position, over-capacity flag and reference count of trench segments.

    Where a capacity is set, the position is the fill (``fill``, or circuits ÷ ``max_circuits``
    when ``fill`` is missing). Where none is set, it is the number of circuits divided by the
    largest number of circuits in any segment (the reference count, returned for the legend),
    so such a segment is as dark as the busiest trench only if it carries as many circuits.
    A segment is over capacity when its ``status`` is "over" or its fill exceeds 1.

    Returns
    -------
    t : numpy.ndarray of float
        Position on the ``FILL`` scale (not clamped).
    over : numpy.ndarray of bool
    reference : int
        Circuits that map to the dark end where no capacity is set (0 if every segment has a
        capacity).
    """
    circuits = _num(df, "circuits")
    cap = _num(df, "max_circuits")
    fill = _num(df, "fill")
    has_cap = ~np.isnan(cap) & (cap > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        fill = np.where(np.isnan(fill) & has_cap, circuits / cap, fill)
    busiest = np.nanmax(circuits) if np.isfinite(circuits).any() else 0.0
    ref = int(busiest) if (~has_cap).any() and busiest > 0 else 0
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(has_cap, fill, circuits / ref if ref else np.nan)
    status_over = _text(df, "status").str.strip().str.lower().eq("over").to_numpy()
    over = status_over | (has_cap & (np.nan_to_num(fill, nan=0.0) > 1.0 + 1e-9))
    return t, over, ref


def segment_props(df: pd.DataFrame, t: np.ndarray, over: np.ndarray) -> Props:
    """Escaped, formatted tooltip fields of trench segments (``SEGMENT_FIELDS``)."""
    n = _num(df, "circuits")
    by_kind = zip(_num(df, "strings"), _num(df, "arrays"), _num(df, "ac"), strict=True)
    circuits = []
    for total, (s, a, c) in zip(n, by_kind, strict=True):
        head = MISSING if np.isnan(total) else f"{total:g}"
        parts = [f"{lab} {v:g}" for lab, v in (("strings", s), ("arrays", a), ("AC", c))
                 if not np.isnan(v)]  # fmt: skip
        if parts:
            head += " (" + ", ".join(parts) + ")"
        circuits.append(head)
    cap = _num(df, "max_circuits")
    has_cap = ~np.isnan(cap) & (cap > 0)
    capacity = [
        f"max {c:g} circuits" if h else "not set" for c, h in zip(cap, has_cap, strict=True)
    ]
    fill = fmt_number(np.where(has_cap, t, np.nan), 0, "%", scale=100)
    ids = [
        join_limited([i for i in s.split(";") if i.strip()], limit=8)
        for s in _text(df, "circuit_ids")
    ]
    status = np.where(over, "OVER CAPACITY", _text(df, "status").to_numpy())
    table = {
        "segment": _text(df, "segment_id"),
        "trench": _text(df, "trench_id"),
        "length": fmt_number(_num(df, "length_m"), 1, "m"),
        "circuits": circuits,
        "capacity": capacity,
        "fill": fill,
        "group_factor": fmt_number(_num(df, "group_factor"), 2),
        "depth": fmt_number(_num(df, "depth_m"), 2, "m"),
        "laying": _text(df, "laying"),
        "status": status,
        "circuit_ids": ids,
    }
    return _escaped(table)


@dataclass
class SegmentLayers:
    """Trench segments: passing ones, halos of over-capacity ones, over-capacity ones."""

    ok: Layer
    halo: Layer
    over: Layer
    reference: int

    @property
    def drawn(self) -> int:
        return len(self.ok) + len(self.over)


def segment_layers(df: gpd.GeoDataFrame) -> SegmentLayers:
    """Layers of trench segments coloured by fill, over-capacity ones on a vermillion halo."""
    df = drawable(df)
    t, over, ref = segment_values(df)
    order = np.argsort(np.nan_to_num(t, nan=-1.0), kind="stable")
    df, t, over = df.iloc[order], t[order], over[order]
    geoms = display_geometry(df)
    props = segment_props(df, t, over)
    styles = [
        {"color": c, "weight": SEGMENT_WEIGHT, "opacity": 0.55, "lineCap": "butt"}
        for c in FILL.colours(t)
    ]
    halo_styles = [
        {"color": PROBLEM_COLOUR, "weight": SEGMENT_HALO_WEIGHT, "opacity": 0.9,
         "dashArray": HALO_DASH, "lineCap": "butt"}
    ] * int(over.sum())  # fmt: skip
    return SegmentLayers(
        ok=_subset(geoms, props, styles, ~over, SEGMENT_FIELDS),
        halo=make_layer(geoms[over], None, halo_styles),
        over=_subset(geoms, props, styles, over, SEGMENT_FIELDS),
        reference=ref,
    )


# ---------------------------------------------------------------------------------------------
# rows and equipment


def row_layer(rows: gpd.GeoDataFrame, strings: pd.DataFrame) -> Layer:
    """Module rows; a row's tooltip shows its strings and the worst total drop of its strings."""
    rows = drawable(rows)
    ids = _text(rows, "id")
    worst = (
        pd.Series(_num(strings, "vdrop_total_pct"), index=_text(strings, "from_id").to_numpy())
        .groupby(level=0)
        .max()
    )
    routed = pd.Series(1, index=_text(strings, "from_id").to_numpy()).groupby(level=0).sum()
    n_routed = routed.reindex(ids.to_numpy()).to_numpy()
    declared = _column(rows, "strings", "")
    strings_text = []
    for d, r in zip(declared, n_routed, strict=True):
        d = escape_text(d) or MISSING
        strings_text.append(d if np.isnan(r) else f"{d} ({r:g} with a route)")
    table = {
        "row": ids,
        "strings": strings_text,
        "module": _text(rows, "module"),
        "to": _text(rows, "to"),
        "worst_drop": fmt_number(worst.reindex(ids.to_numpy()).to_numpy(), 2, "%"),
    }
    props = _escaped({k: v for k, v in table.items() if k != "strings"})
    props["strings"] = strings_text  # escaped above
    kinds = shapely.get_type_id(rows.geometry.to_numpy())
    polygonal = np.isin(kinds, (3, 6))
    styles = [dict(ROW_POLYGON_STYLE) if p else dict(ROW_LINE_STYLE) for p in polygonal]
    return make_layer(display_geometry(rows), props, styles, ROW_FIELDS)


def equipment_layer(equipment: gpd.GeoDataFrame, circuits: pd.DataFrame) -> Layer:
    """Combiners, inverters (point or pad) and the grid point, with their circuits in and out."""
    eq = drawable(equipment)
    ids = _text(eq, "id")
    kinds = _text(eq, "kind").str.strip().str.lower().to_numpy()
    to_ids = _text(circuits, "to_id")
    from_ids = _text(circuits, "from_id")
    incoming = to_ids.value_counts()
    mine = from_ids.isin(set(ids)).to_numpy()
    outgoing: dict[str, list[str]] = {}
    cids = _text(circuits, "circuit_id").to_numpy()[mine]
    for frm, cid in zip(from_ids.to_numpy()[mine], cids, strict=True):
        outgoing.setdefault(frm, []).append(cid)
    table = {
        "equipment": ids,
        "kind": [EQUIPMENT_LABEL.get(k, k) for k in kinds],
        "incoming": [f"{int(incoming.get(i, 0))}" for i in ids],
        "outgoing": [join_limited(outgoing.get(i, []), limit=4) or "0" for i in ids],
    }
    props = _escaped(table)
    types = shapely.get_type_id(eq.geometry.to_numpy())
    styles = []
    for k, ty in zip(kinds, types, strict=True):
        if ty in (3, 6):
            styles.append(dict(EQUIPMENT_POLYGON_STYLE))
        else:
            styles.append(dict(EQUIPMENT_STYLE.get(k, OTHER_EQUIPMENT_STYLE)))
    return make_layer(display_geometry(eq), props, styles, EQUIPMENT_FIELDS)
