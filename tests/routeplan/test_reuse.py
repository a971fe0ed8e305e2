"""Row-by-row reuse of the last run's outputs: hashes, chunks, the workbook's ZIP pieces and
the GeoPackage update, each checked against an outside reference (zlib, Python's zipfile,
GDAL through pyogrio, SQLite)."""

from __future__ import annotations

import sqlite3
import zipfile
import zlib

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely

from routeplan.outputs.gpkg import GpkgLayer, encode_geometries, update_gpkg, write_gpkg
from routeplan.outputs.reuse import (
    CHUNK_MAX,
    HashMemo,
    chunk_bounds,
    chunk_keys,
    column_hashes,
    geometry_hashes,
    layout,
    row_hashes,
)
from routeplan.outputs.xlsx import Piece, crc32_combine, write_zip


def test_crc32_combine_matches_zlib_on_the_joined_text():
    rng = np.random.default_rng(3)
    for n1, n2 in [(0, 0), (1, 0), (0, 5), (1000, 777), (70_000, 1), (3, 200_000)]:
        a = rng.integers(0, 256, n1, dtype=np.uint8).tobytes()
        b = rng.integers(0, 256, n2, dtype=np.uint8).tobytes()
        assert crc32_combine(zlib.crc32(a), zlib.crc32(b), len(b)) == zlib.crc32(a + b)


def test_pieces_make_one_deflate_stream_that_zipfile_reads(tmp_path):
    parts = [b"<row>" * 3000, b"", b"x" * 10, bytes(range(256)) * 50]
    path = tmp_path / "t.zip"
    offsets = write_zip(path, [("a.xml", [Piece.of(p) for p in parts]), ("b", [Piece.of(b"hi")])])
    with zipfile.ZipFile(path) as z:
        assert z.testzip() is None
        assert z.read("a.xml") == b"".join(parts)
        assert z.read("b") == b"hi"
    data = path.read_bytes()
    # the offsets returned are where each piece's compressed bytes lie in the file
    for piece_bytes, at in zip([Piece.of(p).data for p in parts], offsets[0], strict=True):
        assert data[at : at + len(piece_bytes)] == piece_bytes
    # a piece copied out of the file is a valid piece again
    again = tmp_path / "again.zip"
    e = [
        Piece(data[at : at + len(Piece.of(p).data)], zlib.crc32(p), len(p))
        for p, at in zip(parts, offsets[0], strict=True)
    ]
    write_zip(again, [("a.xml", e), ("b", [Piece.of(b"hi")])])
    assert again.read_bytes() == data


def _frame(n: int, seed: int = 0) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return pd.DataFrame(
        {
            "id": [f"C{i:05d}" for i in range(n)],
            "size_mm2": rng.choice([4.0, 6.0, 10.0, np.nan], n),
            "note": rng.choice(["", "ok", None, 'a "quoted", text'], n),
            "n": rng.integers(0, 9, n),
        }
    )


def test_row_hashes_see_every_value_and_the_geometry():
    f = _frame(500)
    h = row_hashes(f)
    assert len(np.unique(h)) == len(f)  # ids differ, so rows differ
    g = f.copy()
    g.loc[7, "size_mm2"] = 16.0
    g.loc[9, "note"] = "changed"
    g.loc[11, "note"] = None if f.loc[11, "note"] is not None else "None"
    changed = np.flatnonzero(row_hashes(g) != h)
    assert changed.tolist() == [7, 9, 11]
    lines = shapely.linestrings(np.arange(1000.0).reshape(500, 1, 2).repeat(2, axis=1))
    moved = lines.copy()
    moved[3] = shapely.affinity.translate(moved[3], xoff=0.001)
    assert np.flatnonzero(row_hashes(f, lines) != row_hashes(f, moved)).tolist() == [3]
    # values whose text differs hash apart, in text and mixed (object) columns alike
    mixed = pd.DataFrame({"v": np.array([1, 1.0, True, "1", None, "None", ""], dtype=object)})
    assert len(np.unique(row_hashes(mixed))) == 7
    text = pd.DataFrame({"v": pd.array(["a", None, "", "None"], dtype="str")})
    assert len(np.unique(row_hashes(text))) == 4
    # -0.0 is not 0.0 for every writer that keeps its sign (GDAL's REAL, WKB coordinates):
    # numbers and coordinates hash by their bits; every NaN is one missing value
    signs = pd.DataFrame({"v": [0.0, -0.0, np.nan, -np.nan]})
    assert len(np.unique(row_hashes(signs))) == 3
    at_zero = shapely.points([[0.0, 1.0], [-0.0, 1.0]])
    assert len(np.unique(row_hashes(signs.iloc[:2], at_zero))) == 2
    assert row_hashes(signs.iloc[:1], at_zero[1:])[0] != row_hashes(signs.iloc[:1], at_zero[:1])[0]
    # layout covers what row hashes do not: names and dtypes
    assert layout(f) != layout(f.rename(columns={"n": "m"}))
    assert layout(f) != layout(f.astype({"n": float}))


