"""Route every circuit of a site along the trench network, and count circuits per segment.

Each circuit follows the shortest path (Dijkstra) through the trench network from its
source's tap node to its destination's. There is one single-source search per distinct
destination node (:func:`scipy.sparse.csgraph.dijkstra` with ``indices`` = the destinations
and ``return_predecessors=True``); the predecessor tree of a destination gives the paths of
all circuits that end there, walked for all of them at once.

Routing knows nothing of electrical rules: it hands :mod:`calc` plain arrays — route and
cable lengths, the (circuit, segment) incidence, and per-segment circuit counts and trench
attributes.

Lengths are one-way along the route [m]; how many conductors a circuit has is not routing's
business. The results are a design aid: they must be reviewed by a qualified person against
the local codes.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely
from scipy.sparse import csgraph

from layers.errors import Problem
from layers.model import Site
from routeplan.circuits import KINDS, Circuits, Destinations, assign_destinations, derive_circuits
from routeplan.errors import (
    NotConnectedError,
    ParameterError,
    RoutingError,
    UnreachableError,
    raise_for,
)
from routeplan.network import (
    EQUIPMENT_LAYERS,
    TRENCH_ATTRIBUTES,
    NetworkMemo,
    TrenchDefaults,
    TrenchNetwork,
    build_network,
    check_metric_crs,
    far_problems,
    paused_gc,
    site_equipment,
    trench_problems,
)

__all__ = [
    "Paths",
    "RouteParams",
    "RoutePlan",
    "check_network",
    "geometry_problems",
    "route_site",
    "row_length_m",
    "shortest_paths",
]

#: most ``destinations × nodes`` entries one Dijkstra call may return (memory bound).
_CHUNK_ENTRIES = 4_000_000
#: first search radius of a destination: straight distance to its farthest source × _DETOUR
#: + _DETOUR_M [m]. A guess that only saves work: a search that falls short is redone in full.
_DETOUR = 2.0
_DETOUR_M = 100.0
#: destinations per search call on a part of the network (see :func:`_local_searches`)
_LOCAL_CHUNK = 64


@dataclass(frozen=True)
class RouteParams:
    """Parameters of routing, all SI.

    Defaults are common design practice, not requirements of any code; set them for the
    project.

    Attributes
    ----------
    snap_m : float
        Longest stub from equipment to its nearest trench [m]. Default 30 m, as the site
        format's ``design.snap_m``: equipment normally sits beside a trench, so a longer
        gap usually means a missing trench or a misplaced feature, and is reported instead
        of silently bridged.
    node_tol_m : float
        Trench ends and nodes closer than this join [m]. Default 0.1 m: above the
        rounding of coordinates stored in degrees with six decimals (about 0.1 m,
        RFC 7946 §11.2, from memory) and of reprojection, far below any cable length
        that matters.
    termination_m : float
        Allowance at each end of a cable for rising into the equipment and terminating
        [m]. Default 1.0 m per end.
    slack_pct : float
        Allowance for snaking and sag of the cable in the trench [% of the route].
        Default 3 % (2 % to 5 % is common practice).
    row_run_factor : float
        Share of a row's length a string's cable runs along its row to the row's tap.
        Default 0.5: strings spread along a row, so on average half the row.
    trench : TrenchDefaults
        Trench attributes used where a trench does not give its own.
    """

    snap_m: float = 30.0
    node_tol_m: float = 0.1
    termination_m: float = 1.0
    slack_pct: float = 3.0
    row_run_factor: float = 0.5
    trench: TrenchDefaults = field(default_factory=TrenchDefaults)

    def __post_init__(self) -> None:
        bad = [
            Problem("params", f.name, f"must be a number >= 0, got {getattr(self, f.name)!r}")
            for f in dataclasses.fields(self)
            if f.name != "trench" and not _nonneg(getattr(self, f.name))
        ]
        if bad:
            raise ParameterError(bad)

    @classmethod
    def from_mapping(cls, values: Mapping[str, Any]) -> RouteParams:
        """Parameters from a plain mapping (e.g. a config table), SI numbers only.

        Keys are the field names; ``trench`` is a mapping of :class:`TrenchDefaults` fields.

        Raises
        ------
        ParameterError
            An unknown key, listing the valid ones.
        """
        values = dict(values)
        trench = dict(values.pop("trench", {}))
        names = [f.name for f in dataclasses.fields(cls) if f.name != "trench"]
        tnames = [f.name for f in dataclasses.fields(TrenchDefaults)]
        bad = [
            Problem("params", k, f"unknown; valid: {', '.join([*names, 'trench'])}")
            for k in values
            if k not in names
        ]
        bad += [
            Problem("params", f"trench.{k}", f"unknown; valid: {', '.join(tnames)}")
            for k in trench
            if k not in tnames
        ]
        if bad:
            raise ParameterError(bad)
        return cls(**values, trench=TrenchDefaults(**trench))


def _nonneg(value: Any) -> bool:
    return (
        isinstance(value, int | float)
        and not isinstance(value, bool)
        and math.isfinite(value)
        and value >= 0
    )


@dataclass(frozen=True, eq=False)
class Paths:
    """Shortest paths of (source node, destination node) pairs, flattened.

    Attributes
    ----------
    offset : numpy.ndarray
        ``(n_pairs + 1,)``: the segments of pair ``p`` are ``segment[offset[p]:offset[p + 1]]``.
    segment : numpy.ndarray of int
        Segment indices in route order, from the source to the destination.
    forward : numpy.ndarray of bool
        Whether each segment is travelled from its ``node_u`` to its ``node_v``.
    trench_m : numpy.ndarray
        ``(n_pairs,)`` trench length of each path [m].
    """

    offset: np.ndarray
    segment: np.ndarray
    forward: np.ndarray
    trench_m: np.ndarray

    @property
    def pair(self) -> np.ndarray:
        """Pair index of each entry of :attr:`segment`."""
        return np.repeat(np.arange(len(self.offset) - 1), np.diff(self.offset))


def _searches(network: TrenchNetwork, dst_nodes: np.ndarray, predecessors: bool):
    """Yield ``(chunk_positions, dist, pred)`` of Dijkstra searches from ``dst_nodes`` over
    the whole network, chunked."""
    n = max(network.n_nodes, 1)
    size = max(1, _CHUNK_ENTRIES // n)
    for lo in range(0, len(dst_nodes), size):
        pos = np.arange(lo, min(lo + size, len(dst_nodes)))
        out = csgraph.dijkstra(
            network.graph, directed=True, indices=dst_nodes[pos], return_predecessors=predecessors
        )
        dist, pred = out if predecessors else (out, None)
        yield pos, dist, pred


def _search_radius(network: TrenchNetwork, src: np.ndarray, dst: np.ndarray, row: np.ndarray):
    """A first search radius [m] per destination: its farthest source's straight distance,
    times :data:`_DETOUR`, plus :data:`_DETOUR_M` (a guess, checked: see :func:`shortest_paths`)."""
    xy = network.node_xy
    straight = np.hypot(*(xy[src] - xy[dst]).T) if len(src) else np.zeros(0)
    need = np.zeros(int(row.max()) + 1 if len(row) else 0)
    np.maximum.at(need, row, straight)
    return need * _DETOUR + _DETOUR_M


def shortest_paths(network: TrenchNetwork, src_node: np.ndarray, dst_node: np.ndarray) -> Paths:
    """Shortest paths through the network between node pairs (Dijkstra).

    One single-source search per distinct destination node; the paths of all pairs that
    share a destination are walked up its predecessor tree together.

    Each search first stops at a radius guessed from the straight distance to the farthest
    source of its destination (:func:`_search_radius`), on the part of the network within
    that radius (:func:`_local_searches`): Dijkstra settles nodes in order of distance, so
    every node within the radius gets its exact shortest distance and path. A destination
    whose sources are not all reached within its radius is searched again over the whole
    network without limit. The radius only saves work; it never changes a route.

    Parameters
    ----------
    network : TrenchNetwork
    src_node, dst_node : numpy.ndarray of int
        ``(n_pairs,)`` node pairs; each pair must be connected (same island).

    Returns
    -------
    Paths

    Raises
    ------
    ValueError
        A pair is not connected.
    """
    src_node = np.asarray(src_node, dtype=np.int64)
    dst_node = np.asarray(dst_node, dtype=np.int64)
    n_pairs = len(src_node)
    if n_pairs == 0:
        empty = np.zeros(0, dtype=np.int64)
        return Paths(np.zeros(1, dtype=np.int64), empty, empty.astype(bool), np.zeros(0))
    uniq, row = np.unique(dst_node, return_inverse=True)
    row = row.reshape(-1)
    by_row = np.argsort(row, kind="stable")
    bounds = np.searchsorted(row[by_row], np.arange(len(uniq) + 1))
    steps_pair: list[np.ndarray] = []
    steps_node: list[np.ndarray] = []
    radius = _search_radius(network, src_node, dst_node, row)
    todo = np.arange(len(uniq))
    for attempt in range(2):
        missed: list[np.ndarray] = []
        if attempt == 0:
            searches = _local_searches(network, uniq[todo], radius[todo])
        else:
            searches = ((p, d, q, None) for p, d, q in _searches(network, uniq[todo], True))
        for pos, dist, pred, sub in searches:
            dests = todo[pos]
            # pairs of these destinations, and the row of their search in dist / pred
            counts = bounds[dests + 1] - bounds[dests]
            pairs = by_row[np.repeat(bounds[dests], counts) + _within(counts)]
            r = np.repeat(np.arange(len(dests)), counts)
            cur, dst = src_node[pairs], dst_node[pairs]
            if sub is not None:  # nodes of the searched part: numbered by their order in sub
                cur, dst = _local(sub, cur), _local(sub, dst)
            lost = cur < 0
            lost[~lost] = np.isinf(dist[r[~lost], cur[~lost]])
            if lost.any():
                if attempt == 1:
                    raise ValueError("a source cannot reach its destination")
                bad = np.unique(r[lost])
                missed.append(dests[bad])
                keep = ~np.isin(r, bad)
                pairs, r, cur, dst = pairs[keep], r[keep], cur[keep], dst[keep]
            _walk(pairs, r, cur, dst, pred, sub, steps_pair, steps_node)
        if not missed:
            break
        todo = np.sort(np.concatenate(missed))
    sp, sn = np.concatenate(steps_pair), np.concatenate(steps_node)
    order = np.argsort(sp, kind="stable")  # by pair; steps stay in walking order
    sp, sn = sp[order], sn[order]
    step = np.flatnonzero(sp[1:] == sp[:-1])
    u, v = sn[step], sn[step + 1]
    seg = network.segment_between(u, v)
    forward = network.seg_u[seg] == u
    per_pair = np.bincount(sp[step], minlength=n_pairs)
    offset = np.r_[0, np.cumsum(per_pair)]
    trench_m = np.bincount(sp[step], weights=network.seg_length_m[seg], minlength=n_pairs)
    return Paths(offset, seg, forward, trench_m)


def _within(counts: np.ndarray) -> np.ndarray:
    """``0..counts[i]-1`` for each ``i``, concatenated."""
    return np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts)


def _walk(
    pairs: np.ndarray,
    r: np.ndarray,
    cur: np.ndarray,
    dst: np.ndarray,
    pred: np.ndarray,
    sub: np.ndarray | None,
    steps_pair: list[np.ndarray],
    steps_node: list[np.ndarray],
) -> None:
    """Walk the pairs up their destination's predecessor tree (row ``r`` of ``pred``) from
    their source ``cur`` to ``dst``, all at once; append (pair, node) of every step.

    ``sub``: the network nodes of a partial search, whose predecessors are numbered by their
    position in ``sub`` (None: the whole network)."""
    node = (lambda a: a) if sub is None else (lambda a: sub[a])
    steps_pair.append(pairs)
    steps_node.append(node(cur))
    live = cur != dst
    while live.any():
        pairs, r, cur, dst = pairs[live], r[live], pred[r[live], cur[live]], dst[live]
        steps_pair.append(pairs)
        steps_node.append(node(cur))
        live = cur != dst


def _local(sub: np.ndarray, nodes: np.ndarray) -> np.ndarray:
    """Position of each of ``nodes`` in the sorted ``sub``; -1 where it is not there."""
    if len(sub) == 0:
        return np.full(len(nodes), -1, dtype=np.int64)
    pos = np.minimum(np.searchsorted(sub, nodes), len(sub) - 1)
    return np.where(sub[pos] == nodes, pos, -1)


def _local_searches(network: TrenchNetwork, dst_nodes: np.ndarray, limit: np.ndarray):
    """Yield ``(chunk_positions, dist, pred, sub)`` of Dijkstra searches from ``dst_nodes``
    no farther than their ``limit`` [m], each chunk on the part of the network around it.

    A path no longer than the limit never leaves the disc of that radius around its
    destination (a segment is never shorter than the straight line between its nodes), so
    the nodes ``sub`` within the radius of the chunk's bounding box hold every path a search
    can find: distances and predecessors are those of a search on the whole network.
    Destinations are chunked by radius (powers of two) and then along a Z-order curve, so
    that each chunk is compact and its part of the network small; results come by position
    in ``sub``.
    """
    xy = network.node_xy
    graph = network.graph
    if len(dst_nodes) == 0:
        return
    dxy = xy[dst_nodes]
    order = np.lexsort((_z_order(dxy), np.floor(np.log2(np.maximum(limit, 1.0)))))
    for lo in range(0, len(order), _LOCAL_CHUNK):
        pos = order[lo : lo + _LOCAL_CHUNK]
        radius = float(limit[pos].max())
        reach = radius + 1.0  # a margin over rounding: a node left out is searched again
        (x0, y0), (x1, y1) = dxy[pos].min(axis=0) - reach, dxy[pos].max(axis=0) + reach
        inside = (xy[:, 0] >= x0) & (xy[:, 0] <= x1) & (xy[:, 1] >= y0) & (xy[:, 1] <= y1)
        sub = np.flatnonzero(inside)
        dist, pred = csgraph.dijkstra(
            graph[sub][:, sub],
            directed=True,
            indices=_local(sub, dst_nodes[pos]),
            return_predecessors=True,
            limit=radius,
        )
        yield pos, dist, pred, sub


def _z_order(xy: np.ndarray) -> np.ndarray:
    """Z-order (Morton) code of points: near points mostly get near codes."""
    lo = xy.min(axis=0)
    span = np.maximum(xy.max(axis=0) - lo, 1e-9)
    q = ((xy - lo) / span * 65535).astype(np.uint64)

    def spread(v: np.ndarray) -> np.ndarray:
        v = (v | (v << np.uint64(8))) & np.uint64(0x00FF00FF)
        v = (v | (v << np.uint64(4))) & np.uint64(0x0F0F0F0F)
        v = (v | (v << np.uint64(2))) & np.uint64(0x33333333)
        return (v | (v << np.uint64(1))) & np.uint64(0x55555555)

    return spread(q[:, 0]) | (spread(q[:, 1]) << np.uint64(1))


def _route_lengths_fn(network: TrenchNetwork):
    """A :data:`routeplan.circuits.RouteLengths` over ``network``."""
    taps = network.taps
    node = taps["node"].to_numpy(np.int64)
    stub = taps["stub_m"].to_numpy(float)

    def route_lengths(
        src_layer: str, src_ids: Sequence[str], dst_layer: str, dst_ids: Sequence[str]
    ) -> np.ndarray:
        si = np.array([network.tap(src_layer, s) for s in src_ids], dtype=np.int64)
        di = np.array([network.tap(dst_layer, d) for d in dst_ids], dtype=np.int64)
        out = np.full((len(si), len(di)), np.inf)
        si, sk = si[node[si] >= 0], np.flatnonzero(node[si] >= 0)  # unconnected: no route
        di, dk = di[node[di] >= 0], np.flatnonzero(node[di] >= 0)
        if len(si) == 0 or len(di) == 0:
            return out
        # the network is undirected: search from whichever side has fewer distinct nodes
        from_src = len(np.unique(node[si])) < len(np.unique(node[di]))
        near, far = (si, di) if from_src else (di, si)
        uniq, col = np.unique(node[near], return_inverse=True)
        trench = np.empty((len(uniq), len(far)))
        for pos, dist, _ in _searches(network, uniq, predecessors=False):
            trench[pos] = dist[:, node[far]]
        trench = trench[col] if from_src else trench[col].T
        out[np.ix_(sk, dk)] = trench + stub[si][:, None] + stub[di][None, :]
        return out

    return route_lengths


def row_length_m(geometry: np.ndarray) -> np.ndarray:
    """Length of each row [m]: a line's length, a polygon's longer side.

    For a Polygon (or MultiPolygon) row the length is the long side of its oriented
    minimum rotated rectangle (:func:`shapely.oriented_envelope`); for a line, its length.

    Examples
    --------
    >>> row_length_m(np.array([shapely.box(0, 0, 40, 4), shapely.LineString([(0, 0), (30, 0)])]))
    array([40., 30.])
    """
    geometry = np.asarray(geometry, dtype=object)
    out = shapely.length(geometry).astype(float)
    poly = np.isin(shapely.get_type_id(geometry), (3, 6))
    if poly.any():
        env = shapely.oriented_envelope(geometry[poly])
        is_rect = shapely.get_type_id(env) == 3
        res = shapely.length(env).astype(float)  # degenerate: a line (or point)
        ring = shapely.get_coordinates(shapely.get_exterior_ring(env[is_rect])).reshape(-1, 5, 2)
        sides = np.hypot(*(ring[:, 1:3] - ring[:, 0:2]).transpose(2, 0, 1))
        res[is_rect] = sides.max(axis=1)
        out[poly] = res
    return out


@dataclass(frozen=True, eq=False)
class RoutePlan:
    """Routes of every circuit and the occupancy of every trench segment.

    Attributes
    ----------
    circuits : geopandas.GeoDataFrame
        One row per circuit, in circuit order (see :class:`routeplan.circuits.Circuits`):
        ``circuit_id``, ``kind`` (``'string'``, ``'array'``, ``'ac'``), ``from_layer``,
        ``from_id``, ``to_layer``, ``to_id``, ``strings`` (strings carried), ``route_m``
        (stub + trench + stub, the geometry's length), ``trench_m``, ``stub_m`` (both
        stubs), ``row_run_m``, ``cable_m``, ``n_segments``, ``segment_ids`` (';'-joined,
        in route order), ``group_max`` (most circuits sharing any one segment of its route;
        0 without segments) and the route ``geometry`` (LineString, source to destination).
    segments : geopandas.GeoDataFrame
        One row per trench segment: ``segment_id``, ``trench_id``, ``length_m``,
        ``circuits``, ``strings``, ``arrays``, ``ac``, ``subarrays`` (circuit counts by kind),
        ``circuit_ids`` (';'-joined, sorted), ``depth_m``, ``laying``, ``spacing_m``,
        ``soil_k_m_w``, ``max_circuits``, ``fill`` (circuits / max_circuits, NaN without a
        limit), ``over_capacity``, ``node_u``, ``node_v``, ``start_m``, ``end_m``,
        ``trench_index`` and the ``geometry``.
    incidence_circuit, incidence_segment : numpy.ndarray of int
        The flat (circuit index, segment index) incidence, by circuit and in route order.
    air : pandas.DataFrame
        The stretches of cable in air that circuits share (:func:`air_stretches`):
        ``stretch_id``, ``kind`` (``'stub'`` or ``'row run'``), ``layer``, ``feature_id``,
        ``length_m``.
    air_incidence_circuit, air_incidence_stretch : numpy.ndarray of int
        The flat (circuit index, air stretch index) incidence, by circuit.
    assignment : pandas.DataFrame
        Destination of each row, combiner and inverter and the rule that chose it
        (see :class:`routeplan.circuits.Destinations`).
    network : TrenchNetwork
        The network routed on (nodes, segments, taps and stubs).
    params : RouteParams
    timings_s : dict[str, float]
        Wall-clock seconds of each step.
    """

    circuits: gpd.GeoDataFrame
    segments: gpd.GeoDataFrame
    incidence_circuit: np.ndarray
    incidence_segment: np.ndarray
    air: pd.DataFrame
    air_incidence_circuit: np.ndarray
    air_incidence_stretch: np.ndarray
    assignment: pd.DataFrame
    network: TrenchNetwork
    params: RouteParams
    timings_s: dict[str, float]

    def incidence_frame(self) -> pd.DataFrame:
        """The (circuit, segment) incidence with each segment's occupancy and trench attributes.

        One row per segment of each route, by circuit and in route order: ``circuit`` and
        ``segment`` (indices into :attr:`circuits` and :attr:`segments`), ``circuit_id``,
        ``segment_id``, ``length_m``, ``circuits`` (circuits sharing the segment),
        ``depth_m``, ``laying``, ``spacing_m``, ``soil_k_m_w``, ``max_circuits``,
        ``max_cable_sets``: the per-circuit segment attributes :mod:`calc` needs, as plain columns.
        """
        c, s = self.incidence_circuit, self.incidence_segment
        seg = self.segments
        cols = ("segment_id", "length_m", "circuits", *TRENCH_ATTRIBUTES)
        return pd.DataFrame(
            {
                "circuit": c,
                "segment": s,
                "circuit_id": self.circuits["circuit_id"].to_numpy(dtype=object)[c],
                **{k: seg[k].to_numpy()[s] for k in cols},
            }
        )


@dataclass(frozen=True, eq=False)
class _Prepared:
    network: TrenchNetwork
    destinations: Destinations | None
    circuits: Circuits | None
    problems: list[tuple[type[RoutingError], Problem]]
    timings_s: dict[str, float]


def site_network(site: Site, params: RouteParams, memo: NetworkMemo | None = None) -> TrenchNetwork:
    """The trench network of ``site`` with its equipment tapped on, as routing builds it under
    ``params`` (``memo``: the last noding, :func:`routeplan.network.build_network`)."""
    return build_network(
        site.trenches,
        site_equipment(site),
        node_tol_m=params.node_tol_m,
        snap_m=params.snap_m,
        defaults=params.trench,
        memo=memo,
    )


def _prepare(
    site: Site,
    params: RouteParams,
    memo: NetworkMemo | None = None,
    network: TrenchNetwork | None = None,
    trenches_checked: bool = False,
) -> _Prepared:
    """Network, destinations and circuits of ``site``, and every problem found on the way
    (``memo``, ``network``, ``trenches_checked``: see :func:`route_site`)."""
    timings: dict[str, float] = {}
    found: list[tuple[type[RoutingError], Problem]] = [
        (RoutingError, p) for p in check_metric_crs(site.crs)
    ]
    if found:
        raise_for(found)
    t = time.perf_counter()
    if not trenches_checked:
        found += [
            (RoutingError, p)
            for p in trench_problems(
                site.trenches, node_tol_m=params.node_tol_m, snap_m=params.snap_m
            )
        ]
    timings["trench_check"] = time.perf_counter() - t
    t = time.perf_counter()
    network = site_network(site, params, memo) if network is None else network
    timings["network"] = time.perf_counter() - t
    found += [(NotConnectedError, p) for p in far_problems(network)]
    taps = network.taps
    keys = zip(
        taps["layer"].to_numpy(dtype=object).tolist(),
        taps["feature_id"].to_numpy(dtype=object).tolist(),
        strict=True,
    )
    is_conn = dict(zip(keys, taps["connected"].to_numpy(bool).tolist(), strict=True))

    def connected(layer: str, fid: str) -> bool:
        return bool(is_conn.get((layer, fid), False))

    t = time.perf_counter()
    destinations, problems = assign_destinations(site, _route_lengths_fn(network), connected)
    found += _grouped(problems)
    circuits, problems = derive_circuits(site, destinations)
    found += problems
    timings["assign"] = time.perf_counter() - t
    found += _unreachable(site, network, circuits)
    return _Prepared(network, destinations, circuits, found, timings)


def _grouped(
    found: list[tuple[type[RoutingError], Problem]], most: int = 5
) -> list[tuple[type[RoutingError], Problem]]:
    """One problem per (class, layer, message): features with the same fault for the same
    reason (e.g. every combiner without ``to`` when no inverter joins the network) are one
    line naming how many and the first ``most`` of them, at the first one's place."""
    groups: dict[tuple[type[RoutingError], str, str], list[str | None]] = {}
    for cls, p in found:
        groups.setdefault((cls, p.layer, p.message), []).append(p.feature_id)
    out = []
    for (cls, layer, message), fids in groups.items():
        if len(fids) == 1:
            out.append((cls, Problem(layer, fids[0], message)))
            continue
        shown = ", ".join(str(f) for f in fids[:most])
        more = f" and {len(fids) - most} more" if len(fids) > most else ""
        out.append((cls, Problem(layer, None, f"{message} ({len(fids)} {layer}: {shown}{more})")))
    return out


