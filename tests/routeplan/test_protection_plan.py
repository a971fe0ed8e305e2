"""Protection, bifacial currents, grouping in air and AC resistance, end to end: a small site
is planned through the command line and rows of its cable schedule are recomputed here from the
published tables and formulas — the test's own lookups and arithmetic, not calc's — so that a
wrong join between the route, the factors and the sizing cannot pass.

The site (invented): three combiners on one trench, each with one row of 5 strings above it
(a line at right angles to the trench, so its stub joins the trench at the combiner);
the combiners, the inverter and the grid point stand on the trench (no stub), so the array and
AC cables lie in the trench only, and the strings in air only (their row run and their table's
stub). Design at the tables' reference conditions (ground 20 °C, 2.5 K·m/W, 0.7 m), so the
buried factors other than grouping are 1.
"""

from __future__ import annotations

import math
import re

import geopandas as gpd
import pandas as pd
import pytest
from shapely.geometry import LineString, Point
from typer.testing import CliRunner

from routeplan.cli import app
from tests.conftest import E0, N0, UTM33, write_site

runner = CliRunner()

# -- published values (each with its source; "from memory" where recalled, not read) ---------

#: IEC 61215-1:2021 bifacial nameplate irradiance: 135 W/m² rear at 1000 W/m² front
BNPI = 135.0 / 1000.0
#: IEC 62548:2016 (from memory): Isc multiplier and the fuse bounds (string 1.5–2.4 × Isc,
#: array 1.25–2.4 × the array's Isc)
K_ISC, STRING_FUSE, ARRAY_FUSE = 1.25, (1.5, 2.4), (1.25, 2.4)
#: gPV fuse-link ratings, catalogue practice (IEC 60269-6 gives no closed list; memory-low)
GPV = [1, 2, 3, 4, 5, 6, 8, 10, 12, 15, 16, 20, 25, 30, 32, 35, 40, 50, 63, 80, 100, 125, 160,
       200, 250, 315, 355, 400, 500, 630]  # fmt: skip
#: IEC 60947-2 rated currents, R10 series from 160 A (IEC 60059; from memory)
MCCB = [160, 200, 250, 315, 320, 400, 500, 630, 800, 1000, 1250, 1600]
#: I2/In of gPV fuse-links (IEC 60269-6, from memory) and of IEC 60947-2 breakers (confirmed)
I2_GPV, I2_MCCB = 1.45, 1.30
#: IEC 60364-5-52:2009 Table B.52.5, Cu XLPE, 2 loaded conductors, method D2 (from memory)
D2_CU_XLPE_2 = {16: 100, 25: 129, 35: 155, 50: 183, 70: 225, 95: 270, 120: 306, 150: 343,
                185: 387, 240: 448, 300: 502}  # fmt: skip
#: the same table, 3 loaded conductors (from memory)
D2_CU_XLPE_3 = {16: 84, 25: 107, 35: 129, 50: 153, 70: 188, 95: 226, 120: 257, 150: 287,
                185: 324, 240: 375, 300: 419}  # fmt: skip
#: IEC 60364-5-52:2009 Table B.52.18, circuits direct in ground, touching (from memory)
B52_18_TOUCHING = {1: 1.0, 2: 0.75, 3: 0.65, 4: 0.60, 5: 0.55, 6: 0.50, 7: 0.45, 8: 0.43}
#: EN 50618:2014 Table A.3, two loaded cables touching on a surface, 60 °C (from memory)
EN50618_TWO_ADJACENT = {4: 44, 6: 57, 10: 79}
#: EN 50618:2014 Table A.4 (from memory): 1.00 up to 60 °C, 0.91 at 70 °C
EN50618_AMBIENT = {40: 1.00, 70: 0.91}
#: IEC 60364-5-52:2009 Table B.52.17 item 1, bunched (confirmed, several public copies)
B52_17_BUNCHED = {1: 1.0, 2: 0.80, 3: 0.70, 4: 0.65, 5: 0.60, 6: 0.57}

ISC, PHI = 13.0, 0.8
STRINGS_PER_TABLE = 5
COMBINER_X = (20.0, 60.0, 100.0)
TOML = f"""
[site]
name = "Protection test site"

[modules.m1]
isc_a = {ISC}
imp_a = 12.3
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
spacing_m = 0
air_temp_c = 40
row_air_temp_c = 70
power_factor = 1.0
{{extra}}

[design.material]
string = "Cu"
array = "Cu"
ac = "Cu"
"""


