"""Jobs in forked children (routeplan.parallel): their files, failures and fallbacks."""

from __future__ import annotations

import contextlib
import os
import time

import pytest

from routeplan import parallel

pytestmark = pytest.mark.skipif(not hasattr(os, "fork"), reason="fork: POSIX only")


def test_a_job_runs_in_a_child_and_its_file_is_there_after_wait(tmp_path):
    out = tmp_path / "x.txt"
    job = parallel.start(lambda: out.write_text(str(os.getpid())))
    assert job.pid is not None and job.pid != os.getpid()
    job.wait()
    assert out.read_text() != str(os.getpid())  # written by the child


def test_a_failed_child_runs_the_job_again_here_and_raises_here(tmp_path):
    calls = tmp_path / "calls"

    def work():
        with open(calls, "a") as fh:
            fh.write(f"{os.getpid()}\n")
        raise ValueError("bad input")

    job = parallel.start(work)
    with pytest.raises(ValueError, match="bad input"):
        job.wait()
    pids = calls.read_text().split()
    assert len(pids) == 2 and pids[1] == str(os.getpid()) and pids[0] != pids[1]


def test_serial_when_asked(tmp_path, monkeypatch):
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")
    out = tmp_path / "x.txt"
    job = parallel.start(lambda: out.write_text(str(os.getpid())))
    assert job.pid is None and not out.exists()  # runs at wait, here
    job.wait()
    assert out.read_text() == str(os.getpid())


def test_cancel_stops_the_child(tmp_path):
    out = tmp_path / "late.txt"

    def slow():
        time.sleep(600)
        out.write_text("too late")

    job = parallel.start(slow)
    pid = job.pid
    assert pid is not None
    try:
        job.cancel()
        with pytest.raises(ProcessLookupError):
            os.kill(pid, 0)  # killed and reaped: no such process any more
        assert job.pid is None
        job.wait()  # nothing left to do
        assert not out.exists()
    finally:
        with contextlib.suppress(ProcessLookupError, ChildProcessError):
            os.kill(pid, 9)  # a child cancel left running must not outlive the test
            os.waitpid(pid, 0)


def test_a_nice_job_runs_at_a_lower_priority_and_this_process_keeps_its_own(tmp_path):
    out = tmp_path / "nice.txt"
    mine = os.nice(0)  # os.nice(0) returns the process's niceness without changing it
    job = parallel.start(lambda: out.write_text(str(os.nice(0))), nice=5)
    job.wait()
    assert int(out.read_text()) == min(mine + 5, 19)  # POSIX: niceness stops at 19
    assert os.nice(0) == mine


def test_the_report_yields_the_cores_only_once_its_charts_are_warm():
    """A new process's report imports matplotlib first (the longest job: not niced); after
    the watching process's warm-up it is short and yields to the map and the main process."""
    import subprocess
    import sys

    code = (
        "import routeplan.outputs.write as w; print(w._report_nice()); "
        "from routeplan.report.plots import warm_up; warm_up(); print(w._report_nice())"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.split() == ["0", "10"]
