"""Benchmark: plan generated PV plants of 100 MW, 300 MW and 1 GW end to end.

    python bench/run.py [--sizes 100,300,1000] [--seed 1] [--topologies central,subarray,string]
                        [--out bench/results.md]

Not part of the test suite. For each size it generates a plant with
:func:`routeplan.synth.generate_site` (a GeoPackage site folder; an invented scenario), then
runs the plan in a fresh Python process — :func:`routeplan.pipeline.plan` and
:func:`routeplan.outputs.write.write_plan`, what ``routeplan plan`` runs — so that each
plant's peak memory (``ru_maxrss``) is its own. It reports each stage's time, the peak
memory, the size of ``map.html``, and three ratios measured in the same run:

* **I/O floor**: routing + sizing compute ÷ (pyogrio read of the input layers + pyogrio
  write of the ``circuits`` and ``segments`` layers to a GeoPackage + a CSV write of the
  cable schedule), measured here (goal ≤ 3);
* **graph-library baseline**: routing as the project does it (network build, one Dijkstra
  search per destination, per-segment counts and tables) against a straightforward
  networkx version on the same noded graph — one ``nx.shortest_path`` (bidirectional
  Dijkstra, ``weight="length"``) per circuit, its edges mapped back to segments and counted
  (goal ≥ 2× faster at 1 GW); also on two long-route variants of the largest plant of at
  most 300 MW (rows sent to the combiners of the block half the plant away; every inverter
  sent to one transformer station), where networkx is timed on a sample of the circuits;
* **growth**: time(largest) ÷ time(next) against the ratio of their strings (goal: no worse
  than linear + 15 %);
* **topologies**: the largest plant generated again in each other DC topology of
  ``routeplan synth`` (``subarray``: string combiners to recombiners at the skid; ``string``:
  rows to string inverters — same seed, same layout), planned and written end to end in a
  fresh process like the others (without the ratios above), against the same end-to-end
  target;
* **placement**: ``bench/place.py`` in a fresh process on the largest plant: ``routeplan
  place``'s search of 200 positions for one inverter pad (goal ≤ 20 s) and the planning part
  (read, route, size) of the local re-plan after a pad move (goal ≤ 1 s).

The plants of the sizes are ``central`` ones (string combiners to one inverter skid per
block), the generator's default.

It writes a Markdown report (``bench/results.md`` by default) with the machine's core count,
CPU model, Python and library versions and the date. Every plant is invented; the results are
timings of a design aid, not a design.
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime
import itertools
import json
import os
import platform
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:  # run from a clone without installing
    sys.path.insert(0, str(ROOT))

#: networkx searches timed per long-route variant at most (the rest extrapolated per circuit)
NX_SAMPLE = 3000
#: runs of the project's routing and of the networkx version; the best of each is compared
REPEAT, NX_REPEAT = 3, 2
GOALS = {"io_floor": 3.0, "nx_speedup": 2.0, "growth_margin": 1.15}


# --------------------------------------------------------------------------------------------
# measurements (run in the worker process)


def _peak_gib(who: int = resource.RUSAGE_SELF) -> float:
    """Peak resident memory of this process (or of its largest child, ``RUSAGE_CHILDREN``)
    [GiB] (Linux reports ru_maxrss in KiB)."""
    scale = 1 if sys.platform == "darwin" else 1024
    return resource.getrusage(who).ru_maxrss * scale / 2**30


def move_pad(site_dir: Path, dy_m: float = 8.0) -> str:
    """Move the first inverter pad of a generated site (``site.gpkg``, projected) by ``dy_m``
    metres along y: the edit of the edit-and-regenerate measurement. Returns its id."""
    import pyogrio
    import shapely

    inv = pyogrio.read_dataframe(site_dir / "site.gpkg", layer="inverters")
    if not inv.crs.is_projected:
        raise SystemExit("move_pad: a projected site is expected")
    geoms = inv.geometry.to_numpy().copy()
    geoms[0] = shapely.affinity.translate(geoms[0], yoff=dy_m)
    inv = inv.set_geometry(geoms, crs=inv.crs)
    pyogrio.write_dataframe(inv, site_dir / "site.gpkg", layer="inverters", driver="GPKG")
    return str(inv["id"].iloc[0])


def move_trench(site_dir: Path, dy_m: float = 1.0) -> str:
    """Redraw the trench nearest the first inverter pad of a generated site ``dy_m`` metres
    along y (the whole line moved): the trench edit of the edit-and-regenerate measurement.
    Returns its id."""
    import pyogrio
    import shapely

    tr = pyogrio.read_dataframe(site_dir / "site.gpkg", layer="trenches")
    pad = pyogrio.read_dataframe(site_dir / "site.gpkg", layer="inverters").geometry.iloc[0]
    geoms = tr.geometry.to_numpy().copy()
    i = int(shapely.distance(geoms, pad).argmin())
    geoms[i] = shapely.affinity.translate(geoms[i], yoff=dy_m)
    tr = tr.set_geometry(geoms, crs=tr.crs)
    pyogrio.write_dataframe(tr, site_dir / "site.gpkg", layer="trenches", driver="GPKG")
    return str(tr["id"].iloc[i])


def change_strings(site_dir: Path, by: int = -1) -> str:
    """Change the string count of the sixth row of a generated site by ``by``: the row edit of
    the edit-and-regenerate measurement (strings added or removed: circuits appear or go).
    Returns the row's id."""
    import pyogrio

    rows = pyogrio.read_dataframe(site_dir / "site.gpkg", layer="rows")
    rows.loc[rows.index[5], "strings"] = int(rows["strings"].iloc[5]) + by
    pyogrio.write_dataframe(rows, site_dir / "site.gpkg", layer="rows", driver="GPKG")
    return str(rows["id"].iloc[5])


#: each process measurement of the edit-and-regenerate table is the median of this many runs
REPEATS = 5


def _cli_plan_s(site: Path, out: Path) -> float:
    """Wall time of ``routeplan plan SITE --out OUT -q`` as a new process (imports included);
    exit status 1 (some circuits fail a limit: the generator makes a few on purpose) is fine."""
    cmd = [sys.executable, "-m", "routeplan.cli", "plan", str(site), "--out", str(out), "-q"]
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    seconds = time.perf_counter() - t0
    if done.returncode not in (0, 1):
        sys.stderr.write(done.stdout + done.stderr)
        raise SystemExit(f"failed: {' '.join(cmd)}")
    return seconds


