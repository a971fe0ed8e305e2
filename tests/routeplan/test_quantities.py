"""``quantities.csv`` (the bill of quantities) against independent sums and the standards.

Both schedules and the bill are read with Python's csv module; the expected bill is summed here,
line by line of ``cable_schedule.csv``, from the rules the module docstring of
:mod:`routeplan.quantities` states:

- cable metres per kind, material and size: ``cable_m`` × ``conductors`` of every circuit;
- lugs: 2 per conductor of a feeder; 1 per conductor of a string landing on a combiner (its row
  end takes a PV connector), none for a string landing on an inverter (both ends connectors);
- PV connector pairs: 1 per conductor of a string to a combiner, 2 to an inverter;
- string, sub-array and array fuses: one per pole (2) of each protected circuit, by rating;
  AC breakers: one per a.c. circuit, by rating and poles;
- trench metres: the shapely lengths of the site's trench layer, by laying and depth.
"""

from __future__ import annotations

import csv
import math
import tomllib
from collections import defaultdict
from pathlib import Path

import geopandas as gpd
import openpyxl
import pandas as pd
import pytest
import shapely
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.config import parse_design
from routeplan.quantities import bill_of_quantities, data_table, voltage_class

from ..conftest import SITE_TOML, base_frames, write_site

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()
FAMILIES = ["cable", "termination", "connector", "trench", "fuse", "breaker"]
KINDS = ["string", "subarray", "array", "ac"]
FUSE_ITEM = {"string": "string fuse", "subarray": "sub-array fuse", "array": "array fuse"}


def read_csv(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def plan(site: Path, out: Path, code: int = 0) -> Path:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == code, result.output
    return out


def expected_bill(out: Path) -> tuple[dict[tuple, float], dict[tuple, float]]:
    """{key: quantity} summed from cable_schedule.csv; key as :func:`written_bill` makes it;
    and the tolerance of each metre sum (cable_m is written to 2 decimals)."""
    rows = read_csv(out / "cable_schedule.csv")
    combiners = {c["from_id"] for c in rows if c["kind"] in ("subarray", "array")}
    bill: dict[tuple, float] = defaultdict(float)
    tol: dict[tuple, float] = defaultdict(float)
    for c in rows:
        kind, n = c["kind"], int(c["conductors"])
        size = float(c["size_mm2"])
        key = (kind, c["material"], size)
        bill[("cable", *key)] += float(c["cable_m"]) * n
        tol[("cable", *key)] += 0.005 * n
        if kind == "string":
            to_combiner = c["to_id"] in combiners
            lugs, pairs = (n, n) if to_combiner else (0, 2 * n)
        else:
            lugs, pairs = 2 * n, 0
        if lugs:
            bill[("termination", *key)] += lugs
        if pairs:
            bill[("connector pair", *key)] += pairs
        for column in ("fuse_a", "array_fuse_a"):
            if kind in FUSE_ITEM and c[column] and not (kind == "string") ^ (column == "fuse_a"):
                bill[(FUSE_ITEM[kind], kind, float(c[column]))] += 2
        if kind == "ac" and c["ac_breaker_a"]:
            poles = n // int(c["parallel"])
            bill[("AC breaker", "ac", float(c["ac_breaker_a"]), poles)] += 1
    return bill, tol


def written_bill(out: Path) -> list[tuple[tuple, float, dict]]:
    lines = []
    for q in read_csv(out / "quantities.csv"):
        item = q["item"]
        if item.endswith(" total"):
            key = (item,)
        elif item == "trench":
            key = ("trench", q["laying"], float(q["depth_m"]))
        elif item in ("cable", "termination", "connector pair"):
            key = (item, q["kind"], q["material"], float(q["size_mm2"]))
        elif item == "AC breaker":
            key = (item, q["kind"], float(q["rating_a"]), int(q["poles"]))
        else:
            assert q["size_mm2"] == q["material"] == q["laying"] == q["depth_m"] == "", q
            key = (item, q["kind"], float(q["rating_a"]))
        lines.append((key, float(q["quantity"]), q))
    return lines


def check_bill(out: Path) -> None:
    bill, tol = expected_bill(out)
    lines = written_bill(out)
    keys = [k for k, _, _ in lines]
    assert len(keys) == len(set(keys))  # one line per key
    assert {k for k in keys if k[0] != "trench" and len(k) > 1} == set(bill)
    for key, quantity, q in lines:
        if len(key) == 1 or key[0] == "trench":
            continue
        if key[0] == "cable":
            assert quantity == pytest.approx(bill[key], abs=tol[key] + 0.005), key
            assert q["unit"] == "m"
        else:  # counts: exact
            assert quantity == bill[key], key
            assert q["unit"] == "pcs"
    # a total line closes each family: the sum of its lines (to the bill's 2 decimals)
    families = [q["family"] for _, _, q in lines]
    for family in dict.fromkeys(families):
        mine = [(k, v) for k, v, q in lines if q["family"] == family]
        assert mine[-1][0] == (f"{'connector pair' if family == 'connector' else family} total",)
        parts = sum(v for _, v in mine[:-1])
        assert mine[-1][1] == pytest.approx(parts, abs=0.005 * len(mine)), family
    assert list(dict.fromkeys(families)) == [f for f in FAMILIES if f in families]


def trench_lengths(site: Path, defaults: dict[str, object]) -> dict[tuple, float]:
    """shapely lengths of the site's trench layer in its working CRS, by laying and depth (a
    trench's own attribute, else the design default)."""
    toml = tomllib.loads((site / "site.toml").read_text(encoding="utf-8"))
    path = next(p for p in site.iterdir() if p.stem == "trenches")
    t = gpd.read_file(path)
    if "crs" in toml.get("site", {}):
        t = t.to_crs(toml["site"]["crs"])
    lengths = shapely.length(t.geometry.to_numpy())
    out: dict[tuple, float] = defaultdict(float)
    for laying, depth, m in zip(t["laying"], t["depth_m"], lengths, strict=True):
        laying = laying if isinstance(laying, str) else defaults["laying"]
        depth = depth if depth == depth and depth is not None else defaults["depth_m"]
        out[(laying, round(float(depth), 2))] += float(m)
    return out


def check_trench(out: Path, site: Path, defaults: dict[str, object]) -> None:
    expected = trench_lengths(site, defaults)
    got = {(k[1], k[2]): v for k, v, _ in written_bill(out) if k[0] == "trench"}
    assert set(got) == set(expected)
    for key, metres in expected.items():
        # shapely's length of the trench features; the segments' lengths are summed in the
        # bill (noding moves vertices by at most node_tol_m: 1 cm per metre of rounding is ample)
        assert got[key] == pytest.approx(metres, rel=1e-6, abs=0.01), key
    total = next(v for k, v, _ in written_bill(out) if k == ("trench total",))
    assert total == pytest.approx(sum(expected.values()), abs=0.01 * len(expected))


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    return plan(DEMO, tmp_path_factory.mktemp("bill") / "out")


def test_demo_bill_is_the_sum_of_its_schedule(demo_out):
    check_bill(demo_out)


def test_demo_trench_metres_are_the_trench_layers_lengths(demo_out):
    design = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))["design"]
    check_trench(demo_out, DEMO, {"laying": design["laying"], "depth_m": 0.7})


