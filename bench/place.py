"""Benchmark: local re-plans after a pad move, and a placement search, on a generated plant.

    python bench/place.py [--mw 1000] [--seed 1] [--candidates 200] [--work DIR] [--json FILE]

Not part of the test suite. It generates a plant with :func:`routeplan.synth.generate_site`
(an invented scenario), then measures in this process:

* **pad move**: the first inverter pad moved 8 m along y (as ``bench/run.py`` moves it), the
  site read again and re-planned locally from the plan before the move
  (:func:`routeplan.localplan.replan`): read, route, size (the planning part) and tables,
  against a full plan of the same site (``plan_site(..., with_remedies=False)``);
* **placement**: ``routeplan place``'s search (:func:`routeplan.placement.search`) for one
  inverter of the plant, the radius the smallest that gives at least ``--candidates``
  positions every 5 m: the current position planned in full, each other a local re-plan (spread
  over the cores in forked processes), the best planned with its remedies (a local re-plan,
  the current position's remedies computed in a child meanwhile).

Each figure is given as wall-clock and as CPU seconds (of this process, and for the search of
its forked children too): on a shared machine the CPU seconds are what the work costs, the
wall-clock what it took there. Every plant is invented; the numbers are timings of a design
aid.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import sys
import tempfile
import time
import types
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:  # run from a clone without installing
    sys.path.insert(0, str(ROOT))


def _clock() -> tuple[float, float]:
    """Wall-clock and CPU seconds: this process's and its reaped children's (the search's
    forked ones; a re-plan without children counts this process alone)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return time.perf_counter(), me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def _since(t: tuple[float, float]) -> dict[str, float]:
    w, c = _clock()
    return {"wall_s": w - t[0], "cpu_s": c - t[1]}


def pad_move(site_dir: Path) -> dict:
    """Full plan, then the pad moved and re-planned locally (stage times in CPU seconds)."""
    from run import move_pad  # bench/run.py: the same edit

    import routeplan.localplan as lp
    from routeplan.check import load
    from routeplan.pipeline import plan_site

    t = _clock()
    site, design = load(site_dir)
    read = _since(t)
    t = _clock()
    plan = plan_site(site, design, with_remedies=False)
    full = _since(t)
    base = lp.baseline(site, design, plan)
    move_pad(site_dir)
    cpu_time = types.SimpleNamespace(perf_counter=time.process_time)
    wall_time = lp.time
    lp.time = cpu_time  # the re-plan's stage times in CPU seconds
    try:
        t = _clock()
        site2, _ = load(site_dir)
        read2 = _since(t)
        t = _clock()
        local = lp.replan(base, site2)
        replan = _since(t)
    finally:
        lp.time = wall_time
    s = local.timings_s
    planning_cpu = read2["cpu_s"] + s["route"] + s["size"]
    return {
        "full_read": read,
        "full_plan": full,
        "replan_read": read2,
        "replan": replan,
        "replan_stages_cpu_s": {k: s[k] for k in ("route", "size", "tables")},
        "replan_planning_cpu_s": planning_cpu,
        "local": bool(s["local"]),
        "circuits_sized_again": int(s.get("local.circuits", 0)),
        "circuits": len(local.circuits),
    }


def placement(site_dir: Path, candidates: int) -> dict:
    """One inverter's placement search with at least ``candidates`` positions: the whole
    search, and within it the two full plans (the current position's, first, with the local
    re-plans' baseline made from it; the best position's with its remedies, last) timed
    apart from the candidates' local re-plans between them, which run spread over the cores
    (:func:`routeplan.parallel.spread`; CPU seconds here include the forked children's)."""
    import routeplan.placement as pm
    from routeplan import parallel
    from routeplan.check import load
    from routeplan.localplan import MoveSearch
    from routeplan.placement import _anchor, candidate_points, search

    site, design = load(site_dir)
    row = len(site.inverters) // 2
    inv = str(site.inverters["id"].iloc[row])
    a = _anchor(site.inverters.geometry.iloc[row])
    radius = 20.0
    while len(candidate_points(site.trenches, (a.x, a.y), radius, 5.0)[0]) + 1 < candidates:
        radius += 2.0
    full_plans: list[dict[str, float]] = []
    setups: list[dict[str, float]] = []
    best: list[dict[str, float]] = []

    def timed(f, into):
        def call(*args, **kwargs):
            t0 = _clock()
            try:
                return f(*args, **kwargs)
            finally:
                into.append(_since(t0))

        return call

    plan_site, init, plan = pm.plan_site, MoveSearch.__init__, MoveSearch.plan
    pm.plan_site = timed(plan_site, full_plans)
    MoveSearch.__init__, MoveSearch.plan = timed(init, setups), timed(plan, best)
    try:
        t = _clock()
        table, _ = search(site, design, "inverter", inv, radius, 5.0)
        total = _since(t)
    finally:
        pm.plan_site, MoveSearch.__init__, MoveSearch.plan = plan_site, init, plan
    # the current position's plan and the baseline made from it; the best position's plan
    # (a local re-plan of that baseline, or where there is none a full plan)
    current = {k: full_plans[0][k] + setups[0][k] for k in total}
    last = (best or full_plans[1:])[-1]
    local = len(table) - 1
    between = {k: total[k] - current[k] - last[k] for k in total}
    return {
        "inverter": inv,
        "radius_m": radius,
        "positions": len(table),
        "cores": parallel.cores(),
        "search": total,
        "current_plan_and_setup": current,
        "local_candidates": local,
        "local_candidates_total": between,
        "local_candidate_mean": {k: v / local for k, v in between.items()},
        "best_plan_with_remedies": last,
        # the forked children's peak resident memory (pages shared with this process counted)
        "largest_child_gib": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 2**20,
        "this_process_gib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 2**20,
    }


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--mw", type=float, default=1000.0, help="plant size [MWdc] (1000)")
    ap.add_argument("--seed", type=int, default=1, help="generator seed (1)")
    ap.add_argument("--candidates", type=int, default=200, help="positions searched at least")
    ap.add_argument("--work", type=Path, default=None, help="folder for the site (temporary)")
    ap.add_argument("--json", type=Path, default=None, help="also write the numbers as JSON")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from routeplan.synth import generate_site

    work = args.work or Path(tempfile.mkdtemp(prefix="routeplan-place-"))
    try:
        site_dir = work / f"site_{args.mw:g}"
        generate_site(args.mw, args.seed, site_dir, force=True)
        out = {"mw": args.mw, "seed": args.seed, "cores": os.cpu_count(), "load": os.getloadavg()}
        out["placement"] = placement(site_dir, args.candidates)
        out["pad_move"] = pad_move(site_dir)
    finally:
        if args.work is None:
            shutil.rmtree(work, ignore_errors=True)
    text = json.dumps(out, indent=2)
    print(text)
    if args.json:
        args.json.write_text(text + "\n")


if __name__ == "__main__":
    main()
