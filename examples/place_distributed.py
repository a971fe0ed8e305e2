"""Evaluate the candidate positions of ``routeplan place`` on a Dask cluster.

Why it maps onto a cluster
--------------------------
``routeplan place`` (:func:`routeplan.placement.search`) evaluates each candidate position of
one inverter pad or combiner on its own: the site moved to that position
(:func:`~routeplan.placement.moved_site`), planned (:func:`routeplan.pipeline.plan_site`),
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
Reading and validating a 1 GW site, and planning its current position (the reference every
candidate is judged against), costs seconds; a candidate costs far less once they are in
memory (and with the trench noding memo, :class:`routeplan.network.NetworkMemo`, reused).
Shipping the site with every task would repeat that cost. Instead each worker keeps one
:class:`Plant` — the site, its design settings, the reference and the noding memo — made the
first time a task on that worker needs it:

* :class:`PlantOnWorker` is a ``distributed.WorkerPlugin`` registered once
  (``client.register_plugin``); the scheduler gives it to every worker, including those that
  join later. It carries only the site's path: each worker reads the site itself (the site
  folder must be on a file system every worker sees). It loads lazily, in the first task's
  thread and under a lock, so the worker's event loop never blocks on a plan.
* Where workers cannot read the site's files, load it once on the client and send the loaded
  :class:`layers.Site` to every worker with ``client.scatter(site, broadcast=True)``; pass
  the resulting future to the tasks instead of the path (Dask then hands each task the
  worker's local copy).

Each task evaluates a batch of candidates (``batch`` positions), so that the scheduler's
overhead per task (milliseconds) stays small against a plan. Results come back as the rows of
``placement.csv`` (plain dicts) and the client ranks them exactly as ``search`` does.

Differences from ``routeplan place``: the reference is always the plan at the current position
(``search`` takes the first candidate that routes, which is the current position whenever it
routes; here a current position that cannot be routed is an error); the best position's plan
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
    """What a worker keeps between tasks: the site as read, its design settings, the placed
    feature's row, its current position, the reference plan's figures and the noding memo."""

    site: object
    design: object
    kind: str
    feature_id: str
    row: int
    origin: tuple[float, float]
    ref: Reference
    memo: object


def load_plant(site_path: str | Path, kind: str, feature_id: str) -> Plant:
    """Read the site and plan the current position (the reference); errors as ``place``'s."""
    site, design = load(Path(site_path))
    row = feature_index(site, kind, feature_id)
    frame = site.inverters if kind == "inverter" else site.combiners
    geom = frame.geometry.iloc[row]
    anchor = geom if geom.geom_type == "Point" else geom.centroid
    plan = plan_site(site, design, with_remedies=False)  # RoutingError: current not routable
    check_prices(design, plan.circuits["kind"].unique())
    return Plant(
        site, design, kind, feature_id, row, (anchor.x, anchor.y),
        Reference.of(plan, kind, feature_id), plan.routes.network.memo,
    )  # fmt: skip


class PlantOnWorker(WorkerPlugin):
    """Loads the plant once per worker, on first use (see the module docstring)."""

    idempotent = False

    def __init__(self, site_path: str | Path, kind: str, feature_id: str):
        self.args = (str(site_path), kind, feature_id)
        self._plant: Plant | None = None
        self._lock = threading.Lock()

    def __getstate__(self) -> dict:  # the path and ids travel; the lock and the plant do not
        return {"args": self.args}

    def __setstate__(self, state: dict) -> None:
        self.args = state["args"]
        self._plant = None
        self._lock = threading.Lock()

    def setup(self, worker) -> None:
        self.loads = 0

    def plant(self) -> Plant:
        with self._lock:
            if self._plant is None:
                self._plant = load_plant(*self.args)
                self.loads = getattr(self, "loads", 0) + 1
            return self._plant


def evaluate_position(plant: Plant, i: int, x: float, y: float, trench_id: str) -> dict:
    """The ``placement.csv`` row of candidate ``i`` at (x, y) [m] (before ranking and the
    difference to the current position): the moved site planned, judged against the
    reference. Updates the plant's noding memo."""
    site = plant.site if i == 0 else moved_site(plant.site, plant.kind, plant.row, (x, y))
    base = {
        "candidate": i,
        "x": float(x),
        "y": float(y),
        "trench_id": trench_id,
        "moved_m": float(np.hypot(x - plant.origin[0], y - plant.origin[1])),
    }
    try:
        plan = plan_site(site, plant.design, noding_memo=plant.memo, with_remedies=False)
    except RoutingError as exc:
        return {
            **base,
            "objective": math.nan,
            "objective_unit": "",
            **{f.name: math.nan for f in dataclasses.fields(Evaluation)},
            "feasible": False,
            "note": "not routable here: " + " ".join(str(exc).split())[:200],
        }
    plant.memo = plan.routes.network.memo
    e = evaluate(plan, plant.design.costs, plant.ref)
    value, unit = objective(e, plant.design.costs)
    return {
        **base,
        "objective": value,
        "objective_unit": unit,
        **{f.name: getattr(e, f.name) for f in dataclasses.fields(Evaluation)},
        "note": "current position" if i == 0 else "",
    }


def evaluate_batch(batch: list[tuple[int, float, float, str]]) -> list[dict]:
    """A task: the rows of a batch of candidates, with the worker's plant."""
    plant = get_worker().plugins[PLUGIN].plant()
    return [evaluate_position(plant, i, x, y, t) for i, x, y, t in batch]


def candidates(
    site_path: str | Path, kind: str, feature_id: str, radius_m: float, step_m: float
) -> list[tuple[int, float, float, str]]:
    """The candidates as ``routeplan place`` numbers them: 0 the current position, then the
    points along the trenches (:func:`routeplan.placement.candidate_points`)."""
    site, _ = load(Path(site_path))
    row = feature_index(site, kind, feature_id)
    frame = site.inverters if kind == "inverter" else site.combiners
    geom = frame.geometry.iloc[row]
    a = geom if geom.geom_type == "Point" else geom.centroid
    xy, trench = candidate_points(site.trenches, (a.x, a.y), radius_m, step_m)
    out = [(0, float(a.x), float(a.y), "")]
    pairs = enumerate(zip(xy.tolist(), trench.tolist(), strict=True), start=1)
    out += [(k, p[0], p[1], str(t)) for k, (p, t) in pairs]
    return out


def distributed_search(
    client: Client,
    site_path: str | Path,
    kind: str,
    feature_id: str,
    radius_m: float,
    step_m: float,
    batch: int = 4,
) -> pd.DataFrame:
    """The ranked candidate table of ``routeplan place`` (:data:`CANDIDATE_COLUMNS`, unrounded),
    each candidate evaluated on the cluster of ``client``."""
    todo = candidates(site_path, kind, feature_id, radius_m, step_m)
    client.register_plugin(PlantOnWorker(site_path, kind, feature_id), name=PLUGIN)
    batches = [todo[k : k + batch] for k in range(0, len(todo), batch)]
    futures = client.map(evaluate_batch, batches, pure=False)
    records = [r for rows in client.gather(futures) for r in rows]
    table = pd.DataFrame.from_records(records)
    current = table.loc[table["candidate"] == 0, "objective"]
    table["delta_objective"] = table["objective"] - (current.iloc[0] if len(current) else np.nan)
    return rank(table)[list(CANDIDATE_COLUMNS)]


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