def test_demo_bill_has_every_family(demo_out):
    families = {q["family"] for _, _, q in written_bill(demo_out)}
    # the demo has strings to combiners and to string inverters, fuses and AC breakers
    assert families == set(FAMILIES)


def test_sizes_are_written_as_sizes(demo_out):
    # "10", "2.5": never "10.0" (csv module; every cell of the size-like columns)
    lines = read_csv(demo_out / "quantities.csv")
    sizes = [q[c] for q in lines for c in ("size_mm2", "rating_a", "poles", "conductor_class")]
    assert sizes and not [s for s in sizes if s.endswith(".0")]
    assert {q["size_mm2"] for q in lines if q["item"] == "cable"} >= {"4", "10", "300"}
    assert all(q["cores_x_size"] == f"1×{q['size_mm2']}" for q in lines if q["item"] == "cable")
    fuses = [q for q in lines if q["family"] == "fuse" and q["kind"]]
    assert fuses and all(q["material"] == "" and q["rating_a"] for q in fuses)
    assert {q["rating_a"] for q in fuses} == {"25", "250", "315", "630"}


def test_demo_designations_follow_the_standards(demo_out):
    lines = read_csv(demo_out / "quantities.csv")
    by = {(q["item"], q["kind"], q["size_mm2"]): q for q in lines}
    pv = by[("cable", "string", "4")]
    # EN 50618:2014, clause 1 (scope, from memory): "rated DC voltage 1.5 kV between conductors
    # and between conductor and earth", maximum 1.8 kV DC; clause 4 (from memory): code
    # designation H1Z2Z2-K; conductor: tinned copper, class 5 of EN 60228
    assert pv["designation"].startswith("PV cable EN 50618 type H1Z2Z2-K, 1×4 mm², tinned Cu ")
    assert "class 5" in pv["designation"] and "1.5/1.5 kV DC (max. 1.8 kV DC)" in pv["designation"]
    assert (pv["conductor_class"], pv["rated_voltage"], pv["tag"]) == (
        "5",
        "1.5/1.5 kV DC",
        "memory",
    )
    # IEC 60502-1:2004, clause 4.1 (from memory): rated voltages U0/U (Um) 0.6/1 (1.2) kV and
    # 1.8/3 (3.6) kV. The demo's inverters put out 800 V three-phase: 0.6/1 kV covers 800 V
    # between phases and 462 V to earth
    ac = by[("cable", "ac", "300")]
    assert ac["rated_voltage"] == "0.6/1 (1.2) kV" and ac["conductor_class"] == "2"
    assert ac["designation"] == (
        "single-core power cable of IEC 60502-1 construction, 1×300 mm² Al class 2 conductor "
        "(IEC 60228), XLPE insulation, U0/U (Um) 0.6/1 (1.2) kV; sheath and armour to suit the "
        "laying"
    )
    # d.c. feeders at dc_rated_v 1500 V: 0.6/1 kV is 0.9/1.5 kV d.c. (1.5 × the a.c. values,
    # HD 516 practice, from memory), short of 1500 V to earth: 1.8/3 kV
    arr = by[("cable", "array", "300")]
    assert arr["rated_voltage"] == "1.8/3 (3.6) kV, 2.7/4.5 kV DC"
    # IEC 60269-6:2010 clause 1 (from memory): gPV fuse-links; rated voltage the plan's d.c.
    fuse = next(q for q in lines if q["item"] == "string fuse")
    assert fuse["designation"].startswith(
        "gPV fuse-link, IEC 60269-6, In 25 A, rated voltage ≥ 1500"
    )
    # IEC 62852:2014 (from memory): PV connectors; sized to the conductor
    pair = by[("connector pair", "string", "10")]
    assert pair["designation"].startswith("PV connector pair (plug and socket of one type and ")
    assert "for 10 mm² conductor, rated ≥ 1500 V DC" in pair["designation"]
    # IEC 61238-1 (from memory): compression lugs, Al or bimetal for Al conductors
    lug = by[("termination", "ac", "300")]
    assert (
        "Al or bimetal Al/Cu" in lug["designation"] and "300 mm² Al class 2" in lug["designation"]
    )
    for q in lines:  # every line not a total says which source it rests on and its tag
        if not q["item"].endswith(" total"):
            assert q["designation"] and q["tag"] in ("memory", "common practice"), q


