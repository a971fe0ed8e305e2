"""The comparison of two plans: circuits, trench segments (matched by their place along the
trench), the bill of quantities and the plant-level totals.

Circuits are matched by id. Each changed circuit gets a *scope*:

* ``route`` — the circuit itself changed where it goes or how it is built: added, removed,
  destination, route (the stretches of trench it follows, compared as merged chainage
  intervals, so that a segment split under it is no change), route or cable length, material,
  size, parallel sets, or status;
* ``value`` — its route and cable are the same, but a value computed for it changed:
  protection, design current, capacity, derating or grouping, utilisation, its own drop,
  losses (usually because other circuits joined or left a trench it shares);
* ``follows`` — only its cumulative DC drop changed, which follows from a circuit it feeds
  (a string after its array cable changed). Its *cause* is the nearest circuit downstream of
  it whose own route or values changed (empty when none did: a changed setting).

Trench segments of the same trench are matched by the overlap of their chainage intervals
(``from_m``–``to_m``, more than :data:`OVERLAP_M`): a segment with the same id in both plans
is compared field by field; one old segment overlapping several new ones, and nothing else,
was *split*; several old ones into one new one were *merged*; other overlaps *reshaped* the
trench; a segment that overlaps nothing was *added* or *removed*.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import sparse
from scipy.sparse import csgraph

from ..folder import MANIFEST, Manifest, reading
from ..outputs.columns import CIRCUIT_COLUMNS, SEGMENT_COLUMNS
from ..units import FOOT_M
from .core import (
    CHANGE_COLUMNS,
    CIRCUIT_FIELDS,
    CIRCUITS,
    NUMBER_FIELDS,
    QUANTITIES,
    QUANTITY_KEYS,
    ROUTE_FIELDS,
    SEGMENT_FIELDS,
    SEGMENTS,
    VALUE_FIELDS,
    read_plan,
)

#: least overlap of two segments' chainage intervals that matches them [m] (half the 0.1 m of
#: the ids' chainage)
OVERLAP_M = 0.05
#: decimals of each number column, as the schedules write them (the delta keeps them)
DECIMALS: dict[str, int] = {
    c.name: (c.decimals if c.decimals is not None else 0)
    for c in (*CIRCUIT_COLUMNS, *SEGMENT_COLUMNS)
}
DECIMALS["quantity"] = 2
#: circuit columns of :attr:`PlanDiff.circuits`
CIRCUIT_ROWS: tuple[str, ...] = (
    "circuit_id",
    "kind",
    "change",
    "look",
    "scope",
    "cause",
    "summary",
)
#: columns of :attr:`PlanDiff.segments`
SEGMENT_ROWS: tuple[str, ...] = ("event", "trench_id", "old_ids", "new_ids", "text")
#: columns of :attr:`PlanDiff.plant`
PLANT_ROWS: tuple[str, ...] = ("item", "unit", "old", "new", "delta")


@dataclass(frozen=True)
class PlanDiff:
    """What changed from one plan (``old_dir``) to another (``new_dir``).

    Attributes
    ----------
    changes : pandas.DataFrame
        One line per change (``diff.csv``), columns :data:`routeplan.diff.core.CHANGE_COLUMNS`:
        ``section`` (circuit, segment, quantity, plant), ``id``, ``change`` (added, removed,
        changed; for segments also split, merged, reshaped), ``field``, ``old``, ``new``,
        ``delta`` (new − old, for numbers), ``scope`` and ``cause`` (circuits, see the
        module), ``note``. Circuits in the order route, value, follows.
    circuits : pandas.DataFrame
        One row per changed circuit: ``circuit_id``, ``kind``, ``change``, ``look`` (added,
        removed, now failing, now passing, size up, size down, longer, shorter, other),
        ``scope``, ``cause``, ``summary`` (one line).
    segments : pandas.DataFrame
        One row per trench-segment event: ``event``, ``trench_id``, ``old_ids``, ``new_ids``
        (tuples of ids), ``text`` (one line).
    plant : pandas.DataFrame
        The plant-level block: ``item``, ``unit``, ``old``, ``new``, ``delta`` (floats).
    notes : tuple of str
        What differs between the two plans' bases (routeplan version, rule set, site name):
        each a reason values may differ besides the layout.
    edited : tuple of str
        The files read that were edited since routeplan wrote them (they no longer match
        their folder's manifest): the comparison shows the edits as changes of the plan.
    """

    old_dir: Path
    new_dir: Path
    changes: pd.DataFrame
    circuits: pd.DataFrame
    segments: pd.DataFrame
    plant: pd.DataFrame
    notes: tuple[str, ...] = ()
    edited: tuple[str, ...] = ()

    def ids(self, section: str, change: str | None = None) -> list[str]:
        """Sorted unique ids of a section (optionally one kind of change)."""
        c = self.changes[self.changes["section"] == section]
        if change:
            c = c[c["change"] == change]
        return sorted(set(c["id"]))

    @property
    def empty(self) -> bool:
        """Whether nothing changed."""
        return self.changes.empty


def diff_outputs(old_dir: Path | str, new_dir: Path | str) -> PlanDiff:
    """Compare two output folders of ``routeplan plan``. Raises
    :class:`routeplan.diff.core.DiffError` (one line naming the file, and the line, column or
    key) when a folder, a schedule or its summary is missing, damaged or of an earlier
    version."""
    old_dir, new_dir = Path(old_dir), Path(new_dir)
    with reading(old_dir), reading(new_dir):  # a run killed mid-commit completed first
        old, new = read_plan(old_dir), read_plan(new_dir)
        edited = (*edited_files(old_dir), *edited_files(new_dir))
    circuit_rows, circuits = compare_circuits(
        old["circuits"], new["circuits"], old["segments"], new["segments"]
    )
    segment_rows, segments = compare_segments(old["segments"], new["segments"])
    plant = plant_block(old, new)
    rows = [
        *circuit_rows,
        *segment_rows,
        *quantity_rows(old["quantities"], new["quantities"]),
        *_plant_rows(plant),
    ]
    changes = pd.DataFrame(rows, columns=list(CHANGE_COLUMNS)).fillna("")
    notes = _notes(old["summary"], new["summary"])
    return PlanDiff(old_dir, new_dir, changes, circuits, segments, plant, notes, edited)


def edited_files(folder: Path) -> list[str]:
    """The schedules and summary of a plan's output ``folder`` that its manifest records but
    that no longer hold the bytes routeplan wrote (edited by hand or by another program); none
    where the folder has no readable manifest (a plan written before manifests)."""
    try:
        manifest = Manifest.from_data(json.loads((folder / MANIFEST).read_text(encoding="utf-8")))
    except (OSError, ValueError, KeyError, TypeError):
        return []
    names = (CIRCUITS.name, SEGMENTS.name, QUANTITIES.name, "summary.json")
    return [
        str(folder / n)
        for n in names
        if n in manifest.files and not manifest.files[n].matches(folder / n)
    ]


def _notes(old: dict, new: dict) -> tuple[str, ...]:
    """The plans' bases that differ: routeplan version, rule set, conductor identification
    system, site name."""
    notes = []
    for what, keys in (
        ("routeplan version", ("tool", "version")),
        ("rule set", ("rules",)),
        ("conductor identification", ("marking",)),
        ("site name", ("site", "name")),
    ):
        a, b = _value(old, keys), _value(new, keys)
        if a != b:
            notes.append(f"{what}: {a} → {b}")
    return tuple(notes)


def _value(summary: dict, keys: tuple[str, ...]) -> str:
    for k in keys:
        summary = summary.get(k) if isinstance(summary, dict) else None
    return "-" if summary is None else str(summary)


# -- numbers ---------------------------------------------------------------------------------
def _delta(old: str, new: str, field: str) -> str:
    """``new - old`` with the column's decimals and a sign; empty for text or an empty cell."""
    if field not in NUMBER_FIELDS or old == "" or new == "":
        return ""
    d = DECIMALS.get(field, 2)
    value = round(float(new) - float(old), d)
    return f"{value + 0.0:+.{d}f}"  # + 0.0: no "-0.00"


def _row(
    section: str,
    id_: str,
    change: str,
    field: str = "",
    old: str = "",
    new: str = "",
    scope: str = "",
    cause: str = "",
    note: str = "",
) -> dict:
    return dict(
        section=section,
        id=id_,
        change=change,
        field=field,
        old=old,
        new=new,
        delta=_delta(old, new, field),
        scope=scope,
        cause=cause,
        note=note,
    )


# -- circuits --------------------------------------------------------------------------------
def compare_circuits(
    old: pd.DataFrame, new: pd.DataFrame, old_seg: pd.DataFrame, new_seg: pd.DataFrame
) -> tuple[list[dict], pd.DataFrame]:
    """The circuit lines of ``diff.csv`` (ranked: scope route, value, follows; then by id) and
    :attr:`PlanDiff.circuits`. Schedules as :func:`routeplan.diff.core.read_plan` reads them."""
    o, n = old.set_index("circuit_id"), new.set_index("circuit_id")
    added = sorted(set(n.index) - set(o.index))
    removed = sorted(set(o.index) - set(n.index))
    common = sorted(set(o.index) & set(n.index))
    fields = list(CIRCUIT_FIELDS)
    a, b = o.loc[common, fields], n.loc[common, fields]
    ne = a.ne(b).to_numpy()
    j = fields.index("trench_segments")
    differ = np.flatnonzero(ne[:, j])
    if len(differ):
        old_cover = _coverage(a.iloc[differ, j].tolist(), old_seg)
        new_cover = _coverage(b.iloc[differ, j].tolist(), new_seg)
        ne[differ, j] = [x != y for x, y in zip(old_cover, new_cover, strict=True)]
    changed = np.flatnonzero(ne.any(axis=1))
    idx = {f: fields.index(f) for f in fields}
    on_route = ne[:, [idx[f] for f in ROUTE_FIELDS]].any(axis=1)
    on_value = ne[:, [idx[f] for f in VALUE_FIELDS]].any(axis=1)
    scope = np.where(on_route, "route", np.where(on_value, "value", "follows"))
    changed_ids = [common[k] for k in changed]
    scope_of = dict(zip(changed_ids, scope[changed], strict=True))
    scope_of.update(dict.fromkeys(added, "route"))  # a new circuit is a change of route
    cause = _causes(new, changed_ids, scope[changed], scope_of)

    table: list[dict] = []
    lines: dict[str, list[dict]] = {"route": [], "value": [], "follows": []}
    kind_new, kind_old = n["kind"].to_dict(), o["kind"].to_dict()
    for ids, change, kinds, says in (
        (added, "added", kind_new, "new {} circuit"),
        (removed, "removed", kind_old, "{} circuit removed"),
    ):
        for cid in ids:
            lines["route"].append(_row("circuit", cid, change, scope="route"))
            table.append(
                dict(
                    circuit_id=cid,
                    kind=kinds[cid],
                    change=change,
                    look=change,
                    scope="route",
                    cause="",
                    summary=says.format(kinds[cid]),
                )
            )
    av, bv = a.to_numpy(dtype=object), b.to_numpy(dtype=object)
    for k, why in zip(changed.tolist(), cause, strict=True):
        cid, sc = common[k], str(scope[k])
        mine = [
            _row("circuit", cid, "changed", fields[f], av[k, f], bv[k, f], sc, why)
            for f in np.flatnonzero(ne[k]).tolist()
        ]
        lines[sc].extend(mine)
        table.append(
            dict(
                circuit_id=cid,
                kind=kind_new[cid],
                change="changed",
                look=_look({r["field"]: r for r in mine}),
                scope=sc,
                cause=why,
                summary=_summary(mine),
            )
        )
    frame = pd.DataFrame(table, columns=list(CIRCUIT_ROWS))
    return [*lines["route"], *lines["value"], *lines["follows"]], frame


#: the fields a circuit's one-line summary names first
_TOLD_FIRST = ("status", "size_mm2", "parallel", "material", "route_m", "to_id", "trench_segments")


def _summary(rows: list[dict]) -> str:
    """A changed circuit in one line: its three weightiest changes (a changed route is only
    named: its segment ids are in diff.csv)."""
    rank = {f: k for k, f in enumerate(_TOLD_FIRST)}
    told = sorted(rows, key=lambda r: rank.get(r["field"], len(rank)))
    parts = ["other trench stretches" if r["field"] == "trench_segments" else _say(r) for r in told]
    return "; ".join(parts[:3]) + ("; …" if len(parts) > 3 else "")


def _say(row: dict) -> str:
    """One change as text: ``route_m 70.00 → 78.50 (+8.50)``."""
    delta = f" ({row['delta']})" if row["delta"] else ""
    return f"{row['field']} {row['old'] or '-'} → {row['new'] or '-'}{delta}"


def _look(fields: dict[str, dict]) -> str:
    """What a changed circuit looks like on the change map (the weightiest change)."""
    status = fields.get("status")
    if status is not None:
        return "now failing" if status["new"] == "fail" else "now passing"
    if {"size_mm2", "parallel", "material"} & set(fields):
        old = _section(fields, "old")
        new = _section(fields, "new")
        if new > old:
            return "size up"
        if new < old:
            return "size down"
    route = fields.get("route_m")
    delta = float(route["delta"]) if route is not None and route["delta"] else 0.0
    if delta:  # a delta shown as +0.00 (a text change below the 0.01 m shown) is neither
        return "longer" if delta > 0 else "shorter"
    return "other"


def _section(fields: dict[str, dict], which: str) -> float:
    """Total conductor cross-section per pole (size × parallel) [mm²], where both changed
    fields are known; NaN otherwise (a material change alone is no size change)."""
    size, par = fields.get("size_mm2"), fields.get("parallel")
    try:
        s = float(size[which]) if size else np.nan
        p = float(par[which]) if par else np.nan
    except ValueError:
        return np.nan
    if size and par:
        return s * p
    return s if size else p


def _coverage(texts: list[str], segments: pd.DataFrame) -> list[frozenset]:
    """The stretches of trench each route (``trench_segments`` text) covers: its segments'
    chainage intervals, adjacent ones merged, as a set of (trench, from, to) with 0.1 m."""
    where = dict(
        zip(
            segments["segment_id"].tolist(),
            zip(
                segments["trench_id"].tolist(),
                segments["from_m"].astype(float).tolist(),
                segments["to_m"].astype(float).tolist(),
                strict=True,
            ),
            strict=True,
        )
    )
    out = []
    for text in texts:
        spans = sorted(where.get(s, (s, np.nan, np.nan)) for s in text.split(";") if s)
        merged: list[list] = []
        for t, lo, hi in spans:
            if merged and merged[-1][0] == t and abs(lo - merged[-1][2]) <= OVERLAP_M:
                merged[-1][2] = hi
            else:
                merged.append([t, lo, hi])
        out.append(frozenset((t, round(lo, 1), round(hi, 1)) for t, lo, hi in merged))
    return out


def _causes(
    new: pd.DataFrame, ids: list[str], scope: np.ndarray, scope_of: dict[str, str]
) -> list[str]:
    """For each changed circuit of scope ``follows``: the nearest circuit it feeds (the
    circuit leaving the equipment it lands on, in the new plan) whose own route or values
    changed; '' for the others and where none did."""
    feeds = new[new["kind"].isin(("subarray", "array"))]
    out_of = dict(zip(feeds["from_id"], feeds["circuit_id"], strict=True))
    lands = dict(zip(new["circuit_id"], new["to_id"], strict=True))
    causes = []
    for cid, sc in zip(ids, scope, strict=True):
        cause = ""
        if sc == "follows":
            seen = {cid}
            nxt = out_of.get(lands.get(cid, ""))
            while nxt is not None and nxt not in seen:
                if scope_of.get(nxt) in ("route", "value"):
                    cause = nxt
                    break
                seen.add(nxt)
                nxt = out_of.get(lands.get(nxt, ""))
        causes.append(cause)
    return causes


# -- trench segments -------------------------------------------------------------------------
def compare_segments(old: pd.DataFrame, new: pd.DataFrame) -> tuple[list[dict], pd.DataFrame]:
    """The segment lines of ``diff.csv`` and :attr:`PlanDiff.segments` (see the module)."""
    n_old, n_new = len(old), len(new)
    i, j = _overlaps(old, new)
    graph = sparse.coo_matrix(
        (np.ones(len(i), dtype=np.int8), (i, n_old + j)), shape=(n_old + n_new,) * 2
    )
    n_comp, label = csgraph.connected_components(graph, directed=False)
    lo, ln = label[:n_old], label[n_old:]
    count_o = np.bincount(lo, minlength=n_comp)
    count_n = np.bincount(ln, minlength=n_comp)
    partner = np.full(n_comp, -1, dtype=np.int64)
    partner[ln] = np.arange(n_new)
    oid, nid = old["segment_id"].to_numpy(dtype=object), new["segment_id"].to_numpy(dtype=object)
    # the common case, found at once: one old and one new segment with the same id
    pair = (count_o[lo] == 1) & (count_n[lo] == 1)
    same = np.zeros(n_old, dtype=bool)
    same[pair] = oid[pair] == nid[partner[lo[pair]]]
    same_o = np.flatnonzero(same)
    same_n = partner[lo[same_o]]
    # every other group, one by one (a revision changes few)
    plain = np.zeros(n_comp, dtype=bool)
    plain[lo[same_o]] = True
    members_o = _members(lo, plain)
    members_n = _members(ln, plain)
    # (trench, chainage of the first segment, lines, event) of every group, then in that order
    found: list[tuple[str, float, list[dict], dict]] = []
    for comp in set(members_o) | set(members_n):
        po, pn = members_o.get(comp, []), members_n.get(comp, [])
        first = old.iloc[po[0]] if po else new.iloc[pn[0]]
        rows_, event = _event(old, new, po, pn)
        found.append((str(first["trench_id"]), float(first["from_m"]), rows_, event))
    found += _same_segments(old.iloc[same_o], new.iloc[same_n])
    found.sort(key=lambda f: (f[0], f[1], f[3]["old_ids"], f[3]["new_ids"]))
    rows = [r for f in found for r in f[2]]
    events = pd.DataFrame([f[3] for f in found], columns=list(SEGMENT_ROWS))
    return rows, events


def _members(label: np.ndarray, skip: np.ndarray) -> dict[int, list[int]]:
    """The rows of each group (``label``) not marked in ``skip``, in row order."""
    rows = np.flatnonzero(~skip[label])
    out: dict[int, list[int]] = {}
    for r, g in zip(rows.tolist(), label[rows].tolist(), strict=True):
        out.setdefault(g, []).append(r)
    return out


def _overlaps(old: pd.DataFrame, new: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Pairs (old row, new row) of segments of the same trench whose chainage intervals
    overlap by more than :data:`OVERLAP_M`. Segments of one trench do not overlap each
    other, so each old interval meets a run of the new ones sorted along the trench."""
    codes, _ = pd.factorize(pd.concat([old["trench_id"], new["trench_id"]], ignore_index=True))
    co, cn = codes[: len(old)], codes[len(old) :]
    fo, to = old["from_m"].astype(float).to_numpy(), old["to_m"].astype(float).to_numpy()
    fn, tn = new["from_m"].astype(float).to_numpy(), new["to_m"].astype(float).to_numpy()
    span = max(float(np.max(to, initial=0.0)), float(np.max(tn, initial=0.0))) + 10.0
    order = np.lexsort((fn, cn))
    start = cn[order] * span + fn[order]
    end = np.maximum.accumulate(cn[order] * span + tn[order]) if len(order) else start
    hi = np.searchsorted(start, co * span + to - OVERLAP_M, side="left")
    lo = np.searchsorted(end, co * span + fo + OVERLAP_M, side="right")
    count = np.maximum(hi - lo, 0)
    i = np.repeat(np.arange(len(old)), count)
    j = order[
        np.repeat(lo, count) + np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
    ]
    ov = np.minimum(to[i], tn[j]) - np.maximum(fo[i], fn[j])
    keep = (co[i] == cn[j]) & (ov > OVERLAP_M)
    return i[keep], j[keep]


def _event(
    old: pd.DataFrame, new: pd.DataFrame, po: list[int], pn: list[int]
) -> tuple[list[dict], dict]:
    """diff.csv lines and the event row of one group of overlapping segments that are not one
    segment with the same id in both plans."""
    o, n = (
        old.iloc[po].sort_values("from_m", key=lambda s: s.astype(float)),
        new.iloc[pn].sort_values("from_m", key=lambda s: s.astype(float)),
    )
    ids_o, ids_n = tuple(o["segment_id"]), tuple(n["segment_id"])
    trench = (o if len(o) else n)["trench_id"].iloc[0]

    def parts(frame: pd.DataFrame) -> str:
        return ", ".join(
            f"{s} ({c} circuit{'' if c == '1' else 's'})"
            for s, c in zip(frame["segment_id"], frame["circuits"], strict=True)
        )

    if not ids_n:
        event, text = "removed", f"{parts(o)} removed"
    elif not ids_o:
        event, text = "added", f"{parts(n)} added"
    elif len(ids_o) == 1 and len(ids_n) > 1:
        cuts = ", ".join(f"{float(v):.1f}" for v in n["from_m"].iloc[1:])
        event, text = "split", f"{parts(o)} split at {cuts} m into {parts(n)}"
    elif len(ids_o) > 1 and len(ids_n) == 1:
        joints = ", ".join(f"{float(v):.1f}" for v in o["from_m"].iloc[1:])
        event, text = "merged", f"{parts(o)} merged at {joints} m into {parts(n)}"
    else:
        event, text = "reshaped", f"{parts(o)} became {parts(n)}"
    len_o = sum(float(v) for v in o["length_m"])
    len_n = sum(float(v) for v in n["length_m"])
    key = ids_o[0] if ids_o else ids_n[0]
    rows = [_row("segment", key, event, "", "; ".join(ids_o), "; ".join(ids_n), note=text)]
    if ids_o and ids_n and round(len_o - len_n, 2) != 0:
        rows.append(
            _row(
                "segment",
                key,
                "changed",
                "length_m",
                f"{len_o:.2f}",
                f"{len_n:.2f}",
                note=f"total length of {'; '.join(ids_o)} → {'; '.join(ids_n)}",
            )
        )
    return rows, dict(event=event, trench_id=trench, old_ids=ids_o, new_ids=ids_n, text=text)


def _same_segments(o: pd.DataFrame, n: pd.DataFrame) -> list[tuple[str, float, list[dict], dict]]:
    """Field changes of segments with the same id in both plans: (trench, chainage, diff.csv
    lines, ``changed`` event) per changed segment."""
    fields = list(SEGMENT_FIELDS)
    a, b = o[fields].to_numpy(dtype=object), n[fields].to_numpy(dtype=object)
    ne = a != b
    found = []
    ids, trenches = o["segment_id"].tolist(), o["trench_id"].tolist()
    start = o["from_m"].astype(float).tolist()
    for k in np.flatnonzero(ne.any(axis=1)).tolist():
        mine = [
            _row("segment", ids[k], "changed", fields[f], a[k, f], b[k, f])
            for f in np.flatnonzero(ne[k]).tolist()
        ]
        event = dict(
            event="changed",
            trench_id=trenches[k],
            old_ids=(ids[k],),
            new_ids=(ids[k],),
            text=f"{ids[k]}: " + "; ".join(map(_say, mine)),
        )
        found.append((trenches[k], start[k], mine, event))
    return found


# -- quantities and plant ----------------------------------------------------------------------
#: how a bill line's id shows the key cells that are numbers of a device
_UNITS = {"rating_a": "{} A", "poles": "{}-pole"}


def quantity_rows(old: pd.DataFrame, new: pd.DataFrame) -> list[dict]:
    """One diff.csv line per bill-of-quantities line whose quantity changed (added: absent
    before, removed: absent after, counted as 0). Lines are matched by their key with the
    numbers in it compared as numbers (a size written ``10.0`` by an earlier version is the
    line ``10``); the id shows the key as the newer file writes it."""
    keys = list(QUANTITY_KEYS)
    numeric = [c in NUMBER_FIELDS for c in keys]

    def match(k: tuple[str, ...]) -> tuple[str, ...]:
        return tuple(repr(float(v)) if n and v else v for v, n in zip(k, numeric, strict=True))

    def by_key(frame: pd.DataFrame) -> tuple[dict, dict]:
        values = pd.to_numeric(frame["quantity"]).to_numpy(dtype=float).tolist()
        total: dict[tuple[str, ...], float] = {}
        shown: dict[tuple[str, ...], tuple[str, ...]] = {}
        for k, v in zip(frame[keys].itertuples(index=False, name=None), values, strict=True):
            m = match(k)
            total[m] = total.get(m, 0.0) + v
            shown.setdefault(m, k)
        return total, shown

    (a, shown_a), (b, shown_b) = by_key(old), by_key(new)
    rows = []
    for k in sorted(set(a) | set(b)):
        va, vb = a.get(k, 0.0), b.get(k, 0.0)
        if round(va - vb, 2) != 0:
            change = "added" if k not in a else "removed" if k not in b else "changed"
            cells = shown_b.get(k) or shown_a[k]
            rows.append(
                _row(
                    "quantity",
                    " ".join(
                        _UNITS.get(c, "{}").format(v) for c, v in zip(keys, cells, strict=True) if v
                    ),
                    change,
                    "quantity",
                    f"{va:.2f}",
                    f"{vb:.2f}",
                )
            )
    return rows


def plant_block(old: dict, new: dict) -> pd.DataFrame:
    """The plant-level block: cable conductor metres by kind, material and size (the bill of
    quantities' cable lines), all conductor metres and trench metres (summary, the earlier
    ``cable_m_total`` of older plans read as ``conductor_m_total``), losses [kW] and annual
    energy loss [MWh/year], failing circuits, over-capacity trench segments and inverter
    inputs over a limit: old, new and new − old."""

    def cables(plan: dict) -> dict[str, float]:
        q = plan["quantities"]
        q = q[q["item"] == "cable"]
        # conductor metres: a bill in feet (design.units = "us") is read back in metres
        per = {"ft": FOOT_M}
        return {
            f"cable {k} {m} {float(s):.1f} mm²": float(v) * per.get(u, 1.0)
            for k, m, s, v, u in zip(
                q["kind"], q["material"], q["size_mm2"], q["quantity"], q["unit"], strict=True
            )
        }

    def totals(plan: dict) -> dict[str, tuple[str, float]]:
        s = plan["summary"]
        fail = sum(int(v["fail"]) for v in s["circuits"].values())
        return {
            "cable, all (conductor metres)": ("m", float(s["conductor_m_total"])),
            "trench": ("m", float(s["segments"]["trench_m"])),
            "losses at operating current": ("kW", float(s["loss_w_total"]) / 1000),
            "energy loss": ("MWh/year", float(s["energy_loss_kwh_total"]) / 1000),
            "failing circuits": ("", float(fail)),
            "trench segments over capacity": ("", float(s["segments"]["over_capacity"])),
            "inverter inputs over a limit": ("", float(s["inverter_inputs"]["over_limit"])),
        }

    ca, cb = cables(old), cables(new)
    rows = [(k, "m", ca.get(k, np.nan), cb.get(k, np.nan)) for k in sorted(set(ca) | set(cb))]
    ta, tb = totals(old), totals(new)
    rows += [(k, ta[k][0], ta[k][1], tb[k][1]) for k in ta]
    frame = pd.DataFrame(rows, columns=["item", "unit", "old", "new"])
    # as shown: metres to the centimetre, kW and MWh/year to three decimals, counts whole; the
    # delta is the difference of the values shown
    places = frame["unit"].map(plant_decimals).to_numpy()
    for c in ("old", "new"):
        frame[c] = [round(v, p) for v, p in zip(frame[c], places, strict=True)]
    delta = frame["new"].fillna(0.0) - frame["old"].fillna(0.0)
    frame["delta"] = [round(v, p) + 0.0 for v, p in zip(delta, places, strict=True)]
    return frame


def plant_decimals(unit: str) -> int:
    """Decimals of a plant-block value in ``unit`` (m: 2, kW and MWh/year: 3, a count: 0)."""
    return {"": 0, "kW": 3, "MWh/year": 3}.get(unit, 2)


def _plant_rows(plant: pd.DataFrame) -> list[dict]:
    """diff.csv lines of the plant block's changed items (:func:`plant_decimals`)."""
    rows = []
    for item, unit, a, b, d in plant.itertuples(index=False, name=None):
        p = plant_decimals(unit)
        if d != 0:
            rows.append(
                dict(
                    section="plant",
                    id=item,
                    change="changed",
                    field=unit or "count",
                    old="" if np.isnan(a) else f"{a:.{p}f}",
                    new="" if np.isnan(b) else f"{b:.{p}f}",
                    delta=f"{d:+.{p}f}",
                    scope="",
                    cause="",
                    note="",
                )
            )
    return rows
