"""Writing a re-plan after an edit: the last run's files are taken as the base when the output
folder's manifest still records them (size and modification time, with the SHA-256 the cache
recorded), without hashing them again; a file edited since is never a base. What is written
equals a cold run's: the CSV files and the workbook byte for byte, the GeoPackage feature for
feature (SQLite, and GDAL through pyogrio)."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import shapely

from routeplan.cache import PlanCache
from routeplan.outputs.gpkg import GpkgLayer, _register_functions
from routeplan.outputs.reuse import column_hashes, row_hashes

from .test_cache import GPKG, GPKG_LAYERS, XLSX, move_gpkg_pad, run, same_csvs, same_gpkg


def same_as_gdal_reads(a: Path, b: Path) -> None:
    """GDAL (pyogrio) reads the same features from both GeoPackages, in key order: every
    attribute and the exact geometry."""
    for layer, key in GPKG_LAYERS.items():
        x = pyogrio.read_dataframe(a, layer=layer).sort_values(list(key), ignore_index=True)
        y = pyogrio.read_dataframe(b, layer=layer).sort_values(list(key), ignore_index=True)
        pd.testing.assert_frame_equal(x.drop(columns="geometry"), y.drop(columns="geometry"))
        assert (shapely.to_wkb(x.geometry.values) == shapely.to_wkb(y.geometry.values)).all()


def test_a_pad_move_builds_on_the_recorded_files_without_hashing_them(gen, tmp_path, monkeypatch):
    """The GeoPackage the manifest records is updated without being hashed again; the
    schedules and the workbook, whose pieces are copied into the new files, are hashed as they
    are read (see the next test)."""
    out, cold = tmp_path / "out", tmp_path / "cold"
    run(gen, out)
    move_gpkg_pad(gen)

    def not_hashed(self, name):
        raise AssertionError(f"{name} hashed again although the manifest records it")

    with monkeypatch.context() as m:
        m.setattr(PlanCache, "previous_output", not_hashed)
        again = run(gen, out)
    stats = again.cache.output_reuse
    assert stats.gpkg_rows_rewritten > 0  # updated, not written whole
    assert stats.chunks_copied["cable_schedule.xlsx"] > 0
    run(gen, cold, cache=False)
    same_csvs(out, cold)
    assert (out / XLSX).read_bytes() == (cold / XLSX).read_bytes()
    same_gpkg(out / GPKG, cold / GPKG)
    same_as_gdal_reads(out / GPKG, cold / GPKG)


def test_outputs_edited_in_place_are_not_a_base(gen, tmp_path):
    """Edits that keep the files' sizes (a text of equal length) change their modification
    time: the files are hashed, do not match, and are written anew (with --force)."""
    out, cold = tmp_path / "out", tmp_path / "cold"
    run(gen, out)
    con = sqlite3.connect(out / GPKG)
    _register_functions(con)  # the GeoPackage functions GDAL's R-tree triggers call
    with con:
        con.execute("UPDATE circuits SET status = upper(status) WHERE fid = 1")
    con.close()
    csv = out / "cable_schedule.csv"
    data = csv.read_bytes()
    assert b"ok" in data
    csv.write_bytes(data.replace(b"ok", b"OK", 1))
    move_gpkg_pad(gen)
    again = run(gen, out, force=True)
    stats = again.cache.output_reuse
    assert stats.gpkg_rows_rewritten == -1  # written whole
    assert stats.chunks_copied["cable_schedule.csv"] == 0
    run(gen, cold, cache=False)
    same_csvs(out, cold)
    same_gpkg(out / GPKG, cold / GPKG)
    same_as_gdal_reads(out / GPKG, cold / GPKG)


def test_garbage_of_the_same_size_and_time_is_never_a_base(gen, tmp_path):
    """The last workbook, cable schedule and GeoPackage replaced by random bytes of the same
    size, their modification times put back: the manifest's size and time match, but the
    bytes are not the recorded ones — nothing of them goes into the new files, which equal a
    cold plan's (the workbook a valid zip, as zipfile reads it)."""
    import os
    import zipfile

    out, cold = tmp_path / "out", tmp_path / "cold"
    run(gen, out)
    for name in (XLSX, "cable_schedule.csv", GPKG):
        f = out / name
        st = f.stat()
        f.write_bytes(np.random.default_rng(3).bytes(st.st_size))
        os.utime(f, ns=(st.st_atime_ns, st.st_mtime_ns))
    move_gpkg_pad(gen)
    again = run(gen, out)
    assert again.cache.output_reuse.chunks_copied[XLSX] == 0
    assert zipfile.ZipFile(out / XLSX).testzip() is None
    run(gen, cold, cache=False)
    same_csvs(out, cold)
    assert (out / XLSX).read_bytes() == (cold / XLSX).read_bytes()
    same_as_gdal_reads(out / GPKG, cold / GPKG)


