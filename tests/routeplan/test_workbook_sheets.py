"""The workbook a team works in (README, "Outputs"): a summary sheet of typed values under
readable keys, and data sheets with an autofilter over their header and a frozen header row
and id column.

Read back with openpyxl (cell types, ``auto_filter.ref``, ``freeze_panes``; column letters
from ``openpyxl.utils.get_column_letter``) and with LibreOffice headless: converted to CSV
(each sheet, the values as LibreOffice reads them) and to XLSX (LibreOffice writes an
autofilter only where it read one). Expected values come from ``summary.json`` and the CSV
schedules, read with the json and csv modules.
"""

from __future__ import annotations

import csv
import json
import subprocess
from pathlib import Path

import pytest
from openpyxl import load_workbook
from openpyxl.utils import get_column_letter
from typer.testing import CliRunner

from routeplan.cli import app

from .test_text_safety import libreoffice_sheets, soffice

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
XLSX = "cable_schedule.xlsx"
DATA = {
    "circuits": "cable_schedule.csv",
    "trenches": "trench_schedule.csv",
    "quantities": "quantities.csv",
    "inputs": "inverter_inputs.csv",
}
runner = CliRunner()


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("wb") / "out"
    result = runner.invoke(app, ["plan", str(DEMO), "--out", str(out)])
    assert result.exit_code == 0, result.output
    return out


def csv_rows(path: Path) -> list[list[str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.reader(fh))


def summary_cells(out: Path) -> dict[tuple[str, str], tuple[object, object]]:
    ws = load_workbook(out / XLSX)["summary"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0] == ("section", "item", "value", "unit")
    cells = {(r[0], r[1]): (r[2], r[3]) for r in rows[1:]}
    assert len(cells) == len(rows) - 1  # every key once
    return cells


def test_summary_values_are_typed_under_readable_keys(demo_out):
    s = json.loads((demo_out / "summary.json").read_text(encoding="utf-8"))
    cells = summary_cells(demo_out)
    ok = cells["Result", "every circuit, trench segment and inverter input within its limits"]
    assert ok == (True, None) and ok[0] is s["ok"]  # a boolean cell, not 'True'
    for kind, words in (("string", "string"), ("array", "array"), ("ac", "AC")):
        k = s["circuits"][kind]
        assert cells[f"Circuits — {words}", "circuits"] == (k["circuits"], None)
        assert cells[f"Circuits — {words}", "failing"] == (k["fail"], None)
        assert type(cells[f"Circuits — {words}", "failing"][0]) is int
        drop = cells[f"Circuits — {words}", "worst voltage drop"]
        assert drop == (k["worst_vdrop_pct"], "%") and isinstance(drop[0], float)
        assert cells[f"Circuits — {words}", "losses at operating current"] == (k["loss_w"], "W")
    assert cells["Worst voltage drop", "DC total, string to inverter"] == (
        s["worst_vdrop_pct"]["dc_total"],
        "%",
    )
    assert cells["Trench segments", "segments"] == (s["segments"]["count"], None)
    assert cells["Site", "name"] == (s["site"]["name"], None)
    for path, sha in s["inputs"].items():
        assert cells["Input files (SHA-256)", path] == (sha, None)
    # no flattened JSON path, and no number or truth value written as text
    for (section, item), (value, _) in cells.items():
        assert "." not in section and "[" not in f"{section}{item}", (section, item)
        if isinstance(value, str) and section != "Input files (SHA-256)":
            assert value not in ("True", "False", "true", "false"), (section, item)
            with pytest.raises(ValueError):
                float(value)


def test_data_sheets_have_an_autofilter_and_frozen_id_column(demo_out):
    wb = load_workbook(demo_out / XLSX)
    for sheet, name in DATA.items():
        rows = csv_rows(demo_out / name)
        ws = wb[sheet]
        n_rows, n_cols = len(rows) - 1, len(rows[0])
        assert ws.auto_filter.ref == f"A1:{get_column_letter(n_cols)}{n_rows + 1}", sheet
        assert ws.freeze_panes == "B2", sheet  # header row and first (id) column
        assert ws.max_row == n_rows + 1 and ws.max_column == n_cols, sheet
    assert wb["circuits"]["A1"].value == "circuit_id"
    assert wb["summary"].freeze_panes == "A2" and not wb["summary"].auto_filter.ref
    # the inverter column is there to filter on: every block's circuits, by name
    header = [c.value for c in wb["circuits"][1]]
    j = header.index("inverter_id") + 1
    ws = wb["circuits"]
    column = [ws.cell(row=r, column=j).value for r in range(2, ws.max_row + 1)]
    schedule = csv_rows(demo_out / DATA["circuits"])
    assert column == [r[schedule[0].index("inverter_id")] for r in schedule[1:]]


def test_libreoffice_reads_typed_summary_and_the_filters(demo_out, tmp_path):
    cells = summary_cells(demo_out)
    lo = libreoffice_sheets(demo_out / XLSX, tmp_path / "csv", ["summary", "circuits"])
    assert lo["summary"][0] == ["section", "item", "value", "unit"]
    got = {(r[0], r[1]): r[2] for r in lo["summary"][1:]}
    assert set(got) == set(cells)
    for key, (value, _) in cells.items():
        if isinstance(value, bool):
            assert got[key] == ("TRUE" if value else "FALSE"), key
        elif isinstance(value, (int, float)):
            assert float(got[key]) == pytest.approx(value, rel=1e-12), key
        else:
            assert got[key] == (value or ""), key
    schedule = csv_rows(demo_out / DATA["circuits"])
    assert [r[0] for r in lo["circuits"][1:]] == [r[0] for r in schedule[1:]]  # block order
    # LibreOffice keeps an autofilter it read: convert the workbook to XLSX and read it back
    exe = soffice()
    work = tmp_path / "xlsx"
    work.mkdir()
    profile = (tmp_path / "lo-profile").resolve().as_uri()
    done = subprocess.run(
        [exe, f"-env:UserInstallation={profile}", "--headless", "--convert-to", "xlsx",
         "--outdir", str(work), str(demo_out / XLSX)],
        capture_output=True, text=True, timeout=300,
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    again = load_workbook(work / XLSX)
    for sheet, name in DATA.items():
        rows = csv_rows(demo_out / name)
        ref = f"A1:{get_column_letter(len(rows[0]))}{len(rows)}"
        assert again[sheet].auto_filter.ref == ref, sheet
    # (the frozen panes are a view setting, which a headless conversion does not write back;
    # openpyxl reads them above)
