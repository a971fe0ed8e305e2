"""Invented sites for the README's promises, end to end (``test_promise_*.py``).

Two hand-drawn sites in WGS 84 / UTM zone 33N near its central meridian (``tests.conftest``:
E0, N0), in local metres (x east, y north of (E0, N0)); every value is made up:

- :func:`lengths_frames`, the *lengths site*: two trenches at right angles, two module rows
  (a line and a rotated rectangle), one combiner, one inverter and one grid point at known
  offsets, so that every route, stub, row run and segment is worked out by hand below
  (:data:`HAND`).
- :func:`rich_frames`, the *rich site*: every attribute of every layer set to a value that
  changes the plan (a row sent to a farther combiner, a combiner's capacity that turns a row
  away, a fixed fuse, two DC inputs, a single-phase inverter, per-trench depth, laying,
  spacing, soil and capacity, …), for the tests that compare two ways of writing one site.
"""

from __future__ import annotations

import math
from pathlib import Path

import geopandas as gpd
import numpy as np
from shapely.geometry import LineString, Point, Polygon
from typer.testing import CliRunner

from routeplan.cli import app
from tests.conftest import E0, N0, UTM33, write_site

runner = CliRunner()


def xy(x: float, y: float) -> tuple[float, float]:
    """Local metres → UTM 33N coordinates."""
    return (E0 + x, N0 + y)


# -- the lengths site ----------------------------------------------------------------------

#: allowances of the lengths site (site.toml [allowances]): invented, not the defaults
SLACK_PCT, TERMINATION_M, ROW_RUN_FACTOR = 4.0, 1.5, 0.6

LENGTHS_TOML = f"""
[site]
name = "Lengths by hand"

[modules.m1]
isc_a = 13.0
imp_a = 12.3
voc_v = 49.5
vmp_v = 41.2
per_string = 25  # 25 × 49.5 V × 1.2 (cold Voc, no coefficient; from memory) ≤ 1500 V
max_fuse_a = 25

[design.drop_pct]
string = 5
array = 5
dc_total = 8
ac = 5

[allowances]
slack_pct = {SLACK_PCT}
termination_m = {TERMINATION_M}
row_run_factor = {ROW_RUN_FACTOR}
"""

#: the rotated rectangle of row R2: long side (18, 24), short side (−4, 3), from corner A
R2_A = (60.0, 10.0)
R2_CORNERS = [
    R2_A,
    (R2_A[0] + 18, R2_A[1] + 24),
    (R2_A[0] + 18 - 4, R2_A[1] + 24 + 3),
    (R2_A[0] - 4, R2_A[1] + 3),
]


def lengths_frames(
    max_circuits: dict[str, float] | None = None,
    strings: tuple[int, int] = (2, 3),
    cb: tuple[float, float] = (203.0, 4.0),
    capacity_key: str = "max_circuits",
) -> dict[str, gpd.GeoDataFrame]:
    """The lengths site (see the module docstring and :data:`HAND`); the trenches'
    capacities ``max_circuits`` given as the attribute ``capacity_key``.

    T1 runs (0, 0) → (200, 0), direct at 0.8 m; T2 (100, 0) → (100, 80), in duct at the
    default depth: a T at (100, 0). R1 is the line x = 10, y 5…45 (40 m); R2 a rectangle
    rotated by atan(24/18), long side 30 m, its lowest corner (60, 10). CB1 at ``cb``
    (default 3 m east and 4 m north of T1's east end), INV1 6 m east and 8 m north of T2's
    north end, G1 5 m west and 12 m south of T1's west end.
    """
    cap = max_circuits or {}
    rows = gpd.GeoDataFrame(
        {"id": ["R1", "R2"], "strings": list(strings), "module": "m1", "to": "CB1"},
        geometry=[
            LineString([xy(10, 5), xy(10, 45)]),
            Polygon([xy(*c) for c in R2_CORNERS]),
        ],
        crs=UTM33,
    )
    combiners = gpd.GeoDataFrame(
        {"id": ["CB1"], "to": ["INV1"]}, geometry=[Point(xy(*cb))], crs=UTM33
    )
    inverters = gpd.GeoDataFrame(
        {"id": ["INV1"], "ac_kva": [250.0], "ac_v": [800.0], "phases": [3], "to": ["G1"]},
        geometry=[Point(xy(106, 88))],
        crs=UTM33,
    )
    trenches = gpd.GeoDataFrame(
        {
            "id": ["T1", "T2"],
            "depth_m": [0.8, np.nan],
            "laying": ["direct", "duct"],
            capacity_key: [cap.get("T1", np.nan), cap.get("T2", np.nan)],
        },
        geometry=[LineString([xy(0, 0), xy(200, 0)]), LineString([xy(100, 0), xy(100, 80)])],
        crs=UTM33,
    )
    grid = gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(-5, -12))], crs=UTM33)
    return {
        "rows": rows,
        "combiners": combiners,
        "inverters": inverters,
        "trenches": trenches,
        "grid": grid,
    }


