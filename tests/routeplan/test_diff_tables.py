"""``routeplan.diff`` on small schedules written by hand (no plan is run, so these tests are
quick enough for mutation testing): every change listed with its section, id, field, the old
and new text, the delta (new − old with the column's decimals, worked out by hand in the
comments), the circuit's scope and cause; trench segments matched by their chainage (removed,
added, split, merged); the plant block from summary.json; every damaged schedule or
summary.json refused with one line naming the file, the line and the column or key. The
expected lines are counted by hand in the text each test writes; CSV is read as RFC 4180 says
(Python's ``csv`` module)."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import (
    CIRCUITS,
    QUANTITIES,
    SEGMENTS,
    DiffError,
    PlanDiff,
    Table,
    diff_outputs,
    open_diff_folder,
    parse_schedule,
    read_plan,
    read_schedule,
    write_diff,
)
from routeplan.diff.compare import quantity_rows
from routeplan.diff.text import diff_lines
from routeplan.errors import FolderError

CIRCUIT_HEADER = [
    "circuit_id", "kind", "from_id", "to_id", "trench_segments", "route_m", "cable_m",
    "material", "size_mm2", "parallel", "status", "protection", "fuse_a", "array_fuse_a",
    "ac_breaker_a", "design_current_a", "ampacity_a", "derating", "group_count", "group_max",
    "utilisation", "vdrop_pct", "loss_w", "vdrop_total_pct", "note",
]  # fmt: skip
SEGMENT_HEADER = [
    "segment_id", "trench_id", "from_m", "to_m", "length_m", "circuits", "strings", "subarrays",
    "arrays", "ac", "cable_sets", "max_circuits", "fill", "group_factor", "status",
]  # fmt: skip
QUANTITY_HEADER = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "unit", "quantity"]
#: an invented string circuit C? from S? to combiner CB1 along trench T1's two segments (the
#: cells as the schedule writes them: fixed decimals, README "Outputs")
CIRCUIT = dict(
    to_id="CB1", trench_segments="T1@0.0-60.0;T1@60.0-120.0", route_m="120.00",
    cable_m="126.00", material="Cu", size_mm2="4.0", parallel="1", status="ok",
    protection="string fuse", fuse_a="15", array_fuse_a="", ac_breaker_a="",
    design_current_a="17.50", ampacity_a="40.0", derating="0.800", group_count="2",
    group_max="2", utilisation="0.438", vdrop_pct="0.520", loss_w="3.2",
    vdrop_total_pct="1.100", note="",
)  # fmt: skip


def circuit(cid: str, kind: str = "string", **over: str) -> list[str]:
    row = dict(CIRCUIT, circuit_id=cid, kind=kind, from_id="S" + cid)
    row.update(over)
    return [row[c] for c in CIRCUIT_HEADER]


def segment(trench: str = "T1", a: float = 0.0, b: float = 60.0, **over: str) -> list[str]:
    """Trench ``trench`` from chainage ``a`` to ``b`` [m]; its id as routeplan writes it
    (``<trench>@<from>-<to>``, 0.1 m: README "Outputs")."""
    row = dict(
        segment_id=f"{trench}@{a:.1f}-{b:.1f}", trench_id=trench, from_m=f"{a:.2f}",
        to_m=f"{b:.2f}", length_m=f"{b - a:.2f}", circuits="2", strings="2", subarrays="0",
        arrays="0", ac="0", cable_sets="2", max_circuits="", fill="", group_factor="0.800",
        status="ok",
    )  # fmt: skip
    row.update(over)
    return [row[c] for c in SEGMENT_HEADER]


def seg(trench: str = "T1", a: float = 0.0, b: float = 60.0, **over: str) -> str:
    """:func:`segment` as one raw line of text (cells joined by commas, nothing quoted, so a
    test can write a damaged cell as it wants it)."""
    return ",".join(segment(trench, a, b, **over)) + "\n"


def quantity(item: str, size: str, amount: str, kind: str = "string") -> list[str]:
    return [item, kind, "Cu", size, "trench", "0.8", "m", amount]


def csv_text(header: list[str], rows: list[list[str]]) -> str:
    out = io.StringIO(newline="")
    csv.writer(out, lineterminator="\n").writerows([header, *rows])
    return out.getvalue()


def summary_of(circuits: list[list[str]], segments: list[list[str]]) -> dict:
    """summary.json as ``routeplan plan`` writes it, as far as ``diff`` reads it, counted from
    the rows (invented totals: cable and loss summed over the circuits, 1000 equivalent loss
    hours a year)."""
    col = {c: CIRCUIT_HEADER.index(c) for c in ("kind", "status", "cable_m", "loss_w")}
    kinds: dict[str, dict[str, int]] = {}
    for r in circuits:
        k = kinds.setdefault(r[col["kind"]], {"circuits": 0, "fail": 0})
        k["circuits"] += 1
        k["fail"] += r[col["status"]] == "fail"
    loss_w = sum(float(r[col["loss_w"]]) for r in circuits)
    return {
        "tool": {"name": "routeplan", "version": "0.1.0"},
        "circuits": kinds,
        "segments": {
            "count": len(segments),
            "over_capacity": sum(r[SEGMENT_HEADER.index("status")] == "over" for r in segments),
            "trench_m": sum(float(r[SEGMENT_HEADER.index("length_m")]) for r in segments),
        },
        "inverter_inputs": {"count": 1, "over_limit": 0},
        "conductor_m_total": sum(float(r[col["cable_m"]]) for r in circuits),
        "loss_w_total": loss_w,
        "energy_loss_kwh_total": loss_w * 1000 / 1000,  # W × h / (1000 W/kW)
    }


def write_folder(
    folder: Path,
    circuits: list[list[str]] | None = None,
    segments: list[list[str]] | None = None,
    quantities: list[list[str]] | None = None,
    summary: dict | None = None,
) -> Path:
    """An output folder as ``routeplan plan`` leaves it, as far as the diff reads it;
    ``summary.json`` counted from the rows unless ``summary`` is given."""
    circuits = [circuit("C1"), circuit("C2")] if circuits is None else circuits
    segments = [segment("T1", 0, 60), segment("T1", 60, 120)] if segments is None else segments
    quantities = [quantity("cable", "4", "252.00")] if quantities is None else quantities
    folder.mkdir(parents=True)
    (folder / CIRCUITS.name).write_text(csv_text(CIRCUIT_HEADER, circuits), "utf-8")
    (folder / SEGMENTS.name).write_text(csv_text(SEGMENT_HEADER, segments), "utf-8")
    (folder / QUANTITIES.name).write_text(csv_text(QUANTITY_HEADER, quantities), "utf-8")
    summary = summary_of(circuits, segments) if summary is None else summary
    (folder / "summary.json").write_text(json.dumps(summary), "utf-8")
    return folder


def changes(diff: PlanDiff, section: str | None = None) -> list[tuple[str, ...]]:
    c = diff.changes if section is None else diff.changes[diff.changes["section"] == section]
    return [tuple(r) for r in c.itertuples(index=False, name=None)]


# ---- what changed


def test_identical_plans_have_no_changes(tmp_path):
    d = diff_outputs(write_folder(tmp_path / "a"), write_folder(tmp_path / "b"))
    assert d.empty
    assert list(d.changes.columns) == [
        "section", "id", "change", "field", "old", "new", "delta", "scope", "cause", "note",
    ]  # fmt: skip
    assert d.ids("circuit") == [] and d.circuits.empty and d.segments.empty
    # the plant block is there all the same, every delta 0
    assert (d.plant["delta"] == 0).all() and "trench" in d.plant["item"].tolist()


def test_added_removed_and_changed_circuits_and_segments_in_report_order(tmp_path):
    old = write_folder(
        tmp_path / "a",
        circuits=[circuit("C1"), circuit("C2"), circuit("C9", "array")],
        segments=[segment("T1", 0, 60), segment("T1", 60, 120)],
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[
            circuit("C0", "array"),
            circuit("C2", route_m="121.50", status="fail", size_mm2="6.0"),
            circuit("C1"),
        ],
        segments=[segment("T1", 60, 120, strings="3", status="over"), segment("T2", 0, 40)],
    )
    d = diff_outputs(old, new)
    assert changes(d) == [
        # scope route: added, removed, then the changed fields in CIRCUIT_FIELDS order,
        # values as written, delta = new − old with the column's decimals
        ("circuit", "C0", "added", "", "", "", "", "route", "", ""),
        ("circuit", "C9", "removed", "", "", "", "", "route", "", ""),
        ("circuit", "C2", "changed", "route_m", "120.00", "121.50", "+1.50", "route", "", ""),
        ("circuit", "C2", "changed", "size_mm2", "4.0", "6.0", "+2.0", "route", "", ""),
        ("circuit", "C2", "changed", "status", "ok", "fail", "", "route", "", ""),
        # along the trenches: T1 from 0 m, then T2. T1@0.0-60.0 overlaps nothing new,
        # T2@0.0-40.0 nothing old (another trench)
        (
            "segment", "T1@0.0-60.0", "removed", "", "T1@0.0-60.0", "", "", "", "",
            "T1@0.0-60.0 (2 circuits) removed",
        ),
        # the same id in both plans: compared field by field (3 − 2 = +1 string)
        ("segment", "T1@60.0-120.0", "changed", "strings", "2", "3", "+1", "", "", ""),
        ("segment", "T1@60.0-120.0", "changed", "status", "ok", "over", "", "", "", ""),
        (
            "segment", "T2@0.0-40.0", "added", "", "", "T2@0.0-40.0", "", "", "",
            "T2@0.0-40.0 (2 circuits) added",
        ),
        # summary.json: trench 60 + 60 = 120 m before, 60 + 40 = 100 m after (−20 m); C2
        # fails (0 → 1), T1@60.0-120.0 is over (0 → 1); cable 3 × 126 m both times
        ("plant", "trench", "changed", "m", "120.00", "100.00", "-20.00", "", "", ""),
        ("plant", "failing circuits", "changed", "count", "0", "1", "+1", "", "", ""),
        (
            "plant", "trench segments over capacity", "changed", "count", "0", "1", "+1", "", "",
            "",
        ),
    ]  # fmt: skip
    assert d.ids("circuit") == ["C0", "C2", "C9"]
    assert d.ids("circuit", "changed") == ["C2"]
    assert d.ids("segment", "added") == ["T2@0.0-40.0"]
    c = d.circuits.set_index("circuit_id")
    assert c.loc["C2", "look"] == "now failing" and c.loc["C0", "look"] == "added"
    assert c.loc["C2", "summary"] == (
        "status ok → fail; size_mm2 4.0 → 6.0 (+2.0); route_m 120.00 → 121.50 (+1.50)"
    )
    assert d.segments["event"].tolist() == ["removed", "changed", "added"]
    assert not d.empty


def test_circuits_ranked_route_then_value_then_follows_with_their_cause(tmp_path):
    """C3's route grew, C1's capacity fell with the same route and cable, and the string
    S1 only sees its cumulative drop change: it lands on CB1, whose array cable C1 (from CB1)
    is the nearest changed circuit it feeds, so C1 is its cause; S2's is C3 (from CB2). S5
    lands on CB5, which no circuit leaves: its cause is empty (a setting)."""
    old = write_folder(
        tmp_path / "a",
        circuits=[
            circuit("C1", "array", from_id="CB1", to_id="INV1"),
            circuit("C3", "array", from_id="CB2", to_id="INV1"),
            circuit("S1", to_id="CB1"),
            circuit("S2", to_id="CB2"),
            circuit("S5", to_id="CB5"),
        ],
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[
            circuit(
                "C1", "array", from_id="CB1", to_id="INV1", ampacity_a="36.5", derating="0.730"
            ),
            circuit("C3", "array", from_id="CB2", to_id="INV1", cable_m="131.25"),
            circuit("S1", to_id="CB1", vdrop_total_pct="1.150"),
            circuit("S2", to_id="CB2", vdrop_total_pct="1.090"),
            circuit("S5", to_id="CB5", vdrop_total_pct="1.101"),
        ],
    )
    d = diff_outputs(old, new)
    assert changes(d, "circuit") == [
        # 131.25 − 126.00 = +5.25
        ("circuit", "C3", "changed", "cable_m", "126.00", "131.25", "+5.25", "route", "", ""),
        # 36.5 − 40.0 = −3.5 (1 decimal); 0.730 − 0.800 = −0.070 (3 decimals)
        ("circuit", "C1", "changed", "ampacity_a", "40.0", "36.5", "-3.5", "value", "", ""),
        ("circuit", "C1", "changed", "derating", "0.800", "0.730", "-0.070", "value", "", ""),
        # 1.150 − 1.100 = +0.050; 1.090 − 1.100 = −0.010; 1.101 − 1.100 = +0.001
        (
            "circuit", "S1", "changed", "vdrop_total_pct", "1.100", "1.150", "+0.050", "follows",
            "C1", "",
        ),
        (
            "circuit", "S2", "changed", "vdrop_total_pct", "1.100", "1.090", "-0.010", "follows",
            "C3", "",
        ),
        (
            "circuit", "S5", "changed", "vdrop_total_pct", "1.100", "1.101", "+0.001", "follows",
            "", "",
        ),
    ]  # fmt: skip
    c = d.circuits.set_index("circuit_id")
    assert c["scope"].to_dict() == {
        "C3": "route", "C1": "value", "S1": "follows", "S2": "follows", "S5": "follows",
    }  # fmt: skip
    assert set(c["look"]) == {"other"}  # no status, size or route length changed
    # the terminal: own changes listed, followers summarised per cause
    lines = diff_lines(d)
    assert lines[lines.index(" their route, cable or status:") + 1] == (
        "  ~ C3: cable_m 126.00 → 131.25 (+5.25)"
    )
    assert lines[lines.index(" their values (same route and cable):") + 1] == (
        "  ~ C1: ampacity_a 40.0 → 36.5 (-3.5); derating 0.800 → 0.730 (-0.070)"
    )
    at = lines.index(" only the cumulative DC drop, after a circuit they feed changed:")
    # one line per (kind, cause), causes sorted as text ("" first)
    assert lines[at + 1 : at + 4] == [
        "  1 string circuits: cumulative DC drop +0.001 % with no circuit they feed changed "
        "(a setting?)",
        "  1 string circuits: cumulative DC drop +0.050 % after C1 (other)",
        "  1 string circuits: cumulative DC drop -0.010 % after C3 (other)",
    ]
    assert lines[0] == "plant (old → new, delta):"
    assert "circuits: 2 changed, 3 changed only by a circuit they feed" in lines


def test_a_route_over_a_split_segment_is_no_route_change(tmp_path):
    """T1@0.0-60.0 split at 25.0 m (a new stub): C1 follows the same stretch of trench, now
    named by two ids, so its route is unchanged; the split is one segment event, and the
    lengths add up (25 + 35 = 60 m: no length line)."""
    old = write_folder(tmp_path / "a", circuits=[circuit("C1")])
    split = "T1@0.0-25.0;T1@25.0-60.0;T1@60.0-120.0"
    new = write_folder(
        tmp_path / "b",
        circuits=[circuit("C1", trench_segments=split)],
        segments=[segment("T1", 0, 25), segment("T1", 25, 60), segment("T1", 60, 120)],
    )
    d = diff_outputs(old, new)
    assert changes(d, "circuit") == []
    assert changes(d, "segment") == [
        (
            "segment", "T1@0.0-60.0", "split", "", "T1@0.0-60.0", "T1@0.0-25.0; T1@25.0-60.0",
            "", "", "",
            "T1@0.0-60.0 (2 circuits) split at 25.0 m into T1@0.0-25.0 (2 circuits), "
            "T1@25.0-60.0 (2 circuits)",
        ),
    ]  # fmt: skip
    # the route's stretches as written differ, so a changed id list with another stretch is
    # a change: T1@0.0-25.0 only (0–25 m instead of 0–60 m)
    other = write_folder(
        tmp_path / "c",
        circuits=[circuit("C1", trench_segments="T1@0.0-25.0;T1@60.0-120.0")],
        segments=[segment("T1", 0, 25), segment("T1", 25, 60), segment("T1", 60, 120)],
    )
    d = diff_outputs(old, other)
    assert changes(d, "circuit") == [
        (
            "circuit", "C1", "changed", "trench_segments", "T1@0.0-60.0;T1@60.0-120.0",
            "T1@0.0-25.0;T1@60.0-120.0", "", "route", "", "",
        ),
    ]  # fmt: skip
    assert d.circuits["summary"].tolist() == ["other trench stretches"]


def test_quantities_change_by_their_key_rounded_to_the_cent(tmp_path):
    old = write_folder(
        tmp_path / "a",
        quantities=[
            quantity("cable", "4", "252.00"),
            quantity("cable", "6", "10.00"),
            quantity("cable", "10", "5.000"),
            quantity("fuse", "", "4", kind=""),
        ],
    )
    new = write_folder(
        tmp_path / "b",
        quantities=[
            quantity("cable", "4", "252.004"),  # 0.004 m: rounds to 0.00, no change
            quantity("cable", "6", "10.01"),  # 0.01 m: a change
            quantity("cable", "16", "7.5"),
            quantity("fuse", "", "4", kind=""),
        ],
    )
    d = diff_outputs(old, new)
    # keys sorted as text tuples; the id joins the filled key fields with a space; delta
    # new − old with 2 decimals: 0 − 5 = −5.00, 7.5 − 0 = +7.50, 10.01 − 10.00 = +0.01
    assert changes(d, "quantity") == [
        (
            "quantity", "cable string Cu 10 trench 0.8 m", "removed", "quantity", "5.00", "0.00",
            "-5.00", "", "", "",
        ),
        (
            "quantity", "cable string Cu 16 trench 0.8 m", "added", "quantity", "0.00", "7.50",
            "+7.50", "", "", "",
        ),
        (
            "quantity", "cable string Cu 6 trench 0.8 m", "changed", "quantity", "10.00", "10.01",
            "+0.01", "", "", "",
        ),
    ]  # fmt: skip
    # the plant block's cable metres by kind, material and size (mm² with one decimal, sorted
    # as text), to the centimetre like the bill: a line on one side only has no old (new)
    # value; 252.000 → 252.004 m shows as 252.00 → 252.00, no change (as in the quantities)
    assert changes(d, "plant") == [
        ("plant", "cable string Cu 10.0 mm²", "changed", "m", "5.00", "", "-5.00", "", "", ""),
        ("plant", "cable string Cu 16.0 mm²", "changed", "m", "", "7.50", "+7.50", "", "", ""),
        ("plant", "cable string Cu 6.0 mm²", "changed", "m", "10.00", "10.01", "+0.01", "", "", ""),
    ]  # fmt: skip
    lines = diff_lines(d)
    at = lines.index("quantities: 3 lines changed (old → new, delta)")
    assert lines[at + 1 :] == [
        "  cable string Cu 10 trench 0.8 m: 5.00 → 0.00 (-5.00)",
        "  cable string Cu 16 trench 0.8 m: 0.00 → 7.50 (+7.50)",
        "  cable string Cu 6 trench 0.8 m: 10.00 → 10.01 (+0.01)",
    ]


def test_delta_is_new_minus_old_with_the_columns_decimals(tmp_path):
    """delta: a sign always, the decimals of the column (README "Outputs", routeplan's
    columns table), never "-0.00"; empty for text and where either cell is empty."""
    old = write_folder(
        tmp_path / "a",
        circuits=[circuit("C1", route_m="120.004", loss_w="3.2", fuse_a="", parallel="1")],
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[
            circuit(
                "C1", route_m="120.001", loss_w="2.8", fuse_a="15", parallel="2",
                protection="none", group_count="3", utilisation="0.5", to_id="CB9",
            )
        ],
    )  # fmt: skip
    d = diff_outputs(old, new)
    got = {r[3]: (r[4], r[5], r[6]) for r in changes(d, "circuit")}
    assert got == {
        "to_id": ("CB1", "CB9", ""),  # text: no delta
        # 120.001 − 120.004 = −0.003 → −0.00 with 2 decimals, written +0.00
        "route_m": ("120.004", "120.001", "+0.00"),
        "parallel": ("1", "2", "+1"),  # a count: no decimals
        "protection": ("string fuse", "none", ""),
        "fuse_a": ("", "15", ""),  # one side empty: no delta
        "group_count": ("2", "3", "+1"),
        "utilisation": ("0.438", "0.5", "+0.062"),  # 0.500 − 0.438, 3 decimals
        "loss_w": ("3.2", "2.8", "-0.4"),  # 1 decimal
    }
    assert not any(v.startswith("-0") and float(v) == 0 for v in d.changes["delta"] if v)


def test_a_plan_diffs_against_itself_written_with_guards(tmp_path):
    # a text cell guarded by the writer ('=...) reads as the text: the same as unguarded
    old = write_folder(tmp_path / "a", circuits=[circuit("=C1", to_id="'+CB1")])
    new = write_folder(tmp_path / "b", circuits=[circuit("=C1", to_id="+CB1")])
    assert diff_outputs(old, new).empty
    frame = read_schedule(old, CIRCUITS)
    assert frame["circuit_id"].tolist() == ["=C1"]
    assert frame["to_id"].tolist() == ["+CB1"]
    # a quote before text that is not a formula was never a guard: kept
    other = write_folder(tmp_path / "c", circuits=[circuit("C1", to_id="'x")])
    assert read_schedule(other, CIRCUITS)["to_id"].tolist() == ["'x"]


def test_read_plan_keeps_only_the_columns_compared_in_table_order(tmp_path):
    plans = read_plan(write_folder(tmp_path / "a"))
    assert list(plans) == ["circuits", "segments", "quantities", "summary"]
    assert list(plans["circuits"].columns) == list(CIRCUITS.columns)
    assert "note" not in plans["circuits"].columns  # in the file, not compared
    assert plans["circuits"]["route_m"].tolist() == ["120.00", "120.00"]  # text, as written
    assert list(plans["segments"].columns) == list(SEGMENTS.columns)
    assert list(plans["quantities"].columns) == list(QUANTITIES.columns)
    assert plans["quantities"]["item"].tolist() == ["cable"]
    assert plans["summary"]["segments"] == {"count": 2, "over_capacity": 0, "trench_m": 120.0}
    assert Table("x.csv", ("a", "b"), ("b", "c", "a")).columns == ("a", "b", "c")


# ---- damaged schedules


def refused(data: bytes, table: Table = SEGMENTS) -> str:
    with pytest.raises(DiffError) as e:
        parse_schedule(data, table, "F.csv")
    return str(e.value)


SEG = ",".join(SEGMENT_HEADER) + "\n"
WIDTH = len(SEGMENT_HEADER)  # 15 fields a line


def test_empty_and_undecodable_and_cut_files():
    assert refused(b"") == "F.csv: empty file"
    assert refused(b" \n\n") == "F.csv: empty file"
    assert refused(b"ab\xffc\n") == "F.csv: not UTF-8 text (byte 2): not a schedule"
    assert refused((SEG + seg()).encode()[:-1]) == (
        "F.csv: truncated: the last line has no line end"
    )


def test_a_header_without_a_needed_column_or_with_one_twice():
    header = [c for c in SEGMENT_HEADER if c not in ("strings", "arrays")]
    assert refused((",".join(header) + "\n").encode()) == (
        "F.csv: no column strings, arrays (a schedule of 'routeplan plan' has it)"
    )
    assert refused((SEG[:-1] + ",status,x,x\n").encode()) == (
        "F.csv: column status, x appears more than once"
    )
    assert refused(b'"segment_id\n') == ("F.csv: line 1: not valid CSV (unexpected end of data)")


EARLIER = (
    "made by an earlier routeplan, which numbered trench segments and compared fewer values: "
    "plan that site again with this version to compare"
)


def test_an_earlier_versions_schedules_are_refused_naming_the_file(tmp_path):
    """An earlier routeplan numbered trench segments (no chainage from_m, to_m) and wrote no
    sub-array, grouping or protection columns: its folder cannot be compared (no stand-in
    values any more), and the message says what to do."""
    # the trench schedule of an earlier version: T1#1 ids, no from_m, to_m, subarrays,
    # cable_sets, group_factor
    gone = ("from_m", "to_m", "subarrays", "cable_sets", "group_factor")
    header = [c for c in SEGMENT_HEADER if c not in gone]
    assert refused((",".join(header) + "\nT1#1,T1,60.00,2,2,0,0,,,ok\n").encode()) == (
        f"F.csv: no column from_m, to_m, subarrays, cable_sets, group_factor: {EARLIER}"
    )
    # one such column is enough, beside others a schedule of any version has
    header = [c for c in SEGMENT_HEADER if c not in ("status", "from_m")]
    assert refused((",".join(header) + "\n").encode()) == (
        f"F.csv: no column from_m, status: {EARLIER}"
    )
    # the cable schedule of an earlier version: no protection, fuse_a (nor the other values
    # compared now)
    old = write_folder(tmp_path / "a")
    new = write_folder(tmp_path / "b")
    rows = list(csv.reader(io.StringIO((old / CIRCUITS.name).read_text("utf-8"))))
    keep = [j for j, c in enumerate(rows[0]) if c not in ("protection", "fuse_a")]
    text = csv_text([rows[0][j] for j in keep], [[r[j] for j in keep] for r in rows[1:]])
    (old / CIRCUITS.name).write_text(text, "utf-8")
    with pytest.raises(DiffError) as e:
        diff_outputs(old, new)
    assert str(e.value) == f"{old / CIRCUITS.name}: no column protection, fuse_a: {EARLIER}"
    # and on the command line: one line, exit 2, the file named
    result = CliRunner().invoke(app, ["diff", str(new), str(old)])
    assert result.exit_code == 2 and result.stdout == ""
    assert result.stderr == (
        f"error: {old / CIRCUITS.name}: no column protection, fuse_a: {EARLIER}\n"
    )


def test_a_record_with_the_wrong_number_of_fields_names_its_line():
    text = SEG + seg("T1", 0, 60) + seg("T1", 60, 90, status='"a\nb"') + "T3,1,1\n"
    assert refused(text.encode()) == (
        f"F.csv: line 5: 3 fields where the header has {WIDTH} (truncated or not a schedule)"
    )
    # blank lines at the end are harmless, a record after them is not
    ok = parse_schedule((SEG + seg() + "\n\n").encode(), SEGMENTS, "F.csv")
    assert ok["segment_id"].tolist() == ["T1@0.0-60.0"]
    text = SEG + seg("T1", 0, 60) + "\n\n" + seg("T1", 60, 90)
    assert refused(text.encode()) == (
        f"F.csv: line 3: 0 fields where the header has {WIDTH} (truncated or not a schedule)"
    )
    text = SEG + seg("T1", 0, 60, status='"a\nb"') + seg("T1", 60, 90, status='"ok')
    # the record that never ends starts on line 4
    assert refused(text.encode()) == "F.csv: line 4: not valid CSV (unexpected end of data)"


def test_numbers_empty_text_and_nan_are_named_by_line_and_column():
    text = SEG + seg("T1", 0, 60, ac="") + seg("T1", 60, 90, strings="x1")
    assert refused(text.encode()) == "F.csv: line 3: column strings: 'x1' is not a number"
    text = SEG + seg("T1", 0, 60) + seg("T1", 60, 90, subarrays="nan")
    assert refused(text.encode()) == "F.csv: line 3: column subarrays: 'nan' is not a number"
    # one reading whatever else the column holds: text Python's float() would take (digit
    # separators, non-ASCII digits, inf) is no number routeplan writes, beside a number or
    # beside other text alike
    for cell in ("1_000", "\u0661\u0662", "inf"):
        for other in ("1", "x1"):
            text = SEG + seg("T1", 0, 60, strings=cell) + seg("T1", 60, 90, strings=other)
            assert (
                refused(text.encode()) == f"F.csv: line 2: column strings: {cell!r} is not a number"
            )
    ok = parse_schedule((SEG + seg(strings="1e3", ac="-0.5")).encode(), SEGMENTS, "F.csv")
    assert ok["strings"].tolist() == ["1e3"]
    # an empty number is allowed where the column may be empty ...
    ok = parse_schedule((SEG + seg(circuits="", status="")).encode(), SEGMENTS, "F.csv")
    assert ok["circuits"].tolist() == [""]
    # ... not in a column that must be filled: a segment's place along its trench
    for column in ("from_m", "to_m", "length_m", "trench_id"):
        text = SEG + seg("T1", 0, 60) + seg("T1", 60, 90, **{column: ""})
        assert refused(text.encode()) == f"F.csv: line 3: column {column}: empty"
    q = ",".join(QUANTITY_HEADER) + "\ncable,string,Cu,4,trench,0.8,m,1\nfuse,,,,,,pc,\n"
    assert refused(q.encode(), QUANTITIES) == "F.csv: line 3: column quantity: empty"
    c = csv_text(CIRCUIT_HEADER, [circuit("C1"), circuit("C2", kind="")])
    assert refused(c.encode(), CIRCUITS) == "F.csv: line 3: column kind: empty"
    c = csv_text(CIRCUIT_HEADER, [circuit("C1"), circuit("")])
    assert refused(c.encode(), CIRCUITS) == "F.csv: line 3: column circuit_id: empty"
    # every number column the diff compares is checked, the new ones included
    for column in ("fuse_a", "design_current_a", "group_count", "utilisation", "loss_w"):
        c = csv_text(CIRCUIT_HEADER, [circuit("C1"), circuit("C2", **{column: "n/a"})])
        assert (
            refused(c.encode(), CIRCUITS)
            == f"F.csv: line 3: column {column}: 'n/a' is not a number"
        )
    for column in ("from_m", "cable_sets", "max_circuits", "fill", "group_factor"):
        text = SEG + seg("T1", 0, 60) + seg("T1", 60, 90, **{column: "n/a"})
        assert refused(text.encode()) == f"F.csv: line 3: column {column}: 'n/a' is not a number"


def test_an_id_twice_names_both_lines():
    text = SEG + seg("T1", 0, 10) + seg("T1", 10, 20) + seg("T1", 20, 30) + seg("T1", 10, 20)
    assert refused(text.encode()) == "F.csv: segment_id 'T1@10.0-20.0' on lines 3 and 5"
    q = csv_text(QUANTITY_HEADER, [quantity("cable", "4", "1"), quantity("cable", "4", "2")])
    assert refused(q.encode(), QUANTITIES) == (
        "F.csv: item, kind, material, size_mm2, laying, depth_m, unit "
        "('cable', 'string', 'Cu', '4', 'trench', '0.8', 'm') on lines 2 and 3"
    )


def test_a_folder_or_schedule_missing(tmp_path):
    with pytest.raises(DiffError) as e:
        read_schedule(tmp_path / "none", CIRCUITS)
    assert str(e.value) == f"{tmp_path / 'none'}: no such folder"
    (tmp_path / "empty").mkdir()
    with pytest.raises(DiffError) as e:
        read_schedule(tmp_path / "empty", SEGMENTS)
    assert str(e.value) == (
        f"{tmp_path / 'empty'}: no trench_schedule.csv "
        "(is it an output folder of 'routeplan plan'?)"
    )
    folder = write_folder(tmp_path / "a")
    (folder / QUANTITIES.name).write_bytes(b"item\n")
    with pytest.raises(DiffError) as e:
        read_schedule(folder, QUANTITIES)
    assert str(e.value).startswith(f"{folder / QUANTITIES.name}: no column kind, material")


# ---- summary.json


def summary_refused(folder: Path, summary: dict | str) -> str:
    """The message when ``folder``'s summary.json is replaced by ``summary``."""
    text = summary if isinstance(summary, str) else json.dumps(summary)
    (folder / "summary.json").write_text(text, "utf-8")
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    return str(e.value)


