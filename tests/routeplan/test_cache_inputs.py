"""The plan cache cannot go stale: its key covers every file a layer's reader opens
(:func:`layers.sources.source_files`) — a Shapefile's side files wherever the layer lives, a
GeoPackage's write-ahead log, a folder dataset, a GDAL VRT's sources — and a layer whose files
cannot be listed turns the cache off for the run, which says so.

The reference for every re-plan is the same site planned with ``--no-cache``: the CSV files
must be equal byte for byte, and the edit must have changed them (so a stale reuse could not
pass)."""

from __future__ import annotations

import shutil
from pathlib import Path

import geopandas as gpd
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from layers.sources import source_files
from routeplan.cache import PlanCache, site_key, uncacheable_layers
from routeplan.cli import app
from routeplan.outputs.write import write_plan
from routeplan.pipeline import plan
from tests.conftest import SITE_TOML, base_frames

CSVS = ("cable_schedule.csv", "trench_schedule.csv", "quantities.csv")
LAYERS = ("rows", "combiners", "inverters", "trenches", "grid")
runner = CliRunner()


# -- what a layer source is made of -----------------------------------------------------------


def touch(path: Path, text: str = "x") -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def vrt(layer: str, source: str, src_layer: str, relative: bool = True) -> str:
    """A GDAL OGR VRT file naming one data source (GDAL's "OGR VRT driver" format)."""
    rel = ' relativeToVRT="1"' if relative else ""
    return (
        "<OGRVRTDataSource>\n"
        f'  <OGRVRTLayer name="{layer}">\n'
        f"    <SrcDataSource{rel}>{source}</SrcDataSource>\n"
        f"    <SrcLayer>{src_layer}</SrcLayer>\n"
        "  </OGRVRTLayer>\n"
        "</OGRVRTDataSource>\n"
    )


def test_a_shapefile_in_a_subfolder_brings_its_side_files_in_any_case(tmp_path):
    names = ("rows.shp", "rows.shx", "ROWS.DBF", "rows.prj", "rows.cpg", "rows.shp.aux.xml")
    for n in names:
        touch(tmp_path / "gis" / n)
    touch(tmp_path / "gis" / "other.dbf")
    touch(tmp_path / "rows.dbf")  # beside the site, not beside the layer: not read
    got = source_files(tmp_path, "gis/rows.shp")
    assert got == sorted(tmp_path / "gis" / n for n in names)


def test_a_geopackage_brings_its_write_ahead_log(tmp_path):
    for n in ("site.gpkg", "site.gpkg-wal", "site.gpkg-shm"):
        touch(tmp_path / n)
    assert source_files(tmp_path, "site.gpkg:rows") == sorted(
        tmp_path / n for n in ("site.gpkg", "site.gpkg-shm", "site.gpkg-wal")
    )


def test_a_vrt_brings_its_sources_recursively(tmp_path):
    touch(tmp_path / "data" / "rows.geojson")
    touch(tmp_path / "data" / "more.vrt", vrt("rows", "rows.geojson", "rows"))
    touch(tmp_path / "far" / "rows.shp")
    touch(tmp_path / "far" / "rows.dbf")
    absolute = vrt("rows", str(tmp_path / "far" / "rows.shp"), "rows", relative=False)
    touch(tmp_path / "abs.vrt", absolute)
    touch(tmp_path / "rows.vrt", vrt("rows", "data/more.vrt", "rows"))
    assert source_files(tmp_path, "rows.vrt") == sorted(
        [tmp_path / "rows.vrt", tmp_path / "data" / "more.vrt", tmp_path / "data" / "rows.geojson"]
    )
    assert source_files(tmp_path, "abs.vrt") == sorted(
        [tmp_path / "abs.vrt", tmp_path / "far" / "rows.dbf", tmp_path / "far" / "rows.shp"]
    )


@pytest.mark.parametrize(
    "source",
    [
        "/vsicurl/https://example.invalid/rows.geojson",
        "https://example.invalid/rows.geojson",
        "PG:dbname=site",
        "/vsizip/rows.zip/rows.shp",
    ],
)
def test_a_vrt_naming_what_is_not_a_local_file_cannot_be_listed(tmp_path, source):
    touch(tmp_path / "rows.vrt", vrt("rows", source, "rows", relative=False))
    assert source_files(tmp_path, "rows.vrt") is None


def test_a_vrt_loop_a_broken_vrt_and_a_missing_file(tmp_path):
    touch(tmp_path / "a.vrt", vrt("rows", "b.vrt", "rows"))
    touch(tmp_path / "b.vrt", vrt("rows", "a.vrt", "rows"))
    assert source_files(tmp_path, "a.vrt") == [tmp_path / "a.vrt", tmp_path / "b.vrt"]
    touch(tmp_path / "bad.vrt", "<OGRVRTDataSource><OGRVRTLayer>")
    assert source_files(tmp_path, "bad.vrt") is None
    assert source_files(tmp_path, "missing.geojson") is None


def test_a_layer_that_cannot_be_listed_turns_the_cache_off_and_says_so(tmp_path):
    site = write_format(tmp_path / "site", "vrt")
    touch(site / "rows.vrt", vrt("rows", "/vsicurl/https://example.invalid/r.json", "r", False))
    sources = {"rows": "rows.vrt"}
    assert uncacheable_layers(site, sources) == ["rows"]
    assert site_key(site, {}, sources) is None


