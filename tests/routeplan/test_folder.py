"""Output folders (:mod:`routeplan.folder`): routeplan never deletes, moves or overwrites a file
it did not write; path problems are one line, exit 2, before any computation; a folder holds
one complete run whatever instant a run is killed at; one run at a time; the user's umask;
a folder that is a symbolic link is written through.

Every user file below is checked byte for byte (``hashlib``) after the command."""

from __future__ import annotations

import errno
import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan import folder as folder_mod
from routeplan.cache import CACHE_DIR
from routeplan.cli import app
from routeplan.folder import MANIFEST, WORK_PREFIX, OutputFolder
from routeplan.outputs.write import FILES
from tests.conftest import write_site

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[2]


def snapshot(folder: Path) -> dict[str, str]:
    """SHA-256 of every file under ``folder`` (hashlib), by relative path."""
    return {
        p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(folder.rglob("*"))
        if p.is_file()
    }


def plan(site: Path, out: Path | str, *args: str):
    return runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", *args])


def one_error_line(result) -> str:
    """The single stderr line of a failed command (no traceback)."""
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1, result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert lines[0].startswith("error: ")
    return lines[0]


def assert_complete(out: Path) -> dict:
    """``out`` holds one complete run: every file its manifest lists has the recorded SHA-256
    (recomputed with hashlib), and no work folder is left. Returns the manifest."""
    manifest = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
    for name, rec in manifest["files"].items():
        data = (out / name).read_bytes()
        assert hashlib.sha256(data).hexdigest() == rec["sha256"], name
        assert len(data) == rec["size"], name
    assert not list(out.glob(f"{WORK_PREFIX}*"))
    return manifest


@pytest.fixture
def site(tmp_path: Path) -> Path:
    return write_site(tmp_path / "site")


@pytest.fixture
def documents(tmp_path: Path) -> Path:
    """A folder of a user's documents (one nested), none of them routeplan's."""
    docs = tmp_path / "documents"
    (docs / "letters").mkdir(parents=True)
    (docs / "report.docx").write_bytes(b"PK\x03\x04 a user's report")
    (docs / "letters" / "client.txt").write_text("Dear client", encoding="utf-8")
    (docs / ".hidden-notes").write_text("mine", encoding="utf-8")
    return docs


# -- a folder routeplan did not write ------------------------------------------------------


def test_a_folder_of_documents_is_refused_and_untouched(site, documents):
    before = snapshot(documents)
    result = plan(site, documents)
    assert result.exit_code == 2
    line = one_error_line(result)
    assert str(documents) in line and "not empty and was not written by routeplan" in line
    assert "--force" in line
    assert snapshot(documents) == before
    assert not list(documents.glob(".routeplan*"))  # nothing of routeplan's left


def test_force_writes_beside_the_documents_and_touches_nothing_else(site, documents):
    before = snapshot(documents)
    result = plan(site, documents, "--force")
    assert result.exit_code in (0, 1), result.output
    after = snapshot(documents)
    assert {k: after[k] for k in before} == before  # every document as it was
    assert set(FILES) <= set(after)
    manifest = assert_complete(documents)
    assert not set(manifest["files"]) & set(before)  # the manifest claims none of them
    again = plan(site, documents)  # now a routeplan folder: no --force needed
    assert again.exit_code in (0, 1), again.output
    assert {k: snapshot(documents)[k] for k in before} == before


def test_a_file_named_like_an_output_is_never_replaced_even_with_force(site, documents):
    (documents / "cable_schedule.csv").write_text("my own schedule", encoding="utf-8")
    before = snapshot(documents)
    for args in ((), ("--force",)):
        result = plan(site, documents, *args)
        assert result.exit_code == 2
        line = one_error_line(result)
        assert ("'cable_schedule.csv'" in line) == bool(args), line
        assert snapshot(documents) == before


