"""Issue "Revisions a project team can trust", end to end: ``routeplan diff`` after the two
redlines a designer makes most — a new tap that splits a trench segment, and an inverter pad
moved — checked against hand geometry and against the two runs' own files read with the
csv and json modules (never against the diff's own arithmetic).

Sites: the lengths site of ``promise_sites`` (hand geometry in its docstring: T1 runs
(0, 0) → (200, 0), T2 (100, 0) → (100, 80); rows R1 at x = 10 and R2 at x = 60 tap T1, T2
meets it at x = 100, so T1's segments are 0–10, 10–60, 60–100 and 100–200 m) and the demo
site with its inverter pad INV-W moved 20.0 m north.
"""

from __future__ import annotations

import csv
import json
import shutil
from collections import defaultdict
from pathlib import Path

import geopandas as gpd
import pandas as pd
import pytest
from shapely.geometry import LineString
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import diff_outputs
from tests.conftest import UTM33

from .promise_sites import LENGTHS_TOML, lengths_frames, write_and_plan, xy

runner = CliRunner()
DEMO = Path(__file__).resolve().parents[2] / "demo_site"

#: T1's and T2's segments in the lengths site, by hand (chainage from each trench's first
#: vertex: T1 is cut at x = 10 (R1's tap), 60 (R2's), 100 (T2 meets it))
LENGTHS_SEGMENTS = {"T1@0.0-10.0", "T1@10.0-60.0", "T1@60.0-100.0", "T1@100.0-200.0", "T2@0.0-80.0"}