# Hand geometry of the lengths site (Pythagoras where a stub meets a trench's end; the
# perpendicular distance where it meets a trench's side).
STUB_R1 = 5.0  # (10, 5) straight down to T1 at (10, 0)
STUB_R2 = 10.0  # R2's lowest corner (60, 10) straight down to T1 at (60, 0)
STUB_CB1 = math.hypot(3, 4)  # 5 m to T1's east end (200, 0)
STUB_INV1 = math.hypot(6, 8)  # 10 m to T2's north end (100, 80)
STUB_G1 = math.hypot(5, 12)  # 13 m to T1's west end (0, 0)
ROW_M = {"R1": 40.0, "R2": math.hypot(18, 24)}  # R2: the long side of its rectangle, 30 m
#: T1 is cut where R1 (x = 10) and R2 (x = 60) tap it and where T2 meets it (x = 100); T1 runs
#: (0, 0) → (200, 0), so the chainage of a cut is its x: T1@0.0-10.0, T1@10.0-60.0, ...; T2 runs
#: (100, 0) → (100, 80) uncut: T2@0.0-80.0
SEGMENT_M = {
    "T1@0.0-10.0": 10.0,
    "T1@10.0-60.0": 50.0,
    "T1@60.0-100.0": 40.0,
    "T1@100.0-200.0": 100.0,
    "T2@0.0-80.0": 80.0,
}

#: circuit → (stub metres, trench segments in route order) — by hand
HAND: dict[str, tuple[float, list[str]]] = {
    "R1/S1": (STUB_R1 + STUB_CB1, ["T1@10.0-60.0", "T1@60.0-100.0", "T1@100.0-200.0"]),
    "R1/S2": (STUB_R1 + STUB_CB1, ["T1@10.0-60.0", "T1@60.0-100.0", "T1@100.0-200.0"]),
    "R2/S1": (STUB_R2 + STUB_CB1, ["T1@60.0-100.0", "T1@100.0-200.0"]),
    "R2/S2": (STUB_R2 + STUB_CB1, ["T1@60.0-100.0", "T1@100.0-200.0"]),
    "R2/S3": (STUB_R2 + STUB_CB1, ["T1@60.0-100.0", "T1@100.0-200.0"]),
    "A:CB1": (STUB_CB1 + STUB_INV1, ["T1@100.0-200.0", "T2@0.0-80.0"]),
    "AC:INV1": (
        STUB_INV1 + STUB_G1,
        ["T2@0.0-80.0", "T1@60.0-100.0", "T1@10.0-60.0", "T1@0.0-10.0"],
    ),
}


def hand_route_m(circuit: str) -> float:
    """route_m = stub + trench segments + stub (README, Method in brief), by hand."""
    stub, segments = HAND[circuit]
    return stub + sum(SEGMENT_M[s] for s in segments)


def hand_cable_m(circuit: str) -> float:
    """cable_m = route_m × (1 + slack/100) + 2 × termination, plus for a string the row run
    factor × its row's length (README, Method in brief), by hand."""
    row_run = ROW_RUN_FACTOR * ROW_M[circuit.split("/")[0]] if "/S" in circuit else 0.0
    return hand_route_m(circuit) * (1 + SLACK_PCT / 100) + 2 * TERMINATION_M + row_run


# -- the rich site ---------------------------------------------------------------------------

RICH_TOML = """
[site]
name = "Every attribute"

[modules.ma]
isc_a = 13.0
imp_a = 12.3
voc_v = 49.5
vmp_v = 41.2
per_string = 25  # 25 × 49.5 V × 1.2 (cold Voc, no coefficient; from memory) ≤ 1500 V
max_fuse_a = 25

[modules.mb]
isc_a = 11.5
imp_a = 10.9
voc_v = 52.0
vmp_v = 43.5
per_string = 24
max_fuse_a = 25
bifaciality = 0.7

[design]
snap_m = 20

[design.drop_pct]
string = 5
array = 5
dc_total = 8
ac = 8
"""


