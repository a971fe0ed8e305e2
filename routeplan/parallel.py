"""Work that writes files, run beside the main process on another core (POSIX ``fork``).

Writing a plan's outputs is several independent jobs (the map, the cache entries, the
GeoPackage, the schedules). A forked child sees the parent's data without copying or
pickling it, so a job that only writes files can run in one: :func:`start` forks, the child
runs the job and exits, :meth:`Job.wait` reaps it. A value the parent needs back (a plan's
remedies, computed while it builds the tables) comes through a pipe, pickled
(:func:`compute`, :meth:`Pending.result`). A job whose child failed (or that could not
be forked: no ``fork`` on this system, or ``ROUTEPLAN_SERIAL`` set) is run again in the main
process, so its exceptions are raised there as usual and nothing depends on the child.

The child touches no lock another thread might hold: it writes its own files, never the
terminal (it leaves with ``os._exit``, without flushing the parent's buffers). A child may
reproject with pyproj: PROJ (8.2 and later; pyproj's wheels carry 9.x) reads its database safely
across ``fork`` (PROJ pull request 2845); the children never use GDAL.
"""

from __future__ import annotations

import contextlib
import os
import pickle
import sys
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any


@dataclass
class Job:
    """A job running in a child process (``pid``), or to run in this one (``pid`` None).

    ``then``: a second part, run after ``work`` in the same child once the child has said
    that ``work`` is done (:meth:`wait_first` returns then, while ``then`` still runs)."""

    work: Callable[[], None]
    pid: int | None = None
    done: bool = False
    then: Callable[[], None] | None = None
    #: the read end of the pipe the child writes one byte to once ``work`` is done
    ready_fd: int | None = None
    first_done: bool = False

    def _read_signal(self) -> None:
        """Read the child's byte (blocks until it comes or the child has exited)."""
        if self.ready_fd is not None:
            if os.read(self.ready_fd, 1):
                self.first_done = True
            os.close(self.ready_fd)
            self.ready_fd = None

    def wait_first(self) -> None:
        """Return once ``work`` is done (in the child, which may still run ``then``); run it
        here if the child failed before. A job without ``then``: :meth:`wait`."""
        if self.then is None:
            self.wait()
            return
        if self.first_done or self.done:
            return
        self._read_signal()
        if self.first_done:
            return
        if self.pid is not None:  # the child failed before the signal: reap it
            os.waitpid(self.pid, 0)
            self.pid = None
        self.work()
        self.first_done = True

    def wait(self) -> None:
        """Wait for the child; run here what it failed to do or never ran."""
        if self.done:
            return
        ok = False
        if self.pid is not None:
            _, status = os.waitpid(self.pid, 0)
            ok = os.waitstatus_to_exitcode(status) == 0
            self.pid = None
        self._read_signal()
        if not ok:
            if not self.first_done:
                self.work()
                self.first_done = True
            if self.then is not None:
                self.then()
        self.done = True

    def cancel(self) -> None:
        """Stop the child (the job's files are then unfinished) and reap it."""
        if self.pid is not None:
            _kill(self.pid)
            self.pid = None
        if self.ready_fd is not None:
            os.close(self.ready_fd)
            self.ready_fd = None
        self.done = True


def start(work: Callable[[], None], nice: int = 0, then: Callable[[], None] | None = None) -> Job:
    """Start ``work`` in a forked child; where that is not possible it runs at ``wait()``.
    ``nice``: added to the child's niceness (:func:`os.nice`), for a job the others should
    not wait for while they compete for the cores. ``then``: run in the child after
    ``work``, once the child has told the parent that ``work`` is done (:meth:`Job.wait_first`:
    e.g. a file the parent waits for, then a record it can commit later)."""
    job = Job(work, then=then)
    read_fd, write_fd = os.pipe() if then is not None else (None, None)
    pid = _fork(group=True)
    if pid is None:
        if read_fd is not None:
            os.close(read_fd)
            os.close(write_fd)
        return job
    if pid == 0:  # the child
        code = 1
        try:
            if nice:
                os.nice(nice)
            work()
            if then is not None:
                os.close(read_fd)
                os.write(write_fd, b"1")
                os.close(write_fd)
                then()
            code = 0
        finally:
            os._exit(code)
    job.pid = pid
    if write_fd is not None:
        os.close(write_fd)
        job.ready_fd = read_fd
    return job


