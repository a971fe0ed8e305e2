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


@pytest.mark.parametrize(
    "run",
    [lambda work: parallel.start(work).wait(), lambda work: parallel.compute(work).result()],
    ids=["job", "value"],
)
def test_a_failed_child_runs_the_work_again_here_and_raises_here(tmp_path, run):
    calls = tmp_path / "calls"

    def work():
        with open(calls, "a") as fh:
            fh.write(f"{os.getpid()}\n")
        raise ValueError("bad input")

    with pytest.raises(ValueError, match="bad input"):
        run(work)
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


def _stamp(path):
    """A job part that writes this process's id into ``path``."""
    return lambda: path.write_text(str(os.getpid()))


def _wait_file(path, timeout_s: float = 60.0) -> None:
    end = time.monotonic() + timeout_s
    while not path.exists():
        if time.monotonic() > end:
            raise TimeoutError(path)
        time.sleep(0.01)


def test_wait_first_returns_while_the_second_part_still_runs(tmp_path):
    first, go, second = tmp_path / "first", tmp_path / "go", tmp_path / "second"

    def then():
        _wait_file(go)  # held until the parent has seen the first part done
        second.write_text(str(os.getpid()))

    job = parallel.start(_stamp(first), then=then)
    try:
        job.wait_first()
        assert first.read_text() not in ("", str(os.getpid()))  # the child wrote it
        assert not second.exists()  # the second part has not run: wait_first did not wait
        go.touch()
        job.wait()
        assert second.read_text() == first.read_text()  # the same child, after the signal
    finally:
        job.cancel()


def test_a_child_failing_before_its_signal_leaves_both_parts_to_this_process(tmp_path):
    parent = os.getpid()
    first, second = tmp_path / "first", tmp_path / "second"

    def work():
        if os.getpid() != parent:
            raise OSError("the child fails")
        first.write_text(str(os.getpid()))

    job = parallel.start(work, then=_stamp(second))
    job.wait_first()
    assert first.read_text() == str(parent) and not second.exists()
    job.wait()
    assert second.read_text() == str(parent)


def test_a_child_failing_in_its_second_part_leaves_that_part_alone_to_this_process(tmp_path):
    parent = os.getpid()
    first, second, calls = tmp_path / "first", tmp_path / "second", tmp_path / "calls"

    def work():
        with open(calls, "a") as fh:
            fh.write(f"{os.getpid()}\n")
        first.write_text(str(os.getpid()))

    def then():
        if os.getpid() != parent:
            raise OSError("the child fails")
        second.write_text(str(os.getpid()))

    job = parallel.start(work, then=then)
    job.wait_first()
    job.wait()
    assert len(calls.read_text().split()) == 1  # the first part ran once, in the child
    assert first.read_text() != str(parent) and second.read_text() == str(parent)


def test_both_parts_run_here_when_serial(tmp_path, monkeypatch):
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")
    first, second = tmp_path / "first", tmp_path / "second"
    job = parallel.start(_stamp(first), then=_stamp(second))
    job.wait_first()
    assert first.read_text() == str(os.getpid()) and not second.exists()
    job.wait()
    assert second.read_text() == str(os.getpid())


def test_wait_first_of_a_job_without_a_second_part_waits_for_it_and_runs_it_once(tmp_path):
    calls = tmp_path / "calls"

    def work():
        time.sleep(0.2)
        with open(calls, "a") as fh:
            fh.write(f"{os.getpid()}\n")

    job = parallel.start(work)
    job.wait_first()
    assert job.done and job.pid is None  # reaped
    pids = calls.read_text().split()
    assert len(pids) == 1 and pids[0] != str(os.getpid())  # once, in the child
    job.wait()
    assert len(calls.read_text().split()) == 1


# ---- values computed in a child (parallel.compute) ------------------------------------------


def test_a_value_larger_than_the_pipe_comes_back_from_the_child():
    import numpy as np

    def work():
        # 8 MB, far more than a pipe holds (64 KiB on Linux): read whole before the child is
        # reaped, or both would wait for ever
        return os.getpid(), np.arange(1_000_000, dtype=np.float64)

    pending = parallel.compute(work)
    assert pending.pid is not None
    pid, values = pending.result()
    assert pid != os.getpid()  # computed by the child
    assert np.array_equal(values, np.arange(1_000_000, dtype=np.float64))
    assert pending.result()[0] == pid  # kept: not computed again


def test_a_child_that_dies_while_writing_leaves_the_value_to_this_process():
    parent = os.getpid()

    class Dies:
        def __reduce__(self):  # pickled in the child: it dies there, halfway
            os._exit(3)

    def work():
        return Dies() if os.getpid() != parent else "computed here"

    assert parallel.compute(work).result() == "computed here"


