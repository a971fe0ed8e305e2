"""Circuits of a site, and the destinations of equipment whose ``to`` is missing.

Kinds of circuit (``kind``) and their ids:

========  ======================  ==========================  =====================
kind      from → to               one per                     id
========  ======================  ==========================  =====================
string    row → combiner          string of a row             ``<row>/S<k>``
          (or inverter)
subarray  combiner → combiner     combiner feeding another    ``SA:<combiner>``
                                  (a sub-array combiner)
array     combiner → inverter     combiner feeding an         ``A:<combiner>``
                                  inverter
ac        inverter → grid point   inverter (when the site     ``AC:<inverter>``
                                  has a grid point)
========  ======================  ==========================  =====================

The names follow IEC 62548: a *sub-array cable* joins a string combiner to the combiner above
it (a sub-array combiner, or recombiner), the *array cable* the last combiner to the
inverter.

``k`` counts a row's strings from 1, zero-padded to the width of the row's string count
(``R12/S03`` of 12 strings, ``R7/S4`` of 9). Ids are built from feature ids alone, so they
survive a rerun unchanged; they must be unique across the site.

Missing destinations are filled by route length (stub + trench + stub) through the trench
network, see :func:`assign_destinations`. This module knows nothing of graphs: the caller
passes a function that measures route lengths.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
import pandas as pd
from numpy.dtypes import StringDType

from layers.errors import Problem
from layers.model import Site
from routeplan.errors import AssignmentError, RoutingError

__all__ = [
    "KINDS",
    "Circuits",
    "Destinations",
    "RouteLengths",
    "assign_destinations",
    "assign_greedy",
    "derive_circuits",
    "string_circuit_ids",
]

#: kinds of circuit, in circuit order.
KINDS: tuple[str, ...] = ("string", "subarray", "array", "ac")

#: ``f(src_layer, src_ids, dst_layer, dst_ids)`` → route lengths [m], shape
#: ``(len(src_ids), len(dst_ids))``, ``inf`` where no route exists.
RouteLengths = Callable[[str, Sequence[str], str, Sequence[str]], np.ndarray]

#: where each layer's ``to`` may point.
TO_LAYERS: dict[str, tuple[str, ...]] = {
    "rows": ("combiners", "inverters"),
    "combiners": ("combiners", "inverters"),
    "inverters": ("grid",),
}

_SINGULAR = {"rows": "row", "combiners": "combiner", "inverters": "inverter", "grid": "grid point"}


def string_circuit_ids(row_id: str, n_strings: int) -> list[str]:
    """Ids of the string circuits of one row.

    Examples
    --------
    >>> string_circuit_ids("R12", 12)[:3]
    ['R12/S01', 'R12/S02', 'R12/S03']
    >>> string_circuit_ids("R7", 9)[-1]
    'R7/S9'
    """
    width = len(str(n_strings))
    return [f"{row_id}/S{k:0{width}d}" for k in range(1, n_strings + 1)]


def _ids(values: pd.Series) -> list[str | None]:
    """Feature ids (or ``to`` values) as str, None where missing."""
    arr = values.to_numpy(dtype=object)
    missing = pd.isna(arr).tolist()
    return [None if m else str(v) for v, m in zip(arr.tolist(), missing, strict=True)]


@dataclass(frozen=True)
class Destinations:
    """Where each row, combiner and inverter sends its circuit(s).

    Attributes
    ----------
    to : dict[str, list[tuple[str, str] | None]]
        For ``'rows'``, ``'combiners'``, ``'inverters'``: per feature (in layer order)
        ``(to_layer, to_id)``, or None when it has none (no grid point, or a failure
        reported as a problem).
    report : pandas.DataFrame
        One row per feature that has a destination: ``layer``, ``feature_id``,
        ``to_layer``, ``to_id``, ``rule`` (``'given'``: the feature's ``to``;
        ``'nearest'``: the shortest route; ``'nearest with room'``: the shortest route to
        a combiner with ``max_strings`` room left; ``'only'``: the only candidate, e.g.
        the site's one grid point),
        ``route_m`` (NaN for ``'given'``), ``strings`` (strings it carries) and ``note``.
    """

    to: dict[str, list[tuple[str, str] | None]]
    report: pd.DataFrame


def assign_greedy(
    route_m: np.ndarray, demand: np.ndarray, capacity: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Assign each source to one destination, shortest routes first, within capacity.

    Parameters
    ----------
    route_m : numpy.ndarray
        ``(n_src, n_dst)`` route lengths [m]; ``inf`` where there is no route.
    demand : numpy.ndarray
        ``(n_src,)`` what each source needs of a destination's capacity (strings).
    capacity : numpy.ndarray
        ``(n_dst,)`` capacity left at each destination; ``inf`` for none.

    Returns
    -------
    choice : numpy.ndarray of int
        Destination of each source, -1 where none has room (or no route).
    refused : numpy.ndarray of int
        For each source, the nearest destination that had no room when its turn came,
        -1 if none refused it.

    Notes
    -----
    All (source, destination) pairs with a route are taken in ascending route length
    (ties: lower source index, then lower destination index); a pair is accepted when its
    source has no destination yet and the destination still has room for the whole demand.
    Without capacity limits this is simply each source's nearest destination. The result
    depends only on the inputs, so reruns give the same assignment.

    Examples
    --------
    >>> r = np.array([[1.0, 5.0], [2.0, 3.0]])
    >>> assign_greedy(r, np.array([2, 2]), np.array([3.0, np.inf]))
    (array([0, 1]), array([-1,  0]))
    """
    route_m = np.asarray(route_m, dtype=float)
    n_src, n_dst = route_m.shape
    choice = np.full(n_src, -1, dtype=np.int64)
    refused = np.full(n_src, -1, dtype=np.int64)
    if n_dst == 0 or n_src == 0:
        return choice, refused
    finite = np.isfinite(route_m)
    if np.all(np.isinf(capacity)):  # no limits: the nearest, vectorised
        masked = np.where(finite, route_m, np.inf)
        best = np.argmin(masked, axis=1)
        ok = finite[np.arange(n_src), best]
        choice[ok] = best[ok]
        return choice, refused
    room = np.asarray(capacity, dtype=float).copy()
    src, dst = np.nonzero(finite)
    order = np.lexsort((dst, src, route_m[src, dst]))
    left = n_src
    for i, j in zip(src[order].tolist(), dst[order].tolist(), strict=True):
        if choice[i] >= 0:
            continue
        if demand[i] <= room[j]:
            choice[i] = j
            room[j] -= demand[i]
            left -= 1
            if left == 0:
                break
        elif refused[i] < 0:
            refused[i] = j
    return choice, refused


def assign_destinations(
    site: Site, route_lengths: RouteLengths, connected: Callable[[str, str], bool]
) -> tuple[Destinations, list[tuple[type[RoutingError], Problem]]]:
    """Destination of every row, combiner and inverter: its ``to``, or the nearest by route.

    Parameters
    ----------
    site : layers.model.Site
    route_lengths : callable
        See :data:`RouteLengths`.
    connected : callable
        ``connected(layer, feature_id)``: whether the feature joins the trench network
        (features that do not are reported elsewhere and left out here).

    Returns
    -------
    Destinations
    problems : list of (error class, Problem)

    Notes
    -----
    Rules where ``to`` is missing, all by route length (stub + trench + stub):

    - a row goes to a combiner when the site has any, else to an inverter; rows are
      placed by :func:`assign_greedy` in ascending route length, each whole row to one
      combiner or inverter, so that no combiner exceeds its ``max_strings`` and no inverter
      its string terminals (``dc_inputs`` × ``input_max_strings``), after the rows given to
      it by ``to``;
    - a combiner goes to the nearest inverter;
    - an inverter goes to the only grid point, else to the nearest one; with no grid point
      it has no ac circuit.
    """
    problems: list[tuple[type[RoutingError], Problem]] = []
    report: dict[tuple[int, int], dict] = {}  # (layer order, feature index) → entry
    ids = {
        name: _ids(site.layer(name)["id"]) for name in ("rows", "combiners", "inverters", "grid")
    }
    index = {name: {v: i for i, v in enumerate(vals)} for name, vals in ids.items()}
    to: dict[str, list[tuple[str, str] | None]] = {}

    def given(layer: str) -> list[tuple[str, str] | None]:
        """Destinations named by ``to``; problems for unknown ones."""
        out: list[tuple[str, str] | None] = []
        owner = {v: la for la in reversed(TO_LAYERS[layer]) for v in index[la]}  # first wins
        for fid, target in zip(ids[layer], _ids(site.layer(layer)["to"]), strict=True):
            if target is None:
                out.append(None)
                continue
            hit = owner.get(target)
            if hit is None:
                kinds = " or ".join(_SINGULAR[la] for la in TO_LAYERS[layer])
                msg = f"to {target!r} is not the id of any {kinds}"
                problems.append((AssignmentError, Problem(layer, fid, msg)))
            out.append(None if hit is None else (hit, target))
        return out

    # ---- rows
    rows = site.rows
    strings = np.asarray(rows["strings"], dtype=np.int64) if len(rows) else np.zeros(0, np.int64)
    to["rows"] = given("rows")
    has_to = [t is not None for t in to["rows"]]
    for i, (t, fid, n) in enumerate(zip(to["rows"], ids["rows"], strings.tolist(), strict=True)):
        if t is not None:
            report[(0, i)] = _entry("rows", fid, t, "given", math.nan, n)
    dst_layer = "combiners" if len(site.combiners) else "inverters"
    # a combiner that other combiners feed (a sub-array combiner) takes no strings
    fed = set(_ids(site.combiners["to"])) & set(index["combiners"])
    dst_ids = [v for v in ids[dst_layer] if connected(dst_layer, v) and v not in fed]
    if dst_layer == "combiners":
        cap = np.asarray(site.combiners["max_strings"], dtype=float)
        cap = np.where(np.isnan(cap), np.inf, cap)
        used = np.zeros(len(cap))
        for i, t in enumerate(to["rows"]):
            if t is not None and t[0] == "combiners":
                used[index["combiners"][t[1]]] += strings[i]
        for j in np.flatnonzero(used > cap):
            users = [
                ids["rows"][i]
                for i, t in enumerate(to["rows"])
                if t == ("combiners", ids["combiners"][j])
            ]
            msg = (
                f"rows given to it by `to` bring {used[j]:g} strings, more than max_strings "
                f"{cap[j]:g} ({', '.join(users)})"
            )
            problems.append((AssignmentError, Problem("combiners", ids["combiners"][j], msg)))
        room = np.maximum(cap - used, 0)[[index["combiners"][v] for v in dst_ids]]
    else:  # string inverters: their string terminals, dc_inputs × input_max_strings
        inv = site.inverters
        cap = np.asarray(inv["dc_inputs"], dtype=float) * np.asarray(
            inv["input_max_strings"], dtype=float
        )
        cap = np.where(np.isnan(cap), np.inf, cap)
        used = np.zeros(len(cap))
        for i, t in enumerate(to["rows"]):
            if t is not None and t[0] == "inverters":
                used[index["inverters"][t[1]]] += strings[i]
        # a named inverter over its terminals is reported with its inputs (routeplan.inputs)
        room = np.maximum(cap - used, 0)[[index["inverters"][v] for v in dst_ids]]
    need = [i for i in range(len(rows)) if not has_to[i] and connected("rows", ids["rows"][i])]
    if need:
        src_ids = [ids["rows"][i] for i in need]
        r = route_lengths("rows", src_ids, dst_layer, dst_ids)
        choice, refused = assign_greedy(r, strings[need], room)
        for k, i in enumerate(need):
            fid, j = ids["rows"][i], int(choice[k])
            nref = int(refused[k])
            if j < 0:
                if np.isfinite(r[k]).any():
                    jj = int(np.nanargmin(r[k]))
                    msg = (
                        f"no `to`, and no reachable {_SINGULAR[dst_layer]} has room for its "
                        f"{strings[i]} strings (nearest {dst_ids[jj]!r} at {r[k, jj]:.1f} m)"
                    )
                else:
                    msg = (
                        f"no `to`, and no {_SINGULAR[dst_layer]} is reachable through the trenches"
                    )
                problems.append((AssignmentError, Problem("rows", fid, msg)))
                continue
            to["rows"][i] = (dst_layer, dst_ids[j])
            note = ""
            rule = "only" if len(ids[dst_layer]) == 1 else "nearest"
            if nref >= 0:
                rule = "nearest with room"
                note = f"nearer {dst_ids[nref]!r} ({r[k, nref]:.1f} m) had no room"
            report[(0, i)] = _entry("rows", fid, to["rows"][i], rule, r[k, j], strings[i], note)

    # ---- combiners → inverters, inverters → grid: nearest, no capacity
    for code, layer, target in ((1, "combiners", "inverters"), (2, "inverters", "grid")):
        to[layer] = given(layer)
        cand = [v for v in ids[target] if connected(target, v)]
        need = []
        for i, fid in enumerate(ids[layer]):
            if to[layer][i] is not None:
                report[(code, i)] = _entry(layer, fid, to[layer][i], "given", math.nan, 0)
            elif connected(layer, fid) and ids[target]:
                need.append(i)
        if not need:
            continue
        src_ids = [ids[layer][i] for i in need]
        r = route_lengths(layer, src_ids, target, cand)
        choice, _ = assign_greedy(r, np.ones(len(need)), np.full(len(cand), np.inf))
        for k, i in enumerate(need):
            fid, j = ids[layer][i], int(choice[k])
            if j < 0:
                what = _SINGULAR[target]
                msg = f"no `to`, and no {what} is reachable through the trenches"
                problems.append((AssignmentError, Problem(layer, fid, msg)))
                continue
            to[layer][i] = (target, cand[j])
            rule = "only" if len(ids[target]) == 1 else "nearest"
            report[(code, i)] = _entry(layer, fid, to[layer][i], rule, r[k, j], 0)

    # strings carried by each combiner and inverter (combiners feeding combiners: from the
    # string combiners up, so that each adds what it carries once it has all of it)
    carried = {(la, v): 0 for la in ("combiners", "inverters") for v in ids[la]}
    for t, n in zip(to["rows"], strings.tolist(), strict=True):
        if t is not None:
            carried[t] += n
    for i in _leaves_first(ids["combiners"], to["combiners"]):
        t = to["combiners"][i]
        if t is not None:
            carried[t] += carried[("combiners", ids["combiners"][i])]
    for (code, _), entry in report.items():
        if code > 0:
            entry["strings"] = carried[(entry["layer"], entry["feature_id"])]
    columns = ["layer", "feature_id", "to_layer", "to_id", "rule", "route_m", "strings", "note"]
    frame = pd.DataFrame([report[k] for k in sorted(report)], columns=columns)
    frame["strings"] = frame["strings"].astype(np.int64)
    return Destinations(to=to, report=frame), problems


def _leaves_first(ids: list[str], to: list[tuple[str, str] | None]) -> list[int]:
    """Combiner positions ordered so that each comes after every combiner feeding it (the
    combiners' ``to`` form a forest; cycles are refused by validation and stop here)."""
    index = {v: i for i, v in enumerate(ids)}
    depth = [0] * len(ids)
    for i in range(len(ids)):
        seen, j, d = set(), i, 0
        while to[j] is not None and to[j][0] == "combiners" and j not in seen:
            seen.add(j)
            j, d = index[to[j][1]], d + 1
        depth[i] = d  # combiners above this one
    return sorted(range(len(ids)), key=lambda i: -depth[i])


def _entry(
    layer: str,
    fid: str,
    to: tuple[str, str],
    rule: str,
    route_m: float,
    strings: int,
    note: str = "",
) -> dict:
    return {
        "layer": layer,
        "feature_id": fid,
        "to_layer": to[0],
        "to_id": to[1],
        "rule": rule,
        "route_m": float(route_m),
        "strings": int(strings),
        "note": note,
    }


@dataclass(frozen=True)
class Circuits:
    """Every circuit of a site as parallel arrays, in circuit order.

    Order: string circuits (rows in layer order, strings ascending), then array circuits
    (combiners in layer order), then ac circuits (inverters in layer order).

    Attributes
    ----------
    circuit_id, kind, from_layer, from_id, to_layer, to_id : numpy.ndarray of str (object)
    strings : numpy.ndarray of int
        Strings the circuit carries (1 for a string circuit).
    from_index, to_index : numpy.ndarray of int
        Row of the source / destination feature in its layer's frame.
    """

    circuit_id: np.ndarray
    kind: np.ndarray
    from_layer: np.ndarray
    from_id: np.ndarray
    to_layer: np.ndarray
    to_id: np.ndarray
    strings: np.ndarray
    from_index: np.ndarray
    to_index: np.ndarray

    #: columns of :meth:`frame`.
    COLUMNS: ClassVar[tuple[str, ...]] = (
        "circuit_id",
        "kind",
        "from_layer",
        "from_id",
        "to_layer",
        "to_id",
        "strings",
    )

    def __len__(self) -> int:
        return len(self.circuit_id)

    def frame(self) -> pd.DataFrame:
        """The circuits as a DataFrame (:attr:`COLUMNS`), one row per circuit."""
        return pd.DataFrame({k: getattr(self, k) for k in self.COLUMNS})


def _string_ids(row_ids: np.ndarray, n_strings: np.ndarray) -> np.ndarray:
    """Ids of all string circuits of rows (vectorised :func:`string_circuit_ids`)."""
    total = int(n_strings.sum())
    if total == 0:
        return np.zeros(0, dtype=object)
    k = np.arange(total) - np.repeat(np.cumsum(n_strings) - n_strings, n_strings) + 1
    width = np.repeat(np.char.str_len(n_strings.astype(str)), n_strings)
    sdt = StringDType()
    number = np.strings.zfill(k.astype(sdt), width)
    head = np.strings.add(np.repeat(row_ids.astype(sdt), n_strings), "/S")
    return np.strings.add(head, number).astype(object)


def derive_circuits(
    site: Site, destinations: Destinations
) -> tuple[Circuits, list[tuple[type[RoutingError], Problem]]]:
    """Every circuit of ``site`` given the destinations of its equipment.

    Returns
    -------
    Circuits
    problems : list of (error class, Problem)
        Circuit ids that are not unique (possible only with unusual feature ids).
    """
    to = destinations.to
    parts: list[dict[str, np.ndarray]] = []
    rep = destinations.report
    carried = dict(
        zip(
            zip(rep["layer"].tolist(), rep["feature_id"].tolist(), strict=True),
            rep["strings"].tolist(),
            strict=True,
        )
    )
    position = {
        la: {v: i for i, v in reversed(list(enumerate(_ids(site.layer(la)["id"]))))}
        for la in ("combiners", "inverters", "grid")
    }
    for layer, kind, prefix in (
        ("rows", "string", ""),
        ("combiners", "subarray", "SA:"),
        ("combiners", "array", "A:"),
        ("inverters", "ac", "AC:"),
    ):
        frame = site.layer(layer)
        fids = np.array(_ids(frame["id"]), dtype=object)
        if layer == "rows":
            n = (
                np.asarray(frame["strings"], dtype=np.int64)
                if len(frame)
                else np.zeros(0, np.int64)
            )
        else:
            n = np.ones(len(frame), dtype=np.int64)
        onto = {"subarray": "combiners", "array": "inverters"}.get(kind)
        sel = np.array(
            [
                i
                for i, t in enumerate(to[layer])
                if t is not None and n[i] > 0 and (onto is None or t[0] == onto)
            ],
            dtype=np.int64,
        )
        reps = n[sel]
        dest = [to[layer][i] for i in sel]
        to_layer = np.array([d[0] for d in dest], dtype=object)
        to_id = np.array([d[1] for d in dest], dtype=object)
        to_index = np.array([position[la][fid] for la, fid in dest], dtype=np.int64)
        if layer == "rows":
            cid = _string_ids(fids[sel], reps)
            strings = np.ones(int(reps.sum()), dtype=np.int64)
        else:
            cid = np.array([f"{prefix}{f}" for f in fids[sel]], dtype=object)
            strings = np.array([carried.get((layer, f), 0) for f in fids[sel]], dtype=np.int64)
        total = len(cid)
        parts.append(
            {
                "circuit_id": cid,
                "kind": np.full(total, kind, dtype=object),
                "from_layer": np.full(total, layer, dtype=object),
                "from_id": np.repeat(fids[sel], reps),
                "to_layer": np.repeat(to_layer, reps),
                "to_id": np.repeat(to_id, reps),
                "strings": strings,
                "from_index": np.repeat(sel, reps),
                "to_index": np.repeat(to_index, reps),
            }
        )
    circuits = Circuits(**{k: np.concatenate([p[k] for p in parts]) for k in parts[0]})
    problems: list[tuple[type[RoutingError], Problem]] = []
    ids = pd.Index(circuits.circuit_id)
    for f in np.flatnonzero(ids.duplicated(keep=False) & ~ids.duplicated(keep="first")):
        cid = circuits.circuit_id[f]
        msg = f"circuit id {cid!r} is not unique: rename features so that their ids differ"
        problems.append((RoutingError, Problem(circuits.from_layer[f], circuits.from_id[f], msg)))
    return circuits, problems
