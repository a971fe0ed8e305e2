"""Where should an inverter pad (or a combiner) go? Candidate positions, each planned, ranked.

``routeplan place SITE --inverter ID --out DIR`` (or ``--combiner ID``):

1. **Candidates**: the feature's current position, and points every ``step_m`` along every
   trench (its centreline, from each trench's start) within ``radius_m`` (straight-line) of the
   current position. The feature is moved there (a pad polygon by its centroid) and joins the
   network as the site's rules join any equipment (the nearest trench, a straight stub).
2. **Evaluation**: the whole site is planned for each candidate (routing, sizing, protection,
   drop, trench fill, as :func:`routeplan.pipeline.plan_site` plans it; locally, see *Speed*).
3. **Objective** (smaller is better; plant totals):

   * with conductor prices (``[costs] conductor_per_m``): conductor cost = Σ conductor metres
     (cable length × conductors, allowances included) × price per metre of its material and
     size, plus — with ``energy_price_per_kwh`` — the capitalised losses: yearly energy loss
     (the plan's estimate, ``energy_loss_kwh``) × price × the uniform-series present-worth
     factor ``(1 − (1 + r)^−n) / r`` (:func:`calc.costs.annuity_factor`);
   * without prices: the conductor mass [kg] (nominal cross-section × conductor metres ×
     density, :func:`calc.costs.conductor_mass_kg`); the capitalised losses, when priced, are
     then reported beside it but not added (a mass and a currency do not add up).

   A candidate is *feasible* when no circuit of the moved feature's block fails, no circuit
   fails that passes at the current position, and no more trench segments or inverter inputs
   are over a limit than there: failures elsewhere in the plant, which the move does not
   cause, do not disqualify a position. Feasible candidates rank first, by objective; the
   others follow, by their block's and new failures.

Speed: the current position is planned in full; every other candidate is a local re-plan of
that plan (:class:`routeplan.localplan.MoveSearch`): the feature joins the network built once
without it, only its circuits are routed again and only the blocks whose circuits, trench
segments or air stretches change are sized again; the objective's columns come from the
spliced arrays (the same values as a full plan of the candidate, which the tests check). The
candidates are independent, so they are dealt in turn to as many processes as the machine
has cores (forked: :func:`routeplan.parallel.spread`), the table is the same in any order.
The current position's remedies are computed in another child meanwhile; the best
position's plan, delivered with its remedies, is a local re-plan too, each remedy's what-if
re-sized from the current position's (a full plan's tables, value for value: tested).

What the search does not consider: terrain, access roads, civil works and their cost, the
pad's footprint clashing with rows, cable pulling limits, and any position off the trenches.
It is a local search around the current position, not a layout optimiser.
"""

from __future__ import annotations

import dataclasses
import difflib
import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import shapely

import calc
import calc.costs
from layers import Site

from . import parallel
from .config import KINDS, CostConfig, DesignConfig
from .errors import RoutingError
from .localplan import MoveSearch
from .network import NetworkMemo
from .pipeline import KIND_CODE, Plan, design_params, plan_site

__all__ = [
    "CANDIDATE_COLUMNS",
    "Evaluation",
    "PlacementError",
    "candidate_points",
    "check_prices",
    "evaluate",
    "moved_site",
    "rank",
    "search",
]

#: the columns of placement.csv, in order
CANDIDATE_COLUMNS: tuple[str, ...] = (
    "rank",
    "candidate",
    "x",
    "y",
    "trench_id",
    "moved_m",
    "feasible",
    "objective",
    "objective_unit",
    "delta_objective",
    "conductor_mass_kg",
    "conductor_cost",
    "loss_kw",
    "energy_loss_kwh",
    "capitalised_loss",
    "failing_in_block",
    "new_failures",
    "failing_circuits",
    "segments_over",
    "inputs_over",
    "worst_utilisation",
    "worst_vdrop_total_pct",
    "note",
)