def _circuit_taps(site: Site, circuits: Circuits) -> tuple[np.ndarray, np.ndarray]:
    """Tap (row of ``network.taps``) of each circuit's source and destination.

    The taps are in :func:`routeplan.network.site_equipment` order: layer by layer.
    """
    sizes = [len(site.layer(la)) for la in EQUIPMENT_LAYERS]
    offset = dict(zip(EQUIPMENT_LAYERS, np.cumsum([0, *sizes[:-1]]).tolist(), strict=True))
    return (
        _layer_offset(circuits.from_layer, offset) + circuits.from_index,
        _layer_offset(circuits.to_layer, offset) + circuits.to_index,
    )


def _layer_offset(layers: np.ndarray, offset: dict[str, int]) -> np.ndarray:
    """``offset[layer]`` of each element of ``layers`` (vectorised over few distinct names)."""
    if len(layers) == 0:
        return np.zeros(0, dtype=np.int64)
    codes, uniq = pd.factorize(layers)
    return np.array([offset[str(u)] for u in uniq], dtype=np.int64)[codes]


def _unreachable(
    site: Site, network: TrenchNetwork, circuits: Circuits
) -> list[tuple[type[RoutingError], Problem]]:
    """One problem per (source feature, destination) whose circuits lie on separate islands."""
    if len(circuits) == 0:
        return []
    tap_from, tap_to = _circuit_taps(site, circuits)
    node = network.taps["node"].to_numpy(np.int64)
    src, dst = node[tap_from], node[tap_to]
    ok = (src >= 0) & (dst >= 0)  # unconnected ends are reported as such
    island = network.node_island
    bad = np.flatnonzero(ok)
    bad = bad[island[src[bad]] != island[dst[bad]]]
    if len(bad) == 0:
        return []
    out = []
    singular = {"combiners": "combiner", "inverters": "inverter", "grid": "grid point"}
    key = tap_from[bad] * len(node) + tap_to[bad]
    order = np.lexsort((bad, key))  # by (source, destination), circuits in order
    bad, key = bad[order], key[order]
    starts = np.flatnonzero(np.r_[True, key[1:] != key[:-1]])
    ends = np.r_[starts[1:], len(key)] - 1
    cid = circuits.circuit_id
    for f, last, n in sorted(
        zip(bad[starts].tolist(), bad[ends].tolist(), (ends - starts + 1).tolist(), strict=True)
    ):
        what = cid[f] if n == 1 else f"{n} circuits {cid[f]}…{cid[last]}"
        la, fid = circuits.from_layer[f], circuits.from_id[f]
        tla, tid = circuits.to_layer[f], circuits.to_id[f]
        msg = (
            f"{what} cannot reach {singular.get(tla, tla)} {tid!r}: {fid!r} joins the trench "
            f"island {_island(network, int(src[f]))}, {tid!r} joins "
            f"{_island(network, int(dst[f]))}"
        )
        out.append((UnreachableError, Problem(la, fid, msg)))
    return out


