"""README, Outputs, "Text stays text": hostile text in every user-supplied field that reaches
an output — the site name, the ids of every layer, the module key and the ``to`` values —
planned through the command line (extends ``test_text_safety``, whose sites put control and
formula characters into ids and the site name, with markup and script in the same fields
and the module key, and with the map and the terminal):

- ``map.html``, read offline with Python's ``html.parser`` (WHATWG HTML tokenising): the page
  has exactly the elements of the same site with plain names (no text opened or closed an
  element, a script or a comment), no hostile text appears raw, and the text each label shows
  (``html.unescape`` of the page's data, decoded with the json module) is the text planned;
  ``tests/map/test_map_planned_browser.py`` opens the same page in Chromium;
- the CSV files (Python's csv module) hold each text with the OWASP guard, the workbook opens
  in openpyxl with each text as XML 1.0 allows it, the GeoPackage (GDAL) keeps the exact text;
- the terminal shows control characters of the text as ``\\xNN`` (``check``, ``plan``, and an
  error naming a hostile module key).
"""

from __future__ import annotations

import html
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pyogrio
import pytest
from openpyxl import load_workbook

from routeplan.cli import app
from routeplan.outputs.schedules import csv_unguard
from tests.conftest import SITE_TOML, base_frames, write_site

from .promise_sites import plan_cli, runner
from .test_text_safety import as_in_csv, as_in_workbook, read_csv

#: markup, script, template and JavaScript string breakers, control characters and formula
#: leads, in every field of the base site (tests/conftest.py) that reaches an output
HOSTILE = {
    "R1": "=<img src=x onerror=alert('R1')>",
    "R2": "R2\x1b[31m`${alert('R2')}`",  # no `to`: assigned, and so named on the terminal
    "CB1": "</script><script>alert('CB1')</script>",
    "INV1": "{{7*7}}\u2028\\",
    "T1": "'\"><svg onload=alert('T1')>",
    "T2": "-T2</textarea><!--",
    "G1": "@G1\r\nInjected: line",
}
MODULE = "<b>mod</b>\x1b[5m=1+1"
SITE = "<script>alert('site')</script>\x1b]0;pwned\x07 {{7*7}} ${alert(1)}"
#: C0 and C1 control characters (and DEL): shown as \\xNN on the terminal
CONTROLS = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f]")


def site_files(root: Path, hostile: bool) -> Path:
    """The base site with one row left without ``to``: with the hostile texts, or plain."""
    frames = base_frames()
    names = HOSTILE if hostile else {}
    for frame in frames.values():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: names.get(v, v))
    frames["rows"].loc[1, "to"] = None
    toml = SITE_TOML
    if hostile:
        frames["rows"]["module"] = MODULE
        toml = toml.replace("[modules.mod1]", f"[modules.{json.dumps(MODULE)}]")
        toml = toml.replace('name = "Test site"', f"name = {json.dumps(SITE)}")
    return write_site(root, frames, toml=toml)


@pytest.fixture(scope="module")
def planned(tmp_path_factory) -> dict:
    tmp = tmp_path_factory.mktemp("hostile")
    runs = {}
    for hostile in (False, True):
        site = site_files(tmp / f"site-{hostile}", hostile)
        out = tmp / f"out-{hostile}"
        runs[hostile] = {"site": site, "out": out, "result": plan_cli(site, out)}
    return runs


def test_hostile_text_plans_like_plain_text(planned):
    plain, hostile = planned[False]["result"], planned[True]["result"]
    assert plain.exit_code == 0, plain.output
    assert hostile.exit_code == 0, hostile.output


# -- the map, offline ----------------------------------------------------------------------------


class Elements(HTMLParser):
    """Every element, comment and script text of a page, as an HTML tokeniser sees them."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, tuple[str, ...]]] = []
        self.comments = 0

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, tuple(sorted(k for k, _ in attrs))))

    def handle_endtag(self, tag):
        self.tags.append(("/" + tag, ()))

    def handle_comment(self, data):
        self.comments += 1


def elements(page: str) -> tuple[list, int]:
    parser = Elements()
    parser.feed(page)
    parser.close()
    return parser.tags, parser.comments


def data_strings(page: str) -> list[str]:
    """Every string of the page's embedded layer data (``JSON.parse('…')``, decoded with the
    json module): what the page's script puts into tooltips and labels as HTML."""
    found: list[str] = []

    def walk(value) -> None:
        if isinstance(value, str):
            found.append(value)
        elif isinstance(value, dict):
            for v in value.values():
                walk(v)
        elif isinstance(value, list):
            for v in value:
                walk(v)

    for m in re.finditer(r"JSON\.parse\('(.*?)'\)", page, re.S):
        walk(json.loads(m.group(1).replace("\\'", "'").replace("\\\\", "\\")))
    return found


def shown_texts(page: str) -> set[str]:
    """The texts of the layer data and of the panel (between tags), as a browser shows them
    (``html.unescape``)."""
    found = {html.unescape(t) for t in data_strings(page)}
    found |= {html.unescape(m.group(1)) for m in re.finditer(r">([^<>]+)<", page)}
    return found


