"""Synthetic sites: determinism, scale, references, reach of the trenches, CRS, validation."""

from __future__ import annotations

import tomllib

import geopandas as gpd
import networkx as nx
import numpy as np
import pyogrio
import pytest
import shapely
from geopandas.testing import assert_geodataframe_equal

import layers
from routeplan import synth
from routeplan.folder import MANIFEST
from routeplan.synth import generate_site, synth_site


@pytest.fixture(scope="module")
def site20():
    return synth_site(20, 11)


def read_layers(root, fmt="gpkg") -> dict[str, gpd.GeoDataFrame]:
    if fmt == "gpkg":
        return {n: pyogrio.read_dataframe(root / "site.gpkg", layer=n) for n in synth.LAYERS}
    return {n: pyogrio.read_dataframe(root / f"{n}.geojson") for n in synth.LAYERS}


def test_same_seed_same_files(tmp_path):
    a = generate_site(20, 5, tmp_path / "a")
    b = generate_site(20, 5, tmp_path / "b")
    assert a == b
    assert (tmp_path / "a" / "site.toml").read_bytes() == (
        tmp_path / "b" / "site.toml"
    ).read_bytes()
    fa, fb = read_layers(tmp_path / "a"), read_layers(tmp_path / "b")
    for name in synth.LAYERS:
        assert_geodataframe_equal(fa[name], fb[name])


def test_different_seed_different_layout(site20):
    other = synth_site(20, 12)
    assert other.toml != site20.toml
    assert not other.frames["rows"].geometry.equals(site20.frames["rows"].geometry)


@pytest.mark.parametrize("mount", synth.MOUNTS)
def test_strings_scale_with_capacity(mount):
    small, large = synth_site(5, 3, mount=mount).info, synth_site(20, 3, mount=mount).info
    # whole strings and equal blocks: within 1 % of the request
    assert small.mwdc == pytest.approx(5, rel=0.01)
    assert large.mwdc == pytest.approx(20, rel=0.01)
    # rel 0.02: each size rounds to whole strings per block on its own
    assert large.strings / small.strings == pytest.approx(4, rel=0.02)
    assert small.mount == large.mount == mount


def test_gigawatt_scale():
    info = synth_site(1000, 8).info
    assert info.mwdc == pytest.approx(1000, rel=0.01)
    assert info.strings >= 60_000
    assert info.combiners >= 2_500
    assert 200 <= info.inverters <= 300  # blocks of 3.6-5 MWdc


def test_references_ids_and_combiner_capacity(site20):
    f = site20.frames
    ids = np.concatenate([f[n]["id"].to_numpy() for n in synth.LAYERS])
    assert len(ids) == len(set(ids))  # unique across every layer
    assert set(f["rows"]["to"]) <= set(f["combiners"]["id"])
    assert set(f["combiners"]["to"]) <= set(f["inverters"]["id"])
    assert set(f["inverters"]["to"]) == set(f["grid"]["id"])
    assert f["inverters"]["to"].is_unique  # each skid feeds its own transformer station
    load = f["rows"].groupby("to")["strings"].sum()
    cap = f["combiners"].set_index("id")["max_strings"]
    assert (load <= cap[load.index]).all()
    assert set(load.index) == set(cap.index)  # no empty combiner
    assert f["rows"]["strings"].between(2, 4).all()
    assert set(f["rows"]["module"]) <= set(tomllib.loads(site20.toml)["modules"])


@pytest.mark.parametrize("mount", synth.MOUNTS)
def test_equipment_within_snap_of_a_trench(mount):
    s = synth_site(20, 4, mount=mount)
    snap = tomllib.loads(s.toml)["design"]["snap_m"]
    tree = shapely.STRtree(s.frames["trenches"].geometry.values)
    for name in ("rows", "combiners", "inverters", "grid"):
        _, dist = tree.query_nearest(s.frames[name].geometry.values, return_distance=True)
        assert dist.max() <= snap, name
    # rows tap onto their lateral by a short stub (the layout's STUB_M)
    _, dist = tree.query_nearest(s.frames["rows"].geometry.values, return_distance=True)
    assert dist.max() == pytest.approx(synth.STUB_M, abs=1e-6)


@pytest.mark.parametrize("mount", synth.MOUNTS)
def test_trench_network_is_one_connected_component(mount):
    trenches = synth_site(20, 6, mount=mount).frames["trenches"].geometry.values
    pieces = shapely.get_parts(shapely.node(shapely.union_all(trenches)))
    ends = np.round(shapely.get_coordinates(shapely.boundary(pieces)), 6).reshape(-1, 2, 2)
    graph = nx.Graph()
    graph.add_edges_from((tuple(u), tuple(v)) for u, v in ends)
    assert nx.number_connected_components(graph) == 1
    # loops: the ring gives competing paths (more edges than a spanning tree)
    assert graph.number_of_edges() > graph.number_of_nodes() - 1