def _island(network: TrenchNetwork, node: int, most: int = 6) -> str:
    ids = network.island_trenches(node)
    if not ids:
        return "of no trench"
    shown = ", ".join(ids[:most]) + (f" and {len(ids) - most} more" if len(ids) > most else "")
    return f"[{shown}]"


def geometry_problems(site: Site, params: RouteParams | None = None) -> list[Problem]:
    """The network checks that need the layers' geometry alone: trench geometry
    (:func:`routeplan.network.trench_problems`) and equipment too far from every trench
    (:func:`routeplan.network.far_problems`).

    For a site whose attributes failed validation (:attr:`layers.SiteError.partial`), so
    that one run reports these problems too. A site without trenches, or not in a metric
    CRS, gives none here: its layers' own problems say why.
    """
    params = RouteParams() if params is None else params
    if len(site.trenches) == 0 or check_metric_crs(site.crs):
        return []
    problems = trench_problems(site.trenches, node_tol_m=params.node_tol_m, snap_m=params.snap_m)
    network = build_network(
        site.trenches,
        site_equipment(site),
        node_tol_m=params.node_tol_m,
        snap_m=params.snap_m,
        defaults=params.trench,
    )
    return problems + far_problems(network)


def check_network(site: Site, params: RouteParams | None = None) -> list[Problem]:
    """Every problem that would stop :func:`route_site`, without routing.

    Checks the trench geometry (overlaps, retraces, far parts), builds the network, joins
    the equipment, fills missing destinations and checks that every circuit's ends lie on
    one island. For ``routeplan check``.

    Returns
    -------
    list of layers.errors.Problem
        Empty when the site can be routed.

    Raises
    ------
    RoutingError
        The site's CRS is not metric (nothing can be measured).
    """
    return assignment_check(site, params)[0]


