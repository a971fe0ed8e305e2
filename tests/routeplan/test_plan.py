"""`routeplan plan` end to end: file set and columns (the contract), GIS and workbook
round trips, figures recomputed from the schedule's own columns and published tables,
exit statuses, determinism, nothing lost, and `routeplan diff` after a pad move."""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from typer.testing import CliRunner

import layers
from routeplan.cache import CACHE_DIR
from routeplan.cli import app
from routeplan.folder import MANIFEST
from routeplan.outputs.columns import CIRCUIT_COLUMNS, QUANTITY_COLUMNS, SEGMENT_COLUMNS, names
from routeplan.outputs.write import FILES
from tests.iec60287 import ac_over_dc

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()

CONTRACT_CIRCUIT = [
    "circuit_id", "kind", "from_id", "to_id", "inverter_id", "material", "size_mm2", "parallel",
    "route_m", "cable_m", "trench_segments", "group_max", "design_current_a", "ampacity_base_a",
    "derating", "ampacity_a", "utilisation", "vdrop_v", "vdrop_pct", "vdrop_total_pct", "loss_w",
    "status", "note",
]  # fmt: skip
CONTRACT_SEGMENT = [
    "segment_id", "trench_id", "length_m", "circuits", "strings", "arrays", "ac", "max_circuits",
    "fill", "status", "circuit_ids",
]  # fmt: skip


def run_plan(site: Path, out: Path, *extra: str):
    return runner.invoke(app, ["plan", str(site), "--out", str(out), *extra])


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("plan") / "out"
    result = run_plan(DEMO, out)
    assert result.exit_code == 0, result.output
    return out


def test_file_set_and_contract_columns(demo_out):
    files = sorted(p.name for p in demo_out.iterdir() if p.name not in (CACHE_DIR, MANIFEST))
    assert files == sorted(FILES)
    sched = pd.read_csv(demo_out / "cable_schedule.csv")
    assert list(sched.columns[: len(CONTRACT_CIRCUIT)]) == CONTRACT_CIRCUIT
    assert list(sched.columns) == names(CIRCUIT_COLUMNS)
    trench = pd.read_csv(demo_out / "trench_schedule.csv")
    assert list(trench.columns[: len(CONTRACT_SEGMENT)]) == CONTRACT_SEGMENT
    assert list(trench.columns) == names(SEGMENT_COLUMNS)
    q = pd.read_csv(demo_out / "quantities.csv")
    assert list(q.columns) == names(QUANTITY_COLUMNS)
    assert set(q["item"]) == {
        "cable",
        "termination",
        "connector pair",
        "trench",
        "string fuse",
        "sub-array fuse",
        "array fuse",
        "AC breaker",
        *(f"{family} total" for family in ("cable", "termination", "connector pair")),
        "unused trench",  # the demo's trench layer draws corridors no circuit takes
        *(f"{family} total" for family in ("trench", "unused trench", "fuse", "breaker")),
    }
    # the demo collects DC three ways: combiners, recombiners (sub-arrays), string inverters
    assert set(sched["kind"]) == {"string", "subarray", "array", "ac"}
    assert set(sched["status"]) <= {"ok", "fail"}


def test_nothing_lost(demo_out):
    site = layers.read_site(DEMO)
    sched = pd.read_csv(demo_out / "cable_schedule.csv")
    counts = sched["kind"].value_counts()
    assert counts["string"] == site.rows["strings"].sum()
    # a combiner feeding another combiner has a sub-array cable, one feeding an inverter an
    # array cable
    onto_combiner = site.combiners["to"].isin(site.combiners["id"])
    assert counts["subarray"] == onto_combiner.sum() > 0
    assert counts["array"] == (~onto_combiner).sum()
    assert counts["ac"] == len(site.inverters)
    per_row = sched[sched["kind"] == "string"].groupby("from_id").size()
    assert per_row.to_dict() == dict(zip(site.rows["id"], site.rows["strings"], strict=True))
    feeders = sched["kind"].isin(["subarray", "array"])
    assert sorted(sched.loc[feeders, "from_id"]) == sorted(site.combiners["id"])
    # each trench is covered by its segments: lengths add up (shapely as the reference)
    trench = pd.read_csv(demo_out / "trench_schedule.csv")
    per_trench = trench.groupby("trench_id")["length_m"].sum()
    expected = pd.Series(shapely.length(site.trenches.geometry.values), index=site.trenches["id"])
    assert set(per_trench.index) == set(expected.index)
    np.testing.assert_allclose(per_trench[expected.index], expected, atol=0.01 * 20)


