"""Conductor identification end to end: ``[design] marking`` picks a regional system, the
schedule's ``marking`` column, summary.json and the report's design basis name it, and the
default follows the rule set. Colours are written here from their sources (JIS C 0446 and the
Japanese public building works specification, from memory; IEC 60445:2021 6.2, confirmed in a
public reproduction of the clause text), never read back from the code.
"""

from __future__ import annotations

import csv
import json
import re
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from .report_sites import DEMO, Tables

runner = CliRunner()


def _site_with(tmp: Path, line: str) -> Path:
    """The demo site with its ``marking = ...`` line replaced by ``line`` ("" removes it)."""
    site = tmp / "site"
    shutil.copytree(DEMO, site)
    toml = (site / "site.toml").read_text(encoding="utf-8")
    edited, n = re.subn(r"(?m)^marking = .*$", line, toml)
    assert n == 1
    (site / "site.toml").write_text(edited, encoding="utf-8")
    return site


def _plan(site: Path, out: Path) -> tuple[list[dict[str, str]], dict, Tables]:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "-q"])
    assert result.exit_code in (0, 1), result.output
    with (out / "cable_schedule.csv").open(encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    return rows, summary, Tables((out / "report.html").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def japan(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("jp")
    return _plan(_site_with(tmp, 'marking = "jp"'), tmp / "out")


def test_a_japanese_plan_defers_what_jis_leaves_open(japan):
    rows, summary, _ = japan
    dc = {r["marking"] for r in rows if r["kind"] != "ac"}
    # JIS C 0446 names no d.c. line colours: per project specification, common practice as a hint
    assert dc == {
        "L+ per project specification (common practice: red), "
        "L- per project specification (common practice: blue)"
    }
    ac = {r["marking"] for r in rows if r["kind"] == "ac"}
    assert len(ac) == 1
    (text,) = ac
    # three-phase: phases open, grounded/neutral white and earthing green (JIS C 0446)
    assert text.startswith("L1 per project specification (common practice: red)")
    assert "N white (if run)" in text and text.endswith("E green or green-and-yellow")
    assert summary["marking"] == "jp"


def test_the_report_names_the_system_and_every_colour_with_its_source(japan):
    _, _, page = japan
    cover = {row[0]: row[1] for row in page.tables["cover"][1:]}
    assert cover["conductor identification"] == "jp"
    table = page.tables["identification"]
    assert table[0] == [
        "circuit", "up to V (a.c.)", "conductor", "colour", "basis", "source", "tag"
    ]  # fmt: skip
    body = table[1:]
    assert all(r[5] and r[6] for r in body)  # each row names its source and tag
    l1 = [r for r in body if r[0] == "a.c. three-phase" and r[2] == "L1"]
    assert {(r[3], r[4]) for r in l1} == {
        ("not specified", "the standard's colour"),
        ("red", "common practice"),
    }


def test_without_a_setting_the_rule_sets_system_applies(tmp_path):
    rows, summary, page = _plan(_site_with(tmp_path, ""), tmp_path / "out")
    # rules = "iec" → IEC 60445:2021: d.c. L+ red, L− white (6.2.4)
    assert {r["marking"] for r in rows if r["kind"] != "ac"} == {"L+ red, L- white"}
    assert summary["marking"] == "iec"
    assert {row[0]: row[1] for row in page.tables["cover"][1:]}["conductor identification"] == (
        "iec"
    )


def test_an_unknown_system_is_refused_naming_the_key(tmp_path):
    site = _site_with(tmp_path, 'marking = "xx"')
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "design.marking" in result.output and "'xx'" in result.output
    assert not (tmp_path / "out").exists()
