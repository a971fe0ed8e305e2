"""Writing a plan's outputs into a folder — all or nothing.

Files (the contract, see README "Outputs"): ``cable_schedule.csv``, ``trench_schedule.csv``,
``quantities.csv``, ``routes.gpkg`` (layers ``circuits``, ``segments``, ``rows``,
``equipment``), ``cable_schedule.xlsx``, ``summary.json``, ``map.html`` and ``report.html``
(:mod:`routeplan.report`), and the plan
cache (``.routeplan-cache/``). Everything is written into the output folder's work folder,
then committed (:mod:`routeplan.folder`): a failed or killed run never leaves a half-written
folder, and no file routeplan did not write is ever touched.
"""

from __future__ import annotations

import hashlib
import json
import stat
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import geopandas as gpd
import pandas as pd

from .. import CAUTION, parallel
from ..cache import (
    AUX,
    CACHE_DIR,
    STAGES,
    OutputReuse,
    digest,
    input_files,
    link_or_copy,
)
from ..folder import OutputFolder, Written, file_sha256
from ..pipeline import Plan
from ..report.basis import basis_sheets
from ..report.html import report_html
from .columns import CIRCUIT_COLUMNS, INPUT_COLUMNS, QUANTITY_COLUMNS, SEGMENT_COLUMNS
from .gpkg import GpkgLayer, update_gpkg, write_gpkg
from .reuse import HashMemo
from .schedules import Previous, Schedule, write_csv, write_workbook
from .summary_sheet import summary_rows

if TYPE_CHECKING:
    from ..map.tiles import MapMemo

FILES: tuple[str, ...] = (
    "cable_schedule.csv",
    "trench_schedule.csv",
    "quantities.csv",
    "inverter_inputs.csv",
    "routes.gpkg",
    "cable_schedule.xlsx",
    "summary.json",
    "map.html",
    "report.html",
)
#: the files ``routeplan place`` writes beside a plan's (:mod:`routeplan.placement`,
#: :mod:`routeplan.map.placement`): refused up front when a user's file has one of these names
PLACE_FILES: tuple[str, ...] = ("placement.csv", "placement.gpkg", "placement.html")
#: the CSV files, in the order of :func:`schedules`
CSV_FILES: tuple[str, ...] = (
    "cable_schedule.csv",
    "trench_schedule.csv",
    "quantities.csv",
    "inverter_inputs.csv",
)


def schedules(plan: Plan, layers: dict[str, GpkgLayer] | None = None) -> dict[str, Schedule]:
    """The schedules, for the CSVs and the workbook's sheets (by sheet name); ``layers``: the
    GeoPackage's (:func:`_gpkg_layers`), when made already, whose ``circuits`` and
    ``segments`` hold the same rows in the same order, hashed."""
    layers = layers or {}
    circuits, segments = layers.get("circuits"), layers.get("segments")
    return {
        "circuits": Schedule.of(plan.circuits, CIRCUIT_COLUMNS)
        if circuits is None
        else Schedule.of(circuits.data, CIRCUIT_COLUMNS, circuits.hashes),
        "trenches": Schedule.of(plan.segments, SEGMENT_COLUMNS)
        if segments is None
        else Schedule.of(segments.data, SEGMENT_COLUMNS, segments.hashes),
        "quantities": Schedule.of(plan.quantities, QUANTITY_COLUMNS),
        "inputs": Schedule.of(plan.inputs, INPUT_COLUMNS),
    }


def input_digest(plan: Plan) -> dict[str, str]:
    """SHA-256 of site.toml and of every file the layers were read from (see
    :func:`routeplan.cache.input_files`), by path relative to the site folder."""
    return input_files(plan.site.root, plan.site.sources, partial=True) or {}


def equipment_frame(plan: Plan) -> gpd.GeoDataFrame:
    """Combiners, inverters and grid points in one layer with a ``kind`` column."""
    parts = []
    for layer, kind in (("combiners", "combiner"), ("inverters", "inverter"), ("grid", "grid")):
        frame = plan.site.layer(layer)
        if len(frame):
            parts.append(
                gpd.GeoDataFrame(
                    {"id": frame["id"].to_numpy(), "kind": kind},
                    geometry=frame.geometry.values,
                    crs=plan.site.crs,
                )
            )
    return gpd.GeoDataFrame(pd.concat(parts, ignore_index=True), crs=plan.site.crs)


