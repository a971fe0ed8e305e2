"""The plan cache (:mod:`routeplan.cache`): a run that reuses the cache gives the same outputs
as a cold run — byte-identical CSVs — after a pad move, a trench edit and a config change, on
the demo site and on a generated site; what each edit invalidates; a corrupted, foreign or
out-of-date cache is ignored; ``--no-cache``; entries round-trip exactly and hold no pickle."""

from __future__ import annotations

import json
import re
import shutil
import sqlite3
import tomllib
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from typer.testing import CliRunner

from routeplan import cache as cache_mod
from routeplan.cache import CACHE_DIR, MANIFEST, PlanCache, dumps, loads
from routeplan.cli import app
from routeplan.errors import FolderError
from routeplan.outputs.write import write_plan
from routeplan.pipeline import plan

from .test_reuse import features

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
CSVS = ("cable_schedule.csv", "trench_schedule.csv", "quantities.csv")
XLSX, GPKG = "cable_schedule.xlsx", "routes.gpkg"
runner = CliRunner()


def run(site: Path, out: Path, *, cache: bool = True, force: bool = False):
    """Plan ``site`` into ``out`` (with the folder's cache or without); the Plan."""
    p = plan(site, cache=PlanCache(out) if cache else None)
    write_plan(p, out, force=force)
    return p


def same_csvs(a: Path, b: Path) -> None:
    for name in CSVS:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


GPKG_LAYERS = {
    "circuits": ("circuit_id",),
    "segments": ("segment_id",),
    "rows": ("id",),
    "equipment": ("kind", "id"),
}


def same_gpkg(a: Path, b: Path) -> None:
    """Two GeoPackages hold the same features (by key: every value, the geometry blob, the
    R-tree box), feature counts and layer extents (fids may differ: features added by an
    update come after the last fid)."""
    for layer, key in GPKG_LAYERS.items():
        fa, fb = features(a, layer, key), features(b, layer, key)
        for part in ("rows", "rtree", "count", "extent"):
            assert fa[part] == fb[part], (layer, part)
    con = sqlite3.connect(a)
    try:
        assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
    finally:
        con.close()


def warm_equals_cold(site: Path, out: Path, tmp: Path, tag: str):
    """Re-plan ``site`` into ``out`` using its cache, plan it cold elsewhere: the same CSVs and
    workbook byte for byte, the same GeoPackage row for row."""
    warm = run(site, out)
    cold_out = tmp / f"cold-{tag}"
    run(site, cold_out, cache=False)
    same_csvs(out, cold_out)
    assert (out / XLSX).read_bytes() == (cold_out / XLSX).read_bytes()
    same_gpkg(out / GPKG, cold_out / GPKG)
    return warm.reused


# -- edits of a site folder ------------------------------------------------------------------


def move_demo_pad(site: Path, pad: str = "INV-E", dx: float = -6.0) -> None:
    """Translate the demo pad ``pad`` by ``dx`` metres (east) along its branch."""
    inv = gpd.read_file(site / "inverters.geojson").to_crs(32630)
    i = inv.index[inv["id"] == pad][0]
    inv.loc[i, "geometry"] = shapely.affinity.translate(inv.geometry.iloc[i], xoff=dx)
    inv.to_crs(4326).to_file(site / "inverters.geojson", driver="GeoJSON")


