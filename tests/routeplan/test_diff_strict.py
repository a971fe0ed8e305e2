"""``routeplan diff`` reading and writing, the cases a damaged or edited plan can hit beyond
those of test_diff_robust: columns twice, a header that is not CSV, blank lines, which of
several duplicate ids is named, an empty number before a wrong one, summary.json counts
(kinds with no circuits, a kind it does not count, a row missing), line breaks kept inside a
cell and mixed line ends between records (Python's csv module, read with ``newline=''`` as
its documentation requires), an I/O error, and the diff's own folder (``--out``,
``--force``, a user's ``diff.csv``, the CSV guard on text but not on numbers: OWASP "CSV
Injection", from memory)."""

from __future__ import annotations

import csv
import errno
import io
import json
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import CIRCUITS, DiffError, diff_outputs, parse_schedule, write_diff
from routeplan.errors import FolderError

from ..conftest import base_frames, write_site

runner = CliRunner()
CABLE, TRENCH, QTY = "cable_schedule.csv", "trench_schedule.csv", "quantities.csv"


def rows_of(path: Path) -> list[list[str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.reader(fh))


def write_rows(path: Path, rows: list[list[str]]) -> None:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    path.write_text(buf.getvalue(), encoding="utf-8")


def plan(site: Path, out: Path) -> Path:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture(scope="module")
def base(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("diff-strict")
    return plan(write_site(tmp / "site", base_frames()), tmp / "out")


@pytest.fixture
def copy(base, tmp_path) -> Path:
    out = tmp_path / "copy"
    shutil.copytree(base, out)
    return out


def one_error(old: Path, new: Path) -> str:
    result = runner.invoke(app, ["diff", str(old), str(new)])
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    return lines[0]


def test_columns_twice(base, copy):
    rows = rows_of(copy / CABLE)
    # two columns the diff does not read renamed to two it does
    rows[0][rows[0].index("insulation")] = "route_m"
    rows[0][rows[0].index("note")] = "kind"
    write_rows(copy / CABLE, rows)
    message = f"error: {copy / CABLE}: column kind, route_m appears more than once"
    assert one_error(base, copy) == message


def test_a_header_that_is_not_csv(base, copy):
    data = (copy / TRENCH).read_bytes()
    (copy / TRENCH).write_bytes(b'"' + data[: data.index(b"\n") + 1])  # a quote never closed
    message = f"error: {copy / TRENCH}: line 1: not valid CSV (unexpected end of data)"
    assert one_error(copy, base) == message


def test_blank_lines_before_a_record_name_the_first(base, copy):
    data = (copy / TRENCH).read_bytes()
    end = data.index(b"\n") + 1
    (copy / TRENCH).write_bytes(data[:end] + b"\n\n\n" + data[end:])  # lines 2, 3 and 4
    width = len(rows_of(base / TRENCH)[0])
    assert one_error(base, copy) == (
        f"error: {copy / TRENCH}: line 2: 0 fields where the header has {width} "
        "(truncated or not a schedule)"
    )


def test_of_several_duplicate_ids_the_first_in_the_file_is_named(base, copy):
    rows = rows_of(copy / TRENCH)
    ids = [r[0] for r in rows[1:5]]
    # ids X Y Y X: X is the first id that appears twice (lines 2 and 5)
    for line, sid in zip((1, 2, 3, 4), (ids[0], ids[1], ids[1], ids[0]), strict=True):
        rows[line][0] = sid
    write_rows(copy / TRENCH, rows)
    assert (
        one_error(base, copy) == f"error: {copy / TRENCH}: segment_id {ids[0]!r} on lines 2 and 5"
    )


def test_an_empty_number_before_a_wrong_one(base, copy):
    # vdrop_pct may be empty; the text three lines further down is the error
    rows = rows_of(copy / CABLE)
    j = rows[0].index("vdrop_pct")
    rows[1][j], rows[4][j] = "", "about 1"
    write_rows(copy / CABLE, rows)
    message = f"error: {copy / CABLE}: line 5: column vdrop_pct: 'about 1' is not a number"
    assert one_error(base, copy) == message


def test_a_missing_row_is_counted_by_kind(base, copy):
    rows = rows_of(copy / CABLE)
    i = next(i for i, r in enumerate(rows) if r[1] == "string")
    write_rows(copy / CABLE, [*rows[:i], *rows[i + 1 :]])  # one of the 5 string circuits gone
    assert one_error(base, copy) == (
        f"error: {copy / CABLE}: 4 string circuits where summary.json counts 5 "
        "(truncated or edited?)"
    )


def test_a_kind_summary_json_does_not_count(base, copy):
    summary = json.loads((copy / "summary.json").read_text(encoding="utf-8"))
    del summary["circuits"]["ac"]
    (copy / "summary.json").write_text(json.dumps(summary), encoding="utf-8")
    assert one_error(base, copy) == (
        f"error: {copy / CABLE}: 1 ac circuits where summary.json counts 0 (truncated or edited?)"
    )


def test_a_plan_without_array_circuits(tmp_path):
    # rows straight to the inverter: summary.json counts 0 array circuits, none in the file
    frames = base_frames()
    frames["rows"]["to"] = "INV1"
    frames["combiners"] = frames["combiners"].iloc[0:0]
    out = plan(write_site(tmp_path / "site", frames), tmp_path / "out")
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert summary["circuits"]["array"]["circuits"] == 0
    same = tmp_path / "same"
    shutil.copytree(out, same)
    result = runner.invoke(app, ["diff", str(out), str(same)])
    assert result.exit_code == 0 and result.output == "no changes\n"


def test_line_breaks_inside_a_cell_are_kept():
    # text with CR LF, CR and LF inside quoted cells, as Python's csv module writes and reads
    # it (newline='' on both sides: csv module documentation; CR LF records, so that the
    # writer quotes a lone CR too)
    header = list(CIRCUITS.columns)
    rows = []
    for n, to in enumerate(["CB\r\n1", "CB\r2", "CB\n3"], start=1):
        row = dict.fromkeys(header, "1.5")
        row.update(circuit_id=f"R{n}/S1", kind="string", to_id=to, material="Cu", status="ok")
        row["trench_segments"] = "T1@0.0-10.0"
        rows.append([row[c] for c in header])
    buf = io.StringIO(newline="")
    csv.writer(buf, lineterminator="\r\n").writerows([header, *rows])  # quotes CR and LF
    frame = parse_schedule(buf.getvalue().encode("utf-8"), CIRCUITS, "x.csv")
    assert frame["to_id"].tolist() == ["CB\r\n1", "CB\r2", "CB\n3"]
    assert frame["circuit_id"].tolist() == ["R1/S1", "R2/S1", "R3/S1"]


def mixed_line_ends(path: Path) -> None:
    """The file's first record ends in CR (a classic Mac editor), its second in CR LF (a
    Windows one), the rest in LF."""
    lines = path.read_bytes().split(b"\n")
    path.write_bytes(lines[0] + b"\r" + lines[1] + b"\r\n" + b"\n".join(lines[2:]))


def test_mixed_line_ends_read_as_the_same_plan(base, copy):
    for name in (CABLE, TRENCH, QTY):
        mixed_line_ends(copy / name)
    result = runner.invoke(app, ["diff", str(base), str(copy)])
    # the bytes differ from what routeplan wrote (the manifest says so), the values do not
    warned = [
        f"warning: {copy / name} was edited since routeplan wrote it (it no longer matches its "
        "folder's manifest): the comparison shows the edits as changes"
        for name in (CABLE, TRENCH, QTY)
    ]
    assert result.exit_code == 0 and result.output.splitlines() == [*warned, "no changes"]


def test_mixed_line_ends_name_the_right_line(base, copy):
    rows = rows_of(copy / CABLE)
    rows[3][rows[0].index("route_m")] = "about 15"
    write_rows(copy / CABLE, rows)
    mixed_line_ends(copy / CABLE)
    message = f"error: {copy / CABLE}: line 4: column route_m: 'about 15' is not a number"
    assert one_error(base, copy) == message


def test_a_schedule_that_cannot_be_read(base, copy, monkeypatch):
    read = Path.read_bytes

    def failing(self: Path) -> bytes:
        if self.name == QTY and self.parent == copy:
            raise OSError(errno.EIO, "Input/output error")
        return read(self)

    monkeypatch.setattr(Path, "read_bytes", failing)
    with pytest.raises(DiffError) as info:
        diff_outputs(base, copy)
    assert str(info.value) == f"{copy / QTY}: cannot be read (Input/output error)"


# -- the diff's folder -------------------------------------------------------------------------


def edited(base: Path, copy: Path):
    """The copy with a text field given a formula lead and a number made negative."""
    rows = rows_of(copy / CABLE)
    to, vd = rows[0].index("to_id"), rows[0].index("vdrop_pct")
    array = next(r for r in rows if r[1] == "array")
    old_to, array[to] = array[to], "@INV2"
    string = next(r for r in rows if r[1] == "string")  # the first string circuit
    old_vd, string[vd] = string[vd], "-0.10"
    write_rows(copy / CABLE, rows)
    return array[0], old_to, string[0], old_vd


def test_write_diff_to_a_path_guards_text_not_numbers(base, copy, tmp_path):
    array_id, old_to, string_id, old_vd = edited(base, copy)
    # the base plan: A:CB1 goes to INV1, R1/S1 drops 0.558 % (its cable schedule)
    assert (array_id, old_to, string_id, old_vd) == ("A:CB1", "INV1", "R1/S1", "0.558")
    path = write_diff(diff_outputs(base, copy), tmp_path / "d")
    assert path == tmp_path / "d" / "diff.csv"
    assert rows_of(path) == [
        ["section", "id", "change", "field", "old", "new", "delta", "scope", "cause", "note"],
        # text: guarded, no delta; a new destination is a change of route
        ["circuit", "A:CB1", "changed", "to_id", "INV1", "'@INV2", "", "route", "", ""],
        # a number: as is; −0.10 − 0.558 = −0.658 (3 decimals); the same route and cable
        ["circuit", "R1/S1", "changed", "vdrop_pct", "0.558", "-0.10", "-0.658", "value", "", ""],
    ]


def test_write_diff_to_a_path_refuses_a_folder_of_other_files(base, copy, tmp_path):
    folder = tmp_path / "d"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(FolderError, match="is not empty and was not written by routeplan"):
        write_diff(diff_outputs(base, copy), folder)
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt"]


def test_diff_out_with_force_writes_beside_other_files(base, copy, tmp_path):
    edited(base, copy)
    folder = tmp_path / "d"
    folder.mkdir()
    (folder / "notes.txt").write_text("mine", encoding="utf-8")
    args = ["diff", str(base), str(copy), "--out", str(folder)]
    refused = runner.invoke(app, args)
    assert refused.exit_code == 2 and "--force" in refused.stderr
    result = runner.invoke(app, [*args, "--force"])
    assert result.exit_code == 0, result.output
    assert (folder / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert len(rows_of(folder / "diff.csv")) == 3  # the header and the two changes


def test_diff_out_never_replaces_a_users_diff_csv(base, copy, tmp_path):
    edited(base, copy)
    folder = tmp_path / "d"
    folder.mkdir()
    (folder / "diff.csv").write_text("my own list", encoding="utf-8")
    result = runner.invoke(app, ["diff", str(base), str(copy), "--out", str(folder), "--force"])
    assert result.exit_code == 2
    assert "'diff.csv' is there but was not written by routeplan" in result.stderr
    assert str(folder) in result.stderr
    assert (folder / "diff.csv").read_text(encoding="utf-8") == "my own list"


def test_diff_out_keeps_a_users_changes_csv_with_force(base, copy, tmp_path):
    # the file name an earlier routeplan wrote: a user's file of that name is only a file
    # beside the diff now, kept as it is
    edited(base, copy)
    folder = tmp_path / "d"
    folder.mkdir()
    (folder / "changes.csv").write_text("my own list", encoding="utf-8")
    result = runner.invoke(app, ["diff", str(base), str(copy), "--out", str(folder), "--force"])
    assert result.exit_code == 0, result.output
    assert (folder / "changes.csv").read_text(encoding="utf-8") == "my own list"
    assert len(rows_of(folder / "diff.csv")) == 3


def test_diff_out_checks_the_folder_before_the_plans(base, copy, tmp_path):
    # a user's diff.csv in the folder and a damaged plan: the folder is named (it is
    # checked before the comparison, and nothing is compared)
    (copy / TRENCH).write_bytes(b"")
    folder = tmp_path / "d"
    folder.mkdir()
    (folder / "diff.csv").write_text("my own list", encoding="utf-8")
    result = runner.invoke(app, ["diff", str(base), str(copy), "--out", str(folder), "--force"])
    assert result.exit_code == 2
    assert len(result.stderr.splitlines()) == 1
    assert "'diff.csv' is there but was not written by routeplan" in result.stderr
    assert (folder / "diff.csv").read_text(encoding="utf-8") == "my own list"
