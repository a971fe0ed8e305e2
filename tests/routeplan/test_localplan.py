"""Local re-plans (:mod:`routeplan.localplan`) against cold plans, value for value.

Property: for any move of inverter pads and combiners of a generated plant (an invented
scenario, :func:`routeplan.synth.generate_site`) — onto points along the trenches, trench
ends (where the tap joins an existing node), or off the trenches within the snap distance —
the local re-plan of the baseline gives the same cable schedule, trench schedule, inverter
inputs, bill of quantities, summary, routes and sizing arrays as planning the moved site from
scratch (``plan_site(..., with_remedies=False)``). The comparison is exact, floats included:
the local re-plan computes every changed value with the same expressions on the same operands
as a cold plan (route lengths are sums over the same segments in the same order; per-kind
totals are summed over the whole plan, as the engine sums them), so no tolerance is needed.
The one field left out is ``SizingResult.iterations`` (how many passes the sizing loop took —
a count of work done, not a result: the subset settles in its own number of passes).

Other edits — a trench added, removed or redrawn, a row's strings changed, a design setting
changed, alone or with a move in the same re-plan — are re-planned in full today (the
re-plan says so, ``timings_s["local"] == 0``) and must equal a cold plan (no noding memo)
all the same; an edit a cold plan refuses (a feature left unreachable) is refused alike.

A second site restricts the array and a.c. size lists so that cables need parallel sets:
there the grouping couples circuits through their extra cable sets and the fixed point over
the affected segments is exercised. A fourth plans under the NEC rule set (NFPA 70 NEC 2023),
whose 310.14(A)(2) short-section exception reads the segments' and air stretches' lengths.
"""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from routeplan.check import load
from routeplan.errors import DesignError, RoutingError
from routeplan.localplan import (
    _NOT_PER_CIRCUIT,
    MoveSearch,
    _inputs_differ,
    _new_paths,
    baseline,
    moved_features,
    replan,
    site_edit,
)
from routeplan.network import retap
from routeplan.pipeline import plan_site, route_params
from routeplan.placement import _anchor, candidate_points, moved_site
from routeplan.routing import site_network
from routeplan.synth import generate_site

#: cable sizes that force parallel sets on a generated plant's array and a.c. cables
#: (invented design settings of the test)
TIGHT = """
[design.sizes_mm2]
array = [16, 25]
ac = [95, 120]
"""


def _site(root: Path, mw: float, seed: int, extra: str = "", dc_inputs: int = 0, rules="iec"):
    generate_site(mw, seed, root)
    toml = root / "site.toml"
    if extra:
        toml.write_text(toml.read_text() + extra)
    if rules == "nec":  # the NEC rule set's own size lists, insulations and air arrangements
        text = toml.read_text().replace('rules = "iec"', 'rules = "nec"')
        toml.write_text(re.sub(r"\n\[design\.air_arrangement\].*?\n\n", "\n\n", text, flags=re.S))
    if dc_inputs:  # arrays spread over the inputs by route length (routeplan.inputs)
        inv = pyogrio.read_dataframe(root / "site.gpkg", layer="inverters")
        inv["dc_inputs"] = dc_inputs
        pyogrio.write_dataframe(inv, root / "site.gpkg", layer="inverters", driver="GPKG")
    return load(root)


#: the plants: plain; tight sizes (parallel sets); inverters with 3 DC inputs each, which the
#: arrays are spread over nearest first, so a move can change an array's input and backfeed;
#: the NEC rule set (NFPA 70 NEC 2023), whose 310.14(A)(2) short-section exception reads the
#: lengths of the segments and air stretches a move splits or changes
PLANTS = (
    ("plain", 8, 5, "", 0, "iec"),
    ("tight", 6, 7, TIGHT, 0, "iec"),
    ("inputs", 6, 9, "", 3, "iec"),
    ("nec", 6, 11, "", 0, "nec"),
)


@pytest.fixture(scope="module")
def plants(tmp_path_factory):
    out = {}
    for name, mw, seed, extra, dc_inputs, rules in PLANTS:
        site, design = _site(tmp_path_factory.mktemp(name), mw, seed, extra, dc_inputs, rules)
        out[name] = (site, design, baseline(site, design))
    return out


def _frames_equal(a: pd.DataFrame, b: pd.DataFrame) -> list[str]:
    """Columns that differ (geometry by WKB; NaN equals NaN)."""
    assert list(a.columns) == list(b.columns)
    assert len(a) == len(b)
    bad = []
    for k in a.columns:
        if k == getattr(a, "_geometry_column_name", None):
            if not np.array_equal(shapely.to_wkb(a[k].array), shapely.to_wkb(b[k].array)):
                bad.append(k)
        elif not a[k].reset_index(drop=True).equals(b[k].reset_index(drop=True)):
            bad.append(k)
    return bad