def test_chunk_bounds_are_content_defined():
    f = _frame(20_000, seed=1)
    h = row_hashes(f)
    b = chunk_bounds(h)
    assert b[0] == 0 and b[-1] == len(f) and (np.diff(b) > 0).all()
    assert np.diff(b).max() <= CHUNK_MAX
    keys = chunk_keys(h, b, layout(f))
    # insert one row in the middle: only the chunk holding it gets a new key
    g = pd.concat([f.iloc[:10_000], _frame(1, seed=9).assign(id="NEW"), f.iloc[10_000:]])
    hg = row_hashes(g.reset_index(drop=True))
    kg = chunk_keys(hg, chunk_bounds(hg), layout(g))
    assert len(set(kg) - set(keys)) == 1
    assert len(set(keys) - set(kg)) == 1


@pytest.fixture
def layers(tmp_path):
    """A small line layer and a mixed point/polygon layer, written by GDAL."""
    rng = np.random.default_rng(5)
    n = 300
    xy = rng.uniform(500_000, 501_000, (n, 3, 2))
    lines = gpd.GeoDataFrame(_frame(n), geometry=shapely.linestrings(xy), crs=32633)
    pts = shapely.points(rng.uniform(500_000, 501_000, (40, 2)))
    pts[::4] = shapely.box(500_000, 4_600_000, 500_010.5, 4_600_020.25)
    eq = gpd.GeoDataFrame({"id": [f"E{i}" for i in range(40)]}, geometry=pts, crs=32633)
    return lines, eq


def _as_layers(lines, eq):
    return {
        "lines": GpkgLayer.of(lines, None, ("id",)),
        "equipment": GpkgLayer.of(eq, None, ("id",)),
    }


def test_a_layer_hashed_with_a_memo_is_the_layer_hashed_whole(layers):
    """GpkgLayer.of with a HashMemo (a watching process) gives the row, key and geometry
    hashes of hashing the layer whole, after a geometry moved and a row removed."""
    lines, eq = layers
    memo = HashMemo()
    GpkgLayer.of(lines, None, ("id",), (memo, "lines"))
    g = lines.geometry.to_numpy().copy()
    g[7] = shapely.affinity.translate(g[7], 0.5, 0.0)
    edited = lines.set_geometry(g, crs=lines.crs).drop(index=3).reset_index(drop=True)
    kept = GpkgLayer.of(edited, None, ("id",), (memo, "lines"))
    whole = _as_layers(edited, eq)["lines"]
    for name in ("hashes", "keys", "geometry_h"):
        assert getattr(kept, name).tolist() == getattr(whole, name).tolist(), name
    assert whole.geometry_h.tolist() == geometry_hashes(edited.geometry.to_numpy()).tolist()


def test_geometry_blobs_are_the_ones_gdal_writes(tmp_path, layers):
    """The GeoPackageBinary geometry encoding (OGC 12-128, clause 2.1.3 from memory), compared
    with GDAL's own encoding."""
    lines, eq = layers
    path = tmp_path / "a.gpkg"
    write_gpkg(_as_layers(lines, eq), path)
    con = sqlite3.connect(path)
    for name, frame in (("lines", lines), ("equipment", eq)):
        blobs = [r[0] for r in con.execute(f'SELECT geom FROM "{name}" ORDER BY fid')]
        assert encode_geometries(frame.geometry.values, 32633) == blobs
    con.close()


