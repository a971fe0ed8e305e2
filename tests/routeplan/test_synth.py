"""Synthetic sites: determinism, scale, references, reach of the trenches, CRS, validation,
and the three topologies (central, sub-array combiners, string inverters) planned end to end."""

from __future__ import annotations

import tomllib

import geopandas as gpd
import networkx as nx
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from geopandas.testing import assert_geodataframe_equal
from typer.testing import CliRunner

import layers
from routeplan import synth
from routeplan.cli import app
from routeplan.folder import MANIFEST
from routeplan.synth import generate_site, synth_site

runner = CliRunner()


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
        ({"topology": "ring"}, "topology is 'ring'; expected one of central, subarray, string"),
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


# ---- topologies: central, sub-array combiners, string inverters ------------------------------

#: (topology, seed, mount): 1-lateral blocks (seed 9 tracker, rows of 3 strings) and 2-lateral
#: blocks (seed 2 fixed; seed 4 tracker, rows of 2 strings) — see synth._plant
TOPOLOGY_CASES = {
    "central": ("central", 9, "tracker"),
    "subarray-1-lateral": ("subarray", 9, "tracker"),
    "subarray-2-laterals": ("subarray", 2, "fixed"),
    "string-rows-of-3": ("string", 9, "tracker"),
    "string-rows-of-2": ("string", 4, "tracker"),
}
UNASSIGNED = 3  # rows left for the planner in every case
_PLANNED: dict[str, dict] = {}


def planned_case(case: str, tmp_path_factory) -> dict:
    """A generated 20 MW site of ``case``, written (GeoPackage), read back with geopandas and
    planned with `routeplan plan` (once per module run)."""
    if case not in _PLANNED:
        _PLANNED[case] = _plan_case(*TOPOLOGY_CASES[case], tmp_path_factory)
    return _PLANNED[case]


@pytest.fixture(scope="module", params=list(TOPOLOGY_CASES))
def planned(request, tmp_path_factory) -> dict:
    return planned_case(request.param, tmp_path_factory)


def _plan_case(topology: str, seed: int, mount: str, tmp_path_factory) -> dict:
    root = tmp_path_factory.mktemp(f"{topology}-{seed}")
    site, out = root / "site", root / "out"
    info = generate_site(20, seed, site, mount=mount, topology=topology, unassigned_rows=UNASSIGNED)
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet"])
    read = lambda name: pd.read_csv(out / name, keep_default_na=False, na_values=[""])  # noqa: E731
    return {
        "topology": topology,
        "info": info,
        "toml": tomllib.loads((site / "site.toml").read_text(encoding="utf-8")),
        "layers": {n: gpd.read_file(site / "site.gpkg", layer=n) for n in synth.LAYERS},
        "exit_code": result.exit_code,
        "output": result.output,
        "circuits": read("cable_schedule.csv"),
        "segments": read("trench_schedule.csv"),
        "inputs": read("inverter_inputs.csv"),
        "summary": (out / "summary.json").read_text(encoding="utf-8"),
    }


def test_each_topology_writes_a_valid_site_that_plans(planned):
    # exit 0 or 1: the input was valid (bad input is exit 2) and every output was written
    assert planned["exit_code"] in (0, 1), planned["output"]
    f = planned["layers"]
    ids = np.concatenate([f[n]["id"].to_numpy() for n in synth.LAYERS])
    assert len(ids) == len(set(ids))  # unique across every layer
    assert f["rows"]["to"].isna().sum() == UNASSIGNED
    # the planner placed the unassigned rows on string combiners or string inverters
    c = planned["circuits"]
    fed = set(f["combiners"]["to"]) & set(f["combiners"]["id"])  # recombiners
    free = set(f["rows"].loc[f["rows"]["to"].isna(), "id"])
    landed = set(c.loc[c["from_id"].isin(free), "to_id"])
    assert landed and not landed & fed


def test_circuit_counts_by_kind_match_the_generator(planned):
    """Counted from the written layers with geopandas, by what each feature's `to` names: a
    string per string of a row; a sub-array cable per combiner feeding a combiner, an array
    cable per combiner feeding an inverter, an AC circuit per inverter feeding a grid point."""
    f, info = planned["layers"], planned["info"]
    comb, inv, grid = f["combiners"], f["inverters"], f["grid"]
    from_layers = {
        "string": int(f["rows"]["strings"].sum()),
        "subarray": int(comb["to"].isin(comb["id"]).sum()),
        "array": int(comb["to"].isin(inv["id"]).sum()),
        "ac": int(inv["to"].isin(grid["id"]).sum()),
    }
    assert from_layers == info.circuits
    assert info.combiners == len(comb) and info.inverters == len(inv)
    assert info.recombiners == len(set(comb["to"]) & set(comb["id"]))  # fed combiners
    planned_kinds = planned["circuits"]["kind"].value_counts().to_dict()
    assert planned_kinds == {k: n for k, n in info.circuits.items() if n}
    expected = {
        "central": {"array"},
        "subarray": {"subarray", "array"},
        "string": set(),
    }[planned["topology"]]
    assert {k for k in ("subarray", "array") if info.circuits[k]} == expected


