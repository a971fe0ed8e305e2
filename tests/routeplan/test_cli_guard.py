"""The command line never shows a traceback: a fault nobody foresaw is one line on stderr and
exit 2 (``ROUTEPLAN_DEBUG=1`` lets it through, for a bug report); ``--version`` and ``-h``."""

from __future__ import annotations

import errno
from importlib.metadata import version

from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.errors import FolderError
from routeplan.folder import OutputFolder
from tests.conftest import write_site

runner = CliRunner()


def test_version_is_the_installed_distributions():
    result = runner.invoke(app, ["--version"])
    assert result.exit_code == 0
    assert result.output == f"routeplan {version('routeplan')}\n"  # package metadata


def test_short_help_option():
    for args in (["-h"], ["plan", "-h"], ["check", "-h"]):
        result = runner.invoke(app, args)
        assert result.exit_code == 0 and "Usage:" in result.output, args


def test_an_unforeseen_fault_is_one_line(tmp_path, monkeypatch):
    site = write_site(tmp_path / "site")

    def broken(*args, **kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr("routeplan.pipeline.plan", broken)
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert lines == [
        "error: internal error (ZeroDivisionError: float division by zero); this is a fault of "
        "routeplan, not of the input: please report it with the output of the same command run "
        "with ROUTEPLAN_DEBUG=1"
    ]
    assert not (tmp_path / "out").exists()  # nothing written
    monkeypatch.setenv("ROUTEPLAN_DEBUG", "1")
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert isinstance(result.exception, ZeroDivisionError)


def test_a_file_system_fault_names_the_file(tmp_path, monkeypatch):
    site = write_site(tmp_path / "site")

    def unreadable(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", str(site / "site.toml"))

    monkeypatch.setattr("routeplan.check.check_site", unreadable)
    result = runner.invoke(app, ["check", str(site)])
    assert result.exit_code == 2
    assert result.stderr.strip() == f"error: {site / 'site.toml'}: Permission denied"


def test_control_characters_of_the_users_text_never_reach_the_terminal(tmp_path):
    """A site name or id holding ESC (an ANSI escape: clear the screen) or a line break is
    shown escaped, so it can neither rewrite the terminal nor split a one-line message."""
    from tests.conftest import SITE_TOML

    toml = SITE_TOML.replace('name = "Test site"', 'name = "Field\\u001b[2J\\nB"')
    site = write_site(tmp_path / "site", toml=toml)
    result = runner.invoke(app, ["check", str(site)])
    assert result.exit_code == 0, result.output
    assert "\x1b" not in result.output
    assert "site     Field\\x1b[2J\\x0aB\n" in result.output


def test_a_link_loop_among_the_inputs_is_named_not_an_internal_error(tmp_path):
    # Python 3.11 resolves a symbolic-link loop with RuntimeError: the output folder's guard
    # of the inputs met it first and reported routeplan's fault; the layer is named instead
    site = write_site(tmp_path / "site")
    (site / "grid.geojson").unlink()
    (site / "grid.geojson").symlink_to("grid.geojson")
    for command in ("plan", "place"):
        extra = ["--inverter", "INV1"] if command == "place" else []
        result = runner.invoke(app, [command, str(site), "--out", str(tmp_path / "out"), *extra])
        assert result.exit_code == 2, result.output
        assert "internal error" not in result.output
        assert (
            "error: grid: 'grid.geojson' is a symbolic link that leads to no file (a loop or a "
            "missing target)" in result.stderr.splitlines()
        )
        assert not (tmp_path / "out").exists()
    # an output folder that is a link loop: one line naming it
    (tmp_path / "loop").symlink_to("loop")
    site2 = write_site(tmp_path / "site2")
    result = runner.invoke(app, ["plan", str(site2), "--out", str(tmp_path / "loop")])
    assert result.exit_code == 2 and "internal error" not in result.output
    assert result.stderr.startswith(f"error: {tmp_path / 'loop'}")


def test_an_input_file_that_is_a_link_loop_does_not_stop_the_folder_guard(tmp_path):
    # a file of a folder dataset may be a link loop: the guard of the inputs resolved it with
    # RuntimeError (Python 3.11); it guards the others and leaves that one to the reader
    data = tmp_path / "dataset"
    data.mkdir()
    (data / "loop.dbf").symlink_to("loop.dbf")
    (data / "kept.shp").write_bytes(b"")
    for out, refused in ((tmp_path / "out", False), (data, True)):
        try:
            folder = OutputFolder.open(out, "plan", protect=[data / "loop.dbf", data / "kept.shp"])
        except FolderError as exc:
            assert refused and "never writes over its inputs" in str(exc)
        else:
            assert not refused
            folder.close()
