"""Text from a user's files stays text in every output.

A site whose ids hold control characters and begin with characters a spreadsheet takes for a
formula plans like any other site. The workbook opens in two independent readers (openpyxl and
LibreOffice headless) with every text as W3C XML 1.0 (Fifth Edition) §2.2 lets it be written;
the CSV files read back through Python's csv module with the OWASP "CSV Injection" guard (a
leading ``'``); the GeoPackage (read with GDAL through pyogrio) keeps the exact text. The
expected texts come from the rules written out here, not from the writers' code.

LibreOffice is Debian's ``libreoffice-calc-nogui`` package. Without it the LibreOffice tests
skip locally and fail when ``CI=true`` (as the map's browser tests do with Chromium).
"""

from __future__ import annotations

import csv
import io
import os
import shutil
import subprocess
import tomllib
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.outputs.columns import Col
from routeplan.outputs.schedules import Previous, Schedule, csv_lines, csv_unguard, write_workbook
from routeplan.outputs.tables import TextColumn, TextTable, format_table
from routeplan.outputs.xlsx import SHEET_TAIL, sheet_head, sheet_rows

from ..conftest import SITE_TOML, base_frames, write_site
from .test_cache import CSVS, XLSX, move_gpkg_pad, run, same_csvs

runner = CliRunner()

# -- the rules, written out from their sources ---------------------------------------------------


def xml_char(c: str) -> bool:
    """W3C XML 1.0 (Fifth Edition) §2.2: Char ::= #x9 | #xA | #xD | [#x20-#xD7FF] |
    [#xE000-#xFFFD] | [#x10000-#x10FFFF]."""
    o = ord(c)
    return o in (0x9, 0xA, 0xD) or 0x20 <= o <= 0xD7FF or 0xE000 <= o <= 0xFFFD or o >= 0x10000


def as_in_workbook(text: str) -> str:
    """The text a workbook cell shows: each character XML 1.0 cannot carry as U+FFFD."""
    return "".join(c if xml_char(c) else "\ufffd" for c in text)


#: OWASP "CSV Injection" (from memory): a cell beginning with = + - @ TAB or CR is written
#: with a leading single quote; NUL is added by OWASP ASVS 5.0, requirement 1.2.10.
OWASP_LEAD = ("=", "+", "-", "@", "\t", "\r", "\x00")


def as_in_csv(text: str) -> str:
    """The OWASP guard, and one more quote before quotes that precede such a character (so a
    reader can tell the guard from text that began with a quote)."""
    first = text.lstrip("'")[:1]
    return "'" + text if first and first in OWASP_LEAD else text


# -- LibreOffice ----------------------------------------------------------------------------------

#: LibreOffice's CSV export filter: comma, double quote, UTF-8 (76), …, every sheet (-1) to
#: a file of its own named <stem>-<sheet>.csv (LibreOffice ≥ 7.2)
LO_CSV = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1"


def soffice() -> str:
    path = shutil.which("soffice") or shutil.which("libreoffice")
    if path is None:
        message = "LibreOffice is not installed (apt-get install -y libreoffice-calc-nogui)"
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(message + "; CI must install it", pytrace=False)
        pytest.skip(message)
    return path


def libreoffice_sheets(xlsx: Path, work: Path, sheets: list[str]) -> dict[str, list[list[str]]]:
    """Every sheet of ``xlsx`` as LibreOffice reads it: converted headless to CSV (a private
    profile, so that it runs beside any other LibreOffice), read with Python's csv module."""
    exe = soffice()
    work.mkdir(parents=True, exist_ok=True)
    profile = (work / "lo-profile").resolve().as_uri()
    cmd = [exe, f"-env:UserInstallation={profile}", "--headless", "--convert-to", LO_CSV]
    done = subprocess.run(
        [*cmd, "--outdir", str(work), str(xlsx)], capture_output=True, text=True, timeout=300
    )
    assert done.returncode == 0, done.stderr
    out = {}
    for name in sheets:
        path = work / f"{xlsx.stem}-{name}.csv"
        assert path.is_file(), (name, done.stdout, done.stderr)
        with open(path, encoding="utf-8", newline="") as fh:
            out[name] = list(csv.reader(fh))
    return out


# -- a hostile site --------------------------------------------------------------------------------

#: ids of the base site renamed: formula leads, C0 controls (XML-forbidden), an escape
#: sequence, DEL and C1 controls (XML-allowed), U+FFFE/U+FFFF, a quote before "=", a TAB lead
HOSTILE = {
    "R1": "=R\x011",
    "R2": "+R2\x1b[31m",
    "CB1": "-CB\x0b1",
    "INV1": "@INV\x7f\x851\x9f",
    "T1": "\tT\uffff1",
    "T2": "=cmd|' /C calc'!A0",
    "G1": "'=G\ufffe1",
}
SITE_NAME = "Site \x01=1+2 \x1b[2J"
SHEETS = [
    "circuits",
    "trenches",
    "quantities",
    "inputs",
    "summary",
    "design basis",
    "data tables",
    "caution",
]