def edit_demo_trench(site: Path, *, depth: float | None = None, nudge: float = 0.0) -> str:
    """Set the depth of one demo trench and/or move one of its inner vertices; its id."""
    tr = gpd.read_file(site / "trenches.geojson").to_crs(32630)
    counts = shapely.get_num_coordinates(tr.geometry.values)
    i = int(np.argmax(counts))
    if depth is not None:
        tr["depth_m"] = tr["depth_m"].astype(float) if "depth_m" in tr else np.nan
        tr.loc[i, "depth_m"] = depth
    if nudge:
        xy = shapely.get_coordinates(tr.geometry.iloc[i])
        xy[len(xy) // 2, 1] += nudge
        tr.loc[i, "geometry"] = shapely.LineString(xy)
    tr.to_crs(4326).to_file(site / "trenches.geojson", driver="GeoJSON")
    return str(tr["id"].iloc[i])


def set_config(site: Path, table: str, key: str, value) -> None:
    """Set ``[table] key = value`` in site.toml (appending the table when absent)."""
    text = (site / "site.toml").read_text(encoding="utf-8")
    line = f"{key} = {json.dumps(value)}"
    header = f"[{table}]"
    pattern = re.compile(rf"(?ms)^\[{re.escape(table)}\]\n(.*?)(?=^\[|\Z)")
    m = pattern.search(text)
    if m is None:
        text = text.rstrip("\n") + f"\n\n{header}\n{line}\n"
    else:
        body = m.group(1)
        kv = re.compile(rf"(?m)^{re.escape(key)}\s*=.*$")
        body = kv.sub(line, body) if kv.search(body) else body.rstrip("\n") + f"\n{line}\n"
        text = text[: m.start(1)] + body + text[m.end(1) :]
    (site / "site.toml").write_text(text, encoding="utf-8")
    assert tomllib.loads(text)  # still valid TOML


def move_gpkg_pad(site: Path, dy: float = 8.0) -> str:
    """Translate the first inverter pad of a generated site (site.gpkg) ``dy`` m along y."""
    inv = gpd.read_file(site / "site.gpkg", layer="inverters")
    inv.loc[0, "geometry"] = shapely.affinity.translate(inv.geometry.iloc[0], yoff=dy)
    pyogrio.write_dataframe(inv, site / "site.gpkg", layer="inverters", driver="GPKG")
    return str(inv["id"].iloc[0])


def edit_gpkg_trench(site: Path, *, depth: float | None = None, nudge: float = 0.0) -> None:
    tr = gpd.read_file(site / "site.gpkg", layer="trenches")
    counts = shapely.get_num_coordinates(tr.geometry.values)
    i = int(np.argmax(counts))
    if depth is not None:
        tr.loc[i, "depth_m"] = depth
    if nudge:
        xy = shapely.get_coordinates(tr.geometry.iloc[i])
        xy[len(xy) // 2, 0] += nudge
        tr.loc[i, "geometry"] = shapely.LineString(xy)
    pyogrio.write_dataframe(tr, site / "site.gpkg", layer="trenches", driver="GPKG")


@pytest.fixture
def demo(tmp_path) -> Path:
    site = tmp_path / "demo"
    shutil.copytree(DEMO, site)
    return site


# -- warm equals cold --------------------------------------------------------------------------


def test_unchanged_inputs_reuse_every_stage_and_the_files(demo, tmp_path):
    out = tmp_path / "out"
    first = run(demo, out)
    assert first.reused == {
        "site": False,
        "route": False,
        "noding": False,
        "size": False,
        "outputs": False,
    }
    before = {n: (out / n).read_bytes() for n in CSVS}
    again = run(demo, out)
    assert again.reused == {"site": True, "route": True, "size": True, "outputs": True}
    assert {n: (out / n).read_bytes() for n in CSVS} == before
    assert (out / CACHE_DIR / MANIFEST).is_file()
    # the manifest and the entries, nothing else (the entries' digests are in the manifest)
    assert {p.suffix for p in (out / CACHE_DIR).iterdir()} == {".json", ".npz"}


def test_demo_pad_move(demo, tmp_path):
    out = tmp_path / "out"
    run(demo, out)
    move_demo_pad(demo)
    reused = warm_equals_cold(demo, out, tmp_path, "pad")
    assert not reused["site"] and not reused["route"] and not reused["outputs"]
    assert reused["noding"]  # the trenches did not change: their noding is reused


@pytest.mark.parametrize("edit", ["depth", "vertex"])
def test_demo_trench_edit(demo, tmp_path, edit):
    out = tmp_path / "out"
    run(demo, out)
    if edit == "depth":
        edit_demo_trench(demo, depth=1.1)
    else:
        edit_demo_trench(demo, nudge=0.8)
    reused = warm_equals_cold(demo, out, tmp_path, edit)
    assert not reused["site"] and not reused["route"] and not reused["size"]
    assert not reused["noding"]


@pytest.mark.parametrize(
    ("table", "key", "value", "keeps"),
    [
        ("design.drop_pct", "string", 0.7, {"site", "route"}),  # sizing only
        ("design", "soil_k_m_w", 2.0, {"site"}),  # a trench default: routing and noding too
        ("allowances", "slack_pct", 5.0, {"site", "noding"}),
    ],
)
def test_demo_config_change(demo, tmp_path, table, key, value, keeps):
    out = tmp_path / "out"
    run(demo, out)
    set_config(demo, table, key, value)
    reused = warm_equals_cold(demo, out, tmp_path, key)
    assert {k for k, v in reused.items() if v} == keeps


def test_generated_site_pad_move_trench_edit_and_config_change(gen, tmp_path):
    out = tmp_path / "out"
    run(gen, out)
    move_gpkg_pad(gen)
    reused = warm_equals_cold(gen, out, tmp_path, "pad")
    assert not reused["site"] and reused["noding"]
    edit_gpkg_trench(gen, depth=0.9)
    reused = warm_equals_cold(gen, out, tmp_path, "depth")
    assert not reused["route"] and not reused["noding"]
    edit_gpkg_trench(gen, nudge=0.5)
    reused = warm_equals_cold(gen, out, tmp_path, "vertex")
    assert not reused["route"] and not reused["noding"]
    set_config(gen, "design.drop_pct", "array", 1.1)
    reused = warm_equals_cold(gen, out, tmp_path, "drop")
    assert reused["site"] and reused["route"] and not reused["size"]
    set_config(gen, "design", "soil_k_m_w", 1.8)
    reused = warm_equals_cold(gen, out, tmp_path, "soil")
    assert reused["site"] and not reused["route"] and not reused["noding"]


def test_an_edit_rewrites_only_the_rows_it_touches(gen, tmp_path):
    """A moved pad changes a few routes: the GeoPackage gets those rows rewritten, and most
    chunks of the schedules are copied from the last files (the equality with a cold run is
    checked by the tests above)."""
    out = tmp_path / "out"
    first = run(gen, out)
    assert first.cache.output_reuse.gpkg_rows_rewritten == -1  # nothing to update
    move_gpkg_pad(gen)
    again = run(gen, out)
    stats = again.cache.output_reuse
    rows = len(again.circuits) + len(again.segments)
    assert 0 < stats.gpkg_rows_rewritten < 0.2 * rows
    # (this small plant's schedule is a few chunks of about 512 rows, most of them touched)
    assert stats.chunks_copied["trench_schedule.csv"] > 0
    assert stats.chunks_copied["cable_schedule.xlsx"] > 0


# -- never trust a cache that is not ours -------------------------------------------------------


def test_corrupted_entries_are_ignored(demo, tmp_path):
    out = tmp_path / "out"
    run(demo, out)
    for entry in (out / CACHE_DIR).glob("*.npz"):
        data = bytearray(entry.read_bytes())
        data[len(data) // 2] ^= 0xFF
        entry.write_bytes(bytes(data))
    set_config(demo, "design.drop_pct", "ac", 0.8)
    reused = warm_equals_cold(demo, out, tmp_path, "corrupt")
    assert not any(reused.values())


@pytest.mark.parametrize("damage", ["garbage", "truncated", "other-format", "no-entries"])
def test_a_damaged_manifest_means_a_cold_run(demo, tmp_path, damage):
    out = tmp_path / "out"
    run(demo, out)
    manifest = out / CACHE_DIR / MANIFEST
    text = manifest.read_text(encoding="utf-8")
    if damage == "garbage":
        manifest.write_bytes(b"\x00\xff not json")
    elif damage == "truncated":
        manifest.write_text(text[: len(text) // 2], encoding="utf-8")
    elif damage == "other-format":
        other = text.replace(f'"format": {cache_mod.FORMAT}', '"format": 99')
        manifest.write_text(other, encoding="utf-8")
    else:
        manifest.write_text(json.dumps({**json.loads(text), "entries": None}), encoding="utf-8")
    reused = warm_equals_cold(demo, out, tmp_path, damage)
    assert not any(reused.values())


def test_a_foreign_cache_is_ignored(demo, gen, tmp_path):
    out_demo, out_gen = tmp_path / "out_demo", tmp_path / "out_gen"
    run(demo, out_demo)
    run(gen, out_gen)
    shutil.rmtree(out_gen / CACHE_DIR)
    shutil.copytree(out_demo / CACHE_DIR, out_gen / CACHE_DIR)  # another site's cache
    reused = warm_equals_cold(gen, out_gen, tmp_path, "foreign")
    assert not any(reused.values())


def test_another_environment_means_a_cold_run(demo, tmp_path, monkeypatch):
    out = tmp_path / "out"
    run(demo, out)
    monkeypatch.setattr(cache_mod, "environment", lambda: "another version or source")
    reused = warm_equals_cold(demo, out, tmp_path, "env")
    assert not any(reused.values())


def test_an_output_edited_by_hand_is_kept_unless_forced_then_written_anew(demo, tmp_path):
    out = tmp_path / "out"
    run(demo, out)
    good = (out / "cable_schedule.csv").read_bytes()
    edited = good.replace(b"ok", b"OK", 1)
    (out / "cable_schedule.csv").write_bytes(edited)
    with pytest.raises(FolderError, match=r"'cable_schedule\.csv' was changed after routeplan"):
        run(demo, out)
    assert (out / "cable_schedule.csv").read_bytes() == edited  # the user's edit is kept
    again = run(demo, out, force=True)
    assert again.reused["route"] and not again.reused["outputs"]
    assert (out / "cable_schedule.csv").read_bytes() == good


def test_no_cache_option(demo, tmp_path):
    out = tmp_path / "out"
    first = runner.invoke(app, ["plan", str(demo), "--out", str(out)])
    assert first.exit_code in (0, 1), first.output
    assert "cache: none in this folder yet" in first.output
    assert (out / CACHE_DIR / MANIFEST).is_file()
    second = runner.invoke(app, ["plan", str(demo), "--out", str(out)])
    assert "cache: reused site, route, size, outputs" in second.output
    cold = runner.invoke(app, ["plan", str(demo), "--out", str(out), "--no-cache"])
    assert cold.exit_code == first.exit_code, cold.output
    assert "cache:" not in cold.output
    assert not (out / CACHE_DIR).exists()  # neither read nor kept


def test_the_command_says_what_an_edit_reused(demo, tmp_path):
    out = tmp_path / "out"
    runner.invoke(app, ["plan", str(demo), "--out", str(out)])
    move_demo_pad(demo)
    again = runner.invoke(app, ["plan", str(demo), "--out", str(out)])
    assert again.exit_code in (0, 1), again.output
    line = next(t for t in again.output.splitlines() if t.startswith("cache:"))
    # the trenches did not change: their noding is reused, and only the pad moved: the last
    # plan is re-planned locally
    assert line.startswith(
        "cache: reused trench noding, the last plan (re-planned locally: only the blocks the "
        "edit changes sized again); outputs updated: "
    )
    assert "GeoPackage rows rewritten" in line


# -- entries -------------------------------------------------------------------------------------


def test_entries_round_trip_exactly_without_pickle(tmp_path):
    p = plan(DEMO)
    for value in (p.site, p.routes, p.sizing, p.routes.network.memo):
        data = dumps(value)
        with np.load(__import__("io").BytesIO(data), allow_pickle=False) as z:
            assert all(z[k].dtype != object for k in z.files)
        back = loads(data)
        assert type(back) is type(value)
        _assert_same(value, back)


def _assert_same(a, b) -> None:
    import dataclasses

    if isinstance(a, pd.DataFrame):
        assert type(a) is type(b)
        pd.testing.assert_frame_equal(pd.DataFrame(a), pd.DataFrame(b), check_exact=True)
        if isinstance(a, gpd.GeoDataFrame):
            assert a.crs == b.crs
            assert a.active_geometry_name == b.active_geometry_name
    elif isinstance(a, np.ndarray):
        assert a.dtype == b.dtype and a.shape == b.shape
        if a.dtype == object:
            assert [_key(x) for x in a.ravel()] == [_key(x) for x in b.ravel()]
        else:
            np.testing.assert_array_equal(a, b)
    elif dataclasses.is_dataclass(a):
        for f in dataclasses.fields(a):
            if f.metadata.get("transient"):  # not stored: back to its default
                assert getattr(b, f.name) == f.default
            else:
                _assert_same(getattr(a, f.name), getattr(b, f.name))
    elif isinstance(a, dict):
        assert list(a) == list(b)
        for k in a:
            _assert_same(a[k], b[k])
    elif isinstance(a, list | tuple):
        assert type(a) is type(b) and len(a) == len(b)
        for x, y in zip(a, b, strict=True):
            _assert_same(x, y)
    else:
        assert _key(a) == _key(b)


def _key(v):
    return ("nan",) if isinstance(v, float) and v != v else (type(v).__name__, v)


def test_a_geopackage_write_ahead_log_is_part_of_the_key(gen, tmp_path):
    from layers.sources import locate_layers, read_config
    from routeplan.cache import site_key

    config, _ = read_config(gen)
    sources, _ = locate_layers(gen, config)
    before = site_key(gen, config, sources)
    (gen / "site.gpkg-wal").write_bytes(b"pages not yet checkpointed")
    assert site_key(gen, config, sources) != before


def test_a_folder_dataset_is_keyed_by_every_file_in_it(tmp_path):
    from routeplan.cache import site_key

    (tmp_path / "site.toml").write_text("", encoding="utf-8")
    (tmp_path / "rows.gdb").mkdir()
    (tmp_path / "rows.gdb" / "a0000001.gdbtable").write_bytes(b"one")
    before = site_key(tmp_path, {}, {"rows": "rows.gdb"})
    assert before is not None
    (tmp_path / "rows.gdb" / "a0000001.gdbtable").write_bytes(b"two")
    assert site_key(tmp_path, {}, {"rows": "rows.gdb"}) != before


def test_a_plan_saved_twice_and_its_staging_folder(demo, tmp_path):
    """Stage entries are packed while planning — never beside the output folder (a cache on
    a bare path stages in the system's temporary folder); the plan can be written twice
    (both folders get its entries); the staging folder goes with the cache."""
    import gc

    out = tmp_path / "out"
    before = set(tmp_path.iterdir())
    p = plan(demo, cache=PlanCache(out))
    assert set(tmp_path.iterdir()) == before  # nothing written beside or into `out` yet
    staging = [p.cache._staging]
    assert staging[0] is not None and staging[0].is_dir()
    assert tmp_path not in staging[0].parents
    write_plan(p, out)
    write_plan(p, tmp_path / "again")
    for folder in (out, tmp_path / "again"):
        entries = json.loads((folder / CACHE_DIR / MANIFEST).read_text())["entries"]
        assert set(entries) == {"site", "route", "noding", "size"}
    # the same plan planned again from either folder reuses every stage …
    assert run(demo, tmp_path / "again").reused == {
        "site": True,
        "route": True,
        "size": True,
        "outputs": True,
    }
    # … and keeps the memo it did not need, for a later edit
    entries = json.loads((tmp_path / "again" / CACHE_DIR / MANIFEST).read_text())["entries"]
    assert set(entries) == {"site", "route", "noding", "size"}
    del p
    gc.collect()
    assert not staging[0].exists()


def test_the_map_after_an_edit_draws_what_a_cold_map_draws(tmp_path):
    """A re-plan's map reuses the tiles an edit did not touch, and draws every feature as a
    cold run's map does (a 100 MW plant: several tiles per layer group)."""
    from routeplan.synth import generate_site
    from tests.map.test_map import layer_data

    def drawn(html: str) -> dict:
        out: dict = {}
        for fc in layer_data(html):
            out.setdefault(fc["class"], []).extend(fc["features"])
        return out  # in drawing order

    site = tmp_path / "site"
    generate_site(100.0, 3, site)
    out = tmp_path / "out"
    run(site, out)
    move_gpkg_pad(site, dy=6.0)
    warm = run(site, out)
    assert warm.cache.output_reuse.map_tiles_reused > 0
    cold = tmp_path / "cold"
    run(site, cold, cache=False)
    html = (out / "map.html").read_text(encoding="utf-8")
    assert drawn(html) == drawn((cold / "map.html").read_text(encoding="utf-8"))
