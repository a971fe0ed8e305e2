"""Evaluate the candidate positions of ``routeplan place`` on a Dask cluster.

Why it maps onto a cluster
--------------------------
``routeplan place`` (:func:`routeplan.placement.search`) evaluates each candidate position of
one inverter pad or combiner on its own: the site moved to that position
(:func:`~routeplan.placement.moved_site`), re-planned locally from the plan at the current
position (:class:`routeplan.localplan.MoveSearch`: only the moved feature's circuits are
routed again and only the blocks they touch sized again; the figures equal a full plan's),
judged against the plan at the current position (:class:`~routeplan.placement.Reference`)
and turned into a row of ``placement.csv`` (:func:`~routeplan.placement.evaluate`,
:func:`~routeplan.placement.objective`). No candidate needs another's result; only the
ranking (:func:`~routeplan.placement.rank`) looks at all of them. So the work is an
embarrassingly parallel map followed by one small reduction, which is what
``dask.distributed``'s futures do (``client.map`` → ``client.gather``). A portfolio (many
blocks × many candidates) is one such map per placed feature, all submitted at once; the
scheduler spreads them over the workers.

What each worker holds: the plant, loaded once
----------------------------------------------
Reading and validating a 1 GW site, planning its current position (the reference every
candidate is judged against, and the baseline every candidate is re-planned from) and
building the trench network once without the feature cost seconds; a candidate then costs a
local re-plan, a small part of a full plan. Shipping the site with every task would repeat
that cost. Instead each worker keeps one :class:`Plant` per placed feature (site, feature)
— the site, its design settings, the plan at the current position, the reference and the
feature's :class:`~routeplan.localplan.MoveSearch` — made the first time a task on that
worker needs it; every candidate of that feature on that worker is a local re-plan of it, as
in ``routeplan place``:

* :class:`PlantOnWorker` is a ``distributed.WorkerPlugin`` registered once
  (``client.register_plugin``); the scheduler gives it to every worker, including those that
  join later. Tasks name the site by its path and the feature by its id: each worker reads a
  site once and plans each feature's current position (its baseline) once, both lazily, in
  the first task's thread and under a lock, so the worker's event loop never blocks on a
  plan. A baseline is only read by the re-plans, so a worker's threads may share it. The
  site folder must be on a file system every worker sees.
* Where workers cannot read the site's files, load it once on the client and send the loaded
  :class:`layers.Site` to every worker with ``client.scatter(site, broadcast=True)``; pass
  the resulting future to the tasks instead of the path (Dask then hands each task the
  worker's local copy).

Each task evaluates a batch of candidates of one feature (``batch`` positions), so that the
scheduler's overhead per task (milliseconds) stays small against a local re-plan (a
candidate costs about what its block costs to route and size: raise ``batch`` for small
blocks).
:func:`portfolio_search` submits the batches of every request (features of one site or of
many sites) at once, so workers never wait for one feature's stragglers. Results come back as
the rows of ``placement.csv`` (plain dicts) and the client ranks each feature's exactly as
``search`` does. A worker keeps every plant it made until it closes; for a portfolio whose
sites do not all fit into a worker's memory, restrict each site's tasks to a few workers
(``client.map(..., workers=[...])``) so that each worker holds few sites.

Differences from ``routeplan place``: the reference and the baseline are always the plan at
the current position (``search`` takes the first candidate that routes, which is the current
position whenever it routes, and re-plans locally only from that; here a current position that
cannot be routed is an error); the best position's plan
(with remedies) and the output files are not made here — run ``routeplan place`` or
:func:`routeplan.pipeline.plan_site` on the best position for them. The safety caution holds
as for every output: results are a design aid, subject to local codes and to review by a
qualified, licensed person.

Run it
------
::

    pip install 'routeplan[distributed]'       # dask[distributed]
    python examples/place_distributed.py demo_site --inverter INV-W --radius 40 --step 20

It starts a ``LocalCluster`` of two single-threaded worker processes (``--threads`` runs them
as threads of this process instead), prints the ten best candidates and closes the cluster.
Against a real cluster, make a ``Client`` of its scheduler's address and call
:func:`distributed_search` with it. ``tests/routeplan/test_place_distributed.py`` checks that
the ranking equals ``routeplan place``'s on the same candidates.
"""

from __future__ import annotations

import argparse
import dataclasses
import math
import threading
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from distributed import Client, LocalCluster, WorkerPlugin, get_worker