def assert_same_plan(local, cold) -> None:
    assert _frames_equal(local.circuits, cold.circuits) == []
    assert _frames_equal(local.segments, cold.segments) == []
    assert _frames_equal(local.inputs, cold.inputs) == []
    assert local.quantities.equals(cold.quantities)
    assert local.summary == cold.summary
    rl, rc = local.routes, cold.routes
    assert np.array_equal(rl.incidence_circuit, rc.incidence_circuit)
    assert np.array_equal(rl.incidence_segment, rc.incidence_segment)
    assert rl.air.equals(rc.air)
    assert np.array_equal(rl.air_incidence_circuit, rc.air_incidence_circuit)
    assert np.array_equal(rl.air_incidence_stretch, rc.air_incidence_stretch)
    for f in dataclasses.fields(cold.sizing):
        if f.name == "iterations":
            continue
        a, b = np.asarray(getattr(local.sizing, f.name)), np.asarray(getattr(cold.sizing, f.name))
        same = np.array_equal(a, b, equal_nan=True) if a.dtype.kind == "f" else np.array_equal(a, b)
        assert same, f.name


@st.composite
def moves(draw, site):
    """One to three features moved: onto a point along a trench near them, onto a trench's
    end, or off the trench by a few metres."""
    n = draw(st.integers(1, 3))
    out = []
    trenches = np.asarray(site.trenches.geometry.array)
    for _ in range(n):
        kind = draw(st.sampled_from(["inverter", "combiner"]))
        layer = site.inverters if kind == "inverter" else site.combiners
        row = draw(st.integers(0, len(layer) - 1))
        a = _anchor(layer.geometry.iloc[row])
        near = np.flatnonzero(shapely.distance(trenches, a) < 120.0)
        line = trenches[draw(st.sampled_from(near.tolist()))]
        how = draw(st.sampled_from(["along", "end", "off"]))
        if how == "end":
            p = shapely.get_point(line, draw(st.sampled_from([0, -1])))
            xy = (p.x, p.y)
        else:
            f = draw(st.floats(0.0, 1.0))
            p = shapely.line_interpolate_point(line, f, normalized=True)
            d = (0.0, 0.0) if how == "along" else draw(st.tuples(*[st.floats(-6.0, 6.0)] * 2))
            xy = (round(p.x + d[0], 2), round(p.y + d[1], 2))
        out.append((kind, row, xy))
    return out


def _apply(site, edits):
    for kind, row, xy in edits:
        site = moved_site(site, kind, row, xy)
    return site


def _cold(site, design, memo):
    return plan_site(site, design, noding_memo=memo, with_remedies=False)


@pytest.mark.parametrize("name", ["plain", "tight", "inputs", "nec"])
@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_local_replan_equals_cold_plan(plants, name, data):
    site, design, base = plants[name]
    edits = data.draw(moves(site))
    moved = _apply(site, edits)
    memo = base.plan.routes.network.memo
    try:
        cold = _cold(moved, design, memo)
    except RoutingError as exc:  # a move the plan refuses: the re-plan refuses it alike
        with pytest.raises(type(exc)):
            replan(base, moved)
        return
    local = replan(base, moved)
    assert local.timings_s["local"] == 1.0  # the local path ran, not the fallback
    assert_same_plan(local, cold)


def test_tight_site_has_parallel_sets(plants):
    """The tight site does exercise the grouping's coupling through extra cable sets."""
    _, _, base = plants["tight"]
    assert int(np.max(base.plan.sizing.parallel)) > 1


def test_inputs_site_spreads_arrays_by_route(plants):
    """The inputs site does exercise inputs chosen by route length (more than one in use)."""
    _, _, base = plants["inputs"]
    assert base.free_input.any()
    assert len(np.unique(base.own_input[base.free_input])) > 1


def test_a_move_changes_the_plan(plants):
    """A pad moved 40 m along its trench changes its block's routes (the property above is
    not met by plans that never change)."""
    site, _design, base = plants["plain"]
    inv = site.inverters.geometry.iloc[0]
    a = _anchor(inv)
    trenches = np.asarray(site.trenches.geometry.array)
    line = trenches[int(np.argmin(shapely.distance(trenches, a)))]
    pos = shapely.line_locate_point(line, a)
    p = shapely.line_interpolate_point(line, pos + (40.0 if pos + 40 < line.length else -40.0))
    local = replan(base, moved_site(site, "inverter", 0, (p.x, p.y)))
    assert local.timings_s["local"] == 1.0
    before = base.plan.circuits.set_index("circuit_id")["route_m"]
    after = local.circuits.set_index("circuit_id")["route_m"]
    assert (before != after.reindex(before.index)).sum() > 0


def test_other_site_edits_are_routed_in_full_and_sized_locally(plants):
    """A combiner's fuse rating given, a row's strings changed: not moves nor trench edits
    (:func:`site_edit` is None), so the site is routed in full — but only the blocks whose
    circuits' sizing input changed are sized again (``timings_s["local"] == 0.75``), fewer
    circuits than the plant has, and the plan equals a cold plan. A trench edit is not a move
    (:func:`moved_features`) but a local edit of its own."""
    site, design, base = plants["plain"]
    n = len(base.plan.routes.circuits)
    combiners = site.combiners.copy()
    combiners["fuse_a"] = np.nan
    combiners.loc[combiners.index[0], "fuse_a"] = 20.0
    rows = site.rows.copy()
    rows.loc[rows.index[0], "strings"] = int(rows["strings"].iloc[0]) - 1
    for edited in (
        dataclasses.replace(site, combiners=combiners),
        dataclasses.replace(site, rows=rows),
    ):
        assert moved_features(site, edited) is None and site_edit(site, edited) is None
        local = replan(base, edited)
        assert local.timings_s["local"] == 0.75
        assert 0 < local.timings_s["local.circuits"] < n
        assert_same_plan(local, plan_site(edited, design, with_remedies=False))
    trenches = site.trenches.copy()
    trenches.loc[trenches.index[0], "depth_m"] = 1.2
    edited = dataclasses.replace(site, trenches=trenches)
    assert moved_features(site, edited) is None
    moved, trench_edit = site_edit(site, edited)
    assert trench_edit and not any(len(v) for v in moved.values())