def features(path, name: str, key: tuple[str, ...]) -> dict:
    """A layer as SQLite holds it, by feature key: every value (geometry blob included) but the
    fid, the feature's R-tree box, the feature count and the layer extent."""
    con = sqlite3.connect(path)
    try:
        cols = [r[1] for r in con.execute(f'PRAGMA table_info("{name}")')]
        at = [cols.index(k) for k in key]
        rows = con.execute(f'SELECT * FROM "{name}"').fetchall()
        by_fid = {r[0]: tuple(r[i] for i in at) for r in rows}
        assert len(set(by_fid.values())) == len(rows)
        boxes = con.execute(f'SELECT * FROM "rtree_{name}_geom"').fetchall()
        return {
            "rows": {tuple(r[i] for i in at): r[1:] for r in rows},
            "rtree": {by_fid[b[0]]: b[1:] for b in boxes},
            "count": con.execute(
                "SELECT feature_count FROM gpkg_ogr_contents WHERE table_name = ?", (name,)
            ).fetchone(),
            "extent": con.execute(
                "SELECT min_x, min_y, max_x, max_y FROM gpkg_contents WHERE table_name = ?",
                (name,),
            ).fetchone(),
            "fids": {v: k for k, v in by_fid.items()},
        }
    finally:
        con.close()


@pytest.mark.parametrize("edit", ["values", "geometry", "fewer", "more", "middle"])
def test_update_gives_what_gdal_writes_whole(tmp_path, layers, edit):
    lines, eq = layers
    old = tmp_path / "old.gpkg"
    first = _as_layers(lines, eq)
    index = write_gpkg(first, old)
    new_lines = lines.copy()
    if edit == "values":
        new_lines.loc[[3, 150], "size_mm2"] = 25.0
        new_lines.loc[4, "note"] = None
    elif edit == "geometry":
        new_lines.loc[10, "geometry"] = shapely.LineString([(499_000, 4_600_000), (502_000, 1)])
    elif edit == "fewer":
        new_lines = new_lines.iloc[:-17]
    elif edit == "more":
        extra = lines.iloc[:5].assign(id=[f"X{i}" for i in range(5)])
        new_lines = pd.concat([new_lines, extra], ignore_index=True)
    else:  # one feature more, in the middle of the table
        extra = lines.iloc[:1].assign(id="C00150a")
        new_lines = pd.concat([new_lines.iloc[:151], extra, new_lines.iloc[151:]])
        new_lines = new_lines.reset_index(drop=True)
    second = _as_layers(gpd.GeoDataFrame(new_lines, crs=32633), eq)
    cold, warm = tmp_path / "cold.gpkg", tmp_path / "warm.gpkg"
    write_gpkg(second, cold)
    done = update_gpkg(old, warm, second, index)
    assert done is not None
    expected = {"values": 3, "geometry": 1, "fewer": 17, "more": 5, "middle": 1}[edit]
    assert done[1] == expected
    for name in ("lines", "equipment"):
        w, c = features(warm, name, ("id",)), features(cold, name, ("id",))
        assert {k: v for k, v in w.items() if k != "fids"} == {
            k: v for k, v in c.items() if k != "fids"
        }
    # features still there keep their fid; GDAL reads the same features
    before, after = features(old, "lines", ("id",))["fids"], features(warm, "lines", ("id",))
    assert all(after["fids"][k] == f for k, f in before.items() if k in after["fids"])
    got = gpd.read_file(warm, layer="lines").sort_values("id", ignore_index=True)
    pd.testing.assert_frame_equal(
        got, gpd.read_file(cold, layer="lines").sort_values("id", ignore_index=True)
    )
    # the index returned lets the next update go on from here
    third = _as_layers(lines, eq)
    again = update_gpkg(warm, tmp_path / "again.gpkg", third, done[0])
    assert again is not None
    assert (
        features(tmp_path / "again.gpkg", "lines", ("id",))["rows"]
        == features(old, "lines", ("id",))["rows"]
    )


def test_update_refuses_what_it_cannot_do(tmp_path, layers):
    lines, eq = layers
    old = tmp_path / "old.gpkg"
    first = _as_layers(lines, eq)
    index = write_gpkg(first, old)
    # another column layout
    renamed = _as_layers(lines.rename(columns={"note": "remark"}), eq)
    assert update_gpkg(old, tmp_path / "a.gpkg", renamed, index) is None
    assert not (tmp_path / "a.gpkg").exists()
    # an empty geometry among the rows to write
    empty = lines.copy()
    empty.loc[0, "geometry"] = shapely.LineString()
    again = _as_layers(gpd.GeoDataFrame(empty, crs=32633), eq)
    assert update_gpkg(old, tmp_path / "b.gpkg", again, index) is None
    # ids that do not name one feature each
    twice = lines.assign(id=["same"] * len(lines))
    assert update_gpkg(old, tmp_path / "d.gpkg", _as_layers(twice, eq), index) is None
    # a file that does not hold what the index says (rows removed behind our back)
    con = sqlite3.connect(old)
    with con:
        con.execute('DELETE FROM "lines" WHERE fid = 5')
    con.close()
    assert update_gpkg(old, tmp_path / "c.gpkg", first, index) is None


