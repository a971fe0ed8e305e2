"""A small, fast XLSX (Office Open XML SpreadsheetML) writer for large schedules.

General-purpose writers style cell by cell and take minutes for a utility-scale schedule
(70,000 circuits × 40 columns); here each column arrives formatted once as text (a
:class:`routeplan.outputs.tables.TextTable`, shared with the CSV writer), becomes cell XML
bytes in one pass (text cells once per distinct value) and the rows are joined in one call,
which takes about a second. Each sheet is compressed in self-contained pieces (one per chunk
of rows, :class:`Piece`), so an unchanged chunk's compressed bytes can be copied from the last
run's file (:mod:`routeplan.outputs.schedules`). What it writes: one sheet per
table, a bold header row frozen in place, numbers as numeric cells with a per-column number
format (fixed decimals), text as inline strings (:func:`xml_text`: characters XML 1.0 does
not allow become U+FFFD, so any text from a user's files gives a workbook that opens). The
package layout follows ECMA-376 Part 1 (SpreadsheetML): ``[Content_Types].xml``,
``_rels/.rels``, ``xl/workbook.xml``, ``xl/_rels/workbook.xml.rels``, ``xl/styles.xml``,
``xl/worksheets/sheetN.xml``.
Reading the result back with openpyxl is part of the test suite.
"""

from __future__ import annotations

import itertools
import re
import struct
import zlib
from collections.abc import Sequence
from dataclasses import dataclass
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


#: bytes that make a UTF-8 cell text need more than copying into the XML (:func:`xml_text`):
#: ``& < >``, C0 controls other than TAB and LF (CR included, see there), U+FFFE, U+FFFF,
#: UTF-16 surrogates (as ``surrogatepass`` writes them; strict UTF-8 cannot hold them) and
#: text of the form ``_xHHHH_``. In UTF-8 each byte pattern can only be that character.
_NEEDS_WORK = re.compile(
    rb"[\x00-\x08\x0b-\x1f&<>]|\xef\xbf[\xbe\xbf]|\xed[\xa0-\xbf]|_x[0-9A-Fa-f]{4}_"
)
#: the bytes that start none of those characters (deleted by ``bytes.translate``: a fast test)
_ORDINARY = bytes(sorted(set(range(256)) - {*range(9), *range(11, 32), *b"&<>\xed\xef"}))
#: characters outside XML 1.0's ``Char`` production (W3C XML 1.0 Fifth Edition, §2.2):
#: C0 controls other than TAB, LF, CR; lone surrogates; U+FFFE, U+FFFF
_NOT_XML_CHAR = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")
#: the underscore of text that a spreadsheet would decode as an escaped character
_XSTRING = re.compile("_(?=x[0-9A-Fa-f]{4}_)")


def xml_str(text: str) -> str:
    r"""``text`` as the character data of a cell: ``& < >`` escaped, every character XML 1.0
    does not allow (W3C XML 1.0 Fifth Edition, §2.2 ``Char``: C0 controls other than TAB, LF,
    CR; lone surrogates; U+FFFE, U+FFFF) replaced by U+FFFD, CR written as the reference
    ``&#13;`` (a parser reads a literal CR as LF, §2.11), and the underscore of text of the form
    ``_xHHHH_`` written ``_x005F_`` (ECMA-376 Part 1, §22.9.2.19 ``ST_Xstring``: spreadsheets
    decode ``_xHHHH_`` as the character U+HHHH; LibreOffice does, tested).

    U+FFFD rather than the ``_xHHHH_`` form for the forbidden characters: the replacement is
    visible in the cell, where a restored control character would be invisible, and the CSV
    files and the GeoPackage keep the exact text. C1 controls (U+0080–U+009F) and DEL stay:
    §2.2 allows them (it only discourages them), they are text that readers keep (openpyxl
    and LibreOffice, tested), and replacing them would alter text that is not broken.

    Examples
    --------
    >>> print(ascii(xml_str("A&B\x01\x1b[31m\r\ufffe\x85<_x0041_")))
    'A&amp;B\ufffd\ufffd[31m&#13;\ufffd\x85&lt;_x005F_x0041_'
    """
    text = _XSTRING.sub("_x005F_", _NOT_XML_CHAR.sub("\ufffd", text))
    return escape(text, {"\r": "&#13;"})


