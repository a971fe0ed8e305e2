"""``routeplan place``: candidate positions along the trenches, each planned, ranked.

The known optimum: three combiners beside one straight trench and a grid point at its end.
With one candidate size per kind, no slack and equal stubs, moving the inverter along the trench
changes only the array and a.c. route lengths, so the conductor mass of a position x differs
from another's by Σ w_i (|x − x_i| − |x' − x_i|), w_i = the cable's mass per metre: the
weighted median of the cable ends minimises it (a classical result of location theory, the
1-median on a line). The masses use IEC 60028's copper density (8.89 g/cm³) and aluminium
2.703 g/cm³ (IEC 60889, from memory); the candidate points are checked against shapely.
"""

from __future__ import annotations

import csv
import dataclasses
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.check import load
from routeplan.cli import app
from routeplan.localplan import MoveSearch
from routeplan.network import retap
from routeplan.pipeline import plan_site
from routeplan.placement import PlacementError, candidate_points, moved_site, search

from ..conftest import E0, N0, SITE_TOML, UTM33, write_site

runner = CliRunner()
COMBINER_X = (20.0, 60.0, 180.0)
GRID_X = 200.0

TOML = (
    SITE_TOML.replace('name = "Test site"', 'name = "Straight trench"')
    + """

[design.material]
array = "Al"
ac = "Cu"

[design.sizes_mm2]
string = [6]
array = [95]
ac = [50]

[design.drop_pct]
ac = 3.0

[allowances]
slack_pct = 0.0
termination_m = 1.0
"""
)


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def straight_site(root: Path, toml: str = TOML, second_block: bool = False) -> Path:
    """The straight-trench site; ``second_block`` adds inverter INV2 whose one row lies 150 m
    from its combiner, so that its strings fail their drop limit wherever INV1 stands."""
    rows = gpd.GeoDataFrame(
        {
            "id": [f"R{i}" for i in range(3)],
            "strings": [4, 4, 4],
            "module": ["mod1"] * 3,
            "to": [f"C{i}" for i in range(3)],
        },
        geometry=[LineString([xy(x - 10, -12), xy(x + 10, -12)]) for x in COMBINER_X],
        crs=UTM33,
    )
    combiners = gpd.GeoDataFrame(
        {"id": [f"C{i}" for i in range(3)], "to": ["INV1"] * 3, "max_strings": [8] * 3},
        geometry=[Point(xy(x, -3)) for x in COMBINER_X],
        crs=UTM33,
    )
    inverters = gpd.GeoDataFrame(
        {"id": ["INV1"], "ac_kva": [60.0], "ac_v": [800.0], "phases": [3], "to": ["G1"]},
        geometry=[Point(xy(100, 3))],
        crs=UTM33,
    )
    trenches = gpd.GeoDataFrame(
        {"id": ["T1"], "depth_m": [0.8], "laying": ["direct"]},
        geometry=[LineString([xy(0, 0), xy(GRID_X, 0)])],
        crs=UTM33,
    )
    grid = gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(GRID_X, 3))], crs=UTM33)
    if second_block:
        # 11 circuits then share T1 around x = 55 m: laid 0.02 m apart (IEC 60364-5-52 Table
        # B.52.18, read at 12 circuits: 0.384 between touching, 0.36, and 0.125 m, 0.51, from
        # memory) INV1's strings keep within their 6 mm² but at the far candidate
        trenches["spacing_m"] = [0.02]
        rows.loc[3] = ["R9", 4, "mod1", "C9", LineString([xy(140, -12), xy(160, -12)])]
        combiners.loc[3] = ["C9", "INV2", 8, Point(xy(0, -3))]
        inverters.loc[1] = ["INV2", 60.0, 800.0, 3, "G1", Point(xy(5, 3))]
    frames = {"rows": rows, "combiners": combiners, "inverters": inverters,
              "trenches": trenches, "grid": grid}  # fmt: skip
    return write_site(root, frames, toml=toml)


