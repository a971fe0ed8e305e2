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
from routeplan.quantities import BILL_COLUMNS, bill_of_quantities, data_table, voltage_class

from ..conftest import SITE_TOML, base_frames, write_site

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()
FAMILIES = ["cable", "termination", "connector", "trench", "unused trench", "fuse", "breaker"]
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
        elif item in ("trench", "unused trench"):
            key = (item, q["laying"], float(q["depth_m"]))
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
    trench = ("trench", "unused trench")
    assert {k for k in keys if k[0] not in trench and len(k) > 1} == set(bill)
    for key, quantity, q in lines:
        if len(key) == 1 or key[0] in trench:
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
    got: dict[tuple, float] = {}  # where circuits run and where none does, together
    for k, v, _ in written_bill(out):
        if k[0] in ("trench", "unused trench"):
            got[(k[1], k[2])] = got.get((k[1], k[2]), 0.0) + v
    assert set(got) == set(expected)
    for key, metres in expected.items():
        # shapely's length of the trench features; the segments' lengths are summed in the
        # bill (noding moves vertices by at most node_tol_m: 1 cm per metre of rounding is ample)
        assert got[key] == pytest.approx(metres, rel=1e-6, abs=0.01), key
    total = sum(
        v for k, v, _ in written_bill(out) if k in (("trench total",), ("unused trench total",))
    )
    assert total == pytest.approx(sum(expected.values()), abs=0.01 * len(expected))
    # the unused part: the trench segments of routes.gpkg along which no circuit's route runs
    # (shapely: the segment's middle more than 1 cm from every route), not the schedule's counts
    segments = gpd.read_file(out / "routes.gpkg", layer="segments").geometry
    routes = gpd.read_file(out / "routes.gpkg", layer="circuits").geometry.union_all()
    middle = segments.interpolate(0.5, normalized=True)
    unused = float(segments[middle.distance(routes) > 0.01].length.sum())
    bill_unused = sum(v for k, v, _ in written_bill(out) if k == ("unused trench total",))
    assert unused > 0 and bill_unused == pytest.approx(unused, abs=0.01)


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    """The demo's plan folder, planned by the first test that asks for it, in that test's body
    (not in the fixture's setup): mutmut times a test by its body and runs the quickest tests of
    a mutant first, so the hand-built tests below, not a whole plan, meet each mutant first."""
    out = tmp_path_factory.mktemp("bill") / "out"

    def folder() -> Path:
        return out if out.exists() else plan(DEMO, out)

    return folder


def test_demo_bill_is_the_sum_of_its_schedule(demo_out):
    check_bill(demo_out())


def test_demo_trench_metres_are_the_trench_layers_lengths(demo_out):
    design = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))["design"]
    check_trench(demo_out(), DEMO, {"laying": design["laying"], "depth_m": 0.7})


def test_demo_bill_has_every_family(demo_out):
    families = {q["family"] for _, _, q in written_bill(demo_out())}
    # the demo has strings to combiners and to string inverters, fuses and AC breakers
    assert families == set(FAMILIES)


def test_sizes_are_written_as_sizes(demo_out):
    # "10", "2.5": never "10.0" (csv module; every cell of the size-like columns)
    lines = read_csv(demo_out() / "quantities.csv")
    sizes = [q[c] for q in lines for c in ("size_mm2", "rating_a", "poles", "conductor_class")]
    assert sizes and not [s for s in sizes if s.endswith(".0")]
    assert {q["size_mm2"] for q in lines if q["item"] == "cable"} >= {"4", "10", "300"}
    assert all(q["cores_x_size"] == f"1×{q['size_mm2']}" for q in lines if q["item"] == "cable")
    fuses = [q for q in lines if q["family"] == "fuse" and q["kind"]]
    assert fuses and all(q["material"] == "" and q["rating_a"] for q in fuses)
    assert {q["rating_a"] for q in fuses} == {"25", "250", "315", "630"}


def test_demo_designations_follow_the_standards(demo_out):
    lines = read_csv(demo_out() / "quantities.csv")
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
    assert len(d) == 16 and d["standard"][d["item"] == "pv_cable"].tolist() == ["EN 50618"]
    # the NEC rule set's breaker: NEC 2023 240.6(A) standard ratings
    assert "240.6(A)" in d["clause"][d["item"] == "breaker_nec240.6a"][0]