def rows_frame(plan: Plan) -> gpd.GeoDataFrame:
    """Module rows with their destination as planned (``to`` filled where it was assigned)."""
    rows = plan.site.rows
    assigned = plan.routes.assignment
    a = assigned[assigned["layer"] == "rows"].set_index("feature_id")["to_id"]
    to = rows["id"].map(a).where(lambda s: s.notna(), rows["to"])
    return gpd.GeoDataFrame(
        {
            "id": rows["id"].to_numpy(),
            "strings": rows["strings"].to_numpy(),
            "module": rows["module"].to_numpy(),
            "to": to.to_numpy(),
        },
        geometry=rows.geometry.values,
        crs=plan.site.crs,
    )


def open_output_folder(
    out_dir: Path | str,
    site_root: Path | str,
    sources: dict[str, str] | None = None,
    *,
    force: bool = False,
    also: tuple[str, ...] = (),
) -> OutputFolder:
    """Open ``out_dir`` for a plan of the site at ``site_root`` (:mod:`routeplan.folder`):
    checked before any computation, and never the site folder, a folder holding it or any
    of its input files (``sources``: the layers' specs as :func:`layers.sources.locate_layers`
    gives them; found from site.toml when None), or a folder inside an input dataset.
    ``also``: more files the run writes beside the plan's (``routeplan place``:
    :data:`PLACE_FILES`), refused up front like the plan's when a user's file has the name."""
    from layers.sources import layer_file, site_inputs, source_files

    root = Path(site_root)
    if sources is None:
        protect, _ = site_inputs(root)
    else:
        protect = [root / "site.toml"]
        for spec in sources.values():
            protect += [layer_file(root, spec), *(source_files(root, spec) or [])]
    return OutputFolder.open(
        out_dir, "plan", force=force, protect=protect, protect_root=root, expect=FILES + also
    )


def write_plan(
    plan: Plan,
    out: Path | str | OutputFolder,
    *,
    map_options: dict | None = None,
    progress: Callable[[str], None] | None = None,
    force: bool = False,
    extra: Callable[[Path], list[str]] | None = None,
) -> dict[str, float]:
    """Write every output of ``plan`` into the output folder ``out`` (an open
    :class:`~routeplan.folder.OutputFolder`, or a path opened here with ``force``), all or
    nothing, replacing the previous run's files and no others. Returns seconds per step.

    When the plan ran with a cache (:mod:`routeplan.cache`), the cache is saved with the
    outputs. When nothing that the outputs depend on changed since the last run, the last
    run's files are reused (if their bytes are still the ones written then); otherwise the
    schedules and the GeoPackage reuse the last run's unchanged rows
    (:mod:`routeplan.outputs.reuse`). ``extra(folder)`` writes more files of the same run into
    the work folder and returns their names (``routeplan place``: the candidate table); they
    are committed with the others.

    Raises
    ------
    routeplan.errors.FolderError
        When the folder cannot be used (see :meth:`routeplan.folder.OutputFolder.open`).
    """
    if isinstance(out, OutputFolder):
        return _write_into(plan, out, map_options, progress, extra)
    with open_output_folder(out, plan.site.root, plan.site.sources, force=force) as folder:
        return _write_into(plan, folder, map_options, progress, extra)


def _write_into(
    plan: Plan,
    folder: OutputFolder,
    map_options: dict | None,
    progress: Callable[[str], None] | None,
    extra: Callable[[Path], list[str]] | None = None,
) -> dict[str, float]:
    say = progress or (lambda stage: None)
    t: dict[str, float] = {}
    tmp = folder.work
    jobs: list[parallel.Job] = []
    try:
        cache = plan.cache
        key = _outputs_key(plan, map_options)
        old = cache.outputs_reusable(key, FILES) if cache is not None and key else {}
        digests: dict[str, str] = {}  # SHA-256 of the output files, where already known
        if old:
            t0 = time.perf_counter()
            for name, path in old.items():
                link_or_copy(path, tmp / name)
                digests[name] = cache.recorded_digest(name)
            (tmp / CACHE_DIR).mkdir(exist_ok=True)
            for name in AUX:
                aux = cache.output_aux_file(name)
                if aux is not None:
                    link_or_copy(aux, tmp / CACHE_DIR / aux.name)
            t["reused_outputs"] = time.perf_counter() - t0
        else:
            digests = _write_files(plan, tmp, map_options, say, t, jobs, folder)
        files = list(FILES)
        if extra is not None:
            files += extra(tmp)
        if cache is not None:
            say("save cache")
            t0 = time.perf_counter()
            cache.reused["outputs"] = bool(old)
            saved = cache.save(tmp, key, FILES, digests)
            digests.update(saved)
            files += list(saved)
            t["cache_save"] = time.perf_counter() - t0
        say("commit")
        t0 = time.perf_counter()
        folder.commit(files, digests)
        t["commit"] = time.perf_counter() - t0
    except BaseException:
        for job in jobs:
            job.cancel()
        raise
    return t


