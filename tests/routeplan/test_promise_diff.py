"""README, Features, "Shows what a layout change did": ``routeplan diff OLD NEW`` on hand-made
edits of the lengths site (``promise_sites``): row R1 gives 1 string instead of 2, row R2 5
instead of 3, and combiner CB1 moves from 3 m east / 4 m north of T1's east end to 6 m east /
8 m north. Every section (circuits added, removed and changed, trench segments, quantities)
is checked against hand arithmetic and against the two plans' own schedules read with the
csv module: the old value from the old plan, the new one from the new plan, each delta
(new − old) against exact decimal arithmetic (Python's decimal module)."""

from __future__ import annotations

import csv
import math
from collections import defaultdict
from decimal import Decimal
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from .promise_sites import (
    LENGTHS_TOML,
    ROW_M,
    ROW_RUN_FACTOR,
    SLACK_PCT,
    STUB_CB1,
    TERMINATION_M,
    hand_cable_m,
    hand_route_m,
    lengths_frames,
    write_and_plan,
)

runner = CliRunner()
#: CB1's new stub: 6 m east, 8 m north of T1's east end (Pythagoras)
STUB_CB1_MOVED = math.hypot(6, 8)


def read_rows(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


@pytest.fixture(scope="module")
def plans(tmp_path_factory) -> dict[str, Path]:
    tmp = tmp_path_factory.mktemp("edits")
    _, old, a = write_and_plan(tmp / "old", lengths_frames(), LENGTHS_TOML, "-q")
    edit = lengths_frames(strings=(1, 5), cb=(206.0, 8.0))
    _, new, b = write_and_plan(tmp / "new", edit, LENGTHS_TOML, "-q")
    assert a.exit_code == b.exit_code == 0, (a.output, b.output)
    return {"old": old, "new": new, "tmp": tmp}


def run_diff(old: Path, new: Path, out: Path):
    result = runner.invoke(app, ["diff", str(old), str(new), "--out", str(out)])
    assert result.exit_code == 0, result.output
    return result, read_rows(out / "diff.csv")


def hand_delta(old: str, new: str) -> str:
    """new − old in exact decimal arithmetic (Python's decimal module), with the decimals the
    cells are written with, and a sign: the reference for diff.csv's delta."""
    a, b = Decimal(old), Decimal(new)
    places = max(-a.as_tuple().exponent, -b.as_tuple().exponent, 0)
    d = (b - a).quantize(Decimal(1).scaleb(-places))
    return f"{'-' if d < 0 else '+'}{abs(d)}"


def moved_route_m(cid: str) -> float:
    """Hand: circuits that end or start at CB1 are 5 m longer (stub 10 m instead of 5 m)."""
    ends_at_cb1 = "/S" in cid or cid == "A:CB1"
    return hand_route_m(cid) + (STUB_CB1_MOVED - STUB_CB1 if ends_at_cb1 else 0.0)


def moved_cable_m(cid: str) -> float:
    row_run = ROW_RUN_FACTOR * ROW_M[cid.split("/")[0]] if "/S" in cid else 0.0
    return moved_route_m(cid) * (1 + SLACK_PCT / 100) + 2 * TERMINATION_M + row_run


def test_circuits_added_removed_and_changed(plans):
    result, rows = run_diff(plans["old"], plans["new"], plans["tmp"] / "d1")
    circuits = [r for r in rows if r["section"] == "circuit"]
    by = defaultdict(set)
    for r in circuits:
        by[r["change"]].add(r["id"])
    assert by["added"] == {"R2/S4", "R2/S5"}  # hand: R2 gives 5 strings instead of 3
    assert by["removed"] == {"R1/S2"}  # hand: R1 gives 1 string instead of 2
    # hand: route and cable lengths of the circuits through CB1's stub, old → new
    survivors = ["R1/S1", "R2/S1", "R2/S2", "R2/S3", "A:CB1"]
    for field, old, new in (
        ("route_m", hand_route_m, moved_route_m),
        ("cable_m", hand_cable_m, moved_cable_m),
    ):
        got = {r["id"]: (r["old"], r["new"]) for r in circuits if r["field"] == field}
        assert got == {c: (f"{old(c):.2f}", f"{new(c):.2f}") for c in survivors}, field
    # AC:INV1 does not pass CB1: its route and cable are the same, but it shares T1 from 60
    # to 100 m with the strings (one more there): only its values change (scope value),
    # grouped with one cable set more (7 → 8)
    ac = [r for r in circuits if r["id"] == "AC:INV1"]
    assert {r["scope"] for r in ac} == {"value"}
    assert not {r["field"] for r in ac} & {"route_m", "cable_m", "size_mm2", "trench_segments"}
    assert {r["field"]: (r["old"], r["new"]) for r in ac}["group_count"] == ("7", "8")
    # the five survivors through CB1 changed their route length: scope route
    assert {r["scope"] for r in circuits if r["id"] in survivors} == {"route"}
    assert by["changed"] == {*survivors, "AC:INV1"}
    # every changed value: the old plan's cell before the arrow, the new plan's after it, and
    # a number's delta new − old as exact decimal arithmetic gives it
    old = {r["circuit_id"]: r for r in read_rows(plans["old"] / "cable_schedule.csv")}
    new = {r["circuit_id"]: r for r in read_rows(plans["new"] / "cable_schedule.csv")}
    numbers = 0
    for r in circuits:
        if r["change"] == "changed":
            assert (r["old"], r["new"]) == (old[r["id"]][r["field"]], new[r["id"]][r["field"]])
            if r["delta"]:
                assert r["delta"] == hand_delta(r["old"], r["new"]), r
                numbers += 1
    assert numbers > 10
    assert set(old) - set(new) == by["removed"] and set(new) - set(old) == by["added"]
    out = result.stdout
    # hand: 6 changed = the 5 survivors through CB1 and AC:INV1
    assert "circuits: 2 added, 1 removed, 6 changed\n" in out
    assert "  + R2/S4: new string circuit\n" in out and "  + R2/S5: new string circuit\n" in out
    assert "  - R1/S2: string circuit removed\n" in out
    # hand: route +5 m (the stub), cable +5 × 1.04 = +5.20 m (slack 4 %)
    step = f"{(moved_cable_m('R1/S1') - hand_cable_m('R1/S1')):+.2f}"
    assert step == "+5.20"
    assert f"  ~ R1/S1: route_m 200.00 → 205.00 (+5.00); cable_m 235.00 → 240.20 ({step}); " in out
    assert f"; route_m 195.00 → 200.00 (+5.00); cable_m 205.80 → 211.00 ({step}); " in out
    assert "  ~ A:CB1: size_mm2 " in out  # one string more: a size up, named first
    # AC:INV1 listed under its values, after the circuits whose own route changed
    assert "  ~ AC:INV1: " in out.split(" their values (same route and cable):\n")[1]


def test_trench_segments_whose_counts_changed(plans):
    result, rows = run_diff(plans["old"], plans["new"], plans["tmp"] / "d2")
    seg = [r for r in rows if r["section"] == "segment"]
    got = {(r["id"], r["field"]): (r["old"], r["new"], r["delta"], r["change"]) for r in seg}
    counts = {k: v for k, v in got.items() if k[1] != "group_factor"}
    # hand: T1 from 10 to 60 m carries R1's strings and the AC circuit (2 parallel sets);
    # from 60 to 100 m R1's and R2's strings and the AC circuit; from 100 to 200 m R1's and
    # R2's strings and the array cable: one string less on the first, one more on the others.
    # T1 from 0 to 10 m and T2 carry no string: unchanged
    assert counts == {
        ("T1@10.0-60.0", "circuits"): ("3", "2", "-1", "changed"),
        ("T1@10.0-60.0", "strings"): ("2", "1", "-1", "changed"),
        ("T1@10.0-60.0", "cable_sets"): ("4", "3", "-1", "changed"),  # 2 + 2 → 1 + 2
        ("T1@60.0-100.0", "circuits"): ("6", "7", "+1", "changed"),
        ("T1@60.0-100.0", "strings"): ("5", "6", "+1", "changed"),
        ("T1@60.0-100.0", "cable_sets"): ("7", "8", "+1", "changed"),  # 5 + 2 → 6 + 2
        ("T1@100.0-200.0", "circuits"): ("6", "7", "+1", "changed"),
        ("T1@100.0-200.0", "strings"): ("5", "6", "+1", "changed"),
        ("T1@100.0-200.0", "cable_sets"): ("6", "7", "+1", "changed"),  # 5 + 1 → 6 + 1
    }
    # the grouping factor in force: as each plan's trench schedule writes it, lower with more
    # cable sets and higher with fewer (grouping factors fall with the number of grouped
    # circuits: IEC 60364-5-52, Table B.52.18/B.52.19, from memory)
    old = {r["segment_id"]: r for r in read_rows(plans["old"] / "trench_schedule.csv")}
    new = {r["segment_id"]: r for r in read_rows(plans["new"] / "trench_schedule.csv")}
    for (sid, field), (o, n, d, _) in got.items():
        assert (o, n) == (old[sid][field], new[sid][field])
        assert d == hand_delta(o, n)
        if field == "group_factor":
            fewer = int(new[sid]["cable_sets"]) < int(old[sid]["cable_sets"])
            assert (float(n) > float(o)) == fewer, sid
    assert {k[0] for k in got} == {"T1@10.0-60.0", "T1@60.0-100.0", "T1@100.0-200.0"}
    assert {r["scope"] for r in seg} == {""}  # scope and cause are circuits' only
    assert "trench segments: 3 changed\n" in result.stdout
    assert (
        "  changed: T1@60.0-100.0: circuits 6 → 7 (+1); strings 5 → 6 (+1); "
        "cable_sets 7 → 8 (+1); group_factor "
    ) in result.stdout


def quantity_key(r: dict[str, str]) -> tuple[str, ...]:
    keys = ("item", "kind", "material", "size_mm2", "laying", "depth_m", "unit")
    # a device's rating and poles, as the diff names them ("AC breaker ac pcs 80 A 3-pole")
    device = (
        f"{r['rating_a']} A" if r["rating_a"] else "",
        f"{r['poles']}-pole" if r["poles"] else "",
    )
    return tuple(r[k] for k in keys) + device


def test_quantity_deltas(plans):
    result, rows = run_diff(plans["old"], plans["new"], plans["tmp"] / "d3")
    q = [r for r in rows if r["section"] == "quantity"]
    old = {
        quantity_key(r): float(r["quantity"]) for r in read_rows(plans["old"] / "quantities.csv")
    }
    new = {
        quantity_key(r): float(r["quantity"]) for r in read_rows(plans["new"] / "quantities.csv")
    }
    # every line whose quantity differs is listed once, old and new from the right plan
    differing = {k for k in old.keys() | new.keys() if old.get(k, 0.0) != new.get(k, 0.0)}
    assert len(q) == len(differing)
    named = {" ".join(v for v in k if v): k for k in differing}  # "cable string Cu 6 m"
    listed = {}
    for r in q:
        key = named[r["id"]]
        listed[key] = r
        assert (float(r["old"]), float(r["new"])) == (old.get(key, 0.0), new.get(key, 0.0))
        expected = "added" if key not in old else "removed" if key not in new else "changed"
        assert r["change"] == expected, key
    assert set(listed) == differing

    def delta(item: str, kind: str) -> float:
        return sum(
            float(r["new"]) - float(r["old"])
            for k, r in listed.items()
            if k[0] == item and k[1] == kind
        )

    # hand: string conductors (2 per string) before 2 × (235 + 235 + 3 × 182.2) m, after
    # 2 × (240.2 + 5 × 187.4) m
    before = 2 * (2 * hand_cable_m("R1/S1") + 3 * hand_cable_m("R2/S1"))
    after = 2 * (moved_cable_m("R1/S1") + 5 * moved_cable_m("R2/S1"))
    assert (before, after) == pytest.approx((2033.2, 2354.4))
    assert delta("cable", "string") == pytest.approx(after - before, abs=0.011)
    # strings to a combiner: a lug at the combiner end, a PV connector pair at the row end, of
    # each of the 2 conductors per string
    assert delta("termination", "string") == 2 * (6 - 5)
    assert delta("connector pair", "string") == 2 * (6 - 5)
    assert delta("string fuse", "string") == 2 * (6 - 5)  # one fuse per pole (IEC 62548)
    assert delta("cable", "ac") == 0 and not any(k[0] == "trench" for k in listed)
    assert "quantities: " in result.stdout
    fuse = next(r for k, r in listed.items() if k[0] == "string fuse")
    assert (fuse["old"], fuse["new"], fuse["delta"]) == ("10.00", "12.00", "+2.00")
    # hand: 5 → 6 strings, 2 each (12 − 10 = +2)
    assert f"  {fuse['id']}: 10.00 → 12.00 (+2.00)\n" in result.stdout
    # every listed delta: new − old with the bill's 2 decimals
    assert all(r["delta"] == hand_delta(r["old"], r["new"]) for r in q)
    # the plant block's string cable metres: the same change, to the centimetre as in the bill
    plant = {r["id"]: r for r in rows if r["section"] == "plant"}
    string = plant["cable string Cu 6.0 mm²"]
    assert (float(string["old"]), float(string["new"])) == pytest.approx((before, after))
    assert string["delta"] == f"{after - before:+.2f}" == "+321.20"


def test_the_other_way_round_swaps_every_label(plans):
    _, forward = run_diff(plans["old"], plans["new"], plans["tmp"] / "d4")
    _, backward = run_diff(plans["new"], plans["old"], plans["tmp"] / "d5")
    swap = {"added": "removed", "removed": "added", "changed": "changed"}
    sign = {"+": "-", "-": "+"}

    def turn(delta: str) -> str:
        return sign.get(delta[:1], "") + delta[1:]

    turned = {
        (r["section"], r["id"], swap[r["change"]], r["field"], r["new"], r["old"],
         turn(r["delta"]), r["scope"])
        for r in forward
    }  # fmt: skip
    assert turned == {
        (r["section"], r["id"], r["change"], r["field"], r["old"], r["new"], r["delta"],
         r["scope"])
        for r in backward
    }  # fmt: skip
    assert len(forward) == len(backward)