def test_geopackage_reopens_in_site_crs(demo_out):
    site = layers.read_site(DEMO)
    listed = {name for name, _ in pyogrio.list_layers(demo_out / "routes.gpkg")}
    assert {"circuits", "segments", "rows", "equipment"} <= listed
    circuits = gpd.read_file(demo_out / "routes.gpkg", layer="circuits")
    segments = gpd.read_file(demo_out / "routes.gpkg", layer="segments")
    assert circuits.crs.equals(site.crs) and segments.crs.equals(site.crs)
    assert list(circuits.columns[: len(CONTRACT_CIRCUIT)]) == CONTRACT_CIRCUIT
    # the route geometry's length is route_m (shapely as the reference)
    np.testing.assert_allclose(
        shapely.length(circuits.geometry.values), circuits["route_m"], rtol=1e-9
    )


def test_workbook_reopens_with_typed_numbers(demo_out):
    from openpyxl import load_workbook

    wb = load_workbook(demo_out / "cable_schedule.xlsx")
    assert wb.sheetnames[:5] == ["circuits", "trenches", "quantities", "inputs", "summary"]
    ws = wb["circuits"]
    header = [c.value for c in ws[1]]
    assert header[0] == "circuit_id" and "route_m [m]" in header and "vdrop_pct [%]" in header
    # header row and id column frozen, an autofilter over the header (openpyxl)
    assert all(c.font.bold for c in ws[1]) and ws.freeze_panes == "B2"
    j = header.index("route_m [m]")
    assert isinstance(ws.cell(row=2, column=j + 1).value, float)
    assert "qualified, licensed person" in wb["caution"]["A2"].value
    q = wb["quantities"]
    assert [c.value for c in q[1]][:3] == ["item", "kind", "material"]
    assert ws.cell(row=2, column=j + 1).number_format == "0.00"  # route_m: 2 decimals


def test_summary_json(demo_out):
    s = json.loads((demo_out / "summary.json").read_text())
    assert s["tool"]["name"] == "routeplan" and s["tool"]["version"]
    assert set(s["inputs"]) >= {"site.toml", "rows.geojson", "transformers.geojson"}
    assert all(len(h) == 64 for h in s["inputs"].values())
    assert s["circuits"]["string"]["circuits"] == 384  # W, E, R: 3 × 112; S: 48
    assert s["ok"] is True and "licensed" in s["caution"]
    # the two demo tables without `to` are assigned to the nearest combiner by route length
    assigned = {a["id"]: a["to"] for a in s["assigned"]}
    assert assigned == {"W2-R4": "CB-W2", "E3-R6": "CB-E3"}


# IEC 60228:2004 Table 2 (class 2) and Table 3 (class 5 tinned), maximum resistance at 20 °C,
# Ω/km — typed here from the standard's published values, independent of calc's data file.
IEC60228_R20 = {
    ("Cu5t", 4): 5.09,
    ("Cu5t", 6): 3.39,
    ("Cu5t", 10): 1.95,
    ("Al", 240): 0.125,
    ("Al", 300): 0.100,
    ("Al", 185): 0.164,
    ("Al", 120): 0.253,
    ("Al", 150): 0.206,
    ("Cu", 240): 0.0754,
}
# IEC 60287-1-1 Table 1: temperature coefficient at 20 °C, 1/K
ALPHA = {"Cu": 3.93e-3, "Al": 4.03e-3}


