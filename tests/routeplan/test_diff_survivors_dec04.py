"""Reading an output folder for ``routeplan diff`` (:mod:`routeplan.diff.core`): the line
named for a cable line of the bill without a size when it is not the first line, the text
columns of a schedule read with or without rows, and ``summary.json`` read as UTF-8 whatever
the locale. Schedules are written by hand (test_diff_tables' helpers); no plan is run."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from routeplan.diff import CIRCUITS, QUANTITIES, SEGMENTS, parse_schedule, read_plan

from .test_diff_tables import (
    CIRCUIT_HEADER,
    QUANTITY_HEADER,
    SEGMENT_HEADER,
    circuit,
    csv_text,
    quantity,
    refused,
    segment,
    summary_of,
    write_folder,
)

ROOT = Path(__file__).resolve().parents[2]


def test_a_cable_line_without_a_size_below_others_names_its_own_line():
    # the header is line 1; the string cable (line 2) has its size, the AC cable below it
    # (line 3) has none: the message names line 3
    rows = [quantity("cable", "4", "252.00"), quantity("cable", "", "40.00", kind="ac")]
    text = csv_text(QUANTITY_HEADER, rows).encode("utf-8")
    assert refused(text, QUANTITIES) == "F.csv: line 3: column size_mm2: empty on a cable line"


@pytest.mark.parametrize(
    ("table", "header", "rows"),
    [
        (CIRCUITS, CIRCUIT_HEADER, [circuit("C1"), circuit("C2")]),
        (SEGMENTS, SEGMENT_HEADER, [segment("T1", 0, 60)]),
        (QUANTITIES, QUANTITY_HEADER, [quantity("cable", "4", "252.00")]),
    ],
)
def test_schedule_columns_are_python_text_with_rows_or_without(table, header, rows):
    # every column read is text in a plain object column (Python str cells), the same column
    # type for a schedule with rows as for one with only its header: frames of two plans
    # (one of them empty) then compare and concatenate column by column alike
    for given in (rows, []):
        frame = parse_schedule(csv_text(header, given).encode("utf-8"), table, "F.csv")
        assert list(frame.columns) == list(table.columns)
        assert [str(t) for t in frame.dtypes] == ["object"] * len(table.columns)
        assert all(type(v) is str for v in frame.to_numpy().ravel().tolist())
        assert len(frame) == len(given)


#: read the summary in a Python whose locale encoding is ASCII: LC_ALL=C with the C-locale
#: coercion (PEP 538) and the UTF-8 mode (PEP 540) turned off
_READ = """
import locale, sys
from routeplan.diff.core import read_summary, DiffError
print(locale.getpreferredencoding(False))
try:
    print(ascii(read_summary(__import__("pathlib").Path(sys.argv[1]))["site"]["name"]))
except DiffError as exc:
    print(ascii(str(exc)))
