"""A small, fast XLSX (Office Open XML SpreadsheetML) writer for large schedules.

General-purpose writers style cell by cell and take minutes for a utility-scale schedule
(70,000 circuits × 40 columns); here each column is formatted once as text with numpy/Python
string operations and rows are joined, which takes seconds. What it writes: one sheet per
table, a bold header row frozen in place, numbers as numeric cells with a per-column number
format (fixed decimals), text as inline strings. The package layout follows ECMA-376 Part 1
(SpreadsheetML): ``[Content_Types].xml``, ``_rels/.rels``, ``xl/workbook.xml``,
``xl/_rels/workbook.xml.rels``, ``xl/styles.xml``, ``xl/worksheets/sheetN.xml``.
Reading the result back with openpyxl is part of the test suite.
"""

from __future__ import annotations

import zipfile
from pathlib import Path
from xml.sax.saxutils import escape

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


class Column:
    """One column ready to write: a title, and per-row cell XML fragments."""

    def __init__(self, title: str, cells: list[str], width: float):
        self.title, self.cells, self.width = title, cells, width

    @classmethod
    def numbers(cls, title: str, text: list[str], decimals: int | None) -> Column:
        """Numeric cells from already formatted text ('' = empty cell)."""
        style = _NUMBER_STYLE[min(decimals, MAX_DECIMALS)] if decimals is not None else 0
        full = f'<c s="{style}"><v>'
        empty = f'<c s="{style}"/>'
        cells = [empty if not t else f"{full}{t}</v></c>" for t in text]
        return cls(title, cells, _width(title, text))

    @classmethod
    def text(cls, title: str, values: list[str]) -> Column:
        """Inline-string cells ('' = empty cell)."""
        cells = [
            '<c s="2"/>' if not v else f'<c s="2" t="inlineStr"><is><t>{escape(v)}</t></is></c>'
            for v in values
        ]
        return cls(title, cells, _width(title, values))


def _width(title: str, values: list[str]) -> float:
    sample = values[:500]
    longest = max((len(v) for v in sample), default=0)
    return float(min(max(len(title), longest, 6) + 2, 50))


def _sheet_xml(columns: list[Column]) -> str:
    cols = "".join(
        f'<col min="{j}" max="{j}" width="{c.width:g}" customWidth="1"/>'
        for j, c in enumerate(columns, start=1)
    )
    header = "".join(
        f'<c s="1" t="inlineStr"><is><t>{escape(c.title)}</t></is></c>' for c in columns
    )
    body = "".join(
        "<row>" + "".join(r) + "</row>" for r in zip(*(c.cells for c in columns), strict=True)
    )
    return (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        '<sheetViews><sheetView workbookViewId="0"><pane ySplit="1" topLeftCell="A2" '
        'activePane="bottomLeft" state="frozen"/></sheetView></sheetViews>'
        f"<cols>{cols}</cols><sheetData><row>{header}</row>{body}</sheetData></worksheet>"
    )


def write_workbook(sheets: dict[str, list[Column]], path: Path) -> None:
    """Write ``sheets`` (name → columns, in order) as an .xlsx file."""
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
