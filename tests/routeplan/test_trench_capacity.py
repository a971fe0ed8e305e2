"""Trench capacity end to end: a segment exactly full is within its limit (fill 1.000, status
ok, exit 0); one cable set more is over (status over, exit 1, counted in the summary).

The rule (README, trench schedule): a trench gives its capacity as ``max_circuits`` or as
``max_cable_sets`` (not both: refused, exit 2), and ``fill`` is measured against the one
given (``fill_basis``): ``circuits / max_circuits``, or ``cable_sets / max_cable_sets``, where
a circuit laid as n parallel sets counts n times; a segment is over when the count exceeds
the capacity.
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
        if s["max_circuits"] == "" and s["max_cable_sets"] == "":
            assert s["fill"] == "" and s["status"] == "ok" and s["fill_basis"] == "", sid
            continue
        basis = "circuits" if s["max_circuits"] else "cable_sets"
        assert s["fill_basis"] == basis, sid
        count, cap = int(s[basis]), float(s[f"max_{basis}"])
        assert s["fill"] == f"{count / cap:.3f}", sid
        assert s["status"] == ("over" if count > cap else "ok"), sid


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


def parallel_site(cap_t3: float, key: str = "max_cable_sets"):
    """T2 ends at the inverter's tap (x = 100) and T3 carries the AC circuit on to the grid;
    AC cables limited to 50 mm² are laid as 3 parallel sets. T3 runs (100, 0) → (150, 0),
    uncut (the grid point taps its end): T3@0.0-50.0. T3's capacity is ``cap_t3`` given as
    ``key``; T1 and T2 give ``max_circuits`` 5."""

    def xy(x: float, y: float) -> tuple[float, float]:
        return (E0 + x, N0 + y)

    frames = base_frames()
    frames["trenches"] = gpd.GeoDataFrame(
        {
            "id": ["T1", "T2", "T3"],
            "depth_m": [0.8, None, None],
            "laying": ["direct", "duct", "duct"],
            "max_circuits": [5, 5, None if key == "max_cable_sets" else cap_t3],
            "max_cable_sets": [None, None, cap_t3 if key == "max_cable_sets" else None],
        },
        geometry=[
            LineString([xy(42, 30), xy(42, 0)]),
            LineString([xy(42, 0), xy(100, 0)]),
            LineString([xy(100, 0), xy(150, 0)]),
        ],
        crs=UTM33,
    )
    return frames, SITE_TOML + "\n[design.sizes_mm2]\nac = [50]\n"


def test_parallel_sets_fill_a_trench_given_in_cable_sets(tmp_path):
    # T3 holds 3 cable sets: the AC circuit's 3 parallel sets fill it, 3 / 3 = 1.000, ok
    result, segments, circuits, summary = plan(tmp_path / "full", *parallel_site(3))
    ac = next(c for c in circuits if c["kind"] == "ac")
    assert ac["parallel"] == "3" and ac["status"] == "ok"
    s = segments["T3@0.0-50.0"]
    row = (s["circuits"], s["cable_sets"], s["max_cable_sets"], s["max_circuits"])
    assert row == ("1", "3", "3", "")
    assert (s["fill"], s["fill_basis"], s["status"]) == ("1.000", "cable_sets", "ok")
    # T1 and T2 give circuits: 5 strings in 5 places, by circuits
    assert segments["T2@0.0-3.0"]["fill_basis"] == "circuits"
    assert result.exit_code == 0, result.output
    assert_rule(segments)
    # the map's trench tooltip says both counts and the capacity in its own terms
    html = (tmp_path / "full" / "out" / "map.html").read_text(encoding="utf-8")
    assert '"1 (strings 0, arrays 0, AC 1) · 3 cable sets"' in html
    assert '"max 3 cable sets"' in html and '"max 5 circuits"' in html

    result, segments, circuits, summary = plan(tmp_path / "over", *parallel_site(2))
    s = segments["T3@0.0-50.0"]
    # three cable sets where two are allowed: 3 / 2 = 1.500, over
    assert (s["cable_sets"], s["fill"], s["fill_basis"], s["status"]) == (
        "3",
        "1.500",
        "cable_sets",
        "over",
    )
    assert result.exit_code == 1, result.output
    assert summary["segments"]["over_capacity"] == 1
    assert FAILING in result.stdout
    assert_rule(segments)


def test_a_trench_given_in_circuits_counts_circuits(tmp_path):
    # the same 3 parallel sets in a trench that holds 1 circuit: 1 / 1 = 1.000, ok
    result, segments, _, _ = plan(tmp_path, *parallel_site(1, "max_circuits"))
    s = segments["T3@0.0-50.0"]
    assert (s["circuits"], s["cable_sets"], s["fill"], s["fill_basis"], s["status"]) == (
        "1",
        "3",
        "1.000",
        "circuits",
        "ok",
    )
    assert result.exit_code == 0, result.output
    assert_rule(segments)


def test_both_capacities_on_one_trench_are_refused(tmp_path):
    frames, toml = parallel_site(3)
    frames["trenches"]["max_circuits"] = [5, 5, 2]  # T3 now gives both
    site = write_site(tmp_path / "site", frames, toml=toml)
    out = tmp_path / "out"
    for command in (["check", str(site)], ["plan", str(site), "--out", str(out)]):
        result = runner.invoke(app, command)
        assert result.exit_code == 2, result.output
        lines = [x for x in result.stderr.splitlines() if x.startswith("error: ")]
        assert lines == [
            "error: trenches 'T3': gives both max_circuits and max_cable_sets: give the "
            "trench's capacity one way"
        ]
        assert "Traceback" not in result.output
    assert not out.exists()


def test_the_design_default_fills_only_a_trench_that_gives_no_capacity(tmp_path):
    # [design] max_circuits = 2 where a trench gives none: T1 (none given) holds 2 circuits,
    # its busiest segment carries 5 strings, 5 / 2 = 2.500, over; T3 gives 3 cable sets and
    # takes no default circuits (it would be both); T2 gives 5 circuits
    frames, toml = parallel_site(3)
    frames["trenches"]["max_circuits"] = [None, 5, None]
    toml = toml.replace("snap_m = 20.0", "snap_m = 20.0\nmax_circuits = 2")
    result, segments, _, summary = plan(tmp_path, frames, toml)
    assert result.exit_code == 1, result.output
    t1, t3 = segments["T1@20.0-30.0"], segments["T3@0.0-50.0"]
    assert (t1["max_circuits"], t1["fill"], t1["fill_basis"], t1["status"]) == (
        "2",
        "2.500",
        "circuits",
        "over",
    )
    assert (t3["max_circuits"], t3["max_cable_sets"], t3["fill"], t3["fill_basis"]) == (
        "",
        "3",
        "1.000",
        "cable_sets",
    )
    assert_rule(segments)
    assert summary["segments"]["over_capacity"] == sum(
        s["status"] == "over" for s in segments.values()
    )