def test_rows_counted_against_summary_json(tmp_path):
    folder = write_folder(tmp_path / "a")
    summary = summary_of([circuit("C1"), circuit("C2")], [segment(), segment("T1", 60, 120)])
    summary["circuits"]["array"] = {"circuits": 1, "fail": 0}
    assert summary_refused(folder, summary) == (
        f"{folder / CIRCUITS.name}: 0 array circuits where summary.json counts 1 "
        "(truncated or edited?)"
    )
    del summary["circuits"]["array"]
    summary["segments"]["count"] = 3
    assert summary_refused(folder, summary) == (
        f"{folder / SEGMENTS.name}: 2 trench segments where summary.json counts 3 "
        "(truncated or edited?)"
    )
    summary = summary_of([circuit("C1"), circuit("C2")], [segment(), segment("T1", 60, 120)])
    folder = write_folder(
        tmp_path / "c", circuits=[circuit("C1"), circuit("C2", "ac")], summary=summary
    )
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value) == (
        f"{folder / CIRCUITS.name}: 1 ac circuits where summary.json counts 0 "
        "(truncated or edited?)"
    )


def test_no_summary_json_is_refused(tmp_path):
    """Without summary.json a schedule cut at a line end cannot be told from a smaller plan,
    and the plant block has no totals: the folder is refused (it was read without it before)."""
    folder = write_folder(tmp_path / "a")
    (folder / "summary.json").unlink()
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value) == (
        f"{folder}: no summary.json (is it an output folder of 'routeplan plan'?)"
    )