def assignment_check(
    site: Site, params: RouteParams | None = None
) -> tuple[list[Problem], pd.DataFrame]:
    """:func:`check_network`'s problems and the destination of every row, combiner and
    inverter with the rule that chose it (``Destinations.report``; empty when the
    destinations could not be filled)."""
    params = RouteParams() if params is None else params
    prepared = _prepare(site, params)
    report = prepared.destinations.report if prepared.destinations is not None else pd.DataFrame()
    return [p for _, p in prepared.problems], report


@paused_gc()
def route_site(
    site: Site,
    params: RouteParams | None = None,
    memo: NetworkMemo | None = None,
    network: TrenchNetwork | None = None,
    trenches_checked: bool = False,
) -> RoutePlan:
    """Route every circuit of ``site`` along its trenches.

    Parameters
    ----------
    site : layers.model.Site
        Validated site in a projected metric CRS.
    params : RouteParams, optional
        Defaults when not given.
    memo : routeplan.network.NetworkMemo, optional
        The last run's ``network.memo``: the noding and taps it still holds good for are
        reused (the result is the same as without it).
    network : routeplan.network.TrenchNetwork, optional
        The network :func:`site_network` gives for ``site`` under ``params``, where the caller
        has it (a network built before from the same trenches and equipment): not built again.
    trenches_checked : bool, optional
        The caller has found no :func:`routeplan.network.trench_problems` in these trenches
        (ids and geometry) under these ``node_tol_m`` and ``snap_m`` (a local re-plan whose
        last plan had the same trenches): not checked again.

    Returns
    -------
    RoutePlan

    Raises
    ------
    RoutingError
        With every problem found: trenches drawn twice along one corridor, running back
        over themselves or with a part far from the rest, equipment too far from a trench,
        a missing destination that cannot be filled, circuits whose ends lie on separate
        islands.

    Notes
    -----
    Per circuit: ``route_m = stub_m + trench_m``;
    ``cable_m = route_m × (1 + slack_pct / 100) + 2 × termination_m + row_run_m``, with
    ``row_run_m = row_run_factor × row length`` for string circuits (see
    :func:`row_length_m`) and 0 for the others.
    """
    params = RouteParams() if params is None else params
    prep = _prepare(site, params, memo, network, trenches_checked)
    raise_for(prep.problems)
    network, circuits = prep.network, prep.circuits
    timings = dict(prep.timings_s)
    t = time.perf_counter()

    # unique (source feature, destination feature) pairs: a row's strings share one route
    tap_from, tap_to = _circuit_taps(site, circuits)
    n_taps = max(len(network.taps), 1)
    pair_key, pair_of = np.unique(tap_from * n_taps + tap_to, return_inverse=True)
    pair_of = pair_of.reshape(-1)
    p_from, p_to = pair_key // n_taps, pair_key % n_taps
    node = network.taps["node"].to_numpy(np.int64)
    paths = shortest_paths(network, node[p_from], node[p_to])
    timings["search"] = time.perf_counter() - t

    t = time.perf_counter()
    circuits_frame, segments, inc_c, inc_s = _tables(
        site, network, circuits, params, paths, pair_of, p_from, p_to
    )
    stretches, air_c, air_s = air_stretches(
        network.taps, site.rows, tap_from, tap_to, circuits.from_index,
        circuits_frame["row_run_m"].to_numpy(float),
    )  # fmt: skip
    timings["tables"] = time.perf_counter() - t
    return RoutePlan(
        circuits=circuits_frame,
        segments=segments,
        incidence_circuit=inc_c,
        incidence_segment=inc_s,
        air=stretches,
        air_incidence_circuit=air_c,
        air_incidence_stretch=air_s,
        assignment=prep.destinations.report,
        network=network,
        params=params,
        timings_s=timings,
    )


