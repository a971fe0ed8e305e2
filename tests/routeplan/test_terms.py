"""One name per quantity (README, "Outputs"): conductor metres (cable length × conductors)
and run metres (each circuit's cable length once) named as such in the command line's
summary and ``summary.json``, run metres in the map's panel; and ``routeplan diff`` still
compares a plan written before the rename (``cable_m``/``metres``/``cable_m_total``, no
``inverter_id``, ``max_cable_sets`` or ``fill_basis`` columns) with a new one.

Expected figures are summed here from ``cable_schedule.csv`` with the csv module.
"""

from __future__ import annotations

import csv
import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import base_frames, write_site

runner = CliRunner()


def read_rows(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


@pytest.fixture(scope="module")
def planned(tmp_path_factory) -> dict:
    tmp = tmp_path_factory.mktemp("terms")
    site = write_site(tmp / "site", base_frames())
    out = tmp / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--no-cache"])
    assert result.exit_code == 0, result.output
    return {"tmp": tmp, "out": out, "stdout": result.stdout}


def test_conductor_and_run_metres_are_named_and_summed(planned):
    out = planned["out"]
    circuits = read_rows(out / "cable_schedule.csv")
    run = sum(float(c["cable_m"]) for c in circuits)
    conductor = sum(float(c["cable_m"]) * int(c["conductors"]) for c in circuits)
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert "cable_m" not in summary and "cable_m_total" not in summary
    assert summary["run_m_total"] == pytest.approx(run, abs=0.005 * len(circuits))
    assert summary["conductor_m_total"] == pytest.approx(conductor, abs=0.01 * len(circuits))
    assert sum(x["conductor_m"] for x in summary["conductor_m"]) == pytest.approx(
        summary["conductor_m_total"], abs=0.01
    )
    lines = planned["stdout"].splitlines()
    said = next(x for x in lines if x.startswith("conductor metres: "))
    assert said.endswith("(allowances included)")
    first = summary["conductor_m"][0]
    size = f"{first['material']} {first['size_mm2']:g} mm² {first['conductor_m']:,.0f} m"
    assert size in said
    assert f"run metres: {run:,.0f} m (each circuit's cable once)" in lines
    html = (out / "map.html").read_text(encoding="utf-8")
    assert ">Run metres<" in html and "Cable runs<" not in html


def make_older(folder: Path) -> None:
    """The plan as routeplan wrote it before the rename: summary keys ``cable_m`` (items
    with ``metres``) and ``cable_m_total``, no ``run_m_total``; schedules without
    ``inverter_id``, ``max_cable_sets`` and ``fill_basis``."""
    path = folder / "summary.json"
    s = json.loads(path.read_text(encoding="utf-8"))
    s["cable_m"] = [
        {"material": x["material"], "size_mm2": x["size_mm2"], "metres": x["conductor_m"]}
        for x in s.pop("conductor_m")
    ]
    s["cable_m_total"] = s.pop("conductor_m_total")
    del s["run_m_total"]
    path.write_text(json.dumps(s, indent=2) + "\n", encoding="utf-8")
    for name, drop in (
        ("cable_schedule.csv", {"inverter_id"}),
        ("trench_schedule.csv", {"max_cable_sets", "fill_basis"}),
    ):
        with open(folder / name, encoding="utf-8", newline="") as fh:
            rows = list(csv.reader(fh))
        keep = [j for j, c in enumerate(rows[0]) if c not in drop]
        assert len(keep) == len(rows[0]) - len(drop)
        with open(folder / name, "w", encoding="utf-8", newline="") as fh:
            csv.writer(fh, lineterminator="\n").writerows([[r[j] for j in keep] for r in rows])


def test_diff_compares_a_plan_written_before_the_rename(planned, tmp_path):
    older = tmp_path / "older"
    shutil.copytree(planned["out"], older)
    make_older(older)
    summary = json.loads((planned["out"] / "summary.json").read_text(encoding="utf-8"))
    total = f"{summary['conductor_m_total']:.2f}"
    for a, b in ((older, planned["out"]), (planned["out"], older)):
        result = runner.invoke(app, ["diff", str(a), str(b), "--out", str(tmp_path / "d")])
        assert result.exit_code == 0, result.output
        rows = read_rows(tmp_path / "d" / "diff.csv")
        assert [r for r in rows if r["section"] != "plant" or r["delta"] not in ("", "0")] == []
        assert "Traceback" not in result.output
    # the older plan's total is read under its earlier name: the same figure, no change
    older_summary = json.loads((older / "summary.json").read_text(encoding="utf-8"))
    assert f"{older_summary['cable_m_total']:.2f}" == total


def test_diff_names_the_total_missing_under_either_name(planned, tmp_path):
    older = tmp_path / "older"
    shutil.copytree(planned["out"], older)
    make_older(older)
    path = older / "summary.json"
    s = json.loads(path.read_text(encoding="utf-8"))
    del s["cable_m_total"]
    path.write_text(json.dumps(s), encoding="utf-8")
    result = runner.invoke(app, ["diff", str(older), str(planned["out"])])
    assert result.exit_code == 2
    assert result.stderr == (
        f"error: {path}: no key conductor_m_total (not a summary of 'routeplan plan')\n"
    )