def _watch_replan_s(
    site: Path, out: Path, moves: int = REPEATS, edit: str = "pad"
) -> tuple[list, list, list]:
    """A watching process (``routeplan plan SITE --out OUT --watch``) after its first plan:
    one inverter pad moved and saved (``edit="trench"``: the trench beside it moved 0.5 m,
    back and forth; ``"strings"``: a row's strings one fewer, then back), ``moves`` times (2 s
    idle before each, as between a designer's edits); for each, the wall time from the save to
    the re-plan's summary printed (the poll that sees the change included), the time the
    process reports for the re-plan itself (from reading the site to the outputs committed)
    and the wall time from the save to the process watching again (its cache entries
    committed after the outputs and the next re-plan's baseline made)."""
    import signal

    cmd = [sys.executable, "-m", "routeplan", "plan", str(site), "--out", str(out), "--watch"]
    proc = subprocess.Popen(
        cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env={**os.environ}
    )

    def line(pattern: str) -> re.Match:
        for text in proc.stdout:
            m = re.search(pattern, text)
            if m:
                return m
        raise SystemExit("the watching process stopped: " + proc.stderr.read())

    walls, reported, ready = [], [], []
    try:
        line(r"^watching ")
        for i in range(moves):
            time.sleep(2.0)  # idle, as between a designer's edits
            if edit == "trench":
                move_trench(site, 0.5 * (-1) ** i)
            elif edit == "strings":
                change_strings(site, -1 if i % 2 == 0 else 1)
            else:
                move_pad(site)
            t0 = time.perf_counter()
            reported.append(float(line(r"planned in ([0-9.]+) s").group(1)))
            walls.append(time.perf_counter() - t0)
            line(r"^watching ")
            ready.append(time.perf_counter() - t0)
    finally:
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=120)
    return walls, reported, ready


def edit_and_replan(site_dir: Path, work: Path) -> dict:
    """The edit-and-regenerate measurement: plan a copy of the site with its cache (the full
    run, as ``routeplan plan`` does it), move one inverter pad, plan again into the same
    folder; check the re-plan's CSV files against a cold run of the edited site; then the same
    full run and re-plan as ``routeplan plan`` processes."""
    import shutil

    from routeplan.cache import PlanCache
    from routeplan.outputs.write import CSV_FILES, write_plan
    from routeplan.pipeline import plan

    site, out = work / "edit_site", work / "edit_out"
    shutil.copytree(site_dir, site)
    t0 = time.perf_counter()
    write_plan(plan(site, cache=PlanCache(out)), out)
    full_s = time.perf_counter() - t0
    pad = move_pad(site)
    cpu0 = _cpu_s()
    t0 = time.perf_counter()
    p = plan(site, cache=PlanCache(out))
    plan_s = time.perf_counter() - t0
    written = write_plan(p, out)
    replan_s = time.perf_counter() - t0
    cpu1 = _cpu_s()
    cold = work / "edit_cold"
    write_plan(plan(site), cold)
    same = all((out / n).read_bytes() == (cold / n).read_bytes() for n in CSV_FILES)

    cli_site, cli_out = work / "edit_site_cli", work / "edit_out_cli"
    shutil.copytree(site_dir, cli_site)
    cli_full = []
    for _ in range(REPEATS):  # each into a new folder: a full run
        shutil.rmtree(cli_out, ignore_errors=True)
        cli_full.append(_cli_plan_s(cli_site, cli_out))
    cli_replan = []
    for _ in range(REPEATS):
        move_pad(cli_site)
        cli_replan.append(_cli_plan_s(cli_site, cli_out))
    watch_site = work / "edit_site_watch"
    shutil.copytree(site_dir, watch_site)
    watch_walls, watch_replans, watch_ready = _watch_replan_s(watch_site, work / "edit_out_watch")
    trench_site = work / "edit_site_trench"
    shutil.copytree(site_dir, trench_site)
    _, trench_replans, _ = _watch_replan_s(trench_site, work / "edit_out_trench", edit="trench")
    strings_site = work / "edit_site_strings"
    shutil.copytree(site_dir, strings_site)
    _, strings_replans, _ = _watch_replan_s(strings_site, work / "edit_out_strings", edit="strings")
    cli_full_s, cli_replan_s = float(np.median(cli_full)), float(np.median(cli_replan))
    return {
        "watch_trench_replan_s": float(np.median(trench_replans)),
        "watch_trench_replans_s": trench_replans,
        "watch_strings_replan_s": float(np.median(strings_replans)),
        "watch_strings_replans_s": strings_replans,
        "watch_wall_s": float(np.median(watch_walls)),
        "watch_ready_s": float(np.median(watch_ready)),
        "watch_replan_s": float(np.median(watch_replans)),
        "watch_replans_s": watch_replans,
        "cli_full_runs_s": cli_full,
        "cli_replans_s": cli_replan,
        "pad": pad,
        "full_s": full_s,
        "replan_s": replan_s,
        "replan_plan_s": plan_s,
        "replan_timings": dict(p.timings_s),
        "replan_written": dict(written),
        "reused_stages": dict(p.cache.reused),
        "reuse": dataclasses.asdict(p.cache.output_reuse),
        "rows": len(p.circuits) + len(p.segments),
        "csv_same_as_cold": same,
        "cli_full_s": cli_full_s,
        "cli_replan_s": cli_replan_s,
        "replan_cpu_main_s": cpu1[0] - cpu0[0],
        "replan_cpu_children_s": cpu1[1] - cpu0[1],
    }


def _cpu_s() -> tuple[float, float]:
    """CPU seconds (user + system) so far of this process and of its finished children."""
    own = resource.getrusage(resource.RUSAGE_SELF)
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime, kids.ru_utime + kids.ru_stime


