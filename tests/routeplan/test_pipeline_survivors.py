"""The cable schedule's ``governing`` column (:func:`routeplan.pipeline.circuit_table`) on
the edge cases of small invented sites planned in memory: a circuit ruled by the very first
air stretch (the first row's stub), a circuit with neither a trench segment nor an air
stretch (an inverter whose grid point is at the inverter itself: "air", the calc's assumed
environment), and the refusal of a site whose trench network has no segment at all (so
the schedule never has to name a segment of an empty network).

Base site: tests/conftest.py's ``base_frames`` (rows R1, 2 strings, and R2, 3 strings, → CB1
→ INV1 → G1; trench T1 (42, 30) → (42, 0), T2 (42, 0) → (150, 0)). Lengths are worked out
by hand from the coordinates and checked with shapely.
"""

from __future__ import annotations

import geopandas as gpd
import pytest
import shapely
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from layers import Problem
from routeplan.cli import app
from routeplan.errors import NotConnectedError
from routeplan.pipeline import plan

from ..conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def by_id(frame):
    return frame.set_index("circuit_id")


def test_the_first_air_stretch_can_govern(tmp_path):
    # Air at 80 degC (the settings' upper limit), ground at -20 degC (their lower limit) of
    # low thermal resistivity 0.5 K.m/W, string cables straight off their row (row_run_factor
    # 0: no row run in air). In air the PV cable's ambient factor drops to 0.82 (EN 50618:2014
    # Table A.4, 1.00 up to 60 degC; from memory, as calc's table file); buried, the factors
    # rise above 1 (IEC 60364-5-52:2009 Table B.52.15, 1.07 at 10 degC already for XLPE;
    # Table B.52.16, 1.88 direct / 1.28 in duct at 0.5 K.m/W; from memory, as calc's files).
    # So each string is ruled by its only air stretch, its row's stub: R1's by "stub R1", the
    # first stretch of the plan (stretches: every tap's stub in tap order, rows first, then
    # the row runs), R2's by "stub R2", the second
    toml = SITE_TOML.replace(
        "[design]\n", "[design]\nair_temp_c = 80.0\nground_temp_c = -20.0\nsoil_k_m_w = 0.5\n"
    )
    toml += "[allowances]\nrow_run_factor = 0.0\n"
    p = plan(write_site(tmp_path / "site", base_frames(), toml=toml))
    assert p.routes.air["stretch_id"].tolist()[:2] == ["stub R1", "stub R2"]
    c = by_id(p.circuits)
    assert c.loc[["R1/S1", "R1/S2"], "governing"].tolist() == ["stub R1"] * 2
    assert c.loc[["R2/S1", "R2/S2", "R2/S3"], "governing"].tolist() == ["stub R2"] * 3
    # hand: R1 (y = 10) ends at x = 40, 2 m west of T1 (x = 42): a 2 m stub in air
    r1_end = shapely.Point(xy(40, 10))
    assert r1_end.distance(LineString([xy(42, 30), xy(42, 0)])) == pytest.approx(2.0)
    assert c.loc["R1/S1", "stub_m"] == pytest.approx(2.0)


def test_a_circuit_with_neither_segment_nor_air_stretch_is_governed_by_air(tmp_path):
    # INV1 stands on T2's east end (150, 0) and its grid point G1 at the same place: the AC
    # circuit has no trench segment and no stub (0 m each), so nothing of the route governs;
    # calc assumes air for it, and the schedule says "air"
    f = base_frames()
    f["inverters"] = f["inverters"].set_geometry([Point(xy(150, 0))], crs=UTM33)
    f["grid"] = f["grid"].set_geometry([Point(xy(150, 0))], crs=UTM33)
    c = by_id(plan(write_site(tmp_path / "site", f)).circuits)
    ac = c.loc["AC:INV1"]
    assert (ac["route_m"], ac["stub_m"], ac["trench_segments"]) == (0.0, 0.0, "")
    assert ac["governing"] == "air"
    assert ac["note"] == "no route environment given: in air assumed"
    # the array circuit CB1 (45, 0) → INV1 (150, 0) runs along T2 from chainage 3 to its end
    # at 108 (hand: 150 - 42), both on the trench line: 105 m, no stub (shapely below)
    t2 = LineString([xy(42, 0), xy(150, 0)])
    assert t2.project(Point(xy(150, 0))) - t2.project(Point(xy(45, 0))) == pytest.approx(105.0)
    assert c.loc["A:CB1", "route_m"] == pytest.approx(105.0)
    assert c.loc["A:CB1", "trench_segments"] == "T2@3.0-108.0"
    assert c.loc["A:CB1", "governing"] == "T2@3.0-108.0"


def test_a_site_whose_trenches_make_no_segment_is_refused(tmp_path):
    # the only trench is 5 cm long, shorter than 2 node_tol (0.2 m): its two ends are one
    # node and no segment is left; the plan stops before any schedule is drawn up (R1 alone,
    # every feature within snap_m of the trench: the missing segment is the only problem)
    f = base_frames()
    f["rows"] = f["rows"].iloc[:1]
    f["trenches"] = gpd.GeoDataFrame(
        {"id": ["T1"], "depth_m": [0.8], "laying": ["direct"]},
        geometry=[LineString([xy(42, 0), xy(42.05, 0)])],
        crs=UTM33,
    )
    for layer, y in (("combiners", -3), ("inverters", -6), ("grid", -9)):
        f[layer] = f[layer].set_geometry([Point(xy(42, y))], crs=UTM33)
    site = write_site(tmp_path / "site", f)
    with pytest.raises(NotConnectedError) as e:
        plan(site)
    assert e.value.problems == [Problem("trenches", None, "no trench to route on")]
    out = tmp_path / "out"
    r = CliRunner().invoke(app, ["plan", str(site), "--out", str(out)])
    assert r.exit_code == 2
    assert r.output == (
        "error: trenches: no trench to route on\n1 problem(s) in the input; nothing was planned.\n"
    )
    assert not out.exists()


def test_trench_fill_in_cable_sets_or_circuits_whichever_the_trench_gives(tmp_path):
    # tests/conftest.py's tiny site (see test_pipeline_tables.py::test_trench_schedule_fill_
    # against_capacity for the segments, counted by hand): T1 limited to 4 cable sets, T2 to 5
    # circuits. Every circuit is one set, so T1's fill is 0/4, 3/4, 5/4 (over) in cable sets,
    # T2's 5/5, 1/5, 1/5 in circuits
    frames = base_frames()
    frames["trenches"]["max_cable_sets"] = [4.0, float("nan")]
    frames["trenches"]["max_circuits"] = [float("nan"), 5.0]
    s = plan(write_site(tmp_path / "site", frames)).segments.set_index("segment_id")
    assert s["fill_basis"].tolist() == ["cable_sets"] * 3 + ["circuits"] * 3
    assert s["fill"].tolist() == pytest.approx([0.0, 0.75, 1.25, 1.0, 0.2, 0.2])
    assert s["status"].tolist() == ["ok", "ok", "over", "ok", "ok", "ok"]
    assert s["max_cable_sets"].tolist()[:3] == [4.0] * 3
    # a trench giving neither: no fill, no basis, never over
    frames = base_frames()
    s = plan(write_site(tmp_path / "site2", frames)).segments.set_index("segment_id")
    assert s["fill_basis"].tolist() == [""] * 6
    assert s["fill"].isna().all() and (s["status"] == "ok").all()
