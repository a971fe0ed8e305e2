"""README promises on lengths, trench fill and the bill of quantities, end to end through the
command line, each checked against an outside reference named beside it:

- route and cable lengths of the hand-drawn lengths site (``promise_sites``) against hand
  geometry (Pythagoras) and the README's formula ``cable_m = route_m × (1 + slack) +
  2 × termination + row run``;
- the trench schedule's ``cable_sets``, ``fill`` and ``status`` against hand counts of the
  circuits each segment carries and their parallel sets, with the exit status and summary;
- ``quantities.csv`` against an independent sum over ``cable_schedule.csv`` (read with the csv
  module) and shapely's lengths of the input trench geometry (read with geopandas, projected
  with pyproj), on the lengths site and on the demo site.
"""

from __future__ import annotations

import csv
import json
import math
import tomllib
from collections import defaultdict
from pathlib import Path

import geopandas as gpd
import pytest
import shapely

from .promise_sites import (
    HAND,
    LENGTHS_TOML,
    ROW_M,
    ROW_RUN_FACTOR,
    SEGMENT_M,
    STUB_CB1,
    STUB_G1,
    STUB_INV1,
    hand_cable_m,
    hand_route_m,
    lengths_frames,
    plan_cli,
    write_and_plan,
    xy,
)

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
#: CSV rounding: lengths are written with 2 decimals
HALF_CENT = 0.005 + 1e-9


def read_rows(path: Path) -> list[dict[str, str]]:
    """A CSV file's records as Python's csv module reads them."""
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def by_id(path: Path, key: str) -> dict[str, dict[str, str]]:
    return {r[key]: r for r in read_rows(path)}


@pytest.fixture(scope="module")
def lengths_plan(tmp_path_factory) -> Path:
    _, out, result = write_and_plan(
        tmp_path_factory.mktemp("lengths"), lengths_frames(), LENGTHS_TOML, "--quiet"
    )
    assert result.exit_code == 0, result.output
    return out


# -- 1. lengths ------------------------------------------------------------------------------


def test_the_hand_geometry_itself():
    # Pythagoras: the 3-4-5, 6-8-10 and 5-12-13 triangles and R2's 18-24-30 long side
    assert (STUB_CB1, STUB_INV1, STUB_G1, ROW_M["R2"]) == (5.0, 10.0, 13.0, 30.0)
    assert hand_route_m("R1/S1") == 5 + 190 + 5 == 200.0
    assert hand_route_m("R2/S1") == 10 + 140 + 5 == 155.0
    assert hand_route_m("A:CB1") == 5 + 100 + 80 + 10 == 195.0
    assert hand_route_m("AC:INV1") == 10 + 80 + 100 + 13 == 203.0
    # cable_m: route × 1.04 + 2 × 1.5 m (+ 0.6 × row length for strings)
    assert hand_cable_m("R1/S1") == pytest.approx(208.0 + 3.0 + 24.0)
    assert hand_cable_m("R2/S1") == pytest.approx(161.2 + 3.0 + 18.0)
    assert hand_cable_m("AC:INV1") == pytest.approx(211.12 + 3.0)


def test_route_and_cable_lengths_are_the_hand_geometry(lengths_plan):
    c = by_id(lengths_plan / "cable_schedule.csv", "circuit_id")
    assert sorted(c) == sorted(HAND)
    for cid, (stub, segments) in HAND.items():
        row = c[cid]
        assert row["trench_segments"] == ";".join(segments), cid  # hand: the route's order
        assert float(row["stub_m"]) == pytest.approx(stub, abs=HALF_CENT), cid
        assert float(row["route_m"]) == pytest.approx(hand_route_m(cid), abs=HALF_CENT), cid
        row_run = ROW_RUN_FACTOR * ROW_M[row["from_id"]] if row["kind"] == "string" else 0.0
        assert float(row["row_run_m"]) == pytest.approx(row_run, abs=HALF_CENT), cid
        assert float(row["cable_m"]) == pytest.approx(hand_cable_m(cid), abs=HALF_CENT), cid


