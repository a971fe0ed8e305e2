"""A network left without a segment that joins two nodes — every segment a loop, or none left
at the joining tolerance — has an empty graph, and the site is reported, never a traceback
(before, building the graph failed with an IndexError, reported as an internal error).

Hand: a trench 0.8 m long with ``node_tol_m = 1 m`` has both ends within the tolerance of each
other: they join into one node, and the piece between them, a loop shorter than twice the
tolerance, is dropped (build_network's Notes), so there is no trench to route on. A closed
ring trench whose every feature taps it at its start is one segment from that node back to
itself: a loop, which never lies on a shortest path.
"""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import shapely
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.network import build_network

from ..conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site
from .conftest import SITE_GRID

runner = CliRunner()


def test_a_trench_shorter_than_the_tolerance_is_reported_in_one_line(tmp_path):
    def xy(x: float, y: float) -> tuple[float, float]:
        return (E0 + x, N0 + y)

    frames = base_frames()
    frames["rows"] = (
        frames["rows"].iloc[:1].set_geometry([LineString([xy(0.2, 2), xy(0.2, 10)])], crs=UTM33)
    )
    frames["rows"]["to"] = "INV1"
    frames["combiners"] = frames["combiners"].iloc[0:0]
    frames["inverters"] = frames["inverters"].set_geometry([Point(xy(0.4, -1))], crs=UTM33)
    frames["inverters"]["to"] = None
    frames["grid"] = frames["grid"].iloc[0:0]
    frames["trenches"] = gpd.GeoDataFrame(
        {"id": ["T1"]}, geometry=[LineString([xy(0, 0), xy(0.8, 0)])], crs=UTM33
    )
    toml = SITE_TOML.replace("snap_m = 20.0", "snap_m = 20.0\nnode_tol_m = 1.0")
    site = write_site(tmp_path / "site", frames, toml=toml)
    for args in (["check", str(site)], ["plan", str(site), "--out", str(tmp_path / "out")]):
        result = runner.invoke(app, args)
        assert result.exit_code == 2, result.output
        assert result.stderr == (
            "error: trenches: no trench to route on\n"
            "1 problem(s) in the input; nothing was planned.\n"
        )
        assert "Traceback" not in result.output
    assert not (tmp_path / "out").exists()


def test_a_ring_tapped_at_its_start_only_has_no_edge():
    ring = shapely.LineString([(0, 0), (40, 0), (40, 30), (0, 30), (0, 0)])
    trenches = gpd.GeoDataFrame({"id": ["RING"]}, geometry=[ring], crs=SITE_GRID)
    equipment = gpd.GeoDataFrame(
        {"layer": ["rows", "inverters"], "feature_id": ["R1", "INV1"]},
        geometry=[shapely.Point(0, -2), shapely.Point(-1, 0)],
        crs=SITE_GRID,
    )
    net = build_network(trenches, equipment)
    assert net.n_nodes == 1 and len(net.segments) == 1  # the ring, from its node to itself
    assert net.graph.nnz == 0  # a loop never lies on a shortest path
    assert net.node_island.tolist() == [0]
    assert net.segment_between(np.zeros(0, np.int64), np.zeros(0, np.int64)).tolist() == []