def test_figures_recompute_from_schedule_and_published_tables(demo_out):
    s = pd.read_csv(demo_out / "cable_schedule.csv", keep_default_na=False, na_values=[""])
    # cable_m = route_m × (1 + slack/100) + 2 × termination + row run (README, allowances)
    slack, term = 3.0, 1.5  # demo_site/site.toml [allowances]
    cable = s["route_m"] * (1 + slack / 100) + 2 * term + s["row_run_m"]
    np.testing.assert_allclose(s["cable_m"], cable, atol=0.011)
    key = [
        ("Cu5t" if ins == "PV" else m, int(a))
        for m, a, ins in zip(s["material"], s["size_mm2"], s["insulation"], strict=True)
    ]
    r20 = np.array([IEC60228_R20[k] for k in key]) / 1000.0  # Ω/m
    alpha = s["material"].map(ALPHA).to_numpy()
    r = r20 * (1 + alpha * (s["conductor_temp_c"] - 20.0)) / s["parallel"]  # IEC 60287-1-1
    i = s["operating_current_a"]
    dc = s["kind"] != "ac"
    # a.c.: skin and proximity effect (IEC 60287-1-1, tests/iec60287.py); the demo's AC
    # cables are 300 mm² Al (central inverters) and 120 mm² Al (string inverters)
    assert set(s.loc[~dc, "size_mm2"]) == {120.0, 300.0} and set(s.loc[~dc, "material"]) == {"Al"}
    r_one = (r * s["parallel"]).to_numpy()
    y = np.ones(len(s))
    for size in (120.0, 300.0):
        at = ~dc & (s["size_mm2"] == size)
        y[at] = ac_over_dc(r_one[at], size, "Al")
    r = r * y
    # Ohm's law: DC loop 2·L·I·R; three-phase √3·L·I·(R cosφ + X sinφ), the demo's inverters at
    # cos φ = 0.95; X of 120 and 300 mm² single-core XLPE in trefoil: 0.140 mV/A/m line to line,
    # BS 7671 Appendix 4 Table 4E1B (from memory), i.e. 0.140/√3 Ω/km per conductor
    cos = s["power_factor"].fillna(1.0).to_numpy()
    assert set(cos[~dc]) == {0.95}
    x = 0.140 / np.sqrt(3) / 1000.0 / s["parallel"]  # Ω/m per phase, sets in parallel
    z = r * cos + x * np.sqrt(1 - cos**2)
    vd = np.where(dc, 2 * s["cable_m"] * i * r, np.sqrt(3) * s["cable_m"] * i * z)
    np.testing.assert_allclose(s["vdrop_v"], vd, rtol=2e-3, atol=0.006)  # CSV rounding
    poles = np.where(dc, 2, 3)
    np.testing.assert_allclose(s["loss_w"], poles * i**2 * r * s["cable_m"], rtol=2e-3, atol=0.06)
    np.testing.assert_allclose(s["vdrop_pct"], 100 * s["vdrop_v"] / s["voltage_v"], atol=2e-3)
    # vdrop_total_pct: string = own + every feeder's on its path up the combiner tree (a
    # sub-array cable, then the array cable); a string straight to an inverter: its own
    # (README, outputs)
    feeder = s[s["kind"].isin(["subarray", "array"])].set_index("from_id")
    strings = s[(s["kind"] == "string")]
    total = strings["vdrop_pct"].to_numpy().copy()
    at = strings["to_id"].to_numpy(dtype=object)
    for _ in range(3):  # at most 3 combiners in a chain
        up = np.isin(at, feeder.index)
        if not up.any():
            break
        total[up] += feeder.loc[at[up], "vdrop_pct"].to_numpy()
        at = np.where(up, feeder["to_id"].reindex(at).to_numpy(dtype=object), None)
    assert (~strings["to_id"].isin(feeder.index)).any()  # strings straight to an inverter
    assert (feeder["kind"] == "subarray").any()  # and strings behind a recombiner
    np.testing.assert_allclose(strings["vdrop_total_pct"], total, atol=2e-3)
    np.testing.assert_allclose(s["utilisation"], s["design_current_a"] / s["ampacity_a"], atol=2e-3)


def test_determinism_byte_identical_csv(demo_out, tmp_path):
    out = tmp_path / "again"
    assert run_plan(DEMO, out).exit_code == 0
    for name in ("cable_schedule.csv", "trench_schedule.csv", "quantities.csv"):
        assert (out / name).read_bytes() == (demo_out / name).read_bytes(), name


