"""The results of a plan, aggregated for the report (cheap at plant scale: one pass of
pandas group-bys over the circuit and segment tables; long lists are capped).

A circuit's *block* is the inverter it ultimately feeds: the schedule's ``inverter_id``
(:func:`routeplan.order.inverter_of`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..config import KINDS
from ..order import inverter_of

#: most rows of a listed failure (failing circuits, over-capacity segments) in the report
LIST_CAP = 200
#: fill bands of the trench summary: (label, lower bound exclusive, upper bound inclusive)
FILL_BANDS: tuple[tuple[str, float, float], ...] = (
    ("empty (0 %)", -np.inf, 0.0),
    ("up to 50 %", 0.0, 0.5),
    ("50–80 %", 0.5, 0.8),
    ("80–100 %", 0.8, 1.0),
)


def blocks(circuits: pd.DataFrame) -> np.ndarray:
    """The inverter each circuit ultimately feeds (its block): the schedule's ``inverter_id``,
    or, for a table without it, :func:`routeplan.order.inverter_of`. Object array of ids."""
    if "inverter_id" in circuits:
        return circuits["inverter_id"].to_numpy(dtype=object)
    return inverter_of(circuits["kind"], circuits["from_id"], circuits["to_id"])


@dataclass(frozen=True)
class KindRow:
    """One line of the per-kind (or per-block-and-kind) table."""

    kind: str
    circuits: int
    failing: int
    worst_utilisation: float
    worst_utilisation_id: str
    worst_drop_pct: float
    worst_drop_id: str
    loss_w: float
    energy_loss_kwh: float
    conductor_m: float


@dataclass(frozen=True)
class Results:
    """Everything the report's results sections show."""

    kinds: list[KindRow]
    blocks: list[tuple[str, KindRow]]
    dc_total_drop_pct: float
    dc_total_drop_id: str
    metres: list[tuple[str, str, float, float]]  # kind, material, size_mm2, conductor metres
    fill: list[tuple[str, int, float]]  # band, segments, trench metres
    over: list[tuple[str, int, float]]  # segment id, cable sets, fill
    over_count: int
    #: the segment whose cable sets spread widest at their spacing: id, cable sets,
    #: spacing_m, spread_m; None where no segment spaces two or more
    widest: tuple[str, int, float, float] | None
    failing: list[tuple[str, str, str, str, str]]  # circuit id, kind, block, note, remedy
    failing_count: int
    inputs_over: list[tuple[str, str, str]]  # inverter id, input, note
    inputs_over_count: int
    loss_w_total: float
    energy_loss_kwh_total: float
    conductor_m_total: float


def _aggregate(
    codes: np.ndarray, labels: list[tuple], kinds: list[str], v: dict[str, np.ndarray]
) -> dict[tuple, KindRow]:
    """One :class:`KindRow` per group: ``codes`` numbers each circuit's group (0 …
    len(labels) − 1), ``labels`` names the groups, ``kinds`` gives each group's kind, ``v``
    holds the circuits' columns. Sums by :func:`numpy.bincount`; the worst value of a group
    is its largest (NaN never), the first in schedule order among equals."""
    n = len(labels)
    count = np.bincount(codes, minlength=n)
    sums = {
        k: np.bincount(codes, weights=v[k], minlength=n)
        for k in ("failing", "loss_w", "energy_loss_kwh", "metres")
    }
    worst = {}
    position = np.arange(len(codes))
    for column in ("utilisation", "vdrop_pct"):
        x = np.where(np.isnan(v[column]), -np.inf, v[column])
        order = np.lexsort((position, -x, codes))
        first = order[np.r_[True, codes[order][1:] != codes[order][:-1]]] if len(order) else order
        top = np.full(n, -1, dtype=np.int64)
        top[codes[first]] = first
        worst[column] = top
    ids = v["circuit_id"]
    out: dict[tuple, KindRow] = {}
    for g, key in enumerate(labels):
        iu, idr = worst["utilisation"][g], worst["vdrop_pct"][g]
        u, d = float(v["utilisation"][iu]), float(v["vdrop_pct"][idr])
        out[key] = KindRow(
            kind=kinds[g],
            circuits=int(count[g]),
            failing=round(sums["failing"][g]),
            worst_utilisation=u,
            worst_utilisation_id=str(ids[iu]) if np.isfinite(u) else "",
            worst_drop_pct=d,
            worst_drop_id=str(ids[idr]) if np.isfinite(d) else "",
            loss_w=float(sums["loss_w"][g]),
            energy_loss_kwh=float(sums["energy_loss_kwh"][g]),
            conductor_m=float(sums["metres"][g]),
        )
    return out


def _kind_order(kinds) -> list[str]:
    """The kinds present, in the order string, sub-array, array, AC (others after)."""
    present = [str(k) for k in pd.unique(np.asarray(kinds, dtype=object))]
    return [k for k in KINDS if k in present] + sorted(k for k in present if k not in KINDS)