def test_sheet_rows_and_widths_per_chunk():
    """The workbook's rows joined per chunk are the rows of the whole table, and column widths
    count characters, not UTF-8 bytes."""
    from routeplan.outputs.tables import format_table
    from routeplan.outputs.xlsx import cell_lengths, sheet_rows

    f = pd.DataFrame({"id": ["C1", "Ω-2", "C3", "süd"], "v": [1.5, np.nan, 2.0, 10.25]})
    t = format_table(f)
    whole = sheet_rows(t, [0, 4])
    parts = sheet_rows(t, [0, 1, 3, 4])
    assert len(parts) == 3 and b"".join(parts) == whole[0]
    assert whole[0].count(b"<row>") == 4
    assert cell_lengths(t)[:, 0].tolist() == [2, 3, 2, 3]
    assert cell_lengths(t)[:, 1].tolist() == [3, 0, 1, 5]


def _edits(frame: pd.DataFrame, geometry: np.ndarray, rng: np.random.Generator):
    """Edited copies of (frame, geometry): values changed in place of a few rows, -0.0 for
    0.0, NaN, text made missing, a row added, a column renamed or of another dtype, geometries
    rebuilt with the same or other coordinates."""
    n = len(frame)
    f, g = frame.copy(), geometry.copy()
    at = rng.choice(n, 5, replace=False)
    f.loc[at, "size_mm2"] = 16.0
    f.loc[at[:2], "note"] = None
    f.loc[at[2:4], "label"] = pd.NA
    yield "values", f, g
    f = frame.copy()
    f.loc[f["size_mm2"] == 0.0, "size_mm2"] = -0.0  # equal as numbers, not as bits
    yield "negative zero", f, g
    yield "back to zero", frame, g
    if "mixed" in frame:  # rows 0-4 hold 1: 1.0 and True compare equal to it, hash apart
        f = frame.copy()
        f.loc[[0, 1, 2, 3, 4], "mixed"] = [1.0, True, "1", 2, None]
        yield "mixed objects", f, g
    g = geometry.copy()
    g[at] = [shapely.LineString(shapely.get_coordinates(x)) for x in g[at]]  # same, new objects
    g[at[0]] = shapely.LineString([(0, 0), (1, 1)])
    yield "geometries", frame, g
    f = pd.concat([frame, frame.iloc[:1]], ignore_index=True)
    yield "one more row", f, np.r_[geometry, geometry[:1]]
    keep = np.r_[0:100, 103:n]  # rows removed or inserted: the others shift
    yield "rows removed", frame.iloc[keep].reset_index(drop=True), geometry[keep]
    mid = n // 2
    f = pd.concat([frame.iloc[:mid], frame.iloc[[7, 8]], frame.iloc[mid:]], ignore_index=True)
    yield "rows inserted", f, np.r_[geometry[:mid], geometry[[7, 8]], geometry[mid:]]
    yield "first row removed", frame.iloc[1:].reset_index(drop=True), geometry[1:]
    f = frame.iloc[keep].reset_index(drop=True)
    f.loc[200, "size_mm2"], f.loc[250, "label"], f.loc[5, "note"] = 95.0, pd.NA, "edited"
    g = geometry[keep].copy()
    g[300] = shapely.LineString([(5, 5), (6, 6)])
    yield "rows removed, values and a geometry changed", f, g
    yield "half the rows", frame.iloc[: n // 2].reset_index(drop=True), geometry[: n // 2]
    yield "renamed", frame.rename(columns={"n": "count"}), geometry
    yield "other dtype", frame.astype({"n": float}), geometry
    yield "unchanged", frame, geometry


def test_hash_memo_gives_the_hashes_of_hashing_whole_after_any_edit():
    """:class:`HashMemo` hashes only what changed since its last table; its hashes must be
    those of row_hashes/column_hashes of the whole table (the definition) after every kind of
    edit, in any order, and a changed row's hash must change."""
    rng = np.random.default_rng(11)
    n = 400
    frame = _frame(n, seed=5)
    frame["size_mm2"] = np.where(rng.random(n) < 0.1, 0.0, frame["size_mm2"])
    frame["label"] = pd.array(rng.choice(["a", "b", None], n), dtype="string")
    frame["mixed"] = pd.Series(rng.choice([1, "x", None], n), dtype=object)
    frame.loc[:4, "mixed"] = 1
    geometry = np.array(
        [shapely.LineString([(i, 0), (i, float(j))]) for i, j in enumerate(rng.random(n))],
        dtype=object,
    )
    # a table whose values the memo compares in every column, and one with objects of mixed
    # types (hashed whole)
    for table in (frame.drop(columns="mixed"), frame):
        _check_memo(table, geometry, rng)


def _check_memo(frame: pd.DataFrame, geometry: np.ndarray, rng: np.random.Generator) -> None:
    n = len(frame)
    memo = HashMemo()
    memo.hashes("t", frame, geometry)
    edits = list(_edits(frame, geometry, rng))
    for order in (edits, edits[::-1]):
        last_rows = row_hashes(frame, geometry)
        memo.hashes("t", frame, geometry)
        for what, f, g in order:
            columns, rows = memo.hashes("t", f, g)
            assert rows.tolist() == row_hashes(f, g).tolist(), what
            # the geometries' own hashes (the map keeps block areas by them)
            assert memo.geometry_hashes("t").tolist() == geometry_hashes(g).tolist(), what
            assert [c.tolist() for c in columns] == [
                column_hashes(f.iloc[:, j]).tolist() for j in range(f.shape[1])
            ], what
            if len(rows) == n and what not in ("renamed", "other dtype"):
                same = (
                    f.reset_index(drop=True).equals(frame)  # -0.0 equals 0.0 here, so …
                    and np.array_equal(np.signbit(f["size_mm2"]), np.signbit(frame["size_mm2"]))
                    and all(a is b for a, b in zip(g, geometry, strict=True))
                )
                assert (rows == last_rows).all() == same, what
            memo.hashes("t", frame, geometry)  # back to the first table


def test_hash_memo_keeps_its_own_copy_of_the_values():
    """A frame changed in place after it was hashed must not be taken as unchanged."""
    frame = _frame(50, seed=2)
    memo = HashMemo()
    memo.hashes("t", frame)
    frame.loc[3, "size_mm2"] = 99.0
    frame.loc[4, "id"] = "changed"
    assert memo.hashes("t", frame)[1].tolist() == row_hashes(frame).tolist()


def test_hash_memo_hashes_only_the_new_rows_after_rows_are_removed_or_inserted(monkeypatch):
    """The rows after a removal or an insertion keep their values' hashes and their own (a
    row's strings changed: the circuits after it move up); only the inserted rows' values are
    hashed, and only their row hashes made again."""
    from routeplan.outputs import reuse

    frame = _frame(1000, seed=4)
    memo = HashMemo()
    memo.hashes("t", frame)
    hashed: list[int] = []
    real = reuse._hash_values

    def counting(kind, values, missing):
        hashed.append(len(values))
        return real(kind, values, missing)

    removed = frame.drop(index=[400, 401]).reset_index(drop=True)
    inserted = pd.concat([removed.iloc[:600], _frame(3, seed=9), removed.iloc[600:]])
    inserted = inserted.reset_index(drop=True)
    expected = [row_hashes(removed).tolist(), row_hashes(inserted).tolist()]
    combined: list[int] = []
    real_combine = reuse._combine

    def combining(hashes, n, geometry):
        combined.append(n)
        return real_combine(hashes, n, geometry)

    monkeypatch.setattr(reuse, "_hash_values", counting)
    monkeypatch.setattr(reuse, "_combine", combining)
    assert memo.hashes("t", removed)[1].tolist() == expected[0]
    assert sum(hashed) == 0
    assert sum(combined) == 0  # every row found whole, before the gap or after it
    assert memo.hashes("t", inserted)[1].tolist() == expected[1]
    assert 0 < sum(hashed) <= 3 * frame.shape[1]
    assert sum(combined) == 3  # the inserted rows' hashes alone made from their values'


def test_hash_memo_with_and_without_geometry_in_turn():
    frame = _frame(60, seed=3)
    geometry = np.array([shapely.Point(i, 0) for i in range(60)], dtype=object)
    memo = HashMemo()
    for g in (geometry, None, geometry, None):
        assert memo.hashes("t", frame, g)[1].tolist() == row_hashes(frame, g).tolist()
