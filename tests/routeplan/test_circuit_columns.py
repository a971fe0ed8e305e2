"""Reference voltage, power factor and the count columns of the schedules, end to end.

- ``voltage_v`` (the reference of ``vdrop_pct``): an a.c. circuit's is its inverter's ``ac_v``;
  a string's is its module's Vmp × modules per string (the module table in site.toml); an
  array's is the lowest string Vmp behind it (pipeline docstring: conservative for the drop
  in percent). ``vdrop_pct = 100 × vdrop_v / voltage_v``.
- ``power_factor``: an a.c. circuit's is its inverter's ``pf``, or ``design.power_factor``
  where the pad gives none (README, settings); d.c. circuits have none.
- Counts are integers: GDAL reads the GeoPackage's count fields as integer fields (pyogrio).
  Ratings and other figures, empty where they do not apply, are real fields, and numbers in
  the workbook (openpyxl reads them as numbers; README: "numbers as numbers").
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import geopandas as gpd
import openpyxl
import pyogrio
import pytest
from shapely.geometry import Point
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site

runner = CliRunner()
VMP_V, PER_STRING = 41.2, 26  # tests/conftest.py, [modules.mod1]
DESIGN_PF = 0.85


@pytest.fixture(scope="module")
def out(tmp_path_factory) -> Path:
    """The base site with a second inverter (no pf, 400 V) beside the first (pf 0.95)."""
    tmp = tmp_path_factory.mktemp("columns")
    frames = base_frames()
    frames["inverters"] = gpd.GeoDataFrame(
        {
            "id": ["INV1", "INV2"],
            "ac_kva": [250.0, 100.0],
            "ac_v": [800.0, 400.0],
            "phases": [3, 3],
            "pf": [0.95, math.nan],
            "to": ["G1", "G1"],
        },
        geometry=[Point(E0 + 100, N0 - 2), Point(E0 + 130, N0 - 2)],
        crs=UTM33,
    )
    toml = SITE_TOML.replace("[design]\n", f"[design]\npower_factor = {DESIGN_PF}\n")
    site = write_site(tmp / "site", frames, toml=toml)
    result = runner.invoke(
        app, ["plan", str(site), "--out", str(tmp / "out"), "--quiet", "--no-cache"]
    )
    assert result.exit_code == 0, result.output
    return tmp / "out"


def circuits(out: Path) -> dict[str, dict[str, str]]:
    with open(out / "cable_schedule.csv", encoding="utf-8", newline="") as fh:
        return {r["circuit_id"]: r for r in csv.DictReader(fh)}


def test_reference_voltage_of_each_kind(out):
    c = circuits(out)
    assert float(c["AC:INV1"]["voltage_v"]) == 800.0
    assert float(c["AC:INV2"]["voltage_v"]) == 400.0
    string_v = VMP_V * PER_STRING  # 1071.2 V
    for cid, row in c.items():
        if row["kind"] != "ac":  # strings, and the array of strings of one module
            assert float(row["voltage_v"]) == pytest.approx(string_v, abs=0.05), cid
        u = float(row["voltage_v"])
        vd_pct = 100 * float(row["vdrop_v"]) / u
        # vdrop_v is written with 2 decimals, vdrop_pct with 3
        assert float(row["vdrop_pct"]) == pytest.approx(vd_pct, abs=100 * 0.005 / u + 0.0005), cid


def test_power_factor_of_ac_circuits_only(out):
    c = circuits(out)
    assert c["AC:INV1"]["power_factor"] == "0.950"  # the pad's own
    assert c["AC:INV2"]["power_factor"] == f"{DESIGN_PF:.3f}"  # the design's, none given
    assert {row["power_factor"] for row in c.values() if row["kind"] != "ac"} == {""}


@pytest.mark.parametrize(
    ("layer", "columns"),
    [
        ("circuits", ["parallel", "group_max", "conductors"]),
        ("segments", ["circuits", "strings", "arrays", "ac", "cable_sets"]),
    ],
)
def test_counts_are_integer_fields_in_the_geopackage(out, layer, columns):
    info = pyogrio.read_info(out / "routes.gpkg", layer=layer)
    dtypes = dict(zip(info["fields"].tolist(), info["dtypes"].tolist(), strict=True))
    for name in columns:
        assert dtypes[name].startswith("int"), (layer, name, dtypes[name])


#: figures of the circuits that are empty for some circuits (no fuse, no breaker, d.c.)
SOMETIMES_EMPTY = ["fuse_a", "array_fuse_a", "ac_breaker_a", "power_factor", "backfeed_a"]


def test_figures_empty_for_some_circuits_stay_numbers(out):
    info = pyogrio.read_info(out / "routes.gpkg", layer="circuits")
    dtypes = dict(zip(info["fields"].tolist(), info["dtypes"].tolist(), strict=True))
    for name in SOMETIMES_EMPTY:
        assert dtypes[name] == "float64", (name, dtypes[name])
    c = circuits(out)
    assert {row["fuse_a"] for row in c.values() if row["kind"] == "string"} == {"20"}
    wb = openpyxl.load_workbook(out / "cable_schedule.xlsx", read_only=True)
    rows = wb["circuits"].iter_rows(values_only=True)
    header = [str(h).split(" [")[0] for h in next(rows)]
    j = header.index("fuse_a")
    fuses = [r[j] for r in rows if r[header.index("kind")] == "string"]
    assert fuses and all(isinstance(v, int | float) and v == 20 for v in fuses), fuses