from routeplan.check import load
from routeplan.errors import RoutingError
from routeplan.localplan import MoveSearch
from routeplan.pipeline import plan_site
from routeplan.placement import (
    CANDIDATE_COLUMNS,
    Evaluation,
    Reference,
    candidate_points,
    check_prices,
    evaluate,
    feature_index,
    moved_site,
    objective,
    rank,
)

#: the name the plugin is registered under on every worker
PLUGIN = "routeplan-plant"


@dataclass
class Plant:
    """What a worker keeps for one placed feature: the site as read (shared by the features
    of one site), its design settings, the feature's row and current position, the plan at the
    current position and its figures (the reference), and the local re-plan baseline of the
    feature (:class:`routeplan.localplan.MoveSearch`: that plan, and the network built once
    without the feature)."""

    site: object
    design: object
    kind: str
    feature_id: str
    row: int
    origin: tuple[float, float]
    ref: Reference
    plan: object
    mover: MoveSearch
    local: int = 0  # candidates this worker re-planned locally (not by the full-plan fallback)


def _origin(site, kind: str, row: int) -> tuple[float, float]:
    frame = site.inverters if kind == "inverter" else site.combiners
    geom = frame.geometry.iloc[row]
    anchor = geom if geom.geom_type == "Point" else geom.centroid
    return (float(anchor.x), float(anchor.y))


def make_plant(site, design, kind: str, feature_id: str) -> Plant:
    """Plan the feature's current position (the reference and the baseline of every local
    re-plan); errors as ``place``'s."""
    row = feature_index(site, kind, feature_id)
    plan = plan_site(site, design, with_remedies=False)  # RoutingError: current not routable
    check_prices(design, plan.circuits["kind"].unique())
    layer = "inverters" if kind == "inverter" else "combiners"
    return Plant(
        site, design, kind, feature_id, row, _origin(site, kind, row),
        Reference.of(plan, kind, feature_id), plan, MoveSearch(site, design, layer, row, plan),
    )  # fmt: skip


class PlantOnWorker(WorkerPlugin):
    """Each worker's plants: a site is read once per worker (``loads`` counts the reads), a
    feature's reference planned once per worker, both on first use (see the module
    docstring). Registered once under :data:`PLUGIN`; ``idempotent``, so registering it again
    keeps what the workers hold."""

    idempotent = True

    def __init__(self):
        self._reset()

    def _reset(self) -> None:
        self._sites: dict[str, tuple] = {}
        self._plants: dict[tuple[str, str, str], Plant] = {}
        self._lock = threading.Lock()
        self.loads = 0

    def __getstate__(self) -> dict:  # nothing travels: each worker fills its own
        return {}

    def __setstate__(self, state: dict) -> None:
        self._reset()

    def plant(self, site_path: str, kind: str, feature_id: str) -> Plant:
        key = (site_path, kind, feature_id)
        with self._lock:
            plant = self._plants.get(key)
            if plant is None:
                if site_path not in self._sites:
                    self._sites[site_path] = load(Path(site_path))
                    self.loads += 1
                site, design = self._sites[site_path]
                plant = self._plants[key] = make_plant(site, design, kind, feature_id)
            return plant

    def local_replans(self) -> int:
        """How many candidates this worker evaluated by a local re-plan (all its plants)."""
        return sum(p.local for p in self._plants.values())


def evaluate_position(plant: Plant, i: int, x: float, y: float, trench_id: str) -> dict:
    """The ``placement.csv`` row of candidate ``i`` at (x, y) [m] (before ranking and the
    difference to the current position): the moved site re-planned locally from the plant's
    baseline (:meth:`routeplan.localplan.MoveSearch.figures`, as ``place`` does; the current
    position is the baseline's own plan), judged against the reference."""
    site = plant.site if i == 0 else moved_site(plant.site, plant.kind, plant.row, (x, y))
    base = {
        "candidate": i,
        "x": float(x),
        "y": float(y),
        "trench_id": trench_id,
        "moved_m": float(np.hypot(x - plant.origin[0], y - plant.origin[1])),
    }
    try:
        plan = plant.plan if i == 0 else plant.mover.figures(site)
    except RoutingError as exc:
        return {
            **base,
            "objective": math.nan,
            "objective_unit": "",
            **{f.name: math.nan for f in dataclasses.fields(Evaluation)},
            "feasible": False,
            "note": "not routable here: " + " ".join(str(exc).split())[:200],
        }
    if i and plan.timings_s.get("local") == 1.0:
        plant.local += 1
    e = evaluate(plan, plant.design.costs, plant.ref)
    value, unit = objective(e, plant.design.costs)
    return {
        **base,
        "objective": value,
        "objective_unit": unit,
        **{f.name: getattr(e, f.name) for f in dataclasses.fields(Evaluation)},
        "note": "current position" if i == 0 else "",
    }