def air_stretches(
    taps: pd.DataFrame,
    rows: pd.DataFrame,
    tap_from: np.ndarray,
    tap_to: np.ndarray,
    from_index: np.ndarray,
    row_run_m: np.ndarray,
) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    """The stretches in air that circuits share, and which circuit runs along which.

    Two kinds, both in air and neither a trench segment: each equipment feature's *stub*
    (the straight run from the feature to its trench) carries every circuit that starts or
    ends at the feature — a row's strings, the strings arriving at a combiner and its array
    circuit, the array circuits and the AC circuit of an inverter; each row's *row run* (the
    string cables along the row) carries the row's strings. Stretches of zero length are
    left out (they carry nothing in air).

    Parameters
    ----------
    taps : pandas.DataFrame
        :attr:`TrenchNetwork.taps` (``layer``, ``feature_id``, ``stub_m``), one row per
        equipment feature.
    rows : pandas.DataFrame
        The rows layer (``id``).
    tap_from, tap_to : numpy.ndarray of int
        Each circuit's source and destination tap.
    from_index : numpy.ndarray of int
        Each circuit's source feature (row index of a string circuit's row).
    row_run_m : numpy.ndarray
        Each circuit's length along its row [m] (0 but for strings).

    Returns
    -------
    (stretches, circuit, stretch)
        ``stretches``: ``stretch_id`` (``'stub <feature>'``, ``'row run <row>'``), ``kind``,
        ``layer``, ``feature_id``, ``length_m``; then the flat incidence, sorted by circuit.
    """
    n_taps, n_c = len(taps), len(tap_from)
    stub = taps["stub_m"].to_numpy(float)
    has_stub = np.nan_to_num(stub) > 0
    row_len = np.zeros(len(rows))
    strings = row_run_m > 0
    np.maximum.at(row_len, from_index[strings], row_run_m[strings])
    stretches = pd.DataFrame(
        {
            "stretch_id": np.concatenate(
                [
                    "stub " + taps["feature_id"].to_numpy(dtype=object).astype(str),
                    "row run " + rows["id"].to_numpy(dtype=object).astype(str),
                ]
            ).astype(object),
            "kind": np.repeat(["stub", "row run"], [n_taps, len(rows)]).astype(object),
            "layer": np.concatenate(
                [taps["layer"].to_numpy(dtype=object), np.full(len(rows), "rows", dtype=object)]
            ),
            "feature_id": np.concatenate(
                [taps["feature_id"].to_numpy(dtype=object), rows["id"].to_numpy(dtype=object)]
            ),
            "length_m": np.concatenate([np.nan_to_num(stub), row_len]),
        }
    )
    circuit = np.arange(n_c)
    pairs = [
        (circuit[has_stub[tap_from]], tap_from[has_stub[tap_from]]),
        (circuit[has_stub[tap_to]], tap_to[has_stub[tap_to]]),
        (circuit[strings], n_taps + from_index[strings]),
    ]
    c = np.concatenate([p[0] for p in pairs]).astype(np.int64)
    k = np.concatenate([p[1] for p in pairs]).astype(np.int64)
    order = np.lexsort((k, c))
    return stretches, c[order], k[order]


