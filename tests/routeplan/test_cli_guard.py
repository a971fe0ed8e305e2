"""The command line never shows a traceback: a fault nobody foresaw is one line on stderr and
exit 2 (``ROUTEPLAN_DEBUG=1`` lets it through, for a bug report); ``--version`` and ``-h``."""

from __future__ import annotations

import errno
from importlib.metadata import version

from typer.testing import CliRunner

from routeplan.cli import app
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
