"""The schedules as CSV files and as the workbook's sheets, reusing the last run's chunks.

Each table is cut into chunks of rows (:mod:`routeplan.outputs.reuse`). A chunk the last run
wrote with the same key is copied from the last file: its CSV lines as they are, its sheet rows
as the compressed piece they were (:class:`routeplan.outputs.xlsx.Piece`). The other chunks are
formatted (:func:`routeplan.outputs.tables.format_table`, once for both files). Whether a chunk
is copied or formatted, its bytes are the same, so a CSV file is byte for byte what a cold run
writes, and so is the workbook.

Text from a user's files stays text. In the CSV files a text cell that a spreadsheet would
read as a formula gets a leading ``'`` (:func:`csv_guard`; undone by :func:`csv_unguard`)
and a cell holding a line break of any kind is quoted (:func:`csv_cells`); the workbook
holds text as typed string cells, which no spreadsheet evaluates, with the characters XML
cannot carry replaced (:func:`routeplan.outputs.xlsx.xml_text`).
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .columns import Col
from .reuse import chunk_bounds, chunk_keys, layout, row_hashes
from .tables import TextTable, format_table, ordered
from .xlsx import (
    Piece,
    cell_lengths,
    filter_range,
    package_parts,
    sheet_head,
    sheet_rows,
    sheet_tail,
    write_zip,
)

#: first characters that make a spreadsheet read a CSV cell as a formula: ``= + - @``, TAB
#: and CR (OWASP, "CSV Injection"; from memory) and NUL (OWASP ASVS 5.0, requirement 1.2.10)
FORMULA_LEAD = "=+-@\t\r\x00"
#: a cell that needs a guard: any quotes, then a formula character (quotes included, so that
#: the guard can be undone exactly)
_GUARD = re.compile(rb"'*[=+\-@\t\r\x00]")
_UNGUARD = re.compile(r"'(?='*[=+\-@\t\r\x00])")
#: a cell that may need one, after a separator byte 0xFF (never in UTF-8)
_MAYBE = re.compile(rb"\xff[=+\-@\t\r\x00']")
#: characters that make a CSV cell quoted (RFC 4180, §2.6)
_CSV_SPECIAL = (b",", b'"', b"\n", b"\r")
_CSV_QUOTE = re.compile(rb'[,"\n\r]')


def csv_guard(cells: list[bytes]) -> list[bytes]:
    """Text cells (UTF-8) as written in a CSV file: a cell whose first character is a
    :data:`FORMULA_LEAD` character, or that starts with quotes followed by one, gets a
    leading ``'``, so a spreadsheet shows it as text instead of evaluating it (OWASP, "CSV
    Injection": prefix such cells with a single quote). Others are returned as they are.

    Quotes before a formula character are guarded too, so that :func:`csv_unguard` can tell a
    guard from text that began with a quote. One regular-expression scan of all the cells finds
    the few that need it.

    Examples
    --------
    >>> csv_guard([b"=1+2", b"R1", b"-CB1", b"'=x", b"'x", b"", b"@A"])
    [b"'=1+2", b'R1', b"'-CB1", b"''=x", b"'x", b'', b"'@A"]
    """
    if not cells:
        return cells
    blob = b"\xff" + b"\xff".join(cells)
    hits = [m.start() for m in _MAYBE.finditer(blob)]
    if not hits:
        return cells
    starts = np.cumsum(np.fromiter(map(len, cells), dtype=np.int64, count=len(cells)) + 1)
    out = list(cells)
    for i in np.searchsorted(starts, hits, side="right").tolist():
        if _GUARD.match(cells[i]):
            out[i] = b"'" + cells[i]
    return out


def csv_unguard(text: str) -> str:
    """A CSV cell's text as it was before :func:`csv_guard` (its ``'`` removed where the guard
    added it; any other text unchanged).

    Examples
    --------
    >>> [csv_unguard(t) for t in ["'=1+2", "''=x", "'x", "-0.5", "R1"]]
    ['=1+2', "'=x", "'x", '-0.5', 'R1']
    """
    return text[1:] if _UNGUARD.match(text) else text


def csv_cells(cells: list[bytes]) -> list[bytes]:
    r"""Text cells (UTF-8) as written in the CSV files: guarded (:func:`csv_guard`), then
    quoted as RFC 4180 (§2.6, §2.7) asks: a cell holding a comma, a double quote, LF or CR is
    enclosed in double quotes, its double quotes doubled.

    That is what Python's csv module writes (``QUOTE_MINIMAL``), except for a CR: the module
    quotes only the characters of its line terminator, so with ``"\n"`` a CR inside a cell
    would be left bare, and every reader (the csv module included) would end the row there.

    Examples
    --------
    >>> csv_cells([b"a,b", b'a"b', b"cr\rhere", b"=x", b"plain"])
    [b'"a,b"', b'"a""b"', b'"cr\rhere"', b"'=x", b'plain']
    """
    cells = csv_guard(cells)
    blob = b"".join(cells)
    if not any(ch in blob for ch in _CSV_SPECIAL):
        return cells
    made: dict[bytes, bytes] = {}
    out = []
    for c in cells:
        q = made.get(c)
        if q is None:
            q = b'"' + c.replace(b'"', b'""') + b'"' if _CSV_QUOTE.search(c) else c
            made[c] = q
        out.append(q)
    return out


def csv_lines(table: TextTable) -> list[bytes]:
    """Each row of ``table`` as a line of a CSV file, without its line end: numbers as
    formatted, text as :func:`csv_cells`."""
    cells = [c.cells if c.numeric else csv_cells(c.cells) for c in table.columns]
    if len(cells) == 1:  # a lone empty field is written "" (as the csv module does)
        return [c or b'""' for c in cells[0]]
    return list(map(b",".join, zip(*cells, strict=True)))


@dataclass(eq=False)
class Schedule:
    """One table to write: its rows in output order, hashed and cut into chunks."""

    data: pd.DataFrame
    cols: tuple[Col, ...]
    layout: str
    bounds: np.ndarray
    keys: list[str]
    titles: list[str]
    _rendered: dict[int, tuple[bytes, bytes, np.ndarray]] = field(default_factory=dict)

    @classmethod
    def of(
        cls, frame: pd.DataFrame, cols: tuple[Col, ...] = (), hashes: np.ndarray | None = None
    ) -> Schedule:
        """The schedule of ``frame`` (contract columns ``cols`` first, when given); ``hashes``
        of its rows when known already (:func:`routeplan.outputs.reuse.row_hashes` of every
        column, geometry included or not)."""
        data = ordered(frame, cols) if cols else frame.drop(columns="geometry", errors="ignore")
        data = data.reset_index(drop=True)
        spec = {c.name: c for c in cols}
        titles = [spec[c].title if c in spec else str(c) for c in data.columns]
        lay = layout(data, [(c.name, c.title, c.decimals) for c in cols])
        if hashes is None or len(hashes) != len(data):
            hashes = row_hashes(data)
        bounds = chunk_bounds(hashes)
        return cls(data, cols, lay, bounds, chunk_keys(hashes, bounds, lay), titles)

    def render(self, chunks: Iterable[int]) -> None:
        """Format the rows of ``chunks`` (those not formatted yet), all in one call."""
        todo = sorted(set(chunks) - set(self._rendered))
        if not todo:
            return
        starts, ends = self.bounds[todo], self.bounds[np.asarray(todo) + 1]
        rows = np.concatenate([np.arange(a, b) for a, b in zip(starts, ends, strict=True)])
        table = format_table(self.data.iloc[rows], self.cols)
        local = np.r_[0, np.cumsum(ends - starts)].tolist()  # chunk bounds within ``table``
        lines, lengths = csv_lines(table), cell_lengths(table)
        xml = sheet_rows(table, local)
        for i, (j, a, b) in enumerate(zip(todo, local[:-1], local[1:], strict=True)):
            csv = b"\n".join(lines[a:b]) + b"\n" if b > a else b""
            self._rendered[j] = (csv, xml[i], lengths[a:b].max(axis=0, initial=0))

    def rendered(self, chunk: int) -> tuple[bytes, bytes, np.ndarray]:
        """A formatted chunk (:meth:`render` first): its CSV lines, its sheet rows and the
        longest cell of each column."""
        return self._rendered[chunk]

    def csv_header(self) -> bytes:
        """The CSV header line with its line end: the column names, as
        :meth:`routeplan.outputs.tables.TextTable.csv_header` writes them."""
        return b",".join(str(c).encode("utf-8") for c in self.data.columns) + b"\n"


@dataclass
class Previous:
    """The last run's file (its bytes) and the index written with it (part → entry: ``"csv"``
    for a CSV file, the sheet name for the workbook); empty when unusable."""

    data: bytes = b""
    index: dict = field(default_factory=dict)

    def chunks(self, name: str, schedule: Schedule) -> dict[str, int]:
        """Chunk key → position in the last index of table ``name``, when its layout matches."""
        e = self.index.get(name)
        if not isinstance(e, dict) or e.get("layout") != schedule.layout:
            return {}
        ends = np.asarray(e["offset"], dtype=np.int64) + np.asarray(e["length"], dtype=np.int64)
        if len(ends) != len(e["keys"]) or (len(ends) and ends.max() > len(self.data)):
            return {}
        return {k: i for i, k in enumerate(e["keys"])}

    def piece(self, name: str, i: int) -> bytes:
        e = self.index[name]
        a = int(e["offset"][i])
        return self.data[a : a + int(e["length"][i])]

    def view(self, name: str, i: int) -> memoryview:
        """:meth:`piece` without copying its bytes."""
        e = self.index[name]
        a = int(e["offset"][i])
        return memoryview(self.data)[a : a + int(e["length"][i])]


def write_csv(schedule: Schedule, path: Path, previous: Previous) -> tuple[dict, int]:
    """Write ``schedule`` as a CSV file. Returns its index (with the file's SHA-256 under
    ``"sha256"``, taken from the bytes as they are written) and the number of chunks copied.
    Copied chunks are written from the last file's bytes as they lie (no copy of their own)."""
    old = previous.chunks("csv", schedule)
    fresh = [j for j, k in enumerate(schedule.keys) if k not in old]
    schedule.render(fresh)
    header = schedule.csv_header()
    parts, offset, length = [header], [], []
    pos = len(header)
    for j, k in enumerate(schedule.keys):
        text = schedule.rendered(j)[0] if k not in old else previous.view("csv", old[k])
        parts.append(text)
        offset.append(pos)
        length.append(len(text))
        pos += len(text)
    digest = hashlib.sha256()
    with open(path, "wb") as fh:
        for part in parts:
            digest.update(part)
            fh.write(part)
    index = {
        "layout": schedule.layout,
        "keys": list(schedule.keys),
        "offset": np.asarray(offset, dtype=np.int64),
        "length": np.asarray(length, dtype=np.int64),
    }
    return {"csv": index, "sha256": digest.hexdigest()}, len(schedule.keys) - len(fresh)


