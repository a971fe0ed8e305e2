"""Trench network: trench corridors noded into segments, with equipment tapped onto them.

A *segment* is a stretch of one trench between two *nodes*. Nodes are trench ends,
crossings, T-junctions, vertices shared by two trenches and *taps* (the points where
equipment joins the network). Ends closer than ``node_tol_m`` to another trench, or to
another node, join it. Segments never merge across two trenches, even where one trench
continues another, so each keeps its trench's attributes (depth, laying, soil, capacity).
Two trenches drawn along one corridor would thus become parallel segments that split the
corridor's circuits between them (understating the grouping): :func:`trench_problems`
refuses such geometry before routing.

Equipment joins the network by a straight *stub* from the feature (for a row: its point
nearest to the network) to the nearest point on any trench; the stub is part of a route's
length but is not a trench segment.

Everything here is geometry and graph; nothing is electrical. Coordinates are metres of
the site's projected CRS.
"""

from __future__ import annotations

import contextlib
import dataclasses
import gc
import hashlib
import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from functools import cached_property

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely
from numpy.dtypes import StringDType
from scipy import sparse
from scipy.sparse import csgraph
from scipy.spatial import cKDTree

from layers.errors import Problem
from layers.model import Site
from routeplan.errors import ParameterError

__all__ = [
    "EQUIPMENT_LAYERS",
    "LAYINGS",
    "MIN_TOL_M",
    "OVERLAP_MIN_M",
    "OVERLAP_TOL_FACTOR",
    "TRENCH_ATTRIBUTES",
    "NetworkMemo",
    "NodedTrenches",
    "TrenchDefaults",
    "TrenchNetwork",
    "build_network",
    "check_choice",
    "check_metric_crs",
    "far_problems",
    "node_trenches",
    "overlap_min_m",
    "paused_gc",
    "retap",
    "site_equipment",
    "trench_fingerprint",
    "trench_problems",
]

#: valid values of a trench's ``laying`` attribute.
LAYINGS: tuple[str, ...] = ("direct", "duct")

#: equipment layers that join the network, in the order they are tapped.
EQUIPMENT_LAYERS: tuple[str, ...] = ("rows", "combiners", "inverters", "grid")

#: floor of every geometric tolerance [m]: absorbs floating-point noise of computed points.
MIN_TOL_M = 1e-6

#: first radii of the nearest-trench search [m], before ``snap_m``: equipment normally stands
#: a few metres from its trench, and a small radius meets few candidates.
_NEAREST_RADII_M: tuple[float, ...] = (1.0, 2.0, 4.0, 8.0, 16.0)

#: trench attributes carried by every segment, in column order.
TRENCH_ATTRIBUTES: tuple[str, ...] = (
    "depth_m",
    "laying",
    "spacing_m",
    "soil_k_m_w",
    "max_circuits",
    "max_cable_sets",
)
#: the two ways to give a trench's capacity (at most one per trench, :mod:`layers.validate`):
#: circuits, or cable sets (a circuit laid as n parallel sets counted n times)
CAPACITY_ATTRIBUTES: tuple[str, str] = ("max_circuits", "max_cable_sets")


@contextlib.contextmanager
def paused_gc() -> Iterator[None]:
    """Pause Python's cyclic garbage collector for a bulk step (also as a decorator).

    Steps that make hundreds of thousands of objects (geometries, strings) otherwise trigger
    collection passes whose cost grows with everything alive: measured on a 1 GW plant, a
    fifth of the network build. The collector is switched back on afterwards if it was on;
    cycles made meanwhile are collected then.
    """
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def check_choice(name: str, value: str, choices: Sequence[str]) -> str:
    """Return ``value`` if it is one of ``choices``, else raise naming the valid ones.

    Raises
    ------
    ParameterError
        ``value`` is not one of ``choices``.
    """
    if value not in choices:
        valid = ", ".join(repr(c) for c in choices)
        raise ParameterError([Problem("params", name, f"{value!r} is not one of {valid}")])
    return value


@dataclass(frozen=True)
class TrenchDefaults:
    """Trench attributes used where a trench does not give its own.

    Common design practice, chosen to be on the safe side when the survey says nothing;
    the designer should set them for the site.

    Attributes
    ----------
    depth_m : float
        Depth of laying [m]. Default 0.7 m, the reference depth of the buried-cable
        current ratings of IEC 60364-5-52 (from memory), so no depth correction applies.
    laying : str
        ``'direct'`` (cables laid directly in the ground) or ``'duct'``. Default ``'direct'``.
    spacing_m : float
        Clear spacing between neighbouring circuits in the trench [m]. Default 0.0
        (touching), the most onerous arrangement of the grouping tables.
    soil_k_m_w : float
        Thermal resistivity of the soil [K·m/W]. Default 2.5 K·m/W, the reference soil of
        the buried-cable ratings of IEC 60364-5-52 (from memory); drier soils are worse.
    max_circuits : float
        Largest number of circuits the trench may carry. Default NaN: no capacity limit.
    """

    depth_m: float = 0.7
    laying: str = "direct"
    spacing_m: float = 0.0
    soil_k_m_w: float = 2.5
    max_circuits: float = math.nan

    def __post_init__(self) -> None:
        check_choice("laying", self.laying, LAYINGS)
        bad = []
        if not self.depth_m > 0:
            bad.append(("depth_m", f"must be > 0 m, got {self.depth_m}"))
        if not self.spacing_m >= 0:
            bad.append(("spacing_m", f"must be >= 0 m, got {self.spacing_m}"))
        if not self.soil_k_m_w > 0:
            bad.append(("soil_k_m_w", f"must be > 0 K·m/W, got {self.soil_k_m_w}"))
        if not (math.isnan(self.max_circuits) or self.max_circuits >= 1):
            bad.append(("max_circuits", f"must be >= 1 or NaN, got {self.max_circuits}"))
        if bad:
            raise ParameterError([Problem("params", k, m) for k, m in bad])


