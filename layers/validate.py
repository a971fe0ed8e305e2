"""Validation of in-memory site frames and of the site-format parts of ``site.toml``.

Every problem is collected — never only the first — each naming the layer, the feature id
(or ``#n``, the feature's 1-based position, where the id itself is missing) and what is wrong.

site.toml is checked strictly: ``[site]`` and each ``[modules.<key>]`` may hold only the keys
listed here (:data:`SITE_KEYS`, :data:`MODULE_KEYS_REQUIRED`, :data:`MODULE_KEYS_OPTIONAL`);
an unknown key is a problem naming the dotted key with the closest known name as a
suggestion, and a value of the wrong type is a problem naming the key and the type expected.
``[layers]`` is checked where it is read (:func:`layers.sources.locate_layers`); the other
top-level tables belong to the caller (``routeplan.config``), which also checks that no
unknown top-level table is present (:data:`SITE_TABLES` are this package's).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from numpy.dtypes import StringDType

from .crs import choose_working_crs, parse_crs
from .errors import Problem, SiteError
from .model import LAYER_NAMES, REQUIRED_LAYERS, Module, Site
from .sources import SITE_TOML, toml_type, unknown_key
from .units import example, show_value, to_number


@dataclass(frozen=True)
class Field:
    """One attribute of a layer: its type, whether it is required, and its allowed range."""

    name: str
    kind: str  # "int" | "float" | "str" | "choice" | "ref"
    required: bool = False
    low: float | None = None  # inclusive lower bound
    high: float | None = None  # inclusive upper bound
    low_open: bool = False  # True: value must be > low
    choices: tuple[str, ...] = ()
    targets: tuple[str, ...] = ()  # for "ref": layers the id must belong to
    default: Any = None


#: geometry types allowed per layer (single-part Multi* geometries are accepted and unpacked)
GEOMETRY_TYPES: dict[str, tuple[str, ...]] = {
    "rows": ("LineString", "Polygon"),
    "combiners": ("Point",),
    "inverters": ("Point", "Polygon"),
    "trenches": ("LineString", "MultiLineString"),
    "grid": ("Point",),
}

#: most string circuits leaving one module row/table (common practice: a tracker row or a
#: fixed-tilt table carries a handful of strings, a long one a few tens; 1,000 strings of
#: ~27 modules would be ~27,000 modules, about 15 MWdc, on one row). Each string is one
#: circuit routed and sized: the bound keeps one mistyped value (``strings = 1e9``) from
#: allocating gigabytes.
MAX_ROW_STRINGS = 1_000
#: largest ``max_strings`` of a combiner and ``max_circuits`` of a trench: the range of the
#: design default ``[design] max_circuits`` (``routeplan.config``), far beyond any combiner
#: box or trench (common practice: combiners take a few tens of strings; a trench holds tens
#: of circuits). A larger number is a slip, not a capacity.
MAX_CAPACITY = 10_000
#: largest inverter rating, kVA (common practice: the largest inverter skids are a few MVA;
#: 100 MVA is a whole plant's grid connection). Beyond it the loss estimate (current²)
#: overflows to infinity for absurd values such as 1e300.
MAX_AC_KVA = 100_000.0
#: longest id, characters (common practice: ids label drawings and cable tags, a few tens of
#: characters at most). A longer one is a slip (a pasted text), and spreadsheets cap a cell
#: (Excel: 32,767 characters, from memory), which a circuit id is in the workbook.
MAX_ID_CHARS = 200
#: most DC inputs of one inverter (common practice: string inverters have a few to a few tens
#: of MPPT inputs, central inverters one to a few DC busbars)
MAX_DC_INPUTS = 100
#: most combiners in a chain from a row to an inverter: a string combiner, up to two levels of
#: sub-array combiners (recombiners) above it (common practice: utility plants with central
#: inverters use one, rarely two, levels of recombiners)
MAX_COMBINER_LEVELS = 3

#: attributes per layer — the site format (README, "Site format"). Upper bounds are given where
#: a huge value would cost memory or time (``strings``) or overflow a result (``ac_kva``), and
#: for capacities, whose range matches the design default's; ``fuse_a`` has none (a rating
#: beyond the IEC 62548 range is reported per circuit by the sizing); ``ac_v``, ``pf``,
#: ``phases`` and the trench quantities have physical ranges.
FIELDS: dict[str, tuple[Field, ...]] = {
    "rows": (
        Field("strings", "int", required=True, low=1, high=MAX_ROW_STRINGS),
        Field("module", "str", required=True),
        Field("to", "ref", targets=("combiners", "inverters")),
        Field("input", "int", low=1, high=MAX_DC_INPUTS),
    ),
    "combiners": (
        Field("to", "ref", targets=("combiners", "inverters")),
        Field("max_strings", "int", low=1, high=MAX_CAPACITY),
        Field("fuse_a", "float", low=0, low_open=True),
        Field("input", "int", low=1, high=MAX_DC_INPUTS),
    ),
    "inverters": (
        Field("ac_kva", "float", required=True, low=0, low_open=True, high=MAX_AC_KVA),
        Field("ac_v", "float", required=True, low=0, low_open=True, high=36000),
        Field("phases", "int", choices=("1", "3"), default=3),
        Field("pf", "float", low=0, low_open=True, high=1),
        Field("to", "ref", targets=("grid",)),
        Field("ac_max_a", "float", low=0, low_open=True),
        Field("dc_inputs", "int", low=1, high=MAX_DC_INPUTS, default=1),
        Field("input_max_a", "float", low=0, low_open=True),
        Field("input_max_isc_a", "float", low=0, low_open=True),
        Field("input_max_strings", "int", low=1, high=MAX_CAPACITY),
    ),
    "trenches": (
        Field("depth_m", "float", low=0, low_open=True, high=10),
        Field("laying", "choice", choices=("direct", "duct")),
        Field("spacing_m", "float", low=0, high=5),
        Field("soil_k_m_w", "float", low=0, low_open=True, high=10),
        Field("max_circuits", "int", low=1, high=MAX_CAPACITY),
        Field("max_cable_sets", "int", low=1, high=MAX_CAPACITY),
    ),
    "grid": (),
}

#: shapely type ids → names
TYPE_NAMES: dict[int, str] = {
    0: "Point",
    1: "LineString",
    2: "LinearRing",
    3: "Polygon",
    4: "MultiPoint",
    5: "MultiLineString",
    6: "MultiPolygon",
    7: "GeometryCollection",
}

#: line geometry types (a line must have a length)
LINE_TYPES: tuple[str, ...] = ("LineString", "MultiLineString")

#: a feature of each layer, in words
SINGULAR: dict[str, str] = {
    "rows": "row",
    "combiners": "combiner",
    "inverters": "inverter",
    "trenches": "trench",
    "grid": "grid point",
}


#: layers that must hold at least one feature (a site may have no combiner and no grid point)
NOT_EMPTY: tuple[str, ...] = ("rows", "inverters", "trenches")


def _a(noun: str) -> str:
    return ("an " if noun[:1] in "aeiou" else "a ") + noun


#: top-level tables of site.toml that this package reads (the caller reads the others)
SITE_TABLES: tuple[str, ...] = ("site", "modules", "layers")
#: keys of ``[site]``, each a string: the site's name, its working CRS, the CRS of layer
#: files that carry none
SITE_KEYS: tuple[str, ...] = ("name", "crs", "source_crs")
#: keys every ``[modules.<key>]`` table must hold (STC datasheet values; modules per string)
MODULE_KEYS_REQUIRED: tuple[str, ...] = ("isc_a", "imp_a", "voc_v", "vmp_v", "per_string")
#: optional keys of a ``[modules.<key>]`` table, each a number > 0 in the unit its name
#: carries: ``max_fuse_a`` (the module's maximum series fuse rating, ``Module.max_fuse_a``)
#: and ``pmax_w`` (rated power at STC, W; ``Module.extra``, read by ``routeplan check`` for
#: the DC capacity). A new optional key is added here; one that may be ≤ 0 needs its own rule.
MODULE_KEYS_OPTIONAL: tuple[str, ...] = (
    "max_fuse_a",
    "pmax_w",
    "bifaciality",
    "isc_bifacial_a",
    "voc_temp_coeff_pct_per_c",
)
#: optional module keys allowed to be 0, with their inclusive range (others must be > 0):
#: ``bifaciality`` is the rear-to-front ratio of Isc, φ (0 = monofacial, IEC TS 60904-1-2)
MODULE_KEY_RANGES: dict[str, tuple[float, float]] = {
    "bifaciality": (0.0, 1.0),
    # temperature coefficient of Voc, %/°C: negative for every PV technology (a datasheet value
    # of crystalline silicon is about −0.25 to −0.35; −1 is far beyond any)
    "voc_temp_coeff_pct_per_c": (-1.0, 0.0),
}
#: module keys that are whole numbers (a whole float such as 27.0 is taken as 27)
MODULE_KEYS_INT: tuple[str, ...] = ("per_string",)


def build_site(
    frames: dict[str, gpd.GeoDataFrame],
    config: dict[str, Any],
    root: Path | str = ".",
    sources: dict[str, str] | None = None,
) -> Site:
    """Validate in-memory layer frames and a parsed site.toml; return a :class:`Site`.

    Raises :class:`~layers.errors.SiteError` with every problem found.
    """
    problems: list[Problem] = []
    root = Path(root)
    site_cfg, site_problems = parse_site_table(config)
    problems += site_problems
    modules, module_problems = parse_modules(config)
    problems += module_problems
    first_stage = len(problems)  # from here to the CRS: problems that make geometry unusable

    for name in REQUIRED_LAYERS:
        if name not in frames:
            problems.append(Problem(name, None, "required layer missing"))
    site_crs = source_crs = None
    if site_cfg.get("crs"):
        site_crs, p = parse_crs(str(site_cfg["crs"]), "site.crs")
        problems += p
    if site_cfg.get("source_crs"):
        source_crs, p = parse_crs(str(site_cfg["source_crs"]), "site.source_crs")
        problems += p

    clean: dict[str, gpd.GeoDataFrame] = {}
    for name in LAYER_NAMES:
        if name in frames:
            frame, p = _check_geometry(name, frames[name])
            problems += p
            clean[name] = frame
    crs, crs_note, projected, p = choose_working_crs(clean, site_crs, source_crs)
    problems += p
    usable = len(problems) == first_stage and crs is not None

    typed: dict[str, gpd.GeoDataFrame] = {}
    for name, frame in projected.items():
        frame, p = _check_attributes(name, frame)
        problems += p
        typed[name] = frame
    # layers whose features cannot be known: missing, unreadable (located but not given
    # here), without an id column, or empty where features are needed; each is reported
    # once, at the layer
    unavailable = {
        name
        for name in LAYER_NAMES
        if (name in typed and "id" not in typed[name].columns)
        or (name in typed and len(typed[name]) == 0 and name in NOT_EMPTY)
        or (name not in typed and (name in REQUIRED_LAYERS or name in (sources or {})))
    }
    raw_modules = config.get("modules")
    declared = set(map(str, raw_modules)) if isinstance(raw_modules, dict) and raw_modules else None
    problems += _check_ids_and_refs(typed, modules, unavailable, declared)
    if problems:
        partial = None
        if usable:
            labelled = {k: _labelled(v) for k, v in typed.items()}
            partial = _site(labelled, crs, crs_note, modules, config, root, sources)
        raise SiteError(sorted(set(problems), key=_problem_order), partial=partial)
    return _site(typed, crs, crs_note, modules, config, root, sources)


def _site(
    typed: dict[str, gpd.GeoDataFrame],
    crs: Any,
    crs_note: str,
    modules: dict[str, Module],
    config: dict[str, Any],
    root: Path,
    sources: dict[str, str] | None,
) -> Site:
    """The :class:`Site` of checked frames (an empty ``grid`` when the site has none)."""
    if "grid" not in typed:
        typed["grid"] = gpd.GeoDataFrame({"id": pd.Series([], dtype=object)}, geometry=[], crs=crs)
    site_cfg = config.get("site", {}) or {}
    name = site_cfg.get("name") if isinstance(site_cfg, dict) else None
    return Site(
        root=root,
        name=str(name or root.resolve().name),
        crs=crs,
        crs_note=crs_note,
        rows=typed["rows"],
        combiners=typed["combiners"],
        inverters=typed["inverters"],
        trenches=typed["trenches"],
        grid=typed["grid"],
        modules=modules,
        config=config,
        sources=dict(sources or {}),
    )


def _labelled(frame: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """``frame`` with each missing id replaced by its position label ``#n`` (as messages
    name it)."""
    ids = frame["id"].to_numpy(dtype=object)
    blank = np.flatnonzero(ids == "")
    if len(blank) == 0:
        return frame
    ids = ids.copy()
    ids[blank] = [f"#{i + 1}" for i in blank.tolist()]
    return frame.assign(id=pd.Series(ids, index=frame.index, dtype=object))


def _problem_order(p: Problem) -> tuple:
    layer_rank = LAYER_NAMES.index(p.layer) if p.layer in LAYER_NAMES else -1
    return (layer_rank, p.layer, p.feature_id or "", p.message)


def setting_number(value: Any, key: str) -> float:
    """A number setting of site.toml: :func:`layers.units.to_number`, with the TOML type
    named when the value is no number or string at all (``must be a number, not a table``).

    Raises ``ValueError`` with the reason.
    """
    if isinstance(value, bool) or not isinstance(value, int | float | str):
        alt = f" or a quantity such as {example(key)!r}" if example(key) else ""
        raise ValueError(f"must be a number{alt}, not {toml_type(value)}")
    return to_number(value, key)


def parse_site_table(config: dict[str, Any]) -> tuple[dict[str, str], list[Problem]]:
    """The ``[site]`` table: ``{key: text}`` of its well-typed keys, and every problem
    (a ``site`` that is not a table, an unknown key, a value that is not a string)."""
    raw = config.get("site", {})
    if not isinstance(raw, dict):
        return {}, [Problem(SITE_TOML, "site", f"must be a table ([site]), not {toml_type(raw)}")]
    out: dict[str, str] = {}
    problems: list[Problem] = []
    for key, value in raw.items():
        where = f"site.{key}"
        if key not in SITE_KEYS:
            problems.append(unknown_key(where, key, SITE_KEYS))
        elif not isinstance(value, str):
            example = ' such as "EPSG:32633"' if key != "name" else ""
            problems.append(
                Problem(SITE_TOML, where, f"must be a string{example}, not {toml_type(value)}")
            )
        else:
            out[key] = value
    return out, problems


def parse_modules(config: dict[str, Any]) -> tuple[dict[str, Module], list[Problem]]:
    """The ``[modules.<key>]`` tables as :class:`Module` objects, with every problem found.

    Each table holds :data:`MODULE_KEYS_REQUIRED` and may hold :data:`MODULE_KEYS_OPTIONAL`;
    every value is a number > 0 (or a quantity string, ``"14.2 A"``) and ``per_string`` a
    whole number. An unknown key is a problem naming ``modules.<key>.<name>``.
    """
    problems: list[Problem] = []
    raw = config.get("modules")
    if raw is not None and not isinstance(raw, dict):
        return {}, [
            Problem(
                SITE_TOML,
                "modules",
                f"must be tables [modules.<key>] (one per module type), not {toml_type(raw)}",
            )
        ]
    if not raw:
        return {}, [
            Problem(
                SITE_TOML, "modules", "no [modules.<key>] table: at least one module type is needed"
            )
        ]
    known = (*MODULE_KEYS_REQUIRED, *MODULE_KEYS_OPTIONAL)
    modules: dict[str, Module] = {}
    for key, table in raw.items():
        where = f"modules.{key}"
        if not isinstance(table, dict):
            problems.append(
                Problem(SITE_TOML, where, f"must be a table ([{where}]), not {toml_type(table)}")
            )
            continue
        problems += [unknown_key(f"{where}.{k}", k, known) for k in table if k not in known]
        values: dict[str, float] = {}
        for k in known:
            if k not in table:
                if k in MODULE_KEYS_REQUIRED:
                    problems.append(Problem(SITE_TOML, where, f"missing {k}"))
                continue
            try:
                v = setting_number(table[k], k)
            except ValueError as exc:
                problems.append(Problem(SITE_TOML, f"{where}.{k}", str(exc)))
                continue
            low, high = MODULE_KEY_RANGES.get(k, (0.0, math.inf))
            if k in MODULE_KEY_RANGES and not low <= v <= high:
                problems.append(
                    Problem(SITE_TOML, f"{where}.{k}", f"{v:g} must be within {low:g}–{high:g}")
                )
                continue
            if k not in MODULE_KEY_RANGES and v <= 0:
                problems.append(Problem(SITE_TOML, f"{where}.{k}", f"{v:g} must be > 0"))
                continue
            if k in MODULE_KEYS_INT and v != int(v):
                problems.append(Problem(SITE_TOML, f"{where}.{k}", f"{v:g} must be a whole number"))
                continue
            values[k] = v
        if "imp_a" in values and "isc_a" in values and values["imp_a"] > values["isc_a"]:
            problems.append(
                Problem(
                    SITE_TOML, where, f"imp_a {values['imp_a']:g} exceeds isc_a {values['isc_a']:g}"
                )
            )
        if "vmp_v" in values and "voc_v" in values and values["vmp_v"] > values["voc_v"]:
            problems.append(
                Problem(
                    SITE_TOML, where, f"vmp_v {values['vmp_v']:g} exceeds voc_v {values['voc_v']:g}"
                )
            )
        bif, isc = values.get("isc_bifacial_a", math.inf), values.get("isc_a", 0.0)
        if bif < isc:
            problems.append(
                Problem(
                    SITE_TOML,
                    f"{where}.isc_bifacial_a",
                    f"{bif:g} is below isc_a {isc:g} (the bifacial Isc includes the rear "
                    "side's gain)",
                )
            )
        if all(k in values for k in MODULE_KEYS_REQUIRED):
            own = ("max_fuse_a", "bifaciality", "isc_bifacial_a", "voc_temp_coeff_pct_per_c")
            extra = {k: values[k] for k in MODULE_KEYS_OPTIONAL if k not in own and k in values}
            modules[str(key)] = Module(
                key=str(key),
                isc_a=values["isc_a"],
                imp_a=values["imp_a"],
                voc_v=values["voc_v"],
                vmp_v=values["vmp_v"],
                per_string=int(values["per_string"]),
                max_fuse_a=values.get("max_fuse_a", math.nan),
                bifaciality=values.get("bifaciality", math.nan),
                isc_bifacial_a=values.get("isc_bifacial_a", math.nan),
                voc_temp_coeff_pct_per_c=values.get("voc_temp_coeff_pct_per_c", math.nan),
                extra=extra,
            )
    return modules, problems


def _labeller(frame: pd.DataFrame):
    """``label(i)``: the id of feature ``i`` of ``frame`` for messages, or ``#n`` (1-based
    position) when it has none. The ids are read once."""
    ids = frame["id"].to_numpy(dtype=object) if "id" in frame.columns else None

    def label(i: int) -> str:
        s = _id_text(ids[i]) if ids is not None else ""
        return s or f"#{i + 1}"

    return label


def _id_texts(values: np.ndarray) -> np.ndarray:
    """:func:`_id_text` of every value (object array; vectorised when all are text)."""
    if all(type(v) is str for v in values.tolist()):
        return np.strings.strip(values.astype(StringDType())).astype(object)
    return np.array([_id_text(v) for v in values.tolist()] + [""], dtype=object)[:-1]


def _id_text(v: Any) -> str:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v).strip()


def _check_geometry(name: str, frame: gpd.GeoDataFrame) -> tuple[gpd.GeoDataFrame, list[Problem]]:
    """Geometry presence, type and validity; single-part Multi* unpacked; Z dropped."""
    problems: list[Problem] = []
    frame = _normalise_columns(name, frame.reset_index(drop=True).copy())
    if len(frame) == 0:  # an empty layer: one problem at most, whatever its columns
        if name in NOT_EMPTY:
            problems.append(
                Problem(name, None, f"has no features: a site needs at least one {SINGULAR[name]}")
            )
        if "id" not in frame.columns:
            frame["id"] = pd.Series([], dtype=object)
    elif "id" not in frame.columns:
        problems.append(Problem(name, None, "no 'id' column"))
    geoms = np.asarray(frame.geometry.values, dtype=object)
    missing = shapely.is_missing(geoms) | shapely.is_empty(geoms)
    allowed = GEOMETRY_TYPES[name]
    # drop Z (and M) only where there is one: force_2d rebuilds every geometry
    extra = shapely.has_z(geoms)
    if hasattr(shapely, "has_m"):  # shapely 2.1 and later read M
        extra |= shapely.has_m(geoms)
    geoms = shapely.force_2d(geoms) if extra.any() else geoms.copy()
    # unpack single-part multi-geometries (common in GeoPackage exports)
    types = shapely.get_type_id(geoms)
    multi = np.isin(types, (4, 5, 6)) & ~missing
    if "MultiLineString" not in allowed:
        single = multi & (shapely.get_num_geometries(geoms) == 1)
        geoms[single] = shapely.get_geometry(geoms[single], 0)
    tid = shapely.get_type_id(geoms)
    with np.errstate(over="ignore", invalid="ignore"):  # huge coordinates: the problem
        valid = shapely.is_valid(geoms)  # is reported, not a numpy warning on the terminal
    # only features with a problem are looked at one by one
    allowed_ids = [k for k, v in TYPE_NAMES.items() if v in allowed]
    lines = np.isin(tid, [k for k, v in TYPE_NAMES.items() if v in LINE_TYPES])
    zero = np.zeros(len(geoms), dtype=bool)
    zero[lines] = shapely.length(geoms[lines]) <= 0
    bad = missing | ~np.isin(tid, allowed_ids) | ~valid | zero
    labeller = _labeller(frame)
    for i in np.flatnonzero(bad).tolist():
        label = labeller(i)
        if missing[i]:
            problems.append(Problem(name, label, "empty or missing geometry"))
            continue
        tname = TYPE_NAMES.get(int(tid[i]), "unknown")
        if tname not in allowed:
            problems.append(
                Problem(name, label, f"geometry is {tname}; expected {' or '.join(allowed)}")
            )
            continue
        if not valid[i]:
            with np.errstate(over="ignore", invalid="ignore"):
                reason = shapely.is_valid_reason(geoms[i])
            problems.append(Problem(name, label, f"invalid geometry: {reason}"))
            continue
        if tname in LINE_TYPES and shapely.length(geoms[i]) <= 0:
            problems.append(Problem(name, label, "line has zero length"))
    frame = frame.set_geometry(gpd.GeoSeries(geoms, crs=frame.crs), crs=frame.crs)
    return frame, problems


def _normalise_columns(name: str, frame: gpd.GeoDataFrame) -> gpd.GeoDataFrame:
    """Match attribute names case-insensitively and undo the Shapefile format's 10-character
    truncation (``max_strings`` is stored as ``max_string``), so no attribute is silently lost."""
    wanted = ["id", *(f.name for f in FIELDS[name])]
    present = {str(c).lower(): c for c in frame.columns if c != frame.geometry.name}
    renames = {}
    for key in wanted:
        if key in frame.columns:
            continue
        for alias in (key, key[:10]):
            col = present.get(alias)
            if col is not None and col not in renames and col not in wanted:
                renames[col] = key
                break
    return frame.rename(columns=renames) if renames else frame


def _check_attributes(name: str, frame: gpd.GeoDataFrame) -> tuple[gpd.GeoDataFrame, list[Problem]]:
    """Type and range of each attribute; returns a frame with typed columns."""
    problems: list[Problem] = []
    n = len(frame)
    if "id" in frame.columns:
        ids = _id_texts(frame["id"].to_numpy(dtype=object))
        for i in np.flatnonzero(ids == "").tolist():
            problems.append(Problem(name, f"#{i + 1}", "missing or empty id"))
        lengths = np.strings.str_len(ids.astype(StringDType()))
        for i in np.flatnonzero(lengths > MAX_ID_CHARS).tolist():
            problems.append(
                Problem(
                    name,
                    f"#{i + 1}",
                    f"id {ids[i][:20]!r}… has {lengths[i]:,} characters: at most "
                    f"{MAX_ID_CHARS} (ids name circuits, cable tags and spreadsheet cells)",
                    "id",
                )
            )
        frame["id"] = pd.Series(ids, index=frame.index, dtype=object)
    for fld in FIELDS[name]:
        if fld.name not in frame.columns:
            if fld.required and n:
                problems.append(Problem(name, None, f"no {fld.name!r} column (required)"))
            frame[fld.name] = _default_column(fld, n)
            continue
        out, bad = _parse_column(fld, frame[fld.name])
        if bad:
            labeller = _labeller(frame)
            problems += [
                Problem(name, labeller(i), message, attribute=fld.name) for i, message in bad
            ]
        if fld.kind in ("int", "float"):
            frame[fld.name] = pd.Series(out, index=frame.index, dtype=float)
            if fld.kind == "int" and fld.required and not frame[fld.name].isna().any():
                frame[fld.name] = frame[fld.name].astype(int)
        else:
            frame[fld.name] = pd.Series(out, index=frame.index, dtype=object)
    if name == "inverters" and "phases" in frame.columns:
        frame["phases"] = frame["phases"].fillna(3).astype(int)
    if name == "trenches" and n:
        both = frame["max_circuits"].notna() & frame["max_cable_sets"].notna()
        if both.any():
            labeller = _labeller(frame)
            problems += [
                Problem(
                    name,
                    labeller(i),
                    "gives both max_circuits and max_cable_sets: give the trench's capacity "
                    "one way",
                )
                for i in np.flatnonzero(both.to_numpy()).tolist()
            ]
    return frame, problems


def _parse_column(fld: Field, col: pd.Series) -> tuple[np.ndarray, list[tuple[int, str]]]:
    """:func:`_parse_value` of every value of ``col``: (typed values, [(position, message)]).

    Each distinct value (of one type: 1, 1.0 and "1" are three) is parsed once: a column holds
    few distinct values.
    """
    values = col.to_numpy(dtype=object)
    codes, reps = _distinct(values)
    parsed = [_parse_value(fld, v) for v in reps]
    out = np.empty(len(parsed), dtype=object)
    out[:] = [p[0] for p in parsed]
    messages = np.array([p[1] for p in parsed], dtype=object)
    bad_at = np.flatnonzero(messages[codes] != "") if len(codes) else np.zeros(0, dtype=np.int64)
    return out[codes], [(int(i), messages[codes[i]]) for i in bad_at.tolist()]


def _distinct(values: np.ndarray) -> tuple[np.ndarray, list[Any]]:
    """Group equal values of one type (missing values by their type: NaN with NaN, None with
    None): (group of each value, one value per group). When a value cannot be hashed, every
    value forms its own group."""
    n = len(values)
    try:
        vcode, _ = pd.factorize(values, use_na_sentinel=False)
    except TypeError:  # unhashable values
        return np.arange(n), list(values)
    tcode, types = pd.factorize(np.fromiter(map(type, values), dtype=object, count=n))
    _, first, group = np.unique(
        vcode.astype(np.int64) * max(len(types), 1) + tcode,
        return_index=True,
        return_inverse=True,
    )
    return group.reshape(-1), list(values[first])


def _default_column(fld: Field, n: int) -> pd.Series:
    if fld.kind in ("int", "float"):
        default = math.nan if fld.default is None else float(fld.default)
        return pd.Series(np.full(n, default), dtype=float)
    return pd.Series([fld.default] * n, dtype=object)


def _is_blank(v: Any) -> bool:
    return (
        v is None
        or (isinstance(v, float) and math.isnan(v))
        or (isinstance(v, str) and not v.strip())
    )


def _parse_value(fld: Field, v: Any) -> tuple[Any, str]:
    """(typed value, problem message or '')."""
    if _is_blank(v) or v is pd.NA:
        if fld.required:
            return (math.nan if fld.kind in ("int", "float") else None), f"{fld.name} is missing"
        if fld.kind in ("int", "float"):
            return (math.nan if fld.default is None else float(fld.default)), ""
        return fld.default, ""
    if fld.kind in ("int", "float"):
        try:
            x = to_number(v.strip() if isinstance(v, str) else v, fld.name)
        except ValueError:
            want = "an integer" if fld.kind == "int" else "a number"
            if example(fld.name) is not None:
                want += f" or a quantity such as {example(fld.name)!r}"
            return math.nan, f"{fld.name} is {show_value(v)}, expected {want}"
        if fld.kind == "int" and x != int(x):
            return math.nan, f"{fld.name} is {v!r}, expected a whole number"
        if fld.choices and str(int(x)) not in fld.choices:
            return math.nan, f"{fld.name} is {v!r}, expected one of {', '.join(fld.choices)}"
        if fld.low is not None and (x < fld.low or (fld.low_open and x == fld.low)):
            op = ">" if fld.low_open else "≥"
            return math.nan, f"{fld.name} is {x:g}, must be {op} {fld.low:g}"
        if fld.high is not None and x > fld.high:
            return math.nan, f"{fld.name} is {x:g}, must be ≤ {fld.high:g}"
        return x, ""
    s = _id_text(v)
    if fld.kind == "choice" and s.lower() not in fld.choices:
        return None, f"{fld.name} is {s!r}, expected one of {', '.join(fld.choices)}"
    return (s.lower() if fld.kind == "choice" else s), ""


def _check_ids_and_refs(
    frames: dict[str, gpd.GeoDataFrame],
    modules: dict[str, Module],
    unavailable: set[str] | frozenset[str] = frozenset(),
    declared: set[str] | None = None,
) -> list[Problem]:
    """Ids unique across layers; ``to`` points at an existing feature of the right kind;
    module keys exist; a combiner's ``max_strings`` is not exceeded by the rows assigned to it.

    One root cause gives one problem: features naming the same missing id (or module key)
    are reported together; ``to`` values pointing into a layer in ``unavailable`` (missing,
    unreadable, without ids: reported at that layer) are not reported, and those that could
    point into an empty layer are reported in one line. A module key that has a table in
    site.toml (``declared``) but was refused there is not reported again, nor is any key
    when site.toml has no module table at all (``declared`` None).
    """
    problems: list[Problem] = []
    owner: dict[str, str] = {}
    labels = {name: _labeller(frame) for name, frame in frames.items()}
    for name in LAYER_NAMES:
        frame = frames.get(name)
        if frame is None or "id" not in frame.columns:
            continue
        for s in frame["id"]:
            if not s:
                continue
            if s in owner:
                other = owner[s]
                where = "in this layer" if other == name else f"in layer {other!r}"
                problems.append(
                    Problem(
                        name,
                        s,
                        f"duplicate id: already used {where} (ids are unique across layers)",
                    )
                )
            else:
                owner[s] = name
    for name, frame in frames.items():
        for fld in FIELDS[name]:
            if fld.kind != "ref" or fld.name not in frame.columns:
                continue
            missing: dict[str, list[int]] = {}
            wrong: dict[str, list[int]] = {}
            for i, target in enumerate(frame[fld.name]):
                if not target:
                    continue
                kind = owner.get(target)
                if kind is None:
                    missing.setdefault(target, []).append(i)
                elif kind not in fld.targets:
                    wrong.setdefault(target, []).append(i)
            for target, at in wrong.items():
                kind = SINGULAR[owner[target]]
                want = " or ".join(SINGULAR[t] for t in fld.targets)
                problems.append(
                    _grouped(
                        name,
                        [labels[name](i) for i in at],
                        f"{fld.name} = {target!r}",
                        f"is {_a(kind)}; expected {_a(want)}",
                        sep=" ",
                    )
                )
            if not missing or set(fld.targets) & unavailable:
                continue
            empty = [t for t in fld.targets if t not in frames or len(frames[t]) == 0]
            if empty:
                at = sorted(i for rows in missing.values() for i in rows)
                why = " and ".join(
                    f"the {t} layer is empty" if t in frames else f"the site has no {t} layer"
                    for t in empty
                )
                if len(at) == 1:
                    problems.append(
                        Problem(
                            name,
                            labels[name](at[0]),
                            f"{fld.name} = {next(iter(missing))!r}: no feature has that id — {why}",
                        )
                    )
                    continue
                which = _listed([labels[name](i) for i in at])
                problems.append(
                    Problem(
                        name,
                        None,
                        f"{fld.name} of {len(at)} {name} ({which}) "
                        f"names {_listed([repr(t) for t in missing])}: no feature has "
                        f"{'that id' if len(missing) == 1 else 'these ids'} — {why}",
                    )
                )
                continue
            for target, at in missing.items():
                problems.append(
                    _grouped(
                        name,
                        [labels[name](i) for i in at],
                        f"{fld.name} = {target!r}",
                        "no feature has that id",
                    )
                )
    rows = frames.get("rows")
    if rows is not None and "module" in rows.columns and declared is not None:
        known = ", ".join(sorted(modules)) or "none"
        unknown: dict[str, list[int]] = {}
        for i, key in enumerate(rows["module"]):
            if key and key not in modules and key not in declared:
                unknown.setdefault(key, []).append(i)
        for key, at in unknown.items():
            problems.append(
                _grouped(
                    "rows",
                    [labels["rows"](i) for i in at],
                    f"module {key!r}",
                    f"is not in site.toml [modules] (known: {known})",
                    sep=" ",
                )
            )
    combiners = frames.get("combiners")
    if combiners is not None and "id" in combiners.columns and "to" in combiners.columns:
        problems += _check_combiner_tree(combiners, rows, labels["combiners"])
    if (
        rows is not None
        and combiners is not None
        and "to" in rows.columns
        and "id" in combiners.columns
        and len(combiners)
    ):
        strings = pd.to_numeric(rows["strings"], errors="coerce").fillna(0)
        per_target = strings.groupby(rows["to"]).sum()
        assigned = per_target.reindex(combiners["id"]).fillna(0.0).to_numpy(dtype=float)
        cap_all = combiners["max_strings"].to_numpy(dtype=float)
        over = np.flatnonzero(np.isfinite(cap_all) & (assigned > cap_all))
        for i in over.tolist():
            n, cap = float(assigned[i]), float(cap_all[i])
            problems.append(
                Problem(
                    "combiners",
                    labels["combiners"](i),
                    f"{n:g} strings are assigned to it but max_strings is {cap:g}",
                )
            )
    return problems


def _check_combiner_tree(
    combiners: pd.DataFrame, rows: pd.DataFrame | None, label
) -> list[Problem]:
    """Combiners whose ``to`` names another combiner (a sub-array combiner): no cycle, at most
    :data:`MAX_COMBINER_LEVELS` combiners from a row to an inverter, and no combiner that joins
    both strings (rows) and other combiners (a combiner collects one level)."""
    problems: list[Problem] = []
    ids = combiners["id"].tolist()
    known = set(ids)
    up = {c: t for c, t in zip(ids, combiners["to"].tolist(), strict=True) if t in known}
    if not up:
        return problems
    position = {c: i for i, c in enumerate(ids)}
    reported: set[str] = set()
    for start in ids:
        chain, c = [start], start
        while c in up and len(chain) <= len(ids):
            c = up[c]
            if c in chain:  # a cycle: report it once, by its members
                cycle = chain[chain.index(c) :]
                if not reported & set(cycle):
                    reported |= set(cycle)
                    problems.append(
                        Problem(
                            "combiners",
                            label(position[cycle[0]]),
                            "`to` makes a cycle of combiners: " + " → ".join([*cycle, cycle[0]]),
                        )
                    )
                break
            chain.append(c)
        else:
            if len(chain) > MAX_COMBINER_LEVELS and start not in set(up.values()):
                problems.append(
                    Problem(
                        "combiners",
                        label(position[start]),
                        f"{len(chain)} combiners in a row ({' → '.join(chain)}); at most "
                        f"{MAX_COMBINER_LEVELS} are planned",
                    )
                )
    if rows is not None and "to" in rows.columns and "id" in rows.columns:
        fed = set(up.values())
        for target, group in rows.groupby("to", sort=True):
            if target in fed:
                feeders = sorted(c for c, t in up.items() if t == target)
                problems.append(
                    Problem(
                        "combiners",
                        label(position[target]),
                        f"joins both strings (rows {_listed(sorted(map(str, group['id'])))}) "
                        f"and other combiners ({_listed(feeders)}); a combiner collects either "
                        "strings or sub-arrays",
                    )
                )
    return problems


def _listed(items: list[str], most: int = 5) -> str:
    """``items`` joined by commas, the first ``most`` of them, then how many more."""
    shown = ", ".join(items[:most])
    return shown + (f" and {len(items) - most} more" if len(items) > most else "")


def _grouped(layer: str, labels: list[str], subject: str, message: str, sep: str = ": ") -> Problem:
    """One problem for every feature of ``layer`` (``labels``) with the same fault: on the
    feature when it is one (``subject`` + ``sep`` + ``message``), else on the layer, naming
    how many and which."""
    if len(labels) == 1:
        return Problem(layer, labels[0], f"{subject}{sep}{message}")
    return Problem(
        layer, None, f"{subject} of {len(labels)} {layer} ({_listed(labels)}){sep}{message}"
    )