#: decimals written per column (coordinates and lengths to 1 cm, masses and money to 0.01,
#: energy to 0.1 kWh, ratios to 1e-4)
DECIMALS: dict[str, int] = {
    "x": 2,
    "y": 2,
    "moved_m": 2,
    "objective": 2,
    "delta_objective": 2,
    "conductor_mass_kg": 2,
    "conductor_cost": 2,
    "loss_kw": 3,
    "energy_loss_kwh": 1,
    "capitalised_loss": 2,
    "worst_utilisation": 4,
    "worst_vdrop_total_pct": 4,
}


#: most candidate positions one search plans (a larger request is refused with the count,
#: before any planning)
MAX_CANDIDATES = 2000
#: most points :func:`candidate_points` makes along the trenches near the current position
#: before keeping those within the radius (a finer step is refused before any point is made)
MAX_POINTS = 500_000
#: how a candidate's ``note`` begins where it cannot be routed (the reason follows)
UNROUTABLE = "not routable here: "


class PlacementError(ValueError):
    """A placement request that cannot be evaluated (one line naming the key or feature)."""


@dataclass(frozen=True)
class Evaluation:
    """One candidate's plan figures (plant totals)."""

    conductor_mass_kg: float
    conductor_cost: float
    loss_kw: float
    energy_loss_kwh: float
    capitalised_loss: float
    failing_in_block: int
    new_failures: int
    failing_circuits: int
    segments_over: int
    inputs_over: int
    worst_utilisation: float
    worst_vdrop_total_pct: float
    feasible: bool


@dataclass(frozen=True)
class Reference:
    """What a candidate is judged against: the moved feature's block (the inverter it feeds)
    and the failures of the plan at the current position."""

    block: str
    failing: frozenset[str]
    segments_over: int
    inputs_over: int

    @classmethod
    def of(cls, plan: Plan, kind: str, feature_id: str) -> Reference:
        c = plan.circuits
        if kind == "inverter":
            block = feature_id
        else:
            own = c.loc[c["from_id"].astype(str) == feature_id, "inverter_id"]
            block = str(own.iloc[0]) if len(own) else ""
        return cls(
            block,
            frozenset(c.loc[c["status"] != "ok", "circuit_id"].astype(str)),
            int((plan.segments["status"] != "ok").sum()),
            int((plan.inputs["status"] != "ok").sum()),
        )


def _layer(site: Site, kind: str) -> gpd.GeoDataFrame:
    return site.inverters if kind == "inverter" else site.combiners