def _outputs_key(plan: Plan, map_options: dict | None) -> str | None:
    """Key of the output files (see :mod:`routeplan.cache`); None without every stage key."""
    keys = plan.cache.keys if plan.cache is not None else {}
    if not all(k in keys for k in STAGES):
        return None
    return digest(
        "outputs",
        keys["size"],
        plan.site.name,
        plan.site.config,
        input_digest(plan),
        map_options or {},
    )


def _last_output(plan: Plan, folder: OutputFolder | None, name: str) -> Path | None:
    """The last run's output file ``name`` if its bytes are still the ones the cache recorded.

    The folder's manifest records each file's SHA-256, size and modification time: a file
    whose size and time are still the recorded ones is taken as unchanged
    (:meth:`routeplan.folder.Written.matches`, the rule the folder applied when it was opened,
    as ``make`` and ``git`` do), so a large last file is not read once more to be hashed.
    Without such a record, the cache hashes the file (:meth:`PlanCache.previous_output`)."""
    cache = plan.cache
    if cache is None:
        return None
    fast = _unchanged_output(plan, folder, name)
    return fast[0] if fast is not None else cache.previous_output(name)


def _unchanged_output(
    plan: Plan, folder: OutputFolder | None, name: str
) -> tuple[Path, Written] | None:
    """The last run's file ``name`` and the folder manifest's record of it, when that record
    holds the SHA-256 the cache recorded and the file still has the recorded size and time."""
    cache = plan.cache
    if cache is None or folder is None or folder.previous is None:
        return None
    rec = folder.previous.files.get(name)
    recorded = cache.recorded_digest(name)
    if rec is None or not recorded or rec.sha256 != recorded:
        return None
    path = folder.real / name
    return (path, rec) if _same_stat(path, rec) else None


def _same_stat(path: Path, rec: Written) -> bool:
    """Whether ``path`` is a regular file of the recorded size and modification time."""
    try:
        st = path.lstat()
    except OSError:
        return False
    return stat.S_ISREG(st.st_mode) and (st.st_size, st.st_mtime_ns) == (rec.size, rec.mtime_ns)


def _previous(plan: Plan, name: str, index: dict) -> Previous:
    """The last run's file ``name`` and its index, when both are there and the file's bytes
    are the ones the cache recorded: read once and hashed (:meth:`PlanCache.previous_bytes`),
    never trusted on its size and time alone, since its pieces are copied into the new file
    (SHA-256 of the 1 GW schedules and workbook, 36 MB: about 20 ms)."""
    cache = plan.cache
    if cache is None or name not in index:
        return Previous()
    data = cache.previous_bytes(name)
    return Previous() if data is None else Previous(data, index[name])


