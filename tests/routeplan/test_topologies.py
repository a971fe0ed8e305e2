"""DC topologies end to end: string combiners feeding a sub-array combiner (recombiner), and
string inverters with several DC inputs — on small hand-built sites whose routes, counts and
currents are computed here (Pythagoras along straight trenches, the IEC 62548 rules written out,
from memory where so marked).

Both sites (invented) lie on one straight trench along x; every piece of equipment stands on the
trench (no stub), and each row is a line at right angles above its destination, so the routes
are plain differences of x.
"""

from __future__ import annotations

import geopandas as gpd
import pandas as pd
import pytest
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import diff_outputs
from tests.conftest import E0, N0, UTM33, write_site

runner = CliRunner()

ISC, IMP, PHI = 13.0, 12.3, 0.8
BNPI = 135.0 / 1000.0  # IEC 61215-1 bifacial nameplate irradiance, rear/front
K_ISC = 1.25  # IEC 62548:2016 (from memory)
ISC_DESIGN = ISC * (1 + PHI * BNPI)
SLACK, TERMINATION = 3.0, 1.0  # the site's [allowances]
ROW_LEN, ROW_RUN_FACTOR = 24.0, 0.5

TOML = f"""
[site]
name = "Topology test site"

[modules.m1]
isc_a = {ISC}
imp_a = {IMP}
voc_v = 49.5
vmp_v = 41.2
per_string = 26
max_fuse_a = 25
bifaciality = {PHI}
voc_temp_coeff_pct_per_c = -0.28

[design]
ground_temp_c = 20
soil_k_m_w = 2.5
depth_m = 0.7
power_factor = 1.0
{{extra}}

[design.material]
string = "Cu"
subarray = "Cu"
array = "Cu"
ac = "Cu"

[allowances]
slack_pct = {SLACK}
termination_m = {TERMINATION}
row_run_factor = {ROW_RUN_FACTOR}
"""


def xy(x: float, y: float) -> tuple[float, float]:
    return (E0 + x, N0 + y)


def layers(rows, combiners, inverters) -> dict[str, gpd.GeoDataFrame]:
    """Frames from (id, x, attributes) tuples; rows stand above x, 6–30 m off the trench."""

    def frame(items, geom):
        data = [{"id": fid, **attrs} for fid, _, attrs in items]
        return gpd.GeoDataFrame(
            pd.DataFrame(data), geometry=[geom(x) for _, x, _ in items], crs=UTM33
        )

    return {
        "rows": frame(rows, lambda x: LineString([xy(x, 6), xy(x, 6 + ROW_LEN)])),
        "combiners": frame(combiners, lambda x: Point(xy(x, 0))),
        "inverters": frame(inverters, lambda x: Point(xy(x, 0))),
        "trenches": gpd.GeoDataFrame(
            {"id": ["T1"]}, geometry=[LineString([xy(0, 0), xy(300, 0)])], crs=UTM33
        ),
        "grid": gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(300, 0))], crs=UTM33),
    }


def plan(tmp_path, frames, extra: str = "", code: tuple[int, ...] = (0,)):
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=extra))
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet"])
    assert result.exit_code in code, result.output
    read = lambda name: pd.read_csv(out / name, keep_default_na=False, na_values=[""])  # noqa: E731
    return (
        read("cable_schedule.csv").set_index("circuit_id"),
        read("inverter_inputs.csv"),
        read("trench_schedule.csv"),
    )


INVERTER = {"ac_kva": 250.0, "ac_v": 800.0, "phases": 3, "to": "G1"}


# -- sub-array combiners ---------------------------------------------------------------------


def recombiner_site() -> dict[str, gpd.GeoDataFrame]:
    """Two string combiners (CB1 at x = 20, CB2 at 60), each with one row of 4 strings above
    it, feed the recombiner RC1 at x = 100, which feeds the inverter at x = 150."""
    return layers(
        rows=[
            ("R1", 20, {"strings": 4, "module": "m1", "to": "CB1"}),
            ("R2", 60, {"strings": 4, "module": "m1", "to": "CB2"}),
        ],
        combiners=[
            ("CB1", 20, {"to": "RC1"}),
            ("CB2", 60, {"to": "RC1"}),
            ("RC1", 100, {"to": "INV1"}),
        ],
        inverters=[("INV1", 150, INVERTER)],
    )