def test_a_row_edit_keeps_the_unchanged_routes_geometry_objects(plants):
    """A row's strings changed: every other circuit's route is the last one's, and its
    geometry is the last plan's object (a watching process's row hashes take a geometry as
    unchanged by identity); the edited row's strings keep theirs too (same path), the plan
    equal to a cold plan."""
    site, design, base = plants["plain"]
    rows = site.rows.copy()
    rows.loc[rows.index[0], "strings"] = int(rows["strings"].iloc[0]) - 1
    edited = dataclasses.replace(site, rows=rows)
    local = replan(base, edited)
    assert local.timings_s["local"] == 0.75
    old = base.plan.routes.circuits
    new = local.routes.circuits
    at = pd.Index(old["circuit_id"]).get_indexer(new["circuit_id"])
    assert (at >= 0).all() and len(new) == len(old) - 1
    g_old, g_new = old.geometry.to_numpy(), new.geometry.to_numpy()
    assert all(a is b for a, b in zip(g_new, g_old[at], strict=True))
    assert_same_plan(local, plan_site(edited, design, with_remedies=False))


def _permuted(inp, perm: np.ndarray):
    """``inp`` with its circuits in another order: new circuit ``k`` is old circuit
    ``perm[k]``, parents renumbered (segments and stretches as they are)."""
    new_of_old = np.empty_like(perm)
    new_of_old[perm] = np.arange(len(perm))
    per = {
        f.name: np.asarray(getattr(inp, f.name))[perm]
        for f in dataclasses.fields(inp)
        if f.name not in _NOT_PER_CIRCUIT and getattr(inp, f.name) is not None
    }
    parent = np.asarray(inp.parent)[perm]
    per["parent"] = np.where(parent >= 0, new_of_old[np.maximum(parent, 0)], -1)
    return dataclasses.replace(inp, **per), new_of_old


def test_inputs_that_differ_are_found_in_a_new_circuit_order(plants):
    """``_inputs_differ`` on the same circuits in reverse order (parents renumbered) finds
    none; a circuit given another parent, another current, or made new is found, alone."""
    _, _, base = plants["plain"]
    inp0 = base.inp
    n = len(inp0.kind)
    perm = np.arange(n)[::-1].copy()
    inp, new_of_old = _permuted(inp0, perm)
    assert not _inputs_differ(inp, inp0, perm, new_of_old).any()
    child = int(np.flatnonzero(np.asarray(inp.parent) >= 0)[0])
    others = np.flatnonzero(
        (np.asarray(inp.kind) == np.asarray(inp.kind)[np.asarray(inp.parent)[child]])
        & (np.arange(n) != np.asarray(inp.parent)[child])
    )
    parent = np.asarray(inp.parent).copy()
    parent[child] = others[0]  # another feeder of the same kind
    moved = dataclasses.replace(inp, parent=parent)
    assert np.flatnonzero(_inputs_differ(moved, inp0, perm, new_of_old)).tolist() == [child]
    isc = np.asarray(inp.isc_a).copy()
    isc[3] *= 1.05
    hotter = dataclasses.replace(inp, isc_a=isc)
    assert np.flatnonzero(_inputs_differ(hotter, inp0, perm, new_of_old)).tolist() == [3]
    fresh = perm.copy()  # the last circuit, old circuit 0, taken as new: it differs although
    fresh[n - 1] = -1  # a new circuit is compared with old circuit 0's values
    assert np.flatnonzero(_inputs_differ(inp, inp0, fresh, new_of_old)).tolist() == [n - 1]


def test_a_soil_survey_for_every_trench_resizes_every_buried_circuit(plants):
    """Every trench given a soil thermal resistivity of 3.0 K·m/W together with a row's strings
    changed (routed in full, sized locally): every segment's soil factor changes (IEC
    60364-5-52:2009 Table B.52.16, from memory: other factors above the 2.5 K·m/W reference),
    so every circuit on a segment is sized again, whichever block it belongs to — most array
    and a.c. circuits get another utilisation — and the plan equals a cold plan."""
    site, design, base = plants["plain"]
    trenches = site.trenches.copy()
    trenches["soil_k_m_w"] = 3.0
    rows = site.rows.copy()
    rows.loc[rows.index[0], "strings"] = int(rows["strings"].iloc[0]) - 1
    edited = dataclasses.replace(site, trenches=trenches, rows=rows)
    local = replan(base, edited)
    assert local.timings_s["local"] == 0.75
    buried = np.unique(local.routes.incidence_circuit)
    assert local.timings_s["local.circuits"] >= len(buried)
    u0 = base.plan.circuits.set_index("circuit_id")["utilisation"]
    c1 = local.circuits.set_index("circuit_id")
    fed = c1.index[(c1["kind"] != "string").to_numpy()]  # buried all along: strings run in air
    assert (c1.loc[fed, "utilisation"] != u0.reindex(fed)).sum() > len(fed) // 2
    assert_same_plan(local, plan_site(edited, design, with_remedies=False))