#: one placement request: site folder, "inverter" or "combiner", feature id, radius and step [m]
Request = tuple[str, str, str, float, float]


def evaluate_batch(request: Request, batch: list[tuple[int, float, float, str]]) -> list[dict]:
    """A task: the rows of a batch of one request's candidates, with the worker's plant."""
    plant = get_worker().plugins[PLUGIN].plant(*request[:3])
    return [evaluate_position(plant, i, x, y, t) for i, x, y, t in batch]


def candidates(request: Request) -> list[tuple[int, float, float, str]]:
    """The candidates as ``routeplan place`` numbers them: 0 the current position, then the
    points along the trenches (:func:`routeplan.placement.candidate_points`)."""
    site_path, kind, feature_id, radius_m, step_m = request
    site, _ = load(Path(site_path))
    origin = _origin(site, kind, feature_index(site, kind, feature_id))
    xy, trench = candidate_points(site.trenches, origin, radius_m, step_m)
    pairs = enumerate(zip(xy.tolist(), trench.tolist(), strict=True), start=1)
    return [(0, *origin, ""), *((k, p[0], p[1], str(t)) for k, (p, t) in pairs)]


def ranked(records: list[dict]) -> pd.DataFrame:
    """The candidate table ranked as ``place`` ranks it (:data:`CANDIDATE_COLUMNS`, unrounded)."""
    table = pd.DataFrame.from_records(records)
    current = table.loc[table["candidate"] == 0, "objective"]
    table["delta_objective"] = table["objective"] - (current.iloc[0] if len(current) else np.nan)
    return rank(table)[list(CANDIDATE_COLUMNS)]


def portfolio_search(
    client: Client, requests: list[Request], batch: int = 4
) -> dict[Request, pd.DataFrame]:
    """The ranked candidate table of each request (features of one site or of many), every
    candidate of every request submitted at once and evaluated on the cluster of ``client``."""
    client.register_plugin(PlantOnWorker(), name=PLUGIN)
    requests = [(str(r[0]), r[1], r[2], float(r[3]), float(r[4])) for r in requests]
    futures = {}
    for r in requests:
        todo = candidates(r)
        batches = [todo[k : k + batch] for k in range(0, len(todo), batch)]
        futures[r] = client.map(evaluate_batch, [r] * len(batches), batches, pure=False)
    done = client.gather(futures)
    return {r: ranked([row for rows in done[r] for row in rows]) for r in requests}


def distributed_search(
    client: Client,
    site_path: str | Path,
    kind: str,
    feature_id: str,
    radius_m: float,
    step_m: float,
    batch: int = 4,
) -> pd.DataFrame:
    """The ranked candidate table of ``routeplan place`` for one feature
    (:func:`portfolio_search` of one request)."""
    request = (str(site_path), kind, feature_id, float(radius_m), float(step_m))
    return portfolio_search(client, [request], batch)[request]


def main(argv: list[str] | None = None) -> None:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("site")
    who = p.add_mutually_exclusive_group(required=True)
    who.add_argument("--inverter")
    who.add_argument("--combiner")
    p.add_argument("--radius", type=float, default=100.0)
    p.add_argument("--step", type=float, default=10.0)
    p.add_argument("--workers", type=int, default=2)
    p.add_argument("--threads", action="store_true", help="workers as threads of this process")
    a = p.parse_args(argv)
    kind, feature = ("inverter", a.inverter) if a.inverter else ("combiner", a.combiner)
    with (
        LocalCluster(
            n_workers=a.workers,
            threads_per_worker=1,
            processes=not a.threads,
            dashboard_address=None,
        ) as cluster,
        Client(cluster) as client,
    ):
        table = distributed_search(client, a.site, kind, feature, a.radius, a.step)
    cols = ["rank", "candidate", "x", "y", "trench_id", "feasible", "objective", "objective_unit"]
    print(table[cols].head(10).to_string(index=False))
    print("A design aid: subject to local codes and review by a qualified, licensed person.")


if __name__ == "__main__":
    main()