def test_sub_array_cables_routes_and_kinds(tmp_path):
    c, _, t = plan(tmp_path, recombiner_site())
    assert c.loc["SA:CB1", "kind"] == c.loc["SA:CB2", "kind"] == "subarray"
    assert c.loc["A:RC1", "kind"] == "array" and "A:CB1" not in c.index
    # routes along the trench: |Δx|, no stub
    for cid, route in (("SA:CB1", 80.0), ("SA:CB2", 40.0), ("A:RC1", 50.0), ("AC:INV1", 150.0)):
        assert c.loc[cid, "route_m"] == pytest.approx(route, abs=0.005)
        cable = route * (1 + SLACK / 100) + 2 * TERMINATION  # README, Method: lengths
        assert c.loc[cid, "cable_m"] == pytest.approx(cable, abs=0.005)
    # a string: its stub (6 m, the row's near end to the trench) + the run along its row
    string_cable = 6.0 * (1 + SLACK / 100) + 2 * TERMINATION + ROW_RUN_FACTOR * ROW_LEN
    assert c.loc["R1/S1", "cable_m"] == pytest.approx(string_cable, abs=0.005)
    # the trench between x = 60 and 100 carries both sub-array cables (counted by kind)
    both = t[
        t["circuit_ids"].fillna("").str.contains("SA:CB1") & t["circuit_ids"].str.contains("SA:CB2")
    ]
    assert len(both) >= 1 and (both["subarrays"] == 2).all() and (both["arrays"] == 0).all()


def test_sub_array_currents_backfeed_and_drop_path(tmp_path):
    c, inputs, _ = plan(tmp_path, recombiner_site())
    assert (c["status"] == "ok").all(), c.loc[c["status"] != "ok", "note"]
    sa, a = c.loc["SA:CB1"], c.loc["A:RC1"]
    assert sa["isc_design_a"] == pytest.approx(4 * ISC_DESIGN, abs=0.005)
    assert a["isc_design_a"] == pytest.approx(8 * ISC_DESIGN, abs=0.005)
    # IEC 62548 (from memory): a feeder carries 1.25 × the Isc of the strings below it; the rest
    # of the input (the other sub-array, 4 strings) can feed a fault on SA:CB1; the array cable
    # is alone on its inverter input
    assert sa["backfeed_a"] == pytest.approx(K_ISC * 4 * ISC_DESIGN, abs=0.05)
    assert a["backfeed_a"] == 0.0
    assert sa["design_current_a"] >= K_ISC * 4 * ISC_DESIGN - 0.005
    assert sa["ampacity_a"] >= sa["design_current_a"]
    # the drop along a string's path: string + sub-array + array, within dc_total (2 %)
    path = c.loc["R1/S1", "vdrop_pct"] + sa["vdrop_pct"] + a["vdrop_pct"]
    assert c.loc["R1/S1", "vdrop_total_pct"] == pytest.approx(path, abs=0.002)
    assert (c.loc[c["kind"] == "string", "vdrop_total_pct"] <= 2.0 + 1e-9).all()
    # every DC circuit lands on the inverter's only input
    assert set(c.loc[c["kind"] != "ac", "input"]) == {1.0}
    assert inputs[["inverter_id", "input", "strings", "circuits"]].values.tolist() == [
        ["INV1", 1, 8, 1]
    ]