def io_floor(site_dir: Path, plan, work: Path) -> dict[str, float]:
    """Seconds to read the input layers and write the two big output layers and a CSV with
    the plain library calls: what no planner of these files can go below."""
    import pyogrio

    t: dict[str, float] = {}
    gpkg = site_dir / "site.gpkg"
    t0 = time.perf_counter()
    for name, _ in pyogrio.list_layers(gpkg):
        pyogrio.read_dataframe(gpkg, layer=name)
    t["read_layers"] = time.perf_counter() - t0
    out = work / "floor.gpkg"
    out.unlink(missing_ok=True)
    t0 = time.perf_counter()
    pyogrio.write_dataframe(plan.circuits, out, layer="circuits", driver="GPKG")
    pyogrio.write_dataframe(plan.segments, out, layer="segments", driver="GPKG")
    t["write_gpkg"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    plan.circuits.drop(columns="geometry").to_csv(work / "floor.csv", index=False)
    t["write_csv"] = time.perf_counter() - t0
    t["total"] = t["read_layers"] + t["write_gpkg"] + t["write_csv"]
    return t


def nx_routing(network, circuits, sample: int | None = None, seed: int = 0) -> dict:
    """Route ``circuits`` with networkx on the noded ``network``: one bidirectional Dijkstra
    (``nx.shortest_path``) per circuit, edges mapped back to segments and counted.

    With ``sample``, only that many circuits (a seeded random choice) are searched and the
    search time is extrapolated per circuit. Returns seconds and the largest difference of
    a route's trench length from the project's (they must agree: both are shortest paths).
    """
    import networkx as nx

    t0 = time.perf_counter()
    u, v = network.seg_u.tolist(), network.seg_v.tolist()
    w = network.seg_length_m.tolist()
    graph = nx.Graph()
    seg_of: dict[tuple[int, int], int] = {}
    for k, (a, b, length) in enumerate(zip(u, v, w, strict=True)):
        if a == b:
            continue
        key = (a, b) if a < b else (b, a)
        if key not in seg_of or length < w[seg_of[key]]:  # parallel segments: the shortest
            seg_of[key] = k
            graph.add_edge(a, b, length=length)
    build = time.perf_counter() - t0

    node = network.taps.set_index(["layer", "feature_id"])["node"]
    src = node.reindex(list(zip(circuits["from_layer"], circuits["from_id"], strict=True)))
    dst = node.reindex(list(zip(circuits["to_layer"], circuits["to_id"], strict=True)))
    src, dst = src.to_numpy(np.int64), dst.to_numpy(np.int64)
    todo = np.arange(len(circuits))
    if sample is not None and sample < len(todo):
        todo = np.sort(np.random.default_rng(seed).choice(todo, sample, replace=False))
    counts = np.zeros(len(network.segments), dtype=np.int64)
    trench_m = np.zeros(len(todo))
    t0 = time.perf_counter()
    for i, c in enumerate(todo.tolist()):
        s, d = int(src[c]), int(dst[c])
        if s == d:
            continue
        path = nx.shortest_path(graph, s, d, weight="length")
        segs = [seg_of[(a, b) if a < b else (b, a)] for a, b in itertools.pairwise(path)]
        counts[segs] += 1
        trench_m[i] = sum(w[k] for k in segs)
    search = time.perf_counter() - t0
    per = search / max(len(todo), 1)
    diff = np.abs(trench_m - circuits["trench_m"].to_numpy(float)[todo])
    return {
        "graph_build_s": build,
        "search_s": search,
        "searched": len(todo),
        "circuits": len(circuits),
        "search_all_s": per * len(circuits),  # = search_s when nothing was sampled
        "total_s": build + per * len(circuits),
        "max_length_diff_m": float(diff.max()) if len(diff) else 0.0,
    }


def project_routing_s(timings: dict[str, float]) -> float:
    """The project's routing as compared with networkx: network build + searches + the
    per-segment counts and tables (the destination assignment is left out: networkx is
    given the destinations)."""
    return sum(timings.get(f"route.{k}", 0.0) for k in ("network", "search", "tables"))


#: circuit kinds counted in the results
KINDS = ("string", "subarray", "array", "ac")


def worker_plan(site_dir: Path, work: Path, with_nx: bool, light: bool = False) -> dict:
    """Plan and write one generated site; measure; return the numbers. ``light``: the end to
    end run only (no I/O floor, no edit-and-regenerate, no networkx)."""
    from routeplan.outputs.write import write_plan
    from routeplan.pipeline import plan

    t0 = time.perf_counter()
    p = plan(site_dir)
    plan_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    written = write_plan(p, work / "out")
    write_s = time.perf_counter() - t0
    peak = _peak_gib()
    peak_child = _peak_gib(resource.RUSAGE_CHILDREN)
    result = {
        "plan_s": plan_s,
        "write_s": write_s,
        "timings": dict(p.timings_s),
        "written": dict(written),
        "peak_gib": peak,
        "peak_child_gib": peak_child,
        "map_bytes": (work / "out" / "map.html").stat().st_size,
        "circuits": {k: int((p.circuits["kind"] == k).sum()) for k in KINDS},
        "fail": {
            k: int(((p.circuits["kind"] == k) & (p.circuits["status"] == "fail")).sum())
            for k in KINDS
        },
        "segments": len(p.segments),
        "segments_over": int((p.segments["status"] != "ok").sum()),
        "inputs": len(p.inputs),
        "inputs_over": int((p.inputs["status"] != "ok").sum()),
        "nodes": int(p.routes.network.n_nodes),
    }
    if light:
        return result
    result["io_floor"] = io_floor(site_dir, p, work)
    result["edit"] = edit_and_replan(site_dir, work)
    if with_nx:
        from routeplan.pipeline import route_params
        from routeplan.routing import route_site

        # best of a few runs on each side (the plan's own run is one of the project's)
        runs = [result["timings"]]
        for _ in range(REPEAT - 1):
            r = route_site(p.site, route_params(p.design))
            runs.append({f"route.{k}": v for k, v in r.timings_s.items()})
        result["project_routing_runs_s"] = [project_routing_s(t) for t in runs]
        nx_runs = [nx_routing(p.routes.network, p.routes.circuits) for _ in range(NX_REPEAT)]
        result["nx"] = min(nx_runs, key=lambda x: x["total_s"])
        result["nx"]["runs_s"] = [x["total_s"] for x in nx_runs]
    return result


def long_route_site(mw: float, seed: int, variant: str):
    """A generated plant (in memory) whose circuits run far: ``rows_far`` sends each row to
    the combiner in its place in the block half the plant away; ``ac_one_point`` sends every
    inverter to the first transformer station."""
    import tomllib

    import layers
    from routeplan.config import parse_design
    from routeplan.synth import synth_site

    s = synth_site(mw, seed)
    frames = {k: f.copy() for k, f in s.frames.items()}
    if variant == "rows_far":
        to = frames["rows"]["to"].to_numpy(dtype=object)
        block = np.array([t.split("-")[0][2:] for t in to])  # CB<block>-<n>
        blocks = sorted(set(block))
        far = {b: blocks[(i + len(blocks) // 2) % len(blocks)] for i, b in enumerate(blocks)}
        frames["rows"]["to"] = [
            f"CB{far[b]}-{t.split('-', 1)[1]}" for b, t in zip(block, to, strict=True)
        ]
    elif variant == "ac_one_point":
        frames["inverters"]["to"] = frames["grid"]["id"].iloc[0]
    config = tomllib.loads(s.toml)
    design, problems = parse_design(config)
    assert not problems, problems
    return layers.build_site(frames, config), design


def worker_long(mw: float, seed: int, variant: str) -> dict:
    """Route a long-route variant; time the project's routing and networkx's."""
    from routeplan.pipeline import route_params
    from routeplan.routing import route_site

    site, design = long_route_site(mw, seed, variant)
    t0 = time.perf_counter()
    r = route_site(site, route_params(design))
    total = time.perf_counter() - t0
    moved = r.circuits["kind"] == ("string" if variant == "rows_far" else "ac")
    result = {
        "variant": variant,
        "mw": mw,
        "route_total_s": total,
        "timings": {f"route.{k}": v for k, v in r.timings_s.items()},
        "circuits": len(r.circuits),
        "moved": int(moved.sum()),
        "mean_route_m": float(r.circuits.loc[moved, "route_m"].mean()),
    }
    result["project_s"] = project_routing_s(result["timings"])
    sample = NX_SAMPLE if len(r.circuits) > NX_SAMPLE else None
    result["nx"] = nx_routing(r.network, r.circuits, sample=sample, seed=seed)
    return result


# --------------------------------------------------------------------------------------------
# orchestration (parent process)


def _worker(args: list[str]) -> dict:
    """Run this script as a worker in a fresh interpreter; return its JSON result."""
    cmd = [sys.executable, str(Path(__file__).resolve()), *args]
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        sys.stderr.write(done.stdout + done.stderr)
        raise SystemExit(f"worker failed: {' '.join(args)}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def machine() -> dict[str, str]:
    """What the numbers were measured on."""
    import geopandas
    import networkx
    import pandas
    import pyogrio
    import pyproj
    import scipy
    import shapely

    cpu = platform.processor() or "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return {
        "date": datetime.datetime.now(datetime.UTC).strftime("%Y-%m-%d %H:%M UTC"),
        "cores": str(os.cpu_count()),
        "cpu": cpu,
        "memory": _memory(),
        "os": f"{platform.system()} {platform.release()}",
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "pandas": pandas.__version__,
        "shapely": f"{shapely.__version__} (GEOS {shapely.geos_version_string})",
        "geopandas": geopandas.__version__,
        "pyogrio": f"{pyogrio.__version__} (GDAL {pyogrio.__gdal_version_string__})",
        "pyproj": f"{pyproj.__version__} (PROJ {pyproj.proj_version_str})",
        "networkx": networkx.__version__,
    }


def _load() -> str:
    """The system's load average over 1, 5 and 15 minutes: other work on a shared machine
    slows every stage (a load above the core count means runs wait for a core)."""
    try:
        return " / ".join(f"{x:.2f}" for x in os.getloadavg()) + " (1 / 5 / 15 min)"
    except OSError:
        return "unknown"


def _memory() -> str:
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal"):
                return f"{int(line.split()[1]) / 2**20:.1f} GiB"
    except OSError:
        pass
    return "unknown"


def _bench_plant(
    mw: float, seed: int, site_dir: Path, out: Path, topology: str, extra: list[str]
) -> dict:
    """Generate one invented plant in ``topology``, plan and write it in a fresh process, and
    return the worker's measurements with the plant's counts."""
    from routeplan.synth import generate_site

    label = f"{mw:g} MW" + ("" if topology == "central" else f" {topology}")
    t0 = time.perf_counter()
    info = generate_site(mw, seed, site_dir, topology=topology)
    gen_s = time.perf_counter() - t0
    print(f"{label}: generated in {gen_s:.1f} s; planning …", file=sys.stderr)
    r = _worker(["--worker-plan", str(site_dir), str(out), *extra])
    r.update(
        mw=mw,
        mwdc=info.mwdc,
        generate_s=gen_s,
        strings=info.strings,
        rows=info.rows,
        combiners=info.combiners,
        recombiners=info.recombiners,
        inverters=info.inverters,
        trench_features=info.trenches,
        mount=info.mount,
        topology=info.topology,
    )
    print(f"{label}: plan {r['plan_s']:.1f} s, write {r['write_s']:.1f} s, "
          f"peak {r['peak_gib']:.2f} GiB", file=sys.stderr)  # fmt: skip
    return r


def placement_bench(mw: float, seed: int, work: Path) -> dict:
    """``bench/place.py`` in a fresh process on a plant of ``mw`` (its own generated site):
    its JSON numbers."""
    out = work / "place.json"
    cmd = [
        sys.executable, str(Path(__file__).with_name("place.py")), "--mw", f"{mw:g}",
        "--seed", str(seed), "--work", str(work / "place"), "--json", str(out),
    ]  # fmt: skip
    print(f"placement search ({mw:g} MW) …", file=sys.stderr)
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    if done.returncode != 0:
        sys.stderr.write(done.stdout + done.stderr)
        raise SystemExit(f"failed: {' '.join(cmd)}")
    return json.loads(out.read_text(encoding="utf-8"))


def run(
    sizes: list[float],
    seed: int,
    work: Path,
    with_nx: bool,
    long_routes: bool,
    topologies: tuple[str, ...] = ("subarray", "string"),
    placement: bool = True,
) -> dict:

    load_start = _load()
    plants = []
    for mw in sizes:
        site_dir = work / f"site_{mw:g}MW"
        extra = ["--nx"] if with_nx else []
        plants.append(_bench_plant(mw, seed, site_dir, work / f"run_{mw:g}MW", "central", extra))
    variants = []
    if long_routes and with_nx:
        mw = max([m for m in sizes if m <= 300] or [min(sizes)])
        for variant in ("rows_far", "ac_one_point"):
            print(f"long routes ({variant}, {mw:g} MW) …", file=sys.stderr)
            variants.append(_worker(["--worker-long", f"{mw:g}", str(seed), variant]))
    others = []
    mw = max(sizes)
    for topology in [t for t in topologies if t != "central"]:
        site_dir = work / f"site_{mw:g}MW_{topology}"
        out = work / f"run_{mw:g}MW_{topology}"
        others.append(_bench_plant(mw, seed, site_dir, out, topology, ["--light"]))
    place = placement_bench(mw, seed, work) if placement else None
    return {
        "machine": {
            **machine(),
            "load average at start": load_start,
            "load average at end": _load(),
        },
        "seed": seed,
        "plants": plants,
        "variants": variants,
        "topologies": others,
        "placement": place,
    }


# --------------------------------------------------------------------------------------------
# report


def _s(x: float) -> str:
    return f"{x:.2f}"


def stage_rows(r: dict) -> list[tuple[str, float]]:
    t, w = r["timings"], r["written"]
    rows = [
        ("read + validate", t.get("read_validate", np.nan)),
        ("route (total)", t.get("route", np.nan)),
        ("· network build", t.get("route.network", np.nan)),
        ("· destinations, circuits", t.get("route.assign", np.nan)),
        ("· Dijkstra searches", t.get("route.search", np.nan)),
        ("· route tables, segment counts", t.get("route.tables", np.nan)),
        ("size (calc)", t.get("size", np.nan)),
        ("tables", t.get("tables", np.nan)),
    ]
    named = {"hash rows": "hash output rows", "csv": "write CSV", "gpkg": "write GeoPackage",
             "xlsx": "write workbook", "map": "write map.html (child process)",
             "map (wait)": "· wait for the map after the others",
             "cache_save": "save cache"}  # fmt: skip
    rows += [(named.get(k, f"write: {k}"), v) for k, v in w.items()]
    rows += [("**plan + write, end to end**", r["plan_s"] + r["write_s"])]
    return rows


def growth(plants: list[dict]) -> dict | None:
    if len(plants) < 2:
        return None
    a, b = sorted(plants, key=lambda r: r["strings"])[-2:]
    size = b["strings"] / a["strings"]
    e2e = (b["plan_s"] + b["write_s"]) / (a["plan_s"] + a["write_s"])
    compute = b["plan_s"] / a["plan_s"]
    return {"small": a["mw"], "large": b["mw"], "size": size, "end_to_end": e2e,
            "plan": compute, "limit": size * GOALS["growth_margin"]}  # fmt: skip


def report(res: dict) -> str:
    m, plants = res["machine"], res["plants"]
    out = [
        "# routeplan benchmark",
        "",
        f"Generated by `python bench/run.py` on {m['date']}: plants from "
        f"`routeplan.synth.generate_site` (seed {res['seed']}, GeoPackage), each planned and "
        "written in a fresh process (`routeplan.pipeline.plan` + "
        "`routeplan.outputs.write.write_plan`, as `routeplan plan` runs them, no cache). "
        "The map is drawn in a forked child process while the main process writes the "
        "GeoPackage, CSV files and workbook (`routeplan.parallel`), so the writers' times "
        "overlap and do not add up to the end-to-end time. "
        "Every plant is invented; the numbers are timings of a design aid, whose results must "
        "be reviewed by a qualified, licensed person.",
        "",
        "## Machine",
        "",
        "| | |",
        "|---|---|",
        *[f"| {k} | {v} |" for k, v in m.items()],
        "",
        *_busy_note(m),
        "## Plants",
        "",
        "| plant | strings | combiners | inverters | trench features | noded segments "
        "| nodes | circuits failing | segments over |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|",
    ]
    for r in plants:
        n = sum(r["circuits"].values())
        f = sum(r["fail"].values())
        out.append(
            f"| {r['mw']:g} MW ({r['mwdc']:.1f} MWdc, {r['mount']}) | {r['strings']:,} "
            f"| {r['combiners']:,} | {r['inverters']:,} | {r['trench_features']:,} "
            f"| {r['segments']:,} | {r['nodes']:,} | {f:,} of {n:,} ({100 * f / n:.1f} %) "
            f"| {r['segments_over']:,} |"
        )
    out += ["", "## Stages [s]", ""]
    head = "| stage | " + " | ".join(f"{r['mw']:g} MW" for r in plants) + " |"
    out += [head, "|---|" + "---:|" * len(plants)]
    names = [n for n, _ in stage_rows(plants[-1])]
    tables = [dict(stage_rows(r)) for r in plants]
    for name in names:
        out.append(f"| {name} | " + " | ".join(_s(t.get(name, np.nan)) for t in tables) + " |")
    out.append(
        "| peak memory (ru_maxrss) [GiB] | "
        + " | ".join(f"{r['peak_gib']:.2f}" for r in plants)
        + " |"
    )
    out.append(
        "| · largest child process (shares the parent's pages) [GiB] | "
        + " | ".join(f"{r.get('peak_child_gib', np.nan):.2f}" for r in plants)
        + " |"
    )
    out.append(
        "| map.html [MB] | " + " | ".join(f"{r['map_bytes'] / 1e6:.1f}" for r in plants) + " |"
    )
    out.append(
        "| generate the site (not planned) | "
        + " | ".join(_s(r["generate_s"]) for r in plants)
        + " |"
    )
    out += ["", "## Ratios", ""]
    out += ["### I/O floor (goal ≤ 3)", ""]
    out += [
        "Routing + sizing compute (`route` + `size` stages) ÷ the plain library calls on the "
        "same data: pyogrio read of the five input layers, pyogrio write of the `circuits` and "
        "`segments` layers to a GeoPackage, pandas CSV write of the cable schedule.",
        "",
        "| plant | route + size [s] | read [s] | write GPKG [s] | write CSV [s] | floor [s] "
        "| ratio |",
        "|---|---:|---:|---:|---:|---:|---:|",
    ]
    for r in plants:
        f = r["io_floor"]
        compute = r["timings"]["route"] + r["timings"]["size"]
        out.append(
            f"| {r['mw']:g} MW | {_s(compute)} | {_s(f['read_layers'])} | {_s(f['write_gpkg'])} "
            f"| {_s(f['write_csv'])} | {_s(f['total'])} | **{compute / f['total']:.2f}** |"
        )
    if any("nx" in r for r in plants):
        out += ["", "### Graph-library baseline (goal ≥ 2× faster at 1 GW)", ""]
        out += [
            "Project: network build (noding the trenches, tapping the equipment) + one Dijkstra "
            "search per destination + per-segment counts and route tables. networkx 3: the "
            "same noded graph (`nx.Graph`, the shortest of parallel segments), one "
            "`nx.shortest_path(G, s, t, weight='length')` (bidirectional Dijkstra) per circuit, "
            "edges mapped back to segments and counted. Both find the same route lengths "
            f"(largest difference shown). Best of {REPEAT} runs of the project's routing and "
            f"of {NX_REPEAT} of the networkx version (the long-route variants: one run each).",
            "",
            "| plant | circuits | project [s] | networkx: graph [s] | networkx: searches [s] "
            "| networkx total [s] | project faster by | max length diff [m] |",
            "|---|---:|---:|---:|---:|---:|---:|---:|",
        ]
        for r in [r for r in plants if "nx" in r] + res["variants"]:
            nx_ = r["nx"]
            proj = min(r.get("project_routing_runs_s") or [project_routing_s(r["timings"])])
            name = f"{r['mw']:g} MW"
            if "variant" in r:
                label = {
                    "rows_far": "strings: rows to combiners half the plant away",
                    "ac_one_point": "AC: every inverter to one transformer station",
                }
                name += (f", long routes, {label[r['variant']]} ({r['moved']:,} circuits, "
                         f"mean route {r['mean_route_m']:,.0f} m)")  # fmt: skip
            searched = (
                f" (timed {nx_['searched']:,}, extrapolated)"
                if nx_["searched"] < nx_["circuits"]
                else ""
            )
            out.append(
                f"| {name} | {nx_['circuits']:,} | {_s(proj)} | {_s(nx_['graph_build_s'])} "
                f"| {_s(nx_['search_all_s'])}{searched} | {_s(nx_['total_s'])} "
                f"| **{nx_['total_s'] / proj:.1f}×** | {nx_['max_length_diff_m']:.1e} |"
            )
    g = growth(plants)
    if g:
        out += ["", "### Growth (goal: no worse than linear + 15 %)", ""]
        out += [
            f"{g['large']:g} MW ÷ {g['small']:g} MW: strings ×{g['size']:.2f}, so at most "
            f"×{g['limit']:.2f}.",
            "",
            "| | ratio | within |",
            "|---|---:|---|",
            f"| plan + write, end to end | ×{g['end_to_end']:.2f} "
            f"| {'yes' if g['end_to_end'] <= g['limit'] else 'no'} |",
            f"| plan only (read … tables) | ×{g['plan']:.2f} "
            f"| {'yes' if g['plan'] <= g['limit'] else 'no'} |",
        ]
    if all("edit" in r for r in plants):
        out += ["", "### Edit and regenerate (goal ≤ 25 % of the full run)", ""]
        out += [
            "The first inverter pad of each plant moved 8 m, then planned again into the same "
            "output folder. *Full run*: the same plant planned with its cache written, as "
            "`routeplan plan` does it. In-process: plan + write after the imports. As processes: "
            "wall time of `routeplan plan SITE --out OUT -q`, interpreter start and imports "
            f"included (full: the median of {REPEATS} runs into a new folder; re-plan: the median "
            f"of {REPEATS} moves). *Watching*: a `routeplan plan SITE --out OUT --watch` process "
            f"left idle after its first plan, the pad moved and saved {REPEATS} times (2 s apart);"
            " the median re-plan as the process reports it (site read to outputs committed) and "
            "the median wall time from the save to its summary (the 0.1 s polls that see the "
            "change and see it settled included); its ratio is to the full run as a process. "
            "*Ready again*: from the save to the process watching again: the run's cache entries "
            "and the map's memo are committed after the outputs, in a second commit of the same "
            "run (the folder stays locked until then), and the next re-plan's baseline is made. "
            "*Trench edit*: another watching process, the trench nearest the first pad moved 0.5 "
            f"m (back and forth, {REPEATS} times; re-planned locally too: every route searched "
            "again, the blocks whose routes or segments change sized again); the median re-plan. "
            "*Row's strings*: another, the sixth row given one string fewer and back (circuits go"
            " and come: routed in full, the changed blocks sized again). The re-plan's CSV files "
            "are compared byte for byte with a cold run of the edited site.",
            "",
            "| plant | full run [s] | re-plan [s] | ratio | · planning [s] | process: full [s] "
            "| process: re-plan [s] | ratio | watching: re-plan [s] | ratio | save → summary [s] "
            "| save → ready again [s] | watching: trench edit [s] | ratio "
            "| watching: row's strings [s] | ratio "
            "| routes.gpkg rows rewritten | CSV chunks copied "
            "| workbook chunks copied | map tiles reused | CSVs = cold run |",
            "|---|" + "---:|" * 19 + "---|",
        ]
        for r in plants:
            e, u = r["edit"], r["edit"]["reuse"]
            chunks = u["chunks_copied"]
            csv = sum(v for k, v in chunks.items() if k.endswith(".csv"))
            out.append(
                f"| {r['mw']:g} MW | {_s(e['full_s'])} | {_s(e['replan_s'])} "
                f"| **{100 * e['replan_s'] / e['full_s']:.0f} %** | {_s(e['replan_plan_s'])} "
                f"| {_s(e['cli_full_s'])} | {_s(e['cli_replan_s'])} "
                f"| **{100 * e['cli_replan_s'] / e['cli_full_s']:.0f} %** "
                f"| {_s(e['watch_replan_s'])} "
                f"| **{100 * e['watch_replan_s'] / e['cli_full_s']:.0f} %** "
                f"| {_s(e['watch_wall_s'])} "
                f"| {_s(e['watch_ready_s'])} "
                f"| {_s(e['watch_trench_replan_s'])} "
                f"| **{100 * e['watch_trench_replan_s'] / e['cli_full_s']:.0f} %** "
                f"| {_s(e['watch_strings_replan_s'])} "
                f"| **{100 * e['watch_strings_replan_s'] / e['cli_full_s']:.0f} %** "
                f"| {u['gpkg_rows_rewritten']:,} of {e['rows']:,} | {csv:,} "
                f"| {chunks.get('cable_schedule.xlsx', -1):,} "
                f"| {u['map_tiles_reused']:,} "
                f"| {'yes' if e['csv_same_as_cold'] else '**no**'} |"
            )
        e = plants[-1]["edit"]
        t, w = e["replan_timings"], e["replan_written"]
        parts = [
            ("read + validate", t.get("read_validate")),
            ("last plan from the cache", t.get("local.baseline")),
            ("route", t.get("route")),
            ("size", t.get("size")),
            ("remedies", t.get("remedy")),
            ("tables", t.get("tables")),
            *[(k, v) for k, v in w.items()],
        ]
        local = (
            f" Planned locally: {t['local.circuits']:,.0f} circuits re-sized, "
            f"{t.get('local.whatifs', 0):.0f} remedy what-ifs re-sized from the last run's, "
            f"{t.get('local.whatifs_whole', 0):.0f} sized whole."
            if t.get("local") == 1.0
            else " Planned in full (the local re-plan did not apply)."
        )
        cpu_main, cpu_kids = e["replan_cpu_main_s"], e["replan_cpu_children_s"]
        cores = os.cpu_count() or 1
        floor = (cpu_main + cpu_kids) / cores
        out += [
            "",
            f"Re-plan of the {plants[-1]['mw']:g} MW plant, by stage [s] (the map and the "
            "cache entries in child processes, in parallel): "
            + ", ".join(f"{k} {v:.2f}" for k, v in parts if v is not None)
            + "."
            + local,
            "",
            f"Its CPU time: {cpu_main:.2f} s in the main process and {cpu_kids:.2f} s in "
            f"child processes (the map, the cache entries), {cpu_main + cpu_kids:.2f} s in "
            f"all; spread perfectly over {cores} cores that is at least {floor:.2f} s, "
            f"**{100 * floor / e['full_s']:.0f} %** of the full run.",
        ]
    big = max(plants, key=lambda r: r["strings"])
    others = res.get("topologies", [])
    if others:
        out += topology_report(big, others)
    place = res.get("placement")
    if place:
        out += placement_report(place)
    e2e = big["plan_s"] + big["write_s"]
    out += ["", "## Targets at the largest plant", ""]
    out += [
        "| target | measured | met |",
        "|---|---:|---|",
        f"| end to end ≤ 20 s | {e2e:.1f} s | {'yes' if e2e <= 20 else 'no'} |",
        *[
            f"| end to end ≤ 20 s, {r['topology']} topology "
            f"| {r['plan_s'] + r['write_s']:.1f} s "
            f"| {'yes' if r['plan_s'] + r['write_s'] <= 20 else 'no'} |"
            for r in others
        ],
        f"| peak memory ≤ 3 GiB | {big['peak_gib']:.2f} GiB | "
        f"{'yes' if big['peak_gib'] <= 3 else 'no'} |",
        f"| map.html < 30 MB | {big['map_bytes'] / 1e6:.1f} MB "
        f"({_s(big['written'].get('map', np.nan))} s to write) | "
        f"{'yes' if big['map_bytes'] < 30e6 else 'no'} |",
    ]
    if "edit" in big:
        e = big["edit"]
        ratio = e["replan_s"] / e["full_s"]
        cli = e["cli_replan_s"] / e["cli_full_s"]
        watching = e["watch_replan_s"] / e["cli_full_s"]
        verdict = "yes" if max(ratio, cli) <= 0.25 else "no"
        if verdict == "no" and watching <= 0.25:
            verdict = "in a watching process; not as a new process"
        out.append(
            f"| edit and regenerate ≤ 25 % of the full run | {100 * ratio:.0f} % in-process, "
            f"{100 * cli:.0f} % as processes, {100 * watching:.0f} % in a watching process "
            f"(of the full run as a process; a trench edit "
            f"{100 * e['watch_trench_replan_s'] / e['cli_full_s']:.0f} %, a row's strings "
            f"{100 * e['watch_strings_replan_s'] / e['cli_full_s']:.0f} %) "
            f"| {verdict} |"
        )
    if place:
        search = place["placement"]["search"]["wall_s"]
        planning = place["pad_move"]["replan_planning_cpu_s"]
        out += [
            f"| placement: {place['placement']['positions']} positions for one pad ≤ 20 s "
            f"| {search:.1f} s | {'yes' if search <= 20 else 'no'} |",
            f"| local re-plan after a pad move, planning part (read, route, size) ≤ 1 s "
            f"| {planning:.2f} s (CPU) | {'yes' if planning <= 1 else 'no'} |",
        ]
    out.append("")
    return "\n".join(out)


def placement_report(place: dict) -> list[str]:
    """The section of ``bench/place.py``'s numbers (:func:`placement_bench`)."""
    p, m = place["placement"], place["pad_move"]
    parts = ("search", "current_plan_and_setup", "local_candidates_total")
    wall = {k: p[k]["wall_s"] for k in (*parts, "best_plan_with_remedies")}
    out = ["", f"## Placement search and local re-plan at {place['mw']:g} MW", ""]
    out += [
        f"`bench/place.py` in a fresh process, on the {place['mw']:g} MW plant generated again "
        "(same seed): `routeplan place`'s search for one inverter "
        f"({p['inverter']}), every 5 m along the trenches within {p['radius_m']:g} m "
        f"({p['positions']} positions): the current position planned in full and the "
        "baseline of the local re-plans made from it, the other positions re-planned locally "
        f"and shared among {p['cores']} processes (one per core), the best position planned "
        "with its remedies (a local re-plan too, the current position's remedies computed in "
        "a child meanwhile). CPU seconds include the children's. Then the first pad moved "
        "8 m and the site read and re-planned locally in this process.",
        "",
        "| search [s] | current position + baseline [s] | candidates [s] | CPU per candidate "
        "[s] | best position with remedies [s] | largest child [GiB] |",
        "|---:|---:|---:|---:|---:|---:|",
        f"| **{wall['search']:.1f}** | {wall['current_plan_and_setup']:.2f} "
        f"| {wall['local_candidates_total']:.2f} | {p['local_candidate_mean']['cpu_s']:.3f} "
        f"| {wall['best_plan_with_remedies']:.2f} | {p.get('largest_child_gib', np.nan):.2f} |",
        "",
        "| pad move: full plan [s] | read [s] | local re-plan [s] | planning part: read, route, "
        "size (CPU) [s] | circuits sized again |",
        "|---:|---:|---:|---:|---:|",
        f"| {m['full_plan']['wall_s']:.2f} | {m['replan_read']['wall_s']:.2f} "
        f"| {m['replan']['wall_s']:.2f} | **{m['replan_planning_cpu_s']:.2f}** "
        f"| {m['circuits_sized_again']:,} of {m['circuits']:,} |",
    ]
    return out


TOPOLOGY_LABELS = {
    "central": "central: string combiners → inverter skid",
    "subarray": "subarray: string combiners → recombiners → skid",
    "string": "string: rows → string inverters",
}


def _busy_note(m: dict) -> list[str]:
    """A caution when other work kept the cores busy during the run (load above the cores)."""
    try:
        load = float(str(m.get("load average at start", "")).split(" ")[0])
        cores = int(m["cores"])
    except (KeyError, ValueError):
        return []
    if load <= cores:
        return []
    return [
        f"**The machine was shared during this run**: a load average of {load:.1f} on {cores} "
        "cores means processes often waited for a core, so every time here is longer than on "
        "an idle machine; compare the plants and topologies measured in the same run with each "
        "other rather than with another run.",
        "",
    ]


def topology_report(central: dict, others: list[dict]) -> list[str]:
    """The section comparing the largest plant in each DC topology."""
    runs = [{**central, "topology": central.get("topology", "central")}, *others]
    out = ["", f"## DC topologies at {central['mw']:g} MW", ""]
    out += [
        f"The {central['mw']:g} MW plant (seed and layout as above) generated in each topology of "
        "`routeplan synth --topology` and planned and written end to end in a fresh process. "
        "The rows, trenches and transformer stations are the same; the equipment differs.",
        "",
        "| topology | strings | combiners (recombiners) | inverters | circuits: string "
        "| sub-array | array | AC | failing | inverter inputs (over) | end to end [s] "
        "| peak [GiB] | map.html [MB] |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|",
    ]
    for r in runs:
        c, f = r["circuits"], r["fail"]
        n, bad = sum(c.values()), sum(f.values())
        inputs = r.get("inputs")
        out.append(
            f"| {TOPOLOGY_LABELS.get(r['topology'], r['topology'])} | {r['strings']:,} "
            f"| {r['combiners']:,} ({r.get('recombiners', 0):,}) | {r['inverters']:,} "
            f"| {c.get('string', 0):,} | {c.get('subarray', 0):,} | {c.get('array', 0):,} "
            f"| {c.get('ac', 0):,} | {bad:,} ({100 * bad / n:.1f} %) "
            + (f"| {inputs:,} ({r['inputs_over']:,}) " if inputs is not None else "| – ")
            + f"| **{r['plan_s'] + r['write_s']:.1f}** | {r['peak_gib']:.2f} "
            f"| {r['map_bytes'] / 1e6:.1f} |"
        )
    out += ["", "Stages [s]:", ""]
    out += ["| stage | " + " | ".join(r["topology"] for r in runs) + " |"]
    out += ["|---|" + "---:|" * len(runs)]
    tables = [dict(stage_rows(r)) for r in runs]
    names = list(dict.fromkeys(n for r in runs for n, _ in stage_rows(r)))
    for name in names:
        out.append(f"| {name} | " + " | ".join(_s(t.get(name, np.nan)) for t in tables) + " |")
    return out


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="100,300,1000", help="plant sizes [MWdc], comma list")
    parser.add_argument("--seed", type=int, default=1, help="generator seed (1)")
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("results.md"))
    parser.add_argument("--work", type=Path, help="folder for the sites and outputs (temporary)")
    parser.add_argument("--no-nx", action="store_true", help="skip the networkx baseline")
    parser.add_argument("--no-long", action="store_true", help="skip the long-route variants")
    parser.add_argument(
        "--topologies",
        default="central,subarray,string",
        help="DC topologies of the largest plant, comma list (central: the sizes' plants)",
    )
    parser.add_argument("--no-place", action="store_true", help="skip bench/place.py")
    parser.add_argument("--json", type=Path, help="also write the raw numbers as JSON")
    parser.add_argument("--worker-plan", nargs=2, metavar=("SITE", "WORK"), help=argparse.SUPPRESS)
    parser.add_argument(
        "--worker-long", nargs=3, metavar=("MW", "SEED", "V"), help=argparse.SUPPRESS
    )
    parser.add_argument("--nx", action="store_true", help=argparse.SUPPRESS)
    parser.add_argument("--light", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.worker_plan:
        site, work = map(Path, args.worker_plan)
        work.mkdir(parents=True, exist_ok=True)
        print(json.dumps(worker_plan(site, work, args.nx, args.light)))
        return
    if args.worker_long:
        mw, seed, variant = args.worker_long
        print(json.dumps(worker_long(float(mw), int(seed), variant)))
        return

    sizes = [float(s) for s in args.sizes.split(",") if s.strip()]
    start = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="routeplan-bench-") as tmp:
        work = args.work or Path(tmp)
        work.mkdir(parents=True, exist_ok=True)
        topologies = tuple(t.strip() for t in args.topologies.split(",") if t.strip())
        res = run(
            sizes, args.seed, work, not args.no_nx, not args.no_long, topologies,
            placement=not args.no_place,
        )  # fmt: skip
    text = report(res)
    text += f"Benchmark wall time: {time.perf_counter() - start:.0f} s.\n"
    args.out.write_text(text, encoding="utf-8")
    if args.json:
        args.json.write_text(json.dumps(res, indent=1), encoding="utf-8")
    print(text)


if __name__ == "__main__":
    main()