def test_an_edited_output_is_kept_unless_forced(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    (out / "quantities.csv").write_text("my edits", encoding="utf-8")
    result = plan(site, out)
    assert result.exit_code == 2
    assert "'quantities.csv' was changed after routeplan wrote it" in one_error_line(result)
    assert (out / "quantities.csv").read_text(encoding="utf-8") == "my edits"
    assert plan(site, out, "--force").exit_code in (0, 1)
    assert (out / "quantities.csv").read_text(encoding="utf-8") != "my edits"
    assert_complete(out)


def test_a_users_file_in_an_output_folder_survives_every_run(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    (out / "notes.txt").write_text("site visit notes", encoding="utf-8")
    (out / CACHE_DIR / "keep.me").write_text("mine too", encoding="utf-8")
    for args in ((), ("--no-cache",), ()):
        assert plan(site, out, *args).exit_code in (0, 1)
    assert (out / "notes.txt").read_text(encoding="utf-8") == "site visit notes"
    assert (out / CACHE_DIR / "keep.me").read_text(encoding="utf-8") == "mine too"
    assert_complete(out)


def test_nothing_is_written_beside_the_output_folder(site, tmp_path):
    """No temporary or backup folder beside DIR (a user's folder named like an old backup,
    ``.out.old``, is never touched)."""
    (tmp_path / ".out.old").mkdir()
    (tmp_path / ".out.old" / "precious.txt").write_text("keep", encoding="utf-8")
    siblings = snapshot(tmp_path / ".out.old")
    before = {p.name for p in tmp_path.iterdir()}
    for args in ((), ()):
        assert plan(site, tmp_path / "out", *args).exit_code in (0, 1)
    assert {p.name for p in tmp_path.iterdir()} == before | {"out"}
    assert snapshot(tmp_path / ".out.old") == siblings


def test_a_manifest_of_another_command_is_refused(tmp_path, site):
    from routeplan.synth import generate_site

    gen = tmp_path / "gen"
    generate_site(2.0, 1, gen)
    before = snapshot(gen)
    result = plan(site, gen)
    assert result.exit_code == 2
    assert "is a site folder written by 'routeplan synth', not an output folder" in (
        one_error_line(result)
    )
    assert snapshot(gen) == before


def test_a_damaged_manifest_is_refused(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    (out / MANIFEST).write_text("{not json", encoding="utf-8")
    before = snapshot(out)
    result = plan(site, out)
    assert result.exit_code == 2
    assert f"its {MANIFEST} is damaged" in one_error_line(result)
    assert snapshot(out) == before


def test_a_folder_written_before_manifests_existed_is_recognised(site, tmp_path):
    """Output folders of earlier versions have no manifest, but their plan cache recorded
    each output's SHA-256: files that still match are taken as routeplan's."""
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    (out / MANIFEST).unlink()
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    assert plan(site, out).exit_code in (0, 1)
    assert (out / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert_complete(out)


# -- the site's own folders -----------------------------------------------------------------


def test_the_site_folder_its_parent_and_a_folder_holding_a_layer_are_refused(tmp_path):
    project = tmp_path / "project"
    site = write_site(project / "site")
    shared = project / "shared"
    shared.mkdir()
    shutil.move(site / "rows.geojson", shared / "rows.geojson")
    with open(site / "site.toml", "a", encoding="utf-8") as fh:
        fh.write('\n[layers]\nrows = "../shared/rows.geojson"\n')
    before = snapshot(project)
    for out, words in (
        (site, "is the site folder"),
        (project, "holds the site folder"),
        (tmp_path, "holds the site folder"),
        (shared, "holds the input file"),
    ):
        result = plan(site, out)
        assert result.exit_code == 2, out
        line = one_error_line(result)
        assert words in line, line
        assert snapshot(project) == before
    # a folder inside the site folder is fine
    assert plan(site, site / "out").exit_code in (0, 1)
    assert {k: v for k, v in snapshot(project).items() if "/out/" not in k} == before


def test_a_folder_inside_a_folder_dataset_is_refused(tmp_path):
    site = write_site(tmp_path / "site", fmt="shp")
    gis = site / "gis"
    gis.mkdir()
    for p in site.glob("rows.*"):
        shutil.move(p, gis / p.name)
    with open(site / "site.toml", "a", encoding="utf-8") as fh:
        fh.write('\n[layers]\nrows = "gis"\n')
    assert runner.invoke(app, ["check", str(site)]).exit_code == 0  # the folder is a dataset
    result = plan(site, gis / "out")
    assert result.exit_code == 2
    assert "lies inside the input dataset" in one_error_line(result)
    assert not (gis / "out").exists()


@pytest.mark.parametrize("where", [".", ".."])
def test_dot_and_dot_dot(site, monkeypatch, where):
    monkeypatch.chdir(site)
    before = snapshot(site.parent)
    result = plan(site, where)
    assert result.exit_code == 2
    line = one_error_line(result)
    assert "site folder" in line
    assert snapshot(site.parent) == before


# -- paths that cannot be written, checked before the computation -------------------------


@pytest.fixture
def no_planning(monkeypatch):
    """Fail the test if planning starts: path problems must be found before it."""

    def refuse(*args, **kwargs):
        raise AssertionError("planned although the output folder was unusable")

    monkeypatch.setattr("routeplan.pipeline.plan", refuse)


def test_a_file_and_a_folder_under_a_file(site, tmp_path, no_planning):
    f = tmp_path / "a-file.txt"
    f.write_text("x", encoding="utf-8")
    result = plan(site, f)
    assert result.exit_code == 2
    assert "is a file, not a folder" in one_error_line(result)
    result = plan(site, f / "out")
    assert result.exit_code == 2
    assert f"{f} is a file, not a folder" in one_error_line(result)
    assert f.read_text(encoding="utf-8") == "x"


def test_a_broken_symbolic_link(site, tmp_path, no_planning):
    link = tmp_path / "link"
    link.symlink_to(tmp_path / "gone")
    result = plan(site, link)
    assert result.exit_code == 2
    assert "symbolic link to nothing" in one_error_line(result)
    assert link.is_symlink() and not (tmp_path / "gone").exists()


@pytest.mark.skipif(not Path("/sys").is_dir(), reason="needs Linux's read-only /sys")
def test_a_folder_that_cannot_be_created(site, no_planning):
    """/sys refuses new folders even to root (Linux sysfs)."""
    result = plan(site, "/sys/routeplan-out")
    assert result.exit_code == 2
    assert "cannot be created" in one_error_line(result)


def test_permission_denied(site, tmp_path, monkeypatch, no_planning):
    """A folder that cannot be written (a read-only folder for an ordinary user; as root the
    refusal is simulated where Python creates the work folder)."""
    out = tmp_path / "out"
    out.mkdir()
    real_mkdir = Path.mkdir

    def mkdir(self, *args, **kwargs):
        if self.name.startswith(WORK_PREFIX):
            raise PermissionError(errno.EACCES, "Permission denied", str(self))
        return real_mkdir(self, *args, **kwargs)

    monkeypatch.setattr(Path, "mkdir", mkdir)
    result = plan(site, out)
    assert result.exit_code == 2
    assert "cannot be written (Permission denied)" in one_error_line(result)
    assert list(out.iterdir()) == []


def test_a_full_disk_is_found_before_planning(site, tmp_path, monkeypatch, no_planning):
    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(folder_mod.shutil, "disk_usage", lambda p: usage._replace(free=2 * 2**20))
    result = plan(site, tmp_path / "out")
    assert result.exit_code == 2
    assert "only 2 MiB free on its disk" in one_error_line(result)
    assert not (tmp_path / "out").exists()  # the folder it made is gone again


def test_a_disk_that_fills_while_writing_keeps_the_previous_outputs(site, tmp_path, monkeypatch):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    before = snapshot(out)
    from routeplan.outputs import write as write_mod

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device", "cable_schedule.xlsx")

    monkeypatch.setattr(write_mod, "write_workbook", full)
    result = plan(site, out, "--no-cache")
    assert result.exit_code == 2
    line = one_error_line(result)
    assert "No space left on device" in line and "keeps its previous contents" in line
    assert snapshot(out) == before


def test_bad_input_leaves_no_folder_behind(tmp_path):
    site = write_site(tmp_path / "site", toml="[site]\nname = 'x'\n")  # no modules
    result = plan(site, tmp_path / "new" / "out")
    assert result.exit_code == 2
    assert not (tmp_path / "new").exists()


# -- one run at a time, permissions, links --------------------------------------------------


def test_a_second_run_into_a_locked_folder_is_refused(site, tmp_path):
    out = tmp_path / "out"
    with OutputFolder.open(out, "plan"):  # another run holds the folder
        result = plan(site, out)
    assert result.exit_code == 2
    line = one_error_line(result)
    assert "another routeplan run is writing into this folder" in line
    assert f"(process {os.getpid()}, started " in line
    assert plan(site, out).exit_code in (0, 1)  # free again


def test_a_lock_released_within_the_wait_lets_the_run_in(tmp_path):
    # the children of a run that has just failed hold the folder's lock until the kernel has
    # torn them down: a run started meanwhile waits for it (up to folder.LOCK_WAIT_S) instead
    # of calling the folder busy. Here another process holds the lock for 0.3 s.
    import fcntl

    from routeplan import folder as folder_mod

    out = tmp_path / "out"
    out.mkdir()
    read_fd, write_fd = os.pipe()
    pid = os.fork()
    if pid == 0:  # the holder
        code = 1
        try:
            fd = os.open(out, os.O_RDONLY)
            fcntl.flock(fd, fcntl.LOCK_EX)
            os.write(write_fd, b"1")
            time.sleep(0.3)
            code = 0
        finally:
            os._exit(code)
    os.close(write_fd)
    assert os.read(read_fd, 1) == b"1"  # held now
    os.close(read_fd)
    t0 = time.monotonic()
    try:
        with OutputFolder.open(out, "plan"):
            waited = time.monotonic() - t0
    finally:
        os.waitpid(pid, 0)
    assert 0.1 < waited < folder_mod.LOCK_WAIT_S + 0.5


def test_the_users_umask_is_kept(site, tmp_path):
    old = os.umask(0o027)
    try:
        assert plan(site, tmp_path / "out").exit_code in (0, 1)
    finally:
        os.umask(old)
    out = tmp_path / "out"
    assert out.stat().st_mode & 0o777 == 0o750
    for p in out.rglob("*"):
        want = 0o750 if p.is_dir() else 0o640
        assert p.stat().st_mode & 0o777 == want, p


def test_a_folder_that_is_a_symbolic_link_is_written_through(site, tmp_path):
    target = tmp_path / "real-out"
    target.mkdir()
    link = tmp_path / "out"
    link.symlink_to(target)
    for _ in range(2):
        assert plan(site, link).exit_code in (0, 1)
        assert link.is_symlink() and os.readlink(link) == str(target)
    assert set(FILES) <= {p.name for p in target.iterdir()}
    assert_complete(target)


# -- the other commands ---------------------------------------------------------------------


def test_map_diff_and_synth_refuse_folders_they_did_not_write(site, tmp_path, documents):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    before = snapshot(documents)
    for args in (
        ["map", str(documents)],
        ["diff", str(out), str(out), "--out", str(documents)],
        ["synth", "--mw", "2", "--out", str(documents)],
    ):
        result = runner.invoke(app, args)
        assert result.exit_code == 2, args
        one_error_line(result)
        assert snapshot(documents) == before


def test_map_on_a_damaged_output_folder_is_one_line(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    (out / "routes.gpkg").write_bytes(b"not a GeoPackage")
    result = runner.invoke(app, ["map", str(out)])
    assert result.exit_code == 2
    assert "routes.gpkg" in one_error_line(result)


def test_map_redraws_through_the_manifest(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    assert runner.invoke(app, ["map", str(out), "--basemap"]).exit_code == 0
    manifest = assert_complete(out)
    assert "map.html" in manifest["files"] and "L.tileLayer" in (out / "map.html").read_text()
    assert plan(site, out).exit_code in (0, 1)  # the redrawn map is still routeplan's


def test_diff_out_writes_a_folder_and_refuses_a_file(site, tmp_path):
    out = tmp_path / "out"
    assert plan(site, out).exit_code in (0, 1)
    result = runner.invoke(app, ["diff", str(out), str(out), "--out", str(tmp_path / "d")])
    assert result.exit_code == 0, result.output
    assert (tmp_path / "d" / "diff.csv").read_text(encoding="utf-8").startswith("section,")
    assert_complete(tmp_path / "d")
    f = tmp_path / "changes.csv"
    f.write_text("mine", encoding="utf-8")
    result = runner.invoke(app, ["diff", str(out), str(out), "--out", str(f)])
    assert result.exit_code == 2
    assert "is a file, not a folder" in one_error_line(result)
    assert f.read_text(encoding="utf-8") == "mine"


def test_synth_replaces_only_its_own_files(tmp_path):
    gen = tmp_path / "gen"
    assert runner.invoke(app, ["synth", "--mw", "2", "--out", str(gen)]).exit_code == 0
    (gen / "my-notes.txt").write_text("mine", encoding="utf-8")
    result = runner.invoke(app, ["synth", "--mw", "2", "--out", str(gen), "--format", "geojson"])
    assert result.exit_code == 0, result.output
    assert (gen / "my-notes.txt").read_text(encoding="utf-8") == "mine"
    assert not (gen / "site.gpkg").exists()  # its own file of the other format is gone
    assert_complete(gen)


# -- a kill at any instant ------------------------------------------------------------------

#: runs the CLI in a child process; with a positive CRASH, the process dies (os._exit, as a
#: kill would: no clean-up) at that call of os.replace inside routeplan.folder (1: the commit
#: record, then each file moved into place, last the manifest); with CRASH = -1, it dies in
#: the work folder's removal, after the manifest is in place; it prints the calls counted
_KILLED_RUN = textwrap.dedent(
    """
    import os, shutil, sys, types
    import routeplan.folder as f

    crash = int(sys.argv[1])
    calls = [0]

    def replace(a, b):
        calls[0] += 1
        if calls[0] == crash:
            os._exit(137)
        os.replace(a, b)

    def rmtree(path, *args, **kwargs):
        if crash == -1:
            os._exit(137)
        shutil.rmtree(path, *args, **kwargs)

    f.os = types.SimpleNamespace(**{**vars(os), "replace": replace})
    f.shutil = types.SimpleNamespace(**{**vars(shutil), "rmtree": rmtree})
    from routeplan.cli import app

    try:
        app(sys.argv[2:])
    except SystemExit as exc:
        print("calls", calls[0], flush=True)
        raise
    """
)


def _child(crash: int, site: Path, out: Path, *args: str) -> subprocess.Popen:
    command = ["plan", str(site), "--out", str(out), "--quiet", *args]
    return subprocess.Popen(
        [sys.executable, "-c", _KILLED_RUN, str(crash), *command],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


@pytest.fixture(scope="module")
def plant(tmp_path_factory):
    """A generated 100 MW site, its outputs before and after an edit (a pad moved), planned
    cold: the two complete states a killed run may leave."""
    from routeplan.synth import generate_site
    from tests.routeplan.test_cache import move_gpkg_pad, run

    base = tmp_path_factory.mktemp("plant")
    site = base / "site"
    generate_site(100.0, 7, site)
    before = base / "before"
    run(site, before, cache=False)
    edited = base / "edited"
    shutil.copytree(site, edited)
    (edited / MANIFEST).unlink()
    move_gpkg_pad(edited, dy=12.0)
    after = base / "after"
    run(edited, after, cache=False)
    csv = "cable_schedule.csv"
    assert (before / csv).read_bytes() != (after / csv).read_bytes()
    return site, edited, before, after


#: the files compared with a cold run's, byte for byte (deterministic: same inputs, same bytes)
COMPARED = ("cable_schedule.csv", "trench_schedule.csv", "quantities.csv", "cable_schedule.xlsx")


def _check_after_kill(out: Path, before: Path, after: Path, mine: dict[str, str]) -> str:
    """Right after the kill: the previous complete outputs, or a committed work folder. Once
    the folder is opened again (the next run): one complete run, the old or the new. The
    user's file is untouched throughout. Returns 'old' or 'new'."""
    committed = [w for w in out.glob(f"{WORK_PREFIX}*") if (w / "commit.json").is_file()]
    if not committed:
        assert_complete_except_work(out)
    with OutputFolder.open(out, "plan"):
        pass  # recovery
    assert_complete(out)
    state = None
    for name, ref in (("old", before), ("new", after)):
        if all((out / f).read_bytes() == (ref / f).read_bytes() for f in COMPARED):
            state = name
    assert state is not None, "the folder holds neither the old nor the new run"
    assert {k: snapshot(out).get(k) for k in mine} == mine
    return state


def assert_complete_except_work(out: Path) -> None:
    """The manifest's files all match (work folders of an uncommitted run may be there)."""
    manifest = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
    for name, rec in manifest["files"].items():
        assert hashlib.sha256((out / name).read_bytes()).hexdigest() == rec["sha256"], name


def _fresh_out(tmp_path: Path, site: Path, tag: str) -> tuple[Path, dict[str, str]]:
    out = tmp_path / f"out-{tag}"
    assert plan(site, out, "--no-cache").exit_code in (0, 1)
    (out / "notes.txt").write_text("the user's own notes", encoding="utf-8")
    return out, {"notes.txt": hashlib.sha256(b"the user's own notes").hexdigest()}


def test_a_kill_inside_the_commit_leaves_old_or_new_never_a_mix(plant, tmp_path):
    site, edited, before, after = plant
    out, mine = _fresh_out(tmp_path, site, "count")
    probe = _child(0, edited, out, "--no-cache")
    stdout, stderr = probe.communicate(timeout=600)
    assert probe.returncode in (0, 1), stderr
    calls = int(stdout.split("calls")[-1])
    assert calls >= len(FILES) + 2  # the commit record, every file, the manifest
    seen = set()
    # the commit record, the first file moved, one in the middle, the manifest, the clean-up
    for crash in (1, 2, calls // 2, calls, -1):
        out, mine = _fresh_out(tmp_path, site, str(crash))
        child = _child(crash, edited, out, "--no-cache")
        child.communicate(timeout=600)
        assert child.returncode == 137
        seen.add(_check_after_kill(out, before, after, mine))
    assert seen == {"old", "new"}


def test_a_kill_at_any_time_during_a_plan(plant, tmp_path):
    """SIGKILL at several instants of a real run (reading, planning, writing) and after it."""
    site, edited, before, after = plant
    t0 = time.perf_counter()
    probe = _child(0, edited, tmp_path / "timing", "--no-cache")
    probe.communicate(timeout=600)
    total = time.perf_counter() - t0
    for fraction in (0.3, 0.6, 0.85, 0.95, 1.5):
        out, mine = _fresh_out(tmp_path, site, f"t{fraction}")
        child = _child(0, edited, out)
        try:
            child.wait(timeout=total * fraction)
        except subprocess.TimeoutExpired:
            child.send_signal(signal.SIGKILL)
        child.communicate(timeout=600)
        _check_after_kill(out, before, after, mine)


def _listed(out: Path) -> set[str]:
    return set(json.loads((out / MANIFEST).read_text(encoding="utf-8"))["files"])


def test_a_second_commit_of_one_run_adds_its_files_and_a_kill_before_it_leaves_the_first(
    tmp_path,
):
    """OutputFolder.next_work / follow_up (a watching process's cache after its outputs)."""
    out = tmp_path / "out"
    folder = OutputFolder.open(out, "plan")
    with pytest.raises(RuntimeError):
        folder.follow_up()  # only after a commit
    (folder.work / "a.txt").write_text("first commit", encoding="utf-8")
    later = folder.next_work()  # made now: a child may write into it before the first commit
    (later / "b.txt").write_text("second commit", encoding="utf-8")
    folder.commit(["a.txt"])
    assert _listed(out) == {"a.txt"} and not (out / "b.txt").exists() and later.is_dir()
    folder.follow_up()
    assert folder.work == later
    folder.commit(["b.txt"], keep_others=True)
    folder.close()
    assert _listed(out) == {"a.txt", "b.txt"} and not list(out.glob(f"{WORK_PREFIX}*"))
    assert_complete_except_work(out)

    # a kill between the two commits: the next open removes the reserved work folder and
    # keeps the first commit's files, as listed
    folder = OutputFolder.open(out, "plan")
    (folder.work / "c.txt").write_text("a later run", encoding="utf-8")
    later = folder.next_work()
    (later / "d.txt").write_text("never committed", encoding="utf-8")
    folder.commit(["c.txt"])
    folder_mod._release_lock(folder._lock)  # the process dies here: no close, no clean-up
    folder._lock = None
    with OutputFolder.open(out, "plan"):
        pass
    assert not later.exists() and not (out / "d.txt").exists()
    assert _listed(out) == {"c.txt"} and (out / "c.txt").read_text() == "a later run"
    assert_complete_except_work(out)

    # a run that fails before its first commit removes both work folders
    folder = OutputFolder.open(out, "plan")
    work, later = folder.work, folder.next_work()
    folder.close()
    assert not work.exists() and not later.exists() and _listed(out) == {"c.txt"}
