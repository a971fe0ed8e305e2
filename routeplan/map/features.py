"""From the plan's GeoDataFrames to GeoJSON for the HTML map.

Each drawn layer becomes one GeoJSON FeatureCollection (:class:`Layer`) whose features carry

* their display fields, as text that is already escaped and formatted with units, and
* the index ``s`` of their Leaflet path style (colour, weight, dash, radius) in the layer's
  small table of distinct styles, precomputed here; the page's style function is a table
  look-up, so it needs neither per-feature JavaScript nor folium's per-feature style map.

The page carries each layer by column (:func:`columns_text`), not as GeoJSON text: the
geometry type once, the coordinates of each feature, each property as one list (or, where it
saves room, a list of its distinct values and each feature's index into it) and the style
indices. The page's ``rpFeatures`` rebuilds the FeatureCollection in the browser
(:func:`expand` does the same in Python). Property names are written once per layer instead
of once per feature: a 1 GW plant's map is about a third of the size of the GeoJSON.

Geometry is simplified lightly in the metric working CRS, reprojected to EPSG:4326 and rounded to
6 decimals (about 0.1 m), which keeps a 1 GW plant's map small. Nothing here imports folium.
"""

from __future__ import annotations

import contextlib
import contextvars
import json
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from functools import cached_property

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from numpy.dtypes import StringDType

from routeplan.map.scales import (
    CASING_COLOUR,
    FILL,
    PROBLEM_COLOUR,
    UTILISATION,
    circuit_weight,
)
from routeplan.map.text import (
    MISSING,
    escape_all,
    escape_text,
    fmt_number,
    ints_json,
    join_limited,
)

#: Tolerance of the light simplification, in the working CRS [m].
SIMPLIFY_M = 0.1
#: Decimals of longitude/latitude kept: 1e-6° is about 0.1 m.
COORD_DECIMALS = 6

#: Display name of each circuit kind.
KIND_LABEL = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC circuit"}
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
    ("length", "Route / run metres (cable length)"),
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
    ("cable", "Run metres, sum"),
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
#: Key of a style whose colour the page looks up by a count (``rpCounted``,
#: :func:`count_colours`) instead of holding it.
COUNT_KEY = "count"


@dataclass(eq=False)
class Layer:
    """One drawn layer: a FeatureCollection, its style table, the tooltip fields (property,
    label) of its features. Feature ``i`` is drawn with ``styles[properties["s"]]``.

    ``text`` is the layer by column as compact JSON (what the page embeds, before the
    escaping for ``<script>``; see :func:`columns_text`); :attr:`features` is the
    FeatureCollection it stands for, for inspection.
    """

    text: str
    styles: list[dict]
    fields: tuple[tuple[str, str], ...] = ()
    style_index: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    #: [west, south, east, north] of the features in EPSG:4326 (None when empty)
    bounds: tuple[float, float, float, float] | None = None

    def __len__(self) -> int:
        return len(self.style_index)

    @cached_property
    def features(self) -> dict:
        """The FeatureCollection as a dict."""
        return expand(json.loads(self.text))

    def style_of(self, i: int) -> dict:
        """The style of feature ``i``."""
        return self.styles[int(self.style_index[i])]


#: A style per feature, as a table of distinct styles and each feature's index into it.
StyleTable = tuple[list[dict], np.ndarray]


# ---------------------------------------------------------------------------------------------
# columns and geometry


def _column(df: pd.DataFrame, name: str, default=np.nan) -> pd.Series:
    if name in df.columns:
        return df[name]
    return pd.Series(default, index=df.index, dtype=object if isinstance(default, str) else None)


def _num(df: pd.DataFrame, name: str) -> np.ndarray:
    return pd.to_numeric(_column(df, name), errors="coerce").to_numpy(dtype=float)


#: the frames whose columns are converted once while a map is drawn (:func:`shared_columns`):
#: per frame (by id, the frame kept to hold its id), its converted columns by key
_SHARED: contextvars.ContextVar[dict[int, tuple[pd.DataFrame, dict]] | None] = (
    contextvars.ContextVar("routeplan_map_shared_columns", default=None)
)


@contextlib.contextmanager
def shared_columns(*frames: pd.DataFrame) -> Iterator[None]:
    """Within this context, a column of ``frames`` is converted to text (:func:`_text`) or
    normalised (:func:`circuit_kind`, :func:`is_fail`) once, however many parts of the map
    ask for it; the results are read-only (a part that wants to change one makes a copy)."""
    token = _SHARED.set({id(f): (f, {}) for f in frames})
    try:
        yield
    finally:
        _SHARED.reset(token)