def test_segments_are_the_hand_cuts_with_the_hand_circuits(lengths_plan):
    t = by_id(lengths_plan / "trench_schedule.csv", "segment_id")
    assert sorted(t) == sorted(SEGMENT_M)
    on = defaultdict(set)  # hand: which circuits use each segment (from HAND)
    for cid, (_, segments) in HAND.items():
        for s in segments:
            on[s].add(cid)
    # hand chainage of each segment's ends: T1 runs east from x = 0, so a cut's chainage is its
    # x; T2 runs north from y = 0 and is not cut
    chainage = {
        "T1@0.0-10.0": ("0.00", "10.00"),
        "T1@10.0-60.0": ("10.00", "60.00"),
        "T1@60.0-100.0": ("60.00", "100.00"),
        "T1@100.0-200.0": ("100.00", "200.00"),
        "T2@0.0-80.0": ("0.00", "80.00"),
    }
    for sid, length in SEGMENT_M.items():
        row = t[sid]
        assert float(row["length_m"]) == pytest.approx(length, abs=HALF_CENT), sid
        assert (row["from_m"], row["to_m"]) == chainage[sid], sid
        assert set(row["circuit_ids"].split(";")) == on[sid], sid
        kinds = [
            "ac" if i.startswith("AC:") else "array" if i.startswith("A:") else "string"
            for i in on[sid]
        ]
        assert int(row["circuits"]) == len(on[sid])
        assert (int(row["strings"]), int(row["arrays"]), int(row["ac"])) == (
            kinds.count("string"),
            kinds.count("array"),
            kinds.count("ac"),
        ), sid


def test_route_lines_in_the_geopackage_are_the_hand_polylines(lengths_plan):
    """Each circuit's line in routes.gpkg (read with GDAL through geopandas) lies on the hand
    polyline from its source to its destination (shapely: Hausdorff distance 0)."""
    hand = {
        "R1/S1": [(10, 5), (10, 0), (200, 0), (203, 4)],
        "R2/S3": [(60, 10), (60, 0), (200, 0), (203, 4)],
        "A:CB1": [(203, 4), (200, 0), (100, 0), (100, 80), (106, 88)],
        "AC:INV1": [(106, 88), (100, 80), (100, 0), (0, 0), (-5, -12)],
    }
    lines = gpd.read_file(lengths_plan / "routes.gpkg", layer="circuits").set_index("circuit_id")
    for cid, points in hand.items():
        expected = shapely.LineString([xy(*p) for p in points])
        got = lines.loc[cid, "geometry"]
        assert shapely.hausdorff_distance(got, expected) < 1e-6, cid
        assert shapely.Point(got.coords[0]).distance(shapely.Point(xy(*points[0]))) < 1e-6, cid
        assert got.length == pytest.approx(hand_route_m(cid), abs=1e-6), cid


# -- 2. trench fill --------------------------------------------------------------------------


def hand_sets(cables: dict[str, dict[str, str]]) -> dict[str, int]:
    """Cable sets per segment: the circuits routed through it by hand (HAND), each counted
    as many times as the schedule lays it in parallel (README: "each parallel set counts as
    a circuit")."""
    sets: dict[str, int] = defaultdict(int)
    for cid, (_, segments) in HAND.items():
        for s in segments:
            sets[s] += int(cables[cid]["parallel"])
    return dict(sets)


def test_trench_fill_counts_parallel_sets_exactly_full_is_ok_over_full_fails(tmp_path):
    # without capacities: which circuits run in parallel sets
    _, out0, first = write_and_plan(tmp_path / "free", lengths_frames(), LENGTHS_TOML, "-q")
    assert first.exit_code == 0, first.output
    cables = by_id(out0 / "cable_schedule.csv", "circuit_id")
    sets = hand_sets(cables)
    assert sets["T2@0.0-80.0"] > 2  # the site is made so: a circuit on T2 in parallel sets
    t1 = max(v for k, v in sets.items() if k.startswith("T1@"))
    full = [k for k, v in sets.items() if k.startswith("T1@") and v == t1]

    # capacities given in cable sets (README: fill = cable_sets / max_cable_sets)
    def frames(cap: dict[str, float]):
        return lengths_frames(cap, capacity_key="max_cable_sets")

    # T1 at exactly its busiest segment's sets: fill 1.000, ok, exit 0
    _, out1, exact = write_and_plan(tmp_path / "exact", frames({"T1": t1}), LENGTHS_TOML)
    assert exact.exit_code == 0, exact.output
    t = by_id(out1 / "trench_schedule.csv", "segment_id")
    for sid, n in sets.items():
        assert int(t[sid]["cable_sets"]) == n, sid
    for sid in full:
        assert (t[sid]["fill"], t[sid]["status"]) == ("1.000", "ok"), sid
    for sid in SEGMENT_M:
        if sid.startswith("T1@"):
            assert t[sid]["fill"] == f"{sets[sid] / t1:.3f}" and t[sid]["status"] == "ok"
            assert t[sid]["fill_basis"] == "cable_sets"
        else:
            assert (t[sid]["max_cable_sets"], t[sid]["fill"]) == ("", "")  # no capacity
    assert "trench segments: 5, over capacity: 0" in exact.stdout

    # T2 for 2 cable sets, as many as the circuits it carries, but they need 3 or more sets:
    # over, exit 1
    _, out2, over = write_and_plan(tmp_path / "over", frames({"T1": t1, "T2": 2}), LENGTHS_TOML)
    assert over.exit_code == 1, over.output
    t = by_id(out2 / "trench_schedule.csv", "segment_id")
    assert (
        int(t["T2@0.0-80.0"]["circuits"]) == 2
        and int(t["T2@0.0-80.0"]["cable_sets"]) == sets["T2@0.0-80.0"]
    )
    assert (
        t["T2@0.0-80.0"]["fill"] == f"{sets['T2@0.0-80.0'] / 2:.3f}"
        and t["T2@0.0-80.0"]["status"] == "over"
    )
    assert [sid for sid in t if t[sid]["status"] == "over"] == ["T2@0.0-80.0"]
    c = by_id(out2 / "cable_schedule.csv", "circuit_id")
    assert {r["status"] for r in c.values()} == {"ok"}  # only the trench fails
    assert [c[i]["parallel"] for i in HAND] == [cables[i]["parallel"] for i in HAND]
    summary = json.loads((out2 / "summary.json").read_text(encoding="utf-8"))
    assert summary["ok"] is False and summary["segments"]["over_capacity"] == 1
    assert "trench segments: 5, over capacity: 1" in over.stdout
    said = next(line for line in over.stdout.splitlines() if line.startswith("result: "))
    assert "TRENCH SEGMENTS" in said and "FAIL A LIMIT" in said