def results(
    circuits: pd.DataFrame, segments: pd.DataFrame, inputs: pd.DataFrame | None = None
) -> Results:
    """Aggregate the circuit schedule, trench schedule and inverter inputs of a plan."""
    v = {
        "circuit_id": circuits["circuit_id"].to_numpy(dtype=object),
        "utilisation": circuits["utilisation"].to_numpy(dtype=float),
        "vdrop_pct": circuits["vdrop_pct"].to_numpy(dtype=float),
        "loss_w": circuits["loss_w"].to_numpy(dtype=float),
        "energy_loss_kwh": circuits["energy_loss_kwh"].to_numpy(dtype=float),
        "metres": circuits["cable_m"].to_numpy(dtype=float)
        * circuits["conductors"].to_numpy(dtype=float),
    }
    status = circuits["status"].to_numpy(dtype=object)
    fails = status != "ok"
    v["failing"] = fails.astype(float)
    kind_code, kind_names = pd.factorize(circuits["kind"].to_numpy(dtype=object))
    order = _kind_order(kind_names)
    names = [str(k) for k in kind_names]
    per_kind = _aggregate(kind_code, [(k,) for k in names], names, v)
    kinds = [per_kind[(k,)] for k in order]
    block = blocks(circuits)
    block_code, block_names = pd.factorize(block)
    pair = block_code * len(names) + kind_code
    pair_code, pair_uniques = pd.factorize(pair)
    labels = [(str(block_names[p // len(names)]), names[p % len(names)]) for p in pair_uniques]
    per_block = _aggregate(pair_code, labels, [k for _, k in labels], v)
    block_rows = sorted(
        ((b, row) for (b, _), row in per_block.items()),
        key=lambda item: (_natural(item[0]), order.index(item[1].kind)),
    )
    is_string = kind_code == (names.index("string") if "string" in names else -1)
    dc, dc_id = float("nan"), ""
    if is_string.any():
        total = circuits["vdrop_total_pct"].to_numpy(dtype=float)
        at = np.flatnonzero(is_string)
        if not np.isnan(total[at]).all():
            i = at[int(np.nanargmax(total[at]))]
            dc, dc_id = float(total[i]), str(v["circuit_id"][i])

    grouped = (
        pd.DataFrame(
            {
                "kind": circuits["kind"].to_numpy(dtype=object),
                "material": circuits["material"].to_numpy(dtype=object),
                "size_mm2": circuits["size_mm2"].to_numpy(dtype=float),
                "metres": v["metres"],
            }
        )
        .groupby(["kind", "material", "size_mm2"], sort=False)["metres"]
        .sum()
    )
    metres = sorted(
        ((str(k), str(mat), float(s), float(m)) for (k, mat, s), m in grouped.items()),
        key=lambda r: (order.index(r[0]) if r[0] in order else 99, r[1], r[2]),
    )

    fill = segments["fill"].to_numpy(dtype=float)
    length = segments["length_m"].to_numpy(dtype=float)
    over_mask = (segments["status"] != "ok").to_numpy()
    bands: list[tuple[str, int, float]] = []
    known = np.isfinite(fill)
    for label, low, high in FILL_BANDS:
        mask = known & ~over_mask & (fill > low) & (fill <= high)
        bands.append((label, int(mask.sum()), float(length[mask].sum())))
    bands.append(("over capacity (> 100 %)", int(over_mask.sum()), float(length[over_mask].sum())))
    free = ~known & ~over_mask
    bands.append(("no capacity given", int(free.sum()), float(length[free].sum())))
    sets = segments["cable_sets"].to_numpy() if "cable_sets" in segments else segments["circuits"]
    over_idx = np.flatnonzero(over_mask)[:LIST_CAP]
    over = [
        (str(segments["segment_id"].iloc[i]), int(np.asarray(sets)[i]), float(fill[i]))
        for i in over_idx
    ]

    widest = None
    if "spread_m" in segments and len(segments):
        spread = segments["spread_m"].to_numpy(dtype=float)
        i = int(np.argmax(np.nan_to_num(spread, nan=0.0)))
        if spread[i] > 0:
            widest = (
                str(segments["segment_id"].iloc[i]),
                int(np.asarray(sets)[i]),
                float(segments["spacing_m"].iloc[i]),
                float(spread[i]),
            )

    bad = np.flatnonzero(fails)
    kind_all = circuits["kind"].to_numpy(dtype=object)
    note = circuits["note"].to_numpy(dtype=object)
    remedy = circuits["remedy"].to_numpy(dtype=object)
    failing = [
        (str(v["circuit_id"][i]), str(kind_all[i]), str(block[i]), str(note[i]), str(remedy[i]))
        for i in bad[:LIST_CAP]
    ]
    inputs_over: list[tuple[str, str, str]] = []
    n_inputs_over = 0
    if inputs is not None and len(inputs):
        bad_in = inputs[inputs["status"] != "ok"]
        n_inputs_over = len(bad_in)
        inputs_over = [
            (str(r["inverter_id"]), str(r["input"]), str(r["note"]))
            for _, r in bad_in.head(LIST_CAP).iterrows()
        ]
    return Results(
        kinds=kinds,
        blocks=block_rows,
        dc_total_drop_pct=dc,
        dc_total_drop_id=dc_id,
        metres=metres,
        fill=bands,
        over=over,
        over_count=int(over_mask.sum()),
        widest=widest,
        failing=failing,
        failing_count=len(bad),
        inputs_over=inputs_over,
        inputs_over_count=n_inputs_over,
        loss_w_total=float(v["loss_w"].sum()),
        energy_loss_kwh_total=float(v["energy_loss_kwh"].sum()),
        conductor_m_total=float(v["metres"].sum()),
    )


def _natural(text: str) -> tuple:
    """Sort key putting ``INV2`` before ``INV10``.

    >>> sorted(["B10", "B2", "A"], key=_natural)
    ['A', 'B2', 'B10']
    """
    import re

    return tuple(int(p) if p.isdigit() else p for p in re.split(r"(\d+)", text))