def xml_text(text: bytes) -> bytes:
    """:func:`xml_str` of UTF-8 ``text`` (surrogates written with ``surrogatepass`` allowed)."""
    if _NEEDS_WORK.search(text) is None:
        return text
    return xml_str(text.decode("utf-8", "surrogatepass")).encode("utf-8")


def _text_cells(cells: list[bytes]) -> list[bytes]:
    """Inline-string cells (``b''`` = empty cell), as :func:`xml_text`; each distinct text
    once. One regular-expression scan of all the texts finds the few that need work."""
    codes, uniques = pd.factorize(np.array(cells, dtype=object))
    pre, post = b'<c s="2" t="inlineStr"><is><t>', b"</t></is></c>"
    made = np.array([pre + t + post if t else b'<c s="2"/>' for t in uniques], dtype=object)
    blob = b"\n".join(uniques)  # LF needs no work, so no match spans two texts
    if not blob.translate(None, _ORDINARY) and b"_x" not in blob:
        return made[codes].tolist()
    hits = np.fromiter((m.start() for m in _NEEDS_WORK.finditer(blob)), dtype=np.int64)
    if len(hits):
        ends = np.cumsum(np.fromiter(map(len, uniques), dtype=np.int64, count=len(uniques)) + 1)
        for i in np.unique(np.searchsorted(ends, hits, side="right")).tolist():
            made[i] = pre + xml_text(uniques[i]) + post
    return made[codes].tolist()


def typed_cells(values: Sequence[object]) -> list[bytes]:
    """Cells of a column of mixed values, each by its type (ECMA-376 Part 1, §18.3.1.4
    ``c``, ``t`` attribute): a bool as a boolean cell (``t="b"``, 1 or 0), an int or float
    as a number (shortest text that reads back as the same float, general format), text as
    an inline string (:func:`xml_text`); None and NaN or infinite numbers as an empty cell.

    Examples
    --------
    >>> cells = typed_cells([True, 3, 0.25, "a<b", None, float("nan")])
    >>> cells[:3]
    [b'<c t="b"><v>1</v></c>', b'<c><v>3</v></c>', b'<c><v>0.25</v></c>']
    >>> cells[3:]
    [b'<c s="2" t="inlineStr"><is><t>a&lt;b</t></is></c>', b'<c s="2"/>', b'<c s="2"/>']
    """
    out = []
    for v in values:
        if isinstance(v, (bool, np.bool_)):
            out.append(b'<c t="b"><v>1</v></c>' if v else b'<c t="b"><v>0</v></c>')
        elif isinstance(v, (int, float, np.integer, np.floating)):
            x = float(v)
            if not np.isfinite(x):
                out.append(b'<c s="2"/>')
            elif isinstance(v, (int, np.integer)) and abs(int(v)) < 2**53:
                out.append(b"<c><v>%d</v></c>" % int(v))
            else:
                out.append(b"<c><v>" + repr(x).encode("ascii") + b"</v></c>")
        elif v is None or (isinstance(v, str) and v == ""):
            out.append(b'<c s="2"/>')
        else:
            text = xml_text(str(v).encode("utf-8", "surrogatepass"))
            out.append(b'<c s="2" t="inlineStr"><is><t>' + text + b"</t></is></c>")
    return out


def _column_cells(c) -> list[bytes]:
    """The cells of one formatted column (:class:`routeplan.outputs.tables.TextColumn`)."""
    if c.values is not None:
        return typed_cells(c.values)
    return _number_cells(c.array, c.decimals) if c.numeric else _text_cells(c.cells)


def sheet_rows(table: TextTable, bounds: Sequence[int]) -> list[bytes]:
    """The ``<row>`` elements of ``table`` (cells without references: in order), joined per
    run of rows between successive ``bounds`` (row offsets in ``table``)."""
    cells = [_column_cells(c) for c in table.columns]
    out = []
    for a, b in itertools.pairwise(bounds):
        rows = zip(
            itertools.repeat(b"<row>", b - a),
            *(c[a:b] for c in cells),
            itertools.repeat(b"</row>", b - a),
            strict=True,
        )
        out.append(b"".join(itertools.chain.from_iterable(rows)))
    return out


def cell_lengths(table: TextTable) -> np.ndarray:
    """Characters in each cell (rows × columns), for the column widths."""
    out = np.zeros((table.n_rows, len(table.columns)), dtype=np.int64)
    for j, c in enumerate(table.columns):
        if c.numeric:
            out[:, j] = np.strings.str_len(c.array)
        elif table.n_rows:
            out[:, j] = np.fromiter(map(len, c.cells), dtype=np.int64, count=table.n_rows)
            if not b"".join(c.cells).isascii():  # UTF-8: count characters, not bytes
                wide = np.flatnonzero([not t.isascii() for t in c.cells])
                out[wide, j] = [
                    len(c.cells[i].decode("utf-8", "surrogatepass")) for i in wide.tolist()
                ]
    return out