def test_demo_bill_in_the_workbook_has_numbers(demo_out):
    # the workbook's quantities sheet as openpyxl reads it: sizes, depths, ratings and
    # quantities are numbers (README: "numbers as numbers"), empty where they do not apply
    wb = openpyxl.load_workbook(demo_out() / "cable_schedule.xlsx", read_only=True)
    rows = wb["quantities"].iter_rows(values_only=True)
    header = [str(h).split(" [")[0] for h in next(rows)]
    lines = [dict(zip(header, r, strict=True)) for r in rows]
    assert len(lines) == len(read_csv(demo_out() / "quantities.csv"))
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


# --- a hand-built schedule, checked line by line against hand computation --------------------
#
# Seven circuits: two strings R1, R2 to combiner CB1 and one R3 to string inverter INV2; CB1's
# sub-array feeder to the array combiner CB2; CB2's array feeder (two parallel sets) to INV1;
# the a.c. feeders of INV1 (800 V three-phase, two sets) and INV2 (400 V three-phase).

NAN = math.nan


def hand_schedule(**changes: list) -> pd.DataFrame:
    columns = {
        "kind": ["string", "string", "string", "subarray", "array", "ac", "ac"],
        "from_id": ["R1", "R2", "R3", "CB1", "CB2", "INV1", "INV2"],
        "to_id": ["CB1", "CB1", "INV2", "CB2", "INV1", "GRID", "GRID"],
        "material": ["Cu", "Cu", "Cu", "Al", "Al", "Al", "Cu"],
        "size_mm2": [4.0, 4.0, 6.0, 95.0, 240.0, 300.0, 16.0],
        "parallel": [1, 1, 1, 1, 2, 2, 1],
        "conductors": [2, 2, 2, 2, 4, 6, 3],
        "insulation": ["PV", "PV", "PV", "XLPE", "XLPE", "XLPE", "PVC"],
        "cable_m": [50.0, 30.0, 40.0, 120.0, 200.0, 500.0, 60.0],
        "voltage_v": [1000.0, 1000.0, 1000.0, 1000.0, 1000.0, 800.0, 400.0],
        "design_current_a": [12.3, 13.0, 14.1, 100.0, 300.0, 900.0, 25.0],
        # the sub-array feeder's fuse_a is not its protection (array_fuse_a is): not billed
        "fuse_a": [20.0, 20.0, NAN, 63.0, NAN, NAN, NAN],
        "array_fuse_a": [NAN, NAN, NAN, 125.0, 400.0, NAN, NAN],
        "ac_breaker_a": [NAN, NAN, NAN, NAN, NAN, 1000.0, 32.0],
    }
    columns.update(changes)
    return pd.DataFrame(columns)


HAND_SEGMENTS = pd.DataFrame(
    {
        "laying": ["direct", "duct", "direct", "direct"],
        "depth_m": [0.8, 1.0, 0.8, 0.6],
        "length_m": [100.0, 30.0, 50.0, 20.0],
        "circuits": [3, 1, 2, 0],  # the last carries none: apart, as unused trench
    }
)


def hand_bill(dc_v: float = 1500.0, device: str = "iec60947-2", **changes: list) -> pd.DataFrame:
    return bill_of_quantities(hand_schedule(**changes), HAND_SEGMENTS.copy(), dc_v, device)


def cells(bill: pd.DataFrame, columns: list[str]) -> list[tuple]:
    """The bill's cells as plain Python values, None for an empty cell."""
    return [
        tuple(None if isinstance(v, float) and math.isnan(v) else v for v in row)
        for row in bill[columns].itertuples(index=False)
    ]


