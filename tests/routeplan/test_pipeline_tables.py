"""The pipeline's tables and bill of quantities (:mod:`routeplan.pipeline`), quick enough for
mutation testing: one small site planned in memory (no outputs written), and the bill and
the summary of schedules written by hand. Every expected figure is counted or multiplied by
hand in the comments; the sizing itself is calc's (tested in tests/calc)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
import shapely
from numpy.testing import assert_allclose
from shapely.geometry import LineString

from calc.nec.sizes import size_from_label
from routeplan import CAUTION, __version__
from routeplan.config import parse_design
from routeplan.outputs.columns import CIRCUIT_COLUMNS, SEGMENT_COLUMNS
from routeplan.pipeline import circuit_table, plan, quantity_table, sizing_input, summarise

from ..conftest import SITE_TOML, base_frames, write_site

# The fixtures plan once per test (0.2 s), not once per module: mutmut runs for a mutant only
# the tests that called its function, and a module fixture's calls count for the first
# test alone.


@pytest.fixture
def small(tmp_path):
    """tests/conftest.py's tiny site (rows R1: 2 strings, R2: 3 strings → CB1 → INV1 → G1),
    trench T1 limited to 4 circuits, T2 to 5, and INV1 single-phase."""
    frames = base_frames()
    frames["trenches"]["max_circuits"] = [4, 5]
    frames["inverters"]["phases"] = [1]
    frames["inverters"]["ac_kva"] = [100.0]
    return plan(write_site(tmp_path / "site", frames))


def big_inverter(tmp_path, kva: float):
    """The tiny site with a three-phase inverter of ``kva`` at 800 V."""
    frames = base_frames()
    frames["inverters"]["ac_kva"] = [kva]
    return plan(write_site(tmp_path / "site", frames))


def test_tables_have_the_contract_columns(small):
    circuits = [c.name for c in CIRCUIT_COLUMNS]
    assert sorted(small.circuits.columns) == sorted([*circuits, "geometry"])
    segments = [c.name for c in SEGMENT_COLUMNS]
    assert sorted(small.segments.columns) == sorted([*segments, "geometry"])
    # counts are whole numbers
    for column in ("group_max", "conductors", "parallel"):
        assert small.circuits[column].dtype.kind == "i", column
    assert small.segments["cable_sets"].dtype.kind == "i"


def test_three_phase_conductors_are_three_per_parallel_set(tmp_path):
    # 600 kVA / (√3 x 800 V) = 433 A: more than one aluminium conductor per phase
    c = by_id(big_inverter(tmp_path, 600.0).circuits, "circuit_id")
    sets = int(c.loc["AC:INV1", "parallel"])
    assert sets >= 2
    assert c.loc["AC:INV1", "conductors"] == 3 * sets  # L1, L2, L3 in each set
    assert c.loc["A:CB1", "conductors"] == 2 * int(c.loc["A:CB1", "parallel"])
    assert c.loc["AC:INV1", "status"] == "ok"


def test_a_circuit_that_cannot_be_sized_is_fail(tmp_path):
    # 1200 kVA / (√3 x 800 V) = 866 A, derated in a group of 4 sets: more than the design's
    # most parallel sets (4) of the largest size carry
    p = big_inverter(tmp_path, 1200.0)
    c = by_id(p.circuits, "circuit_id")
    assert c.loc["AC:INV1", "status"] == "fail"
    assert (c.drop(index="AC:INV1")["status"] == "ok").all()
    # the plan gives the failing circuit its remedy (routeplan.remedy), the others none
    assert c.loc["AC:INV1", "remedy"].startswith("governed by ")
    assert (c.drop(index="AC:INV1")["remedy"] == "").all()
    assert p.summary["circuits"]["ac"]["fail"] == 1


def test_circuit_table_without_inverter_inputs_has_no_input(small):
    inp, _ = sizing_input(small.site, small.routes)
    table = circuit_table(small.routes, small.sizing, inp, small.design)
    assert table["input"].dtype == np.float64
    assert np.isnan(table["input"].to_numpy()).all()
    assert len(table) == 7
    # governing and remedy not given: the governing stretches are worked out here (those the
    # plan wrote), and the remedies are left blank (the tiny site passes anyway)
    assert table["remedy"].tolist() == [""] * 7
    plan_governing = dict(
        zip(small.circuits["circuit_id"], small.circuits["governing"], strict=True)
    )
    assert all(isinstance(g, str) and g for g in table["governing"])
    assert dict(zip(table["circuit_id"], table["governing"], strict=True)) == plan_governing


def by_id(frame: pd.DataFrame, key: str) -> pd.DataFrame:
    return frame.set_index(key)


def test_cable_schedule_per_kind(small):
    c = by_id(small.circuits, "circuit_id")
    # block order: the inverter's AC circuit, the combiner's array cable, its rows' strings
    assert c.index.tolist() == ["AC:INV1", "A:CB1", "R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3"]
    c = c.loc[["R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3", "A:CB1", "AC:INV1"]]
    assert c["kind"].tolist() == ["string"] * 5 + ["array", "ac"]
    assert c["from_id"].tolist() == ["R1", "R1", "R2", "R2", "R2", "CB1", "INV1"]
    assert c["to_id"].tolist() == ["CB1"] * 5 + ["INV1", "G1"]
    # conductors: 2 poles per DC circuit, 2 for a single-phase AC circuit (L and N)
    assert c["conductors"].tolist() == [2] * 6 + [2]
    # the reference voltage: the string's Vmp (26 modules x 41.2 V = 1071.2 V) on DC, the
    # inverter's 800 V on AC
    assert c["voltage_v"].tolist() == pytest.approx([26 * 41.2] * 6 + [800.0])
    # the power factor (the design default 0.9) only on AC
    assert np.isnan(c["power_factor"].to_numpy()[:6]).all()
    assert c.loc["AC:INV1", "power_factor"] == 0.9
    # fuses: the string fuses of the 5 parallel strings; none on the array and AC circuits
    fuse = c["fuse_a"].to_numpy()
    assert np.isfinite(fuse[:5]).all() and np.isnan(fuse[5:]).all()
    assert (c["status"] == "ok").all()
    # trench segments and the busiest segment on each route: T1's third part carries all 5
    # strings, its second part R2's 3
    assert c.loc["R2/S1", "trench_segments"] == "T1@10.0-20.0;T1@20.0-30.0;T2@0.0-3.0"
    assert c["group_max"].tolist() == [5, 5, 5, 5, 5, 1, 1]
    assert c.loc["R1/S1", "governing"] == "T1@20.0-30.0"
    assert c.loc["AC:INV1", "governing"] == "T2@58.0-108.0"
    assert c.loc["A:CB1", "governing"] == "stub INV1"
    # the inverter input each DC circuit lands on; AC circuits land on none
    assert c["input"].tolist()[:6] == [1.0] * 6 and math.isnan(c["input"].tolist()[6])
    # lengths as routed: R1 at y=10 meets T1 (x=42) 10 m above its corner; T1@20.0-30.0 and
    # T2@0.0-3.0 to
    # CB1 (45, 0): 10 + 3 + 2 m stub = 15 m of route
    assert c.loc["R1/S1", "route_m"] == pytest.approx(15.0)
    assert small.circuits.crs == small.segments.crs == "EPSG:32633"
    assert small.circuits.geometry.notna().all()


def test_trench_schedule_fill_against_capacity(small):
    s = by_id(small.segments, "segment_id")
    # hand: T1 runs (42, 30) → (42, 0), tapped by R2 at y = 20 (chainage 10) and R1 at y = 10
    # (chainage 20); T2 runs (42, 0) → (150, 0), tapped by CB1 at x = 45 (chainage 3), INV1 at
    # x = 100 (chainage 58) and ends at G1's x = 150 (chainage 108)
    assert s.index.tolist() == [
        "T1@0.0-10.0",
        "T1@10.0-20.0",
        "T1@20.0-30.0",
        "T2@0.0-3.0",
        "T2@3.0-58.0",
        "T2@58.0-108.0",
    ]
    assert s["trench_id"].tolist() == ["T1", "T1", "T1", "T2", "T2", "T2"]
    # circuits counted by hand: T1@10.0-20.0 carries R2's 3 strings, T1@20.0-30.0 and
    # T2@0.0-3.0 all 5
    assert s["circuits"].tolist() == [0, 3, 5, 5, 1, 1]
    assert s["cable_sets"].tolist() == [0, 3, 5, 5, 1, 1]
    assert s["strings"].tolist() == [0, 3, 5, 5, 0, 0]
    assert s["arrays"].tolist() == [0, 0, 0, 0, 1, 0]
    assert s["ac"].tolist() == [0, 0, 0, 0, 0, 1]
    assert s["subarrays"].tolist() == [0] * 6
    # fill = cable sets / capacity: T1 takes 4, so 0/4, 3/4, 5/4 (over); T2 takes 5, so
    # 5/5 (full, not over), 1/5, 1/5
    assert s["fill"].tolist() == pytest.approx([0.0, 0.75, 1.25, 1.0, 0.2, 0.2])
    assert s["max_circuits"].tolist() == [4.0, 4.0, 4.0, 5.0, 5.0, 5.0]
    assert s["status"].tolist() == ["ok", "ok", "over", "ok", "ok", "ok"]
    assert s["length_m"].tolist() == pytest.approx([10.0, 10.0, 10.0, 3.0, 55.0, 50.0])
    # chainage of the ends along the trench, the same hand cuts as the ids above
    assert s["from_m"].tolist() == pytest.approx([0.0, 10.0, 20.0, 0.0, 3.0, 58.0], abs=1e-9)
    assert s["to_m"].tolist() == pytest.approx([10.0, 20.0, 30.0, 3.0, 58.0, 108.0], abs=1e-9)
    assert s.loc["T1@20.0-30.0", "circuit_ids"] == "R1/S1;R1/S2;R2/S1;R2/S2;R2/S3"
    # shapely: from_m, to_m are where the segment's ends lie along its trench
    trench = small.site.layer("trenches").set_index("id").geometry
    lines = trench.loc[s["trench_id"]].to_numpy()
    ends = shapely.get_coordinates(s.geometry.to_numpy()).reshape(-1, 2, 2)  # 2-point segments
    located = [shapely.line_locate_point(lines, shapely.points(ends[:, k])) for k in (0, 1)]
    assert_allclose(s["from_m"], located[0], rtol=0, atol=1e-9)
    assert_allclose(s["to_m"], located[1], rtol=0, atol=1e-9)
    assert s["laying"].tolist() == ["direct"] * 3 + ["duct"] * 3
    # the 10 m of T1@0.0-10.0 carry no circuit (counted above)
    assert small.summary["segments"] == {
        "count": 6, "over_capacity": 1, "trench_m": 138.0, "unused_trench_m": 10.0,
    }  # fmt: skip
    assert small.summary["ok"] is False


DESIGN = parse_design({})[0]


def hand_circuits() -> pd.DataFrame:
    """Seven circuits written by hand (the columns the bill and the summary read)."""
    nan = math.nan
    return pd.DataFrame(
        {
            "circuit_id": ["S1", "S2", "S3", "U1", "A1", "A2", "AC1"],
            "kind": ["string", "string", "string", "subarray", "array", "array", "ac"],
            # S1, S2 land on combiner CB1 (which feeds CB2), S3 on the inverter's DC input
            "from_id": ["R1", "R1", "R2", "CB1", "CB2", "CB3", "INV1"],
            "to_id": ["CB1", "CB1", "INV1", "CB2", "INV1", "INV1", "G1"],
            "material": ["Cu", "Cu", "Cu", "Al", "Cu", "Cu", "Al"],
            "size_mm2": [4.0, 4.0, 6.0, 16.0, 95.0, 95.0, 240.0],
            "cable_m": [10.0, 20.5, 30.0, 40.004, 100.0, 50.0, 200.0],
            "parallel": [1, 1, 1, 1, 1, 2, 1],
            "conductors": [2, 2, 2, 2, 2, 4, 3],
            "insulation": ["PV", "PV", "PV", "XLPE", "XLPE", "XLPE", "XLPE"],
            "voltage_v": [1150.0] * 6 + [800.0],
            "design_current_a": [15.0, 15.0, 20.0, 60.0, 120.0, 200.0, 400.0],
            "fuse_a": [15.0, 15.0, 20.0, nan, nan, nan, nan],
            "array_fuse_a": [nan, nan, nan, 63.0, 125.0, nan, nan],
            "ac_breaker_a": [nan, nan, nan, nan, nan, nan, 400.0],
            "status": ["ok", "fail", "ok", "ok", "ok", "ok", "ok"],
            "vdrop_pct": [0.5, 1.25, 0.75, 0.4, 1.0, nan, 0.8],
            "vdrop_total_pct": [1.9, 2.65, 2.15, 1.4, 1.0, nan, 3.0],
            "utilisation": [0.5, 0.9, 0.7, 0.6, 0.8, 0.85, 0.95],
            "loss_w": [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0],
            "energy_loss_kwh": [10.0, 20.0, 30.0, 40.0, 50.0, 60.0, 70.0],
        }
    )


def hand_segments(status: tuple[str, ...] = ("ok", "ok", "ok")) -> pd.DataFrame:
    return pd.DataFrame(
        {
            "segment_id": ["T1@0.0-12.5", "T1@12.5-20.0", "T2@0.0-40.0"],
            "laying": ["direct", "direct", "duct"],
            "depth_m": [0.8, 0.8, 0.7],
            "length_m": [12.5, 7.5, 40.0],
            "status": list(status),
        }
    )


def test_bill_of_quantities_counted_by_hand():
    # kinds in the order string, sub-array, array, AC whatever their materials (the sub-array
    # cable is Al, the array cable Cu), and whatever the order of the circuits
    bill = quantity_table(hand_circuits().iloc[::-1], hand_segments(), DESIGN)
    assert list(bill.columns)[:10] == [
        "item", "kind", "material", "size_mm2", "laying", "depth_m", "quantity", "unit",
        "rating_a", "poles",
    ]  # fmt: skip
    rows = [
        (r.item, r.kind, r.material, r.size_mm2, r.laying, r.depth_m, r.quantity, r.unit,
         r.rating_a, r.poles)
        for r in bill.astype(object).where(bill.notna(), None).itertuples(index=False)
    ]  # fmt: skip
    n = None
    assert rows == [
        # cable: metres x conductors, by kind, material and size; then the family's total
        ("cable", "string", "Cu", 4.0, n, n, (10.0 + 20.5) * 2, "m", n, n),
        ("cable", "string", "Cu", 6.0, n, n, 30.0 * 2, "m", n, n),
        ("cable", "subarray", "Al", 16.0, n, n, 40.004 * 2, "m", n, n),
        ("cable", "array", "Cu", 95.0, n, n, 100.0 * 2 + 50.0 * 4, "m", n, n),
        ("cable", "ac", "Al", 240.0, n, n, 200.0 * 3, "m", n, n),
        ("cable total", n, n, n, n, n, 61.0 + 60.0 + 80.008 + 400.0 + 600.0, "m", n, n),
        # lugs: feeders 2 ends x conductors; strings to a combiner 1 end (the row end takes a
        # PV connector), S3 to the inverter none
        ("termination", "string", "Cu", 4.0, n, n, 2.0 + 2.0, "pcs", n, n),
        ("termination", "subarray", "Al", 16.0, n, n, 4.0, "pcs", n, n),
        ("termination", "array", "Cu", 95.0, n, n, 2 * (2 + 4), "pcs", n, n),
        ("termination", "ac", "Al", 240.0, n, n, 6.0, "pcs", n, n),
        ("termination total", n, n, n, n, n, 4.0 + 4.0 + 12.0 + 6.0, "pcs", n, n),
        # PV connector pairs: one per conductor at the row; S3 one more at the inverter
        ("connector pair", "string", "Cu", 4.0, n, n, 2.0 + 2.0, "pcs", n, n),
        ("connector pair", "string", "Cu", 6.0, n, n, 2 * 2, "pcs", n, n),
        ("connector pair total", n, n, n, n, n, 8.0, "pcs", n, n),
        # trench metres by laying and depth
        ("trench", n, n, n, "direct", 0.8, 20.0, "m", n, n),
        ("trench", n, n, n, "duct", 0.7, 40.0, "m", n, n),
        ("trench total", n, n, n, n, n, 60.0, "m", n, n),
        # fuses: one per pole (2) of each protected circuit, by rating
        ("string fuse", "string", n, n, n, n, 4.0, "pcs", 15.0, n),
        ("string fuse", "string", n, n, n, n, 2.0, "pcs", 20.0, n),
        ("sub-array fuse", "subarray", n, n, n, n, 2.0, "pcs", 63.0, n),
        ("array fuse", "array", n, n, n, n, 2.0, "pcs", 125.0, n),
        ("fuse total", n, n, n, n, n, 10.0, "pcs", n, n),
        # breakers: one per AC circuit, by rating and poles (3 conductors / 1 set)
        ("AC breaker", "ac", n, n, n, n, 1.0, "pcs", 400.0, 3.0),
        ("breaker total", n, n, n, n, n, 1.0, "pcs", n, n),
    ]
    devices = bill[bill["family"].isin(["fuse", "breaker"]) & bill["kind"].notna()]
    assert devices["designation"].tolist() == [
        "gPV fuse-link, IEC 60269-6, In 15 A, rated voltage ≥ 1500 V DC; body size and holder "
        "to suit the combiner",
        "gPV fuse-link, IEC 60269-6, In 20 A, rated voltage ≥ 1500 V DC; body size and holder "
        "to suit the combiner",
        "gPV fuse-link, IEC 60269-6, In 63 A, rated voltage ≥ 1500 V DC; body size and holder "
        "to suit the combiner",
        "gPV fuse-link, IEC 60269-6, In 125 A, rated voltage ≥ 1500 V DC; body size and holder "
        "to suit the combiner",
        "circuit-breaker, IEC 60947-2, In 400 A, 3-pole, rated operational voltage Ue ≥ 800 V AC",
    ]


def test_bill_of_ratings_read_as_objects_is_the_same():
    # rating columns that hold Python objects (as read back from a file) give the same bill,
    # and the devices' size column stays a number column (NaN)
    c = hand_circuits()
    bill = quantity_table(c, hand_segments(), DESIGN)
    for column in ("fuse_a", "array_fuse_a", "ac_breaker_a"):
        c[column] = c[column].astype(object)
    again = quantity_table(c, hand_segments(), DESIGN)
    pd.testing.assert_frame_equal(again, bill)
    assert bill["size_mm2"].dtype == np.float64
    assert bill["quantity"].dtype == np.float64


def test_bill_orders_materials_and_sizes_within_a_kind():
    c = hand_circuits().iloc[[2, 0, 1]].copy()  # 6 mm2 first in the input
    c.loc[:, "material"] = ["Cu", "Cu", "Al"]
    bill = quantity_table(c, hand_segments(), DESIGN)
    cable = bill[bill["item"] == "cable"]
    assert list(zip(cable["material"], cable["size_mm2"], strict=True)) == [
        ("Al", 4.0),
        ("Cu", 4.0),
        ("Cu", 6.0),
    ]


class Result:
    """The four arrays of a sizing result that calc.failure_causes reads."""

    def __init__(self, c: pd.DataFrame, capacity: list[bool], drop: list[bool]):
        n = len(c)
        self.ok = (c["status"] == "ok").to_numpy()
        self.ampacity_a = np.full(n, 100.0)
        self.design_current_a = np.where(capacity, 150.0, 50.0)
        self.vdrop_limit_pct = np.full(n, 1.0)
        self.vdrop_pct = np.where(drop, 2.0, 0.5)


def test_summary_counts_and_worst_values_by_kind(small):
    c = hand_circuits()
    # S2 fails on capacity and drop; nothing else fails
    r = Result(c, [False, True] + [False] * 5, [False, True] + [False] * 5)
    inputs = pd.DataFrame({"status": ["ok", "ok"]})
    s = summarise(small.site, DESIGN, c, hand_segments(), r, inputs)
    assert s["tool"] == {"name": "routeplan", "version": __version__}
    assert s["site"] == {"name": "Test site", "crs": "EPSG:32633", "crs_note": small.site.crs_note}
    assert s["site"]["crs_note"].startswith("EPSG:32633 (WGS 84 / UTM zone 33N)")
    assert s["rules"] == "iec"
    assert s["ok"] is False  # S2 fails
    assert list(s["circuits"]) == ["string", "subarray", "array", "ac"]
    assert s["circuits"]["string"] == {
        "circuits": 3,
        "fail": 1,
        "fail_capacity": 1,
        "fail_drop": 1,
        "fail_other": 0,
        "worst_vdrop_pct": 1.25,
        "worst_utilisation": 0.9,
        "loss_w": 6.0,
        "energy_loss_kwh": 60.0,
    }
    # A2 has no drop (NaN): the worst of the others
    assert s["circuits"]["array"]["worst_vdrop_pct"] == 1.0
    assert s["circuits"]["array"]["circuits"] == 2
    # the DC total leaves the AC circuit (3.0 %) out; keys in this order in summary.json
    assert s["worst_vdrop_pct"] == {
        "string": 1.25,
        "subarray": 0.4,
        "array": 1.0,
        "dc_total": 2.65,
        "ac": 0.8,
    }
    assert list(s["worst_vdrop_pct"]) == ["string", "subarray", "array", "dc_total", "ac"]
    # a hand-made schedule without circuit counts: every segment taken as used
    assert s["segments"] == {
        "count": 3, "over_capacity": 0, "trench_m": 60.0, "unused_trench_m": 0.0,
    }  # fmt: skip
    assert s["inverter_inputs"] == {"count": 2, "over_limit": 0}
    # conductor metres by material and size (sorted), rounded to the centimetre
    assert s["conductor_m"] == [
        # 2 x 40.004 = 80.008 m
        {"material": "Al", "size_mm2": 16.0, "size_label": "16 mm²", "conductor_m": 80.01},
        {"material": "Al", "size_mm2": 240.0, "size_label": "240 mm²", "conductor_m": 600.0},
        {"material": "Cu", "size_mm2": 4.0, "size_label": "4 mm²", "conductor_m": 61.0},
        {"material": "Cu", "size_mm2": 6.0, "size_label": "6 mm²", "conductor_m": 60.0},
        {"material": "Cu", "size_mm2": 95.0, "size_label": "95 mm²", "conductor_m": 400.0},
    ]
    assert s["conductor_m_total"] == 1201.01  # 1201.008 m
    # run metres: 10 + 20.5 + 30 + 40.004 + 100 + 50 + 200 = 450.504 m, to 2 decimals
    assert s["run_m_total"] == 450.5
    assert s["loss_w_total"] == 28.0
    assert s["energy_loss_kwh_total"] == 280.0
    assert s["drop_limits_pct"] == dict(DESIGN.drop_pct)
    assert s["caution"] == CAUTION


def test_summary_ok_needs_every_circuit_segment_and_input_ok(small):
    c = hand_circuits()
    c["status"] = "ok"
    none = [False] * 7
    r = Result(c, none, none)
    ok = pd.DataFrame({"status": ["ok"]})
    assert summarise(small.site, DESIGN, c, hand_segments(), r, ok)["ok"] is True
    assert summarise(small.site, DESIGN, c, hand_segments(), r)["ok"] is True  # no inputs
    over = hand_segments(("ok", "over", "ok"))
    s = summarise(small.site, DESIGN, c, over, r, ok)
    assert s["ok"] is False and s["segments"]["over_capacity"] == 1
    s = summarise(small.site, DESIGN, c, hand_segments(), r, pd.DataFrame({"status": ["over"]}))
    assert s["ok"] is False and s["inverter_inputs"] == {"count": 1, "over_limit": 1}
    # a failure that is neither capacity nor drop counts as "other"
    c.loc[3, "status"] = "fail"
    s = summarise(small.site, DESIGN, c, hand_segments(), Result(c, none, none), ok)
    assert s["circuits"]["subarray"]["fail_other"] == 1
    assert s["circuits"]["subarray"]["fail"] == 1


def test_summary_without_subarrays_or_with_a_kind_all_empty(small):
    c = hand_circuits().drop(index=3).reset_index(drop=True)
    c["vdrop_pct"] = c["vdrop_pct"].where(c["kind"] != "ac", math.nan)
    none = [False] * len(c)
    s = summarise(small.site, DESIGN, c, hand_segments(), Result(c, none, none))
    assert list(s["circuits"]) == ["string", "array", "ac"]
    assert "subarray" not in s["worst_vdrop_pct"]
    assert s["worst_vdrop_pct"]["ac"] is None  # no value at all: none, not NaN
    # the worst value is rounded to 4 decimals
    c.loc[1, "vdrop_pct"] = 1.234567  # S2, the worst string
    s = summarise(small.site, DESIGN, c, hand_segments(), Result(c, none, none))
    assert s["circuits"]["string"]["worst_vdrop_pct"] == 1.2346


def test_destinations_the_planner_filled_are_listed(tmp_path):
    # R1 has no 'to': the only combiner is its destination. R1 lies at y = 10.123 m: its
    # route is its 2 m stub to T1 (x = 42), 10.123 m down T1 to the corner and 3 m along T2
    # to CB1 (x = 45): 15.123 m, listed to the centimetre
    frames = base_frames()
    frames["rows"]["to"] = [None, "CB1"]
    e0, n0 = frames["rows"].geometry.iloc[0].coords[0]
    frames["rows"].loc[0, "geometry"] = LineString([(e0, n0 + 0.123), (e0 + 40, n0 + 0.123)])
    p = plan(write_site(tmp_path / "site", frames))
    assert p.summary["assigned"] == [
        {"layer": "rows", "id": "R1", "to": "CB1", "rule": "only", "route_m": 15.12}
    ]
    # every destination given: nothing listed
    assert plan(write_site(tmp_path / "given", base_frames())).summary["assigned"] == []


def test_the_first_trench_segment_can_govern(tmp_path):
    # T2 listed first (its parts are segments 0-2), both trenches in duct, T2 deeper (1.2 m)
    # than T1 (0.7 m): the strings share T1@20.0-30.0 and T2@0.0-3.0 (all 5 in each), and the
    # deeper one carries less (IEC 60364-5-52 depth correction, from memory: the deeper, the
    # lower), so T2@0.0-3.0, the very first segment, governs them
    frames = base_frames()
    t = frames["trenches"]
    t["depth_m"] = [0.7, 1.2]
    t["laying"] = ["duct", "duct"]
    frames["trenches"] = t.iloc[::-1].reset_index(drop=True)
    c = by_id(plan(write_site(tmp_path / "site", frames)).circuits, "circuit_id")
    strings = c[c["kind"] == "string"]
    assert len(strings) == 5 and strings["governing"].tolist() == ["T2@0.0-3.0"] * 5
    assert c.loc["AC:INV1", "governing"] == "T2@58.0-108.0"


def test_the_tables_are_in_the_sites_crs(small):
    """The schedules' geometry is in the site's working CRS (README, Outputs: routes.gpkg
    "in the site's working CRS"): conftest's site is in WGS 84 / UTM zone 33N."""
    assert small.circuits.crs == small.segments.crs
    assert small.circuits.crs.to_epsg() == 32633