def test_trench_attributes(site20):
    t = site20.frames["trenches"]
    duct = t["laying"] == "duct"
    assert duct.any() and (t["laying"] == "direct").any()
    crossings = t["id"].str.startswith(("TBD", "TLD"))
    assert t.loc[crossings, "max_circuits"].notna().all()
    assert (t.loc[crossings, "laying"] == "duct").all()
    ring = t["id"].str.startswith("TR")
    assert ring.any()
    # the ring leaves every optional attribute to the [design] defaults
    assert t.loc[ring, ["depth_m", "spacing_m", "soil_k_m_w", "max_circuits"]].isna().all().all()
    assert t.loc[ring, "laying"].isna().all()
    assert t.loc[~ring, "depth_m"].between(0.5, 1.2).all()


@pytest.mark.parametrize("mount, geom_type", [("tracker", "LineString"), ("fixed", "Polygon")])
def test_row_shape(mount, geom_type):
    rows = synth_site(10, 2, mount=mount).frames["rows"]
    assert set(rows.geom_type) == {geom_type}
    bounds = rows.geometry.bounds
    along = np.maximum(bounds.maxx - bounds.minx, bounds.maxy - bounds.miny)
    assert along.between(30, 100).all()


def test_site_toml_contract(site20):
    config = tomllib.loads(site20.toml)
    assert config["site"]["crs"] == synth.PROJECTED_CRS
    (module,) = config["modules"].values()
    assert module["imp_a"] < module["isc_a"] and module["vmp_v"] < module["voc_v"]
    # string Voc at STC stays under the 1500 V class limit with margin for cold days
    assert module["voc_v"] * module["per_string"] < 1400
    assert module["max_fuse_a"] in (25.0, 30.0)
    assert config["design"]["rules"] == "iec"
    assert config["design"]["drop_pct"]["dc_total"] == 2.0
    assert config["allowances"] == {"termination_m": 1.5, "slack_pct": 3.0}


def test_toml_values_round_trip():
    doc = {
        "top": "root scalar",
        "t": {"s": 'a "q" \\ é\n', "f": 0.1, "e": 1e-05, "i": 3, "b": True, "l": [1, 2.5]},
        "u": {"v": {"k w": -2.0}},
    }
    text = synth._toml_tables(doc, (), {})
    assert tomllib.loads(text) == doc


def test_unassigned_rows_leave_room_on_their_nearest_combiner():
    full = synth_site(20, 9)
    part = synth_site(20, 9, unassigned_rows=7)
    rows, combiners = part.frames["rows"], part.frames["combiners"]
    free = rows["to"].isna()
    assert free.sum() == part.info.unassigned_rows == 7
    # the layout does not change; only the `to` of those rows is emptied
    assert rows.geometry.equals(full.frames["rows"].geometry)
    assert (rows.loc[~free, "to"] == full.frames["rows"].loc[~free, "to"]).all()
    assert part.toml == full.toml
    load = rows.groupby("to")["strings"].sum().reindex(combiners["id"], fill_value=0)
    tree = shapely.STRtree(combiners.geometry.values)
    nearest = tree.query_nearest(rows.geometry.values[free], all_matches=False)[1]
    room = combiners["max_strings"].to_numpy()[nearest] - load.to_numpy()[nearest]
    assert (rows.loc[free, "strings"].to_numpy() <= room).all()


@pytest.mark.parametrize("fmt", synth.FORMATS)
def test_geographic_matches_projected(tmp_path, fmt):
    # Reference: pyproj (via GeoDataFrame.to_crs) takes the lon/lat back to UTM 33N.
    generate_site(5, 21, tmp_path / "utm", fmt=fmt)
    info = generate_site(5, 21, tmp_path / "geo", fmt=fmt, geographic=True)
    assert info.crs == "EPSG:4326"
    utm, geo = read_layers(tmp_path / "utm", fmt), read_layers(tmp_path / "geo", fmt)
    for name in synth.LAYERS:
        assert geo[name].crs.to_epsg() == 4326
        assert utm[name].crs.to_epsg() == 32633
        back = geo[name].to_crs(utm[name].crs)
        np.testing.assert_allclose(
            shapely.get_coordinates(back.geometry.values),
            shapely.get_coordinates(utm[name].geometry.values),
            atol=0.01,  # 1 cm: lon/lat doubles keep far better; GeoJSON is not rounded
            rtol=0,
        )
    assert (tmp_path / "utm" / "site.toml").read_bytes() == (
        tmp_path / "geo" / "site.toml"
    ).read_bytes()


