"""Reusing the last run's output files row by row after an edit (see :mod:`routeplan.cache`).

An edit to a utility-scale site (one inverter pad moved, one trench redrawn) changes a few
hundred of 70,000 schedule rows. The writers therefore compare rows, not files: every output
row gets a 64-bit content hash (:func:`row_hashes`), and

* the GeoPackage is the last one, copied, with only the rows whose hash changed at their
  position rewritten (:mod:`routeplan.outputs.gpkg`);
* the CSV files and the workbook's sheets are cut into chunks of rows at content-defined
  boundaries (:func:`chunk_bounds`: a row whose hash has its low bits zero ends a chunk, so an
  inserted or deleted row moves no boundary elsewhere); a chunk whose key (:func:`chunk_keys`)
  the last run wrote is copied from the last file, already formatted (CSV) or already
  compressed (workbook); only the other chunks are formatted.

A reused row is one whose every value, and whose geometry, hash alike (:func:`row_hashes`:
SipHash-2-4 of text, a bijective mix of numbers, per column, then mixed), so an undetected
change needs a 64-bit collision between the old and the new version of one row. Output
produced this way is the same as a cold run's: the CSV files byte for byte (tested), the
GeoPackage feature for feature.
"""

from __future__ import annotations

import hashlib
import operator
from collections.abc import Callable
from dataclasses import dataclass
from functools import partial

import numpy as np
import pandas as pd
import shapely

#: a row whose hash has these low bits zero ends a chunk (about 512 rows per chunk) …
CHUNK_MASK = np.uint64(511)
#: … and no chunk is longer than this (a run of rows that never hits the mask)
CHUNK_MAX = 4096


_GOLDEN = np.uint64(0x9E3779B97F4A7C15)


def _mix(x: np.ndarray) -> np.ndarray:
    """splitmix64's finaliser (a bijection of uint64)."""
    x = x ^ (x >> np.uint64(30))
    x = x * np.uint64(0xBF58476D1CE4E5B9)
    x = x ^ (x >> np.uint64(27))
    x = x * np.uint64(0x94D049BB133111EB)
    return x ^ (x >> np.uint64(31))


def _mix_into(x: np.ndarray, tmp: np.ndarray) -> None:
    """:func:`_mix` of ``x`` in place (``tmp``: scratch of the same shape and dtype)."""
    np.right_shift(x, np.uint64(30), out=tmp)
    x ^= tmp
    x *= np.uint64(0xBF58476D1CE4E5B9)
    np.right_shift(x, np.uint64(27), out=tmp)
    x ^= tmp
    x *= np.uint64(0x94D049BB133111EB)
    np.right_shift(x, np.uint64(31), out=tmp)
    x ^= tmp


def geometry_hashes(geometry: np.ndarray) -> np.ndarray:
    """A uint64 content hash per geometry (``None`` allowed): of the type and the exact
    coordinates, in order, for points and line strings (vectorised); of the WKB for others."""
    g = np.asarray(geometry, dtype=object)
    types = shapely.get_type_id(g)  # -1 for None
    out = _mix(types.astype(np.int64).astype(np.uint64) + _GOLDEN)
    simple = np.isin(types, (0, 1))  # Point, LineString: their coordinates say everything
    if simple.any():
        xy, which = shapely.get_coordinates(g[simple], include_z=True, return_index=True)
        xy = np.where(np.isnan(xy), np.nan, xy)  # one NaN; -0.0 apart (WKB keeps its sign)
        bits = xy.view(np.uint64)
        first = np.searchsorted(which, np.arange(int(simple.sum())))
        position = np.arange(len(which), dtype=np.int64) - first[which]
        c = _mix(bits[:, 0] ^ _mix(bits[:, 1] + _GOLDEN) ^ _mix(bits[:, 2] + np.uint64(7)))
        c = _mix(c + _mix(position.astype(np.uint64) + np.uint64(1)))
        total = np.zeros(int(simple.sum()), dtype=np.uint64)
        np.add.at(total, which, c)
        count = np.bincount(which, minlength=len(total)).astype(np.uint64)
        out[simple] = _mix(out[simple] ^ total ^ _mix(count + np.uint64(3)))
    other = np.flatnonzero(~simple & (types >= 0))
    if len(other):
        wkb = shapely.to_wkb(g[other], output_dimension=3)
        text = np.array([w.decode("latin-1") for w in wkb.tolist()], dtype=object)
        out[other] = _mix(out[other] ^ pd.util.hash_array(text, categorize=False))
    return out


