"""``routeplan diff`` never reports "no changes" for a damaged plan: each damaged schedule is
one line on stderr naming the file and the line or column, exit status 2; identical plans are
"no changes"; a real change is listed, with the ids as planned (the CSV guard removed)."""

from __future__ import annotations

import csv
import io
import json
import shutil
from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.diff import diff_outputs
from routeplan.outputs.columns import CIRCUIT_COLUMNS, SEGMENT_COLUMNS

from ..conftest import base_frames, write_site
from .test_text_safety import hostile_frames, hostile_toml

runner = CliRunner()
CABLE, TRENCH, QTY = "cable_schedule.csv", "trench_schedule.csv", "quantities.csv"


def plan(site: Path, out: Path) -> Path:
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    return out


@pytest.fixture(scope="module")
def plans(tmp_path_factory) -> dict[str, Path]:
    """The base site planned, and again after an edit (row R2 gives 2 strings, not 3)."""
    tmp = tmp_path_factory.mktemp("diff")
    frames = base_frames()
    edited = base_frames()
    edited["rows"].loc[edited["rows"]["id"] == "R2", "strings"] = 2
    return {
        "base": plan(write_site(tmp / "s0", frames), tmp / "o0"),
        "edited": plan(write_site(tmp / "s1", edited), tmp / "o1"),
    }


def diff(old: Path, new: Path, *extra: str):
    return runner.invoke(app, ["diff", str(old), str(new), *extra])


