"""The schedule's ``governing`` column names the stretch of a circuit's route where its capacity
governs: one of its own trench segments, its stub in air ('stub <id>') or its row run
('row run <row>') — columns.py — and ``group_count`` is what is grouped there.

The site (invented) is laid out so that the answer follows from the route alone: one trench
drawn from the grid point (x = 200) back to x = 0, so that its first segment T1@0.0-50.0
(x 200 → 150, chainage 0 → 50 m from the trench's first vertex) is the AC circuit's whole
route; three combiners on the trench at x = 20, 60, 100, each with a row of 5 strings at right
angles above it; the inverter at x = 150. No row runs
(``row_run_factor = 0``), so each string runs in air on its row's stub only, the first stretch
in air of the site (rows are tapped first). With the rows touching the trench there is no
stretch at all on a string's route: open air governs (``air``, nothing grouped).
"""

from __future__ import annotations

import csv
from pathlib import Path

import geopandas as gpd
import pytest
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import E0, N0, UTM33, write_site

runner = CliRunner()
COMBINER_X = (20.0, 60.0, 100.0)
TOML = """
[site]
name = "Governing test site"

[modules.m1]
isc_a = 13.0
imp_a = 12.3
voc_v = 49.5
vmp_v = 41.2
per_string = 24
max_fuse_a = 25

[allowances]
row_run_factor = 0.0
"""


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def plan(tmp_path: Path, row_start_m: float) -> tuple[dict, dict]:
    frames = {
        "rows": gpd.GeoDataFrame(
            {
                "id": ["R1", "R2", "R3"],
                "strings": 5,
                "module": "m1",
                "to": ["CB1", "CB2", "CB3"],
            },
            geometry=[LineString([xy(x, row_start_m), xy(x, 30)]) for x in COMBINER_X],
            crs=UTM33,
        ),
        "combiners": gpd.GeoDataFrame(
            {"id": ["CB1", "CB2", "CB3"], "to": "INV1"},
            geometry=[Point(xy(x, 0)) for x in COMBINER_X],
            crs=UTM33,
        ),
        "inverters": gpd.GeoDataFrame(
            {"id": ["INV1"], "ac_kva": [500.0], "ac_v": [800.0], "phases": [3], "to": ["G1"]},
            geometry=[Point(xy(150, 0))],
            crs=UTM33,
        ),
        "trenches": gpd.GeoDataFrame(
            {"id": ["T1"]}, geometry=[LineString([xy(200, 0), xy(0, 0)])], crs=UTM33
        ),
        "grid": gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(200, 0))], crs=UTM33),
    }
    site = write_site(tmp_path / "site", frames, toml=TOML)
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    with open(out / "cable_schedule.csv", encoding="utf-8", newline="") as fh:
        circuits = {r["circuit_id"]: r for r in csv.DictReader(fh)}
    with open(out / "trench_schedule.csv", encoding="utf-8", newline="") as fh:
        segments = {r["segment_id"]: r for r in csv.DictReader(fh)}
    return circuits, segments


def assert_on_its_route(c: dict[str, str], segments: dict) -> None:
    """``governing`` is a stretch of the circuit's own route, with its grouping."""
    g = c["governing"]
    if g in segments:
        assert g in c["trench_segments"].split(";")
        assert c["group_count"] == segments[g]["cable_sets"]
    elif g.startswith("stub "):
        assert g[5:] in (c["from_id"], c["to_id"]) and float(c["stub_m"]) > 0
    elif g.startswith("row run "):
        assert g[8:] == c["from_id"] and float(c["row_run_m"]) > 0
    else:
        pytest.fail(f"{c['circuit_id']}: governing {g!r} is no stretch of its route")


def test_each_circuit_is_governed_on_its_own_route(tmp_path):
    circuits, segments = plan(tmp_path, row_start_m=6.0)
    # hand: T1 runs x 200 → 0, split at the inverter (x 150) and the combiners (x 100, 60, 20);
    # chainage = 200 - x: 0, 50, 100, 140, 180, 200 m
    assert list(segments) == [
        "T1@0.0-50.0",
        "T1@50.0-100.0",
        "T1@100.0-140.0",
        "T1@140.0-180.0",
        "T1@180.0-200.0",
    ]
    for c in circuits.values():
        assert_on_its_route(c, segments)
    # the AC circuit runs in T1@0.0-50.0 only, the first segment: it governs, with its cable sets
    ac = circuits["AC:INV1"]
    assert (ac["trench_segments"], ac["governing"]) == ("T1@0.0-50.0", "T1@0.0-50.0")
    assert ac["group_count"] == ac["parallel"] == segments["T1@0.0-50.0"]["cable_sets"]
    # the three array circuits meet in T1@50.0-100.0 (x 150 → 100), the most grouped of each
    for k in (1, 2, 3):
        a = circuits[f"A:CB{k}"]
        assert (a["governing"], a["group_count"]) == ("T1@50.0-100.0", "3")
    # each string runs in air on its row's stub only, with the row's 5 strings
    for k in (1, 2, 3):
        for s in range(1, 6):
            c = circuits[f"R{k}/S{s}"]
            assert (c["trench_segments"], c["row_run_m"], c["stub_m"]) == ("", "0.00", "6.00")
            assert (c["governing"], c["group_count"]) == (f"stub R{k}", "5")


def test_a_route_without_any_stretch_is_governed_by_open_air(tmp_path):
    circuits, segments = plan(tmp_path, row_start_m=0.0)  # rows touch the trench
    for c in circuits.values():
        if c["kind"] != "string":
            assert_on_its_route(c, segments)
    strings = [c for c in circuits.values() if c["kind"] == "string"]
    assert len(strings) == 15
    for c in strings:
        assert (c["route_m"], c["stub_m"], c["trench_segments"]) == ("0.00", "0.00", "")
        assert (c["governing"], c["group_count"]) == ("air", "0")
    assert circuits["AC:INV1"]["governing"] == "T1@0.0-50.0"