def read_rows(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def run_diff(old: Path, new: Path, out: Path) -> tuple[str, list[dict[str, str]]]:
    result = runner.invoke(app, ["diff", str(old), str(new), "--out", str(out)])
    assert result.exit_code == 0, result.output
    return result.output, read_rows(out / "diff.csv")


# -- a new tap splits one segment ------------------------------------------------------------
@pytest.fixture(scope="module")
def split(tmp_path_factory) -> dict[str, Path]:
    """The lengths site, then the same site with a third row R3 (2 strings to CB1) on the
    line x = 150, y 5…45: its stub meets T1 at (150, 0), 150.0 m along T1."""
    tmp = tmp_path_factory.mktemp("split")
    _, old, a = write_and_plan(tmp / "old", lengths_frames(), LENGTHS_TOML, "-q")
    frames = lengths_frames()
    r3 = gpd.GeoDataFrame(
        {"id": ["R3"], "strings": [2], "module": "m1", "to": "CB1"},
        geometry=[LineString([xy(150, 5), xy(150, 45)])],
        crs=UTM33,
    )
    frames["rows"] = pd.concat([frames["rows"], r3], ignore_index=True)
    _, new, b = write_and_plan(tmp / "new", frames, LENGTHS_TOML, "-q")
    assert a.exit_code == b.exit_code == 0, (a.output, b.output)
    return {"old": old, "new": new, "tmp": tmp}


def test_a_split_renames_only_the_split_segment(split):
    old = {r["segment_id"] for r in read_rows(split["old"] / "trench_schedule.csv")}
    new = {r["segment_id"] for r in read_rows(split["new"] / "trench_schedule.csv")}
    assert old == LENGTHS_SEGMENTS
    # hand: R3's tap at 150.0 m cuts T1@100.0-200.0; every other segment keeps its id
    assert old - new == {"T1@100.0-200.0"}
    assert new - old == {"T1@100.0-150.0", "T1@150.0-200.0"}


def test_the_diff_reports_the_split_with_the_circuits_of_each_part(split):
    output, rows = run_diff(split["old"], split["new"], split["tmp"] / "d1")
    events = [r for r in rows if r["section"] == "segment" and r["field"] == ""]
    assert [(r["change"], r["old"], r["new"]) for r in events] == [
        ("split", "T1@100.0-200.0", "T1@100.0-150.0; T1@150.0-200.0")
    ]
    # hand: on T1 between x = 100 and 200 run the 5 strings of R1 and R2 (to CB1 at T1's
    # east end) and A:CB1 (west to T2): 6 circuits; R3's 2 strings join east of x = 150
    text = (
        "T1@100.0-200.0 (6 circuits) split at 150.0 m into T1@100.0-150.0 (6 circuits), "
        "T1@150.0-200.0 (8 circuits)"
    )
    assert events[0]["note"] == text
    assert f"split: {text}" in output
    # the split parts add up to the old length (100.0 m by hand): no length line
    assert not [r for r in rows if r["section"] == "segment" and r["field"] == "length_m"]


def test_a_route_over_a_split_segment_is_no_route_change(split):
    _, rows = run_diff(split["old"], split["new"], split["tmp"] / "d2")
    circuits = [r for r in rows if r["section"] == "circuit"]
    assert {r["id"] for r in circuits if r["change"] == "added"} == {"R3/S1", "R3/S2"}
    # the circuits that ran over T1@100.0-200.0 now list its two parts: the same stretch
    old = {r["circuit_id"]: r for r in read_rows(split["old"] / "cable_schedule.csv")}
    new = {r["circuit_id"]: r for r in read_rows(split["new"] / "cable_schedule.csv")}
    crossing = [c for c in old if "T1@100.0-200.0" in old[c]["trench_segments"].split(";")]
    assert sorted(crossing) == ["A:CB1", "R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3"]
    for c in crossing:
        assert old[c]["trench_segments"] != new[c]["trench_segments"]
        assert old[c]["route_m"] == new[c]["route_m"]
    changed_route = {
        r["id"]
        for r in circuits
        if r["field"] in ("trench_segments", "route_m", "cable_m") and r["change"] == "changed"
    }
    assert changed_route == set()
    # A:CB1 carries R3's 2 strings too: its size is its own change (scope "route"); its
    # design current is 1.25 × Isc × strings (IEC 62548:2016, 7.4.2 array cable without array
    # fuse; from memory): 1.25 × 13.0 A × 5 = 81.25 A → × 7 = 113.75 A
    scope = {r["id"]: r["scope"] for r in circuits}
    assert {c for c, s in scope.items() if s == "route"} == {"R3/S1", "R3/S2", "A:CB1"}
    current = next(r for r in circuits if r["id"] == "A:CB1" and r["field"] == "design_current_a")
    assert (current["old"], current["new"], current["delta"]) == ("81.25", "113.75", "+32.50")
    # the strings' grouping changed (R3's strings share T1 east of 150 m): scope "value"
    assert {s for c, s in scope.items() if "/S" in c and not c.startswith("R3")} <= {
        "value",
        "follows",
    }


# -- an inverter pad moved 20 m ----------------------------------------------------------------
@pytest.fixture(scope="module")
def pad_move(tmp_path_factory) -> dict[str, Path]:
    """The demo site, then the same with INV-W's pad moved 20.0 m north (in UTM metres)."""
    tmp = tmp_path_factory.mktemp("pad")
    site = tmp / "site"
    shutil.copytree(DEMO, site, ignore=shutil.ignore_patterns("*.py", "__pycache__"))
    a = runner.invoke(app, ["plan", str(site), "--out", str(tmp / "old"), "-q"])
    inv = gpd.read_file(site / "inverters.geojson")
    utm = inv.to_crs(inv.estimate_utm_crs())
    w = utm["id"] == "INV-W"
    utm.loc[w, "geometry"] = utm.loc[w, "geometry"].translate(0.0, 20.0)
    utm.to_crs(inv.crs).to_file(site / "inverters.geojson", driver="GeoJSON")
    b = runner.invoke(app, ["plan", str(site), "--out", str(tmp / "new"), "-q"])
    assert a.exit_code == b.exit_code == 0, (a.output, b.output)
    return {"old": tmp / "old", "new": tmp / "new", "tmp": tmp, "site": site}


def test_a_pad_move_lists_exactly_the_circuits_of_the_pad_first(pad_move):
    output, rows = run_diff(pad_move["old"], pad_move["new"], pad_move["tmp"] / "d1")
    circuits = [r for r in rows if r["section"] == "circuit"]
    # from the layout: INV-W takes the array cables of CB-W1…CB-W4 and sends AC:INV-W
    combiners = gpd.read_file(pad_move["site"] / "combiners.geojson")
    to_w = sorted(combiners.loc[combiners["to"] == "INV-W", "id"])
    assert to_w == ["CB-W1", "CB-W2", "CB-W3", "CB-W4"]
    pad = {f"A:{c}" for c in to_w} | {"AC:INV-W"}
    scope = {r["id"]: r["scope"] for r in circuits}
    assert {c for c, s in scope.items() if s == "route"} == pad
    # ranked: every line of the pad's circuits comes before any other circuit line
    order = [r["scope"] for r in circuits]
    assert order == sorted(order, key=["route", "value", "follows"].index)
    # the strings of those combiners change only in their cumulative drop, caused by their
    # own combiner's array cable (the old plan's schedule says where each string lands)
    old = {r["circuit_id"]: r for r in read_rows(pad_move["old"] / "cable_schedule.csv")}
    strings_w = {c for c, r in old.items() if r["kind"] == "string" and r["to_id"] in to_w}
    follows = {r["id"]: r for r in circuits if r["scope"] == "follows"}
    assert set(follows) == strings_w
    for c, r in follows.items():
        assert r["field"] == "vdrop_total_pct"
        assert r["cause"] == f"A:{old[c]['to_id']}"
    # circuits whose own values changed share a trench segment with a circuit of the pad
    shared = set()
    for plan in ("old", "new"):
        for seg in read_rows(pad_move[plan] / "trench_schedule.csv"):
            ids = set(seg["circuit_ids"].split(";"))
            if ids & pad:
                shared |= ids
    assert {c for c, s in scope.items() if s == "value"} <= shared
    # on screen: one summary line per cause, with the number of strings
    for cb in to_w:
        n = sum(1 for r in old.values() if r["kind"] == "string" and r["to_id"] == cb)
        assert f"  {n} string circuits: cumulative DC drop " in output
        assert f"after A:{cb} (" in output
    assert output.index("their route, cable or status:") < output.index("only the cumulative")


def test_every_circuit_value_is_old_new_and_their_difference(pad_move):
    _, rows = run_diff(pad_move["old"], pad_move["new"], pad_move["tmp"] / "d2")
    old = {r["circuit_id"]: r for r in read_rows(pad_move["old"] / "cable_schedule.csv")}
    new = {r["circuit_id"]: r for r in read_rows(pad_move["new"] / "cable_schedule.csv")}
    numbers = 0
    for r in (r for r in rows if r["section"] == "circuit" and r["change"] == "changed"):
        assert r["old"] == old[r["id"]][r["field"]]
        assert r["new"] == new[r["id"]][r["field"]]
        if r["delta"]:
            numbers += 1
            places = len(r["old"].partition(".")[2])
            assert float(r["delta"]) == pytest.approx(
                float(r["new"]) - float(r["old"]), abs=0.6 * 10**-places
            )
    assert numbers > 0
    # AC:INV-W: the pad moved 20.0 m further from its transformer station along the trench
    route = next(r for r in rows if r["id"] == "AC:INV-W" and r["field"] == "route_m")
    assert float(route["delta"]) == pytest.approx(20.0, abs=0.01)


def test_plant_deltas_are_the_difference_of_the_two_runs_totals(pad_move):
    output, rows = run_diff(pad_move["old"], pad_move["new"], pad_move["tmp"] / "d3")
    summaries = {
        p: json.loads((pad_move[p] / "summary.json").read_text(encoding="utf-8"))
        for p in ("old", "new")
    }

    def total(p: str, key: str) -> float:
        return float(summaries[p][key])

    plant = {r["id"]: r for r in rows if r["section"] == "plant"}
    # each total is shown rounded (kW, MWh/year to 3 decimals, metres to 2) and the delta is
    # the difference of the values shown: within one unit of the last decimal
    losses = plant["losses at operating current"]
    expected = (total("new", "loss_w_total") - total("old", "loss_w_total")) / 1000
    assert float(losses["delta"]) == pytest.approx(expected, abs=1e-3)
    energy = plant["energy loss"]
    expected = (
        total("new", "energy_loss_kwh_total") - total("old", "energy_loss_kwh_total")
    ) / 1000
    assert float(energy["delta"]) == pytest.approx(expected, abs=1e-3)
    cable = plant["cable, all (conductor metres)"]
    expected = total("new", "conductor_m_total") - total("old", "conductor_m_total")
    assert float(cable["delta"]) == pytest.approx(expected, abs=0.01)
    assert float(cable["delta"]) == pytest.approx(
        float(cable["new"]) - float(cable["old"]), abs=1e-9
    )
    # cable metres by kind, material and size: the schedules' cable_m × conductors, summed
    sums: dict[str, dict[str, float]] = {"old": defaultdict(float), "new": defaultdict(float)}
    for p in ("old", "new"):
        for r in read_rows(pad_move[p] / "cable_schedule.csv"):
            key = f"cable {r['kind']} {r['material']} {float(r['size_mm2']):.1f} mm²"
            sums[p][key] += float(r["cable_m"]) * int(r["conductors"])
    for key in set(sums["old"]) | set(sums["new"]):
        d = sums["new"].get(key, 0.0) - sums["old"].get(key, 0.0)
        if abs(d) < 0.01:
            assert key not in plant
            continue
        # rounding: each schedule line to 0.01 m, the bill line to 0.01 m
        assert float(plant[key]["delta"]) == pytest.approx(d, abs=0.05), key
    # nothing fails before or after: the count lines are no change
    assert "failing circuits" not in plant
    assert "  failing circuits" in output and "0 → 0 (+0)" in output


def test_how_each_changed_circuit_looks_on_the_change_map(split):
    """The map's categories: added circuits, and A:CB1, which carries 7 strings instead of 5
    (IEC 62548 design current 1.25 × Isc × strings, from memory): a larger conductor."""
    d = diff_outputs(split["old"], split["new"])
    look = dict(zip(d.circuits["circuit_id"], d.circuits["look"], strict=True))
    assert look["R3/S1"] == look["R3/S2"] == "added"
    old = {r["circuit_id"]: r for r in read_rows(split["old"] / "cable_schedule.csv")}
    new = {r["circuit_id"]: r for r in read_rows(split["new"] / "cable_schedule.csv")}
    section = {  # conductor cross-section per pole, mm² × parallel sets
        p: float(s["A:CB1"]["size_mm2"]) * int(s["A:CB1"]["parallel"])
        for p, s in (("old", old), ("new", new))
    }
    assert section["new"] > section["old"]
    assert look["A:CB1"] == "size up"
    assert set(d.circuits["scope"]) <= {"route", "value", "follows"}


def test_a_different_rule_set_or_version_is_said_first(split, tmp_path):
    """A value may change because the plans were made under other rules or by another
    version, not only because the layout changed: the diff says so before anything else."""
    other = tmp_path / "other"
    shutil.copytree(split["new"], other)
    path = other / "summary.json"
    summary = json.loads(path.read_text(encoding="utf-8"))
    old_version = summary["tool"]["version"]
    summary["tool"]["version"] = "9.9.9"
    summary["site"]["name"] = "Renamed <site>"
    path.write_text(json.dumps(summary), encoding="utf-8")
    result = runner.invoke(app, ["diff", str(split["old"]), str(other)])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines.pop(0) == (  # the summary was edited here to stand for another version's
        f"warning: {path} was edited since routeplan wrote it (it no longer matches its "
        "folder's manifest): the comparison shows the edits as changes"
    )
    assert lines[:2] == [
        f"note: the plans differ in routeplan version: {old_version} → 9.9.9",
        "note: the plans differ in site name: Lengths by hand → Renamed <site>",
    ]