@pytest.fixture(scope="module")
def placed(tmp_path_factory):
    site, design = load(straight_site(tmp_path_factory.mktemp("straight")))
    table, plans = search(site, design, "inverter", "INV1", radius_m=250.0, step_m=10.0)
    return table, plans


def test_candidates_are_every_step_along_the_trench_within_the_radius():
    trench = gpd.GeoDataFrame(
        {"id": ["T"]}, geometry=[LineString([(0, 0), (100, 0), (100, 55)])], crs=UTM33
    )
    got, ids = candidate_points(trench, (50.0, 0.0), radius_m=60.0, step_m=20.0)
    # along the line every 20 m: (0,0) (20,0) … (100,0) (100,20) (100,40) and the end (100,55);
    # shapely's distances select those within 60 m of (50, 0)
    line = trench.geometry.iloc[0]
    every = [line.interpolate(d) for d in np.arange(0, line.length + 1e-9, 20.0)]
    every.append(Point(100, 55))
    want = {(round(p.x, 2), round(p.y, 2)) for p in every if p.distance(Point(50, 0)) <= 60.0}
    assert {tuple(p) for p in got.tolist()} == want
    assert set(ids) == {"T"}
    d = shapely.distance(shapely.points(got), Point(50, 0))
    assert np.all(np.diff(d) >= 0)  # nearest first


def test_the_best_position_is_the_weighted_median_of_the_cable_ends(placed):
    table, plans = placed
    on_trench = table[table["candidate"] > 0]
    assert on_trench["feasible"].all()
    (plan,) = plans.values()
    c = plan.circuits.set_index("circuit_id")
    arrays = c[c["kind"] == "array"]
    ac = c[c["kind"] == "ac"]
    assert set(arrays["size_mm2"]) == {95.0} and set(ac["size_mm2"]) == {50.0}
    # mass per metre of each cable: size × conductors × density (IEC 60028 / IEC 60889)
    w_array = 95e-6 * float(arrays["conductors"].iloc[0]) * 2703.0
    w_ac = 50e-6 * float(ac["conductors"].iloc[0]) * 8890.0
    ends = np.array([*COMBINER_X, GRID_X])
    w = np.array([w_array] * 3 + [w_ac])
    x = on_trench["x"].to_numpy() - E0
    cost = np.array([(w * np.abs(xi - ends)).sum() for xi in x])
    # every candidate's mass differs from the best's exactly as the hand formula says
    best = on_trench.iloc[0]
    mass = on_trench["conductor_mass_kg"].to_numpy()
    np.testing.assert_allclose(mass - mass[0], cost - cost[0], atol=0.02)
    # and the best is the weighted median (within one step)
    order = np.argsort(ends)
    cum = np.cumsum(w[order])
    median = ends[order][np.searchsorted(cum, cum[-1] / 2)]
    assert abs(best["x"] - E0 - median) <= 10.0
    assert best["rank"] == 1 and best["delta_objective"] < 0


def test_the_table_names_the_current_position_and_ranks_every_candidate(placed):
    table, _ = placed
    assert table["rank"].tolist() == list(range(1, len(table) + 1))
    current = table[table["candidate"] == 0].iloc[0]
    assert current["note"] == "current position" and current["moved_m"] == 0.0
    assert current["delta_objective"] == 0.0
    # 21 points along 200 m every 10 m, all within 250 m of the pad, and the current position
    assert len(table) == 22
    assert (table["objective_unit"] == "kg").all()  # no prices: ranked by conductor mass


