"""Sites and readers of the report tests: the demo site, a hostile site with failing circuits
and over-capacity trench segments, and an HTML table reader built on :mod:`html.parser`
(independent of the report's writer)."""

from __future__ import annotations

import csv
from html.parser import HTMLParser
from pathlib import Path

from ..conftest import SITE_TOML, base_frames, write_site

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_site"

#: ids of the base site renamed to text that would be markup if it were not escaped
HOSTILE_IDS = {
    "R1": "<img src=x onerror=alert(1)>",
    "CB1": "</td></table><script>alert(2)</script>",
    "INV1": "INV\"&'1",
}
HOSTILE_NAME = "<b>Hostile</b> & <script>alert(3)</script>"


def hostile_site(root: Path) -> Path:
    """The base site with :data:`HOSTILE_IDS` and :data:`HOSTILE_NAME`, a string drop limit no
    string meets (every string fails) and a trench capacity of 2 cable sets (the trunk with
    the combiner's 5 strings is over capacity)."""
    frames = base_frames()
    for frame in frames.values():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: HOSTILE_IDS.get(v, v))
    toml = SITE_TOML.replace(
        'name = "Test site"', 'name = "<b>Hostile</b> & <script>alert(3)</script>"'
    )
    toml = toml.replace("snap_m = 20.0", "snap_m = 20.0\nmax_circuits = 2")
    toml += "\n[design.drop_pct]\nstring = 0.02\ndc_total = 0.5\n"
    return write_site(root, frames, toml=toml)


class Tables(HTMLParser):
    """Every ``<table>`` of a page with an id: its rows as lists of cell texts (header row
    included), and the text of every element with an id."""

    def __init__(self, text: str):
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[list[str]]] = {}
        self.texts: dict[str, str] = {}
        self._table: str | None = None
        self._row: list[str] | None = None
        self._cell: list[str] | None = None
        self._open: list[tuple[str, str | None]] = []  # (tag, id) of open elements
        self._ided: dict[str, list[str]] = {}
        self.tags: list[str] = []
        self.feed(text)
        self.close()

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        ident = dict(attrs).get("id")
        if tag in ("meta", "br", "hr", "img", "input", "link"):
            return
        self._open.append((tag, ident))
        if ident:
            self._ided[ident] = []
        if tag == "table" and ident:
            self._table = ident
            self.tables[ident] = []
        elif tag == "tr" and self._table:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        while self._open:
            t, ident = self._open.pop()
            if ident is not None:
                self.texts[ident] = " ".join("".join(self._ided.pop(ident)).split())
            if t == tag:
                break
        if tag in ("td", "th") and self._cell is not None and self._row is not None:
            self._row.append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "tr" and self._row is not None and self._table:
            self.tables[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        for parts in self._ided.values():
            parts.append(data)


def read_rows(path: Path) -> list[dict[str, str]]:
    """A schedule read with the csv module; the OWASP guard's leading ``'`` removed from text
    that starts with a formula character (README, "Text stays text")."""
    with open(path, encoding="utf-8", newline="") as fh:
        rows = list(csv.DictReader(fh))
    for row in rows:
        for k, v in row.items():
            if v.startswith("'") and v.lstrip("'")[:1] in ("=", "+", "-", "@", "\t", "\r", "\x00"):
                row[k] = v[1:]
    return rows