def test_a_value_is_computed_here_when_serial(monkeypatch):
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")
    pending = parallel.compute(os.getpid)
    assert pending.pid is None
    assert pending.result() == os.getpid()


def test_cancel_stops_a_computing_child():
    pending = parallel.compute(lambda: time.sleep(600))
    pid = pending.pid
    assert pid is not None
    pending.cancel()
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)


def _alive(pid: int) -> bool:
    """Whether process ``pid`` still runs (a zombie, killed and not yet reaped by its new
    parent, does not): Linux's /proc/PID/stat, third field."""
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False


@pytest.mark.skipif(not os.path.isdir("/proc/self"), reason="reads /proc (Linux)")
def test_cancel_stops_what_the_child_started(tmp_path):
    # the map's child makes the review data in a child of its own (parallel.compute): a run
    # that fails stops the map's child, and the grandchild with it, or the grandchild would
    # keep the output folder's lock (inherited) after the run
    told = tmp_path / "grandchild"

    def work():
        pending = parallel.compute(lambda: time.sleep(600))
        told.write_text(str(pending.pid))
        time.sleep(600)

    job = parallel.start(work)
    deadline = time.monotonic() + 30
    while not told.exists() or not told.read_text():
        assert time.monotonic() < deadline, "the child did not start its own"
        time.sleep(0.01)
    grandchild = int(told.read_text())
    assert _alive(grandchild)
    job.cancel()
    deadline = time.monotonic() + 10
    while _alive(grandchild):
        assert time.monotonic() < deadline, "the grandchild still runs"
        time.sleep(0.01)


# --- spread: independent items dealt to one process per core -------------------------------


def test_spread_deals_the_items_in_turn_and_returns_them_in_order():
    me = os.getpid()
    seen: list[int] = []
    got = parallel.spread(
        lambda x: (x * x, os.getpid()),
        list(range(7)),
        workers=3,
        progress=lambda k, n: seen.append(k),
    )
    assert [v for v, _ in got] == [x * x for x in range(7)]
    pids = [p for _, p in got]
    # item j to process j mod 3: this one takes 0, 3, 6 (and says so), two children the rest
    assert pids[0] == pids[3] == pids[6] == me and seen == [0, 3, 6]
    assert pids[1] == pids[4] and pids[2] == pids[5]
    assert len({me, pids[1], pids[2]}) == 3


@pytest.mark.parametrize(("n", "workers"), [(0, 2), (1, 4), (5, 1), (5, 8)])
def test_spread_of_few_items_or_one_worker(n, workers):
    assert parallel.spread(lambda x: -x, list(range(n)), workers=workers) == [-x for x in range(n)]


def test_spread_runs_here_when_serial(monkeypatch):
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")
    assert {p for p in parallel.spread(lambda x: os.getpid(), [1, 2, 3, 4], workers=2)} == {
        os.getpid()
    }


def test_spread_raises_here_what_a_childs_item_raised(tmp_path):
    calls = tmp_path / "calls"

    def work(x):
        with open(calls, "a") as fh:
            fh.write(f"{x} {os.getpid()}\n")
        if x == 1:
            raise ValueError("item 1 is bad")
        return x

    with pytest.raises(ValueError, match="item 1 is bad"):
        parallel.spread(work, [0, 1, 2, 3], workers=2)
    # item 1 failed in the child, and again here, where its exception is raised
    by = [line.split() for line in calls.read_text().splitlines()]
    assert [p for x, p in by if x == "1"][-1] == str(os.getpid())
    assert len([x for x, _ in by if x == "1"]) == 2


def test_spread_stops_the_children_when_this_process_fails(tmp_path):
    told = tmp_path / "pids"

    def work(x):
        if x == 0:  # this process's item: fails once both children work on theirs
            t = time.perf_counter()
            while time.perf_counter() - t < 30 and (
                not told.exists() or len(told.read_text().split()) < 2
            ):
                time.sleep(0.01)
            raise RuntimeError("stop")
        with open(told, "a") as fh:
            fh.write(f"{os.getpid()}\n")
        time.sleep(600)

    t0 = time.perf_counter()
    with pytest.raises(RuntimeError, match="stop"):
        parallel.spread(work, [0, 1, 2], workers=3)
    assert time.perf_counter() - t0 < 60
    for pid in {int(p) for p in told.read_text().split()}:
        with pytest.raises(ProcessLookupError):
            os.kill(pid, 0)