def row_hashes(frame: pd.DataFrame, geometry: np.ndarray | None = None) -> np.ndarray:
    """A uint64 content hash per row of ``frame`` (every column, in order) and, when given,
    of its geometry (:func:`geometry_hashes`). Equal rows hash equal; column names and dtypes
    are not part of it (see :func:`layout`)."""
    columns = [column_hashes(frame.iloc[:, j]) for j in range(frame.shape[1])]
    return combine_hashes(columns, len(frame), geometry)


def combine_hashes(
    columns: list[np.ndarray],
    n: int,
    geometry: np.ndarray | None = None,
    *,
    geometry_h: np.ndarray | None = None,
) -> np.ndarray:
    """The row hashes of :func:`row_hashes` from its columns' hashes (:func:`column_hashes`,
    in column order) for ``n`` rows: a table's hashes and those of some of its columns (a
    layer's key) share the work of hashing each column. ``geometry_h``: the geometries'
    hashes (:func:`geometry_hashes`) in place of ``geometry``, where the caller has them."""
    if geometry_h is None and geometry is not None:
        geometry_h = geometry_hashes(geometry)
    return _combine(columns, n, geometry_h)


def _combine(columns: list[np.ndarray], n: int, geometry_h: np.ndarray | None) -> np.ndarray:
    """:func:`combine_hashes` with the geometries' hashes given (:func:`geometry_hashes`)."""
    h = np.zeros(n, dtype=np.uint64)
    t = np.empty(n, dtype=np.uint64)
    for j, c in enumerate(columns):  # h = _mix(h * _GOLDEN ^ c ^ j), in place
        h *= _GOLDEN
        h ^= c
        h ^= np.uint64(j)
        _mix_into(h, t)
    if geometry_h is not None:
        h = _mix(h * _GOLDEN ^ geometry_h)
    return h


_MISSING = np.uint64(0x5D1C3A7E9B0F2468)


def column_hashes(column: pd.Series) -> np.ndarray:
    """A uint64 hash per value: numbers by their bits (pandas' mix; -0.0 apart from 0.0,
    every NaN alike), text by SipHash-2-4 of the text (pandas), missing values apart from
    every text, other objects by type and ``repr`` (so 1, 1.0, True and "1" differ, as their
    text does)."""
    kind, values, missing = _column_values(column)
    return _hash_values(kind, values, missing)


def _column_values(column: pd.Series) -> tuple[str, np.ndarray, np.ndarray | None]:
    """How :func:`column_hashes` hashes ``column`` — ``"number"``, ``"text"`` (str or
    missing) or ``"object"`` (anything else: by type and ``repr``) — with its values (an
    object array but for numbers) and, but for numbers, where they are missing."""
    values = column.to_numpy()
    if values.dtype.kind in "biuf":
        return "number", values, None
    if isinstance(column.dtype, pd.StringDtype):  # text only
        return "text", column.to_numpy(dtype=object), column.isna().to_numpy()
    missing = column.isna().to_numpy()
    values = np.asarray(values, dtype=object)
    present = values[~missing]
    if not len(present) or pd.api.types.infer_dtype(present, skipna=False) == "string":
        return "text", values, missing
    return "object", values, missing


def _hash_values(kind: str, values: np.ndarray, missing: np.ndarray | None) -> np.ndarray:
    """The hashes of :func:`column_hashes` of values taken by :func:`_column_values` (or any
    part of them: each value's hash is its own)."""
    if kind == "number":
        if values.dtype.kind == "f":  # by their bits (pandas would hash -0.0 as 0.0), one NaN
            bits = np.where(np.isnan(values), np.nan, values).astype(values.dtype, copy=False)
            return pd.util.hash_array(bits.view(f"u{values.dtype.itemsize}"))
        return pd.util.hash_array(values)
    if kind == "text":
        return _text_hashes(np.where(missing, None, values))
    present = np.array([f"{type(v).__name__}:{v!r}" for v in values[~missing]], dtype=object)
    text = np.full(len(values), "", dtype=object)
    text[~missing] = present
    flag = np.where(missing, _MISSING, np.uint64(0)).astype(np.uint64)
    return pd.util.hash_array(text, categorize=False) ^ flag


def _text_hashes(text: np.ndarray) -> np.ndarray:
    """:func:`column_hashes` of text values (``str``, or missing: None, NaN, ``pd.NA``): each
    distinct text hashed once. Schedules repeat few texts (kinds, materials, statuses)."""
    codes, uniques = pd.factorize(text)  # missing → -1
    table = np.empty(len(uniques) + 1, dtype=np.uint64)
    table[:-1] = pd.util.hash_array(np.asarray(uniques, dtype=object), categorize=False)
    table[-1] = pd.util.hash_array(np.array([""], dtype=object), categorize=False)[0] ^ _MISSING
    return table[codes]