def _shared(df: pd.DataFrame, key: tuple, make):
    """``make()``, kept for ``df`` under ``key`` within :func:`shared_columns`."""
    frames = _SHARED.get()
    entry = frames.get(id(df)) if frames is not None else None
    if entry is None or entry[0] is not df:
        return make()
    kept = entry[1]
    if key not in kept:
        value = make()
        array = value.to_numpy() if isinstance(value, pd.Series) else value
        if isinstance(array, np.ndarray):
            array.flags.writeable = False
        kept[key] = value
    return kept[key]


def _text(df: pd.DataFrame, name: str) -> pd.Series:
    """A column as raw text: NaN/None → ""."""
    return _shared(df, ("text", name), lambda: _as_text(_column(df, name, "")))


def _as_text(s: pd.Series) -> pd.Series:
    return s.astype(object).where(s.notna(), "").astype(str)


def text_values(df: pd.DataFrame, name: str) -> np.ndarray:
    """A column as raw text (NaN/None → ""), as an object array (``""`` if it is absent)."""
    return _text(df, name).to_numpy()


def _codes(values) -> np.ndarray:
    """Integer codes of equal values (floats bit for bit, so -0.0 is not 0.0; NaN is a value)."""
    a = np.asarray(values)
    if a.dtype.kind == "f":
        bits = np.ascontiguousarray(a, dtype=np.float64).view(np.int64)
        return np.unique(bits, return_inverse=True)[1].reshape(-1)
    codes = pd.factorize(a, use_na_sentinel=False)[0]
    if a.dtype == object:  # 1, 1.0 and True are equal keys but different values
        types = pd.factorize(np.array([type(v).__name__ for v in a.tolist()], dtype=object))[0]
        codes = pd.factorize(codes * (int(types.max()) + 1) + types)[0]
    return codes


def per_distinct(func, *columns) -> list:
    """``[func(*row) for row in zip(*columns)]``, calling ``func`` once per distinct row."""
    cols = [np.asarray(c) for c in columns]
    n = len(cols[0]) if cols else 0
    if n == 0:
        return []
    key = np.zeros(n, dtype=np.int64)
    for c in cols:
        code = _codes(c)
        key = np.unique(key * (int(code.max()) + 1) + code, return_inverse=True)[1].reshape(-1)
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    values = [func(*(c[i] for c in cols)) for i in first.tolist()]
    out = np.empty(len(values), dtype=object)
    out[:] = values
    return out[inverse.reshape(-1)].tolist()


def drawable_mask(gdf: gpd.GeoDataFrame) -> np.ndarray:
    """Which rows of ``gdf`` have a non-empty geometry (read-only within
    :func:`shared_columns`)."""
    return _shared(gdf, ("drawable",), lambda: _drawable(gdf.geometry.to_numpy()))


def _drawable(g: np.ndarray) -> np.ndarray:
    return ~shapely.is_missing(g) & ~shapely.is_empty(g)