def hostile_frames() -> dict:
    frames = base_frames()
    for frame in frames.values():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: HOSTILE.get(v, v))
    return frames


def hostile_toml() -> str:
    toml = SITE_TOML.replace('name = "Test site"', 'name = "Site \\u0001=1+2 \\u001b[2J"')
    assert tomllib.loads(toml)["site"]["name"] == SITE_NAME
    return toml


@pytest.fixture(scope="module")
def planned(tmp_path_factory) -> dict:
    """The base site and its hostile twin, planned with the command line."""
    tmp = tmp_path_factory.mktemp("text")
    normal = runner.invoke(app, ["plan", str(write_site(tmp / "s0")), "--out", str(tmp / "o0")])
    site = write_site(tmp / "s1", hostile_frames(), toml=hostile_toml())
    hostile = runner.invoke(app, ["plan", str(site), "--out", str(tmp / "o1")])
    return {"normal": normal, "hostile": hostile, "out": tmp / "o1", "tmp": tmp}


def read_csv(path: Path) -> list[list[str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.reader(fh))


def gpkg_text(out: Path, layer: str) -> pd.DataFrame:
    """A GeoPackage layer's attributes as GDAL reads them."""
    return pyogrio.read_dataframe(out / "routes.gpkg", layer=layer, read_geometry=False)


# -- the planned site ---------------------------------------------------------------------------


def test_hostile_ids_plan_like_a_normal_site(planned):
    assert planned["normal"].exit_code == 0, planned["normal"].output
    assert planned["hostile"].exit_code == planned["normal"].exit_code, planned["hostile"].output
    # layers strips the ids' surrounding whitespace (the TAB lead); the GeoPackage keeps the
    # text exactly as planned: data stays data there
    ids = set(gpkg_text(planned["out"], "rows")["id"]) | set(
        gpkg_text(planned["out"], "equipment")["id"]
    )
    assert ids == {v.strip() for k, v in HOSTILE.items() if not k.startswith("T")}


@pytest.mark.parametrize(
    ("name", "layer", "hostile"),
    [
        (
            "cable_schedule.csv",
            "circuits",
            ["=R\x011", "=R\x011/S1", "+R2\x1b[31m/S3", "-CB\x0b1", "@INV\x7f\x851\x9f"],
        ),
        # T2's first segment runs (42, 0) → (45, 0) along it, chainage 0 → 3 m
        ("trench_schedule.csv", "segments", ["=cmd|' /C calc'!A0", "=cmd|' /C calc'!A0@0.0-3.0"]),
    ],
)
def test_every_text_cell_of_the_csv_is_the_owasp_guarded_text(planned, name, layer, hostile):
    rows = read_csv(planned["out"] / name)
    header, body = rows[0], rows[1:]
    raw = gpkg_text(planned["out"], layer)  # GDAL's reading of the same rows, unguarded
    assert len(raw) == len(body)
    for j, column in enumerate(header):
        values = raw[column]
        if pd.api.types.is_numeric_dtype(values):  # numbers untouched, negative ones too
            assert all(row[j] == "" or np.isfinite(float(row[j])) for row in body), column
            continue
        expected = ["" if v is None else as_in_csv(str(v)) for v in values]
        assert [row[j] for row in body] == expected, column
    # each hostile id, read through the csv module, is "'" + the text planned
    cells = {cell for row in body for cell in row}
    for text in hostile:
        assert "'" + text in cells and text not in cells, text
    if layer == "circuits":
        assert "A:-CB\x0b1" in cells  # a formula character further in: nothing to guard


def test_the_workbook_opens_in_openpyxl_with_each_text_as_xml_allows(planned):
    from openpyxl import load_workbook

    out = planned["out"]
    wb = load_workbook(out / XLSX)
    assert wb.sheetnames == SHEETS
    for sheet, name in (("circuits", CSVS[0]), ("trenches", CSVS[1]), ("quantities", CSVS[2])):
        rows = read_csv(out / name)
        got = list(wb[sheet].iter_rows(values_only=True))
        assert len(got) == len(rows)
        for csv_row, xl_row in zip(rows[1:], got[1:], strict=True):
            for text, value in zip(csv_row, xl_row, strict=True):
                if isinstance(value, (int, float)):
                    assert float(text) == value
                else:  # the CSV's text, unguarded, with what XML forbids replaced
                    assert (value or "") == as_in_workbook(csv_unguard(text))
    circuits = {r[0] for r in wb["circuits"].iter_rows(min_row=2, values_only=True)}
    assert "=R\ufffd1/S1" in circuits and "AC:@INV\x7f\x851\x9f" in circuits  # C1 kept
    summary = {(r[0], r[1]): r[2] for r in wb["summary"].iter_rows(min_row=2, values_only=True)}
    assert summary["Site", "name"] == as_in_workbook(SITE_NAME) == "Site \ufffd=1+2 \ufffd[2J"


def test_the_workbook_opens_in_libreoffice_with_the_texts_openpyxl_reads(planned):
    from openpyxl import load_workbook

    out = planned["out"]
    lo = libreoffice_sheets(out / XLSX, planned["tmp"] / "lo", SHEETS)
    wb = load_workbook(out / XLSX)
    for sheet in SHEETS:
        ours = list(wb[sheet].iter_rows(values_only=True))
        assert len(lo[sheet]) == len(ours), sheet  # no row lost
        for lo_row, xl_row in zip(lo[sheet], ours, strict=True):
            assert len(lo_row) == len(xl_row), sheet
            for text, value in zip(lo_row, xl_row, strict=True):
                if isinstance(value, bool):  # a boolean cell (the summary's)
                    assert text == ("TRUE" if value else "FALSE"), sheet
                elif isinstance(value, (int, float)):
                    assert float(text) == pytest.approx(value, rel=1e-12)
                else:
                    assert text == (value or ""), sheet
    assert any(row[0] == "=R\ufffd1/S1" for row in lo["circuits"])


def test_re_plan_copies_hostile_chunks_equal_to_formatted_ones(tmp_path):
    """Chunks copied from the last files after an edit equal a cold run's, byte for byte."""
    from routeplan.synth import generate_site

    site = tmp_path / "gen"
    generate_site(20.0, 5, site)
    leads = ["=", "+", "-", "@", "", "'="]
    tails = ["\x01", "\x1b[0m", "", "\x7f\x85", "\ufffe", "_x0041_"]
    names: dict[str, str] = {}
    layers = {}
    for layer in ("rows", "combiners", "inverters", "trenches", "grid"):
        frame = pyogrio.read_dataframe(site / "site.gpkg", layer=layer)
        for i, v in enumerate(frame["id"]):
            names[v] = f"{leads[i % len(leads)]}{v}{tails[i % len(tails)]}"
        layers[layer] = frame
    for layer, frame in layers.items():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: names.get(v, v))
        pyogrio.write_dataframe(frame, site / "site.gpkg", layer=layer, driver="GPKG")
    out, cold = tmp_path / "out", tmp_path / "cold"
    run(site, out)
    move_gpkg_pad(site)
    warm = run(site, out)
    run(site, cold, cache=False)
    same_csvs(out, cold)
    assert (out / XLSX).read_bytes() == (cold / XLSX).read_bytes()
    copied = warm.cache.output_reuse.chunks_copied
    assert copied["trench_schedule.csv"] > 0 and copied[XLSX] > 0
    text = (out / "cable_schedule.csv").read_text(encoding="utf-8")
    assert "\n'=" in text and "\x1b[0m" in text  # guarded, and the raw text kept