def layout(frame: pd.DataFrame, *extra: object) -> str:
    """Digest of a table's column names and dtypes (plus ``extra``): what its rows' hashes
    do not cover. Rows are reused only between tables of one layout."""
    parts = [f"{c}:{frame[c].dtype}" for c in frame.columns]
    parts += [repr(e) for e in extra]
    return hashlib.sha256("\n".join(parts).encode("utf-8")).hexdigest()


def chunk_bounds(hashes: np.ndarray) -> np.ndarray:
    """Start offsets of the chunks of rows (plus the row count at the end)."""
    n = len(hashes)
    ends = np.flatnonzero((hashes & CHUNK_MASK) == 0) + 1
    bounds = np.unique(np.r_[0, ends, n])
    gaps = np.flatnonzero(np.diff(bounds) > CHUNK_MAX)
    if len(gaps):  # split over-long chunks evenly
        extra = [np.arange(bounds[i] + CHUNK_MAX, bounds[i + 1], CHUNK_MAX) for i in gaps.tolist()]
        bounds = np.unique(np.r_[bounds, np.concatenate(extra)])
    return bounds.astype(np.int64)


def chunk_keys(hashes: np.ndarray, bounds: np.ndarray, table_layout: str) -> list[str]:
    """One key per chunk: the layout and the chunk's row hashes, in order."""
    return [
        hashes_key(table_layout, hashes[a:b])
        for a, b in zip(bounds[:-1].tolist(), bounds[1:].tolist(), strict=True)
    ]


def hashes_key(salt: str, hashes: np.ndarray) -> str:
    """A 128-bit key (BLAKE2b) of ``salt`` and a run of row hashes, in order."""
    data = np.ascontiguousarray(hashes, dtype="<u8").tobytes()
    return hashlib.blake2b(salt.encode("utf-8") + data, digest_size=16).hexdigest()


@dataclass
class _Column:
    """One column as :class:`HashMemo` keeps it: its kind and values (:func:`_column_values`,
    copied), where they are missing, and their hashes."""

    kind: str
    values: np.ndarray
    missing: np.ndarray | None
    hashes: np.ndarray


@dataclass
class _Table:
    """One table as :class:`HashMemo` keeps it: its column names and columns, its geometries
    (the objects, copied) and their hashes, and its rows' hashes."""

    names: list[str]
    columns: list[_Column]
    geometry: np.ndarray | None
    geometry_h: np.ndarray | None
    hashes: np.ndarray


class HashMemo:
    """The last tables hashed, by name, with their columns' values and hashes: a process that
    writes the outputs again and again (``routeplan plan --watch``) hashes only the values
    that changed since (:meth:`hashes`). The hashes are those of :func:`column_hashes` and
    :func:`combine_hashes` whatever the memo holds: a value's hash is its own, so a kept hash
    is reused only where the value is the same as the kept one — numbers bit for bit, text
    character for character, missing where it was missing, geometries the same objects
    (shapely geometries are immutable) — and a column whose kind or dtype differs is hashed
    whole. A table of another length (rows added or removed: a row's strings changed) is
    compared both at the same positions and shifted by the difference, so the rows before the
    change and those after it keep their values' hashes, and their rows' hashes where every
    value of the row (and its geometry) is found at one offset."""

    def __init__(self) -> None:
        self._tables: dict[str, _Table] = {}

    def hashes(
        self, name: str, data: pd.DataFrame, geometry: np.ndarray | None = None
    ) -> tuple[list[np.ndarray], np.ndarray]:
        """The hashes of each column of ``data`` (:func:`column_hashes`) and of each row
        (:func:`combine_hashes`, with ``geometry`` when given), keeping ``data`` as the table
        ``name`` for the next call."""
        n, last = len(data), self._tables.get(name)
        names = [str(c) for c in data.columns]
        if last is not None and last.names != names:
            last = None
        # where a row's values are looked for in the last table: the same position, and
        # shifted by the difference in length (the rows after an insertion or a removal)
        offsets = [] if last is None else sorted({0, len(last.hashes) - n}, key=abs)
        # per offset: the rows whose every value (and geometry) is found that far in the last
        # table, whose row hash is then the last one's there
        found = {off: np.ones(n, dtype=bool) for off in offsets}
        columns: list[_Column] = []
        for j in range(data.shape[1]):
            kind, values, missing = _column_values(data.iloc[:, j])
            old = last.columns[j] if last is not None else None
            same_at = partial(_same, kind, values, missing, old)
            h, todo = _kept(n, offsets, same_at, None if old is None else old.hashes, found)
            at = np.flatnonzero(todo)
            if len(at):
                h[at] = _hash_values(kind, values[at], None if missing is None else missing[at])
            columns.append(_Column(kind, values.copy(), missing, h))
        geometry_h = None
        if geometry is not None:
            geometry = np.array(geometry, dtype=object)  # a copy, kept
            old_g = last.geometry if last is not None else None
            geometry_h, todo = _kept(
                n,
                offsets if old_g is not None else [],
                partial(_same_objects, geometry, old_g),
                None if old_g is None else last.geometry_h,
                found,
            )
            at = np.flatnonzero(todo)
            if len(at):
                geometry_h[at] = geometry_hashes(geometry[at])
        hashes = [c.hashes for c in columns]
        rows, todo = np.zeros(n, dtype=np.uint64), np.ones(n, dtype=bool)
        if last is not None and (geometry is None) == (last.geometry is None):
            for off in offsets:
                take = np.flatnonzero(todo & found[off])
                rows[take] = last.hashes[take + off]
                todo &= ~found[off]
        at = np.flatnonzero(todo)
        if len(at):  # the other rows hashed from their values' hashes
            part = None if geometry_h is None else geometry_h[at]
            rows[at] = _combine([h[at] for h in hashes], len(at), part)
        self._tables[name] = _Table(names, columns, geometry, geometry_h, rows)
        return hashes, rows

    def geometry_hashes(self, name: str) -> np.ndarray | None:
        """The geometries' hashes (:func:`geometry_hashes`) of the table ``name`` as last
        hashed (None: hashed without geometry, or never)."""
        table = self._tables.get(name)
        return None if table is None else table.geometry_h