def test_hand_built_bill_line_by_line():
    """Every line's key, quantity and unit, in bill order, summed by hand from the schedule
    (the module docstring's rules)."""
    cols = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "quantity", "unit"]
    cols += ["rating_a", "poles", "family", "cores_x_size", "conductor_class"]
    n = None
    assert cells(hand_bill(), cols) == [
        # cable_m × conductors: (50 + 30) × 2; 40 × 2; 120 × 2; 200 × 4; 500 × 6; 60 × 3
        ("cable", "string", "Cu", 4.0, n, n, 160.0, "m", n, n, "cable", "1×4", 5.0),
        ("cable", "string", "Cu", 6.0, n, n, 80.0, "m", n, n, "cable", "1×6", 5.0),
        ("cable", "subarray", "Al", 95.0, n, n, 240.0, "m", n, n, "cable", "1×95", 2.0),
        ("cable", "array", "Al", 240.0, n, n, 800.0, "m", n, n, "cable", "1×240", 2.0),
        ("cable", "ac", "Al", 300.0, n, n, 3000.0, "m", n, n, "cable", "1×300", 2.0),
        ("cable", "ac", "Cu", 16.0, n, n, 180.0, "m", n, n, "cable", "1×16", 2.0),
        ("cable total", n, n, n, n, n, 4460.0, "m", n, n, "cable", n, n),
        # lugs: 1 per conductor of a string to a combiner (R1, R2: 2 + 2), none for R3 (to an
        # inverter: no 6 mm² line), 2 per conductor of a feeder: 2 × 2, 2 × 4, 2 × 6, 2 × 3
        ("termination", "string", "Cu", 4.0, n, n, 4.0, "pcs", n, n, "termination", "1×4", 5.0),
        ("termination", "subarray", "Al", 95.0, n, n, 4.0, "pcs", n, n, "termination", "1×95", 2.0),
        ("termination", "array", "Al", 240.0, n, n, 8.0, "pcs", n, n, "termination", "1×240", 2.0),
        ("termination", "ac", "Al", 300.0, n, n, 12.0, "pcs", n, n, "termination", "1×300", 2.0),
        ("termination", "ac", "Cu", 16.0, n, n, 6.0, "pcs", n, n, "termination", "1×16", 2.0),
        ("termination total", n, n, n, n, n, 34.0, "pcs", n, n, "termination", n, n),
        # connector pairs: 1 per conductor of a string to a combiner (2 + 2), 2 per conductor of
        # a string to an inverter (2 × 2)
        ("connector pair", "string", "Cu", 4.0, n, n, 4.0, "pcs", n, n, "connector", "1×4", n),
        ("connector pair", "string", "Cu", 6.0, n, n, 4.0, "pcs", n, n, "connector", "1×6", n),
        ("connector pair total", n, n, n, n, n, 8.0, "pcs", n, n, "connector", n, n),
        # trench metres by laying and depth where circuits run: 100 + 50; 30; apart, the 20 m
        # that carry none
        ("trench", n, n, n, "direct", 0.8, 150.0, "m", n, n, "trench", n, n),
        ("trench", n, n, n, "duct", 1.0, 30.0, "m", n, n, "trench", n, n),
        ("trench total", n, n, n, n, n, 180.0, "m", n, n, "trench", n, n),
        ("unused trench", n, n, n, "direct", 0.6, 20.0, "m", n, n, "unused trench", n, n),
        ("unused trench total", n, n, n, n, n, 20.0, "m", n, n, "unused trench", n, n),
        # fuses: 2 poles × protected circuits: R1 and R2 at 20 A; CB1's 125 A; CB2's 400 A
        ("string fuse", "string", n, n, n, n, 4.0, "pcs", 20.0, n, "fuse", n, n),
        ("sub-array fuse", "subarray", n, n, n, n, 2.0, "pcs", 125.0, n, "fuse", n, n),
        ("array fuse", "array", n, n, n, n, 2.0, "pcs", 400.0, n, "fuse", n, n),
        ("fuse total", n, n, n, n, n, 8.0, "pcs", n, n, "fuse", n, n),
        # one breaker per a.c. circuit, poles = conductors / parallel sets (6 / 2, 3 / 1)
        ("AC breaker", "ac", n, n, n, n, 1.0, "pcs", 32.0, 3.0, "breaker", n, n),
        ("AC breaker", "ac", n, n, n, n, 1.0, "pcs", 1000.0, 3.0, "breaker", n, n),
        ("breaker total", n, n, n, n, n, 2.0, "pcs", n, n, "breaker", n, n),
    ]