def test_failures_are_only_the_documented_shortcut(planned):
    """Every sub-array, array and AC cable, trench segment and inverter input is within its
    limits; only strings of the end combiner (string inverter) of a block may fail, on their
    capacity after grouping (the module docstring's draft-layout shortcut)."""
    c = planned["circuits"]
    assert (c.loc[c["kind"] != "string", "status"] == "ok").all()
    assert (planned["segments"]["status"] == "ok").all()
    assert (planned["inputs"]["status"] == "ok").all()
    fail = c[c["status"] == "fail"]
    assert planned["exit_code"] == (1 if len(fail) else 0)
    if len(fail):
        assert len(fail) < 0.1 * len(c)
        assert fail["note"].str.contains("after derating").all()
        block = fail["to_id"].str.extract(r"^[A-Z]+(\d+)-", expand=False)
        assert block.notna().all()
        assert (fail.groupby(block)["to_id"].nunique() == 1).all()  # one end combiner a block


@pytest.mark.parametrize("topology", synth.TOPOLOGIES)
def test_topology_same_seed_same_site_and_one_layout(topology):
    a, b = synth_site(12, 31, topology=topology), synth_site(12, 31, topology=topology)
    assert a.toml == b.toml and a.info == b.info
    for name in synth.LAYERS:
        assert_geodataframe_equal(a.frames[name], b.frames[name])
    # the topology changes the equipment, not the layout: rows, trenches and grid points are
    # those of the central plant of the same seed
    central = synth_site(12, 31).frames
    for name in ("rows", "trenches", "grid"):
        assert a.frames[name].geometry.equals(central[name].geometry), name
    assert (a.frames["trenches"]["id"] == central["trenches"]["id"]).all()


@pytest.mark.parametrize("seed, mount", [(9, "tracker"), (2, "fixed")])
def test_subarray_recombiners_collect_the_string_combiners_at_the_pad(seed, mount):
    s = synth_site(20, seed, mount=mount, topology="subarray")
    comb, inv = s.frames["combiners"], s.frames["inverters"]
    rc = comb[comb["id"].isin(comb["to"])]  # combiners fed by combiners
    string_cb = comb[~comb["id"].isin(comb["to"])]
    assert len(rc) == s.info.recombiners == 4 * s.info.blocks
    # strings go to string combiners only; those feed recombiners of their own block, which
    # feed the block's skid: two combiners in a chain
    assert set(s.frames["rows"]["to"].dropna()) <= set(string_cb["id"])
    assert set(string_cb["to"]) == set(rc["id"])
    block = lambda ids: ids.str.extract(r"^[A-Z]+(\d+)-?", expand=False)  # noqa: E731
    assert (block(string_cb["id"]) == block(string_cb["to"])).all()
    assert set(rc["to"]) == set(inv["id"])
    assert (block(rc["id"]) == block(rc["to"])).all()
    # each recombiner on its own DC input of its skid: inputs 1…dc_inputs, each once
    per_inv = rc.groupby("to")["input"].apply(sorted)
    dc_inputs = inv.set_index("id")["dc_inputs"]
    for inverter, got in per_inv.items():
        assert got == list(range(1, int(dc_inputs[inverter]) + 1))
    # a recombiner takes strings from no row; nothing but recombiners lack max_strings
    assert rc["max_strings"].isna().all() and string_cb["max_strings"].notna().all()
    # on the pad's cable-entry line: each recombiner's nearest trench point is the pad's
    # (shapely as the reference), so its array cable is the two stubs in air
    trenches = shapely.union_all(s.frames["trenches"].geometry.values)
    pad = inv.set_index("id").geometry
    for rid, to, point in zip(rc["id"], rc["to"], rc.geometry, strict=True):
        tap = shapely.ops.nearest_points(point, trenches)[1]
        pad_tap = shapely.ops.nearest_points(pad[to], trenches)[1]
        assert tap.distance(pad_tap) < 1e-6, rid