# -- 3. quantities ---------------------------------------------------------------------------

#: current-carrying conductors per parallel set: DC + and −; three-phase AC L1 L2 L3 (PV
#: inverter outputs are three-wire, no neutral — common practice); single-phase L and N
CONDUCTORS = {"dc": 2, 3: 3, 1: 2}
#: protective devices per protected circuit: a fuse in each pole of an unearthed PV array
#: (IEC 62548, from memory), one breaker per inverter output
FUSES_PER_CIRCUIT, BREAKERS_PER_CIRCUIT = 2, 1
#: IEC 62548 names the protection of a sub-array cable and of an array cable apart
ARRAY_FUSE_ITEM = {"subarray": "sub-array fuse", "array": "array fuse"}


def number(text: str) -> float | None:
    return float(text) if text else None


def expected_bill(
    cables: list[dict[str, str]], phases: dict[str, int], trench_m: dict[tuple, float]
) -> dict[tuple, float]:
    """The bill of quantities summed independently from the cable schedule's rows: conductor
    metres = cable_m × conductors × parallel; a lug per conductor end of a feeder, a PV
    connector pair at a string's row end and a lug at its combiner end (a connector pair where
    it lands on an inverter); string and array fuses 2 per circuit that has one (by rating),
    AC breakers 1 each (by rating and poles); trench metres as given. Key: item, kind,
    material, size, laying, depth, rating, poles."""
    bill: dict[tuple, float] = defaultdict(float)
    combiners = {r["from_id"] for r in cables if r["kind"] in ("subarray", "array")}
    for r in cables:
        per_set = CONDUCTORS["dc"] if r["kind"] != "ac" else CONDUCTORS[phases[r["from_id"]]]
        n = per_set * int(r["parallel"])
        key = (r["kind"], r["material"], float(r["size_mm2"]), None, None, None, None)
        bill[("cable", *key)] += float(r["cable_m"]) * n
        if r["kind"] != "string":
            bill[("termination", *key)] += 2 * n
        elif r["to_id"] in combiners:
            bill[("termination", *key)] += n
            bill[("connector pair", *key)] += n
        else:
            bill[("connector pair", *key)] += 2 * n
        for column, item, per in (
            ("fuse_a", "string fuse", FUSES_PER_CIRCUIT),
            ("array_fuse_a", ARRAY_FUSE_ITEM.get(r["kind"]), FUSES_PER_CIRCUIT),
            ("ac_breaker_a", "AC breaker", BREAKERS_PER_CIRCUIT),
        ):
            if r[column]:
                poles = per_set if item == "AC breaker" else None
                device = (None, None, None, None, float(r[column]), poles)
                bill[(item, r["kind"], *device)] += per
    for (laying, depth), metres in trench_m.items():
        bill[("trench", None, None, None, laying, depth, None, None)] += metres
    return dict(bill)


def written_bill(path: Path) -> dict[tuple, float]:
    bill = {}
    for r in read_rows(path):
        if r["item"].endswith(" total"):  # a family's total (tests/routeplan/test_quantities)
            continue
        key = (
            r["item"],
            r["kind"] or None,
            r["material"] or None,
            number(r["size_mm2"]),
            r["laying"] or None,
            number(r["depth_m"]),
            number(r["rating_a"]),
            int(r["poles"]) if r["poles"] else None,
        )
        if key[0] == "unused trench":  # the input layer's lengths count both parts of the
            key = ("trench", *key[1:])  # trench (the split: tests/routeplan/test_quantities)
            bill[key] = bill.get(key, 0.0) + float(r["quantity"])
            continue
        assert key not in bill, key  # one line per item
        bill[key] = bill.get(key, 0.0) + float(r["quantity"])
    return bill