def test_text_hashes_are_pandas_siphash_of_each_text():
    """Each text, hashed once per distinct value, hashes as pandas' SipHash-2-4 of the text
    (``pandas.util.hash_array``, the reference), missing values as the empty text marked."""
    texts = ["CB-1", None, "ok", "CB-1", np.nan, "", "é ü", "ok", "a,b"]
    missing = np.array([t is None or t != t for t in texts])
    plain = np.array(["" if m else t for t, m in zip(texts, missing, strict=True)], dtype=object)
    sip = pd.util.hash_array(plain, categorize=False)
    for series in (pd.Series(texts, dtype=object), pd.Series(texts, dtype="string")):
        got = column_hashes(series)
        assert (got[~missing] == sip[~missing]).all()
        # missing values: one hash, apart from every text (the empty text included)
        assert len(set(got[missing].tolist())) == 1
        assert got[missing][0] not in set(sip.tolist())


def test_a_layers_key_hash_is_the_row_hash_of_its_key_columns():
    frame = gpd.GeoDataFrame(
        {"kind": ["a", "b", "a"], "id": ["1", "1", "2"], "v": [1.5, np.nan, 2.0]},
        geometry=shapely.points([(0, 0), (1, 1), (2, 2)]),
        crs=32633,
    )
    lay = GpkgLayer.of(frame, None, ("kind", "id"))
    assert (lay.keys == row_hashes(frame[["kind", "id"]])).all()
    assert (lay.hashes == row_hashes(lay.data, lay.geometry)).all()
    assert len(set(lay.keys.tolist())) == 3


def test_a_pad_moves_map_is_a_cold_runs_map_byte_for_byte(tmp_path):
    """The map a re-plan writes with the last run's memo (tiles, page, block areas) is the
    file a run without a cache writes, byte for byte (a 100 MW plant: plant view, several
    tiles per layer group, tiles cut by the site's squares)."""
    from routeplan.synth import generate_site

    site = tmp_path / "site"
    generate_site(100.0, 3, site)
    out, cold = tmp_path / "out", tmp_path / "cold"
    run(site, out)
    move_gpkg_pad(site, dy=6.0)
    warm = run(site, out)
    reused = warm.cache.output_reuse.map_tiles_reused
    run(site, cold, cache=False)
    html = (cold / "map.html").read_bytes()
    assert b"Plant view:" in html  # the block areas and the squares' tiles are drawn
    assert reused > 10  # most tiles taken from the memo …
    assert (out / "map.html").read_bytes() == html  # … and the same bytes


def test_each_run_draws_its_map_once_in_a_child_process(gen, tmp_path, monkeypatch):
    """One plan, one map drawn, by the map's child (a plain run and a watching process's run:
    the map's memo is written by the same child after map.html in the second)."""
    import os

    from routeplan.outputs import write as write_mod
    from routeplan.watch import Watcher

    drawn = tmp_path / "drawn"
    real = write_mod._write_map

    def counting(*args, **kwargs):
        with open(drawn, "a") as fh:
            fh.write(f"{os.getpid()}\n")
        return real(*args, **kwargs)

    monkeypatch.setattr(write_mod, "_write_map", counting)
    run(gen, tmp_path / "out")
    watcher = Watcher(gen, tmp_path / "watched")
    watcher.run()
    watcher.settle()
    pids = drawn.read_text().split()
    assert len(pids) == 2 and str(os.getpid()) not in pids
