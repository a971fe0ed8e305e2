"""README, The site format: two ways of writing one site give one plan.

- "Attribute names are matched case-insensitively, and the Shapefile format's 10-character
  truncation is undone": the rich site (``promise_sites``; every attribute of every layer set
  to a value that changes the plan) written as Shapefiles with every column name in other
  cases and the long ones cut at 10 characters (by hand, or by GDAL itself), against the same
  site written as GeoPackages with the names of the site format.
- "Single-part Multi* geometries are accepted; Z values are dropped": the rich site with every
  geometry a one-part Multi* with Z values, against the plain 2-D site.

"One plan" is checked on the files a reader sees: the CSV files byte for byte, the workbook's
cells (openpyxl), every GeoPackage feature (GDAL through pyogrio, geometry as WKB),
``summary.json`` and the map page (folium's random element names made equal) — all but the
inputs' digest, which names other files.
"""

from __future__ import annotations

import json
from pathlib import Path

import geopandas as gpd
import numpy as np
import pyogrio
import pytest
import shapely
from openpyxl import load_workbook

from routeplan.outputs.write import CSV_FILES
from tests.conftest import E0, write_site

from .promise_sites import RICH_TOML, plan_cli, rich_frames
from .test_promise_files import page

XLSX = "cable_schedule.xlsx"


def plan_of(site: Path, out: Path) -> Path:
    result = plan_cli(site, out, "-q", "--no-cache")
    assert result.exit_code == 0, result.output
    return out


def assert_same_plan(a: Path, b: Path) -> None:
    """The two output folders hold the same plan (see the module docstring)."""
    for name in CSV_FILES:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name
    sa, sb = (json.loads((o / "summary.json").read_text(encoding="utf-8")) for o in (a, b))
    assert sa.pop("inputs") != sb.pop("inputs")  # other files were read
    assert sa == sb
    wa, wb = load_workbook(a / XLSX), load_workbook(b / XLSX)
    assert wa.sheetnames == wb.sheetnames
    for sheet in wa.sheetnames:
        ra = [
            r
            for r in wa[sheet].iter_rows(values_only=True)
            if not str(r[0]).startswith(("inp", "Input files"))
        ]
        rb = [
            r
            for r in wb[sheet].iter_rows(values_only=True)
            if not str(r[0]).startswith(("inp", "Input files"))
        ]
        assert ra == rb, sheet
    layers = [name for name, _ in pyogrio.list_layers(a / "routes.gpkg")]
    assert layers == [name for name, _ in pyogrio.list_layers(b / "routes.gpkg")]
    for layer in layers:
        fa = pyogrio.read_dataframe(a / "routes.gpkg", layer=layer)
        fb = pyogrio.read_dataframe(b / "routes.gpkg", layer=layer)
        assert fa.drop(columns="geometry").equals(fb.drop(columns="geometry")), layer
        assert list(shapely.to_wkb(fa.geometry.values)) == list(shapely.to_wkb(fb.geometry.values))
    assert page(a / "map.html") == page(b / "map.html")


@pytest.fixture(scope="module")
def plain(tmp_path_factory) -> dict[bool, Path]:
    """The rich site as GeoPackages with the site format's names, planned: without polygons
    (for the Shapefile comparison) and with them."""
    tmp = tmp_path_factory.mktemp("plain")
    out = {}
    for polygons in (False, True):
        site = write_site(tmp / f"site{polygons}", rich_frames(polygons), "gpkg", RICH_TOML)
        out[polygons] = plan_of(site, tmp / f"out{polygons}")
    return out


# -- attribute names ---------------------------------------------------------------------------