@pytest.mark.parametrize(
    ("dc_v", "rated", "note"),
    [
        (800.0, "0.6/1 (1.2) kV, 0.9/1.5 kV DC", ""),  # 0.9 kV d.c. to earth covers 800 V
        (1000.0, "1.8/3 (3.6) kV, 2.7/4.5 kV DC", ""),  # 0.9 kV does not cover 1000 V
        (2000.0, "1.8/3 (3.6) kV, 2.7/4.5 kV DC", "exceeds"),
    ],
)
def test_rated_voltage_follows_dc_rated_v(dc_v, rated, note):
    """A plan rated above EN 50618's 1.5 kV DC gets no PV cable designation: the line keeps
    its metres and says why; the feeders take the IEC 60502-1 class covering the voltage."""
    circuits = {
        "kind": ["string", "array"],
        "from_id": ["R1", "CB1"],
        "to_id": ["CB1", "INV1"],
        "material": ["Cu", "Al"],
        "size_mm2": [6.0, 240.0],
        "parallel": [1, 1],
        "conductors": [2, 2],
        "insulation": ["PV", "XLPE"],
        "cable_m": [50.0, 300.0],
        "voltage_v": [1100.0, 1100.0],
        "design_current_a": [20.0, 300.0],
        "fuse_a": [20.0, math.nan],
        "array_fuse_a": [math.nan, math.nan],
        "ac_breaker_a": [math.nan, math.nan],
    }
    segments = {"laying": ["direct"], "depth_m": [0.8], "length_m": [300.0]}

    bill = bill_of_quantities(pd.DataFrame(circuits), pd.DataFrame(segments), dc_v, "iec60947-2")
    pv = bill[(bill["item"] == "cable") & (bill["kind"] == "string")].iloc[0]
    arr = bill[(bill["item"] == "cable") & (bill["kind"] == "array")].iloc[0]
    assert arr["rated_voltage"] == rated
    assert pv["quantity"] == 100.0
    if note:
        assert pv["designation"] == ""
        assert pv["note"] == (
            "design.dc_rated_v 2000 V exceeds EN 50618's 1500 V DC rating: no PV cable of that "
            "standard fits; specify a string cable rated for 2000 V DC"
        )
    else:
        assert pv["designation"].startswith("PV cable EN 50618 type H1Z2Z2-K") and not pv["note"]


