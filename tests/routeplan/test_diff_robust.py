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
        f"{CABLE}: 0 ac circuits where summary.json counts 1 (truncated or edited?)",
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
        f"{CABLE}: circuit_id 'R1/S1' on lines 2 and 3",
    ),
    "duplicate segment": (
        set_cell(TRENCH, 2, "segment_id", "T1#1"),
        f"{TRENCH}: segment_id 'T1#1' on lines 2 and 3",
    ),
    "duplicate quantity": (
        duplicate_row(QTY, 1),
        f"{QTY}: item, kind, material, size_mm2, laying, depth_m, unit "
        "('cable', 'string', 'Cu', '4.0', '', '', 'm') on lines 2 and 3",
    ),
    "not a CSV (binary)": (
        write_bytes(CABLE, b"\x1f\x8b\x08\x00" + bytes(range(256))),
        f"{CABLE}: not UTF-8 text (byte 1): not a schedule",
    ),
    "not a CSV (JSON)": (
        write_bytes(TRENCH, b'{"segments": []}\n'),
        f"{TRENCH}: no column segment_id, circuits, strings, arrays, ac, status "
        "(a schedule of 'routeplan plan' has it)",
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
        rows = len(pd.read_csv(plans["base"] / "quantities.csv"))  # every line of the bill
        assert set(d.changes["section"]) == {"quantity"} and len(d.changes) == rows
        assert set(d.changes["change"]) == {"added" if side == "old" else "removed"}
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
    assert (tmp_path / "d" / "changes.csv").read_text() == "section,id,change,field,old,new\n"


def test_a_real_change_is_listed(plans, tmp_path):
    result = diff(plans["base"], plans["edited"], "--out", str(tmp_path / "d"))
    assert result.exit_code == 0, result.output
    assert "  - R2/S3\n" in result.stdout
    d = pd.read_csv(tmp_path / "d" / "changes.csv", keep_default_na=False, dtype=str)
    assert d.loc[d["section"] == "circuit", "id"].tolist()[0] == "R2/S3"
    assert set(d.loc[d["change"] == "removed", "id"]) == {"R2/S3"}
    assert "quantity" in set(d["section"])  # one string cable fewer


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
    rows = rows_of(tmp_path / "d" / "changes.csv")
    assert ["circuit", "'+R2\x1b[31m/S3", "removed", "", "", ""] in rows
    changed = [r for r in rows if r[2] == "changed" and r[3] in ("route_m", "vdrop_total_pct")]
    assert changed and all(not r[4].startswith("'") and float(r[4]) >= 0 for r in changed)
    # the ids of those rows guarded all the same
    assert {r[1] for r in changed} >= {"'=R\x011/S1"}


def test_a_duplicate_hostile_id_is_named_safely(tmp_path):
    """An id with control characters is shown escaped in the message (no raw escape code
    reaches the terminal)."""
    out = plan(write_site(tmp_path / "s", hostile_frames(), toml=hostile_toml()), tmp_path / "o")
    duplicate_row(CABLE, 1)(out)
    result = diff(out, out)
    assert result.exit_code == 2
    first = rows_of(out / CABLE)[1][0]
    assert first.startswith("'")  # guarded in the file, named as planned
    assert result.stderr == (f"error: {out / CABLE}: circuit_id {first[1:]!r} on lines 2 and 3\n")
    assert "\x1b" not in result.stderr and "\x01" not in result.stderr


def test_the_summary_counts_catch_a_cut_at_a_line_end(plans, tmp_path):
    """Without summary.json, a schedule cut at a line end is a smaller plan (listed as
    removed rows, never "no changes"); with it, the counts disagree."""
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
    assert result.exit_code == 0 and "trench segments: 1 removed" in result.stdout