def _write_files(
    plan: Plan,
    tmp: Path,
    map_options: dict | None,
    say: Callable[[str], None],
    t: dict[str, float],
    jobs: list[parallel.Job],
    folder: OutputFolder | None = None,
) -> dict[str, str]:
    """Write every output file of ``plan`` into the folder ``tmp`` (the map in a child process
    when it can, added to ``jobs``), with the writers' records for the next run
    (:mod:`routeplan.outputs.reuse`) when the plan has a cache; ``folder``: the output folder,
    whose manifest tells whether the last run's files are still as written. Returns the files'
    SHA-256 (with a cache: taken while the map is still being drawn)."""
    cache = plan.cache
    last = cache.output_aux("index") if cache is not None else None
    last = last if isinstance(last, dict) else {}
    index: dict = {}
    copied: dict[str, int] = {}
    say("write report")  # first: it needs only the plan, and runs while the rows are hashed
    summary = dict(plan.summary, inputs=input_digest(plan))
    report = parallel.start(lambda: _write_report(plan, summary, tmp), nice=_report_nice())
    jobs.append(report)
    rows, equipment = rows_frame(plan), equipment_frame(plan)
    t0 = time.perf_counter()
    layers = _gpkg_layers(plan, rows, equipment)  # the rows' hashes, for every writer
    t["hash rows"] = time.perf_counter() - t0
    say("draw map")
    # A watching process commits the map's memo after the outputs (PlanCache.defer): the
    # map's child writes it into the second commit's work folder once map.html is written.
    later = folder.next_work() if cache is not None and cache.defer and folder is not None else None
    drawn: list[MapMemo] = []  # in the map's child: the memo its second part saves

    def draw() -> None:
        drawn.append(_write_map(plan, tmp, map_options, rows, equipment, layers, later is None))

    def save_memo() -> None:
        if drawn and later is not None:  # else the child that drew it failed: none kept
            cache.save_aux(later, "map", drawn[0].export())

    job = parallel.start(draw, then=save_memo if later is not None else None)
    jobs.append(job)
    if later is not None:
        cache.later_jobs.append(job)

    say("write GeoPackage")
    t0 = time.perf_counter()
    gpkg = "routes.gpkg"
    old = _last_output(plan, folder, gpkg) if gpkg in last else None
    updated = update_gpkg(old, tmp / gpkg, layers, last[gpkg]) if old is not None else None
    if updated is None:
        index[gpkg] = write_gpkg(layers, tmp / gpkg)
    else:
        index[gpkg] = updated[0]
    t["gpkg"] = time.perf_counter() - t0

    say("write schedules")
    t0 = time.perf_counter()
    tables = schedules(plan, layers)
    for name, table in zip(CSV_FILES, tables.values(), strict=True):
        index[name], copied[name] = write_csv(table, tmp / name, _previous(plan, name, last))
    t["csv"] = time.perf_counter() - t0

    say("write workbook")
    t0 = time.perf_counter()
    sheets = {
        **tables,
        "summary": Schedule.of(summary_rows(summary)),
        **{
            name: Schedule.of(frame)
            for name, frame in basis_sheets(plan.design, plan.site.config, plan.site).items()
        },
        "caution": Schedule.of(pd.DataFrame({"caution": [CAUTION]})),
    }
    xlsx = "cable_schedule.xlsx"
    index[xlsx], copied[xlsx] = write_workbook(
        sheets, tmp / xlsx, _previous(plan, xlsx, last), filtered=tables
    )
    t["xlsx"] = time.perf_counter() - t0
    (tmp / "summary.json").write_text(
        json.dumps(summary, indent=2, sort_keys=False, default=_json) + "\n", encoding="utf-8"
    )
    digests: dict[str, str] = {}
    if cache is not None:  # while the map is drawn
        t0 = time.perf_counter()
        known = {n: index[n]["sha256"] for n in CSV_FILES}  # taken as they were written
        digests = {n: known.get(n) or file_sha256(tmp / n) for n in FILES if n not in _CHILD_FILES}
        t["file digests"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    report.wait()
    if cache is not None:
        digests["report.html"] = file_sha256(tmp / "report.html")
    t["report (wait)"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    job.wait_first()
    t["map (wait)"] = time.perf_counter() - t0
    stats_file = tmp / _MAP_STATS
    try:
        stats = json.loads(stats_file.read_text(encoding="utf-8"))
        t["map"], reused = float(stats["seconds"]), int(stats["reused_tiles"])
        if cache is not None:
            digests["map.html"] = str(stats["sha256"])
    except (OSError, ValueError, KeyError, TypeError):
        reused = -1
    stats_file.unlink(missing_ok=True)
    if cache is not None:
        cache.save_aux(tmp, "index", index)
        cache.output_reuse = OutputReuse(
            gpkg_rows_rewritten=-1 if updated is None else updated[1],
            chunks_copied=copied,
            map_tiles_reused=reused,
        )
    return digests


def _gpkg_layers(
    plan: Plan, rows: gpd.GeoDataFrame, equipment: gpd.GeoDataFrame
) -> dict[str, GpkgLayer]:
    """The GeoPackage's layers, with their rows' hashes (used by every writer). A process that
    keeps the last run's values (:class:`~routeplan.cache.Resident`) hashes only the values
    that changed since its last run (:class:`~routeplan.outputs.reuse.HashMemo`)."""
    resident = plan.cache.resident if plan.cache is not None else None
    memo = resident.memos.setdefault("rows", HashMemo()) if resident is not None else None

    def of(name: str, frame: gpd.GeoDataFrame, cols, key: tuple[str, ...]) -> GpkgLayer:
        return GpkgLayer.of(frame, cols, key, None if memo is None else (memo, name))

    return {
        "circuits": of("circuits", plan.circuits, CIRCUIT_COLUMNS, ("circuit_id",)),
        "segments": of("segments", plan.segments, SEGMENT_COLUMNS, ("segment_id",)),
        "rows": of("rows", rows, None, ("id",)),
        "equipment": of("equipment", equipment, None, ("kind", "id")),
    }


def _report_nice() -> int:
    """The niceness added to the report's process: 10 when this process has drawn a chart
    already (a watching process warms matplotlib up while it waits), so that the report's
    short work yields the cores to the map's and this one, which the commit waits for (1 GW
    pad-move re-plans in a watching process, median of 12: 1.93 s at 0, 1.77 s at 10); 0
    otherwise, where the report imports matplotlib first and is the longest job."""
    return 10 if "matplotlib.backends.backend_svg" in sys.modules else 0


#: the files written by child processes (:mod:`routeplan.parallel`) while the main process
#: writes the others
_CHILD_FILES = ("map.html", "report.html")


def _write_report(plan: Plan, summary: dict, tmp: Path) -> None:
    """Write ``report.html``: the design basis and results, the worked calculations of each
    kind's governing circuits and the charts (:mod:`routeplan.report`); with a cache, the
    charts drawn from the same data as last run's are taken from its memo
    (:class:`~routeplan.report.plots.ChartMemo`, kept for the next run)."""
    from ..report.plots import ChartMemo, plan_plots
    from ..report.worked import worked_calculation

    cache = plan.cache
    memo = ChartMemo.load(cache.output_aux("report")) if cache is not None else ChartMemo()
    worked = worked_calculation(plan.circuits, plan.segments, plan.design).html
    charts = plan_plots(plan.circuits, plan.segments, plan.design, memo).html
    html = report_html(plan, summary, worked=worked, charts=charts)
    (tmp / "report.html").write_text(html, encoding="utf-8")
    if cache is not None:
        cache.save_aux(tmp, "report", memo.export())


#: the map job's time and count of reused tiles, for the parent (removed once read)
_MAP_STATS = ".map-stats.json"


def _write_map(
    plan: Plan,
    tmp: Path,
    map_options: dict | None,
    rows: gpd.GeoDataFrame,
    equipment: gpd.GeoDataFrame,
    layers: dict[str, GpkgLayer],
    save_memo: bool = True,
) -> MapMemo:
    """Write ``map.html`` (and, with a cache and ``save_memo``, the map's memo for the next
    run, :meth:`~routeplan.cache.PlanCache.save_aux`); the memo."""
    from routeplan.map.page import render_map_bytes
    from routeplan.map.tiles import MapMemo

    t0 = time.perf_counter()
    cache = plan.cache
    memo = MapMemo.load(cache.output_aux("map")) if cache is not None else MapMemo()
    data = render_map_bytes(
        plan.circuits,
        plan.segments,
        rows,
        equipment,
        site_name=plan.site.name,
        memo=memo,
        hashes={name: layer.hashes for name, layer in layers.items()},
        geometry_hashes={name: layer.geometry_h for name, layer in layers.items()},
        drop_limits_pct=dict(plan.design.drop_pct),
        **(map_options or {}),
    )
    (tmp / "map.html").write_bytes(data)
    if cache is not None and save_memo:
        cache.save_aux(tmp, "map", memo.export())
    stats = {
        "seconds": time.perf_counter() - t0,
        "reused_tiles": memo.reused_tiles,
        "sha256": hashlib.sha256(data).hexdigest(),
    }
    (tmp / _MAP_STATS).write_text(json.dumps(stats), encoding="utf-8")
    return memo


def _json(value):
    if hasattr(value, "item"):
        return value.item()
    raise TypeError(f"not JSON serialisable: {type(value)}")