def feature_index(site: Site, kind: str, feature_id: str) -> int:
    """Row of the inverter or combiner ``feature_id``; a one-line error when there is none."""
    frame = _layer(site, kind)
    ids = frame["id"].astype(str).to_numpy()
    hits = np.flatnonzero(ids == feature_id)
    if not hits.size:
        layer = "inverters" if kind == "inverter" else "combiners"
        other = "combiner" if kind == "inverter" else "inverter"
        if (_layer(site, other)["id"].astype(str).to_numpy() == feature_id).any():
            hint = f": {feature_id!r} is a {other} (--{other} {feature_id})"
        else:
            close = difflib.get_close_matches(feature_id.strip(), ids.tolist(), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise PlacementError(f"{layer}: no feature with id {feature_id!r}{hint}")
    return int(hits[0])


def _anchor(geom: shapely.Geometry) -> shapely.Point:
    """The point that stands for a feature's position: the point itself, a pad's centroid."""
    return geom if geom.geom_type == "Point" else geom.centroid


def candidate_points(
    trenches: gpd.GeoDataFrame, origin: tuple[float, float], radius_m: float, step_m: float
) -> tuple[np.ndarray, np.ndarray]:
    """Points every ``step_m`` along each trench (from its first vertex, and its end point),
    within ``radius_m`` of ``origin`` (straight-line distance); coordinates rounded to 1 cm and
    de-duplicated (trench ends shared). Returns ``(xy (n, 2), trench ids (n,))`` sorted by
    distance from ``origin``, then x, then y (deterministic). A step so fine that the trenches
    passing within the radius would hold more than :data:`MAX_POINTS` points is refused
    (:class:`PlacementError`, with the estimated count) before any point is made."""
    if not (step_m > 0 and math.isfinite(step_m)):
        raise PlacementError(f"--step must be a finite number > 0 m, got {step_m}")
    if not (radius_m >= 0 and math.isfinite(radius_m)):
        raise PlacementError(f"--radius must be a finite number ≥ 0 m, got {radius_m}")
    parts, owner = shapely.get_parts(trenches.geometry.to_numpy(), return_index=True)
    # only a trench part that comes within the radius (and the 1 cm rounding) holds a candidate
    centre = shapely.Point(origin)
    near = shapely.dwithin(parts, centre, radius_m + 0.01)
    parts, owner = parts[near], owner[near]
    lengths = shapely.length(parts)
    with np.errstate(over="ignore"):  # a tiny step: counts beyond any integer
        counts_f = np.floor(lengths / step_m) + 1
    generated = float(counts_f.sum())
    if not generated <= MAX_POINTS:  # refused before any point is made (memory, time)
        # the disk no larger than the farthest trench corner (a huge radius stays finite)
        box = shapely.bounds(parts).reshape(-1, 2, 2) - np.asarray(origin)
        reach = float(np.hypot(np.abs(box[:, :, 0]).max(1), np.abs(box[:, :, 1]).max(1)).max())
        disk = centre.buffer(min(radius_m, reach + 1.0))
        inside = float(shapely.length(shapely.intersection(parts, disk)).sum())
        with np.errstate(over="ignore"):
            estimate = inside / step_m
        if estimate > MAX_CANDIDATES:
            about = (
                f"{estimate:,.0f}"
                if estimate < 1e12
                else f"{estimate:.1e}"
                if math.isfinite(estimate)
                else "more than 1e+308"
            )
            raise PlacementError(
                f"about {about} candidate positions within {radius_m:g} m every {step_m:g} m; "
                f"at most {MAX_CANDIDATES:,} are planned: use a smaller --radius or a larger "
                "--step"
            )
        raise PlacementError(
            f"--step {step_m:g} m makes {generated:,.0f} points along the trenches that pass "
            f"within {radius_m:g} m; at most {MAX_POINTS:,} are looked at: use a larger --step"
        )
    counts = counts_f.astype(np.int64)
    line = np.repeat(np.arange(parts.size), counts)
    first = np.repeat(np.cumsum(counts) - counts, counts)
    distance = (np.arange(line.size) - first) * step_m
    points = shapely.line_interpolate_point(parts[line], distance)
    ends = shapely.get_point(parts, -1)  # every end, whatever the step
    points = np.concatenate([points, ends])
    line = np.concatenate([line, np.arange(parts.size)])
    xy = np.round(shapely.get_coordinates(points), 2)
    near = np.hypot(xy[:, 0] - origin[0], xy[:, 1] - origin[1]) <= radius_m + 1e-9
    xy, line = xy[near], line[near]
    ids = trenches["id"].astype(str).to_numpy()[owner[line]]
    d = np.hypot(xy[:, 0] - origin[0], xy[:, 1] - origin[1])
    order = np.lexsort((xy[:, 1], xy[:, 0], d))
    xy, ids = xy[order], ids[order]
    _, first_seen = np.unique(xy, axis=0, return_index=True)
    keep = np.sort(first_seen)
    return xy[keep], ids[keep]


def moved_site(site: Site, kind: str, row: int, xy: tuple[float, float]) -> Site:
    """The site with feature ``row`` of the inverter or combiner layer moved so that its
    anchor (point, or pad centroid) is at ``xy``."""
    frame = _layer(site, kind)
    geom = frame.geometry.iloc[row]
    a = _anchor(geom)
    moved = shapely.transform(geom, lambda c: c + np.array([xy[0] - a.x, xy[1] - a.y]))
    geoms = frame.geometry.to_numpy().copy()
    geoms[row] = moved
    new = frame.set_geometry(gpd.GeoSeries(geoms, index=frame.index, crs=frame.crs))
    field = "inverters" if kind == "inverter" else "combiners"
    return dataclasses.replace(site, **{field: new})


def _candidate_sizes(design: DesignConfig, kinds: Iterable[str]) -> set[tuple[str, float]]:
    """Every (material, size) a plan may choose for circuits of ``kinds``: their size lists as
    the engine reads them (:func:`calc.size_list_mm2`)."""
    dp, rules = design_params(design), design.values["rules"]
    return {
        (design.material[kind], float(s))
        for kind in KINDS
        if kind in kinds
        for s in calc.size_list_mm2(KIND_CODE[kind], dp, rules)
    }


def check_prices(design: DesignConfig, kinds: Iterable[str] = KINDS) -> None:
    """With conductor prices given, every size a plan may choose for circuits of ``kinds``
    must have one (one line listing the missing keys). :func:`search` checks after planning
    the current position, which tells the kinds the site has, and before any candidate."""
    costs = design.costs
    if not costs.priced:
        return
    missing = sorted(_candidate_sizes(design, set(kinds)) - set(costs.conductor_per_m))
    if missing:
        keys = ", ".join(f'"{m} {s:g}"' for m, s in missing)
        raise PlacementError(
            f"site.toml: costs.conductor_per_m has no price for {keys} (every candidate size "
            "needs one, or give no prices to rank by conductor mass)"
        )


def evaluate(plan: Plan, costs: CostConfig, ref: Reference) -> Evaluation:
    """A plan's objective parts (plant totals) and checks. *Feasible*: no circuit of the
    moved feature's block fails, no circuit fails that passes at the current position, and no
    more trench segments or inverter inputs are over a limit than there (failures elsewhere in
    the plant, which the move does not cause, do not disqualify a position)."""
    c = plan.circuits
    conductor_m = (c["cable_m"] * c["conductors"]).to_numpy(dtype=float)
    size = c["size_mm2"].to_numpy(dtype=float)
    # each material and size looked up once (67,200 circuits of two materials at 1 GW)
    material, materials = pd.factorize(c["material"])
    materials = np.asarray(materials, dtype=str)
    mass = float(calc.costs.conductor_mass_kg(size, conductor_m, material, materials).sum())
    cost = math.nan
    if costs.priced:
        sized, sizes = pd.factorize(size)
        n = len(sizes)
        pair, pairs = pd.factorize(material * n + sized)  # each (material, size) once
        per_m = np.array(
            [costs.conductor_per_m[(str(materials[p // n]), float(sizes[p % n]))] for p in pairs]
        )
        with np.errstate(over="ignore"):
            cost = float((per_m[pair] * conductor_m).sum())
        if not math.isfinite(cost):
            raise PlacementError(
                "site.toml: costs.conductor_per_m: the plant's conductor cost exceeds the "
                f"largest number (prices up to {max(costs.conductor_per_m.values()):g} per "
                "metre): check the prices"
            )
    energy = float(c["energy_loss_kwh"].sum())
    capital = math.nan
    if costs.energy_priced:
        capital = float(
            calc.costs.capitalised_loss(
                energy, costs.energy_price_per_kwh, costs.discount_rate_pct, costs.lifetime_years
            )
        )
    failing = (c["status"] != "ok").to_numpy()
    fails = c.loc[failing, ["inverter_id", "circuit_id"]]  # their texts, not the plant's
    in_block = int((fails["inverter_id"].astype(str) == ref.block).sum())
    new = int((~fails["circuit_id"].astype(str).isin(ref.failing)).sum())
    seg_over = int((plan.segments["status"] != "ok").sum())
    inp_over = int((plan.inputs["status"] != "ok").sum())
    return Evaluation(
        conductor_mass_kg=mass,
        conductor_cost=cost,
        loss_kw=float(c["loss_w"].sum()) / 1000.0,
        energy_loss_kwh=energy,
        capitalised_loss=capital,
        failing_in_block=in_block,
        new_failures=new,
        failing_circuits=len(fails),
        segments_over=seg_over,
        inputs_over=inp_over,
        worst_utilisation=float(c["utilisation"].max()),
        worst_vdrop_total_pct=float(c["vdrop_total_pct"].max()),
        feasible=in_block == 0
        and new == 0
        and seg_over <= ref.segments_over
        and inp_over <= ref.inputs_over,
    )


def objective(e: Evaluation, costs: CostConfig) -> tuple[float, str]:
    """The value ranked and its unit (see the module docstring)."""
    if costs.priced:
        value = e.conductor_cost + (e.capitalised_loss if costs.energy_priced else 0.0)
        return value, costs.currency or "currency"
    return e.conductor_mass_kg, "kg"


def rank(table: pd.DataFrame) -> pd.DataFrame:
    """Feasible candidates first by objective, then the others by their block's and new
    failures, then objective; ties by candidate number. Adds ``rank`` (1 = best)."""
    failures = (table["failing_in_block"] + table["new_failures"]).fillna(
        np.inf
    )  # not routable: after every plan that routes
    order = np.lexsort(
        (
            table["candidate"].to_numpy(),
            table["objective"].fillna(np.inf).to_numpy(),
            np.where(table["feasible"], 0, failures.to_numpy()),
            ~table["feasible"].to_numpy(dtype=bool),
        )
    )
    out = table.iloc[order].reset_index(drop=True)
    out["rank"] = np.arange(1, len(out) + 1)
    return out


def search(
    site: Site,
    design: DesignConfig,
    kind: str,
    feature_id: str,
    radius_m: float,
    step_m: float,
    progress: Callable[[int, int], None] | None = None,
) -> tuple[pd.DataFrame, dict[int, Plan]]:
    """Evaluate every candidate position of one inverter or combiner (see the module
    docstring). Returns the ranked candidate table (:data:`CANDIDATE_COLUMNS`) and the best
    candidate's plan under its candidate number."""
    row = feature_index(site, kind, feature_id)
    anchor = _anchor(_layer(site, kind).geometry.iloc[row])
    origin = (anchor.x, anchor.y)
    xy, trench = candidate_points(site.trenches, origin, radius_m, step_m)
    if len(xy) + 1 > MAX_CANDIDATES:
        raise PlacementError(
            f"{len(xy) + 1:,} candidate positions within {radius_m:g} m every {step_m:g} m; at "
            f"most {MAX_CANDIDATES:,} are planned: use a smaller --radius or a larger --step"
        )
    xy = np.vstack([np.array([origin]), xy])
    trench = np.concatenate([np.array([""]), trench])
    layer = "inverters" if kind == "inverter" else "combiners"
    first = _First()

    def at(i: int) -> Site:
        """The site with the feature at candidate ``i``."""
        return site if i == 0 else moved_site(site, kind, row, (float(xy[i, 0]), float(xy[i, 1])))

    def one(i: int) -> dict:
        x, y = xy[i]
        candidate = at(i)
        try:
            if first.mover is not None:  # a local re-plan of the current position's plan
                plan = first.mover.figures(candidate)
            else:
                plan = plan_site(candidate, design, noding_memo=first.memo, with_remedies=False)
                first.memo = plan.routes.network.memo
        except RoutingError as exc:
            return _unroutable(i, x, y, trench[i], origin, str(exc))
        if first.ref is None:  # the kinds the site has, the reference
            check_prices(design, plan.circuits["kind"].unique())
            first.ref = Reference.of(plan, kind, feature_id)
            if i == 0:  # the current position's plan is the baseline of every other
                first.mover = MoveSearch(site, design, layer, row, plan, remedies=True)
        e = evaluate(plan, design.costs, first.ref)
        value, unit = objective(e, design.costs)
        return {
            "candidate": i,
            "x": float(x),
            "y": float(y),
            "trench_id": trench[i],
            "moved_m": float(np.hypot(x - origin[0], y - origin[1])),
            "objective": value,
            "objective_unit": unit,
            **{f.name: getattr(e, f.name) for f in dataclasses.fields(Evaluation)},
            "note": "current position" if i == 0 else "",
        }

    # in turn until a plan routes (the reference); then the rest, spread over the cores
    records = []
    try:
        while len(records) < len(xy) and first.ref is None:
            if progress:
                progress(len(records), len(xy))
            records.append(one(len(records)))
        rest = list(range(len(records), len(xy)))
        records += parallel.spread(
            one, rest, progress=(lambda j, n: progress(rest[j], len(xy))) if progress else None
        )
        table = _ranked(records)
        plans = {}
        routed = table[~table["note"].astype(str).str.startswith(UNROUTABLE)]
        if len(routed):  # the best (ranked first of those that route), planned with its remedies
            i = int(routed["candidate"].iloc[0])
            chosen = at(i)
            if first.mover is not None:  # a local re-plan of the current position's plan
                plans[i] = first.mover.plan(chosen)
            else:
                plans[i] = plan_site(chosen, design, noding_memo=first.memo)
    finally:  # the current position's remedies, computed for the best position's plan
        if first.mover is not None:
            first.mover.cancel()
    return table[list(CANDIDATE_COLUMNS)], plans


@dataclass
class _First:
    """What the first plan of a search that routes (the current position's, normally) sets:
    the reference every candidate is judged against, the baseline of the local re-plans (the
    current position's plan only) and the trench noding the full plans reuse."""

    ref: Reference | None = None
    mover: MoveSearch | None = None
    memo: NetworkMemo | None = None


def _ranked(records: list[dict]) -> pd.DataFrame:
    """The candidates' records as a table, with their difference to the current position's
    objective, ranked (:func:`rank`)."""
    table = pd.DataFrame.from_records(records)
    current = table.loc[table["candidate"] == 0, "objective"]
    table["delta_objective"] = table["objective"] - (current.iloc[0] if len(current) else np.nan)
    return rank(table)


def _unroutable(i, x, y, trench, origin, reason: str) -> dict:
    return {
        "candidate": i,
        "x": float(x),
        "y": float(y),
        "trench_id": trench,
        "moved_m": float(np.hypot(x - origin[0], y - origin[1])),
        "objective": math.nan,
        "objective_unit": "",
        **{f.name: math.nan for f in dataclasses.fields(Evaluation)},
        "feasible": False,
        "note": UNROUTABLE + " ".join(reason.split())[:200],
    }


def current_unroutable(table: pd.DataFrame) -> str:
    """Why the current position (candidate 0) of a ranked ``table`` cannot be routed ("" where
    it can, or is not in the table)."""
    note = table.loc[table["candidate"] == 0, "note"].astype(str)
    return note.iloc[0].removeprefix(UNROUTABLE) if len(note) else ""


def candidate_layer(table: pd.DataFrame, crs) -> gpd.GeoDataFrame:
    """The ranked candidates as points (a GeoPackage layer of ``placement.gpkg``)."""
    return gpd.GeoDataFrame(
        table.copy(), geometry=gpd.points_from_xy(table["x"], table["y"]), crs=crs
    )


def write_placement(table: pd.DataFrame, crs, folder: Path) -> list[str]:
    """Write ``placement.csv`` and ``placement.gpkg`` (layer ``candidates``) into ``folder``;
    returns the file names. The CSV's text cells (a trench id, the currency, a note quoting an
    id) are guarded against formulas as the schedules' are
    (:func:`routeplan.outputs.schedules.csv_guard`)."""
    from .outputs.schedules import csv_guard

    out = table.round(DECIMALS)
    for col in ("trench_id", "objective_unit", "note"):
        text = out[col].fillna("").astype(str).tolist()
        out[col] = [c.decode("utf-8") for c in csv_guard([t.encode("utf-8") for t in text])]
    out.to_csv(folder / "placement.csv", index=False)
    candidate_layer(table, crs).to_file(
        folder / "placement.gpkg", layer="candidates", engine="pyogrio"
    )
    return ["placement.csv", "placement.gpkg"]