EN50618 = (
    "EN 50618:2014, clause 1 (scope: rated voltage DC 1.5/1.5 kV, maximum 1.8 kV DC, conductor "
    "to conductor and to earth); 4 (code designation H1Z2Z2-K); conductor tinned Cu class 5 to "
    "EN 60228"
)
IEC60502 = (
    "IEC 60502-1:2004 (Ed. 2), clause 4.1 (rated voltages U0/U (Um)); 5 (conductors: IEC 60228 "
    "class 1 or 2); 4.2 (insulating compounds: PVC/A, XLPE)"
)
IEC61238 = (
    "IEC 61238-1-1:2018, clause 1 (scope: compression and mechanical connectors for power cables "
    "up to 1 kV (Um 1.2 kV)); IEC 61238-1-2 above 1 kV"
)
IEC62852 = (
    "IEC 62852:2014, clause 1 (scope: connectors for DC application in PV systems up to 1500 V "
    "DC); mated halves of one type and maker (IEC 62548:2016, from memory)"
)
IEC60269 = (
    "IEC 60269-6:2010 (Ed. 1), clause 1 (scope: gPV fuse-links for PV strings and arrays, rated "
    "voltage up to 1500 V DC)"
)
IEC60947 = (
    "IEC 60947-2:2016 (Ed. 5), clause 1 (scope: circuit-breakers, rated voltage up to 1000 V AC)"
)


def test_hand_built_bill_designations():
    """Each line's designation, rating and source. Rated voltages: IEC 60502-1:2004 clause 4.1
    (from memory) 0.6/1 (1.2) kV and 1.8/3 (3.6) kV; d.c. 1.5 × those (0.9/1.5, 2.7/4.5 kV,
    HD 516 practice, from memory). 1500 V d.c. to earth needs 1.8/3 kV; 800 V three-phase (462 V
    to earth) and 400 V three-phase fit 0.6/1 kV. Connector currents: the design current
    rounded up to whole amperes (13.0 A stays 13, 14.1 A is 15)."""
    bill = hand_bill()
    cols = ["designation", "rated_voltage", "insulation", "standard", "source", "tag", "note"]
    got = cells(bill, cols)
    pv = (
        "PV cable EN 50618 type H1Z2Z2-K, 1×{} mm², tinned Cu class 5 conductor (IEC 60228), "
        "halogen-free cross-linked insulation and sheath, 1.5/1.5 kV DC (max. 1.8 kV DC)"
    )
    feeder = (
        "single-core power cable of IEC 60502-1 construction, 1×{} mm² {} class 2 conductor "
        "(IEC 60228), {} insulation, U0/U (Um) {}; sheath and armour to suit the laying"
    )
    lug = (
        "compression cable lug, {}, for {} mm² {} class {} conductor, tested to IEC 61238-1 for "
        "the cable's rated voltage"
    )
    pair = (
        "PV connector pair (plug and socket of one type and maker), IEC 62852, for {} mm² "
        "conductor, rated ≥ 1500 V DC and ≥ {} A"
    )
    fuse = (
        "gPV fuse-link, IEC 60269-6, In {} A, rated voltage ≥ 1500 V DC; body size and holder to "
        "suit the combiner"
    )
    breaker = (
        "circuit-breaker, IEC 60947-2, In {} A, 3-pole, rated operational voltage Ue ≥ {} V AC"
    )
    pv_ins = "halogen-free cross-linked (EN 50618)"
    hv = "1.8/3 (3.6) kV (d.c. 2.7/4.5 kV)"
    lv = "0.6/1 (1.2) kV"
    al_lug = "Al or bimetal Al/Cu (to Cu terminals)"
    trench = "cable trench, {} laying, cables at {} m depth"
    n, mem, cp = None, "memory", "common practice"
    total = (n, n, n, n, n, n, n)
    assert got == [
        (pv.format(4), "1.5/1.5 kV DC", pv_ins, "EN 50618", EN50618, mem, ""),
        (pv.format(6), "1.5/1.5 kV DC", pv_ins, "EN 50618", EN50618, mem, ""),
        (
            feeder.format(95, "Al", "XLPE", hv),
            "1.8/3 (3.6) kV, 2.7/4.5 kV DC",
            "XLPE",
            "IEC 60502-1",
            IEC60502,
            mem,
            "",
        ),
        (
            feeder.format(240, "Al", "XLPE", hv),
            "1.8/3 (3.6) kV, 2.7/4.5 kV DC",
            "XLPE",
            "IEC 60502-1",
            IEC60502,
            mem,
            "",
        ),
        (feeder.format(300, "Al", "XLPE", lv), lv, "XLPE", "IEC 60502-1", IEC60502, mem, ""),
        (feeder.format(16, "Cu", "PVC", lv), lv, "PVC", "IEC 60502-1", IEC60502, mem, ""),
        total,
        (lug.format("Cu", 4, "Cu", 5), n, n, "IEC 61238-1", IEC61238, mem, n),
        (lug.format(al_lug, 95, "Al", 2), n, n, "IEC 61238-1", IEC61238, mem, n),
        (lug.format(al_lug, 240, "Al", 2), n, n, "IEC 61238-1", IEC61238, mem, n),
        (lug.format(al_lug, 300, "Al", 2), n, n, "IEC 61238-1", IEC61238, mem, n),
        (lug.format("Cu", 16, "Cu", 2), n, n, "IEC 61238-1", IEC61238, mem, n),
        total,
        (pair.format(4, 13), "1500 V DC", n, "IEC 62852", IEC62852, mem, ""),
        (pair.format(6, 15), "1500 V DC", n, "IEC 62852", IEC62852, mem, ""),
        total,
        (trench.format("direct", "0.8"), n, n, n, n, cp, n),
        (trench.format("duct", "1"), n, n, n, n, cp, n),
        total,
        (trench.format("direct", "0.6"), n, n, n, n, cp, n),
        total,
        (fuse.format(20), "1500 V DC", n, "IEC 60269-6", IEC60269, mem, ""),
        (fuse.format(125), "1500 V DC", n, "IEC 60269-6", IEC60269, mem, ""),
        (fuse.format(400), "1500 V DC", n, "IEC 60269-6", IEC60269, mem, ""),
        total,
        (breaker.format(32, 400), "400 V AC", n, "IEC 60947-2", IEC60947, mem, ""),
        (breaker.format(1000, 800), "800 V AC", n, "IEC 60947-2", IEC60947, mem, ""),
        total,
    ]


