"""The plan cache: re-planning into the same output folder reuses what the inputs did not change.

Where it lives
    ``OUT/.routeplan-cache/`` inside the output folder: ``manifest.json`` and one file per
    stored stage result. It is written with the outputs, into the output folder's work
    folder, and committed with them (all or nothing, :mod:`routeplan.folder`), so a cache
    always belongs to the outputs beside it; new entries are packed in a staging folder inside
    that work folder. A watching process (:mod:`routeplan.watch`) commits its outputs first
    and its new entries just after, in a second commit of the same run, the folder still
    locked (:meth:`PlanCache.save_deferred`): a kill between the two leaves outputs whose
    cache lacks those entries, so the next run computes them afresh. ``routeplan plan
    --no-cache`` neither reads nor writes it (the previous run's cache files are then
    removed with its outputs).

What is reused, and when (every key is a SHA-256 of everything the stage's result depends on)
    ``site``
        The validated :class:`layers.Site`. Key: the environment (below); the resolved site
        folder (the site's default name); which file each layer comes from (``[layers]``,
        ``site.gpkg`` or ``<layer>.<ext>``, as :func:`layers.sources.locate_layers` finds them
        now); the SHA-256 of every file each layer's reader may open
        (:func:`layers.sources.source_files`: side files beside the layer wherever it lies, a
        GeoPackage's write-ahead log, a VRT's sources, a folder dataset's files — a layer whose
        files cannot all be listed means no cache for the run, :attr:`PlanCache.bypassed`); and
        site.toml *without* its ``[design]`` and ``[allowances]`` tables. Those two are
        routeplan's (``layers`` never reads them: :class:`layers.model.Site`), so a design
        change keeps the validated layers; the cached Site then gets the new config.
    ``route``
        The :class:`routeplan.routing.RoutePlan`. Key: the ``site`` key and every routing
        parameter (snap and node tolerances, allowances, trench defaults).
    ``size``
        calc's :class:`calc.SizingResult`. Key: the ``route`` key, calc's design parameters
        and the rule set. (Sizing is coupled across the plant through trench grouping and the
        shared DC drop budget, so it is reused whole or recomputed whole.)
    ``noding`` (a memo, not a stage)
        :class:`routeplan.network.NetworkMemo`: the last run's trench noding and each
        equipment feature's nearest part. It is offered whatever its key
        (:meth:`PlanCache.latest`) and validates itself: the noding is taken only for trenches
        of the same fingerprint (ids, attributes, exact geometry, tolerance, defaults), a
        feature's nearest part only for exactly the same geometry at the same position and
        the same ``snap_m``. A run whose route stage is reused keeps it for a later run
        (:meth:`PlanCache.carry`).
    ``outputs``
        The files written last time. Key: the ``size`` key, the whole site.toml, the input
        files' digest and the map options. On a hit, each file is reused only if its SHA-256
        still matches the one recorded (a file edited by hand is written anew). On a miss the
        writers still reuse the last files row by row (:mod:`routeplan.outputs.reuse`),
        through the records they keep beside them (``index.npz``: row hashes and chunk
        offsets; ``map.npz``: the map's tiles; ``report.npz``: the report's charts;
        :meth:`PlanCache.output_aux`), again only from files whose SHA-256 is the one recorded.

    The tables (schedule, trench schedule, quantities, summary) are recomputed from the stage
    results every time (well under a second at 1 GW).

Never stale
    The *environment* is part of every key: the cache format, routeplan's version, a digest
    of the source and data files of ``layers``, ``routeplan`` and ``calc`` (an edited rule
    table or function invalidates everything), and the versions of Python, numpy, scipy,
    pandas, geopandas, shapely/GEOS, pyproj/PROJ and pyogrio/GDAL. A manifest that does not
    parse, is of another format or environment, an entry whose file is missing, whose
    SHA-256 differs from the manifest's (corrupt or truncated) or that does not decode, is a
    miss: the stage is computed afresh. Nothing from the cache is ever trusted more than a
    cold run.

Safe to open
    Entries are numpy ``.npz`` archives read with ``allow_pickle=False`` plus JSON: no
    pickle, so a cache copied in from elsewhere cannot run code. Only the classes listed in
    :data:`_CLASSES` are rebuilt, through their constructors.
"""

from __future__ import annotations

import dataclasses
import hashlib
import io
import json
import os
import platform
import shutil
import tempfile
import weakref
from collections.abc import Iterable
from functools import lru_cache
from pathlib import Path
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely

import calc
from layers.model import Module, Site
from layers.sources import SITE_TOML, layer_file, source_files

from . import __version__, parallel
from .folder import OutputFolder, file_sha256
from .network import NetworkMemo, NodedTrenches, TrenchDefaults, TrenchNetwork
from .routing import RouteParams, RoutePlan

CACHE_DIR = ".routeplan-cache"
MANIFEST = "manifest.json"
#: the writers' records kept beside the output files (see PlanCache.output_aux)
AUX: tuple[str, ...] = ("index", "map", "report")
#: bump when what is stored, or how, changes
FORMAT = 2
STAGES: tuple[str, ...] = ("site", "route", "size")

#: the classes an entry may rebuild (by these names only)
_CLASSES: dict[str, type] = {
    "Site": Site,
    "Module": Module,
    "RoutePlan": RoutePlan,
    "RouteParams": RouteParams,
    "TrenchDefaults": TrenchDefaults,
    "TrenchNetwork": TrenchNetwork,
    "NodedTrenches": NodedTrenches,
    "NetworkMemo": NetworkMemo,
    "SizingResult": calc.SizingResult,
}