def rows_of(path: Path) -> list[list[str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.reader(fh))


def write_rows(path: Path, rows: list[list[str]]) -> None:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    path.write_text(buf.getvalue(), encoding="utf-8")


def rename_column(name: str, old: str, new: str) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        rows = rows_of(folder / name)
        rows[0] = [new if c == old else c for c in rows[0]]
        write_rows(folder / name, rows)

    return edit


def drop_column(name: str, column: str) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        rows = rows_of(folder / name)
        j = rows[0].index(column)
        write_rows(folder / name, [r[:j] + r[j + 1 :] for r in rows])

    return edit


def set_cell(name: str, row: int, column: str, value: str) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        rows = rows_of(folder / name)
        rows[row][rows[0].index(column)] = value
        write_rows(folder / name, rows)

    return edit


def duplicate_row(name: str, row: int) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        rows = rows_of(folder / name)
        write_rows(folder / name, [*rows[: row + 1], rows[row], *rows[row + 1 :]])

    return edit


def cut_bytes(name: str, keep: Callable[[bytes], int]) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        data = (folder / name).read_bytes()
        (folder / name).write_bytes(data[: keep(data)])

    return edit


def write_bytes(name: str, data: bytes) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        (folder / name).write_bytes(data)

    return edit


def remove(name: str) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        (folder / name).unlink()

    return edit


def edit_summary(change: Callable[[dict], object]) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
        change(summary)
        (folder / "summary.json").write_text(json.dumps(summary), encoding="utf-8")

    return edit


def last_line_number(folder: Path, name: str) -> int:
    return (folder / name).read_bytes().count(b"\n")


#: damage → the message after "error: <folder>/" ({n}: the last line's number)
DAMAGE = {
    "missing file": (remove(CABLE), None),
    "empty file": (write_bytes(TRENCH, b""), f"{TRENCH}: empty file"),
    "cut inside a line": (
        cut_bytes(CABLE, lambda d: len(d) - 7),
        f"{CABLE}: truncated: the last line has no line end",
    ),
    "cut, with a line end added": (
        lambda f: (f / CABLE).write_bytes((f / CABLE).read_bytes()[:-200] + b"\n"),
        CABLE
        + ": line {n}: {fields} fields where the header has "
        + f"{len(CIRCUIT_COLUMNS)} (truncated or not a schedule)",
    ),
    "cut at a line end": (
        cut_bytes(CABLE, lambda d: d.rindex(b"\n", 0, len(d) - 1) + 1),
        f"{CABLE}: 4 string circuits where summary.json counts 5 (truncated or edited?)",
    ),
    "header only": (
        cut_bytes(QTY, lambda d: d.index(b"\n") + 1),
        None,  # a plan with no quantities is possible: the diff lists them removed
    ),
    "renamed column": (
        rename_column(CABLE, "route_m", "route_len_m"),
        f"{CABLE}: no column route_m (a schedule of 'routeplan plan' has it)",
    ),
    "missing column": (
        drop_column(TRENCH, "status"),
        f"{TRENCH}: no column status (a schedule of 'routeplan plan' has it)",
    ),
    "renamed quantity": (
        rename_column(QTY, "quantity", "qty"),
        f"{QTY}: no column quantity (a schedule of 'routeplan plan' has it)",
    ),
    "text for a number": (
        set_cell(CABLE, 3, "route_m", "about 15"),
        f"{CABLE}: line 4: column route_m: 'about 15' is not a number",
    ),
    "empty quantity": (set_cell(QTY, 2, "quantity", ""), f"{QTY}: line 3: column quantity: empty"),
    "empty id": (
        set_cell(TRENCH, 2, "segment_id", ""),
        f"{TRENCH}: line 3: column segment_id: empty",
    ),
    "duplicate circuit": (
        duplicate_row(CABLE, 1),
        f"{CABLE}: circuit_id 'AC:INV1' on lines 2 and 3",
    ),
    "duplicate segment": (
        # the base site's trench T1 from chainage 0 to 10 m (its first segment), twice
        set_cell(TRENCH, 2, "segment_id", "T1@0.0-10.0"),
        f"{TRENCH}: segment_id 'T1@0.0-10.0' on lines 2 and 3",
    ),
    "duplicate quantity": (
        duplicate_row(QTY, 1),
        f"{QTY}: item, kind, material, size_mm2, laying, depth_m, unit, rating_a, poles "
        "('cable', 'string', 'Cu', '4', '', '', 'm', '', '') on lines 2 and 3",
    ),
    "not a CSV (binary)": (
        write_bytes(CABLE, b"\x1f\x8b\x08\x00" + bytes(range(256))),
        f"{CABLE}: not UTF-8 text (byte 1): not a schedule",
    ),
    "not a CSV (JSON)": (
        write_bytes(TRENCH, b'{"segments": []}\n'),
        # every column missing; the message (the earlier-version one, see
        # test_a_file_that_is_no_schedule_is_not_called_an_earlier_versions) starts so
        f"{TRENCH}: no column segment_id, trench_id, from_m, to_m, length_m, circuits, "
        "strings, subarrays, arrays, ac, cable_sets, max_circuits, fill, group_factor, status"
        + "{rest}",
    ),
    "an earlier version's trench schedule": (
        drop_column(TRENCH, "from_m"),
        f"{TRENCH}: no column from_m: made by an earlier routeplan, which numbered trench "
        "segments and compared fewer values: plan that site again with this version to compare",
    ),
    "an earlier version's cable schedule": (
        drop_column(CABLE, "protection"),
        f"{CABLE}: no column protection: made by an earlier routeplan, which numbered trench "
        "segments and compared fewer values: plan that site again with this version to compare",
    ),
    "missing summary": (
        remove("summary.json"),
        "{folder}: no summary.json (is it an output folder of 'routeplan plan'?)",
    ),
    "summary without a key": (
        edit_summary(lambda s: s.pop("loss_w_total")),
        "summary.json: no key loss_w_total (not a summary of 'routeplan plan')",
    ),
    "summary of another tool": (
        edit_summary(lambda s: s["tool"].update(name="othertool")),
        "summary.json: tool.name is 'othertool', not 'routeplan'",
    ),
    "summary with text for a number": (
        edit_summary(lambda s: s["segments"].update(trench_m="138 m")),
        "summary.json: segments.trench_m is '138 m', not a number",
    ),
    "unclosed quote": (
        lambda f: (f / CABLE).write_bytes((f / CABLE).read_bytes() + b'"R9/S1,string\n'),
        CABLE + ": line {n}: not valid CSV (unexpected end of data)",
    ),
    "blank line inside": (
        lambda f: (f / TRENCH).write_bytes((f / TRENCH).read_bytes().replace(b"\n", b"\n\n", 2)),
        f"{TRENCH}: line 2: 0 fields where the header has {len(SEGMENT_COLUMNS)} (truncated or "
        "not a schedule)",
    ),
    "damaged summary": (
        write_bytes("summary.json", b'{"circuits": '),
        "summary.json: unreadable (JSONDecodeError: Expecting value: line 1 column 14 (char 13))",
    ),
}


@pytest.mark.parametrize("side", ["old", "new"])
@pytest.mark.parametrize("case", list(DAMAGE))
def test_a_damaged_plan_is_one_line_naming_the_file(plans, tmp_path, case, side):
    damaged = tmp_path / "damaged"
    shutil.copytree(plans["base"], damaged)
    edit, message = DAMAGE[case]
    edit(damaged)
    old, new = (damaged, plans["base"]) if side == "old" else (plans["base"], damaged)
    result = diff(old, new)
    if case == "header only":  # a sound, empty schedule: every quantity added or removed
        assert result.exit_code == 0, result.output
        d = diff_outputs(old, new)
        bill = pd.read_csv(plans["base"] / "quantities.csv")
        q = d.changes[d.changes["section"] == "quantity"]
        assert len(q) == len(bill)  # every line of the bill
        assert set(q["change"]) == {"added" if side == "old" else "removed"}
        # and the plant block's cable metres, one line per cable line of the bill (the
        # summary's totals are those of the sound folder: unchanged)
        plant = d.changes[d.changes["section"] == "plant"]
        assert len(plant) == (bill["item"] == "cable").sum()
        assert set(plant["id"].str.split().str[0]) == {"cable"}
        assert set(d.changes["section"]) == {"quantity", "plant"}
        return
    assert result.exit_code == 2, result.output
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    if message is None:  # the missing file
        assert lines[0] == (
            f"error: {damaged}: no {CABLE} (is it an output folder of 'routeplan plan'?)"
        )
        return
    if message.startswith("{folder}"):  # the folder named, not a file in it
        assert lines[0] == "error: " + message.format(folder=damaged)
        return
    if "{rest}" in message:  # only the start of the message is pinned here
        assert lines[0].startswith(f"error: {damaged}/" + message.format(rest=""))
        return
    name = message.split(":", 1)[0]
    expected = f"error: {damaged / name}:" + message.split(":", 1)[1]
    if "{n}" in expected:  # the file's last line, and its fields
        n, fields = last_line_number(damaged, name), len(rows_of(damaged / name)[-1])
        expected = expected.format(n=n, fields=fields)
    assert lines[0] == expected


def test_a_missing_folder(plans, tmp_path):
    result = diff(tmp_path / "nowhere", plans["base"])
    assert result.exit_code == 2
    assert result.stderr == f"error: {tmp_path / 'nowhere'}: no such folder\n"


def test_identical_plans_are_no_changes(plans, tmp_path):
    copy = tmp_path / "copy"
    shutil.copytree(plans["base"], copy)
    result = diff(plans["base"], copy, "--out", str(tmp_path / "d"))
    assert result.exit_code == 0 and result.output == "no changes\n"
    assert (tmp_path / "d" / "diff.csv").read_text() == (
        "section,id,change,field,old,new,delta,scope,cause,note\n"
    )


def test_a_real_change_is_listed(plans, tmp_path):
    """R2 gives 2 strings, not 3: R2/S3 removed; the strings that shared trench with it keep
    route and cable but group with one circuit fewer (their values change); the bill loses
    R2/S3's cable (2 conductors × its cable_m) and its 2 fuses (one per pole)."""
    result = diff(plans["base"], plans["edited"], "--out", str(tmp_path / "d"))
    assert result.exit_code == 0, result.output
    assert "  - R2/S3: string circuit removed\n" in result.stdout
    assert "circuits: 1 removed, 5 changed\n" in result.stdout
    d = pd.read_csv(tmp_path / "d" / "diff.csv", keep_default_na=False, dtype=str)
    circuits = d[d["section"] == "circuit"]
    assert circuits.iloc[0].tolist() == [
        "circuit", "R2/S3", "removed", "", "", "", "", "route", "", "",
    ]  # fmt: skip
    assert set(d.loc[d["change"] == "removed", "id"]) == {"R2/S3"}
    assert set(circuits["scope"].iloc[1:]) == {"value"}  # same routes, fewer neighbours
    # R2's strings pass T1 from 10 to 20 m: 3 circuits there before, 2 after (2 − 3 = −1)
    seg = d[(d["section"] == "segment") & (d["id"] == "T1@10.0-20.0")].set_index("field")
    assert seg.loc["circuits", ["old", "new", "delta"]].tolist() == ["3", "2", "-1"]
    cable_m = float(
        pd.read_csv(plans["base"] / CABLE).set_index("circuit_id").at["R2/S3", "cable_m"]
    )
    q = d[d["section"] == "quantity"].set_index("id")
    assert float(q.at["cable string Cu 4 m", "delta"]) == pytest.approx(-2 * cable_m, abs=0.005)
    assert q.loc["string fuse string pcs 20 A", ["old", "new", "delta"]].tolist() == [
        "10.00", "8.00", "-2.00",
    ]  # fmt: skip  # hand: 5 strings × 2 poles before, 4 × 2 after


def test_hostile_ids_diff_as_planned(tmp_path):
    """Ids beginning with formula characters: read back without the CSV guard, written to the
    diff's CSV with it; no guard added to numbers; the same plan twice is "no changes"."""
    frames, toml = hostile_frames(), hostile_toml()
    edited = hostile_frames()
    edited["rows"].loc[edited["rows"]["id"] == "+R2\x1b[31m", "strings"] = 2
    old = plan(write_site(tmp_path / "s0", frames, toml=toml), tmp_path / "o0")
    new = plan(write_site(tmp_path / "s1", edited, toml=toml), tmp_path / "o1")
    assert diff(old, old).output == "no changes\n"
    d = diff_outputs(old, new)
    assert d.ids("circuit", "removed") == ["+R2\x1b[31m/S3"]
    result = diff(old, new, "--out", str(tmp_path / "d"))
    assert result.exit_code == 0
    rows = rows_of(tmp_path / "d" / "diff.csv")
    assert ["circuit", "'+R2\x1b[31m/S3", "removed", "", "", "", "", "route", "", ""] in rows
    changed = [r for r in rows if r[2] == "changed" and r[3] in ("route_m", "vdrop_total_pct")]
    assert changed and all(not r[4].startswith("'") and float(r[4]) >= 0 for r in changed)
    # the ids of those rows guarded all the same
    assert {r[1] for r in changed} >= {"'=R\x011/S1"}
    # trench segment ids start with the trench id (T2's with "=": guarded in the file, as
    # planned in the diff; T1's TAB lead is trimmed from the id when the site is read, as
    # the plan's own trench schedule shows); the segments R2's strings pass, as in the base
    t1, t2 = "T\uffff1", "=cmd|' /C calc'!A0"
    assert rows_of(old / "trench_schedule.csv")[1][1] == t1
    assert {r[1] for r in rows if r[0] == "segment"} == {
        f"{t1}@10.0-20.0", f"{t1}@20.0-30.0", f"'{t2}@0.0-3.0",
    }  # fmt: skip
    assert set(d.segments["trench_id"]) == {t1, t2}


def test_a_duplicate_hostile_id_is_named_safely(tmp_path):
    """An id with control characters is shown escaped in the message (no raw escape code
    reaches the terminal)."""
    out = plan(write_site(tmp_path / "s", hostile_frames(), toml=hostile_toml()), tmp_path / "o")
    duplicate_row(CABLE, 3)(out)  # the first string (after the AC and array circuits)
    result = diff(out, out)
    assert result.exit_code == 2
    first = rows_of(out / CABLE)[3][0]
    assert first.startswith("'")  # guarded in the file, named as planned
    assert result.stderr == (f"error: {out / CABLE}: circuit_id {first[1:]!r} on lines 4 and 5\n")
    assert "\x1b" not in result.stderr and "\x01" not in result.stderr


def test_the_summary_counts_catch_a_cut_at_a_line_end(plans, tmp_path):
    """A schedule cut at a line end reads as a smaller plan; summary.json's counts disagree
    with it. Without summary.json the folder is refused (it was read as a smaller plan
    before: summary.json is required now)."""
    cut = tmp_path / "cut"
    shutil.copytree(plans["base"], cut)
    data = (cut / TRENCH).read_bytes()
    (cut / TRENCH).write_bytes(data[: data.rindex(b"\n", 0, len(data) - 1) + 1])
    summary = json.loads((cut / "summary.json").read_text(encoding="utf-8"))
    n = summary["segments"]["count"]
    result = diff(plans["base"], cut)
    assert result.exit_code == 2
    assert result.stderr == (
        f"error: {cut / TRENCH}: {n - 1} trench segments where summary.json counts {n} "
        "(truncated or edited?)\n"
    )
    (cut / "summary.json").unlink()
    result = diff(plans["base"], cut)
    assert result.exit_code == 2 and result.stdout == ""
    assert result.stderr == (
        f"error: {cut}: no summary.json (is it an output folder of 'routeplan plan'?)\n"
    )


def test_a_file_that_is_no_schedule_is_not_called_an_earlier_versions(plans, tmp_path):
    damaged = tmp_path / "damaged"
    shutil.copytree(plans["base"], damaged)
    (damaged / TRENCH).write_bytes(b'{"segments": []}\n')
    result = diff(plans["base"], damaged)
    assert result.exit_code == 2
    assert result.stderr == (
        f"error: {damaged / TRENCH}: no column segment_id, trench_id, from_m, to_m, length_m, "
        "circuits, strings, subarrays, arrays, ac, cable_sets, max_circuits, fill, "
        "group_factor, status (a schedule of 'routeplan plan' has it)\n"
    )


def test_a_schedule_edited_since_routeplan_wrote_it_is_named(plans, tmp_path):
    # a size changed by hand in a copy of the plan: diff showed it as a change of the plan
    # (a hostile-input sweep), while the folder's manifest records the bytes routeplan wrote
    copy = tmp_path / "copy"
    shutil.copytree(plans["base"], copy, copy_function=shutil.copy2)
    unedited = diff(plans["base"], copy)
    assert unedited.exit_code == 0 and "warning" not in unedited.output
    rows = rows_of(copy / "cable_schedule.csv")
    col = rows[0].index("size_mm2")
    rows[1][col] = "16.0" if rows[1][col] != "16.0" else "25.0"
    write_rows(copy / "cable_schedule.csv", rows)
    done = diff(plans["base"], copy)
    assert done.exit_code == 0, done.output
    assert done.output.splitlines()[0] == (
        f"warning: {copy / 'cable_schedule.csv'} was edited since routeplan wrote it (it no "
        "longer matches its folder's manifest): the comparison shows the edits as changes"
    )
    assert diff_outputs(plans["base"], copy).edited == (str(copy / "cable_schedule.csv"),)
