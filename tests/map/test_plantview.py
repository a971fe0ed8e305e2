"""The plant view's blocks (routeplan.map.plantview) checked with shapely as the reference:
each block's area contains its circuits' ends and its rows, and its counts are those of its
circuits."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import shapely

from routeplan.map import plantview
from routeplan.map.features import circuit_kind
from routeplan.map.page import render_map
from routeplan.map.plantview import block_of, block_table, detail_delta

from .map_fixtures import make_frames, synthetic_frames


def _ends(circuits) -> tuple[np.ndarray, np.ndarray]:
    """First and last points of each circuit (shapely ``get_point``)."""
    g = circuits.geometry.to_numpy()
    return shapely.get_point(g, 0), shapely.get_point(g, -1)


@pytest.fixture(scope="module")
def synthetic():
    frames, _ = synthetic_frames(n_blocks=54)  # 2 inverters of 27 combiner blocks each
    return frames


def test_block_of_follows_the_chain_to_the_inverter(synthetic):
    c = synthetic["circuits"]
    assert "inverter_id" not in c.columns
    block = block_of(c)
    kinds = circuit_kind(c)
    # an array circuit ends at its inverter; an AC circuit starts there
    arrays = kinds == "array"
    np.testing.assert_array_equal(block[arrays], c["to_id"].to_numpy()[arrays])
    ac = kinds == "ac"
    np.testing.assert_array_equal(block[ac], c["from_id"].to_numpy()[ac])
    # a string's block is that of the array circuit leaving its combiner
    of_combiner = dict(zip(c["from_id"][arrays], c["to_id"][arrays], strict=True))
    strings = kinds == "string"
    expected = [of_combiner[t] for t in c["to_id"][strings]]
    assert block[strings].tolist() == expected


def test_inverter_id_is_used_where_given(synthetic):
    c = synthetic["circuits"].copy()
    c["inverter_id"] = "B-" + pd.Series(np.arange(len(c)) % 3, index=c.index).astype(str)
    assert block_of(c).tolist() == c["inverter_id"].tolist()


def test_each_block_contains_its_circuits_ends_and_rows(synthetic):
    c, rows = synthetic["circuits"], synthetic["rows"]
    blocks = block_table(c, rows)
    block = block_of(c)
    assert sorted(blocks["block"]) == sorted(set(block))
    area = dict(zip(blocks["block"], blocks.geometry, strict=True))
    start, end = _ends(c)
    kinds = circuit_kind(c)
    dc = kinds != "ac"
    for i in np.flatnonzero(dc):
        assert area[block[i]].contains(start[i]) and area[block[i]].contains(end[i]), i
    for i in np.flatnonzero(~dc):  # an AC circuit: its start (the inverter)
        assert area[block[i]].contains(start[i]), i
    # every vertex of a row lies in the block of its strings
    row_block = dict(zip(c["from_id"][kinds == "string"], block[kinds == "string"], strict=True))
    for rid, g in zip(rows["id"], rows.geometry, strict=True):
        assert area[row_block[rid]].covers(g), rid
    assert shapely.is_valid(blocks.geometry.to_numpy()).all()


def test_block_counts_are_those_of_its_circuits(synthetic):
    c = synthetic["circuits"].copy()
    c.loc[c.index[::97], "status"] = "fail"
    blocks = block_table(c, synthetic["rows"]).set_index("block")
    frame = pd.DataFrame(
        {
            "b": block_of(c),
            "fail": c["status"].eq("fail"),
            "u": pd.to_numeric(c["utilisation"], errors="coerce"),
        }
    )
    by = frame.groupby("b")
    pd.testing.assert_series_equal(
        blocks["failing"], by["fail"].sum().astype(np.int64), check_names=False
    )
    pd.testing.assert_series_equal(blocks["circuits"], by.size(), check_names=False)
    np.testing.assert_allclose(blocks["worst_utilisation"], by["u"].max().loc[blocks.index])


def test_geographic_frames_are_buffered_in_metres():
    frames, _ = make_frames()
    c = frames["circuits"]
    projected = block_table(c, frames["rows"])
    geographic = block_table(c.to_crs("EPSG:4326"), frames["rows"].to_crs("EPSG:4326"))
    assert geographic.crs.equals("EPSG:4326")
    area = geographic.to_crs(projected.crs).geometry.iloc[0]
    # the circuits' ends lie inside by about the buffer in metres (not 4 degrees)
    start, end = _ends(c[circuit_kind(c) != "ac"])
    inside = shapely.distance(shapely.get_exterior_ring(area), np.r_[start, end])
    limit = plantview.BLOCK_BUFFER_M - plantview.BLOCK_SIMPLIFY_M - 0.5
    assert inside.min() >= limit
    assert area.area < 1.5 * projected.geometry.area.iloc[0]


def test_detail_delta_counts_zoom_levels_of_a_quarter_area():
    assert detail_delta(plantview.PLANT_VIEW_ABOVE) is None
    # 4 × DETAIL_FEATURES features: one level in shows a quarter of them
    assert detail_delta(4 * plantview.DETAIL_FEATURES) == 1
    assert detail_delta(16 * plantview.DETAIL_FEATURES + 1) == 3


def test_small_site_has_no_block_layer_and_opens_on_details(plan_frames):
    frames, site = plan_frames
    html = render_map(*(frames[k] for k in ("circuits", "segments", "rows", "equipment")),
                      site_name=site)  # fmt: skip
    assert "feature_group_blocks" not in html
    assert '"delta":null' in html


def test_plant_scale_page_has_blocks_and_lazy_details(plan_frames, monkeypatch):
    monkeypatch.setattr(plantview, "PLANT_VIEW_ABOVE", 0)
    frames, site = plan_frames
    html = render_map(*(frames[k] for k in ("circuits", "segments", "rows", "equipment")),
                      site_name=site)  # fmt: skip
    assert "feature_group_blocks" in html
    assert '"blocks":[{"id":"INV1"' in html
    # detail groups are made when first shown
    assert "rpLazy(feature_group_string, [" in html
    assert "rpLazy(feature_group_ac," not in html


def test_tiles_by_square_keep_ids_together_and_stay_in_one_band():
    from routeplan.map.tiles import TILE_MAX, tiles

    rng = np.random.default_rng(3)
    n = 20_000
    ids = np.array([f"R{i // 2:05d}" for i in range(n)], dtype=object)  # 2 per id
    band, col = rng.integers(0, 6, n), rng.integers(-3, 3, n)
    cells = (band << 32) + (col & 0xFFFFFFFF)
    parts = tiles(ids, cells)
    assert sorted(np.concatenate(parts).tolist()) == list(range(n))
    assert max(len(p) for p in parts) <= TILE_MAX
    first = pd.Series(cells).groupby(ids).transform("first").to_numpy()
    for p in parts:
        assert len(set((first[p] >> 32).tolist())) == 1  # one band
        assert set(ids[p]).isdisjoint(ids[np.setdiff1d(np.arange(n), p)])  # ids whole
    # one id more: the tiles of the other bands are the same
    more_ids = np.r_[ids, ["R99999"]]
    more_cells = np.r_[cells, [int(cells[0])]]
    a = {tuple(sorted(set(ids[p]))) for p in parts}
    b = {tuple(sorted(set(more_ids[p]))) for p in tiles(more_ids, more_cells)}
    assert len(a - b) == 1 and len(b - a) == 1


def test_squares_are_a_fixed_grid_of_the_site(synthetic):
    from routeplan.map.page import _cells

    c = synthetic["circuits"]
    box = c.to_crs("EPSG:4326").total_bounds
    cells = _cells(c, box)
    assert len(np.unique(cells >> 32)) > 3  # several bands
    # a site box a little larger (an edit at its edge) gives the same squares
    wider = box + np.array([-1e-4, 0, 1e-4, 0])
    np.testing.assert_array_equal(_cells(c, wider), cells)


def test_without_blocks_a_large_map_opens_on_its_details(plan_frames, monkeypatch):
    monkeypatch.setattr(plantview, "PLANT_VIEW_ABOVE", 0)
    frames, site = plan_frames
    c = frames["circuits"]
    c = c[c["kind"] != "ac"]  # no AC circuit: no inverter to name a block
    html = render_map(c, *(frames[k] for k in ("segments", "rows", "equipment")), site_name=site)
    assert "feature_group_blocks" not in html and "rpLazy(feature_group_string" not in html


@pytest.mark.parametrize("crs", [None, "EPSG:4326"])
def test_a_memo_of_the_last_areas_draws_only_the_changed_block(synthetic, crs):
    """Block areas kept from the last map (routeplan.map.tiles.MapMemo) are those a fresh
    drawing gives, bit for bit; a moved string redraws its block's area only."""
    from routeplan.map.tiles import MapMemo

    c, rows = synthetic["circuits"], synthetic["rows"]
    if crs is not None:  # drawn in a metric CRS, given back in the frames' own
        c, rows = c.to_crs(crs), rows.to_crs(crs)
    first = MapMemo()
    block_table(c, rows, areas=first.geometries)
    moved = c.copy()
    i = int(np.flatnonzero(circuit_kind(c) == "string")[5])
    g = moved.geometry.to_numpy().copy()
    g[i] = shapely.affinity.translate(g[i], yoff=6.0 if crs is None else 6e-5)
    moved = moved.set_geometry(g, crs=c.crs)
    memo = MapMemo.load(first.export())
    made = []

    def areas(keys, make):
        return memo.geometries(keys, lambda which: made.append(which.tolist()) or make(which))

    kept = block_table(moved, rows, areas=areas)
    fresh = block_table(moved, rows)
    assert len(made) == 1 and len(made[0]) == 1  # one call, one block
    assert kept["block"].iloc[made[0][0]] == block_of(moved)[i]
    assert shapely.to_wkb(kept.geometry.to_numpy()).tolist() == (
        shapely.to_wkb(fresh.geometry.to_numpy()).tolist()
    )
    assert set(memo.export()["shapes"]["keys"]) - set(first.shapes) != set()  # the new area


