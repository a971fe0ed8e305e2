"""``routeplan diff`` on hand-made edits of a plan's schedules.

A plan of the base site (tests/conftest.py) is copied and its three schedules are edited with
Python's csv module: circuits and trench segments removed, added and changed, bill lines
removed, added and changed. The expected changes are written out here from those edits: each
line named the right way round (a line only in the new plan is *added*, only in the old one
*removed*), old and new values as the files hold them, quantity deltas in the bill's unit with
two decimals (a difference that rounds to 0.00 is no change). Comparing the other way round
swaps added and removed, and old and new.
"""

from __future__ import annotations

import csv
import io
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import diff_outputs

from ..conftest import base_frames, write_site

runner = CliRunner()
CABLE, TRENCH, QTY = "cable_schedule.csv", "trench_schedule.csv", "quantities.csv"


def read_rows(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def write_rows(path: Path, rows: list[dict[str, str]]) -> None:
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=list(rows[0]), lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    path.write_text(buf.getvalue(), encoding="utf-8")


def by(rows: list[dict[str, str]], column: str, value: str) -> dict[str, str]:
    return next(r for r in rows if r[column] == value)


def bill_key(q: dict[str, str]) -> str:
    """A bill line as diff names it: its key fields that are not empty, space-separated."""
    keys = ("item", "kind", "material", "size_mm2", "laying", "depth_m", "unit")
    return " ".join(q[k] for k in keys if q[k])


@pytest.fixture(scope="module")
def plans(tmp_path_factory) -> dict:
    """The base plan (old), a copy with hand-made edits (new), and the changes expected."""
    tmp = tmp_path_factory.mktemp("diff-edits")
    site = write_site(tmp / "site", base_frames())
    old = tmp / "old"
    result = runner.invoke(app, ["plan", str(site), "--out", str(old), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    new = tmp / "new"
    shutil.copytree(old, new)
    expected = []

    # circuits: R2/S3 removed, R9/S1 added (the string count, which summary.json checks,
    # stays the same), R1/S1 and A:CB1 changed; loss_w is not a compared field
    cables = read_rows(new / CABLE)
    r1 = by(cables, "circuit_id", "R1/S1")
    added = dict(r1, circuit_id="R9/S1", from_id="R9")
    expected.append(("circuit", "R9/S1", "added", "", "", ""))
    expected.append(("circuit", "R2/S3", "removed", "", "", ""))
    a = by(cables, "circuit_id", "A:CB1")
    expected.append(("circuit", "A:CB1", "changed", "to_id", a["to_id"], "INV2"))
    a["to_id"] = "INV2"
    route = f"{float(r1['route_m']) + 1.25:.2f}"
    for field, value in (("route_m", route), ("size_mm2", "6.0"), ("status", "fail")):
        expected.append(("circuit", "R1/S1", "changed", field, r1[field], value))
        r1[field] = value
    r1["loss_w"] = "999.9"
    cables = [c for c in cables if c["circuit_id"] != "R2/S3"] + [added]
    write_rows(new / CABLE, cables)

    # trench segments: T1#1 removed, T9#1 added, T1#3 one circuit fewer and over
    segs = read_rows(new / TRENCH)
    t = by(segs, "segment_id", "T1#3")
    expected.append(("segment", "T9#1", "added", "", "", ""))
    expected.append(("segment", "T1#1", "removed", "", "", ""))
    for field, value in (("circuits", str(int(t["circuits"]) - 1)), ("status", "over")):
        expected.append(("segment", "T1#3", "changed", field, t[field], value))
        t[field] = value
    t["fill"] = "9.999"  # not compared
    first = by(segs, "segment_id", "T1#1")
    segs = [s for s in segs if s["segment_id"] != "T1#1"] + [dict(first, segment_id="T9#1")]
    write_rows(new / TRENCH, segs)

    # bill: string cable +10 m, a 6 mm² string cable line added, the duct trench line
    # removed, array terminations +0.01 (listed) and string terminations +0.004 (rounds to
    # 0.00: not listed)
    bill = read_rows(new / QTY)
    cable = next(q for q in bill if q["item"] == "cable" and q["kind"] == "string")
    duct = next(q for q in bill if q["item"] == "trench" and q["laying"] == "duct")
    term_a = next(q for q in bill if q["item"] == "termination" and q["kind"] == "array")
    term_s = next(q for q in bill if q["item"] == "termination" and q["kind"] == "string")
    new_line = dict(cable, size_mm2="6.0", quantity="100.00")
    q_changes = [
        (bill_key(cable), "changed", float(cable["quantity"]), float(cable["quantity"]) + 10),
        (bill_key(new_line), "added", 0.0, 100.0),
        (bill_key(term_a), "changed", float(term_a["quantity"]), float(term_a["quantity"]) + 0.01),
        (bill_key(duct), "removed", float(duct["quantity"]), 0.0),
    ]
    cable["quantity"] = f"{float(cable['quantity']) + 10:.2f}"
    term_a["quantity"] = f"{float(term_a['quantity']) + 0.01:.2f}"
    term_s["quantity"] = f"{float(term_s['quantity']) + 0.004:.3f}"
    bill = [q for q in bill if q is not duct] + [new_line]
    write_rows(new / QTY, bill)
    # the bill's lines in key order (item, kind, material, size, ...): as listed above
    expected += [("quantity", k, c, "quantity", f"{o:.2f}", f"{n:.2f}") for k, c, o, n in q_changes]
    return {"old": old, "new": new, "expected": expected}


def rows_of(diff) -> list[tuple[str, ...]]:
    cols = ["section", "id", "change", "field", "old", "new"]
    return [tuple(str(v) for v in r) for r in diff.changes[cols].itertuples(index=False)]


def test_each_edit_is_listed_the_right_way_round(plans):
    assert rows_of(diff_outputs(plans["old"], plans["new"])) == plans["expected"]


def test_the_other_way_round_swaps_added_removed_old_and_new(plans):
    swap = {"added": "removed", "removed": "added", "changed": "changed"}
    expected = {(s, i, swap[c], f, n, o) for s, i, c, f, o, n in plans["expected"]}
    d = diff_outputs(plans["new"], plans["old"])
    assert set(rows_of(d)) == expected and len(rows_of(d)) == len(expected)
    assert d.ids("circuit", "added") == ["R2/S3"] and d.ids("circuit", "removed") == ["R9/S1"]
    assert d.ids("segment") == ["T1#1", "T1#3", "T9#1"]


def test_ids_by_section_and_change(plans):
    d = diff_outputs(plans["old"], plans["new"])
    assert d.ids("circuit") == ["A:CB1", "R1/S1", "R2/S3", "R9/S1"]
    assert d.ids("circuit", "changed") == ["A:CB1", "R1/S1"]
    assert d.ids("segment", "removed") == ["T1#1"]
    assert not d.empty


def test_the_command_prints_and_writes_the_changes(plans, tmp_path):
    out = tmp_path / "d"
    result = runner.invoke(app, ["diff", str(plans["old"]), str(plans["new"]), "--out", str(out)])
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert "circuits: 1 added, 2 changed, 1 removed" in lines
    assert "trench segments: 1 added, 1 changed, 1 removed" in lines
    assert "quantities: 1 added, 2 changed, 1 removed" in lines
    for _, ident, change, field, old, new in plans["expected"]:
        if change == "changed":
            assert f"  ~ {ident}: {field} {old} → {new}" in lines
        else:
            assert f"  {'+' if change == 'added' else '-'} {ident}" in lines
    with open(out / "changes.csv", encoding="utf-8", newline="") as fh:
        written = [tuple(r) for r in csv.reader(fh)]
    assert written[0] == ("section", "id", "change", "field", "old", "new")
    assert written[1:] == plans["expected"]