@pytest.mark.parametrize(
    "keys",
    [
        ("tool",),
        ("tool", "name"),
        ("tool", "version"),
        ("circuits",),
        ("segments",),
        ("segments", "count"),
        ("segments", "over_capacity"),
        ("segments", "trench_m"),
        ("inverter_inputs",),
        ("inverter_inputs", "over_limit"),
        ("conductor_m_total",),
        ("loss_w_total",),
        ("energy_loss_kwh_total",),
    ],
)
def test_each_key_missing_from_summary_json_is_named(tmp_path, keys):
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    at = summary
    for k in keys[:-1]:
        at = at[k]
    del at[keys[-1]]
    # a whole object missing is named by the first key diff reads in it
    first = {
        ("tool",): "tool.name",
        ("segments",): "segments.count",
        ("inverter_inputs",): "inverter_inputs.over_limit",
    }.get(keys, ".".join(keys))
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: no key {first} (not a summary of 'routeplan plan')"
    )


def test_a_summary_json_of_another_tool_or_not_an_object(tmp_path):
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    summary["tool"]["name"] = "othertool"
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: tool.name is 'othertool', not 'routeplan'"
    )
    for text in ("[]", '"summary"', "3", '{"tool": "routeplan"}'):
        assert summary_refused(folder, text) == (
            f"{folder / 'summary.json'}: no key tool.name (not a summary of 'routeplan plan')"
        ), text
    assert summary_refused(folder, "{").startswith(
        f"{folder / 'summary.json'}: unreadable (JSONDecodeError: Expecting property name "
        "enclosed in double quotes"
    )
    (folder / "summary.json").write_bytes(b'{"tool": "\xff"}')
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value).startswith(f"{folder / 'summary.json'}: unreadable (UnicodeDecodeError: ")


