"""`routeplan check`: exit statuses and messages, run in-process with typer's CliRunner."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from tests.conftest import SITE_TOML, base_frames, write_site

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()


def test_check_demo_site_exits_0():
    result = runner.invoke(app, ["check", str(DEMO)])
    assert result.exit_code == 0, result.output
    assert "Cerro Pardo Solar" in result.output
    assert "EPSG:32630" in result.output
    assert "ok: no problems found" in result.output
    # tables without `to` are reported with the destination the planner chose
    assert "assigned row W2-R4 → CB-W2 (nearest" in result.output


def test_every_command_has_help():
    for cmd in ([], ["check"], ["plan"], ["diff"], ["map"], ["synth"]):
        result = runner.invoke(app, [*cmd, "--help"])
        assert result.exit_code == 0
        assert "Usage" in result.output


def test_bad_input_exits_2_with_ids_and_no_traceback(tmp_path):
    frames = base_frames()
    frames["rows"].loc[0, "to"] = "CB9"
    frames["trenches"].loc[0, "depth_m"] = -1.0
    root = write_site(tmp_path / "s", frames)
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert "error: rows 'R1': to = 'CB9': no feature has that id" in result.stderr
    assert "error: trenches 'T1': depth_m is -1, must be > 0" in result.stderr
    assert "Traceback" not in result.output + result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)


def test_missing_folder_exits_2(tmp_path):
    result = runner.invoke(app, ["check", str(tmp_path / "nowhere")])
    assert result.exit_code == 2
    assert "is not a folder" in result.stderr


@pytest.mark.parametrize(
    ("line", "message"),
    [
        (
            'depth_m = "deep"',
            "site.toml 'design.depth_m': 'deep' is not a quantity: "
            "expected '<number> <unit>', e.g. '800 mm'",
        ),
        ("soil_k_m_w = 40", "site.toml 'design.soil_k_m_w': 40 is outside 0.3–6"),
        ('laying = "tray"', "site.toml 'design.laying': 'tray'; expected one of direct, duct"),
        ("depthh_m = 1", "site.toml 'design.depthh_m': unknown key; did you mean 'depth_m'?"),
    ],
)
def test_bad_design_settings_exit_2(tmp_path, line, message):
    root = write_site(tmp_path / "s", toml=SITE_TOML.replace("[design]\n", f"[design]\n{line}\n"))
    result = runner.invoke(app, ["check", str(root)])
    assert result.exit_code == 2
    assert f"error: {message}" in result.stderr


def test_design_quantities_with_units(tmp_path):
    from routeplan.config import parse_design

    cfg, problems = parse_design({"design": {"depth_m": "850 mm", "drop_pct": {"ac": "1.5 %"}}})
    assert problems == []
    assert cfg["depth_m"] == 0.85
    assert cfg.drop_pct["ac"] == 1.5
    assert cfg["soil_k_m_w"] == 2.5  # IEC 60364-5-52:2009 reference soil resistivity default
