"""Trench capacity end to end: a segment exactly full is within its limit (fill 1.000, status
ok, exit 0); one cable set more is over (status over, exit 1, counted in the summary).

The rule (README, trench schedule): ``fill = cable_sets / max_circuits``, where a circuit laid
as n parallel sets counts n times, and a segment is over when ``cable_sets > max_circuits``.
The counts are worked out by hand from the base site's geometry (tests/conftest.py): row R1
(2 strings) meets trench T1 (x = 42, y 30 → 0) at y = 10, row R2 (3 strings) at y = 20, and
combiner CB1 (45, 0) meets T2 (y = 0, x 42 → 150) at x = 45. So T1 is cut at y = 20 and 10,
chainage 30 - y from its first vertex (42, 30): T1@0.0-10.0 (y 30 → 20) carries nothing,
T1@10.0-20.0 (y 20 → 10) R2's 3 strings, T1@20.0-30.0 (y 10 → 0) all 5, and T2@0.0-3.0
(x 42 → 45, chainage x - 42) the 5 strings into the combiner.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import geopandas as gpd
from shapely.geometry import LineString
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site

runner = CliRunner()
WITHIN = "result: every circuit and trench segment within its limits"
FAILING = (
    "result: SOME CIRCUITS, TRENCH SEGMENTS OR INVERTER INPUTS FAIL A LIMIT "
    "(see status, note and remedy)"
)


def plan(tmp_path: Path, frames, toml: str = SITE_TOML):
    site = write_site(tmp_path / "site", frames, toml=toml)
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--no-cache"])
    with open(out / "trench_schedule.csv", encoding="utf-8", newline="") as fh:
        segments = {r["segment_id"]: r for r in csv.DictReader(fh)}
    with open(out / "cable_schedule.csv", encoding="utf-8", newline="") as fh:
        circuits = list(csv.DictReader(fh))
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    return result, segments, circuits, summary


def assert_rule(segments: dict[str, dict[str, str]]) -> None:
    """fill and status of every line follow the rule, from the line's own counts."""
    for sid, s in segments.items():
        if s["max_circuits"] == "":
            assert s["fill"] == "" and s["status"] == "ok", sid
            continue
        sets, cap = int(s["cable_sets"]), float(s["max_circuits"])
        assert s["fill"] == f"{sets / cap:.3f}", sid
        assert s["status"] == ("over" if sets > cap else "ok"), sid


def with_capacity(t1: float, t2: float):
    frames = base_frames()
    frames["trenches"]["max_circuits"] = [t1, t2]
    return frames


def test_a_segment_exactly_full_is_within_its_limit(tmp_path):
    result, segments, circuits, summary = plan(tmp_path, with_capacity(5, 5))
    assert result.exit_code == 0, result.output
    for sid in ("T1@20.0-30.0", "T2@0.0-3.0"):  # 5 strings where 5 are allowed
        s = segments[sid]
        assert (s["circuits"], s["cable_sets"], s["fill"], s["status"]) == ("5", "5", "1.000", "ok")
    assert (
        segments["T1@10.0-20.0"]["fill"] == "0.600" and segments["T1@0.0-10.0"]["fill"] == "0.000"
    )
    assert_rule(segments)
    assert {c["status"] for c in circuits} == {"ok"}
    assert summary["ok"] is True and summary["segments"]["over_capacity"] == 0
    assert "trench segments: 6, over capacity: 0" in result.stdout
    assert WITHIN in result.stdout


def test_one_circuit_over_fails_the_plan(tmp_path):
    result, segments, circuits, summary = plan(tmp_path, with_capacity(4, 5))
    assert result.exit_code == 1, result.output
    assert (segments["T1@20.0-30.0"]["fill"], segments["T1@20.0-30.0"]["status"]) == (
        "1.250",
        "over",
    )
    assert (segments["T1@10.0-20.0"]["fill"], segments["T1@10.0-20.0"]["status"]) == ("0.750", "ok")
    assert (segments["T2@0.0-3.0"]["fill"], segments["T2@0.0-3.0"]["status"]) == ("1.000", "ok")
    assert [sid for sid, s in segments.items() if s["status"] == "over"] == ["T1@20.0-30.0"]
    assert_rule(segments)
    assert {c["status"] for c in circuits} == {"ok"}  # the segment alone fails the plan
    assert summary["ok"] is False and summary["segments"]["over_capacity"] == 1
    assert "trench segments: 6, over capacity: 1" in result.stdout
    assert FAILING in result.stdout


def parallel_site(cap_t3: float):
    """T2 ends at the inverter's tap (x = 100) and T3 carries the AC circuit on to the grid;
    AC cables limited to 50 mm² are laid as 3 parallel sets (each set takes a place). T3 runs
    (100, 0) → (150, 0), uncut (the grid point taps its end): T3@0.0-50.0."""

    def xy(x: float, y: float) -> tuple[float, float]:
        return (E0 + x, N0 + y)

    frames = base_frames()
    frames["trenches"] = gpd.GeoDataFrame(
        {
            "id": ["T1", "T2", "T3"],
            "depth_m": [0.8, None, None],
            "laying": ["direct", "duct", "duct"],
            "max_circuits": [5, 5, cap_t3],
        },
        geometry=[
            LineString([xy(42, 30), xy(42, 0)]),
            LineString([xy(42, 0), xy(100, 0)]),
            LineString([xy(100, 0), xy(150, 0)]),
        ],
        crs=UTM33,
    )
    return frames, SITE_TOML + "\n[design.sizes_mm2]\nac = [50]\n"


def test_parallel_sets_fill_the_trench(tmp_path):
    result, segments, circuits, summary = plan(tmp_path / "full", *parallel_site(3))
    ac = next(c for c in circuits if c["kind"] == "ac")
    assert ac["parallel"] == "3" and ac["status"] == "ok"
    s = segments["T3@0.0-50.0"]
    assert (s["circuits"], s["cable_sets"], s["fill"], s["status"]) == ("1", "3", "1.000", "ok")
    assert result.exit_code == 0, result.output
    assert_rule(segments)

    result, segments, circuits, summary = plan(tmp_path / "over", *parallel_site(2))
    s = segments["T3@0.0-50.0"]
    # one circuit where two are allowed, but three cable sets: over
    assert (s["circuits"], s["cable_sets"], s["fill"], s["status"]) == ("1", "3", "1.500", "over")
    assert result.exit_code == 1, result.output
    assert summary["segments"]["over_capacity"] == 1
    assert_rule(segments)