@pytest.mark.parametrize(
    ("keys", "value", "shown"),
    [
        (("segments", "count"), "two", "'two'"),
        (("segments", "over_capacity"), None, "None"),
        (("segments", "trench_m"), [120.0], "[120.0]"),
        (("inverter_inputs", "over_limit"), True, "True"),  # a JSON true is no count
        (("conductor_m_total",), float("nan"), "nan"),  # JSON as Python writes it: NaN
        (("loss_w_total",), float("inf"), "inf"),
        (("energy_loss_kwh_total",), "1.5", "'1.5'"),
        (("circuits", "string", "circuits"), "2", "'2'"),
        (("circuits", "string", "fail"), None, "None"),
    ],
)
def test_a_summary_json_value_that_is_not_a_number(tmp_path, keys, value, shown):
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    at = summary
    for k in keys[:-1]:
        at = at[k]
    at[keys[-1]] = value
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: {'.'.join(keys)} is {shown}, not a number"
    )


def test_a_kind_in_summary_json_without_its_counts(tmp_path):
    # a kind whose entry is no object, or lacks its counts: the count is named as missing
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    summary["circuits"]["string"] = 2
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: no key circuits.string.circuits "
        "(not a summary of 'routeplan plan')"
    )
    summary["circuits"]["string"] = {"circuits": 2}
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: no key circuits.string.fail "
        "(not a summary of 'routeplan plan')"
    )


