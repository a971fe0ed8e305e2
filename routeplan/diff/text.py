"""The diff as lines for the terminal: the plant-level block, the circuits ranked (their own
route, cable or status first, then their own values, then those that only follow from a
circuit they feed, summarised per cause), the trench segments and the quantities."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .compare import PlanDiff, plant_decimals

#: most circuits of their own route, cable or status listed on the terminal (diff.csv has all)
LISTED = 200


def diff_lines(diff: PlanDiff, listed: int = LISTED) -> list[str]:
    """What ``routeplan diff`` prints (without the closing caution)."""
    lines = [
        f"warning: {f} was edited since routeplan wrote it (it no longer matches its folder's "
        "manifest): the comparison shows the edits as changes"
        for f in diff.edited
    ]
    if diff.empty:
        return [*lines, "no changes"]
    lines += [f"note: the plans differ in {n}" for n in diff.notes]
    lines += _plant(diff.plant)
    lines += _circuits(diff, listed)
    lines += _segments(diff.segments, listed)
    q = diff.changes[diff.changes["section"] == "quantity"]
    if len(q):
        lines.append(f"quantities: {len(q)} lines changed (old → new, delta)")
        lines += [f"  {r.id}: {r.old} → {r.new} ({r.delta})" for r in q.itertuples(index=False)]
    return lines


def _plant(plant: pd.DataFrame) -> list[str]:
    lines = ["plant (old → new, delta):"]
    width = max((len(i) for i in plant["item"]), default=0)
    for item, unit, a, b, d in plant.itertuples(index=False, name=None):
        digits = plant_decimals(unit)
        lines.append(
            f"  {item:<{width}}  {_num(a, digits)} → {_num(b, digits)} "
            f"({d + 0.0:+.{digits}f}){' ' + unit if unit else ''}"
        )
    return lines


def _num(v: float, digits: int) -> str:
    return "-" if np.isnan(v) else f"{v:.{digits}f}"


def _circuits(diff: PlanDiff, listed: int) -> list[str]:
    c = diff.circuits
    if c.empty:
        return []
    counts = c["change"].value_counts()
    follows = c[c["scope"] == "follows"]
    head = [f"{counts[k]} {k}" for k in ("added", "removed") if k in counts]
    own = int((c["change"] == "changed").sum()) - len(follows)
    if own:
        head.append(f"{own} changed")
    if len(follows):
        head.append(f"{len(follows)} changed only by a circuit they feed")
    lines = ["circuits: " + ", ".join(head)]
    route = c[c["scope"] == "route"]
    if len(route):
        lines.append(" their route, cable or status:")
        for rec in route.head(listed).itertuples(index=False):
            sign = {"added": "+", "removed": "-"}.get(rec.change, "~")
            lines.append(f"  {sign} {rec.circuit_id}: {rec.summary}")
        if len(route) > listed:
            lines.append(f"  … and {len(route) - listed} more (all in diff.csv: --out DIR)")
    value = c[c["scope"] == "value"]
    if len(value):
        lines.append(" their values (same route and cable):")
        lines += _alike(diff, value)
    if len(follows):
        lines.append(" only the cumulative DC drop, after a circuit they feed changed:")
        lines += _follows(diff, follows)
    return lines


#: circuits of one kind with the same fields changed are listed one by one up to this many
ALIKE = 3


def _alike(diff: PlanDiff, part: pd.DataFrame) -> list[str]:
    """Circuits whose own values changed: those of one kind with the same fields changed
    (the circuits of a trench another circuit joined) in one line, with the first as the
    example; up to :data:`ALIKE` of them one by one."""
    ch = diff.changes
    ch = ch[(ch["section"] == "circuit") & (ch["change"] == "changed")]
    fields = ch.groupby("id", sort=False)["field"].agg(tuple)
    key = part["circuit_id"].map(fields)
    lines = []
    for (kind, changed), group in part.groupby([part["kind"], key], sort=False):
        if len(group) <= ALIKE:
            lines += [f"  ~ {r.circuit_id}: {r.summary}" for r in group.itertuples(index=False)]
            continue
        first = group.iloc[0]
        lines.append(
            f"  ~ {len(group)} {kind} circuits: {', '.join(changed)} "
            f"(as {first['circuit_id']}: {first['summary']})"
        )
    return lines


def _follows(diff: PlanDiff, follows: pd.DataFrame) -> list[str]:
    """One line per (kind, cause): how many, and the range of the cumulative drop's delta."""
    ch = diff.changes
    drop = ch[(ch["section"] == "circuit") & (ch["field"] == "vdrop_total_pct")]
    delta = dict(zip(drop["id"], drop["delta"].replace("", "nan").astype(float), strict=True))
    looks = dict(zip(diff.circuits["circuit_id"], diff.circuits["look"], strict=True))
    lines = []
    for (kind, cause), part in follows.groupby(["kind", "cause"], sort=True):
        d = np.array([delta.get(i, np.nan) for i in part["circuit_id"]])
        lo, hi = np.nanmin(d), np.nanmax(d)
        span = f"{lo:+.3f} %" if lo == hi else f"{lo:+.3f} to {hi:+.3f} %"
        after = (
            f"after {cause} ({looks.get(cause, 'changed')})"
            if cause
            else "with no circuit they feed changed (a setting?)"
        )
        lines.append(f"  {len(part)} {kind} circuits: cumulative DC drop {span} {after}")
    return lines


def _segments(segments: pd.DataFrame, listed: int) -> list[str]:
    if segments.empty:
        return []
    counts = segments["event"].value_counts()
    order = ("split", "merged", "reshaped", "added", "removed", "changed")
    lines = ["trench segments: " + ", ".join(f"{counts[k]} {k}" for k in order if k in counts)]
    for event in order:
        texts = segments.loc[segments["event"] == event, "text"]
        lines += [f"  {event}: {t}" for t in texts.head(listed)]
        if len(texts) > listed:
            lines.append(f"  … and {len(texts) - listed} more {event} (all in diff.csv: --out DIR)")
    return lines