@pytest.mark.parametrize("case", ["subarray-1-lateral", "subarray-2-laterals"])
def test_subarray_array_cables_run_in_air_and_sub_arrays_are_fused(case, tmp_path_factory):
    c = planned_case(case, tmp_path_factory)["circuits"]
    arrays, subs = c[c["kind"] == "array"], c[c["kind"] == "subarray"]
    assert (arrays["trench_segments"].isna()).all()  # stubs only
    assert (arrays["backfeed_a"] == 0).all()  # alone on its input
    # the other sub-arrays of a recombiner feed a fault on one: fused where the cable's
    # capacity is below that backfeed (IEC 62548, from memory)
    protected = subs["backfeed_a"] > subs["ampacity_a"]
    assert protected.any()
    assert subs.loc[protected, "array_fuse_a"].notna().all()


@pytest.mark.parametrize("case", ["string-rows-of-3", "string-rows-of-2"])
def test_string_inverters_take_every_string_within_their_input_ratings(case, tmp_path_factory):
    """Recomputed per input from the schedule and the layers: strings on it ≤ its terminals,
    Σ Imp ≤ input_max_a, Σ Isc ≤ input_max_isc_a (the synthetic modules are monofacial: the
    design Isc is the datasheet Isc); rows naming an input land there."""
    planned = planned_case(case, tmp_path_factory)
    f, c = planned["layers"], planned["circuits"]
    assert len(f["combiners"]) == 0
    strings = c[c["kind"] == "string"]
    assert strings["input"].notna().all()  # every string lands on an input
    inv = f["inverters"].set_index("id")
    assert strings["to_id"].isin(inv.index).all()
    assert (strings["input"] <= inv.loc[strings["to_id"], "dc_inputs"].to_numpy()).all()
    (module,) = planned["toml"]["modules"].values()
    rows = f["rows"].set_index("id")
    named = rows["input"].reindex(strings["from_id"]).to_numpy()
    has = ~np.isnan(named)
    assert has.sum() > 0 and (~has).sum() > 0  # named inputs and the planner's spread
    np.testing.assert_array_equal(strings["input"].to_numpy()[has], named[has])
    load = strings.groupby(["to_id", "input"]).size().rename("n").reset_index()
    lim = inv.loc[load["to_id"]]
    assert (load["n"].to_numpy() <= lim["input_max_strings"].to_numpy()).all()
    assert (load["n"].to_numpy() * module["imp_a"] <= lim["input_max_a"].to_numpy()).all()
    assert (load["n"].to_numpy() * module["isc_a"] <= lim["input_max_isc_a"].to_numpy()).all()
    # the planner's inputs table says the same
    table = planned["inputs"].set_index(["inverter_id", "input"])["strings"]
    got = load.set_index(["to_id", "input"])["n"]
    assert table.sort_index().tolist() == got.sort_index().tolist()
    # each inverter's AC circuit ends at its block's transformer station
    ac = c[c["kind"] == "ac"]
    assert len(ac) == len(inv)
    block = lambda ids: ids.str.extract(r"^[A-Z]+(\d+)", expand=False)  # noqa: E731
    assert (block(ac["from_id"]) == block(ac["to_id"])).all()


@pytest.mark.parametrize("topology", ["subarray", "string"])
def test_gigawatt_scale_per_topology(topology):
    info = synth_site(1000, 8, topology=topology).info
    assert info.mwdc == pytest.approx(1000, rel=0.01)
    assert info.circuits["string"] == info.strings >= 60_000
    if topology == "subarray":
        assert info.recombiners == 4 * info.blocks
        assert info.circuits["subarray"] >= 2_500 and info.circuits["array"] == info.recombiners
    else:
        assert info.combiners == 0 and info.inverters >= 2_500  # string inverters
        assert info.circuits["ac"] == info.inverters


def test_synth_command_topology_option(tmp_path):
    site = tmp_path / "s"
    result = runner.invoke(
        app, ["synth", "--mw", "5", "--seed", "2", "--topology", "string", "--out", str(site)]
    )
    assert result.exit_code == 0, result.output
    assert " string inverters, " in result.output and " combiners" not in result.output
    check = runner.invoke(app, ["check", str(site)])
    assert check.exit_code == 0 and "ok: no problems found" in check.output
    result = runner.invoke(
        app, ["synth", "--mw", "5", "--topology", "subarray", "--out", str(tmp_path / "r")]
    )
    assert result.exit_code == 0, result.output
    assert "of them recombiners" in result.output
    bad = runner.invoke(
        app, ["synth", "--mw", "5", "--topology", "ring", "--out", str(tmp_path / "b")]
    )
    assert bad.exit_code == 2
    assert bad.stderr.splitlines() == [
        "error: topology is 'ring'; expected one of central, subarray, string"
    ]
    assert not (tmp_path / "b").exists()