def test_a_tight_total_drop_is_shared_along_the_path(tmp_path):
    """dc_total 1.2 %: every string's path (string + sub-array + array) stays within it."""
    extra = "[design.drop_pct]\nstring = 0.6\nsubarray = 0.6\narray = 0.6\ndc_total = 1.2"
    c, _, _ = plan(tmp_path, recombiner_site(), extra=extra, code=(0, 1))
    s = c[c["kind"] == "string"]
    assert (s.loc[s["status"] == "ok", "vdrop_total_pct"] <= 1.2 + 1e-6).all()
    for cid in ("SA:CB1", "SA:CB2", "A:RC1"):
        assert c.loc[cid, "vdrop_pct"] <= 0.6 + 1e-6


@pytest.mark.parametrize(
    ("combiners", "rows_to", "message"),
    [
        (
            [("CB1", 20, {"to": "CB2"}), ("CB2", 60, {"to": "CB1"})],
            ("CB1", "CB2"),
            "combiners 'CB1': `to` makes a cycle of combiners: CB1 → CB2 → CB1",
        ),
        (
            [("CB1", 20, {"to": "CB2"}), ("CB2", 60, {"to": "INV1"})],
            ("CB1", "CB2"),
            "combiners 'CB2': joins both strings (rows R2) and other combiners (CB1); a combiner "
            "collects either strings or sub-arrays",
        ),
        (
            [
                ("CB1", 20, {"to": "CB2"}),
                ("CB2", 60, {"to": "CB3"}),
                ("CB3", 100, {"to": "CB4"}),
                ("CB4", 140, {"to": "INV1"}),
            ],
            ("CB1", "CB1"),
            "combiners 'CB1': 4 combiners in a row (CB1 → CB2 → CB3 → CB4); at most 3 are planned",
        ),
    ],
)
def test_combiner_trees_that_are_refused(tmp_path, combiners, rows_to, message):
    frames = layers(
        rows=[
            ("R1", 20, {"strings": 2, "module": "m1", "to": rows_to[0]}),
            ("R2", 60, {"strings": 2, "module": "m1", "to": rows_to[1]}),
        ],
        combiners=combiners,
        inverters=[("INV1", 200, INVERTER)],
    )
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=""))
    result = runner.invoke(app, ["check", str(site)])
    assert result.exit_code == 2
    assert f"error: {message}" in result.stderr.splitlines()


def test_a_combiner_feeding_a_row_is_refused(tmp_path):
    frames = recombiner_site()
    frames["combiners"].loc[2, "to"] = "R1"
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=""))
    result = runner.invoke(app, ["check", str(site)])
    assert result.exit_code == 2
    assert "error: combiners 'RC1': to = 'R1' is a row; expected a combiner or inverter" in (
        result.stderr.splitlines()
    )


def recombiner_moved() -> dict[str, gpd.GeoDataFrame]:
    """The recombiner site with RC1 moved 20 m along the trench (x = 100 → 120) and CB2 taken
    straight to the inverter."""
    edited = recombiner_site()
    edited["combiners"].loc[2, "geometry"] = Point(xy(120, 0))
    edited["combiners"].loc[1, "to"] = "INV1"
    return edited


