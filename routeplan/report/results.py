"""The results of a plan, aggregated for the report (cheap at plant scale: one pass of
pandas group-bys over the circuit and segment tables; long lists are capped).

A circuit's *block* is the inverter it ultimately feeds, found from the schedule's circuit
tree: an AC circuit's ``from_id``; a string's, sub-array's or array's ``to_id`` followed
through the combiners (``from_id`` → ``to_id`` of the sub-array and array circuits) until it
is no combiner's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..config import KINDS

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
    """The inverter each circuit ultimately feeds (its block), from ``kind``, ``from_id`` and
    ``to_id`` (see the module docstring). Object array of ids."""
    kind = circuits["kind"].to_numpy(dtype=object)
    src = circuits["from_id"].to_numpy(dtype=object)
    dst = circuits["to_id"].to_numpy(dtype=object)
    feeder = np.isin(kind, ("subarray", "array"))
    up = pd.Series(dst[feeder], index=src[feeder])
    up = up[~up.index.duplicated()]
    block = pd.Series(np.where(kind == "ac", src, dst))
    for _ in range(16):  # the combiner tree is at most a few levels deep
        nxt = block.map(up)
        step = nxt.notna() & (kind != "ac")
        if not step.any():
            break
        block = block.where(~step, nxt)
    return block.to_numpy(dtype=object)


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
    failing: list[tuple[str, str, str, str]]  # circuit id, kind, block, note
    failing_count: int
    inputs_over: list[tuple[str, str, str]]  # inverter id, input, note
    inputs_over_count: int
    loss_w_total: float
    energy_loss_kwh_total: float
    conductor_m_total: float


def _worst(frame: pd.DataFrame, column: str) -> tuple[float, str]:
    """The largest value of ``column`` and its circuit's id (first in schedule order)."""
    values = frame[column].to_numpy(dtype=float)
    if not len(values) or np.isnan(values).all():
        return float("nan"), ""
    i = int(np.nanargmax(values))
    return float(values[i]), str(frame["circuit_id"].iloc[i])


def _aggregate(c: pd.DataFrame, keys: list[str]) -> dict[tuple, KindRow]:
    """One :class:`KindRow` per group of ``keys`` (the last key is the kind), vectorised:
    sums by group-by, the worst values as the first row of each group after a stable sort
    (the first in schedule order among equals; NaN last)."""
    g = c.groupby(keys, sort=False)
    sums = g.agg(
        circuits=("circuit_id", "size"),
        failing=("failing", "sum"),
        loss_w=("loss_w", "sum"),
        energy_loss_kwh=("energy_loss_kwh", "sum"),
        conductor_m=("metres", "sum"),
    )
    worst = {}
    for column in ("utilisation", "vdrop_pct"):
        top = c.sort_values(column, ascending=False, kind="stable", na_position="last")
        top = top.groupby(keys, sort=False).head(1).set_index(keys).reindex(sums.index)
        worst[column] = (
            top[column].to_numpy(dtype=float),
            top["circuit_id"].to_numpy(dtype=object),
        )
    cols = {k: sums[k].to_numpy() for k in sums.columns}
    out: dict[tuple, KindRow] = {}
    for i, key in enumerate(sums.index):
        key = key if isinstance(key, tuple) else (key,)
        u, u_id = worst["utilisation"][0][i], worst["utilisation"][1][i]
        d, d_id = worst["vdrop_pct"][0][i], worst["vdrop_pct"][1][i]
        out[key] = KindRow(
            kind=str(key[-1]),
            circuits=int(cols["circuits"][i]),
            failing=int(cols["failing"][i]),
            worst_utilisation=float(u),
            worst_utilisation_id=str(u_id) if np.isfinite(u) else "",
            worst_drop_pct=float(d),
            worst_drop_id=str(d_id) if np.isfinite(d) else "",
            loss_w=float(cols["loss_w"][i]),
            energy_loss_kwh=float(cols["energy_loss_kwh"][i]),
            conductor_m=float(cols["conductor_m"][i]),
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
    c = pd.DataFrame(
        {
            col: circuits[col].to_numpy()
            for col in (
                "circuit_id",
                "kind",
                "utilisation",
                "vdrop_pct",
                "vdrop_total_pct",
                "loss_w",
                "energy_loss_kwh",
                "cable_m",
                "conductors",
                "status",
                "note",
                "material",
                "size_mm2",
            )
        }
    )
    c["block"] = blocks(circuits)
    c["failing"] = (c["status"] != "ok").astype(np.int64)
    c["metres"] = c["cable_m"].astype(float) * c["conductors"].astype(float)
    c["utilisation"] = c["utilisation"].astype(float)
    c["vdrop_pct"] = c["vdrop_pct"].astype(float)
    order = _kind_order(c["kind"])
    per_kind = _aggregate(c, ["kind"])
    kinds = [per_kind[(k,)] for k in order]
    per_block = _aggregate(c, ["block", "kind"])
    block_rows = [
        (str(b), row)
        for (b, _), row in sorted(
            per_block.items(), key=lambda item: (_natural(str(item[0][0])), order.index(item[0][1]))
        )
    ]
    strings = c[c["kind"] == "string"]
    dc, dc_id = _worst(strings, "vdrop_total_pct") if len(strings) else (float("nan"), "")

    grouped = c.groupby(["kind", "material", "size_mm2"], sort=False)["metres"].sum()
    metres = sorted(
        ((str(k), str(mat), float(s), float(v)) for (k, mat, s), v in grouped.items()),
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

    bad = c[c["status"] != "ok"]
    failing = [
        (str(r.circuit_id), str(r.kind), str(r.block), str(r.note))
        for r in bad.head(LIST_CAP).itertuples(index=False)
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
        failing=failing,
        failing_count=len(bad),
        inputs_over=inputs_over,
        inputs_over_count=n_inputs_over,
        loss_w_total=float(c["loss_w"].sum()),
        energy_loss_kwh_total=float(c["energy_loss_kwh"].sum()),
        conductor_m_total=float(c["metres"].sum()),
    )


def _natural(text: str) -> tuple:
    """Sort key putting ``INV2`` before ``INV10``.

    >>> sorted(["B10", "B2", "A"], key=_natural)
    ['A', 'B2', 'B10']
    """
    import re

    return tuple(int(p) if p.isdigit() else p for p in re.split(r"(\d+)", text))