@dataclasses.dataclass
class OutputReuse:
    """How much of the last run's output files the writers reused (for reports)."""

    #: features of routes.gpkg rewritten by the update (-1: the file was written whole)
    gpkg_rows_rewritten: int = -1
    #: chunks of rows copied from the last file, by file name (CSV files and the workbook)
    chunks_copied: dict[str, int] = dataclasses.field(default_factory=dict)
    #: tiles of map.html whose scripts were reused (-1: unknown, the map's child failed)
    map_tiles_reused: int = -1

    @property
    def updated(self) -> bool:
        """Whether anything was reused row by row."""
        return (
            self.gpkg_rows_rewritten >= 0
            or any(n > 0 for n in self.chunks_copied.values())
            or self.map_tiles_reused > 0
        )


class UncacheableError(Exception):
    """A value the cache cannot store exactly (it is then simply not stored)."""


# ------------------------------------------------------------------------------------------
# keys


def digest(*parts: Any) -> str:
    """SHA-256 of the JSON of ``parts`` (floats by their exact ``repr``)."""
    text = json.dumps(parts, sort_keys=True, default=repr, allow_nan=True, ensure_ascii=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


@lru_cache(maxsize=1)
def environment() -> str:
    """Digest of everything besides the inputs that a result depends on (see the module doc)."""
    import geopandas
    import pyogrio
    import scipy

    root = Path(__file__).resolve().parents[1]
    sources = hashlib.sha256()
    for package in ("layers", "routeplan", "calc"):
        for path in sorted((root / package).rglob("*")):
            if path.suffix in (".py", ".csv", ".txt", ".css") and path.is_file():
                sources.update(str(path.relative_to(root)).encode())
                sources.update(path.read_bytes())
    versions = {
        "format": FORMAT,
        "routeplan": __version__,
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "pandas": pd.__version__,
        "geopandas": geopandas.__version__,
        "shapely": shapely.__version__,
        "geos": shapely.geos_version_string,
        "pyproj": pyproj.__version__,
        "proj": pyproj.proj_version_str,
        "pyogrio": pyogrio.__version__,
        "gdal": pyogrio.__gdal_version_string__,
    }
    return digest(versions, sources.hexdigest())


def input_files(
    root: Path, sources: dict[str, str], partial: bool = False
) -> dict[str, str] | None:
    """SHA-256 of site.toml and of every file the layers are read from
    (:func:`layers.sources.source_files`: a Shapefile's side files, a GeoPackage's
    write-ahead log, a VRT's sources…), by path relative to the site folder (absolute for a
    file outside it) — the ``inputs`` digest of summary.json. When a layer's files cannot
    all be listed (see :func:`uncacheable_layers`): None, or with ``partial`` the file the
    layer names alone."""
    root = Path(root)
    paths = {root / SITE_TOML}
    for spec in sources.values():
        files = source_files(root, spec)
        if files is None:
            if not partial:
                return None
            files = [layer_file(root, spec)]
        paths.update(files)
    out = {}
    for path in sorted(paths):
        if path.is_file():
            out[_relative(root, path)] = file_sha256(path)
    return out


def uncacheable_layers(root: Path, sources: dict[str, str]) -> list[str]:
    """The layers whose files cannot all be listed (:func:`layers.sources.source_files`):
    a run that reads them keeps no cache, since an edit of an unlisted file could not be
    seen."""
    return [name for name, spec in sources.items() if source_files(Path(root), spec) is None]


def _relative(root: Path, path: Path) -> str:
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return str(path.resolve())


def site_key(root: Path, config: dict[str, Any], sources: dict[str, str]) -> str | None:
    """Key of the validated site (see the module docstring); None when it cannot be made
    safely: a layer whose files cannot all be listed (:func:`uncacheable_layers`)."""
    files = input_files(root, sources)
    if files is None:
        return None
    files.pop(SITE_TOML, None)  # its layer tables are keyed below; [design] is not the site's
    layer_config = {k: v for k, v in config.items() if k not in ("design", "allowances")}
    return digest("site", environment(), str(Path(root).resolve()), sources, files, layer_config)


# ------------------------------------------------------------------------------------------
# packing: values ⇄ (JSON metadata, numpy arrays), no pickle


class _Packer:
    def __init__(self) -> None:
        self.arrays: dict[str, np.ndarray] = {}

    def array(self, a: np.ndarray) -> str:
        name = f"a{len(self.arrays)}"
        self.arrays[name] = np.ascontiguousarray(a)
        return name

    def objects(self, values: Iterable[Any]) -> dict:
        """Strings, None, NaN and pd.NA (object arrays, string columns) as one UTF-8 blob with
        each string's length in characters and a code per element (0 str, 1 None, 2 NaN,
        3 pd.NA)."""
        if isinstance(values, np.ndarray):
            arr = values.astype(object, copy=False).ravel()
        else:
            items = list(values)
            arr = np.empty(len(items), dtype=object)
            arr[:] = items
        missing = pd.isna(arr) if len(arr) else np.zeros(0, dtype=bool)
        kind = np.zeros(len(arr), dtype=np.int8)
        for i in np.flatnonzero(missing).tolist():
            v = arr[i]
            kind[i] = 1 if v is None else 3 if v is pd.NA else 2
            if kind[i] == 2 and not (isinstance(v, float) and v != v):
                raise UncacheableError(f"missing value of type {type(v).__name__}")
        present = arr[~missing]
        if len(present) and pd.api.types.infer_dtype(present, skipna=False) != "string":
            raise UncacheableError("object values that are not all strings")
        codes, uniques = pd.factorize(present)  # each distinct string once
        parts = [str(u) for u in uniques]
        lengths = np.fromiter(map(len, parts), dtype=np.int64, count=len(parts))
        blob = np.frombuffer("".join(parts).encode("utf-8"), dtype=np.uint8)
        code = np.full(len(arr), -1, dtype=np.int64)
        code[~missing] = codes
        return {
            "blob": self.array(blob),
            "len": self.array(lengths),
            "code": self.array(code),
            "kind": self.array(kind),
        }

    def pack(self, v: Any) -> Any:
        if v is None or isinstance(v, bool | str):
            return {"t": "v", "v": v}
        if isinstance(v, int):
            return {"t": "int", "v": str(v)}
        if isinstance(v, float):
            return {"t": "float", "v": float.hex(v)}
        if isinstance(v, np.generic):
            return {"t": "np", "dtype": v.dtype.str, "a": self.array(np.asarray(v).reshape(1))}
        if isinstance(v, Path):
            return {"t": "path", "v": str(v)}
        if isinstance(v, pyproj.CRS):
            return {"t": "crs", "v": v.srs or v.to_wkt()}
        if isinstance(v, list | tuple):
            return {"t": type(v).__name__, "v": [self.pack(x) for x in v]}
        if isinstance(v, dict) and _is_str_tuple_index(v):
            keys = list(v)
            return {
                "t": "tupleindex",
                "k": [self.objects([k[j] for k in keys]) for j in range(len(keys[0]))],
                "v": self.array(np.fromiter(v.values(), dtype=np.int64, count=len(v))),
            }
        if isinstance(v, dict):
            return {
                "t": "dict",
                "k": [self.pack(k) for k in v],
                "v": [self.pack(x) for x in v.values()],
            }
        if isinstance(v, np.ndarray):
            if v.dtype == object:
                return {"t": "ndobj", "shape": list(v.shape), **self.objects(v.ravel().tolist())}
            if v.dtype.kind not in "biufUS":
                raise UncacheableError(f"array of dtype {v.dtype}")
            return {"t": "nd", "a": self.array(v)}
        if isinstance(v, pd.DataFrame):
            return self.frame(v)
        if dataclasses.is_dataclass(v) and type(v).__name__ in _CLASSES:
            if _CLASSES[type(v).__name__] is not type(v):
                raise UncacheableError(f"class {type(v)}")
            fields = {
                f.name: self.pack(getattr(v, f.name))
                for f in dataclasses.fields(v)
                if not f.metadata.get("transient")  # left to its default
            }
            return {"t": "dc", "cls": type(v).__name__, "f": fields}
        raise UncacheableError(f"value of type {type(v).__name__}")

    def frame(self, f: pd.DataFrame) -> dict:
        if not isinstance(f.index, pd.RangeIndex) or f.index.start != 0 or f.index.step != 1:
            raise UncacheableError("frame index is not 0..n-1")
        if f.columns.has_duplicates or not all(isinstance(c, str) for c in f.columns):
            raise UncacheableError("frame columns")
        geo = isinstance(f, gpd.GeoDataFrame)
        geometry = getattr(f, "active_geometry_name", None) if geo else None
        if geometry is not None and geometry not in f.columns:
            geometry = None
        cols = []
        for name in f.columns:
            s = f[name]
            if isinstance(s.dtype, gpd.array.GeometryDtype):
                g = np.asarray(s.array, dtype=object)
                wkb = shapely.to_wkb(g, output_dimension=3, flavor="extended", include_srid=False)
                col = {"col": "geometry", "crs": self.pack(s.crs), **self.objects_bytes(wkb)}
            elif s.dtype == object or isinstance(s.dtype, pd.StringDtype):
                col = {
                    "col": "objects",
                    "dtype": str(s.dtype),
                    **self.objects(s.to_numpy(dtype=object)),
                }
                if isinstance(s.dtype, pd.StringDtype):
                    col["storage"] = s.dtype.storage
                    col["na"] = "nan" if s.dtype.na_value is not pd.NA else "NA"
            elif s.dtype.kind in "biuf" and isinstance(s.dtype, np.dtype):
                col = {"col": "nd", "a": self.array(s.to_numpy())}
            else:
                raise UncacheableError(f"column {name!r} of dtype {s.dtype}")
            cols.append({"name": name, **col})
        crs = self.pack(f.crs) if geo else None
        return {"t": "frame", "n": len(f), "geo": geo, "geometry": geometry, "crs": crs, "c": cols}

    def objects_bytes(self, values: np.ndarray) -> dict:
        missing = np.array([v is None for v in values.tolist()], dtype=bool)
        parts = [b"" if v is None else v for v in values.tolist()]
        lengths = np.fromiter(map(len, parts), dtype=np.int64, count=len(parts))
        blob = np.frombuffer(b"".join(parts), dtype=np.uint8)
        return {
            "blob": self.array(blob),
            "len": self.array(lengths),
            "missing": self.array(missing),
        }


class _Unpacker:
    def __init__(self, arrays: dict[str, np.ndarray]) -> None:
        self.arrays = arrays

    def _pieces(self, meta: dict) -> list[bytes]:
        blob = self.arrays[meta["blob"]].tobytes()
        ends = np.cumsum(self.arrays[meta["len"]]).tolist()
        starts = [0, *ends[:-1]]
        return [blob[a:b] for a, b in zip(starts, ends, strict=True)]

    def objects(self, meta: dict) -> list[Any]:
        kind = self.arrays[meta["kind"]]
        text = self.arrays[meta["blob"]].tobytes().decode("utf-8")
        ends = np.cumsum(self.arrays[meta["len"]]).tolist()
        starts = [0, *ends[:-1]]
        uniques = np.empty(len(ends) + 1, dtype=object)
        uniques[:-1] = [text[a:b] for a, b in zip(starts, ends, strict=True)]
        out = uniques[self.arrays[meta["code"]]]  # code -1: the trailing slot, filled below
        fill = {1: None, 2: float("nan"), 3: pd.NA}
        for i in np.flatnonzero(kind).tolist():
            out[i] = fill[int(kind[i])]
        return out.tolist()

    def unpack(self, m: Any) -> Any:
        t = m["t"]
        if t == "v":
            return m["v"]
        if t == "int":
            return int(m["v"])
        if t == "float":
            return float.fromhex(m["v"])
        if t == "np":
            return self.arrays[m["a"]].astype(np.dtype(m["dtype"]), copy=False)[0]
        if t == "path":
            return Path(m["v"])
        if t == "crs":
            return pyproj.CRS.from_user_input(m["v"])
        if t == "list":
            return [self.unpack(x) for x in m["v"]]
        if t == "tuple":
            return tuple(self.unpack(x) for x in m["v"])
        if t == "tupleindex":
            columns = [self.objects(k) for k in m["k"]]
            return dict(zip(zip(*columns, strict=True), self.arrays[m["v"]].tolist(), strict=True))
        if t == "dict":
            return {self.unpack(k): self.unpack(v) for k, v in zip(m["k"], m["v"], strict=True)}
        if t == "nd":
            return self.arrays[m["a"]]
        if t == "ndobj":
            return np.array([*self.objects(m), None], dtype=object)[:-1].reshape(m["shape"])
        if t == "frame":
            return self.frame(m)
        if t == "dc":
            cls = _CLASSES[m["cls"]]
            return cls(**{k: self.unpack(v) for k, v in m["f"].items()})
        raise ValueError(f"unknown packed type {t!r}")

    def frame(self, m: dict) -> pd.DataFrame:
        data: dict[str, Any] = {}
        for c in m["c"]:
            if c["col"] == "geometry":
                missing = self.arrays[c["missing"]]
                wkb = np.array([*self._pieces(c), None], dtype=object)[:-1]
                wkb[missing] = None
                data[c["name"]] = gpd.GeoSeries(
                    shapely.from_wkb(wkb), crs=self.unpack(c["crs"]), name=c["name"]
                )
            elif c["col"] == "objects":
                values = np.array([*self.objects(c), None], dtype=object)[:-1]
                if c["dtype"] == "object":
                    data[c["name"]] = pd.Series(values, dtype=object)
                else:
                    na = np.nan if c["na"] == "nan" else pd.NA
                    dtype = pd.StringDtype(storage=c["storage"], na_value=na)
                    data[c["name"]] = pd.Series(values, dtype=dtype)
            else:
                data[c["name"]] = pd.Series(self.arrays[c["a"]])
        frame = pd.DataFrame(data, index=pd.RangeIndex(m["n"]))
        if not m["geo"]:
            return frame
        if m["geometry"] is None:
            crs = self.unpack(m["crs"]) if m["crs"] is not None else None
            return gpd.GeoDataFrame(frame, crs=crs)
        return gpd.GeoDataFrame(frame, geometry=m["geometry"])


def _is_str_tuple_index(d: dict) -> bool:
    """A large mapping of equal-length tuples of str to int (e.g. the network's tap index)."""
    if len(d) < 64:
        return False
    first = next(iter(d))
    if not isinstance(first, tuple) or not first:
        return False
    n = len(first)
    return all(
        isinstance(k, tuple) and len(k) == n and all(type(x) is str for x in k) for k in d
    ) and all(type(x) is int for x in d.values())


def dumps(value: Any) -> bytes:
    """``value`` as the bytes of an ``.npz`` archive (no pickle).

    Raises :class:`UncacheableError` for a value that cannot be stored exactly.
    """
    p = _Packer()
    meta = json.dumps(p.pack(value)).encode("utf-8")
    buf = io.BytesIO()
    np.savez(buf, __meta__=np.frombuffer(meta, dtype=np.uint8), **p.arrays)
    return buf.getvalue()


def loads(data: bytes | Path) -> Any:
    """The value of :func:`dumps`' bytes (or of a file holding them)."""
    src = io.BytesIO(data) if isinstance(data, bytes) else data
    with np.load(src, allow_pickle=False) as z:
        arrays = {k: z[k] for k in z.files}
    meta = json.loads(arrays.pop("__meta__").tobytes().decode("utf-8"))
    return _Unpacker(arrays).unpack(meta)


# ------------------------------------------------------------------------------------------
# the cache of one output folder


class Resident:
    """The last run's cache values, as decoded objects, kept by a process that plans into the
    same output folder again and again (``routeplan plan --watch``, :mod:`routeplan.watch`).

    A :class:`PlanCache` opened with it takes an entry from memory instead of reading,
    checking and decoding its file, when the folder's manifest still records that entry under
    the same key and SHA-256 (so it is the value that file holds: the manifest and the file
    are written by the run that kept it) and the file is still there (the next run links
    it). Only the last run's values are kept (:meth:`keep`), those the run computed or read;
    values are shared between runs, so nothing may change them in place (the plan code
    builds new arrays and frames; the watch tests re-plan edits and undo them and compare
    every output with cold runs)."""

    def __init__(self) -> None:
        self._entries: dict[tuple[str, str, str], Any] = {}
        self._aux: dict[tuple[str, str], Any] = {}
        self._derived: dict[str, tuple[Any, Any]] = {}
        #: what the writers keep in this process alone, by name (not from the cache's files;
        #: e.g. ``rows``: the last tables' values and row hashes,
        #: :class:`routeplan.outputs.reuse.HashMemo`)
        self.memos: dict[str, Any] = {}

    def derived(self, name: str, key: Any) -> Any | None:
        """A value computed from the kept entries (``baseline``: the last plan made ready for
        a local re-plan, :func:`routeplan.localplan.from_cache`) under ``key`` (the keys of
        the entries it comes from and anything else it depends on), or None."""
        kept = self._derived.get(name)
        return kept[1] if kept is not None and kept[0] == key else None

    def keep_derived(self, name: str, key: Any, value: Any) -> None:
        """Keep ``value`` as :meth:`derived` ``name`` under ``key`` (one per name)."""
        _freeze(value)
        self._derived[name] = (key, value)

    def entry(self, stage: str, key: str, sha256: Any) -> Any | None:
        """The kept value of the entry ``stage`` stored under ``key`` with ``sha256``."""
        return self._entries.get((stage, key, str(sha256)))

    def aux(self, name: str, sha256: Any) -> Any | None:
        """The kept writer's record ``name`` whose file has ``sha256``."""
        return self._aux.get((name, str(sha256)))

    def load_aux(self, cache: PlanCache, names: Iterable[str]) -> None:
        """Read and keep the writers' records ``names`` of ``cache``'s folder now (a watching
        process, while it waits): the processes the next run forks to write (the map, the
        report) then find them in memory instead of reading and decoding their files."""
        for name in names:
            e = cache._outputs().get("aux", {}).get(name)
            value = cache.output_aux(name)
            if value is not None and isinstance(e, dict):
                _freeze(value)
                self._aux[(name, str(e.get("sha256")))] = value

    def keep(self, cache: PlanCache) -> None:
        """Keep the values of the entries and records ``cache`` saved (:meth:`PlanCache.save`)
        that its run computed or read, in place of the last run's."""
        manifest = cache._saved
        entries, aux = {}, {}
        for stage, e in manifest.get("entries", {}).items():
            value = cache._new.get(stage, cache._values.get(stage))
            if value is None:  # carried without being read: kept if this process has it
                value = self.entry(stage, e["key"], e["sha256"])
            if value is not None:
                entries[(stage, e["key"], e["sha256"])] = value
        for name, e in manifest.get("outputs", {}).get("aux", {}).items():
            value = cache._aux_values.get(name)
            if value is None:
                value = self.aux(name, e["sha256"])
            if value is not None:
                aux[(name, e["sha256"])] = value
        for value in (*entries.values(), *aux.values()):
            _freeze(value)
        self._entries, self._aux = entries, aux


def _freeze(value: Any, depth: int = 0) -> None:
    """Make the numpy arrays of a kept value read-only (in dataclass fields, dicts, lists and
    tuples, a few levels deep): code that would change a value :class:`Resident` shares
    between runs in place fails loudly instead of changing the next run's input."""
    if depth > 4:
        return
    if isinstance(value, np.ndarray):
        value.flags.writeable = False
    elif dataclasses.is_dataclass(value) and not isinstance(value, type):
        for f in dataclasses.fields(value):
            _freeze(getattr(value, f.name, None), depth + 1)
    elif isinstance(value, dict):
        for v in value.values():
            _freeze(v, depth + 1)
    elif isinstance(value, (list, tuple)):
        for v in value:
            _freeze(v, depth + 1)


class PlanCache:
    """The cache of the output folder ``out_dir`` for one run (see the module docstring).

    ``get(stage, key)`` returns the stored value or None (a miss); ``put(stage, key, value)``
    marks a value to store. :meth:`save` writes the manifest and the entries into a new
    output folder (the temporary one of the all-or-nothing write); entries that were reused
    are hard-linked from the old folder when possible, never copied through memory.
    """

    def __init__(
        self,
        out: Path | str | OutputFolder,
        resident: Resident | None = None,
        *,
        defer: bool = False,
    ) -> None:
        #: the values a watching process kept from its last run (:class:`Resident`)
        self.resident = resident
        #: pack the new entries only once the outputs are committed (:meth:`save_deferred`):
        #: a watching process, whose designer waits for the outputs, not for the cache
        self.defer = defer
        self._deferred: list[str] = []  # stages save() left to save_deferred()
        #: jobs still writing writers' records into the second commit's work folder
        #: (:meth:`routeplan.folder.OutputFolder.next_work`: the map's memo), for
        #: :meth:`save_deferred` to wait for
        self.later_jobs: list[parallel.Job] = []
        #: the open output folder, whose work folder holds the staging folder (None: a
        #: cache opened on a path, staged in the system's temporary folder)
        self.folder = out if isinstance(out, OutputFolder) else None
        self.out_dir = out.real if isinstance(out, OutputFolder) else Path(out)
        self.dir = self.out_dir / CACHE_DIR
        #: why this run keeps no cache (e.g. a layer whose files cannot all be listed)
        self.bypassed = ""
        self.reused: dict[str, bool] = {}
        #: how much of the last run's output files the writers copied (for reports)
        self.output_reuse = OutputReuse()
        self.keys: dict[str, str] = {}
        self._new: dict[str, Any] = {}
        self._jobs: dict[str, parallel.Job] = {}
        self._staging: Path | None = None
        self._finalizer: weakref.finalize | None = None  # stops the jobs, removes the staging
        self._carried: set[str] = set()
        self._values: dict[str, Any] = {}  # values read this run, by stage (for Resident)
        self._aux_values: dict[str, Any] = {}  # writers' records read or saved this run
        self._saved: dict = {}  # the manifest save() wrote
        self._manifest = self._read_manifest()

    def _read_manifest(self) -> dict:
        try:
            m = json.loads((self.dir / MANIFEST).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return {}
        if not isinstance(m, dict) or m.get("format") != FORMAT:
            return {}
        if m.get("environment") != environment():
            return {}
        if not isinstance(m.get("entries"), dict):
            return {}
        return m

    @property
    def found(self) -> bool:
        """Whether the output folder held a usable cache (same format and environment)."""
        return bool(self._manifest)

    def _entry(self, stage: str, key: str) -> Path | None:
        e = self._manifest.get("entries", {}).get(stage)
        if not isinstance(e, dict) or e.get("key") != key or not isinstance(e.get("file"), str):
            return None
        path = self.dir / Path(e["file"]).name
        try:
            if file_sha256(path) != e.get("sha256"):
                return None
        except OSError:
            return None
        return path

    def _in_memory(self, stage: str, key: str) -> Any | None:
        """The value of the entry ``stage`` under ``key`` kept by :attr:`resident`, when the
        manifest still records that entry (same key and SHA-256) and its file is there."""
        e = self._manifest.get("entries", {}).get(stage)
        if self.resident is None or not isinstance(e, dict) or e.get("key") != key:
            return None
        if not isinstance(e.get("file"), str) or not (self.dir / Path(e["file"]).name).is_file():
            return None
        return self.resident.entry(stage, key, e.get("sha256"))

    def _load(self, stage: str, key: str) -> Any | None:
        value = self._in_memory(stage, key)
        if value is None:
            path = self._entry(stage, key)
            try:
                value = loads(path) if path is not None else None
            except Exception:  # a damaged entry is a miss, never an error
                value = None
        if value is not None:
            self._values[stage] = value
        return value

    def get(self, stage: str, key: str) -> Any | None:
        """The value stored for ``stage`` under ``key``, or None."""
        self.keys[stage] = key
        value = self._load(stage, key)
        self.reused[stage] = value is not None
        return value

    def last_key(self, stage: str) -> str | None:
        """The key the last run stored ``stage`` under (None if it stored none)."""
        e = self._manifest.get("entries", {}).get(stage)
        key = e.get("key") if isinstance(e, dict) else None
        return key if isinstance(key, str) else None

    def latest(self, stage: str) -> Any | None:
        """The value the last run stored for ``stage``, whatever its key (None if there is
        none, or it is damaged): for a *memo* (``noding``), a value that says itself which of
        its parts are still valid. Records nothing: :meth:`put` a new value, or
        :meth:`carry` this one, to keep one for the next run."""
        key = self.last_key(stage)
        return self._load(stage, key) if key is not None else None

    def carry(self, stage: str) -> None:
        """Keep the last run's entry for ``stage`` as it is (a memo this run did not need)."""
        e = self._manifest.get("entries", {}).get(stage)
        if isinstance(e, dict) and isinstance(e.get("key"), str) and stage not in self._new:
            self.keys[stage] = e["key"]
            self._carried.add(stage)

    def put(self, stage: str, key: str, value: Any) -> None:
        """Store ``value`` for ``stage`` under ``key`` when the outputs are saved. It is packed
        at once, in a child process when it can (:mod:`routeplan.parallel`), while the plan
        goes on, into a staging folder beside the output folder (removed with this object)."""
        self.keys[stage] = key
        self._new[stage] = value
        if self.defer:
            return
        path = self._staging_dir() / _entry_name(stage, key)
        self._jobs[stage] = parallel.start(lambda: _dump_entry(value, path))

    def put_all(self, entries: Iterable[tuple[str, str, Any]]) -> None:
        """:meth:`put` each ``(stage, key, value)``, packed one after another in one child
        process (one fork instead of one per entry)."""
        entries = list(entries)
        if self.defer:
            for stage, key, value in entries:
                self.put(stage, key, value)
            return
        paths = []
        for stage, key, value in entries:
            self.keys[stage] = key
            self._new[stage] = value
            paths.append(self._staging_dir() / _entry_name(stage, key))

        def dump_all() -> None:
            for (_, _, value), path in zip(entries, paths, strict=True):
                _dump_entry(value, path)

        job = parallel.start(dump_all)
        for stage, _, _ in entries:
            self._jobs[stage] = job

    def _staging_dir(self) -> Path:
        """Where new entries are packed: inside the output folder's work folder (removed with
        it), or, for a cache opened on a bare path, in the system's temporary folder —
        never beside the output folder."""
        if self._staging is None:
            if self.folder is not None:
                self._staging = Path(tempfile.mkdtemp(prefix=".entries-", dir=self.folder.work))
            else:
                self._staging = Path(tempfile.mkdtemp(prefix="routeplan-entries-"))
            self._finalizer = weakref.finalize(self, _discard, self._staging, self._jobs)
        return self._staging

    def discard(self) -> None:
        """Stop every child still packing an entry or writing a record for this run and remove
        the staging folder: a run that fails calls this before its output folder is closed, so
        that no child writes into the work folder while it is removed (a child writing then
        kept the work folder, and so a folder the run created, from being removed)."""
        if self._finalizer is not None:
            self._finalizer()
        self.cancel_deferred()

    # -- outputs
    def _outputs(self) -> dict:
        o = self._manifest.get("outputs")
        return o if isinstance(o, dict) and isinstance(o.get("files"), dict) else {}

    def previous_output(self, name: str) -> Path | None:
        """The last run's output file ``name`` if its bytes are still the ones written then."""
        recorded = self._outputs().get("files", {}).get(name)
        path = self.out_dir / name
        try:
            if recorded and path.is_file() and file_sha256(path) == recorded:
                return path
        except OSError:
            pass
        return None

    def previous_bytes(self, name: str) -> bytes | None:
        """The bytes of :meth:`previous_output` (the file read once)."""
        recorded = self._outputs().get("files", {}).get(name)
        try:
            data = (self.out_dir / name).read_bytes() if recorded else None
        except OSError:
            return None
        return data if data is not None and hashlib.sha256(data).hexdigest() == recorded else None

    def output_aux(self, name: str) -> Any:
        """What the last run's writers recorded beside their files under ``name`` (``index``:
        to update them row by row, :mod:`routeplan.outputs.reuse`; ``map``: the map's memo;
        ``report``: the report's charts, :class:`routeplan.report.plots.ChartMemo`); None when
        missing or damaged."""
        e = self._outputs().get("aux", {}).get(name)
        if self.resident is not None and isinstance(e, dict):
            value = self.resident.aux(name, e.get("sha256"))
            if value is not None and (self.dir / str(e.get("file"))).is_file():
                self._aux_values[name] = value
                return value
        path = self.output_aux_file(name)
        try:
            value = loads(path) if path is not None else None
        except Exception:  # a damaged entry is a miss, never an error
            return None
        if value is not None:
            self._aux_values[name] = value
        return value

    def output_aux_file(self, name: str) -> Path | None:
        """The file of :meth:`output_aux`, if it is the one recorded."""
        e = self._outputs().get("aux", {}).get(name)
        if not isinstance(e, dict) or not isinstance(e.get("file"), str):
            return None
        path = self.dir / Path(e["file"]).name
        try:
            return path if file_sha256(path) == e.get("sha256") else None
        except OSError:
            return None

    def recorded_digest(self, name: str) -> str | None:
        """The SHA-256 the last run recorded for its output file ``name``."""
        return self._outputs().get("files", {}).get(name)

    def outputs_reusable(self, key: str, names: Iterable[str]) -> dict[str, Path]:
        """Output files of the last run that may be reused as they are: same outputs key and
        unchanged bytes (SHA-256 as recorded). Empty unless every one of ``names`` qualifies."""
        if self._outputs().get("key") != key:
            return {}
        out = {}
        for name in names:
            path = self.previous_output(name)
            if path is None:
                return {}
            out[name] = path
        return out

    def save_aux(self, new_out: Path, name: str, value: Any) -> None:
        """Store a writer's record ``value`` as ``name`` (see :meth:`output_aux`)."""
        self._aux_values[name] = value
        target = Path(new_out) / CACHE_DIR
        target.mkdir(exist_ok=True)  # in a work folder that exists (not made again if removed)
        _dump_entry(value, target / f"{name}.npz")

    def save(
        self,
        new_out: Path,
        outputs_key: str | None,
        outputs: Iterable[str],
        digests: dict[str, str | None] | None = None,
    ) -> dict[str, str]:
        """Write the manifest and the stage entries into ``new_out/.routeplan-cache`` (the
        work folder of a run about to be committed), with the output files ``outputs`` (their
        SHA-256: from ``digests`` where the writers give it, else read) and the writers'
        records beside them (:meth:`save_aux`). New entries come from the staging folder
        (hard-linked: the plan can be saved again; the staging folder goes with this object;
        values that cannot be stored exactly are left out); entries that were reused are
        hard-linked from the old folder when possible; with :attr:`defer`, new entries are
        left to :meth:`save_deferred` (this manifest does not name them). Returns the
        SHA-256 of every file of the cache folder, by name relative to ``new_out``."""
        target = Path(new_out) / CACHE_DIR
        target.mkdir(parents=True, exist_ok=True)
        entries = {}
        self._deferred = []
        for stage, key in self.keys.items():
            name = _entry_name(stage, key)
            if stage in self._new and self.defer:
                self._deferred.append(stage)
                continue
            if stage in self._new:
                self._jobs[stage].wait()
                src = self._staging_dir() / name
                if not src.is_file():  # not storable
                    continue
                sha = _entry_digest(src)
                link_or_copy(src, target / name)
            elif self.reused.get(stage) or stage in self._carried:
                old = self._manifest["entries"][stage]
                link_or_copy(self.dir / Path(old["file"]).name, target / name)
                sha = old["sha256"]
            else:
                continue
            entries[stage] = {"key": key, "file": name, "sha256": sha}
        known = digests or {}
        files = {n: known.get(n) or file_sha256(Path(new_out) / n) for n in outputs}
        aux = {
            p.stem: {"file": p.name, "sha256": _entry_digest(p)}
            for p in sorted(target.glob("*.npz"))
            if p.stem in AUX
        }
        for side in target.glob("*.sha256"):  # the manifest holds them now
            side.unlink()
        manifest = {
            "format": FORMAT,
            "environment": environment(),
            "entries": entries,
            "outputs": {"key": outputs_key, "files": files, "aux": aux},
        }
        written = {e["file"]: e["sha256"] for e in (*entries.values(), *aux.values())}
        written[MANIFEST] = self._write_manifest(target, manifest)
        return {f"{CACHE_DIR}/{name}": sha for name, sha in written.items()}

    @property
    def deferred(self) -> bool:
        """Whether :meth:`save` left new entries or records for :meth:`save_deferred`."""
        return bool(self._deferred or self.later_jobs)

    def save_deferred(self, new_out: Path) -> dict[str, str]:
        """Pack the new entries :meth:`save` left (:attr:`defer`) into
        ``new_out/.routeplan-cache`` (the work folder of a second commit of the same run, made
        after the outputs' own, the folder still locked: commit them with the others kept),
        wait for the writers' records written there (:attr:`later_jobs`) and write the
        manifest again, naming them beside what it named. The route entry (the largest) is
        packed in a child process while this one packs the others. Returns the SHA-256 of the
        files written, by name relative to ``new_out`` (empty: none left)."""
        if not self.deferred:
            return {}
        target = Path(new_out) / CACHE_DIR
        target.mkdir(parents=True, exist_ok=True)
        paths = {s: target / _entry_name(s, self.keys[s]) for s in self._deferred}
        jobs = [
            parallel.start(lambda s=s: _dump_entry(self._new[s], paths[s]))
            for s in self._deferred
            if s == "route"
        ]
        for s in self._deferred:
            if s != "route":
                _dump_entry(self._new[s], paths[s])
        for job in (*jobs, *self.later_jobs):
            job.wait()
        added = {
            s: {"key": self.keys[s], "file": p.name, "sha256": _entry_digest(p)}
            for s, p in paths.items()
            if p.is_file()  # else not storable
        }
        aux = {
            p.stem: {"file": p.name, "sha256": _entry_digest(p)}
            for p in sorted(target.glob("*.npz"))
            if p.stem in AUX
        }
        for side in target.glob("*.sha256"):
            side.unlink()
        old = self._saved["entries"]
        entries = {s: added.get(s) or old[s] for s in self.keys if s in added or s in old}
        outputs = self._saved["outputs"]
        manifest = {
            **self._saved,
            "entries": entries,
            "outputs": {**outputs, "aux": {**outputs["aux"], **aux}},
        }
        written = {e["file"]: e["sha256"] for e in (*added.values(), *aux.values())}
        written[MANIFEST] = self._write_manifest(target, manifest)
        self._deferred, self.later_jobs = [], []
        return {f"{CACHE_DIR}/{name}": sha for name, sha in written.items()}

    def cancel_deferred(self) -> None:
        """Stop the jobs :meth:`save_deferred` would wait for (a run that ends without it)."""
        for job in self.later_jobs:
            job.cancel()
        self.later_jobs = []

    def _write_manifest(self, target: Path, manifest: dict) -> str:
        """Write ``manifest`` as ``target/manifest.json``, keep it as the one saved; its
        SHA-256."""
        text = json.dumps(manifest, indent=1) + "\n"
        (target / MANIFEST).write_text(text, encoding="utf-8")
        self._saved = manifest
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _entry_name(stage: str, key: str) -> str:
    return f"{stage}-{key[:20]}.npz"


def _dump_entry(value: Any, path: Path) -> None:
    """Pack ``value`` into ``path`` (nothing when it cannot be stored exactly), its SHA-256
    beside it (``<name>.sha256``: the packing child hashes, not the saving parent)."""
    try:
        data = dumps(value)
    except UncacheableError:
        return
    tmp = path.with_name(path.name + ".part")
    tmp.write_bytes(data)
    path.with_name(path.name + ".sha256").write_text(hashlib.sha256(data).hexdigest())
    os.replace(tmp, path)


def _entry_digest(path: Path) -> str:
    """SHA-256 of a packed entry: from its side file when there is one (see _dump_entry)."""
    side = path.with_name(path.name + ".sha256")
    try:
        return side.read_text().strip()
    except OSError:
        return file_sha256(path)


def _discard(staging: Path, jobs: dict[str, parallel.Job]) -> None:
    """Stop the packing jobs still running and remove the staging folder."""
    for job in jobs.values():
        job.cancel()
    shutil.rmtree(staging, ignore_errors=True)


def link_or_copy(src: Path, dst: Path) -> None:
    """Hard-link ``src`` as ``dst`` (same file system: no copy), else copy it."""
    try:
        os.link(src, dst)
    except OSError:
        shutil.copyfile(src, dst)