# -- the writers on every character -------------------------------------------------------------

#: every C0 control, DEL, C1 controls, U+FFFE/U+FFFF, markup, CR, and text in ST_Xstring form
EVERY = [chr(c) + "x" for c in range(32)] + [
    "a\x7fb\x80c\x9f",
    "\ufffe\uffff",
    "<&>\"'",
    "cr\rlf\ncrlf\r\n",
    "R_x0041_B",
    "_x005F_",
    "plain",
    "ünï€𝄞",
]


def reference_csv(rows: list[list[str]]) -> bytes:
    """Rows as Python's csv module writes them (QUOTE_MINIMAL) with CR LF as its line
    terminator, so that it quotes a cell holding either; the rows then joined with LF."""
    lines = []
    for row in rows:
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\r\n").writerow(row)
        lines.append(buf.getvalue()[:-2])
    return ("\n".join(lines) + "\n").encode("utf-8")


def test_the_csv_guard_is_the_owasp_rule_written_by_the_csv_module():
    hostile = [
        "=1+2", "+1", "-1", "@SUM(A1)", "\tx", "\rx", "\x00x", "=HYPERLINK(\"http://x\",\"y\")",
        "'=x", "''+x", "'x", "'", "", None, "-CB1,a", "x=1", "R1", "a\nb", "a\rb", "ü=",
    ]  # fmt: skip
    frame = pd.DataFrame(
        {
            "id": hostile,
            "x": np.linspace(-1, 1, len(hostile)),  # negative numbers: untouched
            "note": ["-0.5"] * len(hostile),  # a number in a text column is text: guarded
        }
    )
    cols = (Col("id"), Col("x", decimals=2), Col("note"))
    expected = [["id", "x", "note"]] + [
        ["" if v is None else as_in_csv(v), f"{x:.2f}".replace("-0.00", "0.00"), "'-0.5"]
        for v, x in zip(hostile, frame["x"], strict=True)
    ]
    table = format_table(frame, cols)
    got = table.csv_header() + b"\n" + b"".join(line + b"\n" for line in csv_lines(table))
    assert got == reference_csv(expected)
    # read back with the csv module, every row is whole and the guard comes off exactly
    rows = list(csv.reader(io.StringIO(got.decode("utf-8"), newline="")))[1:]
    assert [csv_unguard(r[0]) for r in rows] == ["" if v is None else v for v in hostile]
    assert [r[1] for r in rows][:2] == ["-1.00", "-0.89"]  # negative numbers as they are
    # text of every character: C0 controls are text, not formulas, unless first
    every = format_table(pd.DataFrame({"t": EVERY, "n": 1}), (Col("t"), Col("n")))
    text = b"".join(line + b"\n" for line in csv_lines(every)).decode("utf-8")
    got_every = list(csv.reader(io.StringIO(text, newline="")))
    assert [r[0] for r in got_every] == [as_in_csv(t) for t in EVERY]
    # a lone column: an empty cell is written "" (its line is not blank)
    lone = format_table(pd.DataFrame({"t": ["", "=a"]}), (Col("t"),))
    assert csv_lines(lone) == [b'""', b"'=a"]


