"""End to end: a site planned with markup, template and script syntax in every id (rows,
combiners, inverters, trenches, grid), its module's name and its site name shows each of them
on the map, escaped — in every tooltip field, the trench id included.

The reference is the standard library's HTML parser: ``html.unescape`` of each shown value
gives the user's text back exactly, and no value holds a character that is live in HTML, a
JavaScript template literal or a Jinja template (DEVELOPERS.md, "Untrusted text in the map")."""

from __future__ import annotations

import html
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app

from ..conftest import SITE_TOML, base_frames, write_site
from .test_map import layer_data

runner = CliRunner()

#: the base site's ids renamed (tests/conftest.py): every one holds live characters
HOSTILE = {
    "R1": "R<1>",
    "R2": "R2${alert(1)}",
    "CB1": "CB`1",
    "INV1": "INV\"1'&amp;",
    "T1": "T<b>1</b>",
    "T2": "T{{ 7*7 }}\\2",
    "G1": "G</script>1",
}
MODULE = "mod{% if 1 %}<i>"
SITE_NAME = "Site </script>${1}"
LIVE = set("<>\"'`$\\{}")


def as_shown(text: str) -> str:
    """The documented rule: HTML entities (Python's html.escape, quotes too), then the
    characters live in a template literal or a Jinja template as numeric references."""
    return "".join(f"&#{ord(c)};" if c in "`$\\{}" else c for c in html.escape(text, quote=True))


@pytest.fixture(scope="module")
def page(tmp_path_factory) -> str:
    tmp = tmp_path_factory.mktemp("hostile-map")
    frames = base_frames()
    for frame in frames.values():
        for col in ("id", "to"):
            if col in frame.columns:
                frame[col] = frame[col].map(lambda v: HOSTILE.get(v, v))
    frames["rows"]["module"] = MODULE
    toml = SITE_TOML.replace('name = "Test site"', f'name = "{SITE_NAME}"').replace(
        "[modules.mod1]", f'[modules."{MODULE}"]'
    )
    site = write_site(tmp / "site", frames, toml=toml)
    out = tmp / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    return (Path(out) / "map.html").read_text(encoding="utf-8")


def shown_values(page: str) -> list[tuple[str, str, str]]:
    """(layer class, field, value) of every text property of every drawn feature."""
    return [
        (fc["class"], key, value)
        for fc in layer_data(page)
        for feature in fc["features"]
        for key, value in feature["properties"].items()
        if isinstance(value, str)
    ]


def test_no_tooltip_field_holds_a_live_character(page):
    values = shown_values(page)
    assert values
    for cls, key, value in values:
        assert not set(value) & LIVE, (cls, key, value)


def test_every_user_text_is_shown_as_given(page):
    shown = [html.unescape(v) for _, _, v in shown_values(page)]
    for raw in [*HOSTILE.values(), MODULE]:
        assert any(raw in s for s in shown), raw  # on the map, and read back exactly
        assert raw not in page  # never raw, anywhere in the page
    assert SITE_NAME not in page
    assert f"<title>{as_shown(SITE_NAME)} – cable routes</title>" in page


def test_trench_ids_in_the_trench_tooltips(page):
    fields = {
        key: {v for c, k, v in shown_values(page) if c == "rp-segment" and k == key}
        for key in ("trench", "segment")
    }
    trenches = {HOSTILE["T1"], HOSTILE["T2"]}
    assert fields["trench"] == {as_shown(t) for t in trenches}
    # segment ids are "<trench id>@<from>-<to>", the trench id everything before the last "@"
    assert {html.unescape(s).rsplit("@", 1)[0] for s in fields["segment"]} == trenches
    # hand: the base site's cuts (tests/conftest.py): T1 (42, 30) → (42, 0) at y = 20 and 10,
    # chainage 30 - y; T2 (42, 0) → (150, 0) at CB1 (x = 45) and INV1 (x = 100), chainage x - 42
    t1, t2 = HOSTILE["T1"], HOSTILE["T2"]
    assert {html.unescape(s) for s in fields["segment"]} == {
        f"{t1}@0.0-10.0",
        f"{t1}@10.0-20.0",
        f"{t1}@20.0-30.0",
        f"{t2}@0.0-3.0",
        f"{t2}@3.0-58.0",
        f"{t2}@58.0-108.0",
    }