def test_sub_array_cables_on_the_map_and_in_diff(tmp_path):
    """The map's trench tooltip counts sub-array cables; `diff` after moving the recombiner 20 m
    along the trench and taking CB2 straight to the inverter: CB2's sub-array cable removed,
    its array cable added, the moved ends' routes changed (|Δx|), the trench's segments
    around the recombiner reshaped (their ends at x = 100 → 120)."""
    plan(tmp_path / "a", recombiner_site())
    html = (tmp_path / "a" / "out" / "map.html").read_text(encoding="utf-8")
    assert '"2 (strings 0, sub-arrays 2, arrays 0, AC 0)"' in html
    plan(tmp_path / "b", recombiner_moved())
    out = tmp_path / "changes"
    result = runner.invoke(
        app, ["diff", str(tmp_path / "a" / "out"), str(tmp_path / "b" / "out"), "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    ch = pd.read_csv(out / "diff.csv", keep_default_na=False, dtype=str)
    circuits = ch[ch["section"] == "circuit"]
    assert set(circuits.loc[circuits["change"] == "removed", "id"]) == {"SA:CB2"}
    assert set(circuits.loc[circuits["change"] == "added", "id"]) == {"A:CB2"}
    route = circuits[circuits["field"] == "route_m"]
    rows = route[["id", "old", "new", "delta"]].itertuples(index=False)
    moves = {i: (float(o), float(n), d) for i, o, n, d in rows}
    # hand: SA:CB1 from x = 20 to the recombiner, 80 m → 100 m; A:RC1 from it to the
    # inverter at x = 150, 50 m → 30 m
    assert moves == {
        "SA:CB1": (pytest.approx(80.0, abs=0.005), pytest.approx(100.0, abs=0.005), "+20.00"),
        "A:RC1": (pytest.approx(50.0, abs=0.005), pytest.approx(30.0, abs=0.005), "-20.00"),
    }
    assert set(circuits.loc[circuits["id"].isin(["SA:CB1", "A:RC1"]), "scope"]) == {"route"}
    # the trench T1 was cut at the recombiner (x = 100), now at x = 120: its stretches from
    # CB2 (x = 60) to the recombiner and on to the inverter (x = 150) reshaped, 40 + 50 m
    # before and 60 + 30 m after (90 m both: no length line). Before: the two sub-array
    # cables, then the array cable; after: SA:CB1 and A:CB2, then A:CB2 and A:RC1
    seg = ch[ch["section"] == "segment"]
    assert seg.values.tolist() == [
        [
            "segment", "T1@60.0-100.0", "reshaped", "", "T1@60.0-100.0; T1@100.0-150.0",
            "T1@60.0-120.0; T1@120.0-150.0", "", "", "",
            "T1@60.0-100.0 (2 circuits), T1@100.0-150.0 (1 circuit) became "
            "T1@60.0-120.0 (2 circuits), T1@120.0-150.0 (2 circuits)",
        ]
    ]  # fmt: skip
    # the new stretch from CB2 to the recombiner: one sub-array and one array cable
    t = pd.read_csv(tmp_path / "b" / "out" / "trench_schedule.csv").set_index("segment_id")
    assert t.loc["T1@60.0-120.0", ["subarrays", "arrays"]].tolist() == [1, 1]
    assert "trench segments: 1 reshaped\n" in result.stdout


def test_strings_after_a_replaced_cable_name_it_as_their_cause(tmp_path):
    """CB2's strings keep their own route; their cumulative drop changes because CB2's
    sub-array cable SA:CB2 was replaced by the array cable A:CB2: that is their cause."""
    plan(tmp_path / "a", recombiner_site())
    plan(tmp_path / "b", recombiner_moved())
    d = diff_outputs(tmp_path / "a" / "out", tmp_path / "b" / "out")
    c = d.circuits.set_index("circuit_id")
    cb2 = [f"R2/S{k}" for k in range(1, 5)]
    assert c.loc[cb2, "scope"].tolist() == ["follows"] * 4
    assert c.loc[cb2, "cause"].tolist() == ["A:CB2"] * 4


def test_rows_are_never_assigned_to_a_recombiner(tmp_path):
    """A row without `to` goes to the nearest string combiner, not to a sub-array combiner even
    when that one is nearer."""
    frames = recombiner_site()
    frames["rows"].loc[1, "to"] = None  # R2 at x = 60 … RC1 at 100, CB2 at 60, CB1 at 20
    frames["rows"].loc[1, "geometry"] = LineString([xy(95, 6), xy(95, 30)])  # next to RC1
    c, _, _ = plan(tmp_path, frames)
    assert c.loc["R2/S1", "to_id"] == "CB2"  # 35 m away; RC1 (5 m) takes no strings


# -- string inverters with several DC inputs ---------------------------------------------------


def string_inverter_site(**inverter) -> dict[str, gpd.GeoDataFrame]:
    """Three rows of 2 strings straight to INV1 (3 DC inputs) at x = 100: R1 at x = 90 names
    input 1; R2 at x = 70 and R3 at x = 40 name none."""
    return layers(
        rows=[
            ("R1", 90, {"strings": 2, "module": "m1", "to": "INV1", "input": 1}),
            ("R2", 70, {"strings": 2, "module": "m1", "to": "INV1"}),
            ("R3", 40, {"strings": 2, "module": "m1", "to": "INV1"}),
        ],
        combiners=[],
        inverters=[("INV1", 100, {**INVERTER, "dc_inputs": 3, **inverter})],
    )


def test_strings_spread_over_the_inputs_nearest_first(tmp_path):
    """R1's strings on input 1 (named); then nearest first (R2's at 30 m + stub, R3's at 60 m),
    each to the input with the least Σ Imp so far (ties: the lower number): R2/S1 → 2,
    R2/S2 → 3, R3/S1 → 2, R3/S2 → 3 (input 1 already carries 2 × Imp)."""
    c, inputs, _ = plan(tmp_path, string_inverter_site(input_max_strings=4))
    got = {
        cid: c.loc[cid, "input"] for cid in ("R1/S1", "R1/S2", "R2/S1", "R2/S2", "R3/S1", "R3/S2")
    }
    assert got == {"R1/S1": 1, "R1/S2": 1, "R2/S1": 2, "R2/S2": 3, "R3/S1": 2, "R3/S2": 3}
    t = inputs.set_index("input")
    assert t["strings"].tolist() == [2, 2, 2]
    assert t["imp_a"].to_numpy() == pytest.approx([2 * IMP] * 3, abs=0.005)
    assert t["isc_a"].to_numpy() == pytest.approx([2 * ISC_DESIGN] * 3, abs=0.005)
    # 2 strings in parallel on an input: (2 − 1) × 1.25 × Isc = 18 A ≤ 25 A module maximum fuse
    # (IEC 62548, from memory): no string fuse
    assert c.loc[c["kind"] == "string", "fuse_a"].isna().all()
    assert set(c.loc[c["kind"] == "string", "protection"]) == {
        "no string fuse needed; 2 string(s) in parallel"
    }


def test_an_input_over_its_ratings_fails_the_plan(tmp_path):
    """input_max_isc_a 25 A against 2 × 14.404 A = 28.8 A of design Isc on every input; the
    plan exits 1 and the inputs table says which limit, by how much."""
    c, inputs, _ = plan(
        tmp_path, string_inverter_site(input_max_isc_a=25.0, input_max_a=30.0), code=(1,)
    )
    assert (inputs["status"] == "over").all()
    assert inputs.loc[0, "note"] == f"Σ Isc {2 * ISC_DESIGN:g} exceeds input_max_isc_a 25"
    assert (c["status"] == "ok").all()  # the cables are fine; the inverter's inputs are not


def test_no_free_terminal_and_an_input_beyond_dc_inputs(tmp_path):
    frames = string_inverter_site(input_max_strings=1)
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=""))
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "no DC input has a free string terminal for" in result.stderr
    frames = string_inverter_site()
    frames["rows"].loc[0, "input"] = 4
    site = write_site(tmp_path / "site2", frames, toml=TOML.format(extra=""))
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out2")])
    assert result.exit_code == 2
    assert "error: rows 'R1': input 4, but inverter 'INV1' has 3 DC inputs" in (
        result.stderr.splitlines()
    )


