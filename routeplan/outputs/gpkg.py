"""The GeoPackage output (``routes.gpkg``): written whole with pyogrio, or the last run's file
updated feature by feature.

A whole write goes through pyogrio (GDAL), which makes every table the GeoPackage standard
asks for (OGC 12-128: contents, geometry columns, spatial reference systems, the R-tree
spatial index extension with its triggers). An update copies the last run's file and, with
Python's ``sqlite3``, finds each feature by its key (the circuit's, segment's, row's or
equipment's id): a feature still there keeps its ``fid`` and is rewritten only if its content
hash changed (:func:`routeplan.outputs.reuse.row_hashes`); new features are added after the
last fid, features gone are deleted; then each layer's extent in ``gpkg_contents``. Every
feature then holds what a whole write gives it; only the fids of features added or removed
since a whole write differ from it (and the table's order by fid). The R-tree follows
through GDAL's own triggers, which call the standard's SQL functions ``ST_IsEmpty``,
``ST_MinX`` … (the R-tree extension, GeoPackage 1.2 Annex F.3, from memory): they are
supplied here (:func:`_register_functions`). Geometry blobs are encoded as GDAL encodes them
(header ``GP``, version 0, little-endian, an XY envelope except for points, ISO WKB: the
GeoPackage binary format of OGC 12-128, clause 2.1.3, document revision and clause numbers
from memory); the tests compare them byte for byte.
Anything unexpected (another schema, a column type not handled, an empty geometry, an SQLite
error) falls back to a whole write.
"""

from __future__ import annotations

import shutil
import sqlite3
import struct
from dataclasses import dataclass
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

from .columns import Col
from .reuse import HashMemo, column_hashes, combine_hashes, geometry_hashes, layout
from .tables import ordered

#: declared SQLite column types → how a value is bound
_REAL = ("REAL", "DOUBLE", "FLOAT")
_INTEGER = ("INTEGER", "INT", "MEDIUMINT", "SMALLINT", "TINYINT", "BOOLEAN")
_TEXT = ("TEXT",)


@dataclass(frozen=True, eq=False)
class GpkgLayer:
    """One layer as written: attribute columns in output order, geometries, CRS, the content
    hash of each row (attributes and geometry) with the layout they hold for, a hash of
    each row's key (the columns that name a feature) and of each row's geometry alone."""

    data: pd.DataFrame
    geometry: np.ndarray
    crs: object
    hashes: np.ndarray
    layout: str
    keys: np.ndarray
    geometry_h: np.ndarray

    @classmethod
    def of(
        cls,
        frame: gpd.GeoDataFrame,
        cols: tuple[Col, ...] | None,
        key: tuple[str, ...],
        memo: tuple[HashMemo, str] | None = None,
    ) -> GpkgLayer:
        """The layer of ``frame`` (contract columns ``cols`` first, when given), its features
        named by the columns ``key``; ``memo``: a :class:`~routeplan.outputs.reuse.HashMemo`
        and the layer's name in it, to hash only what changed since the layer was last
        hashed there."""
        data = ordered(frame, cols) if cols else frame.drop(columns="geometry")
        data = data.reset_index(drop=True)
        geometry = np.asarray(frame.geometry.values, dtype=object)
        crs = frame.crs.to_wkt() if frame.crs is not None else None
        if memo is None:
            columns = [column_hashes(data.iloc[:, j]) for j in range(data.shape[1])]
            geometry_h = geometry_hashes(geometry)
            hashes = combine_hashes(columns, len(data), geometry_h=geometry_h)
        else:
            columns, hashes = memo[0].hashes(memo[1], data, geometry)
            geometry_h = memo[0].geometry_hashes(memo[1])
        # the key's hashes are row_hashes(data[key]), from the columns hashed already
        keys = combine_hashes([columns[data.columns.get_loc(k)] for k in key], len(data))
        return cls(data, geometry, frame.crs, hashes, layout(data, crs, key), keys, geometry_h)


def write_gpkg(layers: dict[str, GpkgLayer], path: Path) -> dict:
    """Write every layer to a new GeoPackage at ``path`` with pyogrio. Returns its index (see
    :func:`update_gpkg`): features get the fids 1, 2, … in order.

    (pyogrio's Arrow path would be about twice as fast, but needs pyarrow, which is not a
    dependency: installing it changes pandas' default string storage program-wide.)
    """
    import pyogrio

    for name, layer in layers.items():
        gdf = gpd.GeoDataFrame(layer.data, geometry=layer.geometry, crs=layer.crs)
        pyogrio.write_dataframe(gdf, path, layer=name, driver="GPKG")
    return {
        name: _index(lay, np.arange(1, len(lay.hashes) + 1, dtype=np.int64))
        for name, lay in layers.items()
    }