@pytest.mark.parametrize("value", [2.5, -1])
@pytest.mark.parametrize("key", ["circuits.string.circuits", "segments.count"])
def test_a_count_in_summary_json_must_be_a_whole_number(tmp_path, key, value):
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    *parents, last = key.split(".")
    target = summary
    for k in parents:
        target = target[k]
    target[last] = value
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: {key} is {value!r}, not a count"
    )


def test_a_summary_json_whose_circuits_is_not_an_object(tmp_path):
    folder = write_folder(tmp_path / "a")
    summary = json.loads((folder / "summary.json").read_text("utf-8"))
    summary["circuits"] = [{"circuits": 2, "fail": 0}]
    assert summary_refused(folder, summary) == (
        f"{folder / 'summary.json'}: circuits is [{{'circuits': 2, 'fail': 0}}], not an object "
        "of circuit kinds"
    )


def test_a_summary_json_count_beyond_binary64(tmp_path):
    # a JSON integer is read exactly (Python int); 10**400 has no binary64 value (largest
    # finite about 1.8e308, IEEE 754), so it is no number the diff can compare
    folder = write_folder(tmp_path / "a")
    text = (folder / "summary.json").read_text("utf-8")
    text = text.replace('"over_limit": 0', '"over_limit": 1' + "0" * 400)
    assert summary_refused(folder, text) == (
        f"{folder / 'summary.json'}: inverter_inputs.over_limit is {10**400!r}, not a number"
    )