def test_a_trench_edit_changes_the_plan_locally(plants):
    """The trench under the most circuits made a duct (or a direct burial): its segments'
    grouping factors change (IEC 60364-5-52:2009 Table B.52.19 for ducts, B.52.18 for cables
    laid direct: other factors for the same circuit count, from memory), the re-plan is local
    (fewer circuits re-sized than the plant has) and equals a cold plan."""
    site, design, base = plants["plain"]
    seg = base.plan.routes.segments
    busiest = str(seg["trench_id"].iloc[int(np.argmax(seg["circuits"].to_numpy()))])
    trenches = site.trenches.copy()
    at = trenches.index[trenches["id"].astype(str) == busiest][0]
    trenches.loc[at, "laying"] = "duct" if trenches.loc[at, "laying"] != "duct" else "direct"
    edited = dataclasses.replace(site, trenches=trenches)
    local = replan(base, edited)
    assert local.timings_s["local"] == 1.0
    assert 0 < local.timings_s["local.circuits"] < len(base.plan.routes.circuits)
    on_it = (local.routes.segments["trench_id"] == busiest).to_numpy()
    g0 = np.asarray(base.plan.sizing.seg_group_factor)[on_it]
    g1 = np.asarray(local.sizing.seg_group_factor)[on_it]
    assert not np.array_equal(g0, g1)
    assert_same_plan(local, plan_site(edited, design, with_remedies=False))


def _refused_alike(base, edited, design, error: type[Exception]) -> str:
    """The message with which a cold plan of ``edited`` and its local re-plan are both
    refused (``error``), the same."""
    with pytest.raises(error) as cold:
        plan_site(edited, design, with_remedies=False)
    with pytest.raises(error) as local:
        replan(base, edited)
    assert str(local.value) == str(cold.value)
    return str(local.value)


def test_a_trench_made_too_shallow_is_refused_as_a_cold_plan_refuses_it(plants):
    """A trench 0.01 m deep cannot bury a cable (its depth does not exceed half the cable's
    outer diameter): the cold plan refuses it naming the trench, and so does the re-plan."""
    site, design, base = plants["plain"]
    trenches = site.trenches.copy()
    trenches.loc[trenches.index[0], "depth_m"] = 0.01
    edited = dataclasses.replace(site, trenches=trenches)
    refused = _refused_alike(base, edited, design, DesignError)
    assert str(trenches["id"].iloc[0]) in refused


@pytest.mark.parametrize("and_strings", [False, True])
def test_a_trench_redrawn_along_another_is_refused_as_a_cold_plan_refuses_it(plants, and_strings):
    """A trench redrawn 5 cm beside another, along its whole length, draws one corridor twice:
    the cold plan refuses it naming both, and so does the re-plan, which checks only the
    redrawn trench and those near it (the others passed in the last plan); with a row's
    strings changed too (routed in full: the trenches checked in full, as they differ)."""
    site, design, base = plants["plain"]
    tr = site.trenches.copy()
    geoms = np.asarray(tr.geometry.array, dtype=object).copy()
    geoms[1] = shapely.affinity.translate(geoms[0], yoff=0.05)
    edited = _with_trenches(site, tr.set_geometry(geoms, crs=tr.crs))
    if and_strings:
        rows = edited.rows.copy()
        rows.loc[rows.index[0], "strings"] = int(rows["strings"].iloc[0]) - 1
        edited = dataclasses.replace(edited, rows=rows)
    refused = _refused_alike(base, edited, design, RoutingError)
    assert "a corridor must be drawn once" in refused
    assert str(tr["id"].iloc[0]) in refused and str(tr["id"].iloc[1]) in refused


def _shortcut(base) -> tuple[str, shapely.LineString]:
    """A circuit of ``base`` and a straight line between two nodes of its route whose distance
    along the route is at least 1.3 times the straight one (a corner cut): a trench drawn there
    joins existing nodes, so it splits none of that route's segments."""
    routes = base.plan.routes
    nodes = {tuple(p) for p in np.round(routes.network.node_xy, 6).tolist()}
    c = routes.circuits
    for i in np.argsort(-c["route_m"].to_numpy(float)).tolist():
        if c["kind"].iloc[i] not in ("array", "ac"):
            continue
        xy = shapely.get_coordinates(c.geometry.iloc[i])
        along = np.r_[0.0, np.cumsum(np.hypot(*np.diff(xy, axis=0).T))]
        on = [k for k, p in enumerate(np.round(xy, 6).tolist()) if tuple(p) in nodes]
        for a in on:
            for b in on:
                d = float(np.hypot(*(xy[b] - xy[a])))
                if b > a and d >= 20.0 and along[b] - along[a] >= 1.3 * d:
                    return str(c["circuit_id"].iloc[i]), shapely.LineString([xy[a], xy[b]])
    raise AssertionError("no route with a corner to cut")