def frames(dc_inputs: int = 1, inputs: tuple[int, ...] | None = None, ac_max_a: float = 410.0):
    """The test site's layers (see the module docstring)."""

    def xy(x: float, y: float) -> tuple[float, float]:
        return (E0 + x, N0 + y)

    rows = gpd.GeoDataFrame(
        {
            "id": [f"R{i + 1}" for i in range(3)],
            "strings": STRINGS_PER_TABLE,
            "module": "m1",
            "to": [f"CB{i + 1}" for i in range(3)],
        },
        geometry=[LineString([xy(x, 6), xy(x, 30)]) for x in COMBINER_X],
        crs=UTM33,
    )
    combiners = gpd.GeoDataFrame(
        {
            "id": [f"CB{i + 1}" for i in range(3)],
            "to": "INV1",
            **({"input": list(inputs)} if inputs else {}),
        },
        geometry=[Point(xy(x, 0)) for x in COMBINER_X],
        crs=UTM33,
    )
    inverters = gpd.GeoDataFrame(
        {
            "id": ["INV1"],
            "ac_kva": [500.0],
            "ac_v": [800.0],
            "phases": [3],
            "ac_max_a": [ac_max_a],
            "dc_inputs": [dc_inputs],
            "to": ["G1"],
        },
        geometry=[Point(xy(150, 0))],
        crs=UTM33,
    )
    trenches = gpd.GeoDataFrame(
        {"id": ["T1"]}, geometry=[LineString([xy(0, 0), xy(200, 0)])], crs=UTM33
    )
    grid = gpd.GeoDataFrame({"id": ["G1"]}, geometry=[Point(xy(200, 0))], crs=UTM33)
    return {
        "rows": rows,
        "combiners": combiners,
        "inverters": inverters,
        "trenches": trenches,
        "grid": grid,
    }


def plan(tmp_path, extra: str = "", **kw) -> tuple[pd.DataFrame, pd.DataFrame]:
    site = write_site(tmp_path / "site", frames(**kw), toml=TOML.format(extra=extra))
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet"])
    assert result.exit_code in (0, 1), result.output
    c = pd.read_csv(out / "cable_schedule.csv", keep_default_na=False, na_values=[""])
    t = pd.read_csv(out / "trench_schedule.csv", keep_default_na=False, na_values=[""])
    return c.set_index("circuit_id"), t.set_index("segment_id")


def smallest(ratings, at_least: float) -> float:
    return float(next(r for r in ratings if r >= at_least - 1e-9))


# -- the hand calculation ------------------------------------------------------------------------

ISC_DESIGN = ISC * (1 + PHI * BNPI)  # 13.0 × (1 + 0.8 × 0.135) = 14.404 A
ISC_ARRAY = STRINGS_PER_TABLE * ISC_DESIGN  # 72.02 A
BACKFEED = K_ISC * 2 * ISC_ARRAY  # the two other arrays: 180.05 A
ARRAY_FUSE_A = smallest(GPV, ARRAY_FUSE[0] * ISC_ARRAY)  # ≥ 90.0 A → 100 A
STRING_FUSE_A = smallest(GPV, STRING_FUSE[0] * ISC_DESIGN)  # ≥ 21.6 A → 25 A


def test_the_hand_calculation_itself():
    assert pytest.approx(14.404) == ISC_DESIGN
    assert pytest.approx(180.05) == BACKFEED
    assert ARRAY_FUSE_A == 100.0 and ARRAY_FUSE[1] * ISC_ARRAY >= ARRAY_FUSE_A
    assert STRING_FUSE_A == 25.0 and min(STRING_FUSE[1] * ISC_DESIGN, 25.0) >= STRING_FUSE_A


def buried_capacity(c: pd.DataFrame, t: pd.DataFrame, cid: str, table: dict) -> float:
    """The derated capacity of a buried circuit from the published tables: base × grouping
    (touching, by the cable sets of its governing segment) × parallel sets — the other factors
    are 1 at the reference conditions. The segment's cable sets are checked against the
    parallel sets of the circuits it lists (the join of routes and sizes)."""
    row = c.loc[cid]
    seg = t.loc[row["governing"]]
    ids = seg["circuit_ids"].split(";")
    assert cid in ids
    assert seg["cable_sets"] == sum(int(c.loc[i, "parallel"]) for i in ids)
    group = B52_18_TOUCHING[int(seg["cable_sets"])]
    return table[int(row["size_mm2"])] * group * int(row["parallel"])