def test_a_kind_counted_zero_in_summary_json_with_no_rows(tmp_path):
    summary = summary_of([circuit("C1"), circuit("C2")], [segment(), segment("T1", 60, 120)])
    summary["circuits"]["subarray"] = {"circuits": 0, "fail": 0}
    plans = read_plan(write_folder(tmp_path / "a", summary=summary))
    assert plans["circuits"]["kind"].tolist() == ["string", "string"]


# ---- the changes file


def test_write_diff_guards_text_and_ids_not_numbers(tmp_path):
    old = write_folder(tmp_path / "a", circuits=[circuit("=C1"), circuit("C2")])
    new = write_folder(
        tmp_path / "b",
        circuits=[circuit("=C1", to_id="-CB2", route_m="-1.50"), circuit("C2", status="@x")],
    )
    path = write_diff(diff_outputs(old, new), tmp_path / "out")
    assert path == tmp_path / "out" / "diff.csv"
    # −1.50 − 120.00 = −121.50
    assert path.read_text("utf-8") == (
        "section,id,change,field,old,new,delta,scope,cause,note\n"
        "circuit,'=C1,changed,to_id,CB1,'-CB2,,route,,\n"
        "circuit,'=C1,changed,route_m,120.00,-1.50,-121.50,route,,\n"
        "circuit,C2,changed,status,ok,'@x,,route,,\n"
    )