def _index(lay: GpkgLayer, fids: np.ndarray) -> dict:
    return {"layout": lay.layout, "hashes": lay.hashes, "keys": lay.keys, "fids": fids}


def update_gpkg(
    old: Path, new: Path, layers: dict[str, GpkgLayer], index: dict
) -> tuple[dict, int] | None:
    """Write ``layers`` to ``new`` as the last run's GeoPackage ``old`` updated feature by
    feature: ``index`` (from :func:`write_gpkg` or this function) holds each layer's row hashes,
    key hashes and fids. A feature whose key is still there keeps its fid and is rewritten only
    if its content changed; new features are added after the last fid; features gone are
    deleted. Returns the new index and the number of rows written, or None when the file
    cannot be updated this way (``new`` is then absent)."""
    if set(index) != set(layers) or any(
        index[n].get("layout") != lay.layout for n, lay in layers.items()
    ):
        return None
    try:
        shutil.copyfile(old, new)
        con = sqlite3.connect(new)
        # a new file in the run's temporary folder: no fsync, the journal in memory
        con.execute("PRAGMA synchronous = OFF")
        con.execute("PRAGMA journal_mode = MEMORY")
    except (OSError, sqlite3.Error):
        Path(new).unlink(missing_ok=True)
        return None
    try:
        _register_functions(con)
        written, out = 0, {}
        with con:
            for name, lay in layers.items():
                done = _update_layer(con, name, lay, index[name])
                if done is None:
                    raise _CannotUpdateError(name)
                out[name] = _index(lay, done[0])
                written += done[1]
    except (_CannotUpdateError, sqlite3.Error, ValueError, KeyError, TypeError):
        con.close()
        Path(new).unlink(missing_ok=True)
        return None
    con.close()
    return out, written


class _CannotUpdateError(Exception):
    """A layer whose table is not what the index says was written."""


def _update_layer(
    con: sqlite3.Connection, name: str, lay: GpkgLayer, last: dict
) -> tuple[np.ndarray, int] | None:
    """Update one layer; its features' fids (in row order) and the rows written."""
    old_keys = np.asarray(last["keys"], dtype=np.uint64)
    old_hashes = np.asarray(last["hashes"], dtype=np.uint64)
    old_fids = np.asarray(last["fids"], dtype=np.int64)
    if not (len(old_keys) == len(old_hashes) == len(old_fids)):
        return None
    old_index, new_index = pd.Index(old_keys), pd.Index(lay.keys)
    if not (old_index.is_unique and new_index.is_unique):
        return None  # keys that do not name one feature each
    columns = [(r[1], str(r[2]).upper()) for r in con.execute(f'PRAGMA table_info("{name}")')]
    geom = con.execute(
        "SELECT column_name, srs_id FROM gpkg_geometry_columns WHERE table_name = ?", (name,)
    ).fetchone()
    names = [c for c, _ in columns]
    if geom is None or names != ["fid", geom[0], *lay.data.columns]:
        return None
    top = int(old_fids.max()) if len(old_fids) else 0
    if con.execute(f'SELECT count(*), coalesce(max(fid), 0) FROM "{name}"').fetchone() != (
        len(old_fids),
        top,
    ):
        return None
    kinds = [_kind(t) for _, t in columns[2:]]
    if None in kinds:
        return None
    at = old_index.get_indexer(new_index)  # the old row of each new row, or -1
    kept = at >= 0
    changed = np.flatnonzero(kept & (old_hashes[np.maximum(at, 0)] != lay.hashes))
    added = np.flatnonzero(~kept)
    still = np.zeros(len(old_keys), dtype=bool)
    still[at[kept]] = True
    gone = np.flatnonzero(~still)  # old rows no new row names (in fid order of the index)
    fids = np.empty(len(lay.keys), dtype=np.int64)
    fids[kept] = old_fids[at[kept]]
    fids[added] = top + 1 + np.arange(len(added))
    rows = np.r_[changed, added].astype(np.int64)
    blobs = encode_geometries(lay.geometry[rows], int(geom[1]))
    if blobs is None:
        return None
    sub = lay.data.iloc[rows]  # only the rows written
    values = [_bind(sub.iloc[:, j].to_numpy(), k) for j, k in enumerate(kinds)]
    records = list(zip(blobs, *values, fids[rows].tolist(), strict=True))
    quoted = [f'"{c}"' for c in names[1:]]
    k = len(changed)
    con.executemany(f'DELETE FROM "{name}" WHERE fid = ?', [(int(f),) for f in old_fids[gone]])
    con.executemany(
        f'UPDATE "{name}" SET {", ".join(q + " = ?" for q in quoted)} WHERE fid = ?',
        records[:k],
    )
    marks = ", ".join("?" * (len(quoted) + 1))
    insert = f'INSERT INTO "{name}" ({", ".join(quoted)}, fid) VALUES ({marks})'
    con.executemany(insert, records[k:])
    present = lay.geometry[~shapely.is_missing(lay.geometry)]
    box = shapely.total_bounds(present) if len(present) else np.full(4, np.nan)
    # as GDAL records an extent: 16 significant digits
    ext = [None if np.isnan(v) else float(f"{v:.16g}") for v in box.tolist()]
    con.execute(
        "UPDATE gpkg_contents SET min_x = ?, min_y = ?, max_x = ?, max_y = ?, "
        "last_change = strftime('%Y-%m-%dT%H:%M:%fZ', 'now') WHERE table_name = ?",
        (*ext, name),
    )
    return fids, len(rows) + len(gone)