def test_bill_lists_sub_arrays_before_arrays_whatever_their_size():
    """The bill follows the circuit kinds from the module to the inverter (string, sub-array,
    array, AC), also when a sub-array cable is larger than the array cables after it."""
    c = hand_circuits()
    c.loc[c["circuit_id"] == "U1", ["material", "size_mm2"]] = ["Cu", 150.0]
    bill = quantity_table(c, hand_segments(), DESIGN)
    cable = bill[bill["item"] == "cable"]
    assert list(zip(cable["kind"], cable["size_mm2"], strict=True)) == [
        ("string", 4.0),
        ("string", 6.0),
        ("subarray", 150.0),
        ("array", 95.0),
        ("ac", 240.0),
    ]


def test_summary_in_us_units_gives_feet_and_the_nec_size_labels(small):
    # the hand circuits sized in AWG / kcmil (NEC 2023 Chapter 9 Table 8 areas, calc.nec.sizes):
    # S1, S2 10 AWG Cu, S3 8 AWG Cu, U1 1/0 AWG Al, A1 and A2 250 kcmil Cu, AC1 250 kcmil Al.
    # Conductor metres as in test_summary_counts_and_worst_values_by_kind; feet = m / 0.3048
    # (the international foot, NIST SP 811 B.8), rounded to 2 decimals:
    # 80.008 m → 262.4934 ft, 600 → 1968.5039, 61 → 200.1312, 60 → 196.8504, 400 → 1312.3360;
    # total 1201.008 m → 3940.3150 ft; runs 450.504 m → 1478.0315 ft
    c = hand_circuits()
    c["size_mm2"] = size_from_label(
        ["10 AWG", "10 AWG", "8 AWG", "1/0 AWG", "250 kcmil", "250 kcmil", "250 kcmil"]
    )
    none = [False] * 7
    design = parse_design({"design": {"rules": "nec", "units": "us", "marking": "us"}})[0]
    s = summarise(small.site, design, c, hand_segments(), Result(c, none, none))
    assert (s["rules"], s["units"], s["marking"]) == ("nec", "us", "us")
    assert [(e["material"], e["size_label"], e["conductor_m"], e["conductor_ft"])
            for e in s["conductor_m"]] == [
        ("Al", "1/0 AWG", 80.01, 262.49),
        ("Al", "250 kcmil", 600.0, 1968.5),
        ("Cu", "10 AWG", 61.0, 200.13),
        ("Cu", "8 AWG", 60.0, 196.85),
        ("Cu", "250 kcmil", 400.0, 1312.34),
    ]  # fmt: skip
    assert s["conductor_m_total"] == 1201.01 and s["conductor_ft_total"] == 3940.31
    assert s["run_m_total"] == 450.5 and s["run_ft_total"] == 1478.03
    # metric units (the default): no feet anywhere in the summary
    s = summarise(small.site, DESIGN, c, hand_segments(), Result(c, none, none))
    assert (s["units"], s["marking"]) == ("si", "iec")
    assert "conductor_ft_total" not in s and "run_ft_total" not in s
    assert not [e for e in s["conductor_m"] if "conductor_ft" in e]