def test_every_character_xml_forbids_is_replaced_in_the_sheet_xml():
    """Sheet rows parsed by Python's expat (an XML 1.0 parser): each text as XML allows it;
    also text in ``surrogatepass`` UTF-8 (a lone surrogate), which strict UTF-8 cannot hold,
    and the title."""
    cells = [t.encode("utf-8") for t in EVERY] + ["s\ud800t".encode("utf-8", "surrogatepass")]
    expected = [*EVERY, "s\ud800t"]
    table = TextTable((TextColumn.of("t", "t", False, None, cells),), len(cells))
    chunks = sheet_rows(table, [0, 2, len(cells)])
    head = sheet_head(["t\x01"], np.array([5]))
    ns = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main"}
    root = ET.fromstring(head + b"".join(chunks) + SHEET_TAIL)
    texts = ["".join(t.itertext()) for t in root.iterfind(".//m:row/m:c/m:is/m:t", ns)]
    assert texts[0] == "t\ufffd"
    decoded = [t.replace("_x005F_", "_") for t in texts[1:]]  # ST_Xstring, as LibreOffice
    assert decoded == [as_in_workbook(t) for t in expected]
    assert texts[1 + EVERY.index("cr\rlf\ncrlf\r\n")] == "cr\rlf\ncrlf\r\n"  # CR kept


@pytest.fixture(scope="module")
def every_workbook(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("every") / "every.xlsx"
    frame = pd.DataFrame({"text": EVERY, "n": np.arange(len(EVERY)) - 3.5})
    write_workbook({"t": Schedule.of(frame, (Col("text"), Col("n", decimals=1)))}, path, Previous())
    return path


def test_every_character_in_openpyxl(every_workbook):
    from openpyxl import load_workbook

    rows = list(load_workbook(every_workbook)["t"].iter_rows(min_row=2, values_only=True))
    # openpyxl keeps _x005F_ of inline strings as it is (ECMA-376 §22.9.2.19 not applied)
    got = [r[0].replace("_x005F_", "_") for r in rows]
    assert got == [as_in_workbook(t) for t in EVERY]
    assert [r[1] for r in rows] == [i - 3.5 for i in range(len(EVERY))]


def as_in_libreoffice(text: str) -> str:
    """LibreOffice keeps a cell of several lines as paragraphs, which it ends with LF: a CR LF,
    and a CR in a cell that also holds an LF, come back as LF (a lone CR stays)."""
    text = text.replace("\r\n", "\n")
    return text.replace("\r", "\n") if "\n" in text else text


def test_every_character_in_libreoffice(every_workbook, tmp_path):
    rows = libreoffice_sheets(every_workbook, tmp_path, ["t"])["t"]
    assert rows[0] == ["text", "n"]
    assert [r[0] for r in rows[1:]] == [as_in_libreoffice(as_in_workbook(t)) for t in EVERY]
    assert rows[1 + EVERY.index("\rx")][0] == "\rx"  # a lone CR kept (written as &#13;)
    assert [float(r[1]) for r in rows[1:]] == [i - 3.5 for i in range(len(EVERY))]