def test_exit_1_when_a_limit_fails_and_outputs_written(tmp_path):
    site = tmp_path / "tight"
    shutil.copytree(DEMO, site)
    toml = (
        (site / "site.toml")
        .read_text()
        .replace("dc_total = 2.0", "dc_total = 0.5")
        .replace(
            "string = 1.0\nsubarray = 1.0\narray = 1.5",
            "string = 0.4\nsubarray = 0.4\narray = 0.4",
        )
    )
    (site / "site.toml").write_text(toml)
    out = tmp_path / "out"
    result = run_plan(site, out)
    assert result.exit_code == 1, result.output
    sched = pd.read_csv(out / "cable_schedule.csv", keep_default_na=False)
    failing = sched[sched["status"] == "fail"]
    assert len(failing) > 0 and (failing["note"] != "").all()


def test_exit_2_on_bad_input_writes_nothing(tmp_path):
    site = tmp_path / "bad"
    shutil.copytree(DEMO, site)
    rows = gpd.read_file(site / "rows.geojson")
    rows.loc[3, "module"] = "nonexistent"
    rows.to_file(site / "rows.geojson", driver="GeoJSON")
    out = tmp_path / "out"
    result = run_plan(site, out)
    assert result.exit_code == 2
    assert f"error: rows '{rows.loc[3, 'id']}': module 'nonexistent'" in result.stderr
    assert "Traceback" not in result.output
    assert not out.exists()
    assert not list(tmp_path.glob(".out*"))  # no temporary folder left behind


def test_far_equipment_exits_2_in_check_and_plan(tmp_path):
    site = tmp_path / "far"
    shutil.copytree(DEMO, site)
    comb = gpd.read_file(site / "combiners.geojson")
    comb = comb.to_crs(32630)
    comb.loc[0, "geometry"] = shapely.affinity.translate(comb.geometry.iloc[0], xoff=-200.0)
    comb.to_crs(4326).to_file(site / "combiners.geojson", driver="GeoJSON")
    for cmd in (["check", str(site)], ["plan", str(site), "--out", str(tmp_path / "o")]):
        result = runner.invoke(app, cmd)
        assert result.exit_code == 2, result.output
        assert f"'{comb.loc[0, 'id']}'" in result.stderr


def move_pad(src: Path, dst: Path, pad: str, dx: float) -> None:
    shutil.copytree(src, dst)
    inv = gpd.read_file(dst / "inverters.geojson").to_crs(32630)
    i = inv.index[inv["id"] == pad][0]
    inv.loc[i, "geometry"] = shapely.affinity.translate(inv.geometry.iloc[i], xoff=dx)
    inv.to_crs(4326).to_file(dst / "inverters.geojson", driver="GeoJSON")


def test_diff_after_moving_a_pad_lists_exactly_its_circuits(demo_out, tmp_path):
    move_pad(DEMO, tmp_path / "moved", "INV-E", dx=-6.0)  # 6 m west along the branch
    out = tmp_path / "out_moved"
    assert run_plan(tmp_path / "moved", out).exit_code in (0, 1)
    result = runner.invoke(app, ["diff", str(demo_out), str(out), "--out", str(tmp_path / "d")])
    assert result.exit_code == 0, result.output
    d = pd.read_csv(tmp_path / "d" / "diff.csv", keep_default_na=False, dtype=str)
    changed = set(d.loc[d["section"] == "circuit", "id"])
    sched = pd.read_csv(demo_out / "cable_schedule.csv")
    served_arrays = set(
        sched.loc[(sched["kind"] == "array") & (sched["to_id"] == "INV-E"), "circuit_id"]
    )
    combiners = {c.split(":", 1)[1] for c in served_arrays}
    served_strings = set(
        sched.loc[(sched["kind"] == "string") & sched["to_id"].isin(combiners), "circuit_id"]
    )
    served = served_arrays | {"AC:INV-E"} | served_strings
    assert served_arrays | {"AC:INV-E"} <= changed  # the pad's own circuits moved
    assert changed <= served  # and nothing the pad does not serve
    # strings behind the pad change only through their cumulative DC drop
    string_fields = set(d.loc[d["id"].isin(served_strings), "field"])
    assert string_fields <= {"vdrop_total_pct"}
    # ... so they follow (scope), each after the array cable leaving its combiner (cause);
    # the pad's own circuits changed their route
    strings = d[d["id"].isin(served_strings)]
    assert set(strings["scope"]) == {"follows"}
    to = dict(zip(sched["circuit_id"], sched["to_id"], strict=True))
    assert [f"A:{to[i]}" for i in strings["id"]] == strings["cause"].tolist()
    assert set(d.loc[d["id"].isin(served_arrays | {"AC:INV-E"}), "scope"]) == {"route"}
    assert "circuits: " in result.output