def test_with_prices_the_objective_is_conductor_cost_plus_capitalised_losses(tmp_path):
    toml = (
        TOML
        + """
[costs]
currency = "EUR"
energy_price_per_kwh = 0.05
lifetime_years = 20
discount_rate_pct = 5

[costs.conductor_per_m]
"Cu 6" = 0.9
"Al 95" = 2.5
"Cu 50" = 9.0
"""
    )
    site, design = load(straight_site(tmp_path / "s", toml))
    table, plans = search(site, design, "inverter", "INV1", radius_m=30.0, step_m=10.0)
    (plan,) = plans.values()
    c = plan.circuits
    price = c["size_mm2"].map({6.0: 0.9, 95.0: 2.5, 50.0: 9.0})
    cost = float((c["cable_m"] * c["conductors"] * price).sum())
    # capitalised losses: yearly kWh × 0.05 × (P/A, 5 %, 20) = 12.4622 (interest tables)
    capital = float(c["energy_loss_kwh"].sum()) * 0.05 * 12.4622
    best = table.iloc[0]
    assert best["objective_unit"] == "EUR"
    assert best["conductor_cost"] == pytest.approx(cost, rel=1e-9)
    assert best["capitalised_loss"] == pytest.approx(capital, rel=1e-4)
    assert best["objective"] == pytest.approx(cost + capital, rel=1e-4)


def test_a_size_without_a_price_is_refused_before_planning(tmp_path):
    toml = TOML + '\n[costs.conductor_per_m]\n"Cu 6" = 0.9\n'
    site, design = load(straight_site(tmp_path / "s", toml))
    with pytest.raises(PlacementError, match=r'no price for "Al 95", "Cu 50"'):
        search(site, design, "inverter", "INV1", radius_m=30.0, step_m=10.0)


def test_prices_whose_total_exceeds_any_number_are_refused(tmp_path):
    # 1e308 per metre × hundreds of conductor metres: the sum was inf (numpy warned), every
    # candidate tied at inf and the delta was nan
    toml = TOML + '\n[costs.conductor_per_m]\n"Cu 6" = 1e308\n"Al 95" = 1e308\n"Cu 50" = 1e308\n'
    site, design = load(straight_site(tmp_path / "s", toml))
    with pytest.raises(PlacementError, match=r"conductor cost exceeds the largest number"):
        search(site, design, "inverter", "INV1", radius_m=30.0, step_m=10.0)


def test_an_energy_price_in_any_currency_is_accepted(tmp_path):
    # a lost kWh at 25 (a price in a currency of small units; the currency is a label only)
    costs = "energy_price_per_kwh = 25\nlifetime_years = 25\ndiscount_rate_pct = 6\n"
    toml = TOML + "\n[costs]\n" + costs
    site, design = load(straight_site(tmp_path / "s", toml))
    table, _ = search(site, design, "inverter", "INV1", radius_m=20.0, step_m=20.0)
    assert (table["capitalised_loss"] > 0).all()


@pytest.mark.parametrize(
    ("extra", "where"),
    [
        ("[costs]\nenergy_price_per_kwh = 0.05\n", "costs.lifetime_years"),
        ("[costs]\nenergy_price_per_kwh = 1e9\n", "costs.energy_price_per_kwh"),
        ('[costs]\nenergy_price_per_kwh = "cheap"\n', "costs.energy_price_per_kwh"),
        ("[costs]\ndiscount = 5\n", "costs.discount"),
        ('[costs.conductor_per_m]\n"Fe 10" = 1.0\n', "costs.conductor_per_m.Fe 10"),
        ('[costs.conductor_per_m]\n"Cu 10" = -1\n', "costs.conductor_per_m.Cu 10"),
        # two keys for one conductor: which price counts was the last key's, silently
        (
            '[costs.conductor_per_m]\n"Cu 6" = 0.9\n"Cu 6.0" = 9\n',
            'costs.conductor_per_m.Cu 6.0\': prices the same conductor as "Cu 6"',
        ),
    ],
)
def test_bad_costs_are_named_by_key(tmp_path, extra, where):
    site = straight_site(tmp_path / "s", TOML + extra)
    result = runner.invoke(app, ["place", str(site), "--inverter", "INV1", "--out",
                                 str(tmp_path / "out")])  # fmt: skip
    assert result.exit_code == 2
    assert where in result.output
    assert "Traceback" not in result.output


