"""``summary.json`` against the schedules it summarises, read with Python's csv module.

Every figure is recomputed here from ``cable_schedule.csv`` and ``trench_schedule.csv`` (each
rounded as its column is written) and from site.toml: counts per kind, failures by the limit
they break (capacity: design current above the derated capacity; drop: the circuit's voltage
drop above its kind's limit — engine docstring, ``calc.failure_causes``), worst drops and
utilisations, losses, the trench segments, conductor metres per material and size. The tool's
version is the installed package's (``importlib.metadata``).

Two plans of the demo site: as designed (every circuit passes), and with string cables held
to 4 mm², the DC total limit relaxed and a fault level the AC cables cannot withstand, so that
strings fail on capacity and on drop and the AC circuits for another reason.
"""

from __future__ import annotations

import csv
import importlib.metadata
import json
import shutil
import tomllib
from collections import defaultdict
from pathlib import Path

import pyproj
import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import SITE_TOML, base_frames, write_site

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()
KINDS = ("string", "subarray", "array", "ac")


def read_csv(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def num(v: str) -> float:
    return float(v) if v != "" else float("nan")


def plan(site: Path, out: Path, code: int) -> tuple[dict, list[dict], list[dict], dict]:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == code, result.output
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    config = tomllib.loads((site / "site.toml").read_text(encoding="utf-8"))
    return (
        summary,
        read_csv(out / "cable_schedule.csv"),
        read_csv(out / "trench_schedule.csv"),
        config,
    )


@pytest.fixture(scope="module")
def as_designed(tmp_path_factory):
    return plan(DEMO, tmp_path_factory.mktemp("summary") / "out", 0)


@pytest.fixture(scope="module")
def failing(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("summary-failing")
    site = tmp / "site"
    shutil.copytree(DEMO, site)
    toml = (site / "site.toml").read_text(encoding="utf-8")
    toml = (
        toml.replace("string = [4, 6, 10]", "string = [4]")
        .replace("dc_total = 2.0", "dc_total = 5.0")
        .replace("fault_ka = 25.0", "fault_ka = 60.0")
        .replace("clear_s = 0.2", "clear_s = 2.0")
    )
    (site / "site.toml").write_text(toml, encoding="utf-8")
    return plan(site, tmp / "out", 1)


def check_summary(summary: dict, circuits: list[dict], segments: list[dict], config: dict):
    limits = config["design"]["drop_pct"]
    for kind in KINDS:
        mine = [c for c in circuits if c["kind"] == kind]
        k = summary["circuits"][kind]
        fail = [c for c in mine if c["status"] == "fail"]
        capacity = [c for c in fail if num(c["design_current_a"]) > num(c["ampacity_a"])]
        drop = [c for c in fail if num(c["vdrop_pct"]) > limits[kind]]
        assert k["circuits"] == len(mine), kind
        assert k["fail"] == len(fail), kind
        assert k["fail_capacity"] == len(capacity), kind
        if kind != "array":  # an array's budget is the DC total less its strings' drop
            assert k["fail_drop"] == len(drop), kind
            assert k["fail_other"] == len({id(c) for c in fail} - {id(c) for c in capacity + drop})
        worst = max(num(c["vdrop_pct"]) for c in mine)
        assert k["worst_vdrop_pct"] == pytest.approx(worst, abs=0.0006), kind
        assert summary["worst_vdrop_pct"][kind] == k["worst_vdrop_pct"]
        util = max(num(c["utilisation"]) for c in mine)
        assert k["worst_utilisation"] == pytest.approx(util, abs=0.0006), kind
        loss = sum(num(c["loss_w"]) for c in mine)
        assert k["loss_w"] == pytest.approx(loss, abs=0.05 * len(mine) + 1e-9), kind
        energy = sum(num(c["energy_loss_kwh"]) for c in mine)
        assert k["energy_loss_kwh"] == pytest.approx(energy, abs=0.5 * len(mine) + 1e-9), kind
    dc_total = max(num(c["vdrop_total_pct"]) for c in circuits if c["kind"] != "ac")
    assert summary["worst_vdrop_pct"]["dc_total"] == pytest.approx(dc_total, abs=0.0006)
    assert summary["drop_limits_pct"] == {k: float(v) for k, v in limits.items()}
    assert summary["loss_w_total"] == pytest.approx(
        sum(summary["circuits"][k]["loss_w"] for k in KINDS), rel=1e-12
    )
    assert summary["energy_loss_kwh_total"] == pytest.approx(
        sum(summary["circuits"][k]["energy_loss_kwh"] for k in KINDS), rel=1e-12
    )
    # trench segments
    over = [s for s in segments if s["status"] == "over"]
    assert summary["segments"]["count"] == len(segments)
    assert summary["segments"]["over_capacity"] == len(over)
    trench = sum(num(s["length_m"]) for s in segments)
    assert summary["segments"]["trench_m"] == pytest.approx(trench, abs=0.005 * len(segments))
    unused = [s for s in segments if int(s["circuits"]) == 0]  # no circuit runs along them
    assert summary["segments"]["unused_trench_m"] == pytest.approx(
        sum(num(s["length_m"]) for s in unused), abs=0.005 * max(len(unused), 1)
    )
    # conductor metres by material and size, in that order
    metres: dict[tuple[str, float], float] = defaultdict(float)
    conductors: dict[tuple[str, float], int] = defaultdict(int)
    for c in circuits:
        key = (c["material"], float(c["size_mm2"]))
        metres[key] += num(c["cable_m"]) * int(c["conductors"])
        conductors[key] += int(c["conductors"])
    listed = summary["conductor_m"]
    assert [(x["material"], x["size_mm2"]) for x in listed] == sorted(metres)
    for x in listed:
        key = (x["material"], x["size_mm2"])
        assert x["conductor_m"] == pytest.approx(metres[key], abs=0.005 * conductors[key] + 0.005)
    total = sum(x["conductor_m"] for x in listed)  # each rounded to 0.01 m: ±0.005 apiece
    assert summary["conductor_m_total"] == pytest.approx(total, abs=0.005 * len(listed) + 0.005)
    # run metres: each circuit's cable length once
    run = sum(num(c["cable_m"]) for c in circuits)
    assert summary["run_m_total"] == pytest.approx(run, abs=0.005 * len(circuits) + 0.005)
    # the whole plan
    ok = all(c["status"] == "ok" for c in circuits) and not over
    assert summary["ok"] is ok
    assert summary["rules"] == config["design"].get("rules", "iec")
    assert summary["site"]["name"] == config["site"]["name"]
    assert summary["site"]["crs"] == config["site"]["crs"]
    assert summary["tool"] == {
        "name": "routeplan",
        "version": importlib.metadata.version("routeplan"),
    }
    # the note on the CRS names it as pyproj does
    crs = pyproj.CRS(config["site"]["crs"])
    assert summary["site"]["crs_note"].startswith(f"{config['site']['crs']} ({crs.name})")
    assert "qualified, licensed person" in summary["caution"]
    # figures to a fixed number of decimals: drops and utilisations one more than the
    # schedule (4), metres to the centimetre (2), as the schedules give lengths
    for k in KINDS:
        for name in ("worst_vdrop_pct", "worst_utilisation"):
            v = summary["circuits"][k][name]
            assert v is None or v == round(v, 4), (k, name)
    for v in [x["conductor_m"] for x in listed] + [summary["conductor_m_total"]]:
        assert v == round(v, 2)
    # assigned destinations: each with the route length of its circuits in the schedule
    by_source = {(c["from_id"], c["to_id"]): c["route_m"] for c in circuits}
    for a in summary["assigned"]:
        assert f"{a['route_m']:.2f}" == by_source[(a["id"], a["to"])], a
        assert a["route_m"] == round(a["route_m"], 2)


def test_summary_of_a_plan_that_passes(as_designed):
    summary, circuits, segments, config = as_designed
    check_summary(summary, circuits, segments, config)
    assert summary["ok"] is True
    assert all(summary["circuits"][k]["fail"] == 0 for k in KINDS)
    # the demo's two rows without `to` (README, demo site), by route length
    assigned = {(a["layer"], a["id"]): (a["to"], a["rule"]) for a in summary["assigned"]}
    assert set(assigned) == {("rows", "W2-R4"), ("rows", "E3-R6")}
    assert all(rule != "given" for _, rule in assigned.values())


def test_summary_of_a_plan_that_fails(failing):
    summary, circuits, segments, config = failing
    check_summary(summary, circuits, segments, config)
    s, ac = summary["circuits"]["string"], summary["circuits"]["ac"]
    # the scenario does what it says: each cause present
    assert s["fail_capacity"] > 0 and s["fail_drop"] > 0
    assert ac["fail_other"] == ac["circuits"] == ac["fail"]
    assert summary["ok"] is False


def test_a_kind_without_circuits_has_no_worst_value(tmp_path):
    # rows straight to the inverter: no array circuits, so no worst drop or utilisation
    frames = base_frames()
    frames["rows"]["to"] = "INV1"
    frames["combiners"] = frames["combiners"].iloc[0:0]
    site = write_site(tmp_path / "site", frames)
    summary, circuits, _, _ = plan(site, tmp_path / "out", 0)
    a = summary["circuits"]["array"]
    assert a == {
        "circuits": 0,
        "fail": 0,
        "fail_capacity": 0,
        "fail_drop": 0,
        "fail_other": 0,
        "worst_vdrop_pct": None,
        "worst_utilisation": None,
        "loss_w": 0.0,
        "energy_loss_kwh": 0.0,
    }
    assert summary["worst_vdrop_pct"]["array"] is None
    strings = [c for c in circuits if c["kind"] == "string"]
    worst = max(float(c["vdrop_pct"]) for c in strings)
    assert summary["worst_vdrop_pct"]["string"] == pytest.approx(worst, abs=0.0006)


def test_the_dc_total_leaves_the_ac_circuits_out(tmp_path):
    # large DC cables and an AC cable held to 16 mm²: the AC drop is above any DC total
    toml = SITE_TOML + "\n[design.sizes_mm2]\nstring = [10]\narray = [95]\nac = [16]\n"
    site = write_site(tmp_path / "site", base_frames(), toml=toml)
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out"), "--quiet"])
    assert result.exit_code == 1, result.output  # the AC cable fails its drop limit
    summary = json.loads((tmp_path / "out" / "summary.json").read_text(encoding="utf-8"))
    circuits = read_csv(tmp_path / "out" / "cable_schedule.csv")
    dc = max(num(c["vdrop_total_pct"]) for c in circuits if c["kind"] != "ac")
    ac = max(num(c["vdrop_total_pct"]) for c in circuits if c["kind"] == "ac")
    assert ac > dc
    assert summary["worst_vdrop_pct"]["dc_total"] == pytest.approx(dc, abs=0.0006)