def _kind(declared: str) -> str | None:
    base = declared.split("(")[0].strip()
    if base in _REAL:
        return "real"
    if base in _INTEGER:
        return "integer"
    if base in _TEXT:
        return "text"
    return None


def _bind(values: np.ndarray, kind: str) -> list:
    """Values as SQLite binds them for a column of ``kind`` (missing → NULL)."""
    missing = pd.isna(values)
    if kind == "real":
        out = np.asarray(values, dtype=float).tolist()
    elif kind == "integer":
        out = [None if m else int(v) for v, m in zip(values.tolist(), missing, strict=True)]
    else:
        out = [None if m else str(v) for v, m in zip(values.tolist(), missing, strict=True)]
    return [None if m else v for v, m in zip(out, missing.tolist(), strict=True)]


def encode_geometries(geoms: np.ndarray, srs_id: int) -> list[bytes | None] | None:
    """GeoPackage geometry blobs as GDAL writes them (see the module docstring); None for a
    missing geometry. Returns None when one is empty (not handled: a whole write does it)."""
    geoms = np.asarray(geoms, dtype=object)
    present = ~shapely.is_missing(geoms)
    if shapely.is_empty(geoms[present]).any():
        return None
    wkb = shapely.to_wkb(geoms, output_dimension=2, byte_order=1, flavor="iso")
    box = shapely.bounds(geoms)
    point = shapely.get_type_id(geoms) == shapely.GeometryType.POINT
    head_point = b"GP\x00\x01" + struct.pack("<i", srs_id)
    head_box = b"GP\x00\x03" + struct.pack("<i", srs_id)
    out: list[bytes | None] = []
    items = zip(wkb.tolist(), box.tolist(), point.tolist(), present.tolist(), strict=True)
    for w, b, p, ok in items:
        if not ok:
            out.append(None)
        elif p:
            out.append(head_point + w)
        else:
            out.append(head_box + struct.pack("<4d", b[0], b[2], b[1], b[3]) + w)
    return out


def _register_functions(con: sqlite3.Connection) -> None:
    """The SQL functions GDAL's R-tree triggers call (the GeoPackage R-tree extension)."""

    def envelope(blob: bytes | None) -> tuple[float, float, float, float] | None:
        if blob is None or len(blob) < 8 or blob[:2] != b"GP":
            return None
        flags = blob[3]
        if flags & 0x10:
            return None  # empty
        code = (flags >> 1) & 0x07
        size = {0: 0, 1: 32, 2: 48, 3: 48, 4: 64}.get(code)
        if size is None:
            return None
        if code:
            order = "<" if flags & 0x01 else ">"
            minx, maxx, miny, maxy = struct.unpack(order + "4d", blob[8:40])
            return minx, maxx, miny, maxy
        b = shapely.bounds(shapely.from_wkb(blob[8 + size :]))
        return b[0], b[2], b[1], b[3]

    def is_empty(blob: bytes | None) -> int | None:
        if blob is None or len(blob) < 8 or blob[:2] != b"GP":
            return None
        return int(bool(blob[3] & 0x10))

    con.create_function("ST_IsEmpty", 1, is_empty, deterministic=True)
    for i, fn in enumerate(("ST_MinX", "ST_MaxX", "ST_MinY", "ST_MaxY")):
        con.create_function(
            fn, 1, lambda blob, i=i: e[i] if (e := envelope(blob)) else None, deterministic=True
        )