def test_the_map_has_the_plain_pages_elements_and_shows_the_text(planned):
    page = (planned[True]["out"] / "map.html").read_text(encoding="utf-8")
    plain = (planned[False]["out"] / "map.html").read_text(encoding="utf-8")
    # no text opened or closed an element, a script or a comment
    assert elements(page) == elements(plain)
    for raw in (*HOSTILE.values(), MODULE, SITE):
        assert raw not in page, raw
    for raw in ("<img", "<svg", "<b>", "</textarea>", "</script>", "<!--"):
        assert page.count(raw) == plain.count(raw), raw  # only Leaflet's and the legend's
    # the layer data is HTML with every markup character as a character reference (WHATWG
    # HTML: "<" opens a tag, "&" a reference; the template-literal characters ` $ { } \ too)
    strings = data_strings(page)
    assert any(HOSTILE["T2"] in html.unescape(t) for t in strings)
    for text in strings:
        assert not set(text) & set("<>`${}\\"), text
    shown = shown_texts(page)
    # every hostile text is shown as text somewhere: ids alone or within labels
    for raw in (*HOSTILE.values(), MODULE):
        assert any(raw in text for text in shown), raw
    assert any(SITE in text for text in shown)  # "{{7*7}}" shown as typed: no template ran


# -- CSV, workbook, GeoPackage ---------------------------------------------------------------------


def test_every_csv_text_cell_is_guarded_and_the_workbook_opens(planned):
    out = planned[True]["out"]
    for name, sheet, layer in (
        ("cable_schedule.csv", "circuits", "circuits"),
        ("trench_schedule.csv", "trenches", "segments"),
    ):
        rows = read_csv(out / name)
        header, body = rows[0], rows[1:]
        raw = pyogrio.read_dataframe(out / "routes.gpkg", layer=layer, read_geometry=False)
        for j, column in enumerate(header):
            if raw[column].dtype == object:  # text: the GeoPackage's, guarded
                expected = ["" if v is None else as_in_csv(str(v)) for v in raw[column]]
                assert [r[j] for r in body] == expected, column
        first = {r[0] for r in body}  # circuit and segment ids, guarded where they must be
        assert ("'" + HOSTILE["R1"] + "/S1" in first) == (name == "cable_schedule.csv")
        # T2's first segment: (42, 0) → (45, 0), chainage 0 → 3 m along T2
        assert ("'" + HOSTILE["T2"] + "@0.0-3.0" in first) == (name == "trench_schedule.csv")
        book = load_workbook(out / "cable_schedule.xlsx")  # openpyxl opens it
        got = list(book[sheet].iter_rows(min_row=2, values_only=True))
        for csv_row, xl_row in zip(body, got, strict=True):
            for text, value in zip(csv_row, xl_row, strict=True):
                if isinstance(value, str) or value is None:
                    assert (value or "") == as_in_workbook(csv_unguard(text))
    summary = {(r[0], r[1]): r[2] for r in book["summary"].iter_rows(min_row=2, values_only=True)}
    assert summary["Site", "name"] == as_in_workbook(SITE)
    # the module key and the ids are kept exactly in the GeoPackage and summary.json
    rows = pyogrio.read_dataframe(out / "routes.gpkg", layer="rows", read_geometry=False)
    assert set(rows["module"]) == {MODULE} and set(rows["id"]) == {HOSTILE["R1"], HOSTILE["R2"]}
    assert json.loads((out / "summary.json").read_text(encoding="utf-8"))["site"]["name"] == SITE


# -- the terminal --------------------------------------------------------------------------------


def shown(text: str) -> str:
    r"""Control characters written as \xNN (README: "on the terminal, control characters of
    your text are shown as \xNN"), as typed here by hand."""
    return CONTROLS.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def test_the_terminal_shows_control_characters_escaped(planned):
    out = planned[True]["result"].stdout
    assert not CONTROLS.search(out)
    assert f"{shown(SITE)} — plan" in out
    assert f"assigned: {shown(HOSTILE['R2'])} → {shown(HOSTILE['CB1'])} (" in out
    check = runner.invoke(app, ["check", str(planned[True]["site"])])
    assert check.exit_code == 0, check.output
    assert not CONTROLS.search(check.stdout)
    assert f"site     {shown(SITE)}\n" in check.stdout
    assert f"module   {shown(MODULE)}: Isc 13 A," in check.stdout
    assert f"assigned row {shown(HOSTILE['R2'])} → {shown(HOSTILE['CB1'])} (" in check.stdout


def test_an_error_naming_hostile_text_is_one_escaped_line(tmp_path):
    site = site_files(tmp_path / "site", hostile=True)
    toml = (site / "site.toml").read_text(encoding="utf-8")
    unknown = "<i>x</i>\x1b[2J\r"
    (site / "site.toml").write_text(
        toml.replace(f"[modules.{json.dumps(MODULE)}]", f"[modules.{json.dumps(unknown)}]"),
        encoding="utf-8",
    )
    result = plan_cli(site, tmp_path / "out")
    assert result.exit_code == 2
    assert not CONTROLS.search(result.stderr)
    assert result.stderr.splitlines()[0] == (
        f"error: rows: module {MODULE!r} of 2 rows ({shown(HOSTILE['R1'])}, "
        f"{shown(HOSTILE['R2'])}) is not in site.toml [modules] (known: {shown(unknown)})"
    )
    assert not (tmp_path / "out").exists()