def test_two_inverters_spread_at_once(tmp_path):
    """Each inverter's unassigned strings are spread by the README's rule independently of the
    other's: INV1 (3 inputs, x = 100) takes R2's strings (30 m) before R1's (60 m): R2/S1 → 1,
    R2/S2 → 2, R1/S1 → 3, R1/S2 → 1 (all loads equal again: the lower number); INV2 (2 inputs,
    x = 200) takes R3's three: 1, 2, 1."""
    frames = layers(
        rows=[
            ("R1", 40, {"strings": 2, "module": "m1", "to": "INV1"}),
            ("R2", 70, {"strings": 2, "module": "m1", "to": "INV1"}),
            ("R3", 190, {"strings": 3, "module": "m1", "to": "INV2"}),
        ],
        combiners=[],
        inverters=[
            ("INV1", 100, {**INVERTER, "dc_inputs": 3}),
            ("INV2", 200, {**INVERTER, "dc_inputs": 2}),
        ],
    )
    c, inputs, _ = plan(tmp_path, frames)
    got = dict(zip(c.index, c["input"], strict=True))
    expected = {
        "R2/S1": 1, "R2/S2": 2, "R1/S1": 3, "R1/S2": 1, "R3/S1": 1, "R3/S2": 2, "R3/S3": 1
    }  # fmt: skip
    assert {k: got[k] for k in expected} == expected
    t = inputs.set_index(["inverter_id", "input"])
    assert t.loc[("INV1", 1), "circuit_ids"] == "R1/S2;R2/S1"
    assert t.loc[("INV2", 1), "circuit_ids"] == "R3/S1;R3/S3"
    assert t["strings"].to_dict() == {
        ("INV1", 1): 2,
        ("INV1", 2): 1,
        ("INV1", 3): 1,
        ("INV2", 1): 2,
        ("INV2", 2): 1,
    }