def column_letters(j: int) -> str:
    """The column's letters in an A1 reference, of the 1-based column number ``j``.

    Examples
    --------
    >>> [column_letters(j) for j in (1, 26, 27, 52, 703)]
    ['A', 'Z', 'AA', 'AZ', 'AAA']
    """
    out = ""
    while j > 0:
        j, r = divmod(j - 1, 26)
        out = chr(ord("A") + r) + out
    return out


def filter_range(n_rows: int, n_cols: int) -> str:
    """The A1 range of a table with its header row (``A1:X{n_rows + 1}``), for the autofilter.

    Examples
    --------
    >>> filter_range(3, 28)
    'A1:AB4'
    """
    return f"A1:{column_letters(max(n_cols, 1))}{n_rows + 1}"


def sheet_head(titles: list[str], longest: np.ndarray, freeze_cols: int = 0) -> bytes:
    """The sheet's XML up to and with its bold header row; column widths from the titles and
    the longest cell of each column (``longest``), between 6 and 50 characters. The header row
    is frozen, and with it the first ``freeze_cols`` columns (the id column of a schedule):
    ECMA-376 Part 1, §18.3.1.66 ``pane``."""
    widths = [min(max(len(t), int(n), 6) + 2, 50) for t, n in zip(titles, longest, strict=True)]
    cols = "".join(
        f'<col min="{j}" max="{j}" width="{w}" customWidth="1"/>'
        for j, w in enumerate(widths, start=1)
    )
    header = "".join(f'<c s="1" t="inlineStr"><is><t>{xml_str(t)}</t></is></c>' for t in titles)
    if freeze_cols > 0:
        corner = f"{column_letters(freeze_cols + 1)}2"
        pane = (
            f'<sheetView workbookViewId="0"><pane xSplit="{freeze_cols}" ySplit="1" '
            f'topLeftCell="{corner}" activePane="bottomRight" state="frozen"/>'
            '<selection pane="bottomRight"/></sheetView>'
        )
    else:
        pane = (
            '<sheetView workbookViewId="0"><pane ySplit="1" topLeftCell="A2" '
            'activePane="bottomLeft" state="frozen"/></sheetView>'
        )
    return (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        f"<sheetViews>{pane}</sheetViews>"
        f"<cols>{cols}</cols><sheetData><row>{header}</row>"
    ).encode()


SHEET_TAIL = b"</sheetData></worksheet>"


def sheet_tail(autofilter: str | None = None) -> bytes:
    """The sheet's XML after its rows, with an autofilter over the A1 range ``autofilter``
    when given (ECMA-376 Part 1, §18.3.1.2 ``autoFilter``, after ``sheetData``)."""
    if autofilter is None:
        return SHEET_TAIL
    return f'</sheetData><autoFilter ref="{autofilter}"/></worksheet>'.encode()


@dataclass(frozen=True)
class Piece:
    """Part of a ZIP entry compressed on its own: raw DEFLATE (RFC 1951) ending in a full
    flush, so pieces concatenate into one stream; with the CRC-32 and length of its text."""

    data: bytes
    crc: int
    size: int

    @classmethod
    def of(cls, text: bytes) -> Piece:
        """Compress ``text`` (level 1: the sheets are large and repetitive)."""
        c = zlib.compressobj(1, zlib.DEFLATED, -15)
        return cls(c.compress(text) + c.flush(zlib.Z_FULL_FLUSH), zlib.crc32(text), len(text))


#: the end of a DEFLATE stream: an empty final block
_FINAL = zlib.compressobj(1, zlib.DEFLATED, -15).flush()
_POLY = 0xEDB88320  # CRC-32 (ISO 3309 / ITU-T V.42), reflected


def _multmodp(a: int, b: int) -> int:
    """a × b modulo the CRC-32 polynomial (reflected bit order), as zlib's crc32.c."""
    m, p = 1 << 31, 0
    while True:
        if a & m:
            p ^= b
            if (a & (m - 1)) == 0:
                return p
        m >>= 1
        b = (b >> 1) ^ _POLY if b & 1 else b >> 1


