"""``quantities.csv`` (the bill of quantities) against an independent sum of the schedules.

Both files are read with Python's csv module; the expected bill is summed here, line by line
of ``cable_schedule.csv`` and ``trench_schedule.csv``, from the rules the README states:

- cable metres per kind, material and size: the conductor metres of every circuit, i.e.
  ``cable_m`` (route × (1 + slack) + 2 × termination + row run, the allowances once) times its
  current-carrying conductors — d.c. 2 (+ and −), three-phase a.c. 3 (L1 L2 L3), single-phase
  a.c. 2 (L and N) — times its parallel sets;
- terminations: one per conductor end (2 × conductors);
- trench metres per laying and depth: the segments' lengths;
- string, sub-array and array fuses: one per pole (2) of each protected circuit, by rating (gPV,
  IEC 60269-6); AC breakers: one per a.c. circuit, by rating.
"""

from __future__ import annotations

import csv
import tomllib
from collections import defaultdict
from pathlib import Path

import geopandas as gpd
import openpyxl
import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import base_frames, write_site

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
runner = CliRunner()

#: current-carrying conductors per parallel set (the schedule column ``conductors``; PV
#: inverter outputs three-wire without neutral — common practice)
POLES = {("dc", None): 2, ("ac", 3): 3, ("ac", 1): 2}
#: bill order: items, then kinds in the order power flows (string → array → AC)
ITEMS = [
    "cable",
    "termination",
    "trench",
    "string fuse",
    "sub-array fuse",
    "array fuse",
    "AC breaker",
]
KINDS = ["string", "subarray", "array", "ac"]
#: IEC 62548 names the protection of a sub-array cable and of an array cable apart
ARRAY_FUSE_ITEM = {"subarray": "sub-array fuse", "array": "array fuse"}