def test_write_diff_guards_causes_and_segment_ids(tmp_path):
    """A follower's cause is an id (guarded like one); a segment event's old and new are id
    lists (text, guarded); a segment's length is a number (as is)."""
    old = write_folder(
        tmp_path / "a",
        circuits=[circuit("=A1", "array", from_id="CB1"), circuit("S1")],
        segments=[segment("-T1", 0, 60), segment("-T1", 60, 120)],
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[
            circuit("=A1", "array", from_id="CB1", utilisation="0.500"),
            circuit("S1", vdrop_total_pct="1.120"),
        ],
        segments=[segment("-T1", 0, 120, length_m="120.10")],
    )
    path = write_diff(diff_outputs(old, new), tmp_path / "out")
    assert path.read_text("utf-8").splitlines() == [
        "section,id,change,field,old,new,delta,scope,cause,note",
        "circuit,'=A1,changed,utilisation,0.438,0.500,+0.062,value,,",  # 0.500 − 0.438
        "circuit,S1,changed,vdrop_total_pct,1.100,1.120,+0.020,follows,'=A1,",
        # two old segments, one new: merged at 60.0 m; 60 + 60 = 120.00 m old, 120.10 new
        # (the note holds commas: quoted, RFC 4180 §2.6)
        "segment,'-T1@0.0-60.0,merged,,'-T1@0.0-60.0; -T1@60.0-120.0,'-T1@0.0-120.0,,,,"
        "\"'-T1@0.0-60.0 (2 circuits), -T1@60.0-120.0 (2 circuits) merged at 60.0 m into "
        '-T1@0.0-120.0 (2 circuits)"',
        "segment,'-T1@0.0-60.0,changed,length_m,120.00,120.10,+0.10,,,"
        "total length of -T1@0.0-60.0; -T1@60.0-120.0 → -T1@0.0-120.0",  # no lead: as is
        # summary.json: 60 + 60 = 120 m of trench before, 120.1 after
        "plant,trench,changed,m,120.00,120.10,+0.10,,,",
    ]


# ---- details of reading: each pins a rule a reader of the schedule relies on


def test_of_two_ids_twice_the_one_met_first_is_named():
    # A on lines 2 and 5, B on lines 3 and 4: A's first line comes first
    a, b = seg("T1", 0, 10), seg("T1", 10, 20)
    assert refused((SEG + a + b + b + a).encode()) == (
        "F.csv: segment_id 'T1@0.0-10.0' on lines 2 and 5"
    )


