"""``routeplan.diff`` on small schedules written by hand (no plan is run, so these tests are
quick enough for mutation testing): every change listed with its section, id, field and the
old and new text; every damaged schedule refused with one line naming the file, the line
and the column. The expected lines are counted by hand in the text each test writes; CSV
is read as RFC 4180 says (Python's ``csv`` module)."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pandas as pd
import pytest

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
from routeplan.errors import FolderError

CIRCUIT_HEADER = [
    "circuit_id", "kind", "from_id", "to_id", "trench_segments", "route_m", "cable_m",
    "material", "size_mm2", "parallel", "vdrop_pct", "vdrop_total_pct", "status",
]  # fmt: skip
SEGMENT_HEADER = ["segment_id", "circuits", "strings", "subarrays", "arrays", "ac", "status"]
QUANTITY_HEADER = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "unit", "quantity"]


def circuit(cid: str, kind: str = "string", **over: str) -> list[str]:
    row = dict(
        circuit_id=cid, kind=kind, from_id="S" + cid, to_id="CB1", trench_segments="T1;T2",
        route_m="120.0", cable_m="126.0", material="Cu", size_mm2="4", parallel="1",
        vdrop_pct="0.52", vdrop_total_pct="1.10", status="ok",
    )  # fmt: skip
    row.update(over)
    return [row[c] for c in CIRCUIT_HEADER]


def segment(sid: str, **over: str) -> list[str]:
    row = dict(segment_id=sid, circuits="2", strings="2", subarrays="0", arrays="0", ac="0")
    row["status"] = "ok"
    row.update(over)
    return [row[c] for c in SEGMENT_HEADER]


def quantity(item: str, size: str, amount: str, kind: str = "string") -> list[str]:
    return [item, kind, "Cu", size, "trench", "0.8", "m", amount]


def csv_text(header: list[str], rows: list[list[str]]) -> str:
    out = io.StringIO(newline="")
    csv.writer(out, lineterminator="\n").writerows([header, *rows])
    return out.getvalue()


def write_folder(
    folder: Path,
    circuits: list[list[str]] | None = None,
    segments: list[list[str]] | None = None,
    quantities: list[list[str]] | None = None,
    summary: dict | bool | None = True,
) -> Path:
    """An output folder as ``routeplan plan`` leaves it, as far as the diff reads it."""
    circuits = [circuit("C1"), circuit("C2")] if circuits is None else circuits
    segments = [segment("T1"), segment("T2")] if segments is None else segments
    quantities = [quantity("cable", "4", "252.00")] if quantities is None else quantities
    folder.mkdir(parents=True)
    (folder / CIRCUITS.name).write_text(csv_text(CIRCUIT_HEADER, circuits), "utf-8")
    (folder / SEGMENTS.name).write_text(csv_text(SEGMENT_HEADER, segments), "utf-8")
    (folder / QUANTITIES.name).write_text(csv_text(QUANTITY_HEADER, quantities), "utf-8")
    if summary is True:
        kinds = pd.Series([r[1] for r in circuits]).value_counts().to_dict()
        summary = {
            "circuits": {k: {"circuits": int(n)} for k, n in kinds.items()},
            "segments": {"count": len(segments)},
        }
    if summary:
        (folder / "summary.json").write_text(json.dumps(summary), "utf-8")
    return folder


def changes(diff: PlanDiff) -> list[tuple[str, ...]]:
    return [tuple(r) for r in diff.changes.itertuples(index=False, name=None)]


# ---- what changed


def test_identical_plans_have_no_changes(tmp_path):
    d = diff_outputs(write_folder(tmp_path / "a"), write_folder(tmp_path / "b"))
    assert d.empty
    assert list(d.changes.columns) == ["section", "id", "change", "field", "old", "new"]
    assert d.ids("circuit") == []


def test_added_removed_and_changed_circuits_and_segments_in_report_order(tmp_path):
    old = write_folder(
        tmp_path / "a",
        circuits=[circuit("C1"), circuit("C2"), circuit("C9", "array")],
        segments=[segment("T1"), segment("T2")],
    )
    new = write_folder(
        tmp_path / "b",
        circuits=[
            circuit("C0", "array"),
            circuit("C2", route_m="121.5", status="vdrop", size_mm2="6"),
            circuit("C1"),
        ],
        segments=[segment("T2", strings="3", status="full"), segment("T3")],
    )
    d = diff_outputs(old, new)
    assert changes(d) == [
        ("circuit", "C0", "added", "", "", ""),
        ("circuit", "C9", "removed", "", "", ""),
        # fields in CIRCUIT_FIELDS order, values as written
        ("circuit", "C2", "changed", "route_m", "120.0", "121.5"),
        ("circuit", "C2", "changed", "size_mm2", "4", "6"),
        ("circuit", "C2", "changed", "status", "ok", "vdrop"),
        ("segment", "T3", "added", "", "", ""),
        ("segment", "T1", "removed", "", "", ""),
        ("segment", "T2", "changed", "strings", "2", "3"),
        ("segment", "T2", "changed", "status", "ok", "full"),
    ]
    assert d.ids("circuit") == ["C0", "C2", "C9"]
    assert d.ids("circuit", "changed") == ["C2"]
    assert d.ids("segment", "added") == ["T3"]
    assert not d.empty


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
    # keys sorted as text tuples; the id joins the filled key fields with a space
    assert changes(d) == [
        ("quantity", "cable string Cu 10 trench 0.8 m", "removed", "quantity", "5.00", "0.00"),
        ("quantity", "cable string Cu 16 trench 0.8 m", "added", "quantity", "0.00", "7.50"),
        ("quantity", "cable string Cu 6 trench 0.8 m", "changed", "quantity", "10.00", "10.01"),
    ]


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
    assert list(plans) == ["circuits", "segments", "quantities"]
    assert list(plans["circuits"].columns) == list(CIRCUITS.columns)
    assert "from_id" not in plans["circuits"].columns
    assert plans["circuits"]["route_m"].tolist() == ["120.0", "120.0"]  # text, as written
    assert list(plans["quantities"].columns) == list(QUANTITIES.columns)
    assert plans["quantities"]["item"].tolist() == ["cable"]
    assert Table("x.csv", ("a", "b"), ("b", "c", "a")).columns == ("a", "b", "c")


# ---- damaged schedules


def refused(data: bytes, table: Table = SEGMENTS) -> str:
    with pytest.raises(DiffError) as e:
        parse_schedule(data, table, "F.csv")
    return str(e.value)


SEG = ",".join(SEGMENT_HEADER) + "\n"


def test_empty_and_undecodable_and_cut_files():
    assert refused(b"") == "F.csv: empty file"
    assert refused(b" \n\n") == "F.csv: empty file"
    assert refused(b"ab\xffc\n") == "F.csv: not UTF-8 text (byte 2): not a schedule"
    assert refused(SEG.encode() + b"T1,1,1,0,0,0,ok") == (
        "F.csv: truncated: the last line has no line end"
    )


def test_a_header_without_a_needed_column_or_with_one_twice():
    assert refused(b"segment_id,circuits,ac,status\n") == (
        "F.csv: no column strings, arrays (a schedule of 'routeplan plan' has it)"
    )
    assert refused((SEG[:-1] + ",status,x,x\n").encode()) == (
        "F.csv: column status, x appears more than once"
    )
    assert refused(b'"segment_id\n') == ("F.csv: line 1: not valid CSV (unexpected end of data)")


def test_a_record_with_the_wrong_number_of_fields_names_its_line():
    text = SEG + "T1,1,1,0,0,0,ok\n" + 'T2,1,1,0,0,0,"a\nb"\n' + "T3,1,1\n"
    assert refused(text.encode()) == (
        "F.csv: line 5: 3 fields where the header has 7 (truncated or not a schedule)"
    )
    # blank lines at the end are harmless, a record after them is not
    ok = parse_schedule((SEG + "T1,1,1,0,0,0,ok\n\n\n").encode(), SEGMENTS, "F.csv")
    assert ok["segment_id"].tolist() == ["T1"]
    text = SEG + "T1,1,1,0,0,0,ok\n\n\nT2,1,1,0,0,0,ok\n"
    assert refused(text.encode()) == (
        "F.csv: line 3: 0 fields where the header has 7 (truncated or not a schedule)"
    )
    text = SEG + 'T1,1,1,0,0,0,"a\nb"\nT2,1,1,0,0,0,"ok\n'
    # the record that never ends starts on line 4
    assert refused(text.encode()) == "F.csv: line 4: not valid CSV (unexpected end of data)"


def test_numbers_empty_text_and_nan_are_named_by_line_and_column():
    text = SEG + "T1,1,1,0,0,,ok\nT2,1,x1,0,0,0,ok\n"
    assert refused(text.encode()) == "F.csv: line 3: column strings: 'x1' is not a number"
    text = SEG + "T1,1,1,0,0,0,ok\nT2,1,1,nan,0,0,ok\n"
    assert refused(text.encode()) == "F.csv: line 3: column subarrays: 'nan' is not a number"
    # one reading whatever else the column holds: text Python's float() would take (digit
    # separators, non-ASCII digits, inf) is no number routeplan writes, beside a number or
    # beside other text alike
    for cell in ("1_000", "\u0661\u0662", "inf"):
        for other in ("1", "x1"):
            text = SEG + f"T1,1,{cell},0,0,0,ok\nT2,1,{other},0,0,0,ok\n"
            assert (
                refused(text.encode()) == f"F.csv: line 2: column strings: {cell!r} is not a number"
            )
    ok = parse_schedule((SEG + "T1,1,1e3,0,0,-0.5,ok\n").encode(), SEGMENTS, "F.csv")
    assert ok["strings"].tolist() == ["1e3"]
    # an empty number is allowed where the column may be empty ...
    ok = parse_schedule((SEG + "T1,,1,0,0,0,\n").encode(), SEGMENTS, "F.csv")
    assert ok["circuits"].tolist() == [""]
    # ... not in a column that must be filled
    q = ",".join(QUANTITY_HEADER) + "\ncable,string,Cu,4,trench,0.8,m,1\nfuse,,,,,,pc,\n"
    assert refused(q.encode(), QUANTITIES) == "F.csv: line 3: column quantity: empty"
    c = csv_text(CIRCUIT_HEADER, [circuit("C1"), circuit("C2", kind="")])
    assert refused(c.encode(), CIRCUITS) == "F.csv: line 3: column kind: empty"
    c = csv_text(CIRCUIT_HEADER, [circuit("C1"), circuit("")])
    assert refused(c.encode(), CIRCUITS) == "F.csv: line 3: column circuit_id: empty"


def test_an_id_twice_names_both_lines():
    text = SEG + "T1,1,1,0,0,0,ok\nT2,1,1,0,0,0,ok\nT3,1,1,0,0,0,ok\nT2,1,1,0,0,0,ok\n"
    assert refused(text.encode()) == "F.csv: segment_id 'T2' on lines 3 and 5"
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


# ---- summary.json counts


def test_rows_counted_against_summary_json(tmp_path):
    summary = {"circuits": {"string": {"circuits": 2}, "array": {"circuits": 1}}}
    summary["segments"] = {"count": 2}
    folder = write_folder(tmp_path / "a", summary=summary)
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value) == (
        f"{folder / CIRCUITS.name}: 0 array circuits where summary.json counts 1 "
        "(truncated or edited?)"
    )
    summary = {"circuits": {"string": {"circuits": 2}}, "segments": {"count": 3}}
    folder = write_folder(tmp_path / "b", summary=summary)
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value) == (
        f"{folder / SEGMENTS.name}: 2 trench segments where summary.json counts 3 "
        "(truncated or edited?)"
    )
    summary = {"circuits": {"string": {"circuits": 2}}, "segments": {"count": 2}}
    folder = write_folder(tmp_path / "c", circuits=[circuit("C1"), circuit("C2", "ac")])
    (folder / "summary.json").write_text(json.dumps(summary), "utf-8")
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value) == (
        f"{folder / CIRCUITS.name}: 1 ac circuits where summary.json counts 0 "
        "(truncated or edited?)"
    )
    # no summary.json: nothing to count against
    assert len(read_plan(write_folder(tmp_path / "d", summary=False))["circuits"]) == 2


@pytest.mark.parametrize(
    ("text", "error"),
    [
        ("{", "JSONDecodeError: Expecting property name enclosed in double quotes"),
        ('{"circuits": {}}', "KeyError: 'segments'"),
        ('{"circuits": {"string": 2}, "segments": {"count": 2}}', "TypeError: "),
        ('{"circuits": [], "segments": {"count": 2}}', "AttributeError: "),
        ('{"circuits": {}, "segments": {"count": "two"}}', "ValueError: invalid literal"),
    ],
)
def test_an_unreadable_summary_json(tmp_path, text, error):
    folder = write_folder(tmp_path / "a", summary=False)
    (folder / "summary.json").write_text(text, "utf-8")
    with pytest.raises(DiffError) as e:
        read_plan(folder)
    assert str(e.value).startswith(f"{folder / 'summary.json'}: unreadable ({error}")


# ---- the changes file


def test_write_diff_guards_text_and_ids_not_numbers(tmp_path):
    old = write_folder(tmp_path / "a", circuits=[circuit("=C1"), circuit("C2")])
    new = write_folder(
        tmp_path / "b",
        circuits=[circuit("=C1", to_id="-CB2", route_m="-1.5"), circuit("C2", status="@x")],
    )
    path = write_diff(diff_outputs(old, new), tmp_path / "out")
    assert path == tmp_path / "out" / "changes.csv"
    assert path.read_text("utf-8") == (
        "section,id,change,field,old,new\n"
        "circuit,'=C1,changed,to_id,CB1,'-CB2\n"
        "circuit,'=C1,changed,route_m,120.0,-1.5\n"
        "circuit,C2,changed,status,ok,'@x\n"
    )


# ---- details of reading: each pins a rule a reader of the schedule relies on


def test_of_two_ids_twice_the_one_met_first_is_named():
    # T1 on lines 2 and 5, T2 on lines 3 and 4: T1's first line comes first
    text = SEG + "T1,1,1,0,0,0,ok\nT2,1,1,0,0,0,ok\nT2,1,1,0,0,0,ok\nT1,1,1,0,0,0,ok\n"
    assert refused(text.encode()) == "F.csv: segment_id 'T1' on lines 2 and 5"


def test_a_key_of_two_columns_twice_is_named_as_a_pair():
    table = Table("F.csv", ("trench_id", "part"), ("note",))
    text = "trench_id,part,note\nT1,1,a\nT1,2,b\nT1,1,c\n"
    with pytest.raises(DiffError) as e:
        parse_schedule(text.encode(), table, "F.csv")
    assert str(e.value) == "F.csv: trench_id, part ('T1', '1') on lines 2 and 4"


def test_cells_are_read_exactly_as_written():
    # ids that differ only in a trailing NUL character are two ids, and a line break
    # inside a quoted cell is kept as written (CR LF and a lone CR too: RFC 4180 §2.6)
    text = SEG + 'T1,1,1,0,0,0,"a\r\nb"\nT1\x00,1,1,0,0,0,"c\rd"\n'
    frame = parse_schedule(text.encode(), SEGMENTS, "F.csv")
    assert frame["segment_id"].tolist() == ["T1", "T1\x00"]
    assert frame["status"].tolist() == ["a\r\nb", "c\rd"]
    # records ended by CR, CR LF or LF alike (RFC 4180 §2.1 asks CR LF; the csv module reads
    # all three)
    text = SEG.replace("\n", "\r") + "T1,1,1,0,0,0,ok\r\nT2,1,1,0,0,0,ok\rT3,1,1,0,0,0,ok\n"
    frame = parse_schedule(text.encode(), SEGMENTS, "F.csv")
    assert frame["segment_id"].tolist() == ["T1", "T2", "T3"]
    # and a line named in a message is counted the same way
    bad = text.replace("T3,1,1,", "T3,1,x1,")
    assert refused(bad.encode()) == "F.csv: line 4: column strings: 'x1' is not a number"


def test_a_record_after_a_blank_first_record_names_the_blank_line():
    text = SEG + "\n\nT1,1,1,0,0,0,ok\n"
    assert refused(text.encode()) == (
        "F.csv: line 2: 0 fields where the header has 7 (truncated or not a schedule)"
    )
    text = SEG + "\nT1,1,1,0,0,0,ok\n"
    assert refused(text.encode()) == (
        "F.csv: line 2: 0 fields where the header has 7 (truncated or not a schedule)"
    )


def test_an_allowed_empty_cell_before_a_wrong_number_names_the_wrong_number():
    text = SEG + "T1,1,,0,0,0,ok\nT2,1,x1,0,0,0,ok\n"
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


def test_a_kind_counted_zero_in_summary_json_with_no_rows(tmp_path):
    summary = {"circuits": {"string": {"circuits": 2}, "subarray": {"circuits": 0}}}
    summary["segments"] = {"count": 2}
    plans = read_plan(write_folder(tmp_path / "a", summary=summary))
    assert plans["circuits"]["kind"].tolist() == ["string", "string"]


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
    assert (folder / "changes.csv").read_text("utf-8") == "section,id,change,field,old,new\n"
    assert (folder / "notes.txt").read_text("utf-8") == "mine"
    # a changes.csv routeplan did not write is never replaced, not even with force
    other = tmp_path / "other"
    other.mkdir()
    (other / "changes.csv").write_text("mine", "utf-8")
    with pytest.raises(FolderError) as e:
        open_diff_folder(other, force=True)
    assert "'changes.csv' is there but was not written by routeplan" in str(e.value)
    assert (other / "changes.csv").read_text("utf-8") == "mine"