def test_formats_write_their_files_and_replace_the_other(tmp_path):
    info = generate_site(5, 1, tmp_path, fmt="geojson")
    assert info.files == ("site.toml", *(f"{n}.geojson" for n in synth.LAYERS))
    info = generate_site(5, 1, tmp_path, fmt="gpkg")
    assert info.files == ("site.toml", "site.gpkg")
    written = sorted(p.name for p in tmp_path.iterdir() if p.name != MANIFEST)
    assert written == ["site.gpkg", "site.toml"]  # the other format's files are gone
    assert [name for name, _ in pyogrio.list_layers(tmp_path / "site.gpkg")] == list(synth.LAYERS)


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"mw": 0}, "mw is 0"),
        ({"mw": -5}, "mw is -5"),
        ({"mw": float("nan")}, "mw is nan"),
        ({"seed": -1}, "seed is -1"),
        ({"fmt": "shp"}, "fmt is 'shp'; expected one of gpkg, geojson"),
        ({"mount": "roof"}, "mount is 'roof'; expected one of tracker, fixed"),
        ({"unassigned_rows": -1}, "unassigned_rows is -1"),
        ({"unassigned_rows": 10_000}, "leaves at most one row per combiner"),
    ],
)
def test_bad_arguments(tmp_path, kwargs, message):
    args = {"mw": 5, "seed": 1, "out": tmp_path / "s", **kwargs}
    with pytest.raises(ValueError, match=message.replace("(", r"\(")):
        generate_site(**args)
    assert not (tmp_path / "s").exists()  # nothing written


@pytest.mark.skipif(not hasattr(layers, "read_site"), reason="layers.read_site not available yet")
@pytest.mark.parametrize(
    "fmt, geographic, mount", [("gpkg", False, "tracker"), ("geojson", True, "fixed")]
)
def test_read_site_accepts_the_synthetic_site(tmp_path, fmt, geographic, mount):
    info = generate_site(
        8, 17, tmp_path, fmt=fmt, geographic=geographic, mount=mount, unassigned_rows=2
    )
    site = layers.read_site(tmp_path)
    assert site.crs.to_epsg() == 32633
    assert [len(site.layer(n)) for n in synth.LAYERS] == [
        info.rows,
        info.combiners,
        info.inverters,
        info.trenches,
        info.inverters,  # one transformer station (grid point) per inverter skid
    ]
    assert int(site.rows["strings"].sum()) == info.strings
    assert site.rows["to"].isna().sum() == 2


# ---- realism: a generated plant is mostly buildable ------------------------------------------


def _plan(mw, seed, mount=None):
    from routeplan.config import parse_design
    from routeplan.pipeline import plan_site

    s = synth_site(mw, seed, mount=mount)
    config = tomllib.loads(s.toml)
    design, problems = parse_design(config)
    assert not problems
    return s, plan_site(layers.build_site(s.frames, config), design)


@pytest.mark.parametrize("seed, mount", [(9, "tracker"), (3, "fixed")])
def test_generated_plant_is_mostly_buildable(seed, mount):
    s, plan = _plan(20, seed, mount)
    c, seg = plan.circuits, plan.segments
    # string cables never share a trench with the feeders; arrays reach the pad on their own
    assert not ((seg["strings"] > 0) & (seg["arrays"] + seg["ac"] > 0)).any()
    # each skid's LV link to its transformer is in air: no trench, sized with parallel sets
    ac = c[c["kind"] == "ac"]
    assert (ac["trench_segments"].fillna("") == "").all()
    assert (ac["parallel"] > 1).all()
    assert (ac["status"] == "ok").all()
    # a string lateral holds at most one combiner's strings (its end combiner: all one way)
    assert seg["strings"].max() <= s.frames["combiners"]["max_strings"].max()
    # duct banks hold what routes through them
    assert (seg["status"] == "ok").all()
    ok = (c["status"] == "ok").mean()
    assert ok >= 0.9, ok  # mostly buildable …
    assert (c.loc[c["kind"] == "array", "status"] == "ok").all()


def test_end_combiners_give_genuine_failures():
    # … with some genuine failures: only strings of the end combiners (one per block, all
    # strings one way along their string lateral) fail, on their capacity after grouping
    s, plan = _plan(20, 9, "tracker")
    c = plan.circuits
    fail = c[c["status"] == "fail"]
    assert 0 < len(fail) < 0.1 * len(c)
    assert (fail["kind"] == "string").all()
    assert fail["note"].str.contains("after derating").all()
    assert fail["to_id"].nunique() <= s.info.inverters  # at most one end combiner per block
