"""A small, fast XLSX (Office Open XML SpreadsheetML) writer for large schedules.

General-purpose writers style cell by cell and take minutes for a utility-scale schedule
(70,000 circuits × 40 columns); here each column arrives formatted once as text (a
:class:`routeplan.outputs.tables.TextTable`, shared with the CSV writer), becomes cell XML
bytes in one pass (text cells once per distinct value) and the rows are joined in one call,
which takes about a second. What it writes: one sheet per
table, a bold header row frozen in place, numbers as numeric cells with a per-column number
format (fixed decimals), text as inline strings. The package layout follows ECMA-376 Part 1
(SpreadsheetML): ``[Content_Types].xml``, ``_rels/.rels``, ``xl/workbook.xml``,
``xl/_rels/workbook.xml.rels``, ``xl/styles.xml``, ``xl/worksheets/sheetN.xml``.
Reading the result back with openpyxl is part of the test suite.
"""

from __future__ import annotations

import itertools
import zipfile
from pathlib import Path
from typing import TYPE_CHECKING
from xml.sax.saxutils import escape

import numpy as np
import pandas as pd

if TYPE_CHECKING:
    from .tables import TextTable

#: decimals → cell style index (0 default, 1 bold header, 2 text, 3.. numbers)
MAX_DECIMALS = 6
_NUMBER_STYLE = {d: 3 + d for d in range(MAX_DECIMALS + 1)}
_NUMFMT_BASE = 164  # first custom number format id (SpreadsheetML reserves 0–163)


def _styles_xml() -> str:
    fmts = "".join(
        f'<numFmt numFmtId="{_NUMFMT_BASE + d}" formatCode="{"0" if d == 0 else "0." + "0" * d}"/>'
        for d in range(MAX_DECIMALS + 1)
    )
    xfs = (
        '<xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'
        '<xf numFmtId="0" fontId="1" fillId="0" borderId="0" xfId="0" applyFont="1"/>'
        '<xf numFmtId="49" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/>'
        + "".join(
            f'<xf numFmtId="{_NUMFMT_BASE + d}" fontId="0" fillId="0" borderId="0" xfId="0" '
            'applyNumberFormat="1"/>'
            for d in range(MAX_DECIMALS + 1)
        )
    )
    return (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        f'<numFmts count="{MAX_DECIMALS + 1}">{fmts}</numFmts>'
        '<fonts count="2"><font><sz val="11"/><name val="Calibri"/></font>'
        '<font><b/><sz val="11"/><name val="Calibri"/></font></fonts>'
        '<fills count="2"><fill><patternFill patternType="none"/></fill>'
        '<fill><patternFill patternType="gray125"/></fill></fills>'
        '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>'
        '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
        "</cellStyleXfs>"
        f'<cellXfs count="{3 + MAX_DECIMALS + 1}">{xfs}</cellXfs>'
        '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles>'
        "</styleSheet>"
    )


def _number_cells(text: np.ndarray, decimals: int | None) -> list[bytes]:
    """Numeric cells from already formatted text (numpy ``S`` array; ``b''`` = empty cell)."""
    style = _NUMBER_STYLE[min(decimals, MAX_DECIMALS)] if decimals is not None else 0
    full = np.strings.add(np.strings.add(f'<c s="{style}"><v>'.encode(), text), b"</v></c>")
    return np.where(text == b"", f'<c s="{style}"/>'.encode(), full).tolist()


def _text_cells(cells: list[bytes]) -> list[bytes]:
    """Inline-string cells (``b''`` = empty cell), XML-escaped; each distinct text once."""
    codes, uniques = pd.factorize(np.array(cells, dtype=object))
    blob = b"".join(uniques)
    plain = not (b"&" in blob or b"<" in blob or b">" in blob)
    pre, post = b'<c s="2" t="inlineStr"><is><t>', b"</t></is></c>"
    made = np.array(
        [
            (pre + (t if plain else escape(t.decode("utf-8")).encode("utf-8")) + post)
            if t
            else b'<c s="2"/>'
            for t in uniques
        ],
        dtype=object,
    )
    return made[codes].tolist()


def _width(title: str, values: list[bytes]) -> float:
    sample = values[:500]
    longest = max((len(v.decode("utf-8")) for v in sample), default=0)
    return float(min(max(len(title), longest, 6) + 2, 50))


def _sheet_xml(table: TextTable) -> bytes:
    cols = "".join(
        f'<col min="{j}" max="{j}" width="{_width(c.title, c.cells):g}" customWidth="1"/>'
        for j, c in enumerate(table.columns, start=1)
    )
    header = "".join(
        f'<c s="1" t="inlineStr"><is><t>{escape(c.title)}</t></is></c>' for c in table.columns
    )
    cells = [
        _number_cells(c.array, c.decimals) if c.numeric else _text_cells(c.cells)
        for c in table.columns
    ]
    n = table.n_rows
    body = b"".join(
        itertools.chain.from_iterable(
            zip(itertools.repeat(b"<row>", n), *cells, itertools.repeat(b"</row>", n), strict=True)
        )
    )
    head = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        '<sheetViews><sheetView workbookViewId="0"><pane ySplit="1" topLeftCell="A2" '
        'activePane="bottomLeft" state="frozen"/></sheetView></sheetViews>'
        f"<cols>{cols}</cols><sheetData><row>{header}</row>"
    )
    return head.encode("utf-8") + body + b"</sheetData></worksheet>"


def write_workbook(sheets: dict[str, TextTable], path: Path) -> None:
    """Write ``sheets`` (name → formatted table, in order) as an .xlsx file."""
    names = list(sheets)
    ct_sheets = "".join(
        f'<Override PartName="/xl/worksheets/sheet{i}.xml" ContentType="application/'
        'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        for i in range(1, len(names) + 1)
    )
    content_types = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.'
        'relationships+xml"/><Default Extension="xml" ContentType="application/xml"/>'
        '<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-'
        'officedocument.spreadsheetml.sheet.main+xml"/>'
        '<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-'
        'officedocument.spreadsheetml.styles+xml"/>' + ct_sheets + "</Types>"
    )
    rels = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        '<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/'
        'relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>'
    )
    wb_sheets = "".join(
        f'<sheet name="{escape(name[:31])}" sheetId="{i}" r:id="rId{i}"/>'
        for i, name in enumerate(names, start=1)
    )
    workbook = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
        'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">'
        f"<sheets>{wb_sheets}</sheets></workbook>"
    )
    wb_rels = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        + "".join(
            f'<Relationship Id="rId{i}" Type="http://schemas.openxmlformats.org/officeDocument/'
            f'2006/relationships/worksheet" Target="worksheets/sheet{i}.xml"/>'
            for i in range(1, len(names) + 1)
        )
        + f'<Relationship Id="rId{len(names) + 1}" Type="http://schemas.openxmlformats.org/'
        'officeDocument/2006/relationships/styles" Target="styles.xml"/></Relationships>'
    )
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED, compresslevel=1) as z:
        z.writestr("[Content_Types].xml", content_types)
        z.writestr("_rels/.rels", rels)
        z.writestr("xl/workbook.xml", workbook)
        z.writestr("xl/_rels/workbook.xml.rels", wb_rels)
        z.writestr("xl/styles.xml", _styles_xml())
        for i, name in enumerate(names, start=1):
            z.writestr(f"xl/worksheets/sheet{i}.xml", _sheet_xml(sheets[name]))