def test_a_key_of_two_columns_twice_is_named_as_a_pair():
    table = Table("F.csv", ("trench_id", "part"), ("note",))
    text = "trench_id,part,note\nT1,1,a\nT1,2,b\nT1,1,c\n"
    with pytest.raises(DiffError) as e:
        parse_schedule(text.encode(), table, "F.csv")
    assert str(e.value) == "F.csv: trench_id, part ('T1', '1') on lines 2 and 4"


def test_cells_are_read_exactly_as_written():
    # ids that differ only in a trailing NUL character are two ids, and a line break
    # inside a quoted cell is kept as written (CR LF and a lone CR too: RFC 4180 §2.6)
    text = (
        SEG
        + seg("T1", 0, 10, segment_id="T1", status='"a\r\nb"')
        + seg("T1", 10, 20, segment_id="T1\x00", status='"c\rd"')
    )
    frame = parse_schedule(text.encode(), SEGMENTS, "F.csv")
    assert frame["segment_id"].tolist() == ["T1", "T1\x00"]
    assert frame["status"].tolist() == ["a\r\nb", "c\rd"]
    # records ended by CR, CR LF or LF alike (RFC 4180 §2.1 asks CR LF; the csv module reads
    # all three)
    one, two, three = seg("T1", 0, 10)[:-1], seg("T1", 10, 20)[:-1], seg("T1", 20, 30)[:-1]
    text = SEG.replace("\n", "\r") + one + "\r\n" + two + "\r" + three + "\n"
    frame = parse_schedule(text.encode(), SEGMENTS, "F.csv")
    assert frame["segment_id"].tolist() == ["T1@0.0-10.0", "T1@10.0-20.0", "T1@20.0-30.0"]
    # and a line named in a message is counted the same way
    bad = text.replace(three, seg("T1", 20, 30, strings="x1")[:-1])
    assert refused(bad.encode()) == "F.csv: line 4: column strings: 'x1' is not a number"


def test_a_record_after_a_blank_first_record_names_the_blank_line():
    for blanks in ("\n\n", "\n"):
        text = SEG + blanks + seg()
        assert refused(text.encode()) == (
            f"F.csv: line 2: 0 fields where the header has {WIDTH} (truncated or not a schedule)"
        )


def test_an_allowed_empty_cell_before_a_wrong_number_names_the_wrong_number():
    text = SEG + seg("T1", 0, 10, strings="") + seg("T1", 10, 20, strings="x1")
    assert refused(text.encode()) == "F.csv: line 3: column strings: 'x1' is not a number"


def test_quantities_compare_as_binary64_numbers():
    # 2**53 + 1 is not a binary64 number (IEEE 754: 53-bit significand): it reads as 2**53,
    # so the two bills hold the same quantity
    old = parse_schedule(
        csv_text(QUANTITY_HEADER, [quantity("cable", "4", "9007199254740993")]).encode(),
        QUANTITIES,
        "a",
    )
    new = parse_schedule(
        csv_text(QUANTITY_HEADER, [quantity("cable", "4", "9007199254740992")]).encode(),
        QUANTITIES,
        "b",
    )
    assert quantity_rows(old, new) == []


def test_a_schedule_that_cannot_be_read(tmp_path, monkeypatch):
    folder = write_folder(tmp_path / "a")

    def denied(self):
        raise PermissionError(13, "Permission denied", str(self))

    monkeypatch.setattr(Path, "read_bytes", denied)
    with pytest.raises(DiffError) as e:
        read_schedule(folder, CIRCUITS)
    assert str(e.value) == f"{folder / CIRCUITS.name}: cannot be read (Permission denied)"


def test_the_changes_folder_beside_other_files_only_with_force(tmp_path):
    folder = tmp_path / "out"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine", "utf-8")
    with pytest.raises(FolderError) as e:
        open_diff_folder(folder)
    assert str(folder) in str(e.value) and "'notes.txt'" in str(e.value)
    assert "add --force" in str(e.value)
    d = diff_outputs(write_folder(tmp_path / "a"), write_folder(tmp_path / "b"))
    with open_diff_folder(folder, force=True) as out:
        write_diff(d, out)
    assert (folder / "diff.csv").read_text("utf-8") == (
        "section,id,change,field,old,new,delta,scope,cause,note\n"
    )
    assert (folder / "notes.txt").read_text("utf-8") == "mine"
    # a diff.csv routeplan did not write is never replaced, not even with force
    other = tmp_path / "other"
    other.mkdir()
    (other / "diff.csv").write_text("mine", "utf-8")
    with pytest.raises(FolderError) as e:
        open_diff_folder(other, force=True)
    assert "'diff.csv' is there but was not written by routeplan" in str(e.value)
    assert (other / "diff.csv").read_text("utf-8") == "mine"


def test_a_cable_line_without_a_size_is_named(tmp_path):
    old = write_folder(tmp_path / "a")
    new = write_folder(tmp_path / "b", quantities=[quantity("cable", "", "252.00")])
    with pytest.raises(DiffError) as e:
        diff_outputs(old, new)
    assert (
        str(e.value) == f"{new / QUANTITIES.name}: line 2: column size_mm2: empty on a cable line"
    )


def test_a_follower_of_an_added_circuit_names_it_as_its_cause(tmp_path):
    """CB1's array cable A1 replaced by A7 (a new id, e.g. another kind of cable): string S1,
    landing on CB1, sees only its cumulative drop change, caused by A7."""
    old = write_folder(
        tmp_path / "a", circuits=[circuit("A1", "array", from_id="CB1"), circuit("S1")]
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[circuit("A7", "array", from_id="CB1"), circuit("S1", vdrop_total_pct="1.300")],
    )
    d = diff_outputs(old, new)
    assert changes(d, "circuit")[-1] == (
        "circuit", "S1", "changed", "vdrop_total_pct", "1.100", "1.300", "+0.200", "follows",
        "A7", "",
    )  # fmt: skip
    assert "  1 string circuits: cumulative DC drop +0.200 % after A7 (added)" in diff_lines(d)