_X2N = [1 << 30]  # x^(2^k) modulo the polynomial
for _ in range(31):
    _X2N.append(_multmodp(_X2N[-1], _X2N[-1]))


def crc32_combine(crc1: int, crc2: int, len2: int) -> int:
    """CRC-32 of A + B from CRC-32(A), CRC-32(B) and len(B) (zlib's ``crc32_combine``)."""
    p, k, n = 1 << 31, 3, len2  # x^(8 · len2): len2 bytes of zeros shift crc1
    while n:
        if n & 1:
            p = _multmodp(_X2N[k & 31], p)
        n >>= 1
        k += 1
    return _multmodp(p, crc1) ^ crc2


_DOS_DATE = (0 << 9) | (1 << 5) | 1  # 1980-01-01: fixed, so equal content gives equal bytes


def write_zip(path: Path, entries: list[tuple[str, list[Piece]]]) -> list[list[int]]:
    """Write a ZIP archive (PKWARE APPNOTE 6.3: local headers, data, central directory) whose
    entries are DEFLATE streams made of ``Piece``s. Returns each piece's offset in the file.
    Entries must stay below 4 GiB (no ZIP64)."""
    offsets: list[list[int]] = []
    central = []
    pos = 0
    with open(path, "wb") as fh:
        for name, pieces in entries:
            crc, size = 0, 0
            for p in pieces:
                crc = crc32_combine(crc, p.crc, p.size)
                size += p.size
            csize = sum(len(p.data) for p in pieces) + len(_FINAL)
            if size >= 0xFFFFFFFF or csize >= 0xFFFFFFFF:
                raise ValueError(f"{name}: larger than a ZIP entry without ZIP64 can hold")
            raw = name.encode("utf-8")
            fixed = (20, 0, 8, 0, _DOS_DATE, crc, csize, size, len(raw))
            local = struct.pack("<IHHHHHIIIHH", 0x04034B50, *fixed, 0) + raw
            central.append(
                struct.pack("<IH", 0x02014B50, 20) + struct.pack("<HHHHHIIIH", *fixed)
                + struct.pack("<HHHHII", 0, 0, 0, 0, 0, pos) + raw
            )  # fmt: skip
            fh.write(local)
            pos += len(local)
            where = []
            for p in pieces:
                where.append(pos)
                fh.write(p.data)
                pos += len(p.data)
            fh.write(_FINAL)
            pos += len(_FINAL)
            offsets.append(where)
        cd = b"".join(central)
        fh.write(cd)
        fh.write(struct.pack("<IHHHHIIH", 0x06054B50, 0, 0, len(central), len(central),
                             len(cd), pos, 0))  # fmt: skip
    return offsets


def package_parts(
    names: list[str], filters: dict[str, str] | None = None
) -> list[tuple[str, bytes]]:
    """The workbook's parts other than the sheets, for sheets called ``names`` (in order);
    ``filters``: sheet name → the A1 range of its autofilter, declared as the sheet's hidden
    ``_xlnm._FilterDatabase`` name (ECMA-376 Part 1, §18.2.5; spreadsheets expect it beside
    the sheet's ``autoFilter``)."""
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
        f"<sheets>{wb_sheets}</sheets>{_defined_names(names, filters or {})}</workbook>"
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
    return [
        ("[Content_Types].xml", content_types.encode("utf-8")),
        ("_rels/.rels", rels.encode("utf-8")),
        ("xl/workbook.xml", workbook.encode("utf-8")),
        ("xl/_rels/workbook.xml.rels", wb_rels.encode("utf-8")),
        ("xl/styles.xml", _styles_xml().encode("utf-8")),
    ]


def _defined_names(names: list[str], filters: dict[str, str]) -> str:
    """``definedNames`` of the autofilters: ``'sheet'!$A$1:$X$n`` per filtered sheet."""
    items = []
    for i, name in enumerate(names):
        ref = filters.get(name)
        if ref is None:
            continue
        a, b = ref.split(":")
        absolute = ":".join("$" + re.sub(r"(\d+)$", r"$\1", x) for x in (a, b))
        quoted = "'" + name[:31].replace("'", "''") + "'"
        items.append(
            f'<definedName name="_xlnm._FilterDatabase" localSheetId="{i}" hidden="1">'
            f"{escape(quoted)}!{absolute}</definedName>"
        )
    return f"<definedNames>{''.join(items)}</definedNames>" if items else ""