"""


def test_summary_json_is_read_as_utf8_whatever_the_locale(tmp_path):
    # JSON exchanged between systems is UTF-8 (RFC 8259, section 8.1); routeplan writes
    # summary.json as ASCII (\u escapes), but an editor saving the file writes the site's name
    # "Étang-Nord" (invented) as the two UTF-8 bytes of "É", which an ASCII reading refuses
    circuits, segments = [circuit("C1"), circuit("C2")], [segment(), segment("T1", 60, 120)]
    summary = summary_of(circuits, segments)
    summary["site"] = {"name": "Étang-Nord"}
    folder = write_folder(tmp_path / "a", circuits, segments, summary=summary)
    (folder / "summary.json").write_text(json.dumps(summary, ensure_ascii=False), "utf-8")
    assert "Étang".encode() in (folder / "summary.json").read_bytes()
    env = dict(os.environ, LC_ALL="C", PYTHONCOERCECLOCALE="0", PYTHONUTF8="0")
    env.pop("PYTHONIOENCODING", None)
    run = subprocess.run(
        [sys.executable, "-c", _READ, str(folder)],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        encoding="utf-8",
        check=False,
    )
    assert run.returncode == 0, run.stderr
    encoding, name = run.stdout.splitlines()
    if encoding.lower().replace("-", "") == "utf8":
        pytest.skip("this platform reads text as UTF-8 in the C locale too")
    assert name == ascii("Étang-Nord")
    # and in this process, whatever its locale, read_plan takes the same file
    assert read_plan(folder)["summary"]["site"]["name"] == "Étang-Nord"


@pytest.mark.parametrize(
    "new_route, look",
    [("120.004", "other"), ("120", "other"), ("120.01", "longer"), ("119.99", "shorter")],
)
def test_a_route_length_that_rounds_to_no_change_is_neither_longer_nor_shorter(
    tmp_path, new_route, look
):
    # a schedule re-saved by hand or by a spreadsheet ("120.00" → "120") changes the text of
    # route_m but not its length at the 0.01 m the diff shows
    from routeplan.diff import diff_outputs

    old = write_folder(tmp_path / "old", [circuit("C1", route_m="120.00"), circuit("C2")])
    new = write_folder(tmp_path / "new", [circuit("C1", route_m=new_route), circuit("C2")])
    d = diff_outputs(old, new)
    got = dict(zip(d.circuits["circuit_id"], d.circuits["look"], strict=True))
    assert got == {"C1": look}


@pytest.mark.parametrize("written", ["earlier", "current", "both"])
def test_a_summary_with_the_earlier_conductor_metre_key_is_read_under_the_current_one(
    tmp_path, written
):
    # summary.json's "cable_m_total" was renamed "conductor_m_total" (routeplan.diff.core
    # RENAMED_KEYS): a plan written before the rename is read under the new name, with its value;
    # where both are written, the current one is kept
    circuits, segments = [circuit("C1"), circuit("C2")], [segment(), segment("T1", 60, 120)]
    summary = summary_of(circuits, segments)
    value = summary.pop("conductor_m_total")
    if written in ("earlier", "both"):
        summary["cable_m_total"] = value + (1.0 if written == "both" else 0.0)
    if written in ("current", "both"):
        summary["conductor_m_total"] = value
    folder = write_folder(tmp_path / "a", circuits, segments, summary=summary)
    read = read_plan(folder)["summary"]
    assert read["conductor_m_total"] == value
    assert ("cable_m_total" in read) is (written == "both")


def test_a_breaker_line_is_named_with_its_rating_in_amperes_and_its_poles():
    # one more 32 A three-pole breaker: the line names its rating with the unit (A) and its
    # poles as "3-pole", as the bill's designation says them
    from routeplan.diff.compare import quantity_rows

    cols = ["item", "kind", "material", "size_mm2", "laying", "depth_m", "unit"]
    cols += ["rating_a", "poles", "quantity"]
    old = pd.DataFrame([["AC breaker", "ac", "", "", "", "", "pcs", "32", "3", "1"]], columns=cols)
    new = pd.DataFrame([["AC breaker", "ac", "", "", "", "", "pcs", "32", "3", "2"]], columns=cols)
    rows = [(r["id"], r["change"], r["delta"]) for r in quantity_rows(old, new)]
    assert rows == [("AC breaker ac pcs 32 A 3-pole", "changed", "+1.00")]


def _segments(rows: list[list[str]]) -> pd.DataFrame:
    return pd.DataFrame(rows, columns=SEGMENT_HEADER, dtype=object)


def test_a_split_segment_line_has_an_empty_field_as_every_text_cell():
    # diff.csv's segment event lines name no field: the cell is empty text (""), as every
    # cell of the changes table is text, not a missing value
    from routeplan.diff.compare import compare_segments

    old = _segments([segment("T1", 0, 120)])
    new = _segments([segment("T1", 0, 50), segment("T1", 50, 120)])
    rows, events = compare_segments(old, new)
    assert [(r["change"], r["field"]) for r in rows] == [("split", "")]
    assert events["event"].tolist() == ["split"]


def test_a_total_length_change_below_the_shown_centimetre_is_not_a_change():
    # a split whose parts add up to the old length within 0.005 m (a hand-edited plan with
    # three decimals): the length line would read "120.00 → 120.00", so none is written;
    # a change of 0.01 m is written
    from routeplan.diff.compare import compare_segments

    old = _segments([segment("T1", 0, 120)])
    new = _segments([segment("T1", 0, 50), segment("T1", 50, 120, length_m="70.004")])
    rows, _ = compare_segments(old, new)
    assert [r["change"] for r in rows] == ["split"]
    new = _segments([segment("T1", 0, 50), segment("T1", 50, 120, length_m="70.01")])
    rows, _ = compare_segments(old, new)
    assert [(r["change"], r["field"], r["old"], r["new"]) for r in rows][1] == (
        "changed",
        "length_m",
        "120.00",
        "120.01",
    )
