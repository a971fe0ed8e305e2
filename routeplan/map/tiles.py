"""The map's layers in tiles, and what a re-plan reuses of the last map (:class:`MapMemo`).

A 1 GW plant's map holds about 100,000 drawn features; an edit (a pad moved) changes a few
hundred. So every layer group is drawn as tiles of neighbouring features: features sorted by
their id (a row, a circuit, a segment), cut at content-defined boundaries (a feature whose id
hashes with its low bits zero ends a tile, about 1,000 features per tile; an inserted feature
moves no other boundary). Each tile's scripts are kept in the memo under a key made of the
tile's rows' content hashes and every plant-wide value its drawing depends on, so the next run
draws only the tiles whose features changed. Within a tile, circuits are drawn in order of
increasing utilisation (the most loaded on top); tiles follow one another by id, and failing
circuits and over-capacity segments of every tile come after all passing ones.

The page around the layers (folium's map, groups, layer control, scale, the inlined Leaflet)
depends only on a few values (title, basemap, canvas, view, groups): the memo keeps it too, so
a re-plan that does not change those does not even import folium. Its folium elements are
named from those values (not at random), so a page made with the memo is byte for byte the
page a run without it makes. The plant view's block areas are kept as WKB under a digest of
each block's circuits' and rows' geometry hashes, or content hashes where the caller has no
geometry hashes (:meth:`MapMemo.geometries`, :func:`routeplan.map.plantview.block_table`):
an edit redraws the areas of the blocks whose routes or rows moved only, and finds the
outline points of those blocks only. Scripts are kept as UTF-8 bytes, so a kept
tile is copied into the page without being decoded or encoded. The review data's tables are
kept by their rows' content hashes too (:class:`routeplan.map.details.ReviewMemo`).

A tile's key holds flags and plant-wide values, never a count of the plant's features: one
feature more (a trench split by a moved pad) must leave the other tiles' keys as they were.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import shapely

from routeplan.map.details import ReviewMemo
from routeplan.map.features import Layer
from routeplan.map.script import layer_script
from routeplan.outputs.reuse import hashes_key, row_hashes

#: a feature whose id hashes with these low bits zero ends a tile (about 1,024 per tile) …
TILE_MASK = np.uint64(1023)
#: … and no tile is longer than this
TILE_MAX = 4096


def tiles(keys: np.ndarray, cells: np.ndarray | None = None) -> list[np.ndarray]:
    """Positions of the features of each tile, tiles in order of their ids (``keys``: one id
    per feature; features with equal ids always share a tile).

    With ``cells`` (an integer per feature: the square of the site it lies in, its band of
    squares in the bits above 32), features are taken square by square, ids in order within
    each (a feature's id takes the square of its first feature), and a tile also ends where a
    band ends: a tile then covers part of one band, a small box, so a page can make only the
    tiles near the view (:func:`routeplan.map.script.layer_script`, ``lazy``). Cutting at
    every square instead would make several times as many tiles (each costs time to draw)."""
    keys = np.asarray(keys, dtype=object)
    if len(keys) == 0:
        return []
    text = keys.astype(str)
    order = np.argsort(text, kind="stable")
    k = text[order]
    last = np.r_[k[1:] != k[:-1], True]  # only after the last feature of an id
    if cells is not None:  # an id's square: that of its first feature
        cells = np.asarray(cells)
        start = np.r_[True, last[:-1]]  # the first feature of each id
        first = np.empty_like(cells)
        first[order] = cells[order][start][np.cumsum(start) - 1]
        cells = first
        by_cell = np.argsort(cells[order], kind="stable")  # ids in order within a square
        order, k, last = order[by_cell], k[by_cell], last[by_cell]
    h = pd.util.hash_array(k.astype(object), categorize=False)
    cut = (h & TILE_MASK) == 0
    if cells is not None:
        band = cells[order] >> 32
        cut |= np.r_[band[1:] != band[:-1], True]
    ends = np.flatnonzero(last & cut) + 1
    bounds = [0]
    cuts = np.flatnonzero(last) + 1
    for end in [*ends.tolist(), len(k)]:
        while end - bounds[-1] > TILE_MAX:  # too long: cut at the last id end in reach
            reach = cuts[(cuts > bounds[-1]) & (cuts <= bounds[-1] + TILE_MAX)]
            if len(reach) == 0:
                break
            bounds.append(int(reach[-1]))
        if end > bounds[-1]:
            bounds.append(int(end))
    return [order[a:b] for a, b in itertools.pairwise(bounds)]


def mixed(hashes: np.ndarray, *values: np.ndarray) -> np.ndarray:
    """Row hashes with per-row ``values`` (numbers or text) folded in."""
    extra = row_hashes(pd.DataFrame({str(i): np.asarray(v) for i, v in enumerate(values)}))
    return np.asarray(hashes, dtype=np.uint64) * np.uint64(0x9E3779B97F4A7C15) ^ extra


def tile_key(kind: str, params: object, hashes: np.ndarray) -> str:
    """The memo key of a tile: its kind, the plant-wide values it depends on, its rows."""
    return hashes_key(repr((kind, params)), hashes)


def _blobs(items: dict[str, bytes]) -> dict:
    """``items`` as arrays for the plan cache (no pickle)."""
    keys = list(items)
    return {
        "keys": keys,
        "data": np.frombuffer(b"".join(items[k] for k in keys), dtype=np.uint8),
        "length": np.array([len(items[k]) for k in keys], dtype=np.int64),
    }


def _load_blobs(stored: object) -> dict[str, bytes]:
    """:func:`_blobs`' value back (None: an empty dict; raises ValueError when damaged)."""
    if stored is None:
        return {}
    data = np.asarray(stored["data"], dtype=np.uint8).tobytes()  # type: ignore[index]
    ends = np.cumsum(np.asarray(stored["length"], dtype=np.int64)).tolist()  # type: ignore[index]
    keys = [str(k) for k in stored["keys"]]  # type: ignore[index]
    if len(keys) != len(ends) or (ends and ends[-1] != len(data)):
        raise ValueError("damaged")
    return {k: data[a:b] for k, a, b in zip(keys, [0, *ends][: len(ends)], ends, strict=True)}


@dataclass(frozen=True)
class Role:
    """One layer of each tile of a group: its part of the tile's layers, CSS classes and
    whether it takes the pointer."""

    part: str
    class_name: str
    interactive: bool = True


@dataclass
class MapMemo:
    """Scripts of tiles, the page around them and the plant view's block areas, by key: those
    of the last run (``last``) and those used in this one (:meth:`export` gives them to the
    plan cache).

    A tile's scripts are kept as UTF-8 bytes (with their number of features): a page is
    assembled from them as bytes (:func:`routeplan.map.page.render_map_bytes`), so the
    scripts a re-plan keeps are never decoded or encoded again."""

    last_scripts: dict[str, tuple[bytes, int]] = field(default_factory=dict)
    last_pages: dict[str, list[str]] = field(default_factory=dict)
    #: geometries by key, as WKB (the plant view's block areas: :meth:`geometries`)
    last_shapes: dict[str, bytes] = field(default_factory=dict)
    scripts: dict[str, tuple[bytes, int]] = field(default_factory=dict)
    pages: dict[str, list[str]] = field(default_factory=dict)
    shapes: dict[str, bytes] = field(default_factory=dict)
    #: the review data's tables (:class:`routeplan.map.details.ReviewMemo`)
    review: ReviewMemo = field(default_factory=ReviewMemo)
    drawn_tiles: int = 0
    reused_tiles: int = 0

    @classmethod
    def load(cls, stored: object) -> MapMemo:
        """A memo from :meth:`export`'s value (anything else: an empty memo)."""
        try:
            s = stored["scripts"]  # type: ignore[index]
            # the scripts' bytes, sliced without copies (an older memo, of text lengths in
            # characters, has no "nbytes": an empty memo)
            text = memoryview(np.ascontiguousarray(s["text"], dtype=np.uint8))
            ends = np.cumsum(np.asarray(s["nbytes"], dtype=np.int64)).tolist()
            starts = [0, *ends][: len(ends)]
            counts = np.asarray(s["count"], dtype=np.int64).tolist()
            keys = list(s["keys"])
            if not (len(keys) == len(ends) == len(counts)) or (ends and ends[-1] != len(text)):
                return cls()
            scripts = {
                k: (text[a:b], n) for k, a, b, n in zip(keys, starts, ends, counts, strict=True)
            }
            pages = {
                str(k): [str(p) for p in parts]
                for k, parts in dict(stored["pages"]).items()  # type: ignore[index]
            }
            shapes = _load_blobs(stored.get("shapes"))  # type: ignore[union-attr]
        except (KeyError, TypeError, ValueError, AttributeError):
            return cls()
        review = ReviewMemo(stored.get("review"))  # type: ignore[union-attr]
        return cls(last_scripts=scripts, last_pages=pages, last_shapes=shapes, review=review)

    def export(self) -> dict:
        """What this run used, for the next one (arrays, no pickle: :mod:`routeplan.cache`)."""
        keys = list(self.scripts)
        texts = [self.scripts[k][0] for k in keys]
        return {
            "scripts": {
                "keys": keys,
                "text": np.frombuffer(b"".join(texts), dtype=np.uint8),
                "nbytes": np.array([len(t) for t in texts], dtype=np.int64),
                "count": np.array([self.scripts[k][1] for k in keys], dtype=np.int64),
            },
            "pages": dict(self.pages),
            "shapes": _blobs(self.shapes),
            "review": self.review.export(),
        }

    def geometries(self, keys: list[str], make: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """A geometry for each of ``keys``: the last run's where it had the key, else made by
        ``make(positions)`` (positions in ``keys``, ascending; one call for all of them)."""
        out = np.empty(len(keys), dtype=object)
        known = [i for i, k in enumerate(keys) if k in self.last_shapes]
        missing = sorted(set(range(len(keys))) - set(known))
        if known:
            wkb = [self.last_shapes[keys[i]] for i in known]
            out[known] = shapely.from_wkb(wkb)
            self.shapes.update(zip((keys[i] for i in known), wkb, strict=True))
        if missing:
            made = make(np.array(missing, dtype=np.int64))
            out[missing] = made
            self.shapes.update(zip((keys[i] for i in missing), shapely.to_wkb(made), strict=True))
        return out

    def page(self, key: str, make: Callable[[], list[str]]) -> list[str]:
        """The page around the layers for ``key``, made when the last run had none."""
        parts = self.last_pages.get(key)
        if parts is None:
            parts = make()
        self.pages[key] = parts
        return parts

    def group(
        self,
        kind: str,
        params: object,
        parent: str,
        roles: tuple[Role, ...],
        parts: list[tuple[np.ndarray, np.ndarray]],
        draw: Callable[[np.ndarray], dict[str, Layer]],
        *,
        lazy: bool = False,
    ) -> tuple[list[bytes], dict[str, int]]:
        """The scripts of one layer group drawn in tiles: for each tile (its rows' positions
        and hashes, in ``parts``), ``draw(positions)`` gives its layers by part. Returns the
        scripts in drawing order (each role over every tile in turn; UTF-8) and the number of
        features of each part."""
        lazy = bool(lazy)  # a flag in the key: a truthy count would make every key new
        per_role: list[list[bytes]] = [[] for _ in roles]
        counts = {r.part: 0 for r in roles}
        seen: set[str] = set()
        for positions, hashes in parts:
            key = tile_key(kind, (params, parent, lazy, roles), hashes)
            while key in seen:  # two tiles alike: give each its own names
                key = tile_key(kind, key, hashes)
            seen.add(key)
            made = [self.last_scripts.get(f"{key}:{r.part}") for r in roles]
            if any(m is None for m in made):
                layers = draw(positions)
                made = []
                for r in roles:
                    layer = layers[r.part]
                    name = f"rp_{kind}_{key[:16]}_{r.part}"
                    script = (
                        layer_script(
                            name,
                            parent,
                            layer,
                            class_name=r.class_name,
                            interactive=r.interactive,
                            lazy=lazy,
                        )
                        if len(layer)
                        else ""
                    )
                    made.append((script.encode("utf-8"), len(layer)))
                self.drawn_tiles += 1
            else:
                self.reused_tiles += 1
            for i, (r, m) in enumerate(zip(roles, made, strict=True)):
                self.scripts[f"{key}:{r.part}"] = m
                if m[0]:
                    per_role[i].append(m[0])
                counts[r.part] += m[1]
        return [s for scripts in per_role for s in scripts], counts
