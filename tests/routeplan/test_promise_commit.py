"""README, Output folders, "All or nothing": once a run has recorded its commit, a failure
while its files are moved into place (a disk that fills as the manifest is written, a file
that cannot be replaced — as on a system where a spreadsheet holding it open locks it) must
leave what a kill at that instant leaves: the record, which the next routeplan command on
the folder carries out, so that the folder then holds one complete run, the one its manifest
names (checked with ``hashlib``). The message says so instead of "nothing was written"."""

from __future__ import annotations

import errno
import os

import pytest
from typer.testing import CliRunner

from routeplan import folder as folder_mod
from routeplan.cli import app
from routeplan.folder import MANIFEST, WORK_PREFIX
from routeplan.outputs.write import CSV_FILES
from tests.conftest import write_site

from .promise_sites import RICH_TOML, edited, plan_cli, rich_frames
from .test_folder import assert_complete, one_error_line

runner = CliRunner()


def failing_replace(target: str, error: int):
    """``os.replace`` that fails with ``error`` when it would put ``target`` into place."""
    real = os.replace

    def replace(src, dst, *args, **kwargs):
        if os.path.basename(dst) == target and WORK_PREFIX not in os.path.basename(
            os.path.dirname(dst)
        ):
            raise OSError(error, os.strerror(error), str(dst))
        return real(src, dst, *args, **kwargs)

    return replace


@pytest.mark.parametrize(
    ("target", "error"),
    [
        (MANIFEST, errno.ENOSPC),  # the last step: every new file is in place already
        ("quantities.csv", errno.EACCES),  # part-way: some files new, some old
    ],
)
@pytest.mark.parametrize("next_command", ["plan", "map", "diff"])
def test_a_commit_failing_part_way_is_completed_by_the_next_command(
    tmp_path, monkeypatch, target, error, next_command
):
    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    assert plan_cli(site, out, "-q").exit_code == 0
    new_site = edited(tmp_path / "site2")
    cold = tmp_path / "cold"
    assert plan_cli(new_site, cold, "-q", "--no-cache").exit_code == 0

    monkeypatch.setattr(folder_mod.os, "replace", failing_replace(target, error))
    result = plan_cli(new_site, out, "-q")
    monkeypatch.undo()
    assert result.exit_code == 2
    line = one_error_line(result)
    assert line.startswith(f"error: {out}: ")
    assert os.strerror(error) in line and target in line
    assert "nothing was written" not in line and "keeps its previous contents" not in line
    assert "the next routeplan command on this folder completes it" in line

    if next_command == "plan":
        again = plan_cli(new_site, out, "-q")  # no --force needed
    elif next_command == "map":
        again = runner.invoke(app, ["map", str(out)])
    else:  # diff reads the folder only once the recorded run is complete: no mixed plans
        again = runner.invoke(app, ["diff", str(cold), str(out)])
        assert again.stdout.strip() == "no changes", again.output
    assert again.exit_code == 0, again.output
    assert_complete(out)  # one complete run, the one its manifest names
    for name in CSV_FILES:  # and it is the edited site's
        assert (out / name).read_bytes() == (cold / name).read_bytes(), name


def test_a_diff_whose_commit_fails_says_so_in_one_line(tmp_path, monkeypatch):
    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    assert plan_cli(site, out, "-q").exit_code == 0
    changes = tmp_path / "changes"
    monkeypatch.setattr(folder_mod.os, "replace", failing_replace(MANIFEST, errno.ENOSPC))
    result = runner.invoke(app, ["diff", str(out), str(out), "--out", str(changes)])
    monkeypatch.undo()
    assert result.exit_code == 2
    line = one_error_line(result)
    assert line == (
        f"error: {changes}: the new files could not all be put in place ({MANIFEST}: "
        f"{os.strerror(errno.ENOSPC)}); the run is recorded there, and the next routeplan "
        "command on this folder completes it"
    )
    again = runner.invoke(app, ["diff", str(out), str(out), "--out", str(changes)])
    assert again.exit_code == 0, again.output
    assert (changes / "diff.csv").read_text(encoding="utf-8").startswith("section,id,")
    assert_complete(changes)