def rich_frames(polygons: bool = True) -> dict[str, gpd.GeoDataFrame]:
    """The rich site. T1 (0, 0) → (300, 0) and T2 (300, 0) → (300, 60); rows above T1 at
    x = 40 (to CB1), 60 (to CB2, past the nearer CB1), 140 (no ``to``: its nearest combiner
    CB2 is full at ``max_strings`` 4, so it goes to CB1) and a rectangle at x = 236…244 (to
    CB3); combiners 3 m below T1 at x = 50, 150, 250, each sent to the farther inverter;
    INV1 a square pad above T2's north end (two DC inputs, pf, ac_max_a), INV2 at T1's west
    end (single-phase), each sent to the farther grid point. ``polygons=False`` draws R4 as
    its centre line and INV1 as its pad's centre (a Shapefile holds one geometry type)."""
    nan = np.nan
    rows = gpd.GeoDataFrame(
        {
            "id": ["R1", "R2", "R3", "R4"],
            "strings": [4, 4, 3, 3],
            "module": ["ma", "mb", "ma", "mb"],
            "to": ["CB1", "CB2", None, "CB3"],
        },
        geometry=[
            LineString([xy(40, 5), xy(40, 35)]),
            LineString([xy(60, 5), xy(60, 35)]),
            LineString([xy(140, 5), xy(140, 35)]),
            Polygon([xy(236, 5), xy(244, 5), xy(244, 35), xy(236, 35)])
            if polygons
            else LineString([xy(240, 5), xy(240, 35)]),
        ],
        crs=UTM33,
    )
    combiners = gpd.GeoDataFrame(
        {
            "id": ["CB1", "CB2", "CB3"],
            "to": ["INV1", "INV1", "INV2"],
            "max_strings": [20, 4, nan],
            "fuse_a": [nan, 25.0, nan],
            "input": [1, 2, nan],
        },
        geometry=[Point(xy(50, -3)), Point(xy(150, -3)), Point(xy(250, -3))],
        crs=UTM33,
    )
    inverters = gpd.GeoDataFrame(
        {
            "id": ["INV1", "INV2"],
            "ac_kva": [250.0, 20.0],
            "ac_v": [800.0, 400.0],
            "phases": [3, 1],
            "pf": [0.95, nan],
            "to": ["G1", "G2"],
            "ac_max_a": [190.0, nan],
            "dc_inputs": [2, 1],
        },
        geometry=[
            Polygon([xy(297, 61), xy(303, 61), xy(303, 67), xy(297, 67)])
            if polygons
            else Point(xy(300, 64)),
            Point(xy(0, -4)),
        ],
        crs=UTM33,
    )
    trenches = gpd.GeoDataFrame(
        {
            "id": ["T1", "T2"],
            "depth_m": [0.9, 0.6],
            "laying": ["direct", "duct"],
            "spacing_m": [0.1, nan],
            "soil_k_m_w": [1.2, nan],
            "max_circuits": [30, nan],
        },
        geometry=[LineString([xy(0, 0), xy(300, 0)]), LineString([xy(300, 0), xy(300, 60)])],
        crs=UTM33,
    )
    grid = gpd.GeoDataFrame(
        {"id": ["G1", "G2"]}, geometry=[Point(xy(-6, 8)), Point(xy(306, 68))], crs=UTM33
    )
    return {
        "rows": rows,
        "combiners": combiners,
        "inverters": inverters,
        "trenches": trenches,
        "grid": grid,
    }


def edited(root: Path) -> Path:
    """The rich site written at ``root`` with row R1 giving 3 strings instead of 4 (its
    circuit R1/S4 goes)."""
    frames = rich_frames()
    frames["rows"].loc[frames["rows"]["id"] == "R1", "strings"] = 3
    return write_site(root, frames, toml=RICH_TOML)


def plan_cli(site: Path, out: Path, *extra: str):
    """``routeplan plan SITE --out OUT`` in-process (typer's CliRunner)."""
    return runner.invoke(app, ["plan", str(site), "--out", str(out), *extra])


def write_and_plan(root: Path, frames, toml: str, *extra: str, fmt: str = "geojson"):
    """Write a site under ``root/site`` and plan it into ``root/out``; (site, out, result)."""
    site = write_site(root / "site", frames, fmt=fmt, toml=toml)
    out = root / "out"
    return site, out, plan_cli(site, out, *extra)
