"""Inverter DC inputs: which input each string and array cable lands on, and each input's load.

An inverter has ``dc_inputs`` independent DC inputs (MPPT inputs of a string inverter, DC
busbars of a central one; default 1). A circuit that ends at an inverter — a string of a row
whose ``to`` is the inverter, or the array cable of a combiner — lands on one of them:

- the one its row or combiner names (attribute ``input``, 1…``dc_inputs``);
- otherwise, with one input, that one;
- otherwise spread by this rule (documented in the README): the inverter's unassigned
  circuits are taken nearest first (by route length, then in circuit order), and each goes to
  the input that carries the least operating current so far (Σ Imp; ties: the lower number)
  among those with a free string terminal (``input_max_strings``, strings only; unset = no
  limit). A row's strings may thus land on different inputs.

What lands on one input is in parallel there: the strings of an input are the ones the IEC
62548 string-protection rule counts, and the array cables of an input feed each other's faults
(:mod:`calc.protection`). Sub-array cables and the strings of a combiner land, through their
array cable, on its input; :func:`landing_input` gives every DC circuit's.

Each input is checked against the inverter's ratings where given (:func:`input_table`):
strings landing on it ≤ ``input_max_strings``, Σ Imp ≤ ``input_max_a`` (maximum operating
input current) and Σ Isc (design, bifacial gain included) ≤ ``input_max_isc_a`` (maximum input
short-circuit current, the equipment rating).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from layers.errors import Problem
from layers.model import Site

from .errors import DesignError

__all__ = ["INPUT_COLUMNS", "assign_inputs", "input_table", "landing_input"]

#: columns of :func:`input_table`
INPUT_COLUMNS: tuple[str, ...] = (
    "inverter_id",
    "input",
    "strings",
    "circuits",
    "imp_a",
    "isc_a",
    "input_max_strings",
    "input_max_a",
    "input_max_isc_a",
    "status",
    "note",
    "circuit_ids",
)


def assign_inputs(site: Site, circuits: pd.DataFrame, imp_a: np.ndarray) -> np.ndarray:
    """The inverter input of every circuit that ends at an inverter (NaN for the others).

    Parameters
    ----------
    site : layers.model.Site
    circuits : pandas.DataFrame
        The route plan's circuits (``kind``, ``from_id``, ``to_layer``, ``to_id``,
        ``route_m``, ``strings``), in circuit order.
    imp_a : numpy.ndarray
        Each circuit's operating current [A] (a string's Imp; an array cable's Σ Imp), for
        balancing.

    Raises
    ------
    routeplan.errors.DesignError
        An ``input`` beyond the inverter's ``dc_inputs``, an ``input`` on a row or combiner
        that does not end at an inverter, an inverter whose inputs have no free terminal left
        for a string, or strings landing on an input that also takes array cables; every such
        problem at once.
    """
    n = len(circuits)
    out = np.full(n, np.nan)
    kind = circuits["kind"].to_numpy(dtype=object)
    lands = (circuits["to_layer"] == "inverters").to_numpy() & np.isin(kind, ("string", "array"))
    inv = site.inverters.set_index("id")
    from_id = circuits["from_id"].to_numpy(dtype=object)
    to_id = circuits["to_id"].to_numpy(dtype=object)
    problems: list[Problem] = []

    given = np.full(n, np.nan)
    for layer, k in (("rows", "string"), ("combiners", "array")):
        frame = site.layer(layer)
        if "input" not in frame.columns or not len(frame):
            continue
        named = pd.Series(frame["input"].to_numpy(dtype=float), index=frame["id"].to_numpy())
        sel = np.flatnonzero(kind == k)
        given[sel] = named.reindex(from_id[sel]).to_numpy(dtype=float)
    for layer, k, whose in (
        ("rows", "string", "strings end"),
        ("combiners", "array", "cable ends"),
    ):
        frame = site.layer(layer)
        if "input" not in frame.columns or not len(frame):
            continue
        ends = set(from_id[lands & (kind == k)])
        for fid in frame.loc[frame["input"].notna(), "id"]:
            if fid not in ends:
                msg = f"input is for {layer} whose {whose} at an inverter (its `to` is not one)"
                problems.append(Problem(layer, str(fid), msg))
    n_inputs = inv["dc_inputs"].reindex(to_id[lands]).to_numpy(dtype=float)
    n_in = np.full(n, np.nan)
    n_in[lands] = n_inputs
    beyond = lands & ~np.isnan(given) & (given > n_in)
    for i in np.flatnonzero(beyond).tolist():
        layer = "rows" if kind[i] == "string" else "combiners"
        k = int(n_in[i])
        problems.append(
            Problem(
                layer,
                str(from_id[i]),
                f"input {given[i]:g}, but inverter {to_id[i]!r} has {k} DC input{'s' * (k != 1)}",
            )
        )
    if problems:
        raise DesignError(_unique(problems))
    out[lands] = np.where(
        np.isnan(given[lands]), np.where(n_inputs == 1, 1.0, np.nan), given[lands]
    )

    todo = lands & np.isnan(out)
    if todo.any():
        problems += _spread(circuits, inv, lands, todo, out, imp_a, kind == "string")
    if not problems:
        problems += _mixed_inputs(circuits, lands, out, kind)
    if problems:
        raise DesignError(problems)
    return out


def _mixed_inputs(
    circuits: pd.DataFrame, lands: np.ndarray, out: np.ndarray, kind: np.ndarray
) -> list[Problem]:
    """Rows whose strings land on an inverter input that also takes array cables.

    A fault on such a string cable is fed by every array of the input, which the IEC 62548
    string-protection rule (strings in parallel at one combiner or input) does not count;
    routeplan refuses the layout rather than pass an unprotected cable."""
    frame = pd.DataFrame(
        {
            "inv": circuits["to_id"].to_numpy(dtype=object)[lands],
            "input": out[lands],
            "kind": kind[lands],
            "from_id": circuits["from_id"].to_numpy(dtype=object)[lands],
            "cid": circuits["circuit_id"].to_numpy(dtype=object)[lands],
        }
    )
    arrays = frame[frame["kind"] == "array"].groupby(["inv", "input"])["cid"].first()
    strings = frame[frame["kind"] == "string"].drop_duplicates(["from_id", "inv", "input"])
    hit = strings.join(arrays.rename("array"), on=["inv", "input"], how="inner")
    return [
        Problem(
            "rows",
            str(r.from_id),
            f"its strings land on inverter {r.inv!r} input {r.input:g} together with array "
            f"cables ({r.array}…): strings and array cables on one DC input are not supported "
            "(a fault on a string would be fed by every array); give the row its own input "
            "(`input`) or a combiner",
        )
        for r in hit.itertuples(index=False)
    ]


def _spread(
    circuits: pd.DataFrame,
    inv: pd.DataFrame,
    lands: np.ndarray,
    todo: np.ndarray,
    out: np.ndarray,
    imp_a: np.ndarray,
    is_string: np.ndarray,
) -> list[Problem]:
    """Fill ``out`` where ``todo`` by the module docstring's rule, every inverter at once:
    step r places the r-th unassigned circuit (nearest first) of each inverter."""
    to_id = circuits["to_id"].to_numpy(dtype=object)
    code, names = pd.factorize(to_id[lands])
    at = np.flatnonzero(lands)
    inv_of = np.full(len(out), -1)
    inv_of[at] = code
    k = inv["dc_inputs"].reindex(names).to_numpy(dtype=float).astype(np.int64)
    room = inv["input_max_strings"].reindex(names).to_numpy(dtype=float)
    room = np.where(np.isnan(room), np.inf, room)
    valid = (np.arange(k.max() + 1)[None, :] >= 1) & (np.arange(k.max() + 1)[None, :] <= k[:, None])
    load = np.zeros(valid.shape)  # Σ Imp per inverter and input (column 1…k)
    used = np.zeros(valid.shape)  # string terminals per inverter and input
    fixed = lands & ~todo
    np.add.at(load, (inv_of[fixed], out[fixed].astype(np.int64)), imp_a[fixed])
    fs = fixed & is_string
    np.add.at(used, (inv_of[fs], out[fs].astype(np.int64)), 1.0)

    free = np.flatnonzero(todo)
    route = circuits["route_m"].to_numpy(dtype=float)
    free = free[np.lexsort((free, route[free], inv_of[free]))]  # by inverter, nearest first
    group = inv_of[free]
    first = np.r_[0, np.flatnonzero(np.diff(group)) + 1]
    rank = np.arange(len(free)) - np.repeat(first, np.diff(np.r_[first, len(free)]))
    failed = np.zeros(len(names), dtype=bool)
    problems: list[Problem] = []
    for r in range(int(rank.max()) + 1):
        sel = free[rank == r]
        rows = inv_of[sel]
        keep = ~failed[rows]
        sel, rows = sel[keep], rows[keep]
        ok = valid[rows] & (~is_string[sel, None] | (used[rows] + 1 <= room[rows, None]))
        none = ~ok.any(axis=1)
        for i, g in zip(sel[none].tolist(), rows[none].tolist(), strict=True):
            problems.append(
                Problem(
                    "inverters",
                    str(names[g]),
                    "no DC input has a free string terminal for "
                    f"{circuits['circuit_id'].iloc[i]} ({k[g]} inputs × input_max_strings "
                    f"{room[g]:g})",
                )
            )
        failed[rows[none]] = True
        sel, rows, ok = sel[~none], rows[~none], ok[~none]
        j = np.argmin(np.where(ok, load[rows], np.inf), axis=1)  # ties: the lower number
        out[sel] = j
        load[rows, j] += imp_a[sel]  # one circuit per inverter per step: no repeats
        used[rows, j] += is_string[sel]
    return problems


def landing_input(parent: np.ndarray, own: np.ndarray) -> np.ndarray:
    """Every DC circuit's inverter input: its own (``own``, for circuits that end at an
    inverter), else its parent's, up the combiner tree (``parent``: the index of the cable a
    string or sub-array cable feeds, −1 for none). NaN where none (a.c. circuits)."""
    out = own.astype(float).copy()
    for _ in range(len(out)):
        todo = np.isnan(out) & (parent >= 0)
        todo &= ~np.isnan(out[np.clip(parent, 0, None)])
        if not todo.any():
            break
        out[todo] = out[parent[todo]]
    return out


def input_table(
    site: Site,
    circuits: pd.DataFrame,
    own_input: np.ndarray,
    imp_a: np.ndarray,
    isc_a: np.ndarray,
    n_strings: np.ndarray,
) -> pd.DataFrame:
    """One row per inverter DC input that something lands on (:data:`INPUT_COLUMNS`).

    ``own_input``: :func:`assign_inputs`; ``imp_a``, ``isc_a``: each circuit's Σ Imp and Σ
    design Isc (bifacial gain included) [A]; ``n_strings``: strings each circuit carries.
    ``strings`` counts the strings whose current flows into the input (through arrays too);
    ``input_max_strings`` is compared with the strings landing on the input's own terminals.
    """
    lands = ~np.isnan(own_input)
    kind = circuits["kind"].to_numpy(dtype=object)
    frame = pd.DataFrame(
        {
            "inverter_id": circuits["to_id"].to_numpy(dtype=object)[lands],
            "input": own_input[lands].astype(np.int64),
            "strings": n_strings[lands],
            "terminals": (kind[lands] == "string").astype(np.int64),
            "imp_a": imp_a[lands],
            "isc_a": isc_a[lands],
            "circuit_id": circuits["circuit_id"].to_numpy(dtype=object)[lands],
        }
    )
    if frame.empty:
        return pd.DataFrame(columns=list(INPUT_COLUMNS))
    g = frame.groupby(["inverter_id", "input"], sort=False)
    t = g.agg(
        strings=("strings", "sum"),
        circuits=("circuit_id", "size"),
        terminals=("terminals", "sum"),
        imp_a=("imp_a", "sum"),
        isc_a=("isc_a", "sum"),
    ).reset_index()
    t["circuit_ids"] = _joined_ids(frame, g.ngroup().to_numpy(), len(t))
    inv = site.inverters.set_index("id")
    for col in ("input_max_strings", "input_max_a", "input_max_isc_a"):
        t[col] = inv[col].reindex(t["inverter_id"]).to_numpy(dtype=float)
    over = [
        (t["terminals"] > t["input_max_strings"], "strings", "terminals", "input_max_strings"),
        (t["imp_a"] > t["input_max_a"] * (1 + 1e-9), "Σ Imp", "imp_a", "input_max_a"),
        (t["isc_a"] > t["input_max_isc_a"] * (1 + 1e-9), "Σ Isc", "isc_a", "input_max_isc_a"),
    ]
    note = np.full(len(t), "", dtype=object)
    for mask, what, col, limit in over:
        for i in np.flatnonzero(mask.to_numpy()).tolist():
            text = f"{what} {t[col].iloc[i]:g} exceeds {limit} {t[limit].iloc[i]:g}"
            note[i] = f"{note[i]}; {text}" if note[i] else text
    t["status"] = np.where(note == "", "ok", "over")
    t["note"] = note
    t = t.sort_values(["inverter_id", "input"], kind="stable").reset_index(drop=True)
    return t[list(INPUT_COLUMNS)]


def _joined_ids(frame: pd.DataFrame, group: np.ndarray, n: int) -> list[str]:
    """Each group's circuit ids, sorted and ';'-joined (``group``: each row's group number
    in ``groupby(sort=False)`` order)."""
    order = pd.DataFrame({"g": group, "id": frame["circuit_id"]}).sort_values(
        ["g", "id"], kind="stable"
    )
    ids = order["id"].to_numpy(dtype=object)
    cuts = np.flatnonzero(np.diff(order["g"].to_numpy())) + 1
    parts = np.split(ids, cuts) if n else []  # every group has a row
    return [";".join(p.tolist()) for p in parts]


def _unique(problems: list[Problem]) -> list[Problem]:
    return list(dict.fromkeys(problems))