@pytest.mark.parametrize("with_row_hashes", [False, True])
def test_a_shift_of_the_sites_lowest_point_keeps_the_other_areas(synthetic, with_row_hashes):
    """Each block's outline points are rounded on a grid whose origin is the site's smallest
    coordinates rounded down to ``ORIGIN_STEP_M`` (2**20 m): a circuit moved below them (by a
    fraction of a metre) redraws its own block's area only (a trench moved at the edge of a
    site changed every block's points before). A circuit moved 2,000 km east makes the site
    wider than the grid allows (its points must lie within 2**21 m of the origin): the origin
    is then its lowest point, every area is drawn again and the moved circuit's block still
    covers it (shapely; clipped points would leave it out). Either way each area is the one a
    fresh drawing gives, bit for bit (shapely WKB). With the writer's row hashes
    (routeplan.outputs.reuse.row_hashes) or the geometries' own."""
    from routeplan.map.tiles import MapMemo
    from routeplan.outputs.reuse import row_hashes

    c, rows = synthetic["circuits"], synthetic["rows"]

    def hashes(circuits):
        if not with_row_hashes:
            return None
        return tuple(
            row_hashes(f.drop(columns=f.geometry.name), f.geometry.to_numpy())
            for f in (circuits, rows)
        )

    first = MapMemo()
    block_table(c, rows, areas=first.geometries, hashes=hashes(c))
    i = int(np.flatnonzero(circuit_kind(c) == "string")[3])
    g = c.geometry.to_numpy()
    x0, y0 = shapely.total_bounds(g)[:2]
    low = shapely.bounds(g[i])
    for dx, dy, kept_areas in ((x0 - low[0] - 3.7, y0 - low[1] - 2.4, True), (2.0e6, 0.0, False)):
        moved_g = g.copy()
        moved_g[i] = shapely.affinity.translate(g[i], dx, dy)
        moved = c.set_geometry(moved_g, crs=c.crs)
        memo = MapMemo.load(first.export())
        kept = block_table(moved, rows, areas=memo.geometries, hashes=hashes(moved))
        fresh = block_table(moved, rows)
        same = set(memo.shapes) & set(first.shapes)
        if kept_areas:  # every block's but the moved circuit's
            assert len(same) == len(first.shapes) - 1
        else:
            assert not same
        assert shapely.to_wkb(kept.geometry.to_numpy()).tolist() == (
            shapely.to_wkb(fresh.geometry.to_numpy()).tolist()
        )
        area = kept.geometry.to_numpy()[kept["block"].to_numpy() == block_of(moved)[i]][0]
        assert shapely.covers(area, moved_g[i])