def test_the_command_writes_the_candidates_and_the_best_plan(tmp_path):
    site = straight_site(tmp_path / "s")
    out = tmp_path / "out"
    args = ["place", str(site), "--inverter", "INV1", "--radius", "40", "--step", "20"]
    result = runner.invoke(app, [*args, "--out", str(out)])
    assert result.exit_code == 0, result.output
    with (out / "placement.csv").open(encoding="utf-8", newline="") as f:
        rows = list(csv.DictReader(f))
    assert [int(r["rank"]) for r in rows] == list(range(1, len(rows) + 1))
    layer = gpd.read_file(out / "placement.gpkg", layer="candidates")
    assert len(layer) == len(rows)
    assert (out / "cable_schedule.csv").is_file() and (out / "report.html").is_file()
    assert "best: candidate" in result.output and "qualified" in result.output
    # a second run into the same folder replaces routeplan's files
    again = runner.invoke(app, [*args, "--out", str(out)])
    assert again.exit_code == 0, again.output


def test_requests_that_name_no_feature_are_refused(tmp_path):
    site = straight_site(tmp_path / "s")
    out = str(tmp_path / "out")
    r = runner.invoke(app, ["place", str(site), "--inverter", "NOPE", "--out", out])
    assert r.exit_code == 2 and "inverters: no feature with id 'NOPE'" in r.output
    r = runner.invoke(app, ["place", str(site), "--out", out])
    assert r.exit_code == 2 and "exactly one of --inverter" in r.output
    # an id of the other kind, or one that differs by a space, says which was meant
    r = runner.invoke(app, ["place", str(site), "--inverter", "C1", "--out", out])
    assert r.exit_code == 2
    assert "inverters: no feature with id 'C1': 'C1' is a combiner (--combiner C1)" in r.output
    r = runner.invoke(app, ["place", str(site), "--inverter", "INV1 ", "--out", out])
    assert r.exit_code == 2
    assert "no feature with id 'INV1 ' (did you mean 'INV1'?)" in r.output
    r = runner.invoke(app, ["place", str(site), "--combiner", "C0", "--inverter", "INV1",
                            "--out", out])  # fmt: skip
    assert r.exit_code == 2
    r = runner.invoke(app, ["place", str(site), "--inverter", "INV1", "--step", "0",
                            "--out", out])  # fmt: skip
    assert r.exit_code == 2 and "--step must be a finite number > 0 m, got 0.0" in r.output


def test_a_feature_no_candidate_can_route_is_refused_with_the_reason(tmp_path):
    # INV1 60 m north of the only trench, beyond snap_m (20 m, tests/conftest.py): the line
    # said "no candidate position could be routed", not why
    site = straight_site(tmp_path / "s")
    inverters = gpd.read_file(site / "inverters.geojson")
    inverters.geometry = [Point(xy(100, 60))]
    inverters.to_file(site / "inverters.geojson", engine="pyogrio")
    out = str(tmp_path / "out")
    args = ["place", str(site), "--inverter", "INV1", "--out", out]
    r = runner.invoke(app, [*args, "--radius", "40"])
    assert r.exit_code == 2, r.output
    line = " ".join(r.output.split())
    assert "inverter 'INV1': no trench passes within 40 m; at the current position:" in line
    assert "nearest trench 'T1' is 60.00 m away" in line
    # within 70 m, positions on T1 route: the best is compared with a current position that
    # does not (the summary said "+nan kg against the current position")
    r = runner.invoke(app, [*args, "--radius", "70"])
    assert r.exit_code == 0, r.output
    line = " ".join(r.output.split())
    assert "nan" not in line
    assert "(the current position cannot be routed: inverters 'INV1': nearest trench" in line
    # a lone trench beside it: every position on it joins an island
    trenches = gpd.read_file(site / "trenches.geojson")
    trenches.loc[1] = ["T2", 0.8, "direct", LineString([xy(90, 58), xy(110, 58)])]
    trenches.to_file(site / "trenches.geojson", engine="pyogrio")
    r = runner.invoke(app, [*args, "--radius", "15"])
    assert r.exit_code == 2, r.output
    line = " ".join(r.output.split())
    assert "inverter 'INV1': none of the 4 candidate positions could be routed" in line
    assert "cannot reach" in line