def read_csv(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def plan(site: Path, out: Path) -> Path:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    return out


def allowances(site: Path) -> tuple[float, float]:
    a = tomllib.loads((site / "site.toml").read_text(encoding="utf-8")).get("allowances", {})
    return float(a.get("slack_pct", 3.0)), float(a.get("termination_m", 1.0))  # README's defaults


def expected_bill(out: Path, site: Path, phases: dict[str, int], device: str) -> dict:
    """The bill summed from the two schedules: {(item, kind, material, size, laying, depth):
    quantity} and, per cable line, the tolerance of the sum (each schedule value is rounded
    to 2 decimals)."""
    slack, term = allowances(site)
    bill: dict[tuple, float] = defaultdict(float)
    tol: dict[tuple, float] = defaultdict(float)
    for c in read_csv(out / "cable_schedule.csv"):
        kind = c["kind"]
        poles = POLES[("ac", phases[c["from_id"]]) if kind == "ac" else ("dc", None)]
        conductors = poles * int(c["parallel"])
        # the allowances applied once, to the routed length (README, "Method in brief")
        cable_m = float(c["route_m"]) * (1 + slack / 100) + 2 * term + float(c["row_run_m"])
        key = ("cable", kind, c["material"], float(c["size_mm2"]))
        bill[key] += cable_m * conductors
        tol[key] += 0.0103 * conductors  # route_m and row_run_m rounded to 0.005 m
        bill[("termination", kind, c["material"], float(c["size_mm2"]))] += 2 * conductors
        for column, item, per in (
            ("fuse_a", "string fuse", 2),
            ("array_fuse_a", ARRAY_FUSE_ITEM.get(kind), 2),
            ("ac_breaker_a", "AC breaker", 1),
        ):
            if c[column]:
                label = f"{float(c[column]):g} A " + ("gPV" if "fuse" in item else device)
                bill[(item, kind, label, None)] += per
    for s in read_csv(out / "trench_schedule.csv"):
        bill[("trench", s["laying"], float(s["depth_m"]))] += float(s["length_m"])
    return bill, tol


def written_bill(out: Path) -> list[tuple[tuple, float]]:
    rows = []
    for q in read_csv(out / "quantities.csv"):
        if q["item"] == "trench":
            key = ("trench", q["laying"], float(q["depth_m"]))
        elif q["item"] in ("cable", "termination"):
            key = (q["item"], q["kind"], q["material"], float(q["size_mm2"]))
        else:
            assert q["size_mm2"] == "" and q["laying"] == "" and q["depth_m"] == ""
            key = (q["item"], q["kind"], q["material"], None)
        assert q["unit"] == ("m" if q["item"] in ("cable", "trench") else "pcs"), q
        rows.append((key, float(q["quantity"])))
    return rows


def check_bill(out: Path, site: Path, phases: dict[str, int], device: str) -> None:
    bill, tol = expected_bill(out, site, phases, device)
    rows = written_bill(out)
    assert len(rows) == len({k for k, _ in rows})  # one line per key
    assert {k for k, _ in rows} == set(bill)
    for key, quantity in rows:
        if key[0] in ("cable", "trench"):
            assert quantity == pytest.approx(bill[key], abs=tol[key] + 0.005), key
        else:  # counts: exact
            assert quantity == bill[key], key


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    return plan(DEMO, tmp_path_factory.mktemp("bill") / "out")


def test_demo_bill_is_the_sum_of_its_schedules(demo_out):
    device = tomllib.loads((DEMO / "site.toml").read_text())["design"]["ac_breaker_device"]
    inverters = gpd.read_file(DEMO / "inverters.geojson")
    phases = {i: int(p) for i, p in zip(inverters["id"], inverters["phases"], strict=True)}
    check_bill(demo_out, DEMO, phases, device)


def test_demo_bill_has_every_kind_of_line(demo_out):
    items = {k[0] for k, _ in written_bill(demo_out)}
    assert items == set(ITEMS)  # the demo protects strings and arrays and has AC breakers


def test_demo_cable_metres_equal_the_schedules_conductor_metres(demo_out):
    # the bill's cable line equals Σ cable_m × conductors of the schedule (allowances are in
    # cable_m already: none added again)
    per: dict[tuple, float] = defaultdict(float)
    n: dict[tuple, int] = defaultdict(int)
    for c in read_csv(demo_out / "cable_schedule.csv"):
        key = ("cable", c["kind"], c["material"], float(c["size_mm2"]))
        per[key] += float(c["cable_m"]) * int(c["conductors"])
        n[key] += int(c["conductors"])
    rows = dict(written_bill(demo_out))
    for key, metres in per.items():
        assert rows[key] == pytest.approx(metres, abs=0.005 * n[key] + 0.005), key


def assert_bill_order(out: Path) -> None:
    keys = [k for k, _ in written_bill(out)]
    item_rank = [ITEMS.index(k[0]) for k in keys]
    assert item_rank == sorted(item_rank)  # cable, termination, trench, fuses, breakers
    for item in ("cable", "termination"):
        lines = [k for k in keys if k[0] == item]
        # by kind as power flows, then material, then size
        order = [(KINDS.index(k[1]), k[2], k[3]) for k in lines]
        assert order == sorted(order), item
    trench = [k[1:] for k in keys if k[0] == "trench"]
    assert trench == sorted(trench)  # by laying, then depth


def test_demo_bill_order(demo_out):
    assert_bill_order(demo_out)


def test_demo_bill_in_the_workbook_has_numbers(demo_out):
    # the workbook's quantities sheet as openpyxl reads it: sizes, depths and quantities are
    # numbers (README: "numbers as numbers"), empty where they do not apply
    wb = openpyxl.load_workbook(demo_out / "cable_schedule.xlsx", read_only=True)
    rows = wb["quantities"].iter_rows(values_only=True)
    header = [str(h).split(" [")[0] for h in next(rows)]
    lines = [dict(zip(header, r, strict=True)) for r in rows]
    assert len(lines) == len(read_csv(demo_out / "quantities.csv"))
    for line in lines:
        assert isinstance(line["quantity"], int | float), line
        for name in ("size_mm2", "depth_m"):
            assert line[name] is None or isinstance(line[name], int | float), (name, line)
        sized = line["item"] in ("cable", "termination")
        assert (line["size_mm2"] is not None) == sized, line


@pytest.mark.parametrize("phases", [3, 1])
def test_bill_of_a_small_site_single_or_three_phase(tmp_path, phases):
    frames = base_frames()
    frames["inverters"]["phases"] = [phases]
    site = write_site(tmp_path / "site", frames)
    out = plan(site, tmp_path / "out")
    check_bill(out, site, {"INV1": phases}, "iec60947-2")  # the default breaker device
    # array Cu 16 mm², AC Al 300 mm²: by kind first (power flow), not by material
    assert_bill_order(out)
    ac = next(c for c in read_csv(out / "cable_schedule.csv") if c["kind"] == "ac")
    assert int(ac["conductors"]) == POLES[("ac", phases)] * int(ac["parallel"])