def _line(bill: pd.DataFrame, item: str, kind: str | None = None, **match) -> pd.Series:
    rows = bill[(bill["item"] == item) & ((bill["kind"] == kind) if kind else True)]
    for column, value in match.items():
        rows = rows[rows[column] == value]
    assert len(rows) == 1, (item, kind, match)
    return rows.iloc[0]


@pytest.mark.parametrize(
    ("dc_v", "pv_kept", "over_1500"),
    # 1e-9 V above 1500 V is 1500 V (the comparisons' tolerance for rounding)
    [
        (1500.0, True, False),
        (1500.5, False, True),
        (1499.5, True, False),
        (1500 + 1e-9, True, False),
    ],
)
def test_the_1500_v_limits_are_inclusive(dc_v, pv_kept, over_1500):
    """EN 50618:2014 clause 1 rates the PV cable 1.5 kV DC; IEC 62852:2014 and IEC 60269-6:2010
    cover connectors and gPV fuses up to 1500 V DC (all from memory): a plan rated exactly 1500 V
    is within them, half a volt more is not."""
    bill = hand_bill(dc_v=dc_v)
    pv = _line(bill, "cable", "string", size_mm2=4.0)
    assert (pv["designation"] != "") is pv_kept
    assert (pv["note"] == "") is pv_kept
    pair = _line(bill, "connector pair", "string", size_mm2=4.0)
    fuse = _line(bill, "string fuse", "string")
    volts = f"{dc_v:g}"
    assert pair["rated_voltage"] == fuse["rated_voltage"] == f"{volts} V DC"
    assert f"rated ≥ {volts} V DC" in pair["designation"]
    assert f"rated voltage ≥ {volts} V DC" in fuse["designation"]
    if over_1500:
        assert pair["note"] == (
            f"design.dc_rated_v {volts} V is beyond IEC 62852's 1500 V DC scope: check the product"
        )
        assert fuse["note"] == (
            f"design.dc_rated_v {volts} V is beyond IEC 60269-6's 1500 V DC scope: check the "
            "product"
        )
    else:
        assert pair["note"] == fuse["note"] == ""