def write_workbook(
    sheets: dict[str, Schedule],
    path: Path,
    previous: Previous,
    filtered: Iterable[str] = (),
) -> tuple[dict, int]:
    """Write the sheets (name → schedule, in order) as an .xlsx workbook. Returns its index
    (per sheet) and the number of chunks copied. Every sheet's header row is frozen; the
    ``filtered`` sheets (data tables) also get an autofilter over their header and columns
    and a frozen first (id) column."""
    filtered = set(filtered)
    filters = {
        name: filter_range(len(s.data), len(s.titles))
        for name, s in sheets.items()
        if name in filtered
    }
    entries = [(name, [Piece.of(data)]) for name, data in package_parts(list(sheets), filters)]
    plan: list[tuple[str, Schedule, list[Piece], list[np.ndarray]]] = []
    copied = 0
    for name, s in sheets.items():
        old = previous.chunks(name, s)
        fresh = [j for j, k in enumerate(s.keys) if k not in old]
        s.render(fresh)
        e = previous.index.get(name, {})
        pieces, longest = [], []
        for j, k in enumerate(s.keys):
            if k in old:
                i = old[k]
                data = previous.piece(name, i)
                pieces.append(Piece(data, int(e["crc"][i]), int(e["size"][i])))
                longest.append(np.asarray(e["longest"][i], dtype=np.int64))
            else:
                _, xml, most = s.rendered(j)
                pieces.append(Piece.of(xml))
                longest.append(most)
        copied += len(s.keys) - len(fresh)
        widest = np.max(longest, axis=0) if longest else np.zeros(len(s.titles), dtype=np.int64)
        head = Piece.of(sheet_head(s.titles, widest, freeze_cols=int(name in filters)))
        tail = Piece.of(sheet_tail(filters.get(name)))
        entries.append((f"xl/worksheets/sheet{len(plan) + 1}.xml", [head, *pieces, tail]))
        plan.append((name, s, pieces, longest))
    where = write_zip(path, entries)
    index = {}
    for (name, s, pieces, longest), offsets in zip(
        plan, where[len(entries) - len(plan) :], strict=True
    ):
        index[name] = {
            "layout": s.layout,
            "keys": list(s.keys),
            "offset": np.asarray(offsets[1:-1], dtype=np.int64),
            "length": np.asarray([len(p.data) for p in pieces], dtype=np.int64),
            "crc": np.asarray([p.crc for p in pieces], dtype=np.int64),
            "size": np.asarray([p.size for p in pieces], dtype=np.int64),
            "longest": np.asarray(longest, dtype=np.int64).reshape(len(pieces), len(s.titles)),
        }
    return index, copied