def test_a_combiner_can_be_placed(tmp_path):
    site, design = load(straight_site(tmp_path / "s"))
    table, plans = search(site, design, "combiner", "C2", radius_m=25.0, step_m=10.0)
    assert len(plans) == 1 and table["rank"].iloc[0] == 1
    moved = table[table["candidate"] > 0]
    assert ((moved["x"] - E0 - 180.0).abs() <= 25.0).all()


def test_failures_elsewhere_in_the_plant_do_not_disqualify_a_position(tmp_path):
    site, design = load(straight_site(tmp_path / "s", second_block=True))
    table, plans = search(site, design, "inverter", "INV1", radius_m=40.0, step_m=20.0)
    # INV2's strings run 150 m to their combiner: over the 1 % string drop limit (common
    # practice default) at every position of INV1
    assert (table["failing_circuits"] >= 4).all()
    assert (table["failing_in_block"] == 0).all() and (table["new_failures"] == 0).all()
    assert table["feasible"].all()
    # the delivered plan (the best position's) says what would make each failing circuit pass
    (plan,) = plans.values()
    failing = plan.circuits[plan.circuits["status"] != "ok"]
    assert len(failing) >= 4 and (failing["remedy"].str.len() > 0).all()


def test_a_search_too_large_is_refused_before_planning(tmp_path):
    site, design = load(straight_site(tmp_path / "s"))
    # 200 m of trench every 0.05 m: 4,001 points, over the 2,000 candidates a search plans
    with pytest.raises(PlacementError, match=r"4,002 candidate positions .* at most 2,000"):
        search(site, design, "inverter", "INV1", radius_m=500.0, step_m=0.05)


@pytest.mark.parametrize(
    ("radius_m", "step_m", "message"),
    [
        # 200 m every 1e-4 m: 2,000,001 points, refused before they are made
        (500.0, 1e-4, r"about 2,000,000 candidate positions within 500 m .* at most 2,000"),
        # a step so small that the count of points is no integer (it failed in numpy)
        (500.0, 1e-300, r"about 2\.0e\+302 candidate positions .* at most 2,000"),
        (500.0, 5e-324, r"about more than 1e\+308 candidate positions"),
        # 3.001 m around INV1, 3 m from the trench: 0.155 m of it in the disk, 1,549 points
        # every 1e-4 m there, but 2,000,001 along the whole trench
        (3.001, 1e-4, r"--step 0\.0001 m makes 2,000,001 points along the trenches that pass"),
    ],
)
def test_a_step_too_fine_is_refused_before_any_point_is_made(tmp_path, radius_m, step_m, message):
    site, design = load(straight_site(tmp_path / "s"))
    with pytest.raises(PlacementError, match=message):
        search(site, design, "inverter", "INV1", radius_m=radius_m, step_m=step_m)