@pytest.mark.parametrize(
    ("dc_v", "rated"),
    [
        # IEC 60502-1:2004 clause 4.1 (from memory), d.c. 1.5 × U0/U (HD 516 practice, memory):
        # 0.6/1 kV is 0.9/1.5 kV d.c., 1.8/3 kV is 2.7/4.5 kV d.c.; to earth the full dc_rated_v
        (900.0, "0.6/1 (1.2) kV, 0.9/1.5 kV DC"),
        (900.0 + 1e-9, "0.6/1 (1.2) kV, 0.9/1.5 kV DC"),  # within the rounding tolerance
        (900.5, "1.8/3 (3.6) kV, 2.7/4.5 kV DC"),
        (2700.0, "1.8/3 (3.6) kV, 2.7/4.5 kV DC"),
        (2700.5, ""),
    ],
)
def test_dc_feeder_voltage_class_boundaries(dc_v, rated):
    bill = hand_bill(dc_v=dc_v)
    feeder = _line(bill, "cable", "array")
    assert feeder["rated_voltage"] == rated
    if rated:
        assert feeder["note"] == ""
        u = rated.split(" (")[0]
        assert f"U0/U (Um) {u} (" in feeder["designation"]
    else:
        assert feeder["designation"] == ""
        assert feeder["note"] == (
            f"{dc_v:g} V DC to earth and between conductors is beyond IEC 60502-1's 1.8/3 kV "
            "cables: a cable to IEC 60502-2 is needed (not chosen by routeplan)"
        )
        assert feeder["quantity"] == 800.0  # the metres stay
        # the lugs and the feeder's own columns stay too
        assert _line(bill, "termination", "array")["quantity"] == 8.0
        assert (feeder["standard"], feeder["conductor_class"]) == ("IEC 60502-1", 2.0)
        assert (feeder["insulation"], feeder["tag"]) == ("XLPE", "memory")
        assert feeder["source"] == IEC60502


@pytest.mark.parametrize(
    ("volts", "conductors", "rated"),
    [
        # three-phase: U between phases, U/√3 to earth; single-phase (2 conductors): U to earth
        (1000.0, 3, "0.6/1 (1.2) kV"),
        (1000.0 + 1e-9, 3, "0.6/1 (1.2) kV"),  # within the rounding tolerance
        (1000.5, 3, "1.8/3 (3.6) kV"),
        (600.5, 3, "0.6/1 (1.2) kV"),  # 347 V to earth
        (600.0, 2, "0.6/1 (1.2) kV"),
        (600.5, 2, "1.8/3 (3.6) kV"),  # 600.5 V to earth: above U0 0.6 kV
        (3000.0, 3, "1.8/3 (3.6) kV"),
        (3000.5, 3, ""),
    ],
)
def test_ac_feeder_voltage_class_boundaries(volts, conductors, rated):
    """IEC 60502-1:2004 clause 4.1 (from memory): U0/U (Um) 0.6/1 (1.2) and 1.8/3 (3.6) kV."""
    bill = hand_bill(
        voltage_v=[1000.0] * 6 + [volts],
        conductors=[2, 2, 2, 2, 4, 6, conductors],
    )
    feeder = _line(bill, "cable", "ac", size_mm2=16.0)
    assert feeder["rated_voltage"] == rated
    if rated:
        assert feeder["designation"].endswith(
            f"U0/U (Um) {rated}; sheath and armour to suit the laying"
        )
    else:
        assert feeder["designation"] == ""
        assert feeder["note"] == (
            "3000.5 V AC is beyond IEC 60502-1's 1.8/3 kV cables: a cable to IEC 60502-2 is "
            "needed (not chosen by routeplan)"
        )
    breaker = _line(bill, "AC breaker", "ac", rating_a=32.0)
    assert breaker["poles"] == conductors  # one set: 3 phases, or L and N


@pytest.mark.parametrize(
    ("device", "volts", "scope"),
    [
        ("iec60898-1", 440.0, ""),
        ("iec60898-1", 440.0 + 1e-9, ""),  # within the rounding tolerance
        ("iec60898-1", 440.5, "440"),
        ("iec60947-2", 440.5, ""),
        ("iec60947-2", 1000.0, ""),
        ("iec60947-2", 1000.5, "1000"),
    ],
)
def test_breaker_scope_limits(device, volts, scope):
    """IEC 60898-1:2015 clause 1 covers breakers up to 440 V AC, IEC 60947-2:2016 clause 1 up to
    1000 V AC (both from memory): the limit itself is within the scope."""
    bill = hand_bill(device=device, voltage_v=[1000.0] * 6 + [volts])
    breaker = _line(bill, "AC breaker", "ac", rating_a=32.0)
    standard = "IEC 60898-1" if device == "iec60898-1" else "IEC 60947-2"
    assert breaker["standard"] == standard
    assert breaker["rated_voltage"] == f"{volts:g} V AC"
    if scope:
        assert breaker["note"] == f"{volts:g} V AC is beyond {standard}'s {scope} V AC scope"
    else:
        assert breaker["note"] == ""
    if device == "iec60898-1":
        assert breaker["designation"] == (
            f"circuit-breaker, IEC 60898-1, In 32 A, 3-pole, rated voltage ≥ {volts:g} V AC"
        )
        assert breaker["source"] == (
            "IEC 60898-1:2015 (Ed. 2), clause 1 (scope: circuit-breakers up to 440 V AC and 125 A)"
        )