def _route_geometry(
    network: TrenchNetwork, paths: Paths, p_from: np.ndarray, p_to: np.ndarray
) -> np.ndarray:
    """One LineString per pair: source stub, segments in route order, destination stub."""
    n_seg = len(network.segments)
    pool = np.concatenate(
        [
            np.asarray(network.segments.geometry.array, dtype=object),
            np.asarray(network.taps.geometry.array, dtype=object),
        ]
    )
    n_pairs = len(p_from)
    # pieces: (route, pool item, forward), routes in order
    lens = np.diff(paths.offset) + 2
    off = np.r_[0, np.cumsum(lens)]
    item = np.empty(off[-1], dtype=np.int64)
    fwd = np.empty(off[-1], dtype=bool)
    item[off[:-1]], fwd[off[:-1]] = n_seg + p_from, True  # stub: feature → node
    item[off[1:] - 1], fwd[off[1:] - 1] = n_seg + p_to, False  # stub reversed: node → feature
    mid = np.ones(off[-1], dtype=bool)
    mid[off[:-1]], mid[off[1:] - 1] = False, False
    item[mid], fwd[mid] = paths.segment, paths.forward
    route = np.repeat(np.arange(n_pairs), lens)
    first = np.zeros(off[-1], dtype=bool)
    first[off[:-1]] = True

    used = np.unique(item)
    xy, cidx = shapely.get_coordinates(pool[used], return_index=True)
    start = np.searchsorted(cidx, np.arange(len(used)))
    count = np.diff(np.r_[start, len(xy)])
    k = np.searchsorted(used, item)
    skip = (~first).astype(np.int64)  # later pieces start where the previous one ended
    n_c = count[k] - skip
    begin = np.where(fwd, start[k] + skip, start[k] + count[k] - 1 - skip)
    stride = np.where(fwd, 1, -1)
    within = np.arange(n_c.sum()) - np.repeat(np.cumsum(n_c) - n_c, n_c)
    idx = np.repeat(begin, n_c) + np.repeat(stride, n_c) * within
    return shapely.linestrings(xy[idx], indices=np.repeat(route, n_c))


