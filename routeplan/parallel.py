"""Work that writes files, run beside the main process on another core (POSIX ``fork``).

Writing a plan's outputs is several independent jobs (the map, the cache entries, the
GeoPackage, the schedules). A forked child sees the parent's data without copying or
pickling it, so a job that only writes files can run in one: :func:`start` forks, the child
runs the job and exits, :meth:`Job.wait` reaps it. A job whose child failed (or that could not
be forked: no ``fork`` on this system, or ``ROUTEPLAN_SERIAL`` set) is run again in the main
process, so its exceptions are raised there as usual and nothing depends on the child.

The child touches no lock another thread might hold: it writes its own files, never the
terminal (it leaves with ``os._exit``, without flushing the parent's buffers). A child may
reproject with pyproj: PROJ (8.2 and later; pyproj's wheels carry 9.x) reads its database safely
across ``fork`` (PROJ pull request 2845); the children never use GDAL.
"""

from __future__ import annotations

import os
import sys
import warnings
from collections.abc import Callable
from dataclasses import dataclass


@dataclass
class Job:
    """A job running in a child process (``pid``), or to run in this one (``pid`` None)."""

    work: Callable[[], None]
    pid: int | None = None
    done: bool = False

    def wait(self) -> None:
        """Wait for the child; run the job here if it failed or never ran."""
        if self.done:
            return
        ok = False
        if self.pid is not None:
            _, status = os.waitpid(self.pid, 0)
            ok = os.waitstatus_to_exitcode(status) == 0
            self.pid = None
        if not ok:
            self.work()
        self.done = True

    def cancel(self) -> None:
        """Stop the child (the job's files are then unfinished) and reap it."""
        if self.pid is not None:
            try:
                os.kill(self.pid, 9)
                os.waitpid(self.pid, 0)
            except OSError:
                pass
            self.pid = None
        self.done = True


def start(work: Callable[[], None], nice: int = 0) -> Job:
    """Start ``work`` in a forked child; where that is not possible it runs at ``wait()``.
    ``nice``: added to the child's niceness (:func:`os.nice`), for a job the others should
    not wait for while they compete for the cores."""
    job = Job(work)
    if not hasattr(os, "fork") or os.environ.get("ROUTEPLAN_SERIAL"):
        return job
    sys.stdout.flush()
    sys.stderr.flush()
    try:
        with warnings.catch_warnings():  # Python 3.12+ warns of fork with threads (see above)
            warnings.simplefilter("ignore", DeprecationWarning)
            pid = os.fork()
    except OSError:
        return job
    if pid == 0:  # the child
        code = 1
        try:
            if nice:
                os.nice(nice)
            work()
            code = 0
        finally:
            os._exit(code)
    job.pid = pid
    return job