def test_a_trench_that_shortens_an_untouched_route_reroutes_it(plants):
    """A trench added between two nodes of an array or a.c. route, cutting its corner: none of
    that route's segments is split or removed, yet its shortest path is now the new trench
    (Dijkstra on the edited network: every route is searched again after a trench edit). The
    local re-plan takes the shorter route and equals a cold plan."""
    site, design, base = plants["plain"]
    cid, line = _shortcut(base)
    tr = site.trenches
    new = tr.iloc[[0]].copy()
    new["id"] = "T-shortcut"
    new = new.set_geometry(gpd.GeoSeries([line], index=new.index, crs=tr.crs))
    edited = _with_trenches(site, pd.concat([tr, new]))
    local = replan(base, edited)
    assert local.timings_s["local"] == 1.0
    before = base.plan.circuits.set_index("circuit_id")["route_m"]
    after = local.circuits.set_index("circuit_id")["route_m"]
    assert after[cid] < before[cid]
    assert_same_plan(local, plan_site(edited, design, with_remedies=False))


def test_routes_that_differ_are_found_segment_by_segment(plants):
    """``_new_paths`` flags a circuit whose old route differs from its shortest path on the
    network in any way — one segment swapped for another (same count), the same segments in
    another order, one segment fewer — and no other: on the baseline's own network every
    route is its shortest path, so none differs."""
    _, _, base = plants["plain"]
    r = base.plan.routes
    node = r.network.taps["node"].to_numpy(np.int64)
    ic, seg = r.incidence_circuit, r.incidence_segment
    args = (r.network, node, base.tap_from, base.tap_to, ic)
    assert not _new_paths(*args, seg).any()
    n = np.bincount(ic, minlength=len(r.circuits))
    long = np.flatnonzero(n >= 3)
    a, b, c = (int(long[k]) for k in (0, len(long) // 2, len(long) - 1))
    at = {k: np.flatnonzero(ic == k) for k in (a, b, c)}
    swapped = seg.copy()
    swapped[at[a][1]] = (seg[at[a][1]] + 1) % len(r.segments)  # another segment, same count
    swapped[at[b]] = seg[at[b]][::-1]  # the same segments, the other way round
    shorter = np.delete(seg, at[c][-1])  # one segment fewer
    assert np.flatnonzero(_new_paths(*args, swapped)).tolist() == sorted({a, b})
    assert np.flatnonzero(
        _new_paths(r.network, node, base.tap_from, base.tap_to, np.delete(ic, at[c][-1]), shorter)
    ).tolist() == [c]


_searches: dict[tuple[str, str, int], MoveSearch] = {}


def _search(plants, name: str, layer: str, row: int) -> MoveSearch:
    key = (name, layer, row)
    if key not in _searches:
        site, design, base = plants[name]
        _searches[key] = MoveSearch(site, design, layer, row, base.plan)
    return _searches[key]


@pytest.mark.parametrize("name", ["plain", "tight", "inputs", "nec"])
@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_placement_figures_equal_cold_plan(plants, name, data):
    """What placement ranks a candidate by (:func:`routeplan.localplan.figures`, through
    :func:`routeplan.network.retap` from the network without the feature) equals the same
    columns of a cold plan of the moved site, in the schedule's order."""
    site, design, _ = plants[name]
    layer = data.draw(st.sampled_from(["inverters", "combiners"]))
    row = data.draw(st.integers(0, min(len(site.layer(layer)), 4) - 1))
    search = _search(plants, name, layer, row)
    trenches = np.asarray(site.trenches.geometry.array)
    a = _anchor(site.layer(layer).geometry.iloc[row])
    near = np.flatnonzero(shapely.distance(trenches, a) < 150.0)
    line = trenches[data.draw(st.sampled_from(near.tolist()))]
    p = shapely.line_interpolate_point(line, data.draw(st.floats(0.0, 1.0)), normalized=True)
    moved = search.site_at((round(p.x, 2), round(p.y, 2)))
    try:
        cold = _cold(moved, design, search.base.plan.routes.network.memo)
    except RoutingError as exc:
        with pytest.raises(type(exc)):
            search.figures(moved)
        return
    fig = search.figures(moved)
    assert fig.timings_s["local"] == 1.0
    for col in fig.circuits.columns:  # values exact; text as object or str alike
        pd.testing.assert_series_equal(
            fig.circuits[col].reset_index(drop=True).astype(object),
            cold.circuits[col].reset_index(drop=True).astype(object),
            check_exact=True,
        )
    assert fig.segments["status"].reset_index(drop=True).equals(cold.segments["status"])
    assert fig.inputs["status"].reset_index(drop=True).equals(cold.inputs["status"])


def _network(site, design, memo=None):
    return site_network(site, route_params(design), memo)


@settings(
    max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_retap_equals_a_build(plants, data):
    """:func:`routeplan.network.retap` (the feature joined to the network built without it)
    gives the network a build of the moved site gives: nodes, segments (ids, chainage, nodes,
    geometry) and taps, value for value; where it declines (None) a build is made instead."""
    site, design, _ = plants["plain"]
    layer = data.draw(st.sampled_from(["inverters", "combiners"]))
    row = data.draw(st.integers(0, min(len(site.layer(layer)), 4) - 1))
    search = _search(plants, "plain", layer, row)
    trenches = np.asarray(site.trenches.geometry.array)
    line = trenches[data.draw(st.integers(0, len(trenches) - 1))]
    p = shapely.line_interpolate_point(line, data.draw(st.floats(0.0, 1.0)), normalized=True)
    moved = search.site_at((round(p.x, 2), round(p.y, 2)))
    got = retap(search.minus, search.tap, moved.layer(layer).geometry.iloc[row])
    if got is None:
        return
    want = _network(moved, design)
    assert np.array_equal(got.node_xy, want.node_xy)
    assert _frames_equal(got.segments, want.segments) == []
    assert _frames_equal(got.taps, want.taps) == []


def test_retap_joins_most_points_along_trenches(plants):
    """retap takes the common case itself: points every 7 m along the trenches near a pad
    (a few, near nodes, are left to a build)."""
    site, _, _ = plants["plain"]
    search = _search(plants, "plain", "inverters", 0)
    a = _anchor(site.inverters.geometry.iloc[0])
    xy, _ = candidate_points(site.trenches, (a.x, a.y), 80.0, 7.0)
    done = [
        retap(search.minus, search.tap, search.site_at(tuple(p)).inverters.geometry.iloc[0])
        for p in xy
    ]
    assert sum(d is not None for d in done) > len(xy) // 2


# --- other edits: trenches, rows' strings, design settings (and with moves) ------------------


class _Edit:
    """An edited site and design, shown by its label alone (hypothesis prints drawn values)."""

    def __init__(self, label: str, site, design):
        self.label, self.site, self.design = label, site, design

    def __repr__(self) -> str:
        return f"_Edit({self.label!r})"


def _with_trenches(site, trenches):
    trenches = trenches.reset_index(drop=True)
    return dataclasses.replace(site, trenches=trenches)


@st.composite
def other_edit(draw, site, design, kinds: tuple[str, ...] | None = None):
    """One edit that is not a move, as an :class:`_Edit`: a trench added (a spur off a
    point along a trench, or a link between points of two nearby trenches), removed,
    redrawn (a vertex shifted a few metres, the line reversed, a vertex inserted on it, or
    the whole line moved) or given another attribute (depth, laying, spacing, soil thermal
    resistivity, capacity); one row's strings changed, a row added beside another or removed,
    the rows in reverse order, an inverter's rating or a combiner's
    room for strings, or a module's short-circuit current; or a design setting changed (ground
    temperature, air temperature, a voltage-drop limit, a conductor material; the cable slack,
    which routes). ``kinds``: drawn from these kinds only."""
    how = draw(
        st.sampled_from(
            list(kinds)
            if kinds
            else [
                "trench_add",
                "trench_remove",
                "trench_redraw",
                "trench_attribute",
                "strings",
                "row_add",
                "row_remove",
                "row_order",
                "equipment",
                "module",
                "setting",
                "drop",
                "material",
                "allowance",
            ]
        )
    )
    tr = site.trenches
    geoms = np.asarray(tr.geometry.array)
    if how == "trench_add":
        i = draw(st.integers(0, len(tr) - 1))
        a = shapely.line_interpolate_point(geoms[i], draw(st.floats(0.05, 0.95)), normalized=True)
        near = np.flatnonzero((shapely.distance(geoms, a) < 80.0) & (np.arange(len(tr)) != i))
        if len(near) and draw(st.booleans()):  # a link to a nearby trench
            j = int(near[draw(st.integers(0, len(near) - 1))])
            b = shapely.line_interpolate_point(geoms[j], draw(st.floats(0.0, 1.0)), normalized=True)
        else:  # a spur
            d = draw(st.tuples(*[st.floats(-60.0, 60.0)] * 2))
            b = shapely.Point(a.x + d[0], a.y + d[1])
        line = shapely.LineString([(round(a.x, 2), round(a.y, 2)), (round(b.x, 2), round(b.y, 2))])
        if line.length < 1.0:
            line = shapely.LineString(
                [line.coords[0], (line.coords[0][0] + 5.0, line.coords[0][1])]
            )
        new = tr.iloc[[i]].copy()
        new["id"] = "T-added"
        new = new.set_geometry(gpd.GeoSeries([line], index=new.index, crs=tr.crs))
        return _Edit(how, _with_trenches(site, pd.concat([tr, new])), design)
    if how == "trench_remove":
        i = draw(st.integers(0, len(tr) - 1))
        return _Edit(how, _with_trenches(site, tr.drop(index=tr.index[i])), design)
    if how == "trench_redraw":
        i = draw(st.integers(0, len(tr) - 1))
        xy = shapely.get_coordinates(geoms[i])
        way = draw(st.sampled_from(["shift", "reverse", "insert", "translate"]))
        if way == "translate":  # the whole line moved: its segments keep their ids and lengths
            xy = xy + np.array(draw(st.sampled_from([(0.5, 0.0), (0.0, -2.0), (1.5, 1.5)])))
        elif way == "shift":
            k = draw(st.integers(0, len(xy) - 1))
            d = draw(st.tuples(*[st.sampled_from([-5.0, -2.5, -0.5, 0.5, 2.5, 5.0])] * 2))
            xy = xy.copy()
            xy[k] = np.round(xy[k] + np.array(d), 2)
        elif way == "reverse":
            xy = xy[::-1]
        else:  # the same line drawn with one vertex more
            k = draw(st.integers(0, len(xy) - 2))
            xy = np.insert(xy, k + 1, (xy[k] + xy[k + 1]) / 2.0, axis=0)
        out = tr.geometry.to_numpy().copy()
        out[i] = shapely.LineString(xy)
        redrawn = tr.set_geometry(gpd.GeoSeries(out, index=tr.index, crs=tr.crs))
        return _Edit(f"{how}:{way}", _with_trenches(site, redrawn), design)
    if how == "trench_attribute":  # the same line, another depth, laying, spacing, soil, fill
        i = draw(st.integers(0, len(tr) - 1))
        col, value = draw(
            st.sampled_from(
                [
                    ("depth_m", 1.2),
                    ("depth_m", float("nan")),
                    ("depth_m", 0.01),  # too shallow for a cable: refused
                    ("laying", "duct"),
                    ("laying", "direct"),
                    ("spacing_m", 0.0),
                    ("soil_k_m_w", 2.5),
                    ("max_circuits", 1.0),
                ]
            )
        )
        edited = tr.copy()
        edited.loc[edited.index[i], col] = value
        return _Edit(f"{how}:{col}", _with_trenches(site, edited), design)
    if how == "row_add":  # a copy of a row a few metres aside, feeding the same combiner
        rows = site.rows
        i = draw(st.integers(0, len(rows) - 1))
        new = rows.iloc[[i]].copy()
        new["id"] = "R-added"
        d = draw(st.sampled_from([(0.0, 3.0), (4.0, 0.0), (-2.0, -2.0)]))
        new = new.set_geometry(new.geometry.translate(*d))
        added = pd.concat([rows, new], ignore_index=True)
        return _Edit(how, dataclasses.replace(site, rows=added), design)
    if how == "row_order":  # the same rows in reverse order (circuits numbered anew)
        rows = site.rows.iloc[::-1].reset_index(drop=True)
        return _Edit(how, dataclasses.replace(site, rows=rows), design)
    if how == "row_remove":
        rows = site.rows
        i = draw(st.integers(0, len(rows) - 1))
        kept = rows.drop(index=rows.index[i]).reset_index(drop=True)
        return _Edit(how, dataclasses.replace(site, rows=kept), design)
    if how == "equipment":  # an inverter's rating, or a combiner's room for strings
        if draw(st.booleans()):
            inv = site.inverters.copy()
            i = draw(st.integers(0, len(inv) - 1))
            inv.loc[inv.index[i], "ac_kva"] = float(inv["ac_kva"].iloc[i]) * 1.25
            return _Edit(f"{how}:ac_kva", dataclasses.replace(site, inverters=inv), design)
        cb = site.combiners.copy()
        i = draw(st.integers(0, len(cb) - 1))
        cb.loc[cb.index[i], "max_strings"] = draw(st.sampled_from([8, 30, 60]))
        return _Edit(f"{how}:max_strings", dataclasses.replace(site, combiners=cb), design)
    if how == "module":  # the module table: a module's short-circuit current 5 % higher
        name = draw(st.sampled_from(sorted(site.modules)))
        m = site.modules[name]
        modules = {**site.modules, name: dataclasses.replace(m, isc_a=round(m.isc_a * 1.05, 3))}
        return _Edit(how, dataclasses.replace(site, modules=modules), design)
    if how == "strings":
        rows = site.rows.copy()
        i = draw(st.integers(0, len(rows) - 1))
        now = int(rows["strings"].iloc[i])
        rows.loc[rows.index[i], "strings"] = draw(
            st.sampled_from([n for n in (1, 2, 3, 5, 6) if n != now])
        )
        return _Edit(how, dataclasses.replace(site, rows=rows), design)
    if how == "setting":
        key = draw(st.sampled_from(["ground_temp_c", "air_temp_c"]))
        value = float(draw(st.integers(5, 45).filter(lambda v: v != design.values[key])))
        values = {**design.values, key: value}
        return _Edit(f"{how}:{key}", site, dataclasses.replace(design, values=values))
    if how == "material":  # a conductor material: sizing only
        key = draw(st.sampled_from(["array", "ac"]))
        material = {**design.material, key: "Cu" if design.material[key] == "Al" else "Al"}
        return _Edit(f"{how}:{key}", site, dataclasses.replace(design, material=material))
    if how == "allowance":  # the cable slack: it routes (cable lengths), so a full plan
        slack = {**design.allowances, "slack_pct": design.allowances["slack_pct"] + 2.0}
        return _Edit(how, site, dataclasses.replace(design, allowances=slack))
    key = draw(st.sampled_from(sorted(design.drop_pct)))
    value = draw(
        st.sampled_from([0.5, 0.8, 1.2, 2.5, 3.0]).filter(lambda v: v != design.drop_pct[key])
    )
    drop = {**design.drop_pct, key: value}
    return _Edit(f"{how}:{key}", site, dataclasses.replace(design, drop_pct=drop))


#: edits of design settings that do not route (the baseline's routes are reused)
SIZING_ONLY = ("setting", "drop", "material")
#: edits of the trench layer (re-planned locally, with any moves)
TRENCH_EDITS = ("trench_add", "trench_remove", "trench_redraw", "trench_attribute")


#: edits of the site that a local re-plan takes only by routing in full and sizing locally
ROUTED_IN_FULL = ("strings", "row_add", "row_remove", "row_order", "equipment", "module")


def _path(kind: str, unmoved: bool) -> float:
    """The path a re-plan of an edit of ``kind`` takes (``timings_s["local"]``): 1.0 local
    (a trench edit, with or without moves), 0.75 routed in full and sized locally (a row's
    strings changed), 0.5 the routes reused (a sizing setting alone; ``unmoved``: no feature
    moved, or one moved back onto itself), 0.0 a full plan."""
    if kind in TRENCH_EDITS:
        return 1.0
    if kind in ROUTED_IN_FULL:
        return 0.75
    return 0.5 if kind in SIZING_ONLY and unmoved else 0.0


def _unmoved(a, b) -> bool:
    """No inverter or combiner of ``b`` is elsewhere than in ``a`` (geometry, exactly)."""
    return all(
        shapely.equals_exact(
            np.asarray(a.layer(n).geometry.array), np.asarray(b.layer(n).geometry.array), 0.0
        ).all()
        for n in ("inverters", "combiners")
    )


def _check_fallback(base, site, design, expect: float) -> None:
    """The re-plan of ``site`` under ``design`` equals a cold plan (no noding memo), value for
    value, and says which path it took (``expect``: 0.0 a full plan; 0.5 the baseline's routes
    reused, every circuit sized again); an edit the plan refuses is refused alike."""
    try:
        cold = plan_site(site, design, with_remedies=False)
    except (RoutingError, DesignError) as exc:
        event(f"refused: {type(exc).__name__}")
        with pytest.raises(type(exc)):
            replan(base, site, design)
        return
    local = replan(base, site, design)
    event(f"path: {local.timings_s['local']}")
    assert local.timings_s["local"] == expect
    if expect == 0.5:
        assert local.routes is base.plan.routes
    assert_same_plan(local, cold)


@pytest.mark.parametrize("name", ["plain", "tight", "inputs", "nec"])
@settings(
    max_examples=20, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_other_edits_equal_cold_plan(plants, name, data):
    """A trench added, removed or redrawn, a row's strings changed, or a design setting
    changed: the re-plan (today a full plan, ``timings_s["local"] == 0``) equals a cold plan
    of the edited site, value for value."""
    site, design, base = plants[name]
    edit = data.draw(other_edit(site, design))
    kind = edit.label.split(":")[0]
    event(kind)
    _check_fallback(base, edit.site, edit.design, _path(kind, True))


@pytest.mark.parametrize("name", ["plain", "inputs"])
@settings(
    max_examples=10, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_a_move_and_another_edit_equal_cold_plan(plants, name, data):
    """A pad or combiner move together with another edit in one re-plan equals a cold plan."""
    site, design, base = plants[name]
    moved = _apply(site, data.draw(moves(site)))
    edit = data.draw(other_edit(moved, design))
    kind = edit.label.split(":")[0]
    event(kind)
    _check_fallback(base, edit.site, edit.design, _path(kind, _unmoved(site, moved)))


@pytest.mark.parametrize("name", ["plain", "tight", "inputs"])
@settings(
    max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_a_trench_edit_and_another_site_edit_equal_cold_plan(plants, name, data):
    """A trench edit together with a row's strings, an equipment attribute or a module edit:
    routed in full and sized locally (a segment whose count or attributes changed re-sizes
    every circuit on it, whichever block it belongs to), equal to a cold plan."""
    site, design, base = plants[name]
    first = data.draw(other_edit(site, design, TRENCH_EDITS))
    edit = data.draw(other_edit(first.site, design, ROUTED_IN_FULL))
    event(f"{first.label.split(':')[0]} + {edit.label.split(':')[0]}")
    _check_fallback(base, edit.site, edit.design, 0.75)


def test_a_setting_change_resizes_on_the_same_routes(plants):
    """The ground 25 → 45 °C on the plain plant: the routes are the baseline's, the buried
    circuits' figures change (a hotter ground derates them, IEC 60364-5-52 Table B.52.15,
    from memory), and the plan equals a cold plan."""
    site, design, base = plants["plain"]
    hot = dataclasses.replace(design, values={**design.values, "ground_temp_c": 45.0})
    local = replan(base, site, hot)
    assert local.timings_s["local"] == 0.5
    assert local.routes is base.plan.routes
    assert not np.array_equal(
        np.asarray(local.sizing.utilisation), np.asarray(base.plan.sizing.utilisation)
    )
    assert_same_plan(local, plan_site(site, hot, with_remedies=False))