def test_a_folder_holding_a_users_file_is_refused_before_planning(tmp_path):
    site = straight_site(tmp_path / "s")
    out = tmp_path / "out"
    out.mkdir()
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    r = runner.invoke(app, ["place", str(site), "--inverter", "INV1", "--radius", "-5",
                            "--out", str(out)])  # fmt: skip
    assert r.exit_code == 2
    assert "was not written by routeplan" in " ".join(r.output.split())
    assert (out / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt"]
    # a negative radius, in a folder of its own, is one line naming the option
    r = runner.invoke(app, ["place", str(site), "--inverter", "INV1", "--radius", "-5",
                            "--out", str(tmp_path / "o2")])  # fmt: skip
    assert r.exit_code == 2 and "--radius must be a finite number ≥ 0 m, got -5.0" in r.output
    # not a number, or infinite: refused the same way, never a traceback
    for option, value in (("--radius", "inf"), ("--radius", "nan"), ("--step", "inf"),
                          ("--step", "0")):  # fmt: skip
        r = runner.invoke(app, ["place", str(site), "--inverter", "INV1", option, value,
                                "--out", str(tmp_path / "o3")])  # fmt: skip
        assert r.exit_code == 2, (option, value, r.output)
        assert f"{option} must be a finite number" in r.output
        assert "Traceback" not in r.output
        assert not (tmp_path / "o3").exists()


def _same_plan(got, want) -> None:
    """Every table of two plans alike, value for value (the remedies included)."""
    for name in ("circuits", "segments", "quantities", "inputs"):
        a, b = getattr(got, name), getattr(want, name)
        pd.testing.assert_frame_equal(
            a.reset_index(drop=True), b.reset_index(drop=True), check_exact=True, obj=name
        )
    assert got.summary == want.summary


def test_the_delivered_plan_is_the_full_plan_of_the_best_position(tmp_path):
    # the best position's plan comes from a local re-plan of the current position's, its
    # remedies' what-ifs sized whole: every table as a full plan of that position gives it
    site, design = load(straight_site(tmp_path / "s", second_block=True))
    table, plans = search(site, design, "inverter", "INV1", radius_m=120.0, step_m=20.0)
    ((i, plan),) = plans.items()
    best = table.iloc[0]
    assert i == best["candidate"] != 0
    moved = moved_site(site, "inverter", 0, (float(best["x"]), float(best["y"])))
    want = plan_site(moved, design)
    assert (want.circuits["remedy"].str.len() > 0).sum() >= 4  # INV2's failing strings
    _same_plan(plan, want)


@pytest.mark.parametrize("remedies", [False, True])
@pytest.mark.parametrize("where", ["current", "moved"])
def test_a_position_planned_whole_by_the_local_re_plan(tmp_path, where, remedies):
    # remedies: the current position's what-ifs computed in a child first, and re-sized
    # locally for the position planned; without them, each what-if sized whole
    site, design = load(straight_site(tmp_path / "s", second_block=True))
    mover = MoveSearch(site, design, "inverters", 0, remedies=remedies)
    at = site if where == "current" else moved_site(site, "inverter", 0, xy(150.0, 0.0))
    got = mover.plan(at)
    if remedies:
        assert got.timings_s["remedy"] >= 0 and mover.remedies.whatifs.kept
    _same_plan(got, plan_site(at, design))


@pytest.mark.parametrize("to_x", [45.0, 150.0])
def test_a_retapped_network_labels_its_islands_as_a_search_of_its_graph(tmp_path, to_x):
    # a second trench, joined to nothing, makes a second island; the pad retapped onto either
    # trench: the islands retap carries over are those scipy's connected_components finds
    # in the retapped graph (each labelled in the order of its lowest node) and in a build
    from scipy.sparse import csgraph

    from routeplan.pipeline import route_params
    from routeplan.routing import site_network

    site, design = load(straight_site(tmp_path / "s"))
    far = gpd.GeoDataFrame(
        {"id": ["T2"], "depth_m": [0.8], "laying": ["direct"]},
        geometry=[LineString([xy(0, 80), xy(GRID_X, 80)])],
        crs=UTM33,
    )
    site = dataclasses.replace(site, trenches=pd.concat([site.trenches, far], ignore_index=True))
    mover = MoveSearch(site, design, "inverters", 0)
    for y in (0.0, 80.0):
        moved = mover.site_at(xy(to_x, y))
        got = retap(mover.minus, mover.tap, moved.inverters.geometry.iloc[0])
        assert got is not None
        n, labels = csgraph.connected_components(got.graph, directed=False)
        assert n == 2
        np.testing.assert_array_equal(got.node_island, labels)
        want = site_network(moved, route_params(design), mover.base.plan.routes.network.memo)
        np.testing.assert_array_equal(got.node_island, want.node_island)
