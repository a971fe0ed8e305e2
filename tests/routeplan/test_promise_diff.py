"""README, Features, "Shows what a layout change did": ``routeplan diff OLD NEW`` on hand-made
edits of the lengths site (``promise_sites``): row R1 gives 1 string instead of 2, row R2 5
instead of 3, and combiner CB1 moves from 3 m east / 4 m north of T1's east end to 6 m east /
8 m north. Every section (circuits added, removed and changed, trench segments, quantities)
is checked against hand arithmetic and against the two plans' own schedules read with the
csv module: the old value from the old plan, the new one from the new plan."""

from __future__ import annotations

import csv
import math
from collections import defaultdict
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
    return result, read_rows(out / "changes.csv")


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
    assert "AC:INV1" not in by["changed"]  # its route does not pass CB1
    # every changed value: the old plan's cell before the arrow, the new plan's after it
    old = {r["circuit_id"]: r for r in read_rows(plans["old"] / "cable_schedule.csv")}
    new = {r["circuit_id"]: r for r in read_rows(plans["new"] / "cable_schedule.csv")}
    for r in circuits:
        if r["change"] == "changed":
            assert (r["old"], r["new"]) == (old[r["id"]][r["field"]], new[r["id"]][r["field"]])
    assert set(old) - set(new) == by["removed"] and set(new) - set(old) == by["added"]
    out = result.stdout
    assert "circuits: 2 added, " in out and ", 1 removed\n" in out
    assert "  + R2/S4\n" in out and "  + R2/S5\n" in out and "  - R1/S2\n" in out
    assert "  ~ R1/S1: route_m 200.00 → 205.00\n" in out
    assert "  ~ A:CB1: cable_m 205.80 → 211.00\n" in out


def test_trench_segments_whose_counts_changed(plans):
    result, rows = run_diff(plans["old"], plans["new"], plans["tmp"] / "d2")
    got = {
        (r["id"], r["field"]): (r["old"], r["new"], r["change"])
        for r in rows
        if r["section"] == "segment"
    }
    # hand: T1#2 carries R1's strings and the AC circuit; T1#3 and T1#4 R1's and R2's strings
    # and one more circuit each; T1#1 and T2#1 carry no string
    assert got == {
        ("T1#2", "circuits"): ("3", "2", "changed"),
        ("T1#2", "strings"): ("2", "1", "changed"),
        ("T1#3", "circuits"): ("6", "7", "changed"),
        ("T1#3", "strings"): ("5", "6", "changed"),
        ("T1#4", "circuits"): ("6", "7", "changed"),
        ("T1#4", "strings"): ("5", "6", "changed"),
    }
    assert "trench segments: 3 changed\n" in result.stdout
    assert "  ~ T1#3: circuits 6 → 7\n" in result.stdout


def quantity_key(r: dict[str, str]) -> tuple[str, ...]:
    keys = ("item", "kind", "material", "size_mm2", "laying", "depth_m", "unit")
    return tuple(r[k] for k in keys)


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
    named = {" ".join(v for v in k if v): k for k in differing}  # "cable string Cu 6.0 m"
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
    assert delta("termination", "string") == 4 * (6 - 5)  # 2 conductors × 2 ends per string
    assert delta("string fuse", "string") == 2 * (6 - 5)  # one fuse per pole (IEC 62548)
    assert delta("cable", "ac") == 0 and not any(k[0] == "trench" for k in listed)
    assert "quantities: " in result.stdout
    fuse = next(r for k, r in listed.items() if k[0] == "string fuse")
    assert f"  ~ {fuse['id']}: quantity {fuse['old']} → {fuse['new']}\n" in result.stdout
    assert (fuse["old"], fuse["new"]) == ("10.00", "12.00")  # hand: 5 → 6 strings, 2 each


def test_the_other_way_round_swaps_every_label(plans):
    _, forward = run_diff(plans["old"], plans["new"], plans["tmp"] / "d4")
    _, backward = run_diff(plans["new"], plans["old"], plans["tmp"] / "d5")
    swap = {"added": "removed", "removed": "added", "changed": "changed"}
    turned = {
        (r["section"], r["id"], swap[r["change"]], r["field"], r["new"], r["old"]) for r in forward
    }
    assert turned == {
        (r["section"], r["id"], r["change"], r["field"], r["old"], r["new"]) for r in backward
    }