def _fork(group: bool) -> int | None:
    """:func:`os.fork` (0 in the child, the child's pid in the parent), the standard streams
    flushed first; None where there is no child: no ``fork`` on this system,
    ``ROUTEPLAN_SERIAL`` set, or the fork failed.

    ``group``: the child leads a process group of its own (set by both, as shells do, so
    that it is set whichever runs first), which the children it forks for values
    (:func:`compute`, ``group=False``) join: a job's child is stopped with all it started
    (:func:`_kill`). The map's child makes its review data in a child of its own; left
    running, that one would keep the output folder's lock (inherited) after its run."""
    if not hasattr(os, "fork") or os.environ.get("ROUTEPLAN_SERIAL"):
        return None
    sys.stdout.flush()
    sys.stderr.flush()
    try:
        with warnings.catch_warnings():  # Python 3.12+ warns of fork with threads (see above)
            warnings.simplefilter("ignore", DeprecationWarning)
            pid = os.fork()
    except OSError:
        return None
    if group:  # where the other has set it already (or the child has exited): nothing to do
        with contextlib.suppress(OSError):
            os.setpgid(0 if pid == 0 else pid, 0 if pid == 0 else pid)
    return pid


def _kill(pid: int) -> None:
    """Stop the child ``pid`` and every process it started (its process group, see
    :func:`_fork`; the child alone where it leads none: a :func:`compute` child), and reap
    it."""
    try:
        os.killpg(pid, 9)
    except OSError:
        with contextlib.suppress(OSError):
            os.kill(pid, 9)
    with contextlib.suppress(OSError):
        os.waitpid(pid, 0)


@dataclass
class Pending:
    """A value computed by ``work`` in a child process (``pid``, its pickle coming through the
    pipe ``fd``), or to compute in this one (``pid`` None)."""

    work: Callable[[], Any]
    pid: int | None = None
    fd: int | None = None
    done: bool = False
    value: Any = None

    def result(self) -> Any:
        """The value: the child's, read whole before the child is reaped (it may be larger
        than the pipe holds); ``work()`` run here where the child failed or never ran, so that
        its exceptions are raised here as usual. Kept for later calls."""
        if self.done:
            return self.value
        ok, value = False, None
        if self.fd is not None:
            with os.fdopen(self.fd, "rb") as fh:
                data = fh.read()
            self.fd = None
            try:
                ok, value = True, pickle.loads(data)
            except Exception:  # a child that died while writing: an incomplete pickle
                ok = False
        if self.pid is not None:
            _, status = os.waitpid(self.pid, 0)
            ok = ok and os.waitstatus_to_exitcode(status) == 0
            self.pid = None
        if not ok:
            value = self.work()
        self.value, self.done = value, True
        return value

    def cancel(self) -> None:
        """Stop the child and reap it (its value is not needed); nothing to do once the value
        was taken."""
        if self.pid is not None:
            _kill(self.pid)
            self.pid = None
        if self.fd is not None:
            os.close(self.fd)
            self.fd = None
        self.done = True


def compute(work: Callable[[], Any]) -> Pending:
    """Start computing ``work()`` in a forked child, whose value :meth:`Pending.result` returns
    (pickled through a pipe: ``work`` must return a picklable value, and whatever else it
    changes stays in the child); where forking is not possible or ``ROUTEPLAN_SERIAL`` is set,
    it is computed by :meth:`Pending.result`, here."""
    pending = Pending(work)
    read_fd, write_fd = os.pipe()
    pid = _fork(group=False)
    if pid is None:
        os.close(read_fd)
        os.close(write_fd)
        return pending
    if pid == 0:  # the child
        code = 1
        try:
            os.close(read_fd)
            data = pickle.dumps(work(), protocol=pickle.HIGHEST_PROTOCOL)
            with os.fdopen(write_fd, "wb") as fh:
                fh.write(data)
            code = 0
        finally:
            os._exit(code)
    os.close(write_fd)
    pending.pid, pending.fd = pid, read_fd
    return pending


def cores() -> int:
    """The cores this process may run on (its CPU affinity where the system tells it)."""
    if hasattr(os, "sched_getaffinity"):
        return max(1, len(os.sched_getaffinity(0)))
    return max(1, os.cpu_count() or 1)


def spread(
    work: Callable[[Any], Any],
    items: list,
    workers: int | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> list:
    """``[work(x) for x in items]``, the items dealt in turn to ``workers`` processes (this
    one and forked children: :func:`compute`; default :func:`cores`), so that items of
    unequal cost in a row spread evenly. The values come back in the items' order. Each
    ``work(x)`` must not depend on another's side effects (a child's stay in the child).
    ``progress(k, n)``: called here before this process's items, ``k`` the item's position
    in ``items`` (the children, working alongside, are about as far). A child that fails has
    its items computed here again (:meth:`Pending.result`), so that its exception is raised
    here; if this process's own items raise, the children are stopped."""
    n = len(items)
    k = max(1, min(workers if workers is not None else cores(), n))

    def share(w: int) -> list:
        return [work(items[j]) for j in range(w, n, k)]

    pending = [compute(lambda w=w: share(w)) for w in range(1, k)]
    try:
        own = []
        for j in range(0, n, k):
            if progress:
                progress(j, n)
            own.append(work(items[j]))
        shares = [own] + [p.result() for p in pending]
    except BaseException:
        for p in pending:
            p.cancel()
        raise
    out: list = [None] * n
    for w, values in enumerate(shares):
        out[w::k] = values
    return out