def input_trench_m(path: Path, crs: str, laying: str, depth_m: float) -> dict[tuple, float]:
    """Trench metres by laying and depth from the input layer: shapely's lengths of the
    features in the working CRS (projected with pyproj through geopandas), the design
    defaults where a trench says nothing."""
    trenches = gpd.read_file(path).to_crs(crs)
    lay = trenches["laying"].fillna(laying) if "laying" in trenches else laying
    depth = trenches["depth_m"].fillna(depth_m) if "depth_m" in trenches else depth_m
    frame = trenches.assign(lay=lay, dep=depth, m=shapely.length(trenches.geometry.values))
    sums = frame.groupby(["lay", "dep"])["m"].sum()
    return {(lay, round(float(dep), 2)): float(m) for (lay, dep), m in sums.items()}


def check_bill(out: Path, phases: dict[str, int], trench_m: dict[tuple, float], trench_tol: float):
    cables = read_rows(out / "cable_schedule.csv")
    expected = expected_bill(cables, phases, trench_m)
    got = written_bill(out / "quantities.csv")
    assert sorted(got, key=repr) == sorted(expected, key=repr)
    conductors = sum(
        v / 2 for k, v in expected.items() if k[0] == "termination" and k[1] != "string"
    ) + sum(v for k, v in expected.items() if k[0] == "connector pair")
    for key, value in expected.items():
        if key[0] == "cable":  # each cable_m is rounded to 2 decimals in the schedule
            assert got[key] == pytest.approx(value, abs=0.005 * conductors + 0.005), key
        elif key[0] == "trench":
            assert got[key] == pytest.approx(value, abs=trench_tol), key
        else:  # counts are exact
            assert got[key] == value, key
    return got


def test_quantities_of_the_lengths_site_are_the_sum_of_its_schedule(lengths_plan):
    trench_m = {("direct", 0.8): 200.0, ("duct", 0.7): 80.0}  # hand: T1, T2 (default depth)
    got = check_bill(lengths_plan, {"INV1": 3}, trench_m, trench_tol=HALF_CENT)
    # hand: 5 strings × 2 conductors × (200 or 155 m routes …): the string cable in total
    strings = sum(hand_cable_m(c) for c in HAND if "/S" in c) * 2
    assert sum(v for k, v in got.items() if k[:2] == ("cable", "string")) == pytest.approx(
        strings, abs=0.01
    )
    # 5 strings × 2 conductors: a lug at the combiner, a PV connector pair at the row
    assert sum(v for k, v in got.items() if k[:2] == ("termination", "string")) == 5 * 2
    assert sum(v for k, v in got.items() if k[:2] == ("connector pair", "string")) == 5 * 2
    # the site is made so that strings need fuses (4 others × 1.25 × 13 A > 25 A)
    assert sum(v for k, v in got.items() if k[0] == "string fuse") == 5 * FUSES_PER_CIRCUIT
    assert sum(v for k, v in got.items() if k[0] == "AC breaker") == 1


@pytest.fixture(scope="module")
def demo_plan(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("demo") / "out"
    result = plan_cli(DEMO, out, "--quiet", "--no-cache")
    assert result.exit_code == 0, result.output
    return out


def test_quantities_of_the_demo_are_the_sum_of_its_schedule(demo_plan):
    toml = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))
    crs = toml["site"]["crs"]
    assert toml["design"]["depth_m"] == "700 mm" and toml["design"]["laying"] == "direct"
    trench_m = input_trench_m(DEMO / "trenches.geojson", crs, "direct", 0.7)
    phases = dict(
        gpd.read_file(DEMO / "inverters.geojson")[["id", "phases"]].itertuples(index=False)
    )
    # 0.01 m: the CSV's 2 decimals, and GeoJSON's 7-decimal degrees (about 1 cm; RFC 7946
    # recommends 6) of the input lines
    got = check_bill(demo_plan, {k: int(v) for k, v in phases.items()}, trench_m, trench_tol=0.01)
    items = {k[0] for k in got}
    # the demo is made so that every kind of device appears
    assert items == {
        "cable",
        "termination",
        "connector pair",
        "trench",
        "string fuse",
        "sub-array fuse",
        "array fuse",
        "AC breaker",
    }
    cables = read_rows(demo_plan / "cable_schedule.csv")
    assert any(int(r["parallel"]) > 1 for r in cables)  # parallel sets are in the sums
    assert math.isclose(
        sum(trench_m.values()), sum(v for k, v in got.items() if k[0] == "trench"), abs_tol=0.02
    )
