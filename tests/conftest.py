"""Shared test helpers: a small valid site built in memory, written in any format."""

from __future__ import annotations

import copy
from pathlib import Path

import geopandas as gpd
import pytest
from shapely.geometry import LineString, Point, Polygon

#: WGS 84 / UTM zone 33N, the projected CRS of the hand-built test sites
UTM33 = "EPSG:32633"
E0, N0 = 500_000.0, 5_300_000.0  # near the central meridian of zone 33 (15° E, ~47.8° N)

SITE_TOML = """
[site]
name = "Test site"

[modules.mod1]
isc_a = 13.0
imp_a = 12.3
voc_v = 49.5
vmp_v = 41.2
per_string = 26
max_fuse_a = 25
voc_temp_coeff_pct_per_c = -0.28

[design]
snap_m = 20.0
"""


def base_frames(crs: str = UTM33) -> dict[str, gpd.GeoDataFrame]:
    """A tiny valid site: 2 rows → 1 combiner → 1 inverter → grid, along an L-shaped trench."""

    def xy(x: float, y: float) -> tuple[float, float]:
        return (E0 + x, N0 + y)

    rows = gpd.GeoDataFrame(
        {
            "id": ["R1", "R2"],
            "strings": [2, 3],
            "module": ["mod1", "mod1"],
            "to": ["CB1", "CB1"],
        },
        geometry=[
            LineString([xy(0, 10), xy(40, 10)]),
            Polygon([xy(0, 20), xy(40, 20), xy(40, 24), xy(0, 24)]),
        ],
        crs=UTM33,
    )
    combiners = gpd.GeoDataFrame(
        {"id": ["CB1"], "to": ["INV1"], "max_strings": [12]}, geometry=[Point(xy(45, 0))], crs=UTM33
    )
    inverters = gpd.GeoDataFrame(
        {"id": ["INV1"], "ac_kva": [250.0], "ac_v": [800.0], "phases": [3], "to": ["G1"]},
        geometry=[Point(xy(100, -2))],
        crs=UTM33,
    )
    trenches = gpd.GeoDataFrame(
        {"id": ["T1", "T2"], "depth_m": [0.8, None], "laying": ["direct", "duct"]},
        geometry=[LineString([xy(42, 30), xy(42, 0)]), LineString([xy(42, 0), xy(150, 0)])],
        crs=UTM33,
    )
    grid = gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(150, 3))], crs=UTM33)
    frames = {
        "rows": rows,
        "combiners": combiners,
        "inverters": inverters,
        "trenches": trenches,
        "grid": grid,
    }
    if crs != UTM33:
        frames = {k: v.to_crs(crs) for k, v in frames.items()}
    return frames


EXT = {"geojson": ".geojson", "gpkg": ".gpkg", "shp": ".shp"}


def write_site(
    root: Path,
    frames: dict[str, gpd.GeoDataFrame] | None = None,
    fmt: str = "geojson",
    toml: str = SITE_TOML,
) -> Path:
    """Write a site folder: one file per layer (``fmt``) or one site.gpkg (``fmt="site.gpkg"``)."""
    frames = base_frames() if frames is None else frames
    root.mkdir(parents=True, exist_ok=True)
    (root / "site.toml").write_text(toml, encoding="utf-8")
    for name, frame in frames.items():
        if fmt == "site.gpkg":
            frame.to_file(root / "site.gpkg", layer=name, engine="pyogrio")
        else:
            frame.to_file(root / f"{name}{EXT[fmt]}", engine="pyogrio")
    return root


@pytest.fixture
def frames() -> dict[str, gpd.GeoDataFrame]:
    return copy.deepcopy(base_frames())


@pytest.fixture
def site_dir(tmp_path: Path) -> Path:
    return write_site(tmp_path / "site")
