"""Planning again whenever the site's files change: ``routeplan plan SITE --out DIR --watch``.

A designer moves a pad or redraws a trench in a GIS and saves; the process that watches the
site folder sees the files change and plans into the same output folder again, as
``routeplan plan`` would (the same outputs, byte for byte), without the work a new process
repeats: starting the interpreter and importing the libraries, and reading, checking and
decoding the last run's cache entries — it keeps the last run's values in memory
(:class:`routeplan.cache.Resident`), so a move of combiners or inverters is re-planned
locally from the plan in memory (:func:`routeplan.localplan.from_cache`).

What is watched: site.toml and every file a layer is read from
(:func:`layers.sources.source_files`; the layer's file alone when they cannot all be listed),
by size and modification time, read again at every poll (a layer added in site.toml is
watched from then on). A change is planned once the files have stayed the same for one more
poll (a save that writes several files, or writes one in steps, is planned when it is done).
A change made while a plan runs is seen by the next poll and planned after it.

Each run opens the output folder again, as a new ``routeplan plan`` would: a user's file in
it is never touched, and a run that fails on bad input writes nothing (the last outputs stay).

What the designer waits for comes first: a run commits its outputs (the same files a new
``routeplan plan`` writes, all or nothing) and returns; its new cache entries and the map's
memo (which the map's process writes once map.html is written) are committed just after, in a
second commit of the same run (:meth:`Watcher.settle`, at the start of :meth:`Watcher.prepare`
and of the next run), the folder locked throughout, so no other run writes it in between. A
process stopped between the two leaves the outputs committed and a cache without those
entries: the next run plans what they held afresh. (A 1 GW pad move: outputs committed in
1.3 s instead of 1.8 s, medians of 5; the second commit about 0.4 s more, while the process
waits.)
"""

from __future__ import annotations

import importlib
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from layers.sources import SITE_TOML, layer_file, locate_layers, read_config, source_files

from .cache import PlanCache, Resident
from .config import DesignConfig
from .errors import FolderError
from .folder import OutputFolder
from .localplan import last_baseline
from .outputs.write import open_output_folder, write_plan
from .pipeline import Plan
from .pipeline import plan as run_plan
from .report.plots import warm_up

__all__ = ["Watcher", "site_state"]

#: one watched file: (path, size in bytes, modification time in ns); size -1 when missing
FileState = tuple[str, int, int]


def site_state(root: Path | str) -> tuple[FileState, ...]:
    """Size and modification time of site.toml and of every file the site's layers are read
    from (see the module docstring), sorted by path."""
    root = Path(root)
    paths = {root / SITE_TOML}
    config, problems = read_config(root)
    if not problems:
        sources, _ = locate_layers(root, config)
        for spec in sources.values():
            files = source_files(root, spec)
            paths.update(files if files is not None else [layer_file(root, spec)])
    state = []
    for path in sorted(paths):
        try:
            st = path.stat()
            state.append((str(path), st.st_size, st.st_mtime_ns))
        except OSError:
            state.append((str(path), -1, 0))
    return tuple(state)


@dataclass
class Watcher:
    """Plans ``site`` into ``out_dir`` (:meth:`run`) and waits for its files to change
    (:meth:`wait`), keeping the last run's cache values in memory between runs.

    ``map_options`` and ``force`` as for :func:`routeplan.outputs.write.write_plan`;
    ``use_cache=False`` plans every run from scratch (nothing kept)."""

    site: Path
    out_dir: Path
    map_options: dict | None = None
    force: bool = False
    use_cache: bool = True
    resident: Resident = field(default_factory=Resident)
    #: the site's files as the last run (or :meth:`wait`) saw them
    state: tuple[FileState, ...] = ()
    #: the last run's writing, by step [s] (:func:`~routeplan.outputs.write.write_plan`)
    written: dict[str, float] = field(default_factory=dict)
    #: the last run's folder, still locked, and its cache, until :meth:`settle`
    _pending: tuple[OutputFolder, PlanCache | None] | None = field(
        default=None, init=False, repr=False
    )

    def run(self, progress: Callable[[str], None] | None = None) -> tuple[Plan, float]:
        """Plan the site as it is now and write every output (all or nothing); the plan and
        its wall time [s], to the outputs committed. Raises as ``routeplan plan`` fails (bad
        input, an unusable folder, a file system error): nothing is written then.

        The run's new cache entries are packed and committed after the outputs
        (:meth:`settle`, the folder kept locked until then): the designer waits for the
        outputs, not for the cache, which the process writes while it waits for the next
        edit (:meth:`prepare` settles first; so does the next run)."""
        self.settle()
        t0 = time.perf_counter()
        self.state = site_state(self.site)  # before reading: a save during the run is seen
        folder = open_output_folder(self.out_dir, self.site, force=self.force)
        try:
            cache = None
            if self.use_cache:
                cache = PlanCache(folder, resident=self.resident, defer=True)
            plan = run_plan(self.site, progress=progress, cache=cache)
            self.written = write_plan(plan, folder, progress=progress, map_options=self.map_options)
        except BaseException:
            folder.close()
            raise
        seconds = time.perf_counter() - t0
        self._pending = (folder, cache)
        return plan, seconds

    def settle(self) -> None:
        """Finish the last run: commit its deferred cache entries
        (:meth:`routeplan.cache.PlanCache.save_deferred`, a second commit that keeps the
        outputs) and release the folder, then keep the cache's values in memory for the next
        run. A failure there (a full disk, say) leaves the outputs committed and the cache
        without those entries: the next run plans what they held afresh."""
        if self._pending is None:
            return
        folder, cache = self._pending
        self._pending = None
        t0 = time.perf_counter()
        kept = cache
        try:
            if cache is not None and cache.deferred:
                folder.follow_up()
                written = cache.save_deferred(folder.work)
                folder.commit(written, written, keep_others=True)
        except (OSError, FolderError):
            kept = None
        finally:
            if cache is not None:
                cache.cancel_deferred()
            folder.close()
        self.written["cache (after the outputs)"] = time.perf_counter() - t0
        if kept is not None and not kept.bypassed:
            self.resident.keep(kept)

    def close(self) -> None:
        """Release the last run's folder without waiting for its deferred cache entries
        (stopping): its outputs stay committed, its cache without them."""
        if self._pending is not None:
            folder, cache = self._pending
            self._pending = None
            if cache is not None:
                cache.cancel_deferred()
            folder.close()

    def prepare(self, design: DesignConfig) -> None:
        """Ready what the next run needs while waiting for an edit (the last run planned under
        ``design``): the last plan as the baseline of a local re-plan
        (:func:`routeplan.localplan.last_baseline`), matplotlib loaded for the report's
        charts (:func:`routeplan.report.plots.warm_up`), the map's modules imported and the
        map's and the report's memos read (:meth:`~routeplan.cache.Resident.load_aux`): the
        report and the map are drawn in processes forked from this one, which then do not
        import or read them again. The last run is settled first (:meth:`settle`)."""
        self.settle()
        if self.use_cache:
            cache = PlanCache(self.out_dir, resident=self.resident)
            last_baseline(cache, design)
            self.resident.load_aux(cache, ("map", "report"))
        warm_up()
        importlib.import_module("routeplan.map.page")

    def wait(self, interval_s: float = 0.1, sleep: Callable[[float], None] = time.sleep) -> None:
        """Return once the site's files differ from :attr:`state` and have stayed the same
        for one more poll ``interval_s`` [s] later."""
        while True:
            sleep(interval_s)
            now = site_state(self.site)
            if now == self.state:
                continue
            sleep(interval_s)
            if site_state(self.site) == now:
                return