def test_strings_bifacial_isc_fuse_and_grouping_in_air(tmp_path):
    c, _ = plan(tmp_path)
    s = c[c["kind"] == "string"]
    assert len(s) == 3 * STRINGS_PER_TABLE and (s["status"] == "ok").all()
    assert s["isc_design_a"].to_numpy() == pytest.approx(ISC_DESIGN, abs=0.005)
    # the three combiners' array cables share the inverter's one input without a fuse between
    # the combiners, so S = 3 × 5 = 15 strings (IEC 62548, from memory):
    # (S − 1) × 1.25 × Isc = 14 × 18.0 A = 252 A > 25 A module maximum fuse: string fuses
    assert (s["fuse_a"] == STRING_FUSE_A).all() and (s["design_current_a"] == STRING_FUSE_A).all()
    assert set(s["protection"]) == {"string fuse 25 A gPV; 15 strings in parallel"}
    # in air only: the row run behind the table (70 °C) governs over the table's stub (40 °C),
    # both with the 5 strings of the table bunched
    assert set(s["governing"]) == {"row run R1", "row run R2", "row run R3"}
    assert (s["group_count"] == STRINGS_PER_TABLE).all()
    for _, r in s.iterrows():
        expected = (
            EN50618_TWO_ADJACENT[int(r["size_mm2"])]
            * EN50618_AMBIENT[70]
            * B52_17_BUNCHED[STRINGS_PER_TABLE]
        )
        assert r["ampacity_a"] == pytest.approx(expected, abs=0.051)  # CSV: 1 decimal
        assert r["ampacity_a"] >= r["design_current_a"]


def test_arrays_fused_against_the_backfeed(tmp_path):
    c, t = plan(tmp_path)
    a = c[c["kind"] == "array"]
    assert len(a) == 3 and (a["status"] == "ok").all()
    assert a["isc_design_a"].to_numpy() == pytest.approx(ISC_ARRAY, abs=0.005)
    assert a["backfeed_a"].to_numpy() == pytest.approx(BACKFEED, abs=0.05)
    for cid, r in a.iterrows():
        iz = buried_capacity(c, t, cid, D2_CU_XLPE_2)
        assert r["ampacity_a"] == pytest.approx(iz, abs=0.051)
        if iz >= BACKFEED:  # the cable carries the backfeed: no fuse
            assert math.isnan(r["array_fuse_a"])
            assert r["protection"].startswith("no array fuse needed: backfeed 180 A")
        else:  # IEC 62548 range and Iz ≥ max(In, I2/1.45)
            assert r["array_fuse_a"] == ARRAY_FUSE_A
            assert r["design_current_a"] == max(ARRAY_FUSE_A, I2_GPV * ARRAY_FUSE_A / 1.45)
            assert iz >= r["design_current_a"]
            assert r["protection"] == f"array fuse 100 A gPV: backfeed 180 A > Iz {iz:.0f} A"
    assert a["array_fuse_a"].notna().any()  # the site is made so that a fuse is needed


def test_arrays_without_fuses_carry_the_backfeed(tmp_path):
    c, t = plan(tmp_path, extra='array_protection = "cable"')
    a = c[c["kind"] == "array"]
    assert a["array_fuse_a"].isna().all() and (a["status"] == "ok").all()
    for cid, r in a.iterrows():
        assert r["design_current_a"] == pytest.approx(BACKFEED, abs=0.005)
        assert buried_capacity(c, t, cid, D2_CU_XLPE_2) >= BACKFEED
        assert r["protection"].startswith("cable carries backfeed 180 A ≤ Iz")


def test_arrays_on_separate_inputs_have_no_backfeed(tmp_path):
    c, _ = plan(tmp_path, dc_inputs=3, inputs=(1, 2, 3))
    a = c[c["kind"] == "array"]
    assert (a["backfeed_a"] == 0).all() and a["array_fuse_a"].isna().all()
    assert set(a["protection"]) == {"alone on its inverter input: no backfeed"}
    assert a["design_current_a"].to_numpy() == pytest.approx(K_ISC * ISC_ARRAY, abs=0.005)