def drawable(gdf: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """The rows of ``gdf`` that have a non-empty geometry."""
    return gdf[drawable_mask(gdf)]


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
Props = dict[str, Sequence[str]]

_STR = StringDType()
#: characters a JSON string must escape (quote, backslash, controls)
_SPACE = re.compile(r"\s")
_JSON_SPECIAL = re.compile(r'["\\\x00-\x1f]')


def style_table(styles: Sequence[dict]) -> StyleTable:
    """The table of distinct styles and each feature's index into it (first seen first)."""
    table: list[dict] = []
    seen: dict[tuple, int] = {}
    index = np.empty(len(styles), dtype=np.int64)
    for i, st in enumerate(styles):
        key = tuple(sorted(st.items()))
        if key not in seen:
            seen[key] = len(table)
            table.append(st)
        index[i] = seen[key]
    return table, index


def _keyed_styles(keys: Sequence[np.ndarray], make) -> StyleTable:
    """Styles of features described by parallel key arrays: ``make(*key)`` is called once per
    distinct key, in order of first appearance."""
    n = len(keys[0]) if keys else 0
    if n == 0:
        return [], np.zeros(0, dtype=np.int64)
    codes = np.zeros(n, dtype=np.int64)
    for k in keys:
        c, u = pd.factorize(np.asarray(k), use_na_sentinel=False)
        codes = codes * max(len(u), 1) + c
    _, first, index = np.unique(codes, return_index=True, return_inverse=True)
    # styles numbered by first appearance; keys that make equal styles share one
    table: list[dict] = []
    seen: dict[tuple, int] = {}
    number = np.empty(len(first), dtype=np.int64)
    for j in np.argsort(first, kind="stable").tolist():
        st = make(*(np.asarray(k)[first[j]] for k in keys))
        key = tuple(sorted(st.items()))
        if key not in seen:
            seen[key] = len(table)
            table.append(st)
        number[j] = seen[key]
    return table, number[index.reshape(-1)]


def _json_bodies(values: Sequence[str]) -> np.ndarray:
    """JSON string literals of ``values`` without their quotes, as a StringDType array."""
    values = values.tolist() if hasattr(values, "tolist") else list(values)
    if set(map(type, values)) - {str}:
        values = [str(v) for v in values]
    if _JSON_SPECIAL.search("".join(values)) is not None:
        values = [
            json.dumps(v, ensure_ascii=False)[1:-1] if _JSON_SPECIAL.search(v) else v
            for v in values
        ]
    return np.asarray(values, dtype=_STR)


#: geometry types whose GeoJSON is ``{"type": …, "coordinates": …}``
_COORDINATE_TYPES = ("Point", "LineString", "Polygon", "MultiPoint", "MultiLineString",
                     "MultiPolygon")  # fmt: skip


def _strings_json(bodies: np.ndarray) -> str:
    """A JSON list of strings from their literal bodies."""
    return '["' + '","'.join(np.asarray(bodies).tolist()) + '"]' if len(bodies) else "[]"


def _column_json(bodies: np.ndarray) -> str:
    """One property column: a list of strings, or ``{"v": distinct values, "i": indices}``
    (``{"v": [value]}`` when all are equal) where that is shorter."""
    codes, uniques = pd.factorize(np.asarray(bodies, dtype=object))
    if len(uniques) == 1:
        return '{"v":' + _strings_json(uniques) + "}"
    lengths = np.strings.str_len(bodies)
    plain = int(lengths.sum()) + 3 * len(bodies)
    digits = np.floor(np.log10(np.maximum(codes, 1))).astype(np.int64) + 2
    coded = int(np.strings.str_len(np.asarray(uniques, dtype=_STR)).sum()) + 3 * len(uniques)
    if coded + int(digits.sum()) + 12 >= plain:
        return _strings_json(bodies)
    return '{"v":' + _strings_json(uniques) + ',"i":' + ints_json(codes) + "}"


def columns_text(geoms: np.ndarray, props: Props | None, index: np.ndarray) -> str:
    """A layer by column as compact JSON: ``n`` features; ``t`` the geometry type (one type),
    or ``{"v": types, "i": indices}``; ``c`` each feature's GeoJSON ``coordinates`` (or ``g``
    each whole geometry, for a layer holding geometry collections); ``s`` the style index
    (one number when all are equal) and ``p`` each property's column (see
    :func:`_column_json`), ``""`` where a feature has no value (the property is left out)."""
    n = len(geoms)
    if n and not np.isfinite(shapely.get_coordinates(geoms)).all():
        raise ValueError("a geometry has a coordinate that is not a finite number")
    geo = shapely.to_geojson(geoms).tolist() if n else []
    types = shapely.get_type_id(geoms) if n else np.zeros(0, dtype=int)
    names = np.array(["Point", "LineString", "LinearRing", "Polygon", "MultiPoint",
                      "MultiLineString", "MultiPolygon", "GeometryCollection"],
                     dtype=object)  # fmt: skip
    type_names = names[types] if n else np.zeros(0, dtype=object)
    parts = [f'"n":{n}']
    if n and set(type_names.tolist()) <= set(_COORDINATE_TYPES):
        codes, uniques = pd.factorize(type_names)
        if len(uniques) == 1:
            parts.append(f'"t":{json.dumps(uniques[0])}')
        else:
            parts.append(f'"t":{{"v":{json.dumps(list(uniques))},"i":{ints_json(codes)}}}')
        # '{"type":"<T>","coordinates":<X>}' -> <X>
        start = np.array([len(f'{{"type":"{t}","coordinates":') for t in uniques])[codes]
        coords = [g[k:-1] for g, k in zip(geo, start.tolist(), strict=True)]
        parts.append('"c":[' + ",".join(coords) + "]")
    else:
        parts.append('"g":[' + ",".join(geo) + "]")
    index = np.asarray(index, dtype=np.int64)
    if n and (index == index[0]).all():
        parts.append(f'"s":{int(index[0])}')
    else:
        parts.append(f'"s":{ints_json(index)}')
    cols = [f"{json.dumps(k)}:{_column_json(_json_bodies(v))}" for k, v in (props or {}).items()]
    parts.append('"p":{' + ",".join(cols) + "}")
    return "{" + ",".join(parts) + "}"


def expand(data: dict) -> dict:
    """The FeatureCollection that a layer by column (:func:`columns_text`) stands for; the
    page's ``rpFeatures`` does the same in the browser."""
    n = data["n"]

    def column(c) -> list:
        if isinstance(c, list):
            return c
        if "i" in c:
            return [c["v"][i] for i in c["i"]]
        return [c["v"][0]] * n

    props = {k: column(v) for k, v in data["p"].items()}
    style = data["s"] if isinstance(data["s"], list) else [data["s"]] * n
    if "g" in data:
        geometries = data["g"]
    else:
        t = data["t"]
        types = [t] * n if isinstance(t, str) else [t["v"][i] for i in t["i"]]
        geometries = [
            {"type": ty, "coordinates": c} for ty, c in zip(types, data["c"], strict=True)
        ]
    features = []
    for i in range(n):
        p = {k: v[i] for k, v in props.items() if v[i] != ""}
        p[STYLE_KEY] = style[i]
        features.append({"type": "Feature", "geometry": geometries[i], "properties": p})
    return {"type": "FeatureCollection", "features": features}


def make_layer(geoms, props: Props | None, styles: Sequence[dict] | StyleTable, fields=()) -> Layer:
    """A :class:`Layer` from geometries, text properties and a style per feature.

    ``styles`` is one dict per feature (equal styles share one entry of the layer's style
    table) or a :data:`StyleTable` already.
    """
    table, index = styles if isinstance(styles, tuple) else style_table(styles)
    geoms = np.asarray(geoms, dtype=object)
    text = columns_text(geoms, props, index)
    box = shapely.total_bounds(geoms) if len(geoms) else None
    bounds = tuple(box.tolist()) if box is not None and np.isfinite(box).all() else None
    return Layer(text, list(table), tuple(fields), np.asarray(index, dtype=np.int64), bounds)


def _escaped(table: dict) -> Props:
    return {k: np.asarray(escape_all(v), dtype=object) for k, v in table.items()}


def _subset(geoms, props: Props, styles: StyleTable, mask: np.ndarray, fields) -> Layer:
    idx = np.flatnonzero(mask)
    sub = {k: np.asarray(v, dtype=object)[idx] for k, v in props.items()}
    table, index = styles
    return make_layer(geoms[idx], sub, _compact(table, index[idx]), fields)


def _compact(table: list[dict], index: np.ndarray) -> StyleTable:
    """The styles of ``table`` that ``index`` uses, renumbered by first use."""
    if len(index) == 0:
        return [], np.zeros(0, dtype=np.int64)
    _, first, inv = np.unique(index, return_index=True, return_inverse=True)
    order = np.argsort(first, kind="stable")
    rank = np.empty(len(order), dtype=np.int64)
    rank[order] = np.arange(len(order))
    used = np.unique(index)
    return [table[int(used[j])] for j in order], rank[inv.reshape(-1)]


# ---------------------------------------------------------------------------------------------
# circuits


def _conductor_text(s, p, m, label="") -> str:
    if np.isnan(s):
        text = MISSING
    else:
        text = label or f"{s:g} mm²"
        if not np.isnan(p) and p > 1:
            text = f"{p:g} × {text}"
    return f"{text} {m}".strip()


def _conductor(df: pd.DataFrame) -> list[str]:
    """``[parallel ×] size material``; the size as the schedule's ``size_label`` names it
    (``10 AWG`` under nec), mm² where a table has no labels."""
    size = _num(df, "size_mm2")
    par = _num(df, "parallel")
    mat = _text(df, "material").to_numpy()
    if "size_label" not in df:
        return per_distinct(_conductor_text, size, par, mat)
    label = _text(df, "size_label").to_numpy()
    return per_distinct(_conductor_text, size, par, mat, label)


def _str_array(values) -> np.ndarray:
    values = values.tolist() if hasattr(values, "tolist") else list(values)
    return np.asarray(values, dtype=_STR)


def _or_missing(values) -> np.ndarray:
    a = _str_array(values)
    return np.where(a == "", MISSING, a)


def _join(*parts) -> list[str]:
    """Element-wise concatenation of text arrays and constant strings."""
    acc = parts[0] if isinstance(parts[0], str) else _str_array(parts[0])
    for p in parts[1:]:
        acc = np.strings.add(acc, p if isinstance(p, str) else _str_array(p))
    return np.asarray(acc).tolist()


def _between(df: pd.DataFrame) -> list[str]:
    return _join(_or_missing(_text(df, "from_id")), " → ", _or_missing(_text(df, "to_id")))


def _normalised(df: pd.DataFrame, name: str) -> np.ndarray:
    """A text column stripped and in lower case (each distinct value is converted once)."""
    return _shared(df, ("normalised", name), lambda: _normalise(df, name))


def _normalise(df: pd.DataFrame, name: str) -> np.ndarray:
    codes, uniques = pd.factorize(_text(df, name).to_numpy(dtype=object))
    low = np.array([str(u).strip().lower() for u in uniques] + [""], dtype=object)
    return low[codes]


def is_fail(df: pd.DataFrame) -> np.ndarray:
    """True where a circuit's ``status`` is "fail" (any case)."""
    return _normalised(df, "status") == "fail"


def circuit_kind(df: pd.DataFrame) -> np.ndarray:
    """The ``kind`` column in lower case without spaces: "string", "array" or "ac"."""
    return _normalised(df, "kind")


def circuit_props(df: pd.DataFrame) -> Props:
    """Escaped, formatted tooltip fields of individual circuits (``CIRCUIT_FIELDS``)."""
    amp = fmt_number(_num(df, "ampacity_a"), 1, "A")
    base = fmt_number(_num(df, "ampacity_base_a"), 1, "A")
    der = fmt_number(_num(df, "derating"), 2)
    with_base = _join(amp, " (", base, " × ", der, ")")
    ampacity = np.where(np.asarray(base, dtype=object) == MISSING, amp, with_base).tolist()
    vd_v = fmt_number(_num(df, "vdrop_v"), 2, "V")
    vd_p = fmt_number(_num(df, "vdrop_pct"), 2, "%")
    route = fmt_number(_num(df, "route_m"), 1, "m")
    cable = fmt_number(_num(df, "cable_m"), 1, "m")
    group = _num(df, "group_max")
    kinds = circuit_kind(df)
    status = np.where(is_fail(df), "FAIL", _text(df, "status").to_numpy())
    table = {
        "circuit": _text(df, "circuit_id"),
        "kind": per_distinct(lambda k: KIND_LABEL.get(k, k), kinds),
        "between": _between(df),
        "conductor": _conductor(df),
        "current": fmt_number(_num(df, "design_current_a"), 1, "A"),
        "ampacity": ampacity,
        "utilisation": fmt_number(_num(df, "utilisation"), 0, "%", scale=100),
        "length": _join(route, " / ", cable),
        "grouping": per_distinct(lambda g: MISSING if np.isnan(g) else f"{g:g} circuits", group),
        "vdrop": _join(vd_v, " (", vd_p, ")"),
        "vdrop_total": fmt_number(_num(df, "vdrop_total_pct"), 2, "%"),
        "loss": fmt_number(_num(df, "loss_w"), 1, "W"),
        "status": status,
        "note": _text(df, "note"),
    }
    return _escaped(table)


def _line_style(colour, weight, fail) -> dict:
    w = round(float(weight), 1)
    if fail:
        return {"color": PROBLEM_COLOUR, "weight": w, "opacity": 1}
    return {"color": str(colour), "weight": w, "opacity": 0.95}


def line_styles(colours, weights, fail: np.ndarray) -> StyleTable:
    """Leaflet styles of circuit lines: the scale colour, or vermillion if failing."""
    weights = np.round(np.asarray(weights, dtype=float), 1)
    return _keyed_styles(
        [np.asarray(colours, dtype=object), weights, np.asarray(fail)], _line_style
    )


def _casing_style(weight) -> dict:
    return {"color": CASING_COLOUR, "weight": round(float(weight) + CASING_EXTRA, 1), "opacity": 1,
            "dashArray": FAIL_DASH, "lineCap": "butt"}  # fmt: skip


def casing_styles(weights) -> StyleTable:
    """Dashed black outline (casing) drawn under failing circuits."""
    return _keyed_styles([np.asarray(weights, dtype=float)], _casing_style)


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
    texts = np.where(notes != "", np.asarray(_join(ids, ": ", notes), dtype=object), ids)
    out["failing"] = _first_three(bad, keys, texts).reindex(out.index).fillna("").to_numpy()
    out = out.reset_index()
    geometry = df.geometry.to_numpy()[out["pos"].to_numpy()]
    return gpd.GeoDataFrame(out.drop(columns="pos"), geometry=geometry, crs=strings.crs)


def _first_three(bad: pd.DataFrame, keys: list[str], texts: np.ndarray) -> pd.Series:
    """Per group of ``bad`` (by ``keys``), its ``texts`` in order as ``join_limited(…, limit=3,
    sep="; ")`` joins them, indexed by the group keys."""
    grouped = bad.groupby(keys, sort=True)
    group = grouped.ngroup().to_numpy()
    index = grouped.size().index
    if len(group) == 0:
        return pd.Series([], index=index, dtype=object)
    order = np.argsort(group, kind="stable")
    t = np.asarray(texts, dtype=object)[order]
    count = np.bincount(group, minlength=len(index))
    first = np.r_[0, np.cumsum(count)[:-1]]
    parts: list = [t[first]]
    for k in (1, 2):
        nxt = t[np.minimum(first + k, len(t) - 1)]
        parts.append(np.where(count > k, np.asarray(_join("; ", nxt), dtype=object), ""))
    more = per_distinct(lambda n: f" … (+{n - 3} more)" if n > 3 else "", count)
    return pd.Series(_join(*parts, more), index=index, dtype=object)


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
        "strings": per_distinct(lambda a, b: f"{a} ({b} failing)" if b else f"{a}", n, nf),
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


def segment_values(
    df: pd.DataFrame, reference: int | None = None
) -> tuple[np.ndarray, np.ndarray, int]:
    """Scale position, over-capacity flag and reference count of trench segments.

    Where a capacity is set, the position is the fill (``fill``, or when it is missing
    circuits ÷ ``max_circuits``, or cable sets ÷ ``max_cable_sets`` for a trench that gives
    that). Where none is set, it is the number of circuits divided by the
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
        capacity); ``reference`` when given (the whole plant's, for a part of its segments).
    """
    circuits = _num(df, "circuits")
    count, cap = _capacity(df)
    fill = _num(df, "fill")
    has_cap = cap > 0  # NaN: none (as has_capacity)
    with np.errstate(divide="ignore", invalid="ignore"):
        fill = np.where(np.isnan(fill) & has_cap, count / cap, fill)
    if reference is None:
        busiest = np.nanmax(circuits) if np.isfinite(circuits).any() else 0.0
        ref = int(busiest) if (~has_cap).any() and busiest > 0 else 0
    else:
        ref = int(reference)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(has_cap, fill, circuits / ref if ref else np.nan)
    status_over = _text(df, "status").str.strip().str.lower().eq("over").to_numpy()
    over = status_over | (has_cap & (np.nan_to_num(fill, nan=0.0) > 1.0 + 1e-9))
    return t, over, ref


def has_capacity(df: pd.DataFrame) -> np.ndarray:
    """Which segments have a capacity (``max_circuits``, or ``max_cable_sets`` where only that
    is given; see :func:`_capacity`)."""
    return _capacity(df)[1] > 0  # NaN: none


def _capacity(df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """What each segment's fill counts and its capacity: circuits and ``max_circuits``, or
    cable sets and ``max_cable_sets`` where only that is given (NaN capacity: none)."""
    cap = _num(df, "max_circuits")
    by_sets = np.isnan(cap) & ~np.isnan(_num(df, "max_cable_sets"))
    count = np.where(by_sets, _num(df, "cable_sets"), _num(df, "circuits"))
    return count, np.where(by_sets, _num(df, "max_cable_sets"), cap)


def _circuits_text(total, s, sa, a, c) -> str:
    head = MISSING if np.isnan(total) else f"{total:g}"
    kinds = (("strings", s), ("sub-arrays", sa), ("arrays", a), ("AC", c))
    # sub-arrays only where the plan has them (a zero is noise on a plant without)
    parts = [f"{lab} {v:g}" for lab, v in kinds if not np.isnan(v) and (v or lab != "sub-arrays")]
    if parts:
        head += " (" + ", ".join(parts) + ")"
    return head


def _ids_text(ids: str, limit: int = 8) -> str:
    """The ';'-joined ids as shown: at most ``limit`` (see :func:`join_limited`)."""
    if ids and ";;" not in ids and ids[0] != ";" and ids[-1] != ";" and not _SPACE.search(ids):
        n = ids.count(";") + 1  # no empty item: the quick way
        if n <= limit:
            return ids.replace(";", ", ")
        return ", ".join(ids.split(";", limit)[:limit]) + f" … (+{n - limit} more)"
    items = ids.split(";")
    if any(not i.strip() for i in items):
        items = [i for i in items if i.strip()]
    return join_limited(items, limit=limit)


def segment_props(df: pd.DataFrame, t: np.ndarray, over: np.ndarray) -> Props:
    """Escaped, formatted tooltip fields of trench segments (``SEGMENT_FIELDS``)."""
    circuits = per_distinct(
        _circuits_text, _num(df, "circuits"), _num(df, "strings"), _num(df, "subarrays"),
        _num(df, "arrays"), _num(df, "ac"),
    )  # fmt: skip
    _, cap = _capacity(df)
    has_cap = cap > 0  # NaN: none (as has_capacity)
    unit = np.where(np.isnan(_num(df, "max_circuits")), 1.0, 0.0)  # 1: cable sets
    capacity = per_distinct(
        lambda c, h, u: f"max {c:g} {'cable sets' if u else 'circuits'}" if h else "not set",
        cap,
        has_cap,
        unit,
    )
    sets = _num(df, "cable_sets")
    more = np.flatnonzero(~np.isnan(sets) & (sets != _num(df, "circuits"))).tolist()
    for i in more:  # parallel sets: the count the grouping and a cable-set capacity use
        circuits[i] = f"{circuits[i]} · {sets[i]:g} cable sets"
    fill = fmt_number(np.where(has_cap, t, np.nan), 0, "%", scale=100)
    ids = [_ids_text(s) for s in _text(df, "circuit_ids").tolist()]
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


def _count_keys(circuits: np.ndarray) -> np.ndarray:
    """Each segment's circuit count as the text that keys its colour (``repr`` of the float:
    two different counts never share a key; NaN is ``"nan"``)."""
    return np.asarray(per_distinct(lambda c: repr(float(c)), circuits), dtype=object)


def count_colours(df: pd.DataFrame, reference: int) -> dict[str, str]:
    """The ``FILL`` colour of each circuit count of the segments without a capacity, keyed as
    their styles are (:data:`COUNT_KEY`): what :func:`segment_layers` with ``by_count`` leaves
    to the page (``rpCountColours``), the colour it would give without."""
    df = drawable(df)
    circuits = _num(df, "circuits")[~has_capacity(df)]
    keys, first = np.unique(_count_keys(circuits).astype(str), return_index=True)
    count = circuits[first]  # one of each key (-0.0 and 0.0 are two keys, one colour)
    colours = FILL.colours(count / reference if reference else np.full(len(count), np.nan))
    return dict(zip(keys.tolist(), colours.tolist(), strict=True))


def segment_layers(
    df: gpd.GeoDataFrame, reference: int | None = None, *, by_count: bool = False
) -> SegmentLayers:
    """Layers of trench segments coloured by fill, over-capacity ones on a vermillion halo
    (``reference``: see :func:`segment_values`).

    Segments are drawn in order of circuits where no capacity is set, then in order of fill
    where one is (the fuller on top at a junction), an order that does not depend on the
    plant's busiest segment. With ``by_count``, a segment without a capacity gets no colour in
    its style but its circuit count (:data:`COUNT_KEY`); the page gives the colour
    (:func:`count_colours`): the layers then do not depend on the busiest segment at all."""
    df = drawable(df)
    t, over, ref = segment_values(df, reference)
    capped = has_capacity(df)
    value = np.where(capped, t, _num(df, "circuits"))
    order = np.lexsort((np.nan_to_num(value, nan=-1.0), capped))
    df, t, over, capped = df.iloc[order], t[order], over[order], capped[order]
    geoms = display_geometry(df)
    props = segment_props(df, t, over)
    colours = FILL.colours(t).astype(object)
    counts = np.full(len(t), "", dtype=object)
    if by_count:
        counts[~capped] = _count_keys(_num(df, "circuits")[~capped])
        colours[~capped] = ""
    base = {"weight": SEGMENT_WEIGHT, "opacity": 0.55, "lineCap": "butt"}
    styles = _keyed_styles(
        [colours, counts],
        lambda c, n: {"color": str(c), **base} if c else {COUNT_KEY: str(n), **base},
    )
    halo = {"color": PROBLEM_COLOUR, "weight": SEGMENT_HALO_WEIGHT, "opacity": 0.9,
            "dashArray": HALO_DASH, "lineCap": "butt"}  # fmt: skip
    n_over = int(over.sum())
    halo_styles = ([halo] if n_over else [], np.zeros(n_over, dtype=np.int64))
    return SegmentLayers(
        ok=_subset(geoms, props, styles, ~over, SEGMENT_FIELDS),
        halo=make_layer(geoms[over], None, halo_styles),
        over=_subset(geoms, props, styles, over, SEGMENT_FIELDS),
        reference=ref,
    )


# ---------------------------------------------------------------------------------------------
# rows and equipment


def _row_strings_text(declared, routed) -> str:
    d = escape_text(declared) or MISSING
    return d if np.isnan(routed) else f"{d} ({routed:g} with a route)"


def row_stats(ids: np.ndarray, strings: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Per row id: the worst total drop of its strings [%] and its number of routed strings
    (NaN for a row without strings)."""
    ids = np.asarray(ids, dtype=object)
    codes, distinct = pd.factorize(ids)
    row = pd.Index(distinct).get_indexer(_text(strings, "from_id").to_numpy())  # -1: no row
    drop = _num(strings, "vdrop_total_pct")[row >= 0]
    row = row[row >= 0]
    worst = np.full(len(distinct), np.nan)
    np.fmax.at(worst, row, drop)  # the largest, NaN ignored (NaN if all are)
    routed = np.bincount(row, minlength=len(distinct)).astype(float)
    routed[routed == 0] = np.nan
    return worst[codes], routed[codes]


def row_layer(
    rows: gpd.GeoDataFrame,
    strings: pd.DataFrame | None = None,
    *,
    stats: tuple[np.ndarray, np.ndarray] | None = None,
) -> Layer:
    """Module rows; a row's tooltip shows its strings and the worst total drop of its strings
    (from ``strings``, or ``stats`` of :func:`row_stats` for the drawable rows, in order)."""
    rows = drawable(rows)
    ids = _text(rows, "id")
    if stats is None:
        stats = row_stats(ids.to_numpy(), strings if strings is not None else pd.DataFrame())
    worst, n_routed = stats
    declared = _column(rows, "strings", "").to_numpy(dtype=object)
    strings_text = per_distinct(_row_strings_text, declared, n_routed)
    table = {
        "row": ids,
        "strings": strings_text,
        "module": _text(rows, "module"),
        "to": _text(rows, "to"),
        "worst_drop": fmt_number(worst, 2, "%"),
    }
    props = _escaped({k: v for k, v in table.items() if k != "strings"})
    props["strings"] = strings_text  # escaped above
    kinds = shapely.get_type_id(rows.geometry.to_numpy())
    polygonal = np.isin(kinds, (3, 6))
    styles = _keyed_styles(
        [polygonal], lambda p: dict(ROW_POLYGON_STYLE) if p else dict(ROW_LINE_STYLE)
    )
    return make_layer(display_geometry(rows), props, styles, ROW_FIELDS)


def equipment_stats(ids: np.ndarray, circuits: pd.DataFrame) -> tuple[list[str], list[str]]:
    """Per equipment id: the number of circuits arriving and the circuits leaving, as shown."""
    to_ids = _text(circuits, "to_id")
    from_ids = _text(circuits, "from_id")
    incoming = to_ids.value_counts()
    ids = [str(i) for i in ids]
    mine = from_ids.isin(set(ids)).to_numpy()
    outgoing: dict[str, list[str]] = {}
    cids = _text(circuits, "circuit_id").to_numpy()[mine]
    for frm, cid in zip(from_ids.to_numpy()[mine], cids, strict=True):
        outgoing.setdefault(frm, []).append(cid)
    counts = incoming.reindex(ids).fillna(0).astype(np.int64).to_numpy()
    return (
        [str(n) for n in counts.tolist()],
        [join_limited(outgoing.get(i, []), limit=4) or "0" for i in ids],
    )


def equipment_layer(
    equipment: gpd.GeoDataFrame,
    circuits: pd.DataFrame | None = None,
    *,
    stats: tuple[list[str], list[str]] | None = None,
) -> Layer:
    """Combiners, inverters (point or pad) and the grid point, with their circuits in and out
    (from ``circuits``, or ``stats`` of :func:`equipment_stats` for the drawable ones)."""
    eq = drawable(equipment)
    ids = _text(eq, "id")
    kinds = _text(eq, "kind").str.strip().str.lower().to_numpy()
    if stats is None:
        circuits = circuits if circuits is not None else pd.DataFrame()
        stats = equipment_stats(ids.to_numpy(), circuits)
    incoming, outgoing = stats
    table = {
        "equipment": ids,
        "kind": [EQUIPMENT_LABEL.get(k, k) for k in kinds],
        "incoming": list(incoming),
        "outgoing": list(outgoing),
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