def joined(items: list[str], offsets: np.ndarray, sep: str = ";") -> np.ndarray:
    """``sep.join(items[offsets[i]:offsets[i + 1]])`` for each i, as an object array: one join
    of every item, then one slice per group (no list or array built per group)."""
    text = sep.join(items)
    size = np.fromiter(map(len, items), dtype=np.int64, count=len(items)) + len(sep)
    start = np.r_[0, np.cumsum(size)]  # where each item starts in ``text`` (and the end + sep)
    a = start[offsets[:-1]]
    b = np.maximum(start[offsets[1:]] - len(sep), a)  # an empty group: ""
    out = np.empty(len(a), dtype=object)
    out[:] = [text[i:j] for i, j in zip(a.tolist(), b.tolist(), strict=True)]
    return out


def _tables(
    site: Site,
    network: TrenchNetwork,
    circuits: Circuits,
    params: RouteParams,
    paths: Paths,
    pair_of: np.ndarray,
    p_from: np.ndarray,
    p_to: np.ndarray,
) -> tuple[gpd.GeoDataFrame, gpd.GeoDataFrame, np.ndarray, np.ndarray]:
    """Per-circuit and per-segment tables and the flat incidence."""
    n_c, n_seg, n_pairs = len(circuits), len(network.segments), len(p_from)
    stub = network.taps["stub_m"].to_numpy(float)
    geom = _route_geometry(network, paths, p_from, p_to)

    # per pair
    mult = np.bincount(pair_of, minlength=n_pairs)
    kind_code = pd.Categorical(circuits.kind, categories=KINDS).codes.astype(np.int64)
    pair_kind = np.zeros(n_pairs, dtype=np.int64)
    pair_kind[pair_of] = kind_code
    pair_stub = stub[p_from] + stub[p_to]
    pair_route = pair_stub + paths.trench_m
    pp = paths.pair
    seg_count = np.bincount(paths.segment, weights=mult[pp], minlength=n_seg).astype(np.int64)
    by_kind = [
        np.bincount(paths.segment, weights=mult[pp] * (pair_kind[pp] == i), minlength=n_seg).astype(
            np.int64
        )
        for i in range(len(KINDS))
    ]
    plen = np.diff(paths.offset)
    group = np.zeros(n_pairs, dtype=np.int64)
    has = plen > 0
    if has.any():
        group[has] = np.maximum.reduceat(seg_count[paths.segment], paths.offset[:-1][has])
    seg_ids = network.segments["segment_id"].to_numpy(dtype=object)
    pair_seg_ids = joined(seg_ids[paths.segment].tolist(), paths.offset)

    # per circuit
    row_run = np.zeros(n_c)
    is_string = kind_code == 0
    if is_string.any():
        row_len = row_length_m(np.asarray(site.rows.geometry.array, dtype=object))
        row_run[is_string] = params.row_run_factor * row_len[circuits.from_index[is_string]]
    route_m = pair_route[pair_of]
    cable_m = route_m * (1 + params.slack_pct / 100) + 2 * params.termination_m + row_run
    circuits_frame = gpd.GeoDataFrame(
        {
            **circuits.frame(),
            "route_m": route_m,
            "trench_m": paths.trench_m[pair_of],
            "stub_m": pair_stub[pair_of],
            "row_run_m": row_run,
            "cable_m": cable_m,
            "n_segments": plen[pair_of],
            "segment_ids": pair_seg_ids[pair_of],
            "group_max": group[pair_of],
        },
        geometry=geom[pair_of] if n_c else [],
        crs=network.crs,
    )

    # flat incidence, by circuit, in route order
    c_len = plen[pair_of]
    inc_c = np.repeat(np.arange(n_c), c_len)
    within = np.arange(c_len.sum()) - np.repeat(np.cumsum(c_len) - c_len, c_len)
    inc_s = paths.segment[np.repeat(paths.offset[:-1][pair_of], c_len) + within]

    # per segment
    cid = circuits.circuit_id
    rank = np.empty(n_c, dtype=np.int64)
    rank[np.argsort(cid, kind="stable")] = np.arange(n_c)
    order = np.lexsort((rank[inc_c], inc_s))
    ids_sorted = cid[inc_c[order]].tolist()
    bounds = np.searchsorted(inc_s[order], np.arange(n_seg + 1))
    circuit_ids = joined(ids_sorted, bounds)
    seg = network.segments
    cap = seg["max_circuits"].to_numpy(float)
    fill = np.where(np.isnan(cap), np.nan, seg_count / np.where(np.isnan(cap), 1.0, cap))
    segments = gpd.GeoDataFrame(
        {
            "segment_id": seg["segment_id"].to_numpy(dtype=object),
            "trench_id": seg["trench_id"].to_numpy(dtype=object),
            "length_m": seg["length_m"].to_numpy(float),
            "circuits": seg_count,
            "strings": by_kind[KINDS.index("string")],
            "arrays": by_kind[KINDS.index("array")],
            "ac": by_kind[KINDS.index("ac")],
            "subarrays": by_kind[KINDS.index("subarray")],
            "circuit_ids": circuit_ids,
            **{k: seg[k].to_numpy() for k in TRENCH_ATTRIBUTES},
            "fill": fill,
            "over_capacity": ~np.isnan(cap) & (seg_count > np.nan_to_num(cap, nan=np.inf)),
            **{
                k: seg[k].to_numpy()
                for k in ("node_u", "node_v", "start_m", "end_m", "trench_index")
            },
        },
        geometry=np.asarray(seg.geometry.array, dtype=object),
        crs=network.crs,
    )
    return circuits_frame, segments, inc_c, inc_s