def test_lines_of_one_type_take_the_highest_voltage_current_and_phases():
    """Circuits of one kind, material and size share a line: its rating must cover the most
    onerous of them — the highest voltage, the highest design current (connectors rounded up to
    whole amperes), three phases where one of them is three-phase. Breakers of one rating and
    poles share a line with the highest voltage."""
    bill = hand_bill(
        size_mm2=[4.0, 4.0, 4.0, 95.0, 240.0, 16.0, 16.0],
        material=["Cu", "Cu", "Cu", "Al", "Al", "Cu", "Cu"],
        design_current_a=[11.2, 12.5, 10.0, 100.0, 300.0, 25.0, 25.0],
        # INV1 single-phase 600.5 V (2 conductors, to earth 600.5 V: 1.8/3 kV), INV2 three-phase
        # 400 V
        conductors=[2, 2, 2, 2, 4, 2, 3],
        parallel=[1, 1, 1, 1, 2, 1, 1],
        voltage_v=[1000.0, 1000.0, 1000.0, 1000.0, 1000.0, 600.5, 400.0],
        ac_breaker_a=[NAN, NAN, NAN, NAN, NAN, 32.0, 32.0],
    )
    pair = _line(bill, "connector pair", "string")
    assert pair["quantity"] == 2.0 + 2.0 + 4.0  # R1, R2 to CB1; R3 to INV2
    assert pair["designation"].endswith("≥ 13 A")  # 12.5 A rounded up
    ac = _line(bill, "cable", "ac")
    assert ac["quantity"] == 500.0 * 2 + 60.0 * 3
    # 600.5 V single-phase: 600.5 V to earth needs 1.8/3 kV; the line takes the higher class
    # although INV2's 400 V three-phase alone fits 0.6/1 kV, and 600.5 V three-phase would too
    assert ac["rated_voltage"] == "1.8/3 (3.6) kV"
    breakers = bill[bill["item"] == "AC breaker"]
    assert cells(breakers, ["rating_a", "poles", "quantity", "rated_voltage"]) == [
        (32.0, 2.0, 1.0, "600.5 V AC"),
        (32.0, 3.0, 1.0, "400 V AC"),
    ]


def test_breakers_of_one_rating_and_poles_share_a_line_at_the_highest_voltage():
    bill = hand_bill(
        voltage_v=[1000.0] * 5 + [400.0, 690.0],
        ac_breaker_a=[NAN] * 5 + [32.0, 32.0],
        conductors=[2, 2, 2, 2, 4, 3, 3],
        parallel=[1, 1, 1, 1, 2, 1, 1],
    )
    breakers = bill[bill["item"] == "AC breaker"]
    assert cells(breakers, ["rating_a", "poles", "quantity", "rated_voltage"]) == [
        (32.0, 3.0, 2.0, "690 V AC"),
    ]
    assert breakers.iloc[0]["designation"].endswith("Ue ≥ 690 V AC")
    assert _line(bill, "breaker total")["quantity"] == 2.0


def test_fuses_by_rating_in_order_and_circuits_without_one():
    """Two string fuse ratings, each 2 per protected string (one per pole); a string without a
    fuse and an a.c. circuit's fuse columns count nothing."""
    bill = hand_bill(
        fuse_a=[25.0, 15.0, NAN, NAN, NAN, 99.0, NAN],
        array_fuse_a=[7.0, NAN, NAN, 125.0, 400.0, 99.0, NAN],
    )
    fuses = bill[bill["family"] == "fuse"]
    assert cells(fuses, ["item", "kind", "rating_a", "quantity"]) == [
        ("string fuse", "string", 15.0, 2.0),
        ("string fuse", "string", 25.0, 2.0),
        ("sub-array fuse", "subarray", 125.0, 2.0),
        ("array fuse", "array", 400.0, 2.0),
        ("fuse total", None, None, 8.0),
    ]