def test_voltage_classes_of_iec60502_1():
    # IEC 60502-1:2004 clause 4.1 (from memory): 0.6/1 (1.2) kV and 1.8/3 (3.6) kV
    t = data_table("iec60502_1_rated_voltages.csv")
    assert len(t) == 2 and t["u0_kv"].tolist() == [0.6, 1.8] and t["um_kv"].tolist() == [1.2, 3.6]
    assert voltage_class(1000 / math.sqrt(3), 1000, dc=False)["u_kv"] == 1.0  # 1 kV three-phase
    assert voltage_class(1001 / math.sqrt(3), 1001, dc=False)["u_kv"] == 3.0
    assert voltage_class(3001 / math.sqrt(3), 3001, dc=False) is None  # IEC 60502-2's range
    d = data_table("bill_designations.csv")
    assert len(d) == 8 and d["standard"][d["item"] == "pv_cable"].tolist() == ["EN 50618"]


def test_demo_bill_in_the_workbook_has_numbers(demo_out):
    # the workbook's quantities sheet as openpyxl reads it: sizes, depths, ratings and
    # quantities are numbers (README: "numbers as numbers"), empty where they do not apply
    wb = openpyxl.load_workbook(demo_out / "cable_schedule.xlsx", read_only=True)
    rows = wb["quantities"].iter_rows(values_only=True)
    header = [str(h).split(" [")[0] for h in next(rows)]
    lines = [dict(zip(header, r, strict=True)) for r in rows]
    assert len(lines) == len(read_csv(demo_out / "quantities.csv"))
    for line in lines:
        assert isinstance(line["quantity"], int | float), line
        for name in ("size_mm2", "depth_m", "rating_a"):
            assert line[name] is None or isinstance(line[name], int | float), (name, line)
        sized = line["item"] in ("cable", "termination", "connector pair")
        assert (line["size_mm2"] is not None) == sized, line


@pytest.mark.parametrize("phases", [3, 1])
def test_bill_of_a_small_site_single_or_three_phase(tmp_path, phases):
    frames = base_frames()
    frames["inverters"]["phases"] = [phases]
    site = write_site(tmp_path / "site", frames)
    out = plan(site, tmp_path / "out")
    check_bill(out)
    design = parse_design({})[0].values
    check_trench(out, site, {"laying": design["laying"], "depth_m": design["depth_m"]})
    breaker = next(q for _, _, q in written_bill(out) if q["item"] == "AC breaker")
    assert breaker["poles"] == str(phases if phases == 3 else 2)  # L1 L2 L3, or L and N


def test_a_plan_rated_above_the_pv_cable_says_so(tmp_path):
    """dc_rated_v 1800 V: above EN 50618's 1.5 kV DC and the 1500 V DC scope of IEC 62852 and
    IEC 60269-6 (from memory). The plan is made (the strings' Voc is within 1800 V); the bill's
    string cable lines carry no designation and a note, which the command line prints once."""
    site = write_site(tmp_path / "site", base_frames(), toml=SITE_TOML + "dc_rated_v = 1800\n")
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out"), "--no-cache"])
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert (
        "quantities: design.dc_rated_v 1800 V exceeds EN 50618's 1500 V DC rating: no PV cable "
        "of that standard fits; specify a string cable rated for 1800 V DC"
    ) in lines
    assert (
        "quantities: design.dc_rated_v 1800 V is beyond IEC 62852's 1500 V DC scope: check the "
        "product"
    ) in lines
    bill = read_csv(tmp_path / "out" / "quantities.csv")
    pv = [q for q in bill if q["item"] == "cable" and q["kind"] == "string"]
    assert pv and all(q["designation"] == "" and q["note"] for q in pv)
    assert float(pv[0]["quantity"]) > 0  # the metres stay


def test_the_diff_matches_sizes_written_the_earlier_way():
    """An earlier version wrote sizes "10.0": its cable line is this version's "10" line (only
    the metres' change is listed, named as the newer bill writes it); a line only in the old
    bill is named as written there."""
    from routeplan.diff.compare import quantity_rows

    def bill(*lines: tuple[str, str, str]) -> pd.DataFrame:
        cols = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "unit"]
        cols += ["rating_a", "poles", "quantity"]
        rows = [[item, "string", "Cu", size, "", "", "m", "", "", q] for item, size, q in lines]
        return pd.DataFrame(rows, columns=cols)

    old = bill(("cable", "10.0", "100.00"), ("cable", "6.0", "5.00"), ("cable", "4.0", "7.00"))
    new = bill(("cable", "10", "110.00"), ("cable", "6", "5.00"))
    rows = [(r["id"], r["change"], r["old"], r["new"]) for r in quantity_rows(old, new)]
    assert rows == [
        ("cable string Cu 10 m", "changed", "100.00", "110.00"),
        ("cable string Cu 4.0 m", "removed", "7.00", "0.00"),
    ]