def _kept(
    n: int,
    offsets: list[int],
    same_at: Callable[[int], np.ndarray],
    old_hashes: np.ndarray | None,
    found: dict[int, np.ndarray],
) -> tuple[np.ndarray, np.ndarray]:
    """The hashes of ``n`` values taken from the last table's (``old_hashes``) where
    ``same_at(off)`` finds the value the same ``off`` rows further there (the first of
    ``offsets`` that does), and which are left to hash; clears in ``found[off]`` the rows
    whose value is not the same ``off`` rows further."""
    if offsets == [0] and len(old_hashes) == n:  # one table of one length: no index arrays
        same = same_at(0)
        found[0] &= same
        return np.where(same, old_hashes, np.uint64(0)), ~same
    h, todo = np.zeros(n, dtype=np.uint64), np.ones(n, dtype=bool)
    for off in offsets:
        same = same_at(off)
        take = np.flatnonzero(todo & same)
        h[take] = old_hashes[take + off]
        todo &= ~same
        found[off] &= same
    return h, todo


def _aligned(n: int, m: int, off: int) -> tuple[int, int]:
    """The positions ``lo:hi`` of a table of ``n`` rows whose row ``i`` has a row ``i + off``
    in a table of ``m`` rows."""
    lo, hi = max(0, -off), min(n, m - off)
    return lo, max(lo, hi)


def _same(
    kind: str, values: np.ndarray, missing: np.ndarray | None, old: _Column | None, off: int
) -> np.ndarray:
    """Where each value equals ``old``'s value ``off`` rows further (False beyond its ends,
    and everywhere when the kind or dtype differs, or for values hashed by ``repr``)."""
    n = len(values)
    same = np.zeros(n, dtype=bool)
    if old is None or old.kind != kind or kind == "object":
        return same
    lo, hi = _aligned(n, len(old.values), off)
    if hi == lo:
        return same
    new_v, old_v = values[lo:hi], old.values[lo + off : hi + off]
    if kind == "number":
        if old.values.dtype != values.dtype:
            return same
        unsigned = np.dtype(f"u{values.dtype.itemsize}")
        same[lo:hi] = new_v.view(unsigned) == old_v.view(unsigned)
        return same
    new_m, old_m = missing[lo:hi], old.missing[lo + off : hi + off]
    if not new_m.any() and not old_m.any():
        same[lo:hi] = new_v == old_v  # str against str
        return same
    part = new_m & old_m  # missing in both: the same missing hash
    both = np.flatnonzero(~new_m & ~old_m)
    part[both] = new_v[both] == old_v[both]
    same[lo:hi] = part
    return same


def _same_objects(geometry: np.ndarray, old: np.ndarray, off: int) -> np.ndarray:
    """Where each geometry is the very object ``old`` holds ``off`` rows further."""
    same = np.zeros(len(geometry), dtype=bool)
    lo, hi = _aligned(len(geometry), len(old), off)
    same[lo:hi] = np.fromiter(
        map(operator.is_, geometry[lo:hi], old[lo + off : hi + off]), bool, hi - lo
    )
    return same