def test_two_of_three_arrays_on_one_input(tmp_path):
    """CB1 and CB2 share input 1, CB3 is alone on input 2: the pair backfeed each other with
    1.25 × one array's Isc, which a cable rated for its own array already carries."""
    c, _ = plan(tmp_path, dc_inputs=2, inputs=(1, 1, 2))
    bf = c.loc[["A:CB1", "A:CB2", "A:CB3"], "backfeed_a"].to_numpy()
    assert bf == pytest.approx([K_ISC * ISC_ARRAY, K_ISC * ISC_ARRAY, 0.0], abs=0.05)
    assert c.loc[["A:CB1", "A:CB2", "A:CB3"], "array_fuse_a"].isna().all()


def test_an_input_beyond_the_inverters_inputs_is_refused(tmp_path):
    site = write_site(
        tmp_path / "site", frames(dc_inputs=2, inputs=(1, 2, 3)), toml=TOML.format(extra="")
    )
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "error: combiners 'CB3': input 3, but inverter 'INV1' has 2 DC inputs" in (
        result.stderr.splitlines()
    )
    assert not (tmp_path / "out").exists()


def test_arrays_without_an_input_are_spread_nearest_first(tmp_path):
    """Three arrays, three inputs, none named: nearest first (CB3 at 50 m from the inverter,
    CB2 at 90 m, CB1 at 130 m), each to the least-loaded input (ties: the lower number) — so
    each input takes one array, which is then alone there (no backfeed)."""
    c, _ = plan(tmp_path, dc_inputs=3)
    a = c.loc[["A:CB3", "A:CB2", "A:CB1"]]
    assert a["input"].tolist() == [1.0, 2.0, 3.0]
    assert (a["backfeed_a"] == 0).all()
    # the strings land, through their array cable, on its input
    assert c.loc["R1/S1", "input"] == 3.0


def test_ac_breaker_from_the_inverters_maximum_current(tmp_path):
    """Ib = ac_max_a 410 A (not the rated 500 kVA / (√3 · 800 V) = 360.8 A); In = 500 A, the
    smallest IEC 60947-2 rating ≥ Ib; the cable carries In (and I2 = 1.30 In ≤ 1.45 Iz)."""
    c, t = plan(tmp_path)
    r = c.loc["AC:INV1"]
    assert r["operating_current_a"] == pytest.approx(410.0)
    assert r["ac_breaker_a"] == smallest(MCCB, 410.0) == 500.0
    assert r["design_current_a"] == max(500.0, I2_MCCB * 500.0 / 1.45)
    iz = buried_capacity(c, t, "AC:INV1", D2_CU_XLPE_3)
    assert r["ampacity_a"] == pytest.approx(iz, abs=0.051) and iz >= 500.0
    assert 1.45 * iz >= I2_MCCB * 500.0
    assert re.fullmatch(r"breaker 500 A \(iec60947-2\): Ib 410 A ≤ In ≤ Iz \d+ A", r["protection"])
    # without the maximum current, Ib is the rated current: 360.8 A → In 400 A
    c2, _ = plan(tmp_path / "rated", ac_max_a=float("nan"))
    rated = 500e3 / (math.sqrt(3) * 800)
    assert c2.loc["AC:INV1", "operating_current_a"] == pytest.approx(rated, abs=0.005)
    assert c2.loc["AC:INV1", "ac_breaker_a"] == 400.0


def test_a_bifacial_datasheet_isc_takes_precedence(tmp_path):
    extra_module = "isc_bifacial_a = 15.5"
    site_toml = TOML.replace(f"bifaciality = {PHI}", f"bifaciality = {PHI}\n{extra_module}")
    site = write_site(tmp_path / "site", frames(), toml=site_toml.format(extra=""))
    out = tmp_path / "out"
    assert runner.invoke(app, ["plan", str(site), "--out", str(out), "-q"]).exit_code in (0, 1)
    c = pd.read_csv(out / "cable_schedule.csv").set_index("circuit_id")
    assert c.loc["R1/S1", "isc_design_a"] == 15.5
    assert c.loc["A:CB1", "isc_design_a"] == pytest.approx(5 * 15.5)