def test_diff_of_identical_plans_is_empty(demo_out):
    result = runner.invoke(app, ["diff", str(demo_out), str(demo_out)])
    assert result.exit_code == 0 and "no changes" in result.output


def test_plan_a_generated_site(tmp_path):
    from routeplan.synth import generate_site

    site = tmp_path / "gen"
    info = generate_site(8.0, 3, site)
    out = tmp_path / "out"
    result = run_plan(site, out, "--quiet")
    assert result.exit_code in (0, 1), result.output
    sched = pd.read_csv(out / "cable_schedule.csv")
    assert (sched["kind"] == "string").sum() == info.strings
    assert (sched["kind"] == "array").sum() == info.combiners


def test_map_command_redraws_from_output_folder(demo_out, tmp_path):
    out = tmp_path / "copy"
    shutil.copytree(demo_out, out)
    (out / "map.html").unlink()
    result = runner.invoke(app, ["map", str(out)])
    assert result.exit_code == 0, result.output
    html = (out / "map.html").read_text(encoding="utf-8")
    assert "Cerro Pardo Solar" in html and "qualified, licensed person" in html
    # offline: no script or stylesheet fetched from the network
    assert re.search(r'<(script|link)[^>]+(src|href)="https?:', html) is None


def test_map_command_on_a_folder_without_plan_exits_2(tmp_path):
    result = runner.invoke(app, ["map", str(tmp_path)])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ")


def test_synth_command_writes_a_valid_site(tmp_path):
    result = runner.invoke(app, ["synth", "--mw", "5", "--seed", "2", "--out", str(tmp_path / "s")])
    assert result.exit_code == 0, result.output
    assert runner.invoke(app, ["check", str(tmp_path / "s")]).exit_code == 0
    bad = runner.invoke(app, ["synth", "--mw", "-1", "--out", str(tmp_path / "t")])
    assert bad.exit_code == 2 and "error: mw" in bad.stderr


# -- the fast writers give exactly what the reference formatting gives ---------------------


def _reference_fixed(values: np.ndarray, decimals: int) -> list[str]:
    """The reference: Python's own '%.Nf' (correctly rounded), '' for NaN, no '-0.00'."""
    fmt = f"%.{decimals}f"
    out = [fmt % v for v in values.tolist()]
    zero, negzero = fmt % 0.0, "-" + fmt % 0.0
    return ["" if t == "nan" else zero if t == negzero else t for t in out]


def test_fixed_text_equals_python_formatting_including_ties():
    from routeplan.outputs.tables import fixed_text

    rng = np.random.default_rng(7)
    edge = np.array(
        [0.125, 0.375, 1.005, 2.675, -0.004, -0.0, 0.0, np.nan, np.inf, -np.inf, 1e20, -1e20,
         0.5, 1.5, 2.5, -2.5, 5e-324, 4503599627370495.5, 1e15 + 0.3, 9.995, 99.995, -9.995]
    )  # fmt: skip
    samples = [
        edge,
        rng.normal(0, 100, 20000),
        rng.uniform(0, 1, 20000) * 1e9,
        np.round(rng.uniform(0, 100, 20000), 2) + 0.005,  # near ties at 2 decimals
        np.round(rng.uniform(0, 100, 20000), 3) + 0.0005,
        10.0 ** np.arange(-8, 17),
        np.zeros(0),
    ]
    for values in samples:
        for d in range(7):
            got = [t.decode("ascii") for t in fixed_text(values, d).tolist()]
            assert got == _reference_fixed(values, d)