def test_strings_to_an_array_combiner_and_sets_never_below_one():
    """A string may land on the array combiner (the array feeder's ``from_id``): a combiner
    too (1 lug and 1 connector pair per conductor). A ``parallel`` of 0 counts as one set."""
    bill = hand_bill(
        to_id=["CB1", "CB2", "INV2", "CB2", "INV1", "GRID", "GRID"],
        parallel=[1, 1, 1, 1, 2, 2, 0],
    )
    assert _line(bill, "termination", "string")["quantity"] == 4.0
    assert _line(bill, "connector pair", "string", size_mm2=4.0)["quantity"] == 4.0
    assert _line(bill, "AC breaker", "ac", rating_a=32.0)["poles"] == 3.0


def test_an_empty_schedule_gives_an_empty_bill():
    empty = hand_schedule().iloc[:0]
    segments = HAND_SEGMENTS.iloc[:0]
    bill = bill_of_quantities(empty, segments, 1500.0, "iec60947-2")
    assert bill.empty and list(bill.columns) == list(BILL_COLUMNS)


def test_dc_rating_between_conductors_is_the_dc_u_not_the_ac_u():
    # IEC 60502-1:2004 clause 4.1 (from memory) with the d.c. rule of 1.5 × U (HD 516 practice,
    # from memory): a 0.6/1 kV cable takes 1.5 kV d.c. between conductors, more than its a.c. U
    assert voltage_class(0.0, 1500.0, dc=True)["u_kv"] == 1.0
    assert voltage_class(0.0, 1500.5, dc=True)["u_kv"] == 3.0
    assert voltage_class(0.0, 4500.0, dc=True)["u_kv"] == 3.0
    assert voltage_class(0.0, 4500.5, dc=True) is None


def test_a_bill_without_connectors_and_fuses_keeps_the_families_after_them():
    """Only feeders (no string, so no connector pair; no fuse): the trench and breaker families
    still follow the cable and termination ones, each with its total, rows numbered 0..n-1."""
    keep = [3, 4, 5, 6]
    frame = hand_schedule().iloc[keep].reset_index(drop=True)
    frame["array_fuse_a"] = NAN
    bill = bill_of_quantities(frame, HAND_SEGMENTS.copy(), 1500.0, "iec60947-2")
    assert list(bill.index) == list(range(len(bill)))
    # the bill's columns are BILL_COLUMNS (its docstring), the total lines added: no other
    assert list(bill.columns) == list(BILL_COLUMNS)
    totals = bill[bill["item"].str.endswith(" total")]
    assert cells(totals, ["item", "quantity"]) == [
        ("cable total", 240.0 + 800.0 + 3000.0 + 180.0),
        ("termination total", 4.0 + 8.0 + 12.0 + 6.0),
        ("trench total", 180.0),
        ("unused trench total", 20.0),
        ("breaker total", 2.0),
    ]


def test_a_schedule_of_python_objects_gives_the_same_bill():
    """The schedule's columns as object columns of Python numbers (as a frame built from
    records may hold them): the same bill, line by line, as the hand computation."""
    plain = hand_bill()
    objects = bill_of_quantities(
        hand_schedule().astype(object), HAND_SEGMENTS.astype(object), 1500.0, "iec60947-2"
    )
    cols = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "quantity", "unit"]
    cols += ["rating_a", "poles", "designation", "rated_voltage", "note"]
    assert cells(objects, cols) == cells(plain, cols)
    assert cells(plain, ["quantity"])[:7] == [
        (160.0,),
        (80.0,),
        (240.0,),
        (800.0,),
        (3000.0,),
        (180.0,),
        (4460.0,),
    ]


def test_a_bill_note_is_a_warning_and_the_demo_has_none(demo_out):
    # `routeplan plan` prints every bill note among the failures (routeplan.cli.bill_notes):
    # a note is a warning, never information; the demo (1500 V DC, within every designation's
    # standard) has none, its unused trench and fuses included
    notes = [q["note"] for q in read_csv(demo_out() / "quantities.csv")]
    assert notes and all(n == "" for n in notes)
    assert any(q["item"] == "unused trench" for q in read_csv(demo_out() / "quantities.csv"))
