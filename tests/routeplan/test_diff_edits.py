"""``routeplan diff`` on hand-made edits of a plan's schedules.

A plan of the base site (tests/conftest.py) is copied and its three schedules are edited with
Python's csv module: circuits and trench segments removed, added and changed, bill lines
removed, added, split and changed, bill lines removed, added and changed. The expected
changes are written out here from those edits: each line named the right way round (a line
only in the new plan is *added*, only in the old one *removed*), old and new values as the
files hold them, each delta (new − old) fixed by the edit itself, with the column's decimals
(a bill difference that rounds to 0.00 is no change). Comparing the other way round swaps
added and removed, old and new, turns the deltas' signs, and makes the split a merge.
"""

from __future__ import annotations

import csv
import io
import json
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


def neg(delta: str) -> str:
    """A delta the other way round: the sign turned ("" stays "")."""
    return {"+": "-", "-": "+"}.get(delta[:1], "") + delta[1:]


@pytest.fixture(scope="module")
def plans(tmp_path_factory) -> dict:
    """The base plan (old), a copy with hand-made edits (new), and the changes expected
    (diff.csv's columns: section, id, change, field, old, new, delta, scope, cause, note)."""
    tmp = tmp_path_factory.mktemp("diff-edits")
    site = write_site(tmp / "site", base_frames())
    old = tmp / "old"
    result = runner.invoke(app, ["plan", str(site), "--out", str(old), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    new = tmp / "new"
    shutil.copytree(old, new)
    route: list[tuple[str, ...]] = []  # circuit lines of scope route, in report order

    # circuits: R2/S3 removed, R9/S1 added (the string count, which summary.json checks,
    # stays the same), A:CB1 to another inverter, R1/S1 longer, larger, failing and losing
    # 100 W more; the insulation is not compared
    cables = read_rows(new / CABLE)
    r1 = by(cables, "circuit_id", "R1/S1")
    added = dict(r1, circuit_id="R9/S1", from_id="R9")
    route.append(("circuit", "R9/S1", "added", "", "", "", "", "route", "", ""))
    route.append(("circuit", "R2/S3", "removed", "", "", "", "", "route", "", ""))
    a = by(cables, "circuit_id", "A:CB1")
    route.append(("circuit", "A:CB1", "changed", "to_id", a["to_id"], "INV2", "", "route", "", ""))
    a["to_id"] = "INV2"
    # A:CB1's trench segment T2@3.0-58.0 is split below: its route names both halves now,
    # the same stretch of trench (no change of route)
    assert a["trench_segments"] == "T2@3.0-58.0"
    a["trench_segments"] = "T2@3.0-30.0;T2@30.0-58.0"
    for field, value, delta in (
        ("route_m", f"{float(r1['route_m']) + 1.25:.2f}", "+1.25"),
        ("size_mm2", "6.0", "+2.0"),  # from 4.0 mm² (asserted below)
        ("status", "fail", ""),
        ("loss_w", f"{float(r1['loss_w']) + 100:.1f}", "+100.0"),
    ):
        route.append(
            ("circuit", "R1/S1", "changed", field, r1[field], value, delta, "route", "", "")
        )
        r1[field] = value
    assert route[-3][4] == "4.0"
    r1["insulation"] = "XLPE"
    cables = [c for c in cables if c["circuit_id"] != "R2/S3"] + [added]
    write_rows(new / CABLE, cables)
    expected = route

    # trench segments: T1@0.0-10.0 (no circuits) removed, T9@0.0-10.0 added (another
    # trench: no overlap), T2@3.0-58.0 split at 30.0 m (27 + 28 = 55 m: no length line),
    # T1@20.0-30.0 one circuit fewer with a capacity of 3 set: 4 / 3 = 1.333 full, over;
    # its spacing is not compared
    segs = read_rows(new / TRENCH)
    first = by(segs, "segment_id", "T1@0.0-10.0")
    whole = by(segs, "segment_id", "T2@3.0-58.0")
    expected.append(
        ("segment", "T1@0.0-10.0", "removed", "", "T1@0.0-10.0", "", "", "", "",
         "T1@0.0-10.0 (0 circuits) removed")
    )  # fmt: skip
    halves = [
        dict(whole, segment_id="T2@3.0-30.0", from_m="3.00", to_m="30.00", length_m="27.00"),
        dict(whole, segment_id="T2@30.0-58.0", from_m="30.00", to_m="58.00", length_m="28.00"),
    ]
    expected.append(
        ("segment", "T2@3.0-58.0", "split", "", "T2@3.0-58.0", "T2@3.0-30.0; T2@30.0-58.0",
         "", "", "", "T2@3.0-58.0 (1 circuit) split at 30.0 m into T2@3.0-30.0 (1 circuit), "
         "T2@30.0-58.0 (1 circuit)")
    )  # fmt: skip
    expected.append(
        ("segment", "T9@0.0-10.0", "added", "", "", "T9@0.0-10.0", "", "", "",
         "T9@0.0-10.0 (0 circuits) added")
    )  # fmt: skip
    t = by(segs, "segment_id", "T1@20.0-30.0")
    assert (t["circuits"], t["cable_sets"], t["max_circuits"], t["fill"]) == ("5", "5", "", "")
    for field, value, delta in (
        ("circuits", "4", "-1"),
        ("cable_sets", "4", "-1"),
        ("max_circuits", "3", ""),  # no capacity before: nothing to subtract
        ("fill", "1.333", ""),
        ("status", "over", ""),
    ):
        expected.append(
            ("segment", "T1@20.0-30.0", "changed", field, t[field], value, delta, "", "", "")
        )
        t[field] = value
    t["spacing_m"] = "0.100"
    segs = [s for s in segs if s["segment_id"] not in ("T1@0.0-10.0", "T2@3.0-58.0")]
    segs += [dict(first, segment_id="T9@0.0-10.0", trench_id="T9"), *halves]
    write_rows(new / TRENCH, segs)

    # bill: string cable +10 m, a 6 mm² string cable line added, the duct trench line
    # removed, array terminations +0.01 (listed) and string terminations +0.004 (rounds to
    # 0.00: not listed)
    bill = read_rows(new / QTY)
    cable = next(q for q in bill if q["item"] == "cable" and q["kind"] == "string")
    duct = next(q for q in bill if q["item"] == "trench" and q["laying"] == "duct")
    term_a = next(q for q in bill if q["item"] == "termination" and q["kind"] == "array")
    term_s = next(q for q in bill if q["item"] == "termination" and q["kind"] == "string")
    assert duct["quantity"] == "108.00"  # hand: T2 is 3 + 55 + 50 = 108 m of duct
    new_line = dict(cable, size_mm2="6.0", quantity="100.00")
    qc, qa = float(cable["quantity"]), float(term_a["quantity"])
    q_changes = [
        (bill_key(cable), "changed", qc, qc + 10, "+10.00"),
        (bill_key(new_line), "added", 0.0, 100.0, "+100.00"),
        (bill_key(term_a), "changed", qa, qa + 0.01, "+0.01"),
        (bill_key(duct), "removed", 108.0, 0.0, "-108.00"),
    ]
    plant = [
        # the plant block's cable metres (bill's cable lines, to the centimetre)
        ("plant", "cable string Cu 4.0 mm²", "changed", "m", f"{float(cable['quantity']):.2f}",
         f"{float(cable['quantity']) + 10:.2f}", "+10.00", "", "", ""),
        ("plant", "cable string Cu 6.0 mm²", "changed", "m", "", "100.00", "+100.00", "", "", ""),
    ]  # fmt: skip
    cable["quantity"] = f"{float(cable['quantity']) + 10:.2f}"
    term_a["quantity"] = f"{float(term_a['quantity']) + 0.01:.2f}"
    term_s["quantity"] = f"{float(term_s['quantity']) + 0.004:.3f}"
    bill = [q for q in bill if q is not duct] + [new_line]
    write_rows(new / QTY, bill)
    # the bill's lines in key order (item, kind, material, size, ...): as listed above
    expected += [
        ("quantity", k, c, "quantity", f"{o:.2f}", f"{n:.2f}", d, "", "", "")
        for k, c, o, n, d in q_changes
    ]

    # summary.json: one segment more (the split), one over capacity (0 → 1)
    summary = json.loads((new / "summary.json").read_text(encoding="utf-8"))
    assert summary["segments"]["count"] == 6 and summary["segments"]["over_capacity"] == 0
    summary["segments"].update(count=7, over_capacity=1)
    (new / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
    plant.append(
        ("plant", "trench segments over capacity", "changed", "count", "0", "1", "+1", "", "",
         "")
    )  # fmt: skip
    expected += plant
    return {"old": old, "new": new, "expected": expected}


def rows_of(diff) -> list[tuple[str, ...]]:
    return [tuple(str(v) for v in r) for r in diff.changes.itertuples(index=False)]


def along_the_trenches(rows: list[tuple[str, ...]]) -> bool:
    """Whether the segment lines run trench by trench, along each trench (the id's trench,
    the chainage before the '-' of its last '@')."""
    keys = []
    for r in rows:
        if r[0] == "segment":
            trench, _, span = r[1].rpartition("@")
            keys.append((trench, float(span.split("-")[0])))
    return keys == sorted(keys)


def test_each_edit_is_listed_the_right_way_round(plans):
    got = rows_of(diff_outputs(plans["old"], plans["new"]))
    want = plans["expected"]
    # circuits, quantities and the plant block in the order expected; the trench segments
    # (the same lines) along the trenches
    assert [r for r in got if r[0] != "segment"] == [r for r in want if r[0] != "segment"]
    assert sorted(r for r in got if r[0] == "segment") == sorted(
        r for r in want if r[0] == "segment"
    )
    assert [r[0] for r in got] == [r[0] for r in want]
    assert along_the_trenches(got)


def test_the_other_way_round_swaps_added_removed_old_and_new(plans):
    """Backwards: added and removed swap, old and new swap, every delta turns its sign; the
    split is a merge of the two halves at 30.0 m, named by the first old one."""
    swap = {"added": "removed", "removed": "added", "changed": "changed"}
    expected = {
        (s, i, swap[c], f, n, o, neg(d), sc, ca, note)
        for s, i, c, f, o, n, d, sc, ca, note in plans["expected"]
        if c in swap and (s, c) not in (("segment", "added"), ("segment", "removed"))
    }
    expected |= {
        ("segment", "T1@0.0-10.0", "added", "", "", "T1@0.0-10.0", "", "", "",
         "T1@0.0-10.0 (0 circuits) added"),
        ("segment", "T9@0.0-10.0", "removed", "", "T9@0.0-10.0", "", "", "", "",
         "T9@0.0-10.0 (0 circuits) removed"),
        ("segment", "T2@3.0-30.0", "merged", "", "T2@3.0-30.0; T2@30.0-58.0", "T2@3.0-58.0",
         "", "", "", "T2@3.0-30.0 (1 circuit), T2@30.0-58.0 (1 circuit) merged at 30.0 m into "
         "T2@3.0-58.0 (1 circuit)"),
    }  # fmt: skip
    d = diff_outputs(plans["new"], plans["old"])
    assert set(rows_of(d)) == expected and len(rows_of(d)) == len(expected)
    assert d.ids("circuit", "added") == ["R2/S3"] and d.ids("circuit", "removed") == ["R9/S1"]
    assert d.ids("segment") == ["T1@0.0-10.0", "T1@20.0-30.0", "T2@3.0-30.0", "T9@0.0-10.0"]


def test_ids_by_section_and_change(plans):
    d = diff_outputs(plans["old"], plans["new"])
    assert d.ids("circuit") == ["A:CB1", "R1/S1", "R2/S3", "R9/S1"]
    assert d.ids("circuit", "changed") == ["A:CB1", "R1/S1"]
    assert d.ids("segment", "removed") == ["T1@0.0-10.0"]
    assert d.ids("segment", "split") == ["T2@3.0-58.0"]
    assert not d.empty


def test_the_command_prints_and_writes_the_changes(plans, tmp_path):
    out = tmp_path / "d"
    result = runner.invoke(app, ["diff", str(plans["old"]), str(plans["new"]), "--out", str(out)])
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    # the later plan is the earlier one edited here: each edited file is named first
    while lines[0].startswith("warning: ") and "was edited since routeplan wrote it" in lines[0]:
        lines.pop(0)
    assert lines[0] == "plant (old → new, delta):"
    assert "circuits: 1 added, 1 removed, 2 changed" in lines
    assert "  + R9/S1: new string circuit" in lines
    assert "  - R2/S3: string circuit removed" in lines
    assert "  ~ A:CB1: to_id INV1 → INV2" in lines
    # the three weightiest of R1/S1's four changes: status, size, route length
    r1 = {r[3]: r for r in plans["expected"] if r[1] == "R1/S1"}
    assert (
        f"  ~ R1/S1: status ok → fail; size_mm2 4.0 → 6.0 (+2.0); route_m {r1['route_m'][4]} → "
        f"{r1['route_m'][5]} (+1.25); …"
    ) in lines
    assert "trench segments: 1 split, 1 added, 1 removed, 1 changed" in lines
    for _, ident, change, _, _, _, _, _, _, note in plans["expected"]:
        if change in ("split", "added", "removed") and ident.startswith("T"):
            assert f"  {change}: {note}" in lines
    assert (
        "  changed: T1@20.0-30.0: circuits 5 → 4 (-1); cable_sets 5 → 4 (-1); "
        "max_circuits - → 3; fill - → 1.333; status ok → over"
    ) in lines
    assert "quantities: 4 lines changed (old → new, delta)" in lines
    for section, ident, _, _, old, new, delta, *_ in plans["expected"]:
        if section == "quantity":
            assert f"  {ident}: {old} → {new} ({delta})" in lines
    with open(out / "diff.csv", encoding="utf-8", newline="") as fh:
        written = [tuple(r) for r in csv.reader(fh)]
    assert written[0] == (
        "section", "id", "change", "field", "old", "new", "delta", "scope", "cause", "note",
    )  # fmt: skip
    assert sorted(written[1:]) == sorted(plans["expected"])
    assert along_the_trenches(written[1:])
