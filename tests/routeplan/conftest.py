"""Invented test sites for routing.

Every site here is made up for the tests. ``make_site`` builds a :class:`layers.model.Site`
from in-memory features through :func:`layers.build_site` — the only place that constructs
a Site.
"""

from __future__ import annotations

import math
import shutil
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

import geopandas as gpd
import pyproj
import pytest
import shapely

import layers
from layers.model import Site

#: a projected CRS in metres for the invented sites: a transverse Mercator grid (scale 1) whose
#: origin (0, 0) lies at 15° E, 48° N, so sites drawn around (0, 0) lie where their CRS measures
#: lengths truly. (UTM zone 33N would put (0, 0) at 10.5° E on the equator, outside the zone's
#: area of use, where it stretches lengths by 0.27 %: layers refuses that.)
SITE_GRID = "+proj=tmerc +lat_0=48 +lon_0=15 +k=1 +x_0=0 +y_0=0 +datum=WGS84 +units=m +type=crs"

_COLUMNS: dict[str, dict[str, Any]] = {
    "rows": {"id": None, "strings": 1, "module": "M1", "to": None},
    "combiners": {"id": None, "to": None, "max_strings": math.nan, "fuse_a": math.nan},
    "inverters": {
        "id": None,
        "ac_kva": 100.0,
        "ac_v": 400.0,
        "phases": 3,
        "pf": math.nan,
        "to": None,
    },
    "trenches": {
        "id": None,
        "depth_m": math.nan,
        "laying": None,
        "spacing_m": math.nan,
        "soil_k_m_w": math.nan,
        "max_circuits": math.nan,
    },
    "grid": {"id": None},
}


def _frame(name: str, features: Iterable[Mapping[str, Any]], crs: Any) -> gpd.GeoDataFrame:
    cols = _COLUMNS[name]
    records = [dict(f) for f in features]
    data = {k: [r.get(k, d) for r in records] for k, d in cols.items()}
    geoms = [r["geometry"] for r in records]
    return gpd.GeoDataFrame(data, geometry=geoms, crs=crs)


#: the parsed site.toml of the invented sites: one module type.
CONFIG: dict[str, Any] = {
    "site": {"name": "invented"},
    "modules": {
        "M1": {
            "isc_a": 10.0,
            "imp_a": 9.5,
            "voc_v": 45.0,
            "vmp_v": 38.0,
            "per_string": 28,
            "voc_temp_coeff_pct_per_c": -0.3,
        }
    },
}


def build_site(
    *,
    rows: Iterable[Mapping[str, Any]] = (),
    combiners: Iterable[Mapping[str, Any]] = (),
    inverters: Iterable[Mapping[str, Any]] = (),
    trenches: Iterable[Mapping[str, Any]] = (),
    grid: Iterable[Mapping[str, Any]] = (),
    crs: Any = SITE_GRID,
    validate: bool = True,
) -> Site:
    """A Site from features given as mappings (``geometry`` plus attributes).

    With ``validate`` (the default) the frames go through :func:`layers.build_site`, as a
    site read from files would; ``validate=False`` builds the Site directly, for inputs that
    layers rejects but routing must still guard against (e.g. a ``to`` naming no feature).
    """
    frames = {
        "rows": _frame("rows", rows, crs),
        "combiners": _frame("combiners", combiners, crs),
        "inverters": _frame("inverters", inverters, crs),
        "trenches": _frame("trenches", trenches, crs),
        "grid": _frame("grid", grid, crs),
    }
    if validate:
        return layers.build_site(frames, CONFIG)
    modules, _ = layers.parse_modules(CONFIG)
    return Site(
        root=Path("."),
        name="invented",
        crs=pyproj.CRS(crs),
        crs_note="",
        modules=modules,
        config=CONFIG,
        sources={},
        **frames,
    )


def line(*xy: tuple[float, float]) -> shapely.LineString:
    """A LineString through the given points."""
    return shapely.LineString(xy)


def pt(x: float, y: float) -> shapely.Point:
    """A Point."""
    return shapely.Point(x, y)


def comb_site(
    blocks: int, rows_per_side: int, strings: int, *, row_m: float = 40.0, pitch_m: float = 6.0
) -> Site:
    """A generated comb-shaped site.

    ``blocks`` vertical spine trenches (teeth) 60 m apart hang off one horizontal main trench
    along y = 0. Each tooth has ``rows_per_side`` rows on each side (horizontal lines, ``row_m``
    long, ``pitch_m`` apart, starting 1 m from the tooth) and one combiner at its foot; one
    inverter per 10 blocks sits on the main trench, the grid point at its west end. Rows and
    combiners have no ``to``: assignment by route length fills them in.
    """
    rows, combiners, trenches = [], [], []
    spacing = 2 * row_m + 4.0
    height = rows_per_side * pitch_m + 10.0
    for b in range(blocks):
        x = b * spacing
        trenches.append({"id": f"T{b:04d}", "geometry": line((x, 0.0), (x, height))})
        combiners.append({"id": f"CB{b:04d}", "geometry": pt(x + 0.5, 2.0)})
        for k in range(rows_per_side):
            y = 8.0 + k * pitch_m
            rows.append(
                {
                    "id": f"R{b:04d}W{k:02d}",
                    "strings": strings,
                    "geometry": line((x - 1 - row_m, y), (x - 1, y)),
                }
            )
            rows.append(
                {
                    "id": f"R{b:04d}E{k:02d}",
                    "strings": strings,
                    "geometry": line((x + 1, y), (x + 1 + row_m, y)),
                }
            )
    x_end = (blocks - 1) * spacing
    trenches.append({"id": "MAIN", "geometry": line((-50.0, 0.0), (x_end, 0.0))})
    n_inv = max(1, blocks // 10)
    inverters = [
        {"id": f"INV{i:02d}", "geometry": pt((i + 0.5) * x_end / n_inv + 0.25, -3.0)}
        for i in range(n_inv)
    ]
    grid = [{"id": "POC", "geometry": pt(-50.0, -2.0)}]
    return build_site(
        rows=rows, combiners=combiners, inverters=inverters, trenches=trenches, grid=grid
    )


@pytest.fixture(scope="session")
def make_site():
    """Factory: ``make_site(rows=..., combiners=..., ...)`` → Site (see :func:`build_site`)."""
    return build_site


@pytest.fixture(scope="session")
def comb():
    """Factory of generated comb sites (see :func:`comb_site`)."""
    return comb_site


@pytest.fixture(scope="module")
def generated(tmp_path_factory) -> Path:
    """A generated 20 MW site (routeplan.synth, invented), made once per test module."""
    from routeplan.synth import generate_site

    site = tmp_path_factory.mktemp("gen") / "site"
    generate_site(20.0, 5, site)
    return site


@pytest.fixture
def gen(generated, tmp_path) -> Path:
    """A copy of :func:`generated` this test may edit."""
    site = tmp_path / "gen"
    shutil.copytree(generated, site)
    return site
