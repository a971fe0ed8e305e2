"""Layers taken from memory by a process that reads the same site again
(:class:`layers.sources.LayerMemo`, used by ``routeplan plan --watch``).

Reference: a fresh read of the same files by GDAL through pyogrio (``layers.read_site``
without a memo). A layer may come from memory only when what it is read from is unchanged;
every edit below — by GDAL, by plain SQLite statements that leave GeoPackage's bookkeeping
as it was, of the CRS record, of a GeoJSON file — must be seen."""

from __future__ import annotations

import sqlite3

import geopandas as gpd
import pytest
import shapely

import layers
from layers.sources import LayerMemo
from tests.conftest import write_site


@pytest.fixture
def reads(monkeypatch):
    """The layer names read from files (not from memory) since the last ``clear``."""
    seen: list[str] = []
    real = gpd.read_file

    def spy(path, *args, **kwargs):
        seen.append(kwargs.get("layer") or str(path))
        return real(path, *args, **kwargs)

    monkeypatch.setattr(gpd, "read_file", spy)
    return seen


def _same_site(a: layers.Site, b: layers.Site) -> None:
    assert a.crs == b.crs
    for name in layers.LAYER_NAMES:
        fa, fb = a.layer(name), b.layer(name)
        assert fa.equals(fb), name
        assert list(fa.dtypes) == list(fb.dtypes), name
        assert shapely.equals_exact(fa.geometry.values, fb.geometry.values, 0).all(), name


def _read_twice(root, memo):
    """The site read with the memo, and read fresh (the reference)."""
    return layers.read_site(root, memo), layers.read_site(root)


def test_an_edit_of_one_geopackage_layer_reads_that_layer_alone(tmp_path, reads):
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    memo = LayerMemo()
    layers.read_site(root, memo)
    reads.clear()
    site = layers.read_site(root, memo)  # nothing changed: nothing read
    assert reads == []
    _same_site(site, layers.read_site(root))

    inv = gpd.read_file(root / "site.gpkg", layer="inverters")
    inv["geometry"] = inv.geometry.translate(yoff=8.0)  # GDAL rewrites the table
    inv.to_file(root / "site.gpkg", layer="inverters", engine="pyogrio")
    reads.clear()
    site, fresh = _read_twice(root, memo)
    assert reads[0] == "inverters" and reads.count("inverters") == 2  # with memo, then fresh
    assert len(reads) == 1 + len(layers.LAYER_NAMES)
    _same_site(site, fresh)


def test_an_edit_by_plain_sqlite_is_seen(tmp_path, reads):
    """A writer that changes rows but not gpkg_contents (its timestamp, its extent)."""
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    memo = LayerMemo()
    layers.read_site(root, memo)
    with sqlite3.connect(root / "site.gpkg") as con:
        # the R-tree triggers name these functions; the geometry is not changed, so none runs
        for name in ("ST_IsEmpty", "ST_MinX", "ST_MaxX", "ST_MinY", "ST_MaxY"):
            con.create_function(name, 1, lambda blob: None)
        con.execute("UPDATE rows SET strings = 7 WHERE id = 'R2'")
    reads.clear()
    site, fresh = _read_twice(root, memo)
    assert site.rows["strings"].tolist() == [2, 7]
    assert reads.count("rows") == 2 and reads.count("trenches") == 1
    _same_site(site, fresh)


def test_an_edit_of_the_crs_record_reads_every_layer_again(tmp_path, reads):
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    memo = LayerMemo()
    layers.read_site(root, memo)
    with sqlite3.connect(root / "site.gpkg") as con:  # the same zone, the southern variant
        con.execute(
            "UPDATE gpkg_spatial_ref_sys SET organization_coordsys_id = 32733, definition = ? "
            "WHERE organization_coordsys_id = 32633",
            (layers.read_site(root).crs.__class__.from_epsg(32733).to_wkt(),),
        )
    reads.clear()
    site, fresh = _read_twice(root, memo)
    assert len(reads) == 2 * len(layers.LAYER_NAMES)
    assert site.crs.to_epsg() == 32733
    _same_site(site, fresh)


def test_a_write_ahead_log_beside_the_file_turns_the_memo_off(tmp_path, reads):
    """Pages may then be in the log, not the file: every layer is read."""
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    memo = LayerMemo()
    layers.read_site(root, memo)
    (root / "site.gpkg-wal").write_bytes(b"")
    reads.clear()
    layers.read_site(root, memo)
    assert len(reads) == len(layers.LAYER_NAMES)


def test_files_of_other_formats_by_their_content(tmp_path, reads):
    root = write_site(tmp_path / "s", fmt="geojson")
    memo = LayerMemo()
    layers.read_site(root, memo)
    text = (root / "rows.geojson").read_text()
    (root / "rows.geojson").write_text(text.replace('"R2"', '"R9"'))
    (root / "inverters.geojson").touch()  # a new time, the same content
    reads.clear()
    site, fresh = _read_twice(root, memo)
    assert [r.rsplit("/", 1)[-1] for r in reads[:1]] == ["rows.geojson"]
    assert len(reads) == 1 + len(layers.LAYER_NAMES)
    assert site.rows["id"].tolist() == ["R1", "R9"]
    _same_site(site, fresh)


def test_a_frame_from_memory_is_a_copy(tmp_path):
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    memo = LayerMemo()
    spec = "site.gpkg:rows"
    digest = memo.digest(root, spec)
    assert digest is not None
    first = gpd.read_file(root / "site.gpkg", layer="rows")
    memo.keep(root, spec, digest, first)
    first.loc[0, "id"] = "changed"
    taken = memo.frame(root, spec, digest)
    taken.loc[1, "id"] = "changed too"
    assert memo.frame(root, spec, digest)["id"].tolist() == ["R1", "R2"]
    assert memo.frame(root, spec, "another digest") is None


def test_a_metadata_table_with_a_quote_in_its_name_is_read_as_data(tmp_path, reads):
    """Names from the file are SQL identifiers, quoted: a hostile name neither breaks the
    digest (the memo stays on) nor is run as SQL; an edit of that table's rows is seen."""
    root = write_site(tmp_path / "s", fmt="site.gpkg")
    odd = 'gpkg_odd" (x); DROP TABLE rows; --'
    quoted = '"' + odd.replace('"', '""') + '"'
    with sqlite3.connect(root / "site.gpkg") as con:
        con.execute(f"CREATE TABLE {quoted} (table_name TEXT, v INTEGER)")
        con.execute(f"INSERT INTO {quoted} VALUES ('rows', 1)")
    memo = LayerMemo()
    assert memo.digest(root, "site.gpkg:rows") is not None
    layers.read_site(root, memo)
    reads.clear()
    layers.read_site(root, memo)
    assert reads == []  # every layer from memory
    with sqlite3.connect(root / "site.gpkg") as con:
        con.execute(f"UPDATE {quoted} SET v = 2")  # a record of the rows layer
    reads.clear()
    site, fresh = _read_twice(root, memo)
    assert reads.count("rows") == 2 and reads.count("trenches") == 1
    _same_site(site, fresh)