#: every attribute of every layer (README, The site format) in another case; those longer
#: than 10 characters cut at 10, as the Shapefile format (dBASE field names) stores them
MANGLED = {
    "rows": {"id": "ID", "strings": "Strings", "module": "MODULE", "to": "To"},
    "combiners": {
        "id": "Id",
        "to": "TO",
        "max_strings": "MAX_STRING",
        "fuse_a": "FUSE_A",
        "input": "Input",
    },
    "inverters": {
        "id": "ID",
        "ac_kva": "AC_KVA",
        "ac_v": "Ac_V",
        "phases": "PHASES",
        "pf": "PF",
        "to": "tO",
        "ac_max_a": "AC_MAX_A",
        "dc_inputs": "DC_INPUTS",
    },
    "trenches": {
        "id": "ID",
        "depth_m": "DEPTH_M",
        "laying": "Laying",
        "spacing_m": "SPACING_M",
        "soil_k_m_w": "SOIL_K_M_W",
        "max_circuits": "MAX_CIRCUI",
    },
    "grid": {"id": "ID"},
}


def test_every_attribute_of_the_rich_site_changes_the_plan():
    """The comparison below can only pass when each attribute is read: each is set, on some
    feature, to a value the plan depends on (a lost one would be the default or missing)."""
    frames = rich_frames(False)
    for layer, names in MANGLED.items():
        assert set(names) == set(frames[layer].columns) - {"geometry"}, layer
        for column in names:
            assert frames[layer][column].notna().any(), (layer, column)


@pytest.mark.filterwarnings("ignore:.*(truncated|Normalized|laundered).*")
@pytest.mark.parametrize("cut_by", ["hand", "GDAL"])
def test_shapefiles_with_other_cases_and_cut_names_plan_as_the_plain_site(tmp_path, plain, cut_by):
    frames = rich_frames(False)
    site = tmp_path / "site"
    site.mkdir()
    for layer, names in MANGLED.items():
        rename = dict(names)
        if cut_by == "GDAL":  # the full name, upper case: GDAL cuts it when writing
            rename.update({k: k.upper() for k in names if len(k) > 10})
        frames[layer].rename(columns=rename).to_file(site / f"{layer}.shp", engine="pyogrio")
        # the dBASE tables hold exactly the mangled names (GDAL reads them back)
        fields = list(pyogrio.read_info(site / f"{layer}.shp")["fields"])
        assert fields == list(names.values()), (layer, fields)
    (site / "site.toml").write_text(RICH_TOML, encoding="utf-8")
    assert_same_plan(plan_of(site, tmp_path / "out"), plain[False])


# -- geometry forms ------------------------------------------------------------------------------


def multi_with_z(geom):
    """``geom`` as a one-part Multi* geometry with Z values (a terrain rising 1 m per 100 m
    east, from 312.5 m)."""
    if isinstance(geom, shapely.Point):
        geom = shapely.MultiPoint([geom])
    elif isinstance(geom, shapely.LineString):
        geom = shapely.MultiLineString([geom])
    elif isinstance(geom, shapely.Polygon):
        geom = shapely.MultiPolygon([geom])
    return shapely.transform(
        shapely.force_3d(geom, 0.0),
        lambda c: np.column_stack([c[:, :2], 312.5 + (c[:, 0] - E0) / 100.0]),
        include_z=True,
    )


def test_single_part_multi_geometries_with_z_plan_as_the_plain_site(tmp_path, plain):
    frames = rich_frames(True)
    for layer, frame in frames.items():
        geoms = [multi_with_z(g) for g in frame.geometry]
        frames[layer] = frame.set_geometry(gpd.GeoSeries(geoms, crs=frame.crs))
    site = write_site(tmp_path / "site", frames, "gpkg", RICH_TOML)
    for layer in frames:  # the files hold what is meant (GDAL reads them back)
        back = pyogrio.read_dataframe(site / f"{layer}.gpkg").geometry.values
        assert all(g.geom_type.startswith("Multi") for g in back), layer
        assert shapely.has_z(back).all() and (shapely.get_num_geometries(back) == 1).all()
    assert_same_plan(plan_of(site, tmp_path / "out"), plain[True])