@dataclass(frozen=True, eq=False)
class TrenchNetwork:
    """The noded trench network with its equipment taps.

    Attributes
    ----------
    crs : pyproj.CRS
        The site's projected CRS (metres).
    node_xy : numpy.ndarray
        ``(n_nodes, 2)`` node coordinates [m].
    segments : geopandas.GeoDataFrame
        One row per segment, ordered by trench then along it: ``segment_id``
        (:func:`segment_ids`: ``<trench id>@<from>-<to>``), ``trench_id``, ``trench_index``
        (row of the trenches frame), ``node_u``, ``node_v`` (node at the start and end of the
        geometry), ``start_m``, ``end_m`` (chainage along the trench [m], see
        :func:`segment_ids`), ``length_m``, the trench attributes
        ``depth_m``, ``laying``, ``spacing_m``, ``soil_k_m_w``, ``max_circuits`` (defaults
        filled in), and the LineString ``geometry`` from node_u to node_v.
    taps : geopandas.GeoDataFrame
        One row per equipment feature: ``layer``, ``feature_id``, ``connected`` (bool),
        ``node`` (-1 when not connected), ``distance_m`` (to the nearest trench),
        ``trench_id`` (the nearest trench), ``stub_m``, and the stub ``geometry`` from the
        feature to its node (None when not connected).
    node_tol_m, snap_m : float
        The tolerances the network was built with [m].
    memo : NetworkMemo or None
        What the next build may reuse (:func:`build_network`); not stored with the network
        in the plan cache (a *transient* field).
    """

    crs: pyproj.CRS | None
    node_xy: np.ndarray
    segments: gpd.GeoDataFrame
    taps: gpd.GeoDataFrame
    node_tol_m: float
    snap_m: float
    _index: dict[tuple[str, str], int] = field(default_factory=dict, repr=False)
    memo: NetworkMemo | None = field(default=None, repr=False, metadata={"transient": True})
    #: how the build made the nodes and segments (:func:`retap` needs it; not cached):
    #: ``node_tap`` (per node: the equipment row of its first member where every member is a
    #: tap, else -1), ``seg_part``, ``seg_a``, ``seg_b`` (per segment: its simple part and the
    #: positions of its ends along it [m]), ``tap_xy`` (per equipment feature: its tap point,
    #: NaN where unconnected)
    build: dict[str, np.ndarray] | None = field(
        default=None, repr=False, metadata={"transient": True}
    )

    @property
    def n_nodes(self) -> int:
        """Number of nodes."""
        return len(self.node_xy)

    @cached_property
    def seg_u(self) -> np.ndarray:
        """Start node of each segment."""
        return self.segments["node_u"].to_numpy(np.int64)

    @cached_property
    def seg_v(self) -> np.ndarray:
        """End node of each segment."""
        return self.segments["node_v"].to_numpy(np.int64)

    @cached_property
    def seg_length_m(self) -> np.ndarray:
        """Length of each segment [m]."""
        return self.segments["length_m"].to_numpy(float)

    @cached_property
    def _edges(self) -> tuple[np.ndarray, np.ndarray]:
        """Sorted undirected edge keys and, for each, the shortest segment joining the pair."""
        u, v, w = self.seg_u, self.seg_v, self.seg_length_m
        ok = np.flatnonzero(u != v)  # a loop never lies on a shortest path
        lo, hi = np.minimum(u[ok], v[ok]), np.maximum(u[ok], v[ok])
        key = lo * self.n_nodes + hi
        order = np.lexsort((ok, w[ok], key))  # parallel segments: the shortest, then the first
        key, seg = key[order], ok[order]
        first = np.r_[True, key[1:] != key[:-1]][: len(key)]  # none when every segment is a loop
        return key[first], seg[first]

    @cached_property
    def graph(self) -> sparse.csr_matrix:
        """Symmetric sparse weight matrix [m] for :mod:`scipy.sparse.csgraph`.

        Parallel segments between one pair of nodes keep only the shortest (the others can
        never lie on a shortest path); loops are left out.
        """
        key, seg = self._edges
        n = self.n_nodes
        a, b, w = key // n, key % n, self.seg_length_m[seg]
        return sparse.csr_matrix(
            (np.r_[w, w], (np.r_[a, b], np.r_[b, a])), shape=(n, n), dtype=float
        )

    def segment_between(self, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        """Index of the segment a shortest path uses between nodes ``u[i]`` and ``v[i]``.

        Parameters
        ----------
        u, v : numpy.ndarray of int
            Node pairs joined by at least one segment.
        """
        key, seg = self._edges
        k = np.minimum(u, v) * self.n_nodes + np.maximum(u, v)
        pos = np.searchsorted(key, k)
        if len(k) and (pos.max(initial=0) >= len(key) or np.any(key[pos] != k)):
            raise ValueError("a node pair is not joined by any segment")
        return seg[pos]

    @cached_property
    def node_island(self) -> np.ndarray:
        """Island (connected component) label of each node."""
        if self.n_nodes == 0:
            return np.zeros(0, dtype=np.int64)
        _, labels = csgraph.connected_components(self.graph, directed=False)
        return labels.astype(np.int64)

    def island_trenches(self, node: int) -> list[str]:
        """Sorted ids of the trenches that have a segment in the island of ``node``."""
        label = self.node_island[node]
        mask = self.node_island[self.seg_u] == label
        return sorted(set(self.segments["trench_id"].to_numpy()[mask]))

    def tap(self, layer: str, feature_id: str) -> int:
        """Row of :attr:`taps` of the feature ``feature_id`` of ``layer``."""
        return self._index[(layer, feature_id)]


def check_metric_crs(crs: pyproj.CRS | None) -> list[Problem]:
    """Problems if ``crs`` is not a projected CRS in metres (routing measures lengths in it)."""
    if crs is None:
        return [Problem("site", None, "no CRS: lengths cannot be measured")]
    crs = pyproj.CRS(crs)
    units = {ax.unit_name for ax in crs.axis_info[:2]}
    if not crs.is_projected or not units <= {"metre", "meter", "m"}:
        name = crs.to_string()
        return [
            Problem("site", None, f"CRS {name} is not projected in metres ({', '.join(units)})")
        ]
    return []


def site_equipment(site: Site) -> gpd.GeoDataFrame:
    """Every equipment feature of ``site`` that joins the network (:data:`EQUIPMENT_LAYERS` order).

    Returns
    -------
    geopandas.GeoDataFrame
        ``layer``, ``feature_id`` (str), ``geometry``; index 0..n-1.
    """
    layers, ids, geoms = [], [], []
    for name in EQUIPMENT_LAYERS:
        frame = site.layer(name)
        layers += [name] * len(frame)
        ids += [str(v) for v in frame["id"].to_numpy(dtype=object).tolist()]
        geoms.append(np.asarray(frame.geometry.array, dtype=object))
    return gpd.GeoDataFrame(
        {"layer": layers, "feature_id": ids},
        geometry=np.concatenate(geoms) if geoms else [],
        crs=site.crs,
    )


def _fill(trenches: gpd.GeoDataFrame, defaults: TrenchDefaults) -> pd.DataFrame:
    """Trench attributes with missing values (or missing columns) filled from ``defaults``."""
    out = {}
    for name in TRENCH_ATTRIBUTES:
        default = getattr(defaults, name, math.nan)
        if name not in trenches:
            col = pd.Series([default] * len(trenches), index=trenches.index)
        elif name == "laying":
            col = trenches[name].astype(object).where(trenches[name].notna(), default)
            # each distinct text once (a layer holds a few), then the column by lookup
            values = col.to_numpy(dtype=object).tolist()
            texts = {v: v.strip().lower() for v in set(filter(_is_str, values))}
            col = pd.Series([texts[v] if _is_str(v) else v for v in values], dtype=object)
        else:
            col = pd.to_numeric(trenches[name], errors="coerce").astype(float).fillna(default)
        out[name] = col.to_numpy()
    # a trench that gives its capacity one way takes no default the other way
    given = {
        name: pd.to_numeric(trenches[name], errors="coerce").notna().to_numpy()
        if name in trenches
        else np.zeros(len(trenches), dtype=bool)
        for name in CAPACITY_ATTRIBUTES
    }
    a, b = CAPACITY_ATTRIBUTES
    out[a] = np.where(given[b] & ~given[a], np.nan, out[a].astype(float))
    out[b] = np.where(given[a] & ~given[b], np.nan, out[b].astype(float))
    return pd.DataFrame(out)


def _is_str(value: object) -> bool:
    return isinstance(value, str)


def _first_per(group: np.ndarray, n: int) -> np.ndarray:
    """Index of the first element of each of ``n`` groups of a sorted ``group`` array."""
    return np.searchsorted(group, np.arange(n))


def trench_fingerprint(
    trenches: gpd.GeoDataFrame, node_tol_m: float, defaults: TrenchDefaults
) -> str:
    """SHA-256 of everything the trench-only part of noding depends on (:class:`NodedTrenches`):
    the tolerance, the defaults, each trench's id, its attributes as given and its geometry
    (WKB, exact coordinates)."""
    h = hashlib.sha256()
    h.update(repr((float(node_tol_m), defaults, len(trenches))).encode())
    # repr of the list: unambiguous, whatever characters the ids hold
    h.update(repr([str(v) for v in trenches["id"].to_numpy(dtype=object).tolist()]).encode())
    for name in TRENCH_ATTRIBUTES:
        if name in trenches:
            column = trenches[name]
            h.update(f"\x01{name}:{column.dtype}:".encode())
            values = column.to_numpy()
            numeric = values.dtype.kind in "biuf"
            h.update(values.tobytes() if numeric else repr(values.tolist()).encode())
    wkb = shapely.to_wkb(np.asarray(trenches.geometry.array, dtype=object), output_dimension=2)
    h.update(np.fromiter(map(len, wkb.tolist()), dtype=np.int64, count=len(wkb)).tobytes())
    h.update(b"".join(wkb.tolist()))
    return h.hexdigest()


@dataclass(frozen=True, eq=False)
class NodedTrenches:
    """The part of :func:`build_network` that depends on the trenches alone.

    It is most of the build's work (crossings, the candidates near each part, the pairs of
    candidates closer than the tolerance), and a re-plan after an equipment edit needs none
    of it again: :class:`NetworkMemo` hands it to the next build, which takes it only when
    the trenches' :func:`trench_fingerprint` is the same.

    Trench *candidates* are, in order: crossings, parts' first ends, parts' last ends, parts'
    inner vertices (see :func:`build_network`'s Notes).

    Attributes
    ----------
    fingerprint : str
        :func:`trench_fingerprint` of the input.
    tol_m : float
        The tolerance used [m] (``node_tol_m`` raised to :data:`MIN_TOL_M`).
    trench_ids : numpy.ndarray of str
        Each trench's id.
    attrs : pandas.DataFrame
        Trench attributes with defaults filled in (:data:`TRENCH_ATTRIBUTES`).
    owner : numpy.ndarray of int
        Trench (row) of each simple part.
    xy, cidx : numpy.ndarray
        The parts' vertices [m] and the part of each.
    cross_xy : numpy.ndarray
        Crossing and touching points of pairs of parts [m], pair by pair in the order of
        ``(cross_i, cross_j)`` (each pair's points in GEOS's order).
    cross_i, cross_j : numpy.ndarray of int
        The two parts (``cross_i < cross_j``) each crossing belongs to.
    split_ci, split_pj, split_pos_m : numpy.ndarray
        Each (candidate, other part within the tolerance) pair, sorted by candidate then part,
        and the candidate's position along that part [m].
    active : numpy.ndarray of bool
        Which candidates become nodes (all but inner vertices near no other part).
    pair_a, pair_b : numpy.ndarray of int
        Pairs of active candidates closer than the tolerance (positions among the active,
        ``pair_a < pair_b``, sorted).

    Every array is in an order fixed by the trenches alone (not by a spatial index's), so a
    noding carried over from the last one by :func:`node_trenches` equals a fresh one.
    """

    fingerprint: str
    tol_m: float
    trench_ids: np.ndarray
    attrs: pd.DataFrame
    owner: np.ndarray
    xy: np.ndarray
    cidx: np.ndarray
    cross_xy: np.ndarray
    cross_i: np.ndarray
    cross_j: np.ndarray
    split_ci: np.ndarray
    split_pj: np.ndarray
    split_pos_m: np.ndarray
    active: np.ndarray
    pair_a: np.ndarray
    pair_b: np.ndarray

    @cached_property
    def n_parts(self) -> int:
        """Number of simple parts."""
        return len(self.owner)

    @cached_property
    def parts(self) -> np.ndarray:
        """The simple parts as LineStrings (2D)."""
        if self.n_parts == 0:
            return np.zeros(0, dtype=object)
        return shapely.linestrings(self.xy, indices=self.cidx)

    @cached_property
    def tree(self) -> shapely.STRtree:
        """Spatial index of :attr:`parts`."""
        return shapely.STRtree(self.parts)

    @cached_property
    def first(self) -> np.ndarray:
        """Index of each part's first vertex."""
        return _first_per(self.cidx, self.n_parts).astype(np.int64)

    @cached_property
    def last(self) -> np.ndarray:
        """Index of each part's last vertex."""
        return np.r_[self.first[1:], len(self.xy)][: self.n_parts].astype(np.int64) - 1

    @cached_property
    def _chainage(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Each part's length, each part's offset with the parts laid end to end 1 m apart,
        and each vertex's position in that layout (sorted) [m]."""
        xy, cidx = self.xy, self.cidx
        step = np.hypot(*np.diff(xy, axis=0).T) if len(xy) else np.zeros(0)
        step[cidx[1:] != cidx[:-1]] = 0.0
        cum = np.r_[0.0, np.cumsum(step)]
        chain = cum - cum[self.first][cidx]  # chainage of each vertex along its part [m]
        part_len = chain[self.last]
        part_off = np.r_[0.0, np.cumsum(part_len + 1.0)][:-1]
        return part_len, part_off, part_off[cidx] + chain

    @cached_property
    def inner(self) -> np.ndarray:
        """Mask of the vertices that are not a part's end."""
        inner = np.ones(len(self.xy), dtype=bool)
        inner[self.first], inner[self.last] = False, False
        return inner

    @cached_property
    def cand_xy(self) -> np.ndarray:
        """Every trench candidate's coordinates [m]."""
        return _candidates(self, self.cross_xy)[0]


def node_trenches(
    trenches: gpd.GeoDataFrame,
    node_tol_m: float = 0.1,
    defaults: TrenchDefaults | None = None,
    fingerprint: str | None = None,
    last: NodedTrenches | None = None,
) -> NodedTrenches:
    """The trench-only part of :func:`build_network` (see there for the parameters).

    ``last``, the noding of the trenches before an edit, is carried over where the edit
    redrew some parts of the trenches and kept the others (:func:`_renode`): only what
    involves a redrawn part is computed again. The result equals a fresh noding, array for
    array.
    """
    defaults = TrenchDefaults() if defaults is None else defaults
    if fingerprint is None:
        fingerprint = trench_fingerprint(trenches, node_tol_m, defaults)
    tol = max(node_tol_m, MIN_TOL_M)
    trench_ids = np.array(
        [str(v) for v in trenches["id"].to_numpy(dtype=object).tolist()], dtype=object
    )
    geoms = np.asarray(trenches.geometry.array, dtype=object)
    parts, owner = shapely.get_parts(geoms, return_index=True)
    keep = (shapely.get_type_id(parts) == 1) & (shapely.length(parts) > 0)
    parts, owner = parts[keep], owner[keep]
    xy, cidx = shapely.get_coordinates(parts, return_index=True)
    empty = np.zeros(0, dtype=np.int64)
    noded = NodedTrenches(
        fingerprint=fingerprint,
        tol_m=tol,
        trench_ids=trench_ids,
        attrs=_fill(trenches, defaults),
        owner=owner.astype(np.int64),
        xy=xy,
        cidx=cidx.astype(np.int64),
        cross_xy=np.zeros((0, 2)),
        cross_i=empty,
        cross_j=empty,
        split_ci=empty,
        split_pj=empty,
        split_pos_m=np.zeros(0),
        active=np.zeros(0, dtype=bool),
        pair_a=empty,
        pair_b=empty,
    )
    done = _renode(last, noded) if last is not None else None
    if done is None:
        done = _node(noded)
    # the parts, their index and vertex masks depend on xy and cidx only: keep those computed
    # (and the parts redrawn since ``last``, which the build asks for again)
    done.__dict__.update({k: v for k, v in noded.__dict__.items() if k in _PART_CACHE})
    return done


def _node(noded: NodedTrenches) -> NodedTrenches:
    """``noded`` (its parts only) noded afresh."""
    parts, tree, tol = noded.parts, noded.tree, noded.tol_m
    n_parts = len(parts)
    # candidate nodes: crossings (0), ends (1), vertices (2); which other parts each splits
    ii, jj = tree.query(parts, predicate="intersects")
    ii, jj = _sorted_pairs(ii[ii < jj], jj[ii < jj], n_parts)
    cross_xy, k = _crossings(parts, noded.xy, noded.first, noded.last, ii, jj)
    n_cross = len(cross_xy)
    cand_xy, cand_part = _candidates(noded, cross_xy)
    cand_pts = shapely.points(cand_xy)
    ci, pj = tree.query(cand_pts, predicate="dwithin", distance=tol)
    other = cand_part[ci] != pj
    ci, pj = _sorted_pairs(ci[other], pj[other], n_parts)
    active = _active(len(cand_xy), n_cross + 2 * n_parts, ci)
    act = np.flatnonzero(active)
    a, b = _close_pairs(cand_pts[act], cand_xy[act], tol)
    a, b = _sorted_pairs(a, b, len(act))
    return dataclasses.replace(
        noded,
        cross_xy=cross_xy,
        cross_i=ii[k],
        cross_j=jj[k],
        split_ci=ci,
        split_pj=pj,
        split_pos_m=shapely.line_locate_point(parts[pj], cand_pts[ci]),
        active=active,
        pair_a=a,
        pair_b=b,
    )


def _renode(last: NodedTrenches, noded: NodedTrenches) -> NodedTrenches | None:
    """``noded`` (its parts only) noded by carrying over ``last``, the noding before an edit
    that kept every trench's number of parts and redrew at most :data:`REDRAWN_MAX` of them
    (None otherwise).

    A crossing of two parts not redrawn, a candidate's split of a part where neither moved,
    and two active candidates closer than the tolerance where neither moved are kept as they
    were (their coordinates are the same); what involves a redrawn part or a candidate that
    moved, appeared or became active is decided again by the GEOS predicates of
    :func:`_node`: a split queried the same way round (the candidate as the query geometry,
    the part in the index), so a borderline distance falls alike; a crossing by
    ``intersects``, which is exact (either way round).
    """
    n_parts = noded.n_parts
    redrawn = _redrawn_parts(last, noded) if n_parts else None
    if redrawn is None or len(redrawn) > REDRAWN_MAX:
        return None
    same = np.ones(n_parts, dtype=bool)
    same[redrawn] = False
    if len(redrawn) == 0:  # the attributes or ids changed, no part: the noding is the last
        kept = ("cross_xy", "cross_i", "cross_j", "split_ci", "split_pj", "split_pos_m",
                "active", "pair_a", "pair_b")  # fmt: skip
        return dataclasses.replace(noded, **{name: getattr(last, name) for name in kept})
    parts, tree, tol, xy = noded.parts, noded.tree, noded.tol_m, noded.xy

    # crossings: the kept pairs', then those of every pair with a redrawn part
    keep_x = same[last.cross_i] & same[last.cross_j]
    qi, qj = tree.query(parts[redrawn], predicate="intersects")
    qi = redrawn[qi]
    key = np.unique((np.minimum(qi, qj) * n_parts + np.maximum(qi, qj))[qi != qj])
    ii, jj = key // n_parts, key % n_parts  # two redrawn parts find each other: once
    new_xy, k = _crossings(parts, xy, noded.first, noded.last, ii, jj)
    cross_i = np.r_[last.cross_i[keep_x], ii[k]]
    cross_j = np.r_[last.cross_j[keep_x], jj[k]]
    order = np.argsort(cross_i * n_parts + cross_j, kind="stable")  # each pair's points kept
    cross_xy = np.concatenate([last.cross_xy[keep_x], new_xy])[order]
    cross_i, cross_j = cross_i[order], cross_j[order]
    n_cross, n_old = len(cross_xy), len(last.cross_xy)

    # where each of the last candidates is now (-1: gone or moved)
    now = np.full(len(last.cand_xy), -1, dtype=np.int64)
    placed = np.empty(len(order), dtype=np.int64)
    placed[order] = np.arange(len(order))
    now[np.flatnonzero(keep_x)] = placed[: int(keep_x.sum())]
    kept_parts = np.flatnonzero(same)
    now[n_old + kept_parts] = n_cross + kept_parts
    now[n_old + n_parts + kept_parts] = n_cross + n_parts + kept_parts
    vertex = np.full(len(last.xy), -1, dtype=np.int64)  # last vertex -> vertex now
    v_kept = same[last.cidx]
    vertex[v_kept] = (noded.first[last.cidx] + np.arange(len(last.xy)) - last.first[last.cidx])[
        v_kept
    ]
    inner_rank = np.cumsum(noded.inner) - 1
    v_now = vertex[last.inner]
    now[n_old + 2 * n_parts :] = np.where(
        v_now >= 0, n_cross + 2 * n_parts + inner_rank[np.maximum(v_now, 0)], -1
    )
    cand_xy, cand_part = _candidates(noded, cross_xy)
    moved = np.ones(len(cand_xy), dtype=bool)
    moved[now[now >= 0]] = False

    # splits: kept; those of moved candidates (any part); those of the others (redrawn parts)
    keep_s = (now[last.split_ci] >= 0) & same[last.split_pj]
    fresh = np.flatnonzero(moved)
    a_ci, a_pj = tree.query(shapely.points(cand_xy[fresh]), predicate="dwithin", distance=tol)
    a_ci = fresh[a_ci]
    box = shapely.bounds(parts[redrawn])
    reach = tol * (1 + 1e-6) + 1e-9
    near = ~moved & _in_box(cand_xy, box.min(axis=0)[:2] - reach, box.max(axis=0)[2:] + reach)
    near = np.flatnonzero(near)
    b_ci, b_pj = shapely.STRtree(parts[redrawn]).query(
        shapely.points(cand_xy[near]), predicate="dwithin", distance=tol
    )
    ci = np.r_[a_ci, near[b_ci]]
    pj = np.r_[a_pj, redrawn[b_pj]]
    other = cand_part[ci] != pj
    ci, pj = ci[other], pj[other]
    pos = shapely.line_locate_point(parts[pj], shapely.points(cand_xy[ci]))
    ci = np.r_[now[last.split_ci[keep_s]], ci]
    pj = np.r_[last.split_pj[keep_s], pj]
    pos = np.r_[last.split_pos_m[keep_s], pos]
    order = np.lexsort((pj, ci))
    ci, pj, pos = ci[order], pj[order], pos[order]
    active = _active(len(cand_xy), n_cross + 2 * n_parts, ci)

    # close pairs of active candidates: kept where neither moved nor became active
    act = np.flatnonzero(active)
    at = np.full(len(cand_xy), -1, dtype=np.int64)
    at[act] = np.arange(len(act))
    was = np.flatnonzero(last.active)
    a, b = now[was[last.pair_a]], now[was[last.pair_b]]
    keep_p = (a >= 0) & (b >= 0)  # neither moved
    a, b = at[a[keep_p]], at[b[keep_p]]
    keep_p = (a >= 0) & (b >= 0)  # both still active
    a, b = a[keep_p], b[keep_p]
    new_act = active.copy()  # active now, and moved or not active before
    new_act[now[was][now[was] >= 0]] = False
    new_act = new_act[act]
    if new_act.any():
        new_xy = cand_xy[act[new_act]]
        sub = np.flatnonzero(
            _in_box(cand_xy[act], new_xy.min(axis=0) - reach, new_xy.max(axis=0) + reach)
        )
        pa, pb = _close_pairs(shapely.points(cand_xy[act[sub]]), cand_xy[act[sub]], tol)
        touch = new_act[sub[pa]] | new_act[sub[pb]]
        a, b = np.r_[a, sub[pa[touch]]], np.r_[b, sub[pb[touch]]]
    a, b = _sorted_pairs(a, b, len(act))
    return dataclasses.replace(
        noded,
        cross_xy=cross_xy,
        cross_i=cross_i,
        cross_j=cross_j,
        split_ci=ci,
        split_pj=pj,
        split_pos_m=pos,
        active=active,
        pair_a=a,
        pair_b=b,
    )


def _sorted_pairs(i: np.ndarray, j: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """The pairs ``(i, j)`` (values below ``n``) sorted by ``i`` then ``j``."""
    n = max(n, 1)
    key = np.sort(i.astype(np.int64) * n + j.astype(np.int64))
    return key // n, key % n


def _candidates(noded: NodedTrenches, cross_xy: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The trench candidates of ``noded``'s parts with the crossings ``cross_xy``: their
    coordinates [m] and the part each lies on (-1 for a crossing)."""
    xy, n = noded.xy, noded.n_parts
    cand_xy = np.concatenate([cross_xy, xy[noded.first], xy[noded.last], xy[noded.inner]])
    part = [np.full(len(cross_xy), -1), np.arange(n), np.arange(n), noded.cidx[noded.inner]]
    return cand_xy, np.concatenate(part)


def _active(n_cand: int, n_always: int, split_ci: np.ndarray) -> np.ndarray:
    """Which candidates become nodes: the first ``n_always`` (crossings and ends) and every
    inner vertex that splits another part."""
    active = np.zeros(n_cand, dtype=bool)
    active[:n_always] = True
    active[split_ci] = True
    return active


def _in_box(xy: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Which points lie in the box from ``lo`` to ``hi`` (edges included)."""
    return (xy[:, 0] >= lo[0]) & (xy[:, 1] >= lo[1]) & (xy[:, 0] <= hi[0]) & (xy[:, 1] <= hi[1])


#: cached properties of NodedTrenches that depend on its vertices alone
_PART_CACHE = frozenset(
    {"n_parts", "parts", "tree", "first", "last", "inner", "_chainage", "_redrawn_since"}
)


def _redrawn_parts(old: NodedTrenches, new: NodedTrenches) -> np.ndarray | None:
    """The parts of ``new`` that differ from ``old``'s (exact coordinates, sorted), where both
    have as many parts per trench at the same tolerance; None otherwise. Remembered on ``new``
    for ``old``'s fingerprint (which fixes ``old``'s parts): a build asks twice, to carry the
    noding over (:func:`_renode`) and the nearest parts (:meth:`NetworkMemo.redrawn`)."""
    known = new.__dict__.get("_redrawn_since")
    if known is not None and known[0] == old.fingerprint:
        return known[1]
    redrawn = None
    if old.tol_m == new.tol_m and np.array_equal(old.owner, new.owner):
        redrawn = np.flatnonzero(~shapely.equals_exact(old.parts, new.parts, tolerance=0))
    new.__dict__["_redrawn_since"] = (old.fingerprint, redrawn)
    return redrawn


#: most redrawn trench parts :meth:`NetworkMemo.redrawn` checks the equipment against (one
#: distance per feature and part; beyond, every feature is searched again) and
#: :func:`_renode` carries a noding over (beyond, the trenches are noded afresh)
REDRAWN_MAX = 64


@dataclass(frozen=True, eq=False)
class NetworkMemo:
    """What one network build hands to the next (kept in the plan cache, :mod:`routeplan.cache`):
    the trenches noded (:class:`NodedTrenches`) and each equipment feature's nearest part and
    distance. :func:`build_network` takes from it only what its own input makes valid — the
    noding when the trenches' fingerprint is the same; a feature's nearest part when, besides,
    ``snap_m`` is the same and the feature at the same position has exactly the same geometry
    (:func:`shapely.equals_exact`, tolerance 0: the nearest part depends on nothing else) — so
    a build with a memo gives the same network as one without. (Features are matched by
    position: an edit that keeps the layers' order, such as moving a pad, keeps every other
    feature's match.) After a trench edit that keeps the parts' number and order, the nearest
    parts are carried where the redrawn parts cannot have changed them
    (:meth:`redrawn`).

    Attributes
    ----------
    noded : NodedTrenches
    snap_m : float
        The ``snap_m`` [m] the nearest parts were searched with.
    equipment : geopandas.GeoDataFrame
        Per feature: ``part`` (its nearest part, -1: none within reach of the search),
        ``distance_m`` (inf: none) and its ``geometry``.
    """

    noded: NodedTrenches
    snap_m: float
    equipment: gpd.GeoDataFrame

    def redrawn(self, noded: NodedTrenches) -> NetworkMemo | None:
        """This memo for a build on ``noded``, trenches whose parts are this memo's, in the same
        order and number per trench, some of them redrawn (a trench moved or reshaped): a
        feature keeps its nearest part where that part is not one redrawn and every redrawn
        part is farther (or as far and later: ties go to the lowest part). None where the
        parts differ otherwise, or more than :data:`REDRAWN_MAX` of them are redrawn."""
        redrawn = _redrawn_parts(self.noded, noded)
        if redrawn is None or len(redrawn) > REDRAWN_MAX:
            return None
        part = self.equipment["part"].to_numpy(np.int64)
        dist = self.equipment["distance_m"].to_numpy(float)
        geoms = np.asarray(self.equipment.geometry.array, dtype=object)
        keep = (part >= 0) & ~np.isin(part, redrawn)
        for c in redrawn.tolist():
            d = shapely.distance(geoms, noded.parts[c])
            keep &= (d > dist) | ((d == dist) & (c > part))
        # a feature not kept is searched again: no geometry matches it (see nearest)
        geoms = np.where(keep, geoms, None)
        equipment = gpd.GeoDataFrame(
            {"part": part, "distance_m": dist}, geometry=geoms, crs=self.equipment.crs
        )
        return NetworkMemo(noded=noded, snap_m=self.snap_m, equipment=equipment)

    def nearest(self, geoms: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """For each geometry: whether its nearest part is remembered, the part and the
        distance [m] (-1 and inf where not)."""
        n = min(len(geoms), len(self.equipment))
        known = np.zeros(len(geoms), dtype=bool)
        old = np.asarray(self.equipment.geometry.array, dtype=object)
        known[:n] = shapely.equals_exact(geoms[:n], old[:n], tolerance=0)
        part, dist = np.full(len(geoms), -1, dtype=np.int64), np.full(len(geoms), np.inf)
        part[known] = self.equipment["part"].to_numpy(np.int64)[:n][known[:n]]
        dist[known] = self.equipment["distance_m"].to_numpy(float)[:n][known[:n]]
        return known, part, dist


@paused_gc()
def build_network(
    trenches: gpd.GeoDataFrame,
    equipment: gpd.GeoDataFrame | None = None,
    *,
    node_tol_m: float = 0.1,
    snap_m: float = 30.0,
    defaults: TrenchDefaults | None = None,
    memo: NetworkMemo | None = None,
) -> TrenchNetwork:
    """Node the trench corridors into segments and tap the equipment onto them.

    Parameters
    ----------
    trenches : geopandas.GeoDataFrame
        ``id`` and optional attributes (``depth_m``, ``laying``, ``spacing_m``,
        ``soil_k_m_w``, ``max_circuits`` or ``max_cable_sets``; NaN/None where not given);
        LineString/MultiLineString in a projected CRS [m].
    equipment : geopandas.GeoDataFrame, optional
        ``layer``, ``feature_id`` and any geometry (see :func:`site_equipment`).
    node_tol_m : float
        Ends and nodes closer than this join [m] (below :data:`MIN_TOL_M` it is raised to it).
    snap_m : float
        Longest stub [m]; farther equipment is left unconnected (see :func:`far_problems`).
    defaults : TrenchDefaults, optional
        Values for trench attributes not given.
    memo : NetworkMemo, optional
        The last build's :attr:`TrenchNetwork.memo`: what of it is still valid is reused.

    Returns
    -------
    TrenchNetwork

    Notes
    -----
    Candidate nodes are every part's two ends, every crossing or touching point of two
    parts, every vertex of a part lying within ``node_tol_m`` of another part, and every
    tap. A candidate splits each part within ``node_tol_m`` of it (a tap only its own part).
    Candidates within ``node_tol_m`` of each other form one node (transitively); the node
    sits at its first candidate, preferring crossings, then ends, vertices and taps.
    Segment ends are moved onto their node, so a segment's length can differ from the
    trench's stretch by up to ``node_tol_m`` at each end; where several split points of a part
    join one node, a segment's chainage (``start_m``, ``end_m``, its id) is taken at the one
    nearest the node. A loop shorter than twice ``node_tol_m`` that starts and ends at one
    node is dropped. A trench that crosses itself is not noded at its own crossing.
    """
    defaults = TrenchDefaults() if defaults is None else defaults
    if not node_tol_m >= 0:
        raise ParameterError([Problem("params", "node_tol_m", f"must be >= 0 m, got {node_tol_m}")])
    if not snap_m >= 0:
        raise ParameterError([Problem("params", "snap_m", f"must be >= 0 m, got {snap_m}")])
    fingerprint = trench_fingerprint(trenches, node_tol_m, defaults)
    if memo is not None and memo.noded.fingerprint == fingerprint:
        noded = memo.noded
    else:
        last = memo.noded if memo is not None else None
        noded = node_trenches(trenches, node_tol_m, defaults, fingerprint, last)
        memo = memo.redrawn(noded) if memo is not None else None
    tol = noded.tol_m
    xy, owner, trench_ids = noded.xy, noded.owner, noded.trench_ids
    parts, n_parts = noded.parts, noded.n_parts
    part_len, part_off, gkey = noded._chainage

    # --- equipment: nearest part, distance, tap point
    equipment = _empty_equipment(trenches.crs) if equipment is None else equipment
    eq_geoms = np.asarray(equipment.geometry.array, dtype=object)
    n_eq = len(eq_geoms)
    eq_part = np.full(n_eq, -1, dtype=np.int64)
    eq_dist = np.full(n_eq, np.inf)
    todo = np.arange(n_eq)
    if memo is not None and memo.snap_m == snap_m and n_eq:
        known, eq_part, eq_dist = memo.nearest(eq_geoms)
        todo = np.flatnonzero(~known)
    if len(todo) and n_parts:
        # within snap_m, then the far ones without a limit, for their distance
        todo = _nearest_within(noded.tree, eq_geoms, todo, snap_m, eq_part, eq_dist)
        _nearest(noded.tree, eq_geoms[todo], todo, None, eq_part, eq_dist)
    connected = (eq_part >= 0) & (eq_dist <= snap_m)
    ceq = np.flatnonzero(connected)
    sl = shapely.shortest_line(eq_geoms[ceq], parts[eq_part[ceq]])
    sl_xy = shapely.get_coordinates(sl).reshape(-1, 2, 2)  # shortest lines have 2 points
    eq_near, tap_xy = sl_xy[:, 0], sl_xy[:, 1]
    tap_pts = shapely.points(tap_xy)

    # --- cluster the active candidates (trench candidates, then taps) closer than tol
    t_act = np.flatnonzero(noded.active)
    n_ta = len(t_act)
    a, b = _tap_pairs(noded.cand_xy[t_act], tap_xy, tap_pts, tol)
    a, b = np.r_[noded.pair_a, a], np.r_[noded.pair_b, b]
    m = n_ta + len(ceq)
    adj = sparse.coo_matrix((np.ones(len(a), dtype=np.int8), (a, b)), shape=(m, m))
    _, label = csgraph.connected_components(adj, directed=False)
    _, rep = np.unique(label, return_index=True)  # first member of each cluster
    order = np.argsort(rep, kind="stable")  # number nodes by their first member
    node_of_label = np.empty(len(rep), dtype=np.int64)
    node_of_label[order] = np.arange(len(rep))
    act_xy = np.concatenate([noded.cand_xy[t_act], tap_xy])
    node_xy = act_xy[rep[order]]
    node_first = rep[order]  # each node's first member (trench candidates, then the taps)
    cand_node = np.full(len(noded.cand_xy), -1, dtype=np.int64)
    cand_node[t_act] = node_of_label[label[:n_ta]]
    tap_node = node_of_label[label[n_ta:]]

    # --- split points of every part: its ends, the candidates near it, its taps
    n_cross = len(noded.cross_xy)
    e_part = np.concatenate([np.arange(n_parts), np.arange(n_parts), noded.split_pj, eq_part[ceq]])
    e_pos = np.concatenate(
        [
            np.zeros(n_parts),
            part_len,
            noded.split_pos_m,
            shapely.line_locate_point(parts[eq_part[ceq]], tap_pts),
        ]
    )
    e_node = np.concatenate(
        [
            cand_node[n_cross + np.arange(n_parts)],
            cand_node[n_cross + n_parts + np.arange(n_parts)],
            cand_node[noded.split_ci],
            tap_node,
        ]
    )
    order = np.lexsort((e_node, e_pos, e_part))
    e_part, e_pos, e_node = e_part[order], e_pos[order], e_node[order]

    # --- pieces between consecutive split points of one part
    k = np.flatnonzero(e_part[1:] == e_part[:-1])
    p_part, p_a, p_b = e_part[k], e_pos[k], e_pos[k + 1]
    p_u, p_v = e_node[k], e_node[k + 1]
    keep = (p_u != p_v) | (p_b - p_a > 2 * tol)
    e_at = _node_chainage(parts, e_part, e_pos, e_node, node_xy, k[~keep])
    p_at_a, p_at_b = e_at[k][keep], e_at[k + 1][keep]
    p_part, p_a, p_b, p_u, p_v = p_part[keep], p_a[keep], p_b[keep], p_u[keep], p_v[keep]
    seg_geom = _pieces(xy, gkey, part_off, p_part, p_a, p_b, node_xy[p_u], node_xy[p_v])

    # --- segment table
    p_owner = owner[p_part]
    trench_at = _trench_offsets(owner, part_len)[p_part]  # the part's start along its trench
    p_from, p_to = trench_at + p_at_a, trench_at + p_at_b
    seg_ids = segment_ids(trench_ids[p_owner], p_from, p_to)
    segments = gpd.GeoDataFrame(
        {
            "segment_id": seg_ids,
            "trench_id": trench_ids[p_owner],
            "trench_index": p_owner.astype(np.int64),
            "node_u": p_u,
            "node_v": p_v,
            "start_m": p_from,
            "end_m": p_to,
            "length_m": shapely.length(seg_geom),
            **{name: noded.attrs[name].to_numpy()[p_owner] for name in TRENCH_ATTRIBUTES},
        },
        geometry=seg_geom,
        crs=trenches.crs,
    )

    # --- taps
    eq_node = np.full(n_eq, -1, dtype=np.int64)
    eq_node[ceq] = tap_node
    stubs = np.full(n_eq, None, dtype=object)
    stubs[ceq] = shapely.linestrings(
        np.stack([eq_near, node_xy[eq_node[ceq]]], axis=1).reshape(-1, 2),
        indices=np.repeat(np.arange(len(ceq)), 2),
    )
    stub_m = np.full(n_eq, np.nan)
    stub_m[ceq] = shapely.length(stubs[ceq])
    near_trench = np.full(n_eq, None, dtype=object)
    has = eq_part >= 0
    near_trench[has] = trench_ids[owner[eq_part[has]]]
    taps_frame = gpd.GeoDataFrame(
        {
            "layer": equipment["layer"].to_numpy(dtype=object),
            "feature_id": equipment["feature_id"].to_numpy(dtype=object),
            "connected": connected,
            "node": eq_node,
            "distance_m": eq_dist,
            "trench_id": near_trench,
            "stub_m": stub_m,
        },
        geometry=stubs,
        crs=trenches.crs,
    )
    pairs = zip(
        map(str, equipment["layer"].to_numpy(dtype=object).tolist()),
        map(str, equipment["feature_id"].to_numpy(dtype=object).tolist()),
        strict=True,
    )
    index = dict(zip(pairs, range(n_eq), strict=True))
    all_tap_xy = np.full((n_eq, 2), np.nan)
    all_tap_xy[ceq] = tap_xy
    build = {
        "node_tap": np.where(
            node_first >= n_ta, ceq[np.clip(node_first - n_ta, 0, max(len(ceq) - 1, 0))], -1
        )
        if len(ceq)
        else np.full(len(node_first), -1, dtype=np.int64),
        "seg_part": p_part,
        "seg_a": p_a,
        "seg_b": p_b,
        "tap_xy": all_tap_xy,
    }
    return TrenchNetwork(
        crs=trenches.crs,
        node_xy=node_xy,
        segments=segments,
        taps=taps_frame,
        node_tol_m=float(node_tol_m),
        snap_m=float(snap_m),
        _index=index,
        build=build,
        memo=NetworkMemo(
            noded=noded,
            snap_m=float(snap_m),
            equipment=gpd.GeoDataFrame(
                {"part": eq_part, "distance_m": eq_dist}, geometry=eq_geoms, crs=trenches.crs
            ),
        ),
    )


def retap(network: TrenchNetwork, row: int, geometry: shapely.Geometry) -> TrenchNetwork | None:
    """The network with equipment feature ``row`` — not connected in ``network`` (e.g. moved
    beyond ``snap_m`` when it was built) — connected at ``geometry``, without building again:
    the same network :func:`build_network` gives for the site with the feature there.

    Only the common case is done here: the feature's tap point lies farther than twice the
    tolerance from every node candidate and every other tap, so it becomes a node of its own
    that splits one segment in two (the node numbered as a build numbers it). Anything else —
    within reach of a candidate or tap, beyond ``snap_m``, a split that would make two ids
    alike, a network without build data — returns None (build the network instead)."""
    b = network.build
    memo = network.memo
    if b is None or memo is None or network.taps["node"].iloc[row] >= 0:
        return None
    noded = memo.noded
    tol, snap = noded.tol_m, network.snap_m
    geom = np.array([geometry], dtype=object)
    part, dist = np.full(1, -1, dtype=np.int64), np.full(1, np.inf)
    _nearest_within(noded.tree, geom, np.arange(1), snap, part, dist)
    if part[0] < 0 or not dist[0] <= snap:
        return None
    j = int(part[0])
    parts = noded.parts
    line = shapely.shortest_line(geom, parts[j : j + 1])
    (near_xy, tap_xy) = shapely.get_coordinates(line).reshape(2, 2)
    reach = 2.0 * tol + 1e-6
    t_act = noded.cand_xy[noded.active]
    if len(t_act) and np.min(np.hypot(*(t_act - tap_xy).T)) <= reach:
        return None
    others = b["tap_xy"]
    ok = ~np.isnan(others[:, 0])
    if ok.any() and np.min(np.hypot(*(others[ok] - tap_xy).T)) <= reach:
        return None
    pos = float(shapely.line_locate_point(parts[j], shapely.points(tap_xy)))
    seg_part, seg_a, seg_b = b["seg_part"], b["seg_a"], b["seg_b"]
    hit = np.flatnonzero((seg_part == j) & (seg_a < pos) & (seg_b > pos))
    if len(hit) != 1:
        return None
    s = int(hit[0])
    # the new node's number: after every node with a trench candidate and the tap-only nodes
    # whose first tap comes earlier in the equipment order
    node_tap = b["node_tap"]
    k = int(np.sum(node_tap < 0) + np.sum((node_tap >= 0) & (node_tap < row)))
    node_xy = np.insert(network.node_xy, k, tap_xy, axis=0)
    seg = network.segments
    u_old, v_old = int(seg["node_u"].iloc[s]), int(seg["node_v"].iloc[s])
    u, v = u_old + (u_old >= k), v_old + (v_old >= k)
    part_len, part_off, gkey = noded._chainage
    start_m, end_m = float(seg["start_m"].iloc[s]), float(seg["end_m"].iloc[s])
    trench_at = _trench_offsets(noded.owner, part_len)[j]
    mid_m = trench_at + pos
    tid = noded.trench_ids[noded.owner[j]]
    new_ids = segment_ids(
        np.array([tid, tid]), np.array([start_m, mid_m]), np.array([mid_m, end_m])
    )
    old_id = seg["segment_id"].iloc[s]
    if segment_ids(np.array([tid]), np.array([start_m]), np.array([end_m]))[0] != old_id:
        return None  # the old id was widened against a twin: the build decides
    same_trench = np.flatnonzero(seg["trench_index"].to_numpy() == noded.owner[j])
    twins = set(seg["segment_id"].to_numpy(dtype=object)[same_trench[same_trench != s]].tolist())
    if new_ids[0] == new_ids[1] or twins & set(new_ids.tolist()):
        return None
    geoms = _pieces(
        noded.xy, gkey, part_off, np.array([j, j]), np.array([seg_a[s], pos]),
        np.array([pos, seg_b[s]]), node_xy[[u, k]], node_xy[[k, v]],
    )  # fmt: skip
    two = seg.iloc[[s, s]].copy()
    two["segment_id"] = new_ids
    two["node_u"] = np.array([u, k], dtype=two["node_u"].dtype)
    two["node_v"] = np.array([k, v], dtype=two["node_v"].dtype)
    two["start_m"] = np.array([start_m, mid_m])
    two["end_m"] = np.array([mid_m, end_m])
    two["length_m"] = shapely.length(geoms)
    two = two.set_geometry(gpd.GeoSeries(geoms, index=two.index, crs=seg.crs))
    segments = pd.concat([seg.iloc[:s], two, seg.iloc[s + 1 :]], ignore_index=True)
    for col in ("node_u", "node_v"):
        x = segments[col].to_numpy().copy()
        keep = np.r_[np.arange(s), np.arange(s + 2, len(x))]
        x[keep] += x[keep] >= k
        segments[col] = x
    taps = network.taps.copy()
    node = taps["node"].to_numpy(np.int64).copy()
    node += node >= k
    node[row] = k
    taps["node"] = node
    stub = shapely.linestrings(np.stack([near_xy, tap_xy]))
    geoms_t = np.asarray(taps.geometry.array, dtype=object).copy()
    geoms_t[row] = stub
    conn = taps["connected"].to_numpy(bool).copy()
    conn[row] = True
    taps["connected"] = conn
    for col, value in (
        ("distance_m", float(dist[0])),
        ("trench_id", tid),
        ("stub_m", float(shapely.length(stub))),
    ):
        x = taps[col].to_numpy().copy()
        x[row] = value
        taps[col] = x
    taps = taps.set_geometry(gpd.GeoSeries(geoms_t, index=taps.index, crs=taps.crs))
    tap_all = others.copy()
    tap_all[row] = tap_xy
    build = {
        "node_tap": np.insert(node_tap, k, row),
        "seg_part": np.insert(seg_part, s + 1, j),
        "seg_a": np.r_[seg_a[:s], seg_a[s], pos, seg_a[s + 1 :]],
        "seg_b": np.r_[seg_b[:s], pos, seg_b[s], seg_b[s + 1 :]],
        "tap_xy": tap_all,
    }
    out = dataclasses.replace(
        network, node_xy=node_xy, segments=segments, taps=taps, build=build, memo=memo
    )
    # the islands: the new node joins the split segment's; labelled, as
    # scipy.sparse.csgraph.connected_components labels them, in the order of each island's
    # lowest node (not searched again: a placement search retaps once per candidate)
    island = np.insert(network.node_island, k, network.node_island[u_old])
    _, first = np.unique(island, return_index=True)
    label = np.empty(len(first), dtype=np.int64)
    label[np.argsort(first)] = np.arange(len(first))
    out.__dict__["node_island"] = label[island]
    return out


def _tap_pairs(
    t_xy: np.ndarray, tap_xy: np.ndarray, tap_pts: np.ndarray, tol: float
) -> tuple[np.ndarray, np.ndarray]:
    """Pairs closer than ``tol`` that involve a tap, as positions in the active candidates
    (``len(t_xy)`` trench candidates, then the taps): tap–trench and tap–tap, decided as
    :func:`_close_pairs` decides them."""
    n_t = len(t_xy)
    a_tt, b_tt = _close_pairs(tap_pts, tap_xy, tol)
    if len(tap_xy) == 0 or n_t == 0:
        return a_tt + n_t, b_tt + n_t
    near = cKDTree(tap_xy).sparse_distance_matrix(
        cKDTree(t_xy), tol * (1 + 1e-6) + 1e-9, output_type="ndarray"
    )
    i, j = near["i"].astype(np.int64), near["j"].astype(np.int64)
    ok = shapely.dwithin(shapely.points(t_xy[j]), tap_pts[i], tol)
    return np.r_[j[ok], a_tt + n_t], np.r_[i[ok] + n_t, b_tt + n_t]


def _nearest_within(
    tree: shapely.STRtree,
    geoms: np.ndarray,
    rows: np.ndarray,
    snap_m: float,
    part: np.ndarray,
    dist: np.ndarray,
) -> np.ndarray:
    """:func:`_nearest` for ``geoms[rows]`` within ``snap_m`` (at least :data:`MIN_TOL_M`),
    searched at growing radii (a geometry with a part within r has its nearest among the parts
    within r; small radii meet few candidates). Returns the rows with no part within reach."""
    for radius in [r for r in _NEAREST_RADII_M if r < snap_m] + [max(snap_m, MIN_TOL_M)]:
        if not len(rows):
            break
        _nearest(tree, geoms[rows], rows, radius, part, dist)
        rows = rows[part[rows] < 0]
    return rows


def _nearest(
    tree: shapely.STRtree,
    geoms: np.ndarray,
    rows: np.ndarray,
    max_distance: float | None,
    part: np.ndarray,
    dist: np.ndarray,
) -> None:
    """Fill ``part[rows]`` and ``dist[rows]`` with each geometry's nearest tree item.

    Ties go to the lowest tree index, so the result does not depend on the tree's order.
    """
    if len(geoms) == 0:
        return
    if max_distance is None:
        (qi, qj), qd = tree.query_nearest(geoms, return_distance=True, all_matches=True)
    else:  # measured: ~4x faster than query_nearest(max_distance=...) on a comb site
        # candidates by envelope (widened by max_distance), then one exact distance each:
        # cheaper than GEOS's dwithin predicate followed by the distance
        b = shapely.bounds(geoms)
        r = max_distance
        boxes = shapely.box(b[:, 0] - r, b[:, 1] - r, b[:, 2] + r, b[:, 3] + r)
        qi, qj = tree.query(boxes)
        qd = shapely.distance(geoms[qi], tree.geometries[qj])
        near = qd <= r
        qi, qj, qd = qi[near], qj[near], qd[near]
    if len(qi) == 0:
        return
    order = np.lexsort((qj, qd, qi))
    qi, qj, qd = qi[order], qj[order], qd[order]
    firsts = np.r_[True, qi[1:] != qi[:-1]]
    part[rows[qi[firsts]]], dist[rows[qi[firsts]]] = qj[firsts], qd[firsts]


def _crossings(
    parts: np.ndarray,
    xy: np.ndarray,
    first: np.ndarray,
    last: np.ndarray,
    ii: np.ndarray,
    jj: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Coordinates of the intersections of the part pairs ``(ii, jj)``, pair by pair, and the
    pair (its position in ``ii``, ``jj``) of each.

    Two straight parts (two vertices each) that share exactly one end and are not parallel
    meet only at that end: its coordinates are taken as they are, without computing the
    intersection (most pairs of a network drawn split at its junctions). Every other pair
    is intersected by GEOS (:func:`shapely.intersection`).
    """
    n_vert = last - first + 1
    a0, a1, b0, b1 = xy[first[ii]], xy[last[ii]], xy[first[jj]], xy[last[jj]]
    s00, s01 = (a0 == b0).all(axis=1), (a0 == b1).all(axis=1)
    s10, s11 = (a1 == b0).all(axis=1), (a1 == b1).all(axis=1)
    shared = s00.astype(int) + s01 + s10 + s11
    da, db = a1 - a0, b1 - b0
    fast = (n_vert[ii] == 2) & (n_vert[jj] == 2) & (shared == 1)
    fast &= da[:, 0] * db[:, 1] - da[:, 1] * db[:, 0] != 0
    slow = np.flatnonzero(~fast)
    geoms = shapely.intersection(parts[ii[slow]], parts[jj[slow]])
    slow_xy, k = shapely.get_coordinates(geoms, return_index=True)
    end = np.where((s00 | s01)[:, None], a0, a1)
    which = np.concatenate([np.flatnonzero(fast), slow[k]])
    order = np.argsort(which, kind="stable")  # pair by pair, each pair's points in order
    return np.concatenate([end[fast], slow_xy])[order].reshape(-1, 2), which[order]


def _close_pairs(points: np.ndarray, xy: np.ndarray, tol: float) -> tuple[np.ndarray, np.ndarray]:
    """Pairs ``(i, j)``, ``i < j``, of ``points`` within ``tol`` of each other.

    A k-d tree (:class:`scipy.spatial.cKDTree`) proposes the pairs within a hair more than
    ``tol``; :func:`shapely.dwithin` then decides each, so the result is GEOS's predicate.
    """
    if len(xy) < 2:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    pairs = cKDTree(xy).query_pairs(tol * (1 + 1e-6) + 1e-9, output_type="ndarray")
    a, b = pairs[:, 0].astype(np.int64), pairs[:, 1].astype(np.int64)
    ok = shapely.dwithin(points[a], points[b], tol)
    return a[ok], b[ok]


def _empty_equipment(crs: pyproj.CRS | None) -> gpd.GeoDataFrame:
    return gpd.GeoDataFrame({"layer": [], "feature_id": []}, geometry=[], crs=crs)


#: decimals of the chainage in a segment id [m]: 0.1 m
ID_DECIMALS = 1


def _trench_offsets(owner: np.ndarray, part_len: np.ndarray) -> np.ndarray:
    """Each part's start along its trench [m]: a multi-part trench's parts laid end to end in
    their stored order (``owner`` is sorted: parts come trench by trench)."""
    if len(owner) == 0:
        return np.zeros(0)
    cum = np.cumsum(part_len) - part_len  # every part's start in one run of all parts
    first = np.r_[True, owner[1:] != owner[:-1]]
    return cum - np.maximum.accumulate(np.where(first, cum, 0.0))


def _node_chainage(
    parts: np.ndarray,
    e_part: np.ndarray,
    e_pos: np.ndarray,
    e_node: np.ndarray,
    node_xy: np.ndarray,
    joined: np.ndarray,
) -> np.ndarray:
    """The chainage along its part [m] each split point stands for in the segment ids.

    ``e_*`` are the split points sorted by part and position; ``joined`` are the indices ``i``
    whose piece to ``i + 1`` is dropped (one node at both ends, within ``2 node_tol``). The
    split points so joined are one node on the part: they all take the position of the one
    nearest the node (the first on a tie), so that a tap joining an existing node moves
    neither end of the segments beside it (their ids stay, see :func:`segment_ids`).
    """
    at = np.asarray(e_pos, dtype=float).copy()
    if len(joined) == 0:
        return at
    link = np.zeros(len(at), dtype=bool)
    link[joined] = True  # i is one node with i + 1
    first = ~np.r_[False, link[:-1]]
    run = np.cumsum(first) - 1  # one run per node on a part (contiguous, positions ascending)
    start = np.flatnonzero(first)
    last = np.r_[start[1:], len(at)] - 1
    spread = at[last] - at[start]  # 0: the run's points coincide, nothing to choose
    idx = np.flatnonzero(spread[run] > 0)  # members of runs at more than one position
    if len(idx) == 0:
        return at
    pts = shapely.line_interpolate_point(parts[e_part[idx]], at[idx])
    dist = shapely.distance(pts, shapely.points(node_xy[e_node[idx]]))
    order = np.lexsort((dist, run[idx]))  # by run, nearest first (stable: first on a tie)
    r = run[idx][order]
    best = idx[order][np.r_[True, r[1:] != r[:-1]]]  # each run's nearest, in run order
    at[idx] = at[best][np.searchsorted(run[best], run[idx])]
    return at


def segment_ids(trench_ids: np.ndarray, from_m: np.ndarray, to_m: np.ndarray) -> np.ndarray:
    """Stable trench segment ids: ``<trench id>@<from>-<to>``, the chainage of the segment's
    ends along its trench in metres with one decimal (``T-W@110.0-133.5``).

    Chainage runs from the trench's first vertex along its geometry (a multi-part trench's
    parts end to end in their stored order). A segment keeps its id as long as its own
    stretch of trench is unchanged: splitting one segment (a new stub, a new crossing) renames
    only that segment. Two segments of one trench whose rounded chainages coincide (shorter
    than 0.1 m) are written with millimetres (three decimals) instead. Rounding is half to
    even. The trench id is everything before the last ``@``.

    Parameters
    ----------
    trench_ids : numpy.ndarray
        The trench id of each segment (text).
    from_m, to_m : numpy.ndarray
        Chainage of each segment's start and end along its trench [m].

    Returns
    -------
    numpy.ndarray
        Object array of ids.
    """
    tid = np.asarray(trench_ids).astype(StringDType())

    def fmt(decimals: int) -> np.ndarray:
        def one(v: np.ndarray) -> np.ndarray:
            units = np.rint(np.asarray(v, dtype=float) * 10**decimals).astype(np.int64)
            whole = (units // 10**decimals).astype(str).astype(StringDType())
            frac = (units % 10**decimals).astype(str).astype(StringDType())
            return np.strings.add(np.strings.add(whole, "."), np.strings.zfill(frac, decimals))

        text = np.strings.add(np.strings.add(one(from_m), "-"), one(to_m))
        return np.strings.add(np.strings.add(tid, "@"), text)

    ids = fmt(ID_DECIMALS)
    _, inverse, counts = np.unique(ids, return_inverse=True, return_counts=True)
    twice = counts[inverse] > 1
    if twice.any():
        ids[twice] = fmt(3)[twice]
    return ids.astype(object)


def _pieces(
    xy: np.ndarray,
    gkey: np.ndarray,
    part_off: np.ndarray,
    part: np.ndarray,
    a: np.ndarray,
    b: np.ndarray,
    start_xy: np.ndarray,
    end_xy: np.ndarray,
) -> np.ndarray:
    """LineStrings of the stretches ``a``..``b`` [m] of parts, with the given end points.

    Each piece is its start point, the part's vertices strictly inside the stretch (more than
    :data:`MIN_TOL_M` from either end) and its end point: a vectorised substring.
    """
    lo = np.searchsorted(gkey, part_off[part] + a + MIN_TOL_M, side="right")
    hi = np.searchsorted(gkey, part_off[part] + b - MIN_TOL_M, side="left")
    n_in = np.maximum(hi - lo, 0)
    size = n_in + 2
    off = np.r_[0, np.cumsum(size)]
    out = np.empty((off[-1], 2))
    out[off[:-1]] = start_xy
    out[off[1:] - 1] = end_xy
    within = np.arange(n_in.sum()) - np.repeat(np.cumsum(n_in) - n_in, n_in)
    out[np.repeat(off[:-1] + 1, n_in) + within] = xy[np.repeat(lo, n_in) + within]
    if len(part) == 0:
        return np.zeros(0, dtype=object)
    return shapely.linestrings(out, indices=np.repeat(np.arange(len(part)), size))


def far_problems(network: TrenchNetwork) -> list[Problem]:
    """One problem per equipment feature not joined to the network, with its distance."""
    taps = network.taps
    problems = []
    if len(network.segments) == 0:
        problems.append(Problem("trenches", None, "no trench to route on"))
    for row in taps.loc[~taps["connected"].to_numpy(bool)].itertuples():
        if math.isinf(row.distance_m):
            msg = "cannot join the network: no trench (or empty geometry)"
        else:
            msg = (
                f"nearest trench {row.trench_id!r} is {row.distance_m:.2f} m away, "
                f"more than snap_m {network.snap_m:g} m"
            )
        problems.append(Problem(row.layer, row.feature_id, msg))
    return problems


#: floor of :func:`overlap_min_m` [m] (common practice, see there).
OVERLAP_MIN_M = 1.0
#: :func:`overlap_min_m` as a multiple of ``node_tol_m`` (common practice, see there).
OVERLAP_TOL_FACTOR = 10.0


def overlap_min_m(node_tol_m: float) -> float:
    """Shortest shared length reported as an overlap [m]: ``max(1 m, 10 × node_tol_m)``.

    Two trench lines that only *meet* lie within ``node_tol_m`` of each other near the
    meeting point alone. Measured as in :func:`trench_problems`, that stretch is about
    ``tol`` at a T-junction, ``2·tol / sin θ`` where two trenches cross at an angle θ and
    ``tol / sin θ`` where they leave one point at θ (a Y); trenches that continue one
    another share nothing. Ten times the tolerance lets a Y down to about 5.7° and a
    crossing down to about 11.5° pass, while a duplicated corridor shares its whole length.
    The 1 m floor keeps a tolerance far below survey accuracy from turning the jitter of
    hand-drawn junctions into errors: a shared stretch under a metre changes no route
    length and no circuit count beyond the rounding of lengths. Both numbers are common
    practice (no source).

    Parameters
    ----------
    node_tol_m : float
        The network's joining tolerance [m] (``design.node_tol_m``).
    """
    return max(OVERLAP_MIN_M, OVERLAP_TOL_FACTOR * max(float(node_tol_m), MIN_TOL_M))


def trench_problems(
    trenches: gpd.GeoDataFrame,
    node_tol_m: float = 0.1,
    snap_m: float = 30.0,
    only: np.ndarray | None = None,
) -> list[Problem]:
    """Trench geometry that would corrupt the network: corridors drawn twice, far parts.

    Noding (:func:`build_network`) never merges segments of two trenches, so two trench
    features drawn along one corridor become two parallel segments: the circuits of that
    corridor are split between them, each reports part of the circuit count, the grouping
    derating is understated and the corridor's metres are counted twice. This check refuses
    such input, one problem per cause:

    - two trenches (or two parts of one) running along each other, within ``node_tol_m``,
      for more than :func:`overlap_min_m`;
    - a part that runs back over its own path (A→B→A, or back over an earlier stretch) for
      more than :func:`overlap_min_m`;
    - a part of a multi-part trench farther than ``snap_m`` from every other part of it
      (with the parts near it): ``snap_m`` is the longest gap the network bridges anywhere
      (an equipment stub), so a part farther from the rest of its trench is not part of
      that corridor — most likely a stray copy or an id given twice. The parts are grouped
      by that distance; the group with the most parts (then the longest) is the trench,
      and each other group is one problem naming its parts and its gap.

    Crossings, T-junctions and trenches meeting end to end are not overlaps. Features that
    share an id are not compared (a duplicate id is a validation problem of its own).

    Parameters
    ----------
    trenches : geopandas.GeoDataFrame
        ``id`` and LineString/MultiLineString geometry in a projected CRS [m].
    node_tol_m : float
        The network's joining tolerance [m] (below :data:`MIN_TOL_M` it is raised to it).
    snap_m : float
        Longest stub from equipment to a trench [m]: the far-part limit.
    only : numpy.ndarray of bool, optional
        Per trench, whether to look for its problems: the others are known to have none
        among themselves (a local re-plan after a trench edit: the trenches the last plan
        had, unchanged). Only the trenches marked and those whose envelopes come within
        twice the tolerance of theirs (the farthest two edges can be and still be paired)
        are looked at, whole; without it, every trench.

    Returns
    -------
    list of layers.errors.Problem
        On layer ``trenches``, naming the trench (and the other trench or the part) with
        the shared length or the gap [m]; empty when the geometry is sound.

    Notes
    -----
    The parts are cut into straight edges; a spatial index (:class:`shapely.STRtree`)
    proposes the pairs of edges whose envelopes, widened by the tolerance, meet. For each
    pair the shared length is the length of one edge inside the other's *flat* band (the
    points whose foot on the other edge's line falls on that edge, at most ``node_tol_m``
    from it: its buffer with flat caps), the smaller of the two ways, computed in closed
    form. Flat caps make edges that continue one another share nothing, and collinear
    overlaps measure exactly their common length. The pairs' lengths are summed per pair
    of trenches, per pair of parts of one trench, and per part for a part over itself.

    Only edges that run nearly along each other are summed: those at an angle θ with
    ``sin θ < node_tol_m / overlap_min_m``. Edges at a wider angle share at most
    ``tol / sin θ`` (less than the minimum) where they leave one point, ``2·tol / sin θ``
    where they cross and about ``tol`` at a corner or a T: they *meet*, and adding up such
    meetings would let a trench with many corners, or two trenches crossing many times,
    reach the minimum without sharing any corridor. For a Y junction the angle rule and the
    length rule agree: a Y is reported exactly when its shared stretch exceeds the minimum.
    """
    tol = max(float(node_tol_m), MIN_TOL_M)
    minimum = overlap_min_m(node_tol_m)
    n = len(trenches)
    if n == 0:
        return []
    ids = np.array([str(v) for v in trenches["id"].to_numpy(dtype=object).tolist()], dtype=object)
    geoms = np.asarray(trenches.geometry.array, dtype=object)
    if only is not None:
        near = _near(geoms, np.asarray(only, dtype=bool), 2 * tol + MIN_TOL_M)
        ids, geoms = ids[near], geoms[near]
    parts, owner = shapely.get_parts(geoms, return_index=True)
    number = np.arange(len(owner)) - np.searchsorted(owner, owner) + 1  # part number in trench
    keep = (shapely.get_type_id(parts) == 1) & (shapely.length(parts) > 0)
    parts, owner, number = parts[keep], owner[keep].astype(np.int64), number[keep]
    problems = _overlap_problems(parts, owner, number, ids, tol, minimum)
    problems += _far_part_problems(parts, owner, number, ids, float(snap_m))
    return problems


def _near(geoms: np.ndarray, marked: np.ndarray, margin_m: float) -> np.ndarray:
    """The geometries marked and those whose envelopes come within ``margin_m`` of a marked
    one's (missing or empty geometries: not near)."""
    if not marked.any():
        return marked.copy()
    box = shapely.bounds(geoms)  # NaN for a missing or empty geometry
    has = np.isfinite(box).all(axis=1)
    mark = marked & has
    lo, hi = box[mark, :2] - margin_m, box[mark, 2:] + margin_m
    tree = shapely.STRtree(shapely.box(lo[:, 0], lo[:, 1], hi[:, 0], hi[:, 1]))
    at = np.flatnonzero(has)
    hit, _ = tree.query(shapely.box(box[at, 0], box[at, 1], box[at, 2], box[at, 3]))
    out = marked.copy()
    out[at[hit]] = True
    return out


def _overlap_problems(
    parts: np.ndarray,
    owner: np.ndarray,
    number: np.ndarray,
    ids: np.ndarray,
    tol: float,
    minimum: float,
) -> list[Problem]:
    """Overlaps and retraces (see :func:`trench_problems`)."""
    xy, cidx = shapely.get_coordinates(parts, return_index=True)
    k = np.flatnonzero(cidx[1:] == cidx[:-1])  # edge k: vertex k to k + 1 of one part
    a, b = xy[k], xy[k + 1]
    ok = np.any(a != b, axis=1)
    k, a, b = k[ok], a[ok], b[ok]
    if len(k) < 2:
        return []
    e_part = cidx[k]
    lo, hi = np.minimum(a, b) - tol, np.maximum(a, b) + tol
    boxes = shapely.box(lo[:, 0], lo[:, 1], hi[:, 0], hi[:, 1])
    i, j = shapely.STRtree(boxes).query(boxes)  # envelopes that meet (no GEOS predicate)
    pair = i < j
    i, j = i[pair], j[pair]
    pi, pj = e_part[i], e_part[j]
    oi, oj = owner[pi], owner[pj]
    same_id = (oi != oj) & (ids[oi] == ids[oj])  # two features with one id: a validation problem
    i, j, pi, pj, oi, oj = (x[~same_id] for x in (i, j, pi, pj, oi, oj))
    # edges at a wider angle only meet (see trench_problems' Notes): not summed
    da, db = b[i] - a[i], b[j] - a[j]
    cross = np.abs(da[:, 0] * db[:, 1] - da[:, 1] * db[:, 0])
    na, nb = np.hypot(da[:, 0], da[:, 1]), np.hypot(db[:, 0], db[:, 1])
    along = cross < na * nb * (tol / minimum)
    i, j, pi, pj, oi, oj = (x[along] for x in (i, j, pi, pj, oi, oj))
    shared = np.minimum(
        _length_in_band(a[i], b[i], a[j], b[j], tol), _length_in_band(a[j], b[j], a[i], b[i], tol)
    )
    some = shared > MIN_TOL_M
    shared, pi, pj, oi, oj = shared[some], pi[some], pj[some], oi[some], oj[some]
    # one group per trench pair (parts ignored), per part pair of one trench, per part
    first = np.minimum(pi, pj)
    second = np.maximum(pi, pj)
    trench_pair = oi != oj
    lo_o, hi_o = np.minimum(oi, oj), np.maximum(oi, oj)
    key = np.stack(
        [
            lo_o,
            hi_o,
            np.where(trench_pair, -1, first),
            np.where(trench_pair, -1, second),
        ],
        axis=1,
    )
    if len(key) == 0:
        return []
    uniq, group = np.unique(key, axis=0, return_inverse=True)
    total = np.bincount(group.reshape(-1), weights=shared, minlength=len(uniq))
    problems = []
    for (t1, t2, q1, q2), length in zip(uniq.tolist(), total.tolist(), strict=True):
        if not length > minimum:
            continue
        shared_text = f"along {length:.1f} m — a corridor must be drawn once"
        if t1 != t2:
            problems.append(
                Problem(
                    "trenches",
                    ids[t1],
                    f"overlaps trench {ids[t2]!r} {shared_text} "
                    "(remove the duplicate, or end one trench where the other starts)",
                )
            )
        elif q1 != q2:
            problems.append(
                Problem(
                    "trenches",
                    ids[t1],
                    f"part {number[q2]} overlaps part {number[q1]} {shared_text} "
                    "(remove the duplicate part)",
                )
            )
        else:
            whole = np.count_nonzero(owner == t1) == 1
            what = "runs back" if whole else f"part {number[q1]} runs back"
            problems.append(
                Problem(
                    "trenches",
                    ids[t1],
                    f"{what} over its own path {shared_text} (remove the stretch drawn twice)",
                )
            )
    return problems


def _length_in_band(
    a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray, tol: float
) -> np.ndarray:
    """Length [m] of each straight edge ``a0→a1`` inside the flat band of ``b0→b1``.

    The band is the set of points whose foot on the line of ``b`` lies between ``b0`` and
    ``b1`` and whose distance from that line is at most ``tol`` (the buffer of ``b`` with
    flat caps, :func:`shapely.buffer` ``cap_style="flat"``). The points of ``a`` inside it
    form one interval of ``a``'s parameter (a straight edge meets a rectangle in one
    interval), found by clipping against the band's two pairs of sides (Liang–Barsky).
    """
    d = a1 - a0
    length_a = np.hypot(d[:, 0], d[:, 1])
    e = b1 - b0
    length_b = np.hypot(e[:, 0], e[:, 1])
    e = e / length_b[:, None]
    p = a0 - b0
    along0 = p[:, 0] * e[:, 0] + p[:, 1] * e[:, 1]
    along = d[:, 0] * e[:, 0] + d[:, 1] * e[:, 1]
    across0 = p[:, 0] * e[:, 1] - p[:, 1] * e[:, 0]
    across = d[:, 0] * e[:, 1] - d[:, 1] * e[:, 0]
    band = tol * (1 + 1e-9) + 1e-9  # as the noding's tests: a hair more than the tolerance
    t_lo, t_hi = np.zeros(len(d)), np.ones(len(d))
    for x0, dx, low, high in (
        (along0, along, np.zeros(len(d)), length_b),
        (across0, across, -band, band),
    ):
        with np.errstate(divide="ignore", invalid="ignore"):
            t1, t2 = (low - x0) / dx, (high - x0) / dx
        still = dx == 0
        inside = (x0 >= low) & (x0 <= high)
        t_lo = np.maximum(
            t_lo, np.where(still, np.where(inside, -np.inf, np.inf), np.minimum(t1, t2))
        )
        t_hi = np.minimum(
            t_hi, np.where(still, np.where(inside, np.inf, -np.inf), np.maximum(t1, t2))
        )
    return np.maximum(t_hi - t_lo, 0.0) * length_a


def _far_part_problems(
    parts: np.ndarray, owner: np.ndarray, number: np.ndarray, ids: np.ndarray, snap_m: float
) -> list[Problem]:
    """Parts of a multi-part trench farther than ``snap_m`` from the rest of it (see
    :func:`trench_problems`)."""
    counts = np.bincount(owner)
    multi = np.flatnonzero(counts[owner] > 1)
    if len(multi) == 0:
        return []
    mparts, mowner = parts[multi], owner[multi]
    i, j = shapely.STRtree(mparts).query(mparts, predicate="dwithin", distance=snap_m)
    same = mowner[i] == mowner[j]
    m = len(multi)
    adj = sparse.coo_matrix(
        (np.ones(int(same.sum()), dtype=np.int8), (i[same], j[same])), shape=(m, m)
    )
    _, label = csgraph.connected_components(adj, directed=False)
    # trenches whose parts form more than one group
    first_label = pd.Series(label).groupby(mowner).nunique()
    split = first_label.index[first_label.to_numpy() > 1].to_numpy()
    problems = []
    length = shapely.length(mparts)
    for t in split.tolist():
        mine = np.flatnonzero(mowner == t)
        groups = pd.Series(length[mine]).groupby(label[mine])
        total = groups.sum()
        first_part = pd.Series(mine).groupby(label[mine]).min()
        size = groups.size()
        # the main group: the most parts, then the longest, then the one holding the lowest
        main = min(total.index, key=lambda g: (-size[g], -total[g], first_part[g]))
        for g in sorted(total.index, key=lambda g: first_part[g]):
            if g == main:
                continue
            inside = mine[label[mine] == g]
            rest = mine[label[mine] != g]
            gap = float(shapely.distance(mparts[inside][:, None], mparts[rest][None, :]).min())
            nums = [int(number[multi[q]]) for q in inside.tolist()]
            what = (
                f"part {nums[0]} is" if len(nums) == 1 else f"parts {', '.join(map(str, nums))} are"
            )
            problems.append(
                Problem(
                    "trenches",
                    ids[t],
                    f"{what} {gap:.1f} m from the rest of the trench, more than snap_m "
                    f"{snap_m:g} m — a trench's parts must form one corridor (give the far "
                    "part its own id, or remove it)",
                )
            )
    return problems