def test_rows_without_to_go_to_an_inverter_with_free_terminals(tmp_path):
    """A row without `to` goes to the nearest inverter that still has string terminals
    (dc_inputs × input_max_strings, less the strings given to it by `to`): INV1 at x = 100 has
    2 × 1 terminals, both taken by R1; R2 (next to INV1) goes to INV2 at x = 200."""
    limits = {"dc_inputs": 2, "input_max_strings": 1}
    frames = layers(
        rows=[
            ("R1", 90, {"strings": 2, "module": "m1", "to": "INV1"}),
            ("R2", 110, {"strings": 2, "module": "m1"}),
        ],
        combiners=[],
        inverters=[("INV1", 100, {**INVERTER, **limits}), ("INV2", 200, {**INVERTER, **limits})],
    )
    c, inputs, _ = plan(tmp_path, frames)
    assert c.loc["R2/S1", "to_id"] == c.loc["R2/S2", "to_id"] == "INV2"
    assert sorted(c.loc[["R2/S1", "R2/S2"], "input"]) == [1, 2]
    assert (inputs["status"] == "ok").all() and (inputs["strings"] == 1).all()


def test_strings_and_array_cables_on_one_input_are_refused(tmp_path):
    """Row R3 straight to INV1 beside the recombiner's array cable on the inverter's one DC
    input: a fault on one of R3's strings would be fed by the whole array as well, which the
    IEC 62548 string rule (strings in parallel at one combiner or input) does not count. check
    and plan refuse it, naming the row; on an input of its own the same row plans."""
    rows = [
        ("R1", 20, {"strings": 4, "module": "m1", "to": "CB1"}),
        ("R2", 60, {"strings": 4, "module": "m1", "to": "CB2"}),
        ("R3", 140, {"strings": 2, "module": "m1", "to": "INV1"}),
    ]
    combiners = [
        ("CB1", 20, {"to": "RC1"}),
        ("CB2", 60, {"to": "RC1"}),
        ("RC1", 100, {"to": "INV1"}),
    ]
    frames = layers(rows, combiners, [("INV1", 150, INVERTER)])
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=""))
    message = (
        "error: rows 'R3': its strings land on inverter 'INV1' input 1 together with array "
        "cables (A:RC1…): strings and array cables on one DC input are not supported (a fault "
        "on a string would be fed by every array); give the row its own input (`input`) or a "
        "combiner"
    )
    for args in (["check", str(site)], ["plan", str(site), "--out", str(tmp_path / "out")]):
        result = runner.invoke(app, args)
        assert result.exit_code == 2, result.output
        assert message in result.stderr.splitlines()
    assert not (tmp_path / "out").exists()

    rows[2] = ("R3", 140, {"strings": 2, "module": "m1", "to": "INV1", "input": 2})
    frames = layers(rows, combiners, [("INV1", 150, {**INVERTER, "dc_inputs": 2})])
    c, inputs, _ = plan(tmp_path / "own", frames)
    assert c.loc["R3/S1", "input"] == 2 and c.loc["A:RC1", "input"] == 1  # least Σ Imp so far
    assert inputs["strings"].tolist() == [8, 2]