def test_cable_schedule_under_nec_in_us_units(tmp_path):
    # the tiny site under rules = "nec", units = "us": sizes labelled as NEC 2023 Chapter 9
    # Table 8 names them (10 AWG 5.261 mm², 2 AWG 33.63 mm², 300 kcmil 152.0 mm²), lengths also
    # in international feet (m / 0.3048, NIST SP 811 B.8: 55 m = 180.4462 ft), and the 690.8(B)
    # condition that governs: the larger of 1.25 × I / the 75 °C terminal ampacity (Table
    # 310.16, confirmed: 10 AWG 35 A, 2 AWG 115 A, 300 kcmil 285 A) and I / the corrected
    # ampacity. Strings: 20.3125 / 35 = 0.580 < 16.25 / 21.6 = 0.752: (B)(2); the array cable
    # 101.5625 / 115 = 0.883 > 81.25 / 140.4 = 0.579: (B)(1); the inverter output
    # 1.25 × 180.42 / 285 = 0.791 > 180.42 / 280.8 = 0.643: (B)(1)
    toml = SITE_TOML.replace(
        "snap_m = 20.0", 'snap_m = 20.0\nrules = "nec"\nunits = "us"\nmarking = "us"'
    )
    c = by_id(plan(write_site(tmp_path / "site", base_frames(), toml=toml)).circuits, "circuit_id")
    assert c["size_label"].to_dict() == {
        "AC:INV1": "300 kcmil",
        "A:CB1": "2 AWG",
        **dict.fromkeys(["R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3"], "10 AWG"),
    }
    assert_allclose(
        c["size_mm2"].loc[["R1/S1", "A:CB1", "AC:INV1"]], [5.261, 33.63, 152.0], rtol=1e-3
    )
    assert c.loc["AC:INV1", "route_m"] == 55.0
    assert round(c.loc["AC:INV1", "route_ft"], 4) == 180.4462
    assert_allclose(c["route_ft"], c["route_m"] / 0.3048, rtol=1e-12)
    assert_allclose(c["cable_ft"], c["cable_m"] / 0.3048, rtol=1e-12)
    assert c.loc["A:CB1", "design_current_a"] == 81.25 and c.loc["A:CB1", "ampacity_a"] == 140.4
    assert c["governing_condition"].to_dict() == {
        "AC:INV1": "690.8(B)(1)",
        "A:CB1": "690.8(B)(1)",
        **dict.fromkeys(["R1/S1", "R1/S2", "R2/S1", "R2/S2", "R2/S3"], "690.8(B)(2)"),
    }