def test_the_command_says_when_the_cache_is_not_used(tmp_path):
    """A VRT whose source is named through a GDAL virtual file system path (``/vsisubfile/``
    of a local file here, so it plans): its files cannot be listed, so no cache is read or
    kept."""
    site = write_format(tmp_path / "site", "vrt")
    src = site / "gis" / "rows_src.geojson"
    whole = f"/vsisubfile/0_{src.stat().st_size},{src}"  # GDAL: the whole file, as a sub-file
    touch(site / "rows.vrt", vrt("rows", whole, "rows_src", relative=False))
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out)])
    assert result.exit_code in (0, 1), result.output
    assert "cache: not used: the files of layer rows (rows.vrt) cannot all be listed" in (
        result.output
    )
    assert not (out / ".routeplan-cache").exists()


# -- sites in every format and placement, edited and re-planned -------------------------------

#: how a site's layers are stored: one file per layer in the site folder (GeoJSON, GeoPackage,
#: Shapefile, FlatGeobuf), one site.gpkg, every layer a Shapefile in a subfolder named in
#: [layers], or a GDAL VRT in the site folder naming a GeoJSON / Shapefile in a subfolder
FORMATS = ("geojson", "gpkg", "shp", "fgb", "site.gpkg", "shp-sub", "vrt", "vrt-shp")
EXT = {"geojson": ".geojson", "gpkg": ".gpkg", "shp": ".shp", "fgb": ".fgb"}


def write_layer(site: Path, fmt: str, name: str, frame: gpd.GeoDataFrame) -> None:
    """Write one layer of ``site`` in the format ``fmt`` (see :data:`FORMATS`)."""
    if fmt in EXT:
        frame.to_file(site / f"{name}{EXT[fmt]}", engine="pyogrio")
    elif fmt == "site.gpkg":
        frame.to_file(site / "site.gpkg", layer=name, engine="pyogrio")
    elif fmt in ("shp-sub", "vrt-shp"):
        (site / "gis").mkdir(exist_ok=True)
        frame.to_file(site / "gis" / f"{name}.shp", engine="pyogrio")
    elif fmt == "vrt":
        (site / "gis").mkdir(exist_ok=True)
        frame.to_file(site / "gis" / f"{name}_src.geojson", engine="pyogrio")


def write_format(site: Path, fmt: str, frames=None) -> Path:
    frames = base_frames() if frames is None else frames
    site.mkdir(parents=True, exist_ok=True)
    toml = SITE_TOML
    if fmt in ("shp-sub", "vrt", "vrt-shp"):
        toml += "\n[layers]\n"
        for name in LAYERS:
            spec = {
                "shp-sub": f"gis/{name}.shp",
                "vrt": f"{name}.vrt",
                "vrt-shp": f"{name}.vrt",
            }[fmt]
            toml += f'{name} = "{spec}"\n'
            if fmt == "vrt":
                touch(site / f"{name}.vrt", vrt(name, f"gis/{name}_src.geojson", f"{name}_src"))
            elif fmt == "vrt-shp":
                touch(site / f"{name}.vrt", vrt(name, f"gis/{name}.shp", name))
    (site / "site.toml").write_text(toml, encoding="utf-8")
    for name, frame in frames.items():
        write_layer(site, fmt, name, frame)
    return site


def edit(site: Path, fmt: str, what: str) -> None:
    """Edit the site in place: ``strings`` (an attribute of the rows; for Shapefiles only the
    .dbf is replaced), ``pad`` (move the inverter 6 m), ``depth`` (a trench attribute)."""
    frames = base_frames()
    if what == "strings":
        frames["rows"].loc[0, "strings"] = 1
        layer = "rows"
    elif what == "pad":
        inv = frames["inverters"]
        inv.loc[0, "geometry"] = shapely.affinity.translate(inv.geometry.iloc[0], xoff=-6.0)
        layer = "inverters"
    else:
        frames["trenches"].loc[1, "depth_m"] = 1.2
        layer = "trenches"
    if what == "strings" and fmt in ("shp", "shp-sub", "vrt-shp"):
        tmp = site.parent / f"{site.name}-dbf"
        tmp.mkdir(exist_ok=True)
        frames["rows"].to_file(tmp / "rows.shp", engine="pyogrio")
        where = site if fmt == "shp" else site / "gis"
        shutil.copyfile(tmp / "rows.dbf", where / "rows.dbf")  # the .dbf alone changes
        return
    write_layer(site, fmt, layer, frames[layer])


def csvs(out: Path) -> dict[str, bytes]:
    return {n: (out / n).read_bytes() for n in CSVS}


def warm_then_cold(site: Path, out: Path, cold: Path) -> tuple[dict, dict, dict]:
    p = plan(site, cache=PlanCache(out))
    write_plan(p, out)
    write_plan(plan(site), cold)
    return csvs(out), csvs(cold), p.reused


@settings(
    max_examples=16,
    deadline=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(fmt=st.sampled_from(FORMATS), what=st.sampled_from(("strings", "pad", "depth")))
def test_a_cached_replan_after_any_edit_equals_no_cache(tmp_path_factory, fmt, what):
    base = tmp_path_factory.mktemp(f"{fmt}-{what}")
    site = write_format(base / "site", fmt)
    out = base / "out"
    first = plan(site, cache=PlanCache(out))
    write_plan(first, out)
    before = csvs(out)
    edit(site, fmt, what)
    warm, cold, reused = warm_then_cold(site, out, base / "cold")
    assert warm == cold, (fmt, what)
    assert warm != before, (fmt, what)  # the edit shows: a stale reuse could not pass
    assert not reused["site"] and not reused["outputs"]


@pytest.mark.parametrize("fmt", ["shp-sub", "vrt", "vrt-shp"])
def test_an_unchanged_site_in_any_placement_reuses_every_stage(tmp_path, fmt):
    site = write_format(tmp_path / "site", fmt)
    out = tmp_path / "out"
    write_plan(plan(site, cache=PlanCache(out)), out)
    again = plan(site, cache=PlanCache(out))
    assert again.reused == {"site": True, "route": True, "size": True}