def test_an_input_on_a_combiner_that_feeds_another_is_refused(tmp_path):
    frames = recombiner_site()
    frames["combiners"]["input"] = [2.0, None, None]  # CB1 feeds RC1, not the inverter
    site = write_site(tmp_path / "site", frames, toml=TOML.format(extra=""))
    result = runner.invoke(app, ["check", str(site)])
    assert result.exit_code == 2
    assert (
        "error: combiners 'CB1': input is for combiners whose cable ends at an inverter "
        "(its `to` is not one)"
    ) in result.stderr.splitlines()


def test_a_fixed_string_fuse_where_none_is_required_is_scheduled_and_counted(tmp_path):
    """2 strings at CB1: (2 − 1) × 1.25 × 14.404 A = 18.0 A ≤ the module's 25 A maximum
    series fuse, so IEC 62548 (from memory) requires no string fuse; the combiner is fitted
    with 25 A fuses all the same (`fuse_a`), within 1.5–2.4 × Isc = 21.6–34.6 A (IEC 62548,
    from memory). The schedule lists them and the bill counts them: 2 strings × 2 poles."""
    frames = layers(
        rows=[("R1", 20, {"strings": 2, "module": "m1", "to": "CB1"})],
        combiners=[("CB1", 20, {"to": "INV1", "fuse_a": 25.0})],
        inverters=[("INV1", 150, INVERTER)],
    )
    c, _, _ = plan(tmp_path, frames)
    strings = c[c["kind"] == "string"]
    assert strings["fuse_a"].tolist() == [25.0, 25.0]
    bill = pd.read_csv(tmp_path / "out" / "quantities.csv", keep_default_na=False)
    fuses = bill[bill["item"] == "string fuse"]
    assert fuses[["kind", "rating_a", "quantity"]].values.tolist() == [["string", "25", 4.0]]


def test_strings_at_a_combiner_count_every_string_of_the_inverter_input(tmp_path):
    """Two combiners of 2 strings on INV1's one input, the array cables rated for the backfeed
    of the other (no array fuse: 1.25 × 28.8 A = 36 A ≤ Iz). Nothing stands between the
    combiners, so a fault on a string draws from all 4 strings (IEC 62548:2016, from memory:
    the strings up to the nearest overcurrent device): (4 − 1) × 1.25 × 14.404 A = 54.0 A >
    the module's 25 A maximum series fuse, string fuses are required — not (2 − 1) × 1.25 ×
    14.404 A = 18.0 A ≤ 25 A as at the combiner alone. The same with array cables rated for
    the backfeed by choice (`array_protection = "cable"`)."""
    frames = layers(
        rows=[
            ("R1", 20, {"strings": 2, "module": "m1", "to": "CB1"}),
            ("R2", 60, {"strings": 2, "module": "m1", "to": "CB2"}),
        ],
        combiners=[("CB1", 20, {"to": "INV1"}), ("CB2", 60, {"to": "INV1"})],
        inverters=[("INV1", 150, INVERTER)],
    )
    assert (4 - 1) * K_ISC * ISC_DESIGN > 25.0 >= (2 - 1) * K_ISC * ISC_DESIGN
    for name, extra in (("fuse", ""), ("cable", 'array_protection = "cable"')):
        c, _, _ = plan(tmp_path / name, frames, extra=extra)
        assert c.loc[["A:CB1", "A:CB2"], "array_fuse_a"].isna().all(), name
        strings = c[c["kind"] == "string"]
        assert strings["fuse_a"].notna().all(), name
        assert all(p.startswith("string fuse") for p in strings["protection"]), name
