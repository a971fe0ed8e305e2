"""Unit tests of the HTML map (no browser): colour scales, aggregation, escaping, offline page."""

from __future__ import annotations

import json
import re
import warnings
from html.parser import HTMLParser
from pathlib import Path

import folium
import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
import shapely
from branca.colormap import _schemes

from routeplan.map import details as map_details
from routeplan.map import features as map_features
from routeplan.map import page as rpmap
from routeplan.map import panel as map_panel
from routeplan.map import scales as map_scales
from routeplan.map import script as map_script
from routeplan.map import text as map_text
from routeplan.map.assets import offline_header
from routeplan.map.features import (
    aggregate_strings,
    circuit_layers,
    segment_layers,
    string_group_layers,
)
from routeplan.map.page import (
    MapError,
    escape_text,
    read_output_folder,
    render_folder,
    render_map,
    write_map,
)
from routeplan.map.scales import (
    FILL,
    NAN_COLOUR,
    PROBLEM_COLOUR,
    UTILISATION,
    VIRIDIS_20,
    circuit_weight,
)

from .map_fixtures import HOSTILE, expected_counts, make_frames, synthetic_frames

# the only URLs in the page without basemap: in Leaflet's code, never fetched
# (the SVG namespace name and the "Leaflet" link of the attribution control)
ALLOWED_URLS = {"http://www.w3.org/2000/svg", "https://leafletjs.com"}


def lab_lightness(hex_colour: str) -> float:
    """CIE L* of an sRGB colour (D65), from the sRGB and CIE 1976 formulas."""
    c = np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)]) / 255.0
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    y = float(lin @ [0.2126, 0.7152, 0.0722])
    return 116 * np.cbrt(y) - 16 if y > (6 / 29) ** 3 else y * (29 / 3) ** 3


def lab(hex_colour: str) -> np.ndarray:
    """CIE L*a*b* (D65) of an sRGB colour."""
    c = np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)]) / 255.0
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = m @ lin / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz * (29 / 6) ** 2 / 3 + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def render(frames, site, **kwargs) -> str:
    return render_map(
        frames["circuits"],
        frames["segments"],
        frames["rows"],
        frames["equipment"],
        site_name=site,
        **kwargs,
    )


def layer_data(html: str) -> list[dict]:
    """The FeatureCollections embedded in the page (by column, rebuilt with
    :func:`map_features.expand` as the page's rpFeatures does), in drawing order, with their
    classes."""
    out = []
    pattern = re.compile(r"addData\(rpFeatures\(JSON\.parse\(\'(.*?)\'\)\)\);", re.S)
    classes = re.findall(r'className: "([^"]+)",\s*interactive: (true|false)\n', html)
    for m, (cls, interactive) in zip(pattern.finditer(html), classes, strict=True):
        text = m.group(1).replace("\\'", "'").replace("\\\\", "\\")
        fc = map_features.expand(json.loads(text))
        fc["class"] = cls
        fc["interactive"] = interactive == "true"
        out.append(fc)
    return out


def script_elements(html: str) -> tuple[int, int]:
    """Numbers of <script> start and end tags, as an HTML parser sees them."""

    class Counter(HTMLParser):
        starts = ends = 0

        def handle_starttag(self, tag, attrs):
            self.starts += tag == "script"

        def handle_endtag(self, tag):
            self.ends += tag == "script"

    counter = Counter()
    counter.feed(html)
    return counter.starts, counter.ends


def data_text(html: str) -> str:
    """The embedded features as JSON text, decoded."""
    return json.dumps([fc["features"] for fc in layer_data(html)], ensure_ascii=False)


# --------------------------------------------------------------------------------------------
# colour scales


def test_scale_tables_are_the_published_ones():
    # traceability: the tables in code equal the samples branca ships
    assert list(map_scales.VIRIDIS_20) == _schemes["viridis"]
    assert [c.lower() for c in map_scales.BLUES_9] == _schemes["Blues_09"]
    assert [c.lower() for c in map_scales.YLGNBU_9] == _schemes["YlGnBu_09"]


def test_utilisation_endpoints():
    assert UTILISATION.colour(0.0) == VIRIDIS_20[15].lower()  # light green
    assert UTILISATION.colour(1.0) == VIRIDIS_20[0].lower()  # dark purple
    assert FILL.colour(0.0) == map_scales.BLUES_9[1]
    assert FILL.colour(1.0) == map_scales.BLUES_9[-1]


@pytest.mark.parametrize("scale", [UTILISATION, FILL], ids=["utilisation", "fill"])
def test_lightness_falls_monotonically(scale):
    # darker always means more: readable in greyscale print and without hue
    stops = [lab_lightness(c) for c in scale.stops]
    assert np.all(np.diff(stops) < -3)  # each stop clearly darker than the one before
    lightness = [lab_lightness(c) for c in scale.colours(np.linspace(0, 1, 201))]
    # between stops: 8-bit rounding of the interpolated sRGB may add up to ~0.03 L*
    assert np.all(np.diff(lightness) < 0.1)
    assert lightness[0] - lightness[-1] > 50  # a wide range of grey levels


@pytest.mark.parametrize("scale", [UTILISATION, FILL], ids=["utilisation", "fill"])
def test_clamping_and_nan(scale):
    assert scale.colour(1.7) == scale.colour(1.0)  # overloaded: clamped to the dark end
    assert scale.colour(-0.3) == scale.colour(0.0)
    assert scale.colour(float("nan")) == NAN_COLOUR.lower()
    assert scale.colours([np.inf]).tolist() == [scale.colour(1.0)]


def test_scale_is_continuous():
    # halfway between two stops is the mean of the two
    n = len(UTILISATION.stops) - 1
    mid = UTILISATION.colour(0.5 / n)
    a, b = UTILISATION.stops[0], UTILISATION.stops[1]
    expected = [round((int(a[i : i + 2], 16) + int(b[i : i + 2], 16)) / 2) for i in (1, 3, 5)]
    got = [int(mid[i : i + 2], 16) for i in (1, 3, 5)]
    assert np.allclose(got, expected, atol=1)


def test_problem_colour_is_far_from_both_scales():
    # vermillion is never mistaken for a scale colour (CIE76 distance, "clearly different" > 30)
    samples = list(UTILISATION.colours(np.linspace(0, 1, 50))) + list(
        FILL.colours(np.linspace(0, 1, 50))
    )
    distances = [np.linalg.norm(lab(PROBLEM_COLOUR) - lab(c)) for c in samples]
    assert min(distances) > 30


def test_circuit_weight_grows_with_cross_section():
    w = circuit_weight([4, 6, 16, 95, 240, 300, 630], [1, 1, 1, 1, 1, 2, 2])
    assert np.all(np.diff(w) > 0)
    assert w[0] == 2.0 and w[-1] == 8.0  # limits
    assert circuit_weight([np.nan], [1])[0] == 2.0


# --------------------------------------------------------------------------------------------
# escaping


@pytest.mark.parametrize(
    ("raw", "escaped"),
    [
        ("<img src=x onerror=alert(1)>", "&lt;img src=x onerror=alert(1)&gt;"),
        ("${alert(1)}", "&#36;&#123;alert(1)&#125;"),
        ("a`b", "a&#96;b"),
        ("a\\b", "a&#92;b"),
        ("</script>", "&lt;/script&gt;"),
        ("\"'&", "&quot;&#x27;&amp;"),
        ("{{ 7*7 }}", "&#123;&#123; 7*7 &#125;&#125;"),
        ("R1/S1 → CB1 6 mm²", "R1/S1 → CB1 6 mm²"),  # plain text unchanged
        (None, ""),
        (float("nan"), ""),
        (12, "12"),
    ],
)
def test_escape_text(raw, escaped):
    assert escape_text(raw) == escaped
    assert map_text.escape_all([raw]) == [escaped]


def test_escaped_text_has_no_live_characters():
    for raw in HOSTILE.values():
        out = escape_text(raw)
        assert not set(out) & set("<>\"'`$\\{}"), out


def test_every_shown_string_is_escaped():
    frames, site = make_frames(HOSTILE)
    html = render(frames, site)
    for fc in layer_data(html):
        for feature in fc["features"]:
            for key, value in feature["properties"].items():
                if isinstance(value, str):
                    assert not set(value) & set("<>`$\\{}"), (key, value)
    # nothing hostile reaches the page raw: not in data, panel or title
    for raw in HOSTILE.values():
        assert raw not in html
    assert "&lt;img src=x onerror=alert(1)&gt;" in data_text(html)  # in the data, escaped
    assert escape_text(HOSTILE["site"]) in html  # in the panel and title, escaped
    # the page has the same elements as a harmless one: no text ended a script early
    plain = render(*make_frames())
    assert script_elements(html) == script_elements(plain) == (7, 7)


def test_template_syntax_in_data_is_not_evaluated():
    # branca would evaluate Jinja syntax in rendered scripts; ids like these stay text
    names = {"R1/S1": "{{ 7*7 }}", "CB1": "{% if true %}yes{% endif %}", "site": "{# x #}"}
    frames, site = make_frames(names)
    html = render(frames, site)
    data = data_text(html)
    assert '"circuit": "&#123;&#123; 7*7 &#125;&#125;"' in data
    assert '"49"' not in data
    assert "&#123;% if true %&#125;yes&#123;% endif %&#125;" in data
    assert "<title>&#123;# x #&#125; – cable routes</title>" in html


# --------------------------------------------------------------------------------------------
# aggregation


def test_strings_drawn_one_by_one_up_to_the_threshold(plan_frames):
    frames, site = plan_frames
    counts = expected_counts(frames)
    html = render(frames, site, aggregate_strings_above=counts["strings"])  # 9 strings, not > 9
    strings = [fc for fc in layer_data(html) if "rp-string" in fc["class"]]
    assert sum(len(fc["features"]) for fc in strings) == counts["strings"]
    assert rpmap.LAYER_NAMES["string"] in html
    assert rpmap.LAYER_NAMES["string_grouped"] not in html


def test_strings_aggregated_above_the_threshold(plan_frames):
    frames, site = plan_frames
    counts = expected_counts(frames)
    html = render(frames, site, aggregate_strings_above=counts["strings"] - 1)
    strings = [fc for fc in layer_data(html) if "rp-string" in fc["class"]]
    feats = [f for fc in strings for f in fc["features"]]
    assert len(feats) == counts["rows"]  # one per row (each row feeds one combiner)
    assert rpmap.LAYER_NAMES["string_grouped"] in html
    # arrays, AC circuits and segments stay individual
    by_class = {fc["class"]: len(fc["features"]) for fc in layer_data(html)}
    assert by_class["rp-circuit rp-array"] == 2
    assert by_class["rp-circuit rp-ac"] == 1
    assert by_class["rp-segment"] + by_class["rp-segment rp-over"] == counts["segments"]


def test_aggregate_takes_worst_and_sums(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    agg = aggregate_strings(c[c["kind"] == "string"]).set_index("from_id")
    assert list(agg.index) == ["R1", "R2", "R3", "R4"]
    assert agg.loc["R1", "n_strings"] == 3
    assert agg.loc["R4", "utilisation"] == pytest.approx(0.95)  # worst of the row
    assert agg.loc["R2", "n_fail"] == 1
    assert agg.loc["R2", "vdrop_total_pct"] == pytest.approx(3.4)
    assert "R2/S2" in agg.loc["R2", "failing"]
    r1 = c[c["from_id"] == "R1"]
    assert agg.loc["R1", "cable_m"] == pytest.approx(r1["cable_m"].sum())
    # the longest route of the row is drawn: R1/S1 starts farthest from the combiner
    assert agg.loc["R1", "geometry"].equals(r1.geometry.iloc[0])
    assert agg.loc["R1", "conductor"] == "6 mm² Cu"


def test_aggregated_layers_colour_by_worst_string(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    layers = string_group_layers(c[c["kind"] == "string"])
    assert layers.drawn == 4
    assert len(layers.fail) == len(layers.casing) == 1  # row R2 holds the failing string
    ok = layers.ok.features["features"]
    r4 = next(i for i, f in enumerate(ok) if f["properties"]["row"] == "R4")
    assert layers.ok.style_of(r4)["color"] == UTILISATION.colour(0.95)


def test_large_plan_aggregates_and_switches_to_canvas():
    frames, site = synthetic_frames(n_blocks=60, rows_per_block=6, strings_per_row=4)
    n_strings = 60 * 6 * 4
    html = render(frames, site, aggregate_strings_above=1000)
    strings = [fc for fc in layer_data(html) if "rp-string" in fc["class"] and fc["interactive"]]
    assert sum(len(fc["features"]) for fc in strings) == 60 * 6  # one per row
    assert f"{n_strings:,} strings drawn as one line per row" in html
    assert '"preferCanvas": false' in html  # few drawn features: SVG
    big = synthetic_frames(n_blocks=600)[0]
    html = render(big, site, aggregate_strings_above=1000)
    assert '"preferCanvas": true' in html  # > CANVAS_ABOVE drawn features


def test_size_per_drawn_feature_is_small():
    # a generated 1 GW plant has 55,000-110,000 drawn features once strings are aggregated
    # (rows, trench segments, string groups); the layers go by column, property names once
    # per layer, so at < 200 bytes each the page stays far below 30 MB (measured: 10.5 MB
    # for bench/run.py's 1 GW plant, 84,000 drawn features; 138 bytes each here)
    frames, site = synthetic_frames(n_blocks=100)
    html = render(frames, site, aggregate_strings_above=1000)
    drawn = sum(len(fc["features"]) for fc in layer_data(html) if fc["interactive"])
    libraries = len(offline_header().encode()) + len(map_script.PAGE_SCRIPT) + 20_000
    review = re.search(r'<script type="application/json" id="rp-data">(.*?)</script>', html)
    assert review is not None
    data = len(review.group(1).encode())
    assert (len(html.encode()) - libraries - data) / drawn < 200
    # the review data (routeplan.map.details) holds every circuit, also the aggregated
    # strings: < 120 bytes per circuit keeps a 1 GW plant's page far below 30 MB (measured:
    # 79 bytes here; 7.1 MB, 106 bytes per circuit, for a 1000 MW synth plant of 67,200)
    assert data / len(frames["circuits"]) < 120


# --------------------------------------------------------------------------------------------
# layers and the page


def test_one_feature_per_drawn_thing(plan_frames):
    frames, site = plan_frames
    counts = expected_counts(frames)
    data = layer_data(render(frames, site))
    interactive = sum(len(fc["features"]) for fc in data if fc["interactive"])
    assert interactive == sum(counts[k] for k in ("circuits", "segments", "rows", "equipment"))
    flags = {fc["class"]: len(fc["features"]) for fc in data if not fc["interactive"]}
    assert flags == {"rp-fail-casing": counts["fail"], "rp-over-halo": counts["over"]}


def test_fail_and_over_capacity_styles(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    layers = circuit_layers(c[c["kind"] == "string"])
    fail = layers.fail.style_of(0)
    assert fail["color"] == PROBLEM_COLOUR and "dashArray" not in fail  # solid: easy to hover
    casing = layers.casing.style_of(0)
    assert casing["weight"] > fail["weight"] and casing["dashArray"]
    assert layers.fail.features["features"][0]["properties"]["note"].startswith("total DC")
    seg = segment_layers(frames["segments"])
    assert len(seg.over) == len(seg.halo) == 1
    assert seg.over.features["features"][0]["properties"]["segment"] == "T1#3"
    assert seg.halo.style_of(0)["color"] == PROBLEM_COLOUR
    assert seg.halo.style_of(0)["weight"] > seg.over.style_of(0)["weight"]
    assert seg.over.style_of(0)["color"] == FILL.colour(1.0)  # 5 / 3 clamped


def test_passing_circuits_drawn_lightest_first(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    ok = circuit_layers(c[c["kind"] == "string"]).ok.features["features"]
    util = [int(f["properties"]["utilisation"].rstrip(" %")) for f in ok]
    assert util == sorted(util)  # the most loaded end on top


def test_tooltips_carry_units(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    ok = circuit_layers(c[c["kind"] == "string"]).ok.features["features"]
    p = next(f["properties"] for f in ok if f["properties"]["circuit"] == "R1/S1")
    assert p["conductor"] == "6 mm² Cu"
    assert p["utilisation"] == "15 %"
    assert p["current"].endswith(" A") and p["ampacity"].endswith(" × 0.70)")
    assert re.fullmatch(r"[\d.,]+ m / [\d.,]+ m", p["length"])
    assert re.fullmatch(r"[\d.]+ V \([\d.]+ %\)", p["vdrop"])
    assert p["loss"].endswith(" W") and p["vdrop_total"].endswith(" %")
    ac = circuit_layers(c[c["kind"] == "ac"]).ok.features["features"][0]["properties"]
    assert ac["conductor"] == "2 × 240 mm² Al"
    seg = segment_layers(frames["segments"]).ok.features["features"]
    s = next(f["properties"] for f in seg if f["properties"]["segment"] == "T4#1")
    assert s["capacity"] == "not set" and s["fill"] == "–"
    assert "circuit_ids" in s and "note" not in s  # empty values are left out
    assert s["circuits"] == "1 (strings 0, arrays 0, AC 1)"
    assert s["group_factor"] == "1.00" and s["depth"] == "0.80 m" and s["laying"] == "direct"


def test_row_tooltip_shows_strings_and_worst_drop(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"]
    layer = map_features.row_layer(frames["rows"], c[c["kind"] == "string"])
    r2 = next(f["properties"] for f in layer.features["features"] if f["properties"]["row"] == "R2")
    assert r2["strings"] == "2 (2 with a route)"
    assert r2["worst_drop"] == "3.40 %"


def test_coordinates_rounded_to_six_decimals(plan_frames):
    frames, site = plan_frames
    for fc in layer_data(render(frames, site)):
        text = json.dumps(fc["features"])
        for number in re.findall(r"-?\d+\.\d+", text):
            assert len(number.split(".")[1]) <= 6, number


def test_no_urls_without_basemap(plan_frames):
    frames, site = plan_frames
    html = render(frames, site)
    urls = set(re.findall(r"https?://[^\s\"'<>)\\]+", html))
    assert urls <= ALLOWED_URLS, urls - ALLOWED_URLS
    assert "cdn." not in html.lower() and "jsdelivr" not in html
    assert "L.tileLayer" not in html
    assert html.count("Leaflet 1.9.3, a JS library") == 1  # inlined once
    assert "jQuery v3.7.1" in html


def test_basemap_adds_only_tiles(plan_frames):
    frames, site = plan_frames
    html = render(frames, site, basemap=True)
    urls = set(re.findall(r"https?://[^\s\"'<>)\\]+", html)) - ALLOWED_URLS
    assert urls and all("tile.openstreetmap.org" in u or "openstreetmap.org" in u for u in urls)
    assert "L.tileLayer" in html


def test_folium_defaults_untouched(plan_frames):
    before = list(folium.Map.default_js)
    frames, site = plan_frames
    render(frames, site)
    assert folium.Map.default_js == before
    assert any("leaflet" in url for _, url in folium.Map.default_js)


def test_panel_totals_and_caution(plan_frames):
    frames, site = plan_frames
    html = render(frames, site)
    text = re.sub(r"<[^>]+>", " ", html)
    text = re.sub(r"\s+", " ", text)
    assert "9 string · 2 array · 1 AC" in text
    assert "Failing 1 : R2/S2" in text
    assert "Worst DC drop, total 3.40 % (R2/S2)" in text
    assert "Worst AC drop 0.60 % (AC:INV1)" in text
    assert "1 over capacity" in text
    assert map_panel.CAUTION in text
    assert "design aid" in map_panel.CAUTION and "qualified, licensed person" in map_panel.CAUTION


def test_plan_totals(plan_frames):
    frames, _ = plan_frames
    _, over, _ = map_features.segment_values(frames["segments"])
    t = map_panel.plan_totals(frames["circuits"], frames["segments"], over)
    assert t.circuits_by_kind == {"string": 9, "array": 2, "ac": 1}
    assert t.failing_ids == ["R2/S2"]
    assert t.over_capacity == 1
    c = frames["circuits"]
    assert t.cable_m_by_kind["ac"] == pytest.approx(c.loc[c["kind"] == "ac", "cable_m"].sum())
    assert t.trench_m == pytest.approx(frames["segments"]["length_m"].sum())


def test_segment_without_capacity_scaled_by_busiest(plan_frames):
    frames, _ = plan_frames
    t, over, ref = map_features.segment_values(frames["segments"])
    assert ref == 5  # T1#2 and T1#3 carry 5 circuits
    i = list(frames["segments"]["segment_id"]).index("T4#1")
    assert t[i] == pytest.approx(1 / 5)
    assert over.tolist() == list(frames["segments"]["status"] == "over")


# --------------------------------------------------------------------------------------------
# the output folder


def test_write_map_reads_the_folder(plan_dir: Path):
    dest = write_map(plan_dir)
    assert dest == plan_dir / "map.html"
    html = dest.read_text(encoding="utf-8")
    assert "Demo field" in html
    assert html.startswith("<!DOCTYPE html>")
    assert not list(plan_dir.glob(".map.html.*"))  # no temporary file left


def test_render_folder_writes_nothing(plan_dir: Path):
    before = {p.name: p.stat().st_mtime_ns for p in plan_dir.iterdir()}
    html = render_folder(plan_dir, basemap=True)
    assert html.startswith("<!DOCTYPE html>") and "L.tileLayer" in html
    assert {p.name: p.stat().st_mtime_ns for p in plan_dir.iterdir()} == before


def test_read_output_folder(plan_dir: Path):
    frames, site = read_output_folder(plan_dir)
    assert site == "Demo field"
    assert set(frames) == {"circuits", "segments", "rows", "equipment"}
    assert len(frames["circuits"]) == 12 and frames["circuits"].crs.to_epsg() == 32633


def test_missing_folder_or_layer(tmp_path: Path, plan_dir: Path):
    with pytest.raises(MapError, match=r"nothing: not found"):
        write_map(tmp_path / "nothing")
    (plan_dir / "summary.json").write_text("{}", encoding="utf-8")
    with pytest.raises(MapError, match=r"site\.name"):
        write_map(plan_dir)


def test_missing_column_and_crs(plan_frames):
    frames, site = plan_frames
    broken = dict(frames, circuits=frames["circuits"].drop(columns="utilisation"))
    with pytest.raises(MapError, match="circuits: missing column"):
        render(broken, site)
    no_crs = dict(frames, rows=frames["rows"].set_crs(None, allow_override=True))
    with pytest.raises(MapError, match="rows: no CRS"):
        render(no_crs, site)


def test_features_without_geometry_are_counted_not_drawn(plan_frames):
    frames, site = plan_frames
    rows = frames["rows"].copy()
    rows.loc[0, "geometry"] = None
    html = render(dict(frames, rows=rows), site)
    assert "1 features without geometry are not drawn" in html
    rows_fc = next(fc for fc in layer_data(html) if fc["class"] == "rp-row")
    assert len(rows_fc["features"]) == 3


def test_empty_plan_renders():
    frames, _ = make_frames()
    empty = {k: v.iloc[0:0] for k, v in frames.items()}
    html = render(empty, "Nothing yet")
    assert "Nothing yet" in html and layer_data(html) == []
    assert map_panel.CAUTION in html


def test_missing_values_are_grey_and_dashes(plan_frames):
    frames, _ = plan_frames
    c = frames["circuits"].copy()
    c.loc[c["circuit_id"] == "R1/S1", ["utilisation", "size_mm2", "ampacity_a"]] = np.nan
    layers = circuit_layers(c[c["kind"] == "string"])
    i, p = next(
        (i, f["properties"])
        for i, f in enumerate(layers.ok.features["features"])
        if f["properties"]["circuit"] == "R1/S1"
    )
    assert layers.ok.style_of(i) == {"color": NAN_COLOUR.lower(), "weight": 2.0, "opacity": 0.95}
    assert p["utilisation"] == "–" and p["conductor"] == "– Cu"


def test_many_rows_start_hidden_and_lazy(plan_frames, monkeypatch):
    frames, site = plan_frames
    monkeypatch.setattr(rpmap, "ROWS_SHOWN_UP_TO", 2)
    html = render(frames, site)
    assert html.count("rpLazy(feature_group_rows, [") == 1  # only the rows wait to be shown
    assert html.count("rpLazy(") == 1 + html.count("function rpLazy(")
    assert "4 module rows: switch them on in the layer list" in html


# --------------------------------------------------------------------------------------------
# layers by column: the page's data format


def test_columns_round_trip_to_the_same_feature_collection():
    # reference: the GeoJSON features written out one by one, as json would (shapely gives the
    # geometry); empty values are left out, the style index comes last
    geoms = np.array(
        [
            shapely.Point(15.0, 48.0),
            shapely.box(15.0, 48.0, 15.001, 48.001),
            shapely.LineString([(15.0, 48.0), (15.000001, 48.5)]),
            shapely.Point(15.5, 48.25),
        ],
        dtype=object,
    )
    props = {
        "same": ["a", "a", "a", "a"],
        "mostly": ["x", "x", "", "x"],
        "free": ['q"uote\\', "line\nbreak", "é → ü", ""],
    }
    index = np.array([0, 1, 1, 0])
    text = map_features.columns_text(geoms, props, index)
    data = json.loads(text)
    assert data["t"]["v"] == ["Point", "Polygon", "LineString"]  # types by index
    assert data["p"]["same"] == {"v": ["a"]}  # one value for all
    expected = {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "geometry": json.loads(shapely.to_geojson(g)),
                "properties": {
                    **{k: v[i] for k, v in props.items() if v[i]},
                    map_features.STYLE_KEY: int(index[i]),
                },
            }
            for i, g in enumerate(geoms)
        ],
    }
    assert map_features.expand(data) == expected
    # a layer holding geometry collections carries whole geometries
    gc = np.array([shapely.GeometryCollection([shapely.Point(1, 2)])], dtype=object)
    data = json.loads(map_features.columns_text(gc, None, np.array([0])))
    assert "g" in data and map_features.expand(data)["features"][0]["properties"] == {"s": 0}
    # an empty layer
    empty = map_features.expand(json.loads(map_features.columns_text(geoms[:0], props, [])))
    assert empty == {"type": "FeatureCollection", "features": []}


def test_non_finite_coordinates_are_refused():
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # shapely warns making it: intended
        bad = np.array([shapely.LineString([(0, 0), (np.nan, 1)])], dtype=object)
    with pytest.raises(ValueError, match="finite"):
        map_features.columns_text(bad, None, np.array([0]))


# --------------------------------------------------------------------------------------------
# tiles and the memo of the last map (routeplan.map.tiles)


def _features_by_class(html: str) -> dict[str, list]:
    """Every drawn feature by CSS class, in drawing order (tiles merged)."""
    out: dict[str, list] = {}
    for fc in layer_data(html):
        out.setdefault(fc["class"], []).extend(fc["features"])
    return out


def test_tiles_are_content_defined_and_keep_ids_together():
    from routeplan.map.tiles import TILE_MAX, tiles

    ids = np.array([f"R{i // 3:05d}" for i in range(30_000)], dtype=object)  # 3 per id
    parts = tiles(ids[::-1])
    assert sorted(np.concatenate(parts).tolist()) == list(range(30_000))
    assert len(parts) > 3 and max(len(p) for p in parts) <= TILE_MAX
    for p in parts:  # every id wholly in one tile
        assert len(set(ids[::-1][p])) * 3 == len(p)
    # one id more, in the middle: the other tiles are the same sets of ids
    more = np.insert(ids, 15_000, "R05000x")
    a = {tuple(sorted(set(ids[p]))) for p in tiles(ids)}
    b = {tuple(sorted(set(more[p]))) for p in tiles(more)}
    assert len(a - b) == 1 and len(b - a) == 1


def test_a_memo_of_the_last_map_gives_the_same_page():
    from routeplan.map.tiles import MapMemo

    frames, site = synthetic_frames(n_blocks=600)
    first = MapMemo()
    html = render(frames, site, aggregate_strings_above=1000, memo=first)
    assert first.drawn_tiles > 6 and first.reused_tiles == 0  # several tiles per large group
    again = MapMemo.load(first.export())
    assert render(frames, site, aggregate_strings_above=1000, memo=again) == html
    assert again.drawn_tiles == 0 and again.reused_tiles == first.drawn_tiles


def test_an_edit_draws_only_its_tiles_and_the_page_matches_a_fresh_one():
    from routeplan.map.tiles import MapMemo

    frames, site = synthetic_frames(n_blocks=600)
    first = MapMemo()
    render(frames, site, aggregate_strings_above=1000, memo=first)
    c = frames["circuits"].copy()
    i = int(np.flatnonzero(c["kind"].to_numpy() == "string")[123])
    c.loc[c.index[i], "utilisation"] = 1.7  # one string over its capacity
    c.loc[c.index[i], "status"] = "fail"
    edited = {**frames, "circuits": c}
    memo = MapMemo.load(first.export())
    html = render(edited, site, aggregate_strings_above=1000, memo=memo)
    assert memo.drawn_tiles == 1  # the string tile holding it (row ids: one tile)
    fresh = render(edited, site, aggregate_strings_above=1000)
    assert _features_by_class(html) == _features_by_class(fresh)
    # an unusable memo is an empty one, never an error
    assert MapMemo.load({"scripts": "garbage"}).last_scripts == {}
    assert MapMemo.load(None).last_pages == {}


def _moved_pad(frames: dict) -> dict:
    """``frames`` after an inverter pad moved 8 m: the inverter's point, its AC circuit's first
    vertex and the drop segment of one of its blocks (split in two, so the plant holds one
    trench segment more) change; the rest is as it was."""
    eq = frames["equipment"].copy()
    i = int(np.flatnonzero(eq["id"].to_numpy() == "INV3")[0])
    geoms = eq.geometry.to_numpy().copy()
    geoms[i] = shapely.affinity.translate(geoms[i], yoff=8.0)
    eq = eq.set_geometry(geoms, crs=eq.crs)
    c = frames["circuits"].copy()
    j = int(np.flatnonzero(c["circuit_id"].to_numpy() == "AC:INV3")[0])
    cg = c.geometry.to_numpy().copy()
    cg[j] = shapely.linestrings([geoms[i].coords[0], cg[j].coords[-1]])
    c = c.set_geometry(cg, crs=c.crs)
    c.loc[c.index[j], "route_m"] = float(shapely.length(cg[j]))
    c.loc[c.index[j], "utilisation"] = 0.93
    s = frames["segments"]
    k = int(np.flatnonzero(s["segment_id"].to_numpy() == "T81#9")[0])
    line = s.geometry.iloc[k]
    halves = [shapely.ops.substring(line, 0, 5.0), shapely.ops.substring(line, 5.0, line.length)]
    split = s.iloc[[k, k]].copy()
    split["segment_id"] = ["T81#9", "T81#9b"]
    split["length_m"] = shapely.length(np.array(halves))
    split = split.set_geometry(np.array(halves), crs=s.crs)
    seg = pd.concat([s.iloc[:k], split, s.iloc[k + 1 :]], ignore_index=True)
    return {"circuits": c, "segments": seg, "rows": frames["rows"], "equipment": eq}


def test_a_pad_move_redraws_its_tiles_only_and_the_page_equals_a_cold_one():
    """One trench segment more (as when a moved pad splits the trench it taps) changes the
    number of drawn features; no tile outside the edit is drawn again for it, and the page
    is the one a render without memo gives, byte for byte (folium's element names included)."""
    import shapely.ops  # noqa: F401  (substring)

    from routeplan.map.tiles import MapMemo

    frames, site = synthetic_frames(n_blocks=600)
    first = MapMemo()
    render(frames, site, aggregate_strings_above=1000, memo=first)
    edited = _moved_pad(frames)
    memo = MapMemo.load(first.export())
    html = render(edited, site, aggregate_strings_above=1000, memo=memo)
    # the segments' tile of the split segment, the equipment tile of the pad, the AC tile
    assert memo.drawn_tiles <= 3 and memo.reused_tiles > 3 * memo.drawn_tiles
    assert html == render(edited, site, aggregate_strings_above=1000)  # byte for byte


def _count_colours(html: str) -> dict[str, str]:
    """The page's colour of each circuit count (``rpCountColours``)."""
    m = re.search(r"^rpCountColours = (\{.*?\});$", html, re.M)  # not the page script's {}
    assert m is not None
    return json.loads(m.group(1))


def test_a_new_busiest_segment_redraws_only_its_own_tile():
    """Segments without a capacity are coloured against the busiest segment: a trench edit
    that makes a new busiest one changes every such colour, but not the tiles' scripts (the
    page gives the colour of each count). The page equals a cold one byte for byte; the
    busiest count takes ColorBrewer Blues 9's darkest class #08306b, a count of 1 out of 20
    the colour at 1/20 (Harrower & Brewer 2003; FILL's stops are checked against it above)."""
    from routeplan.map.tiles import MapMemo

    frames, site = synthetic_frames(n_blocks=600)
    seg = frames["segments"].copy()
    seg["max_circuits"] = np.nan  # no capacity set: coloured by circuits ÷ the busiest
    seg["fill"] = np.nan
    seg["status"] = "ok"
    frames = {**frames, "segments": seg}
    first = MapMemo()
    before = render(frames, site, aggregate_strings_above=1000, memo=first)
    assert _count_colours(before)[repr(13.0)] == "#08306b"  # counts 1…13: 13 is the busiest
    edited_seg = seg.copy()
    edited_seg.loc[edited_seg.index[17], "circuits"] = 20
    edited = {**frames, "segments": edited_seg}
    memo = MapMemo.load(first.export())
    html = render(edited, site, aggregate_strings_above=1000, memo=memo)
    assert memo.drawn_tiles == 1 and memo.reused_tiles > 10
    assert html == render(edited, site, aggregate_strings_above=1000)  # byte for byte
    colours = _count_colours(html)
    assert colours[repr(20.0)] == "#08306b" and colours[repr(13.0)] != "#08306b"
    assert colours[repr(1.0)] == FILL.colour(1 / 20)
    # the tiles' style tables hold counts, no colour (every segment lacks a capacity here)
    tables = [json.loads(t) for t in re.findall(r"var t = rpCounted\((\[.*?\])\);", html)]
    assert tables and all("color" not in st and "count" in st for t in tables for st in t)


def test_segments_without_a_capacity_are_styled_by_their_count():
    """With ``by_count`` a segment without a capacity carries its count, and the page's table
    gives each count its colour against the busiest (3 here): ColorBrewer Blues 9's darkest
    class #08306b at 3, its second class #deebf7 at 0 (also -0.0), grey for a missing count
    (Harrower & Brewer 2003; the scale's ends, checked above); a segment with a capacity keeps
    its colour by fill (1 of 2: half way)."""
    geoms = [shapely.LineString([(0, i), (10, i)]) for i in range(5)]
    df = gpd.GeoDataFrame(
        {
            "segment_id": ["S1", "S2", "S3", "S4", "S5"],
            "circuits": [3.0, np.nan, 0.0, -0.0, 1.0],
            "max_circuits": [np.nan, np.nan, np.nan, np.nan, 2.0],
        },
        geometry=geoms,
        crs="EPSG:32633",
    )
    layers = segment_layers(df, by_count=True).ok
    styles = {
        f["properties"]["segment"]: layers.styles[f["properties"]["s"]]
        for f in layers.features["features"]
    }
    assert [f["properties"]["segment"] for f in layers.features["features"]] == [
        "S2",
        "S3",
        "S4",
        "S1",
        "S5",
    ]  # fmt: skip  (no capacity first, by circuits; then by fill)
    assert styles["S5"]["color"] == FILL.colour(0.5) and "count" not in styles["S5"]
    colours = map_features.count_colours(df, 3)
    for sid in ("S1", "S2", "S3", "S4"):
        assert "color" not in styles[sid]
    assert colours[styles["S1"]["count"]] == "#08306b"
    assert colours[styles["S3"]["count"]] == colours[styles["S4"]["count"]] == "#deebf7"
    assert colours[styles["S2"]["count"]] == NAN_COLOUR.lower()
    assert set(colours) == {styles[s]["count"] for s in ("S1", "S2", "S3", "S4")}


def test_a_new_busiest_segment_among_capped_ones_keeps_the_other_tiles():
    """Where some segments have a capacity and some not, those without are drawn under those
    with (each kind in its own order: circuits, fill), so the busiest count orders nothing:
    the other tiles are kept and the page equals a cold one."""
    from routeplan.map.tiles import MapMemo

    frames, site = synthetic_frames(n_blocks=600)
    first = MapMemo()
    render(frames, site, aggregate_strings_above=1000, memo=first)
    seg = frames["segments"].copy()
    uncapped = np.flatnonzero(seg["max_circuits"].isna().to_numpy())
    seg.loc[seg.index[uncapped[3]], "circuits"] = 40
    edited = {**frames, "segments": seg}
    memo = MapMemo.load(first.export())
    html = render(edited, site, aggregate_strings_above=1000, memo=memo)
    assert memo.drawn_tiles == 1
    assert html == render(edited, site, aggregate_strings_above=1000)
    assert _count_colours(html)[repr(40.0)] == "#08306b"
    # within a tile: every segment without a capacity before every one with
    mixed = 0
    for fc in layer_data(html):
        if fc["class"] == "rp-segment":
            capped = [f["properties"]["capacity"] != "not set" for f in fc["features"]]
            assert capped == sorted(capped)
            mixed += len(set(capped)) == 2
    assert mixed > 1


def test_block_areas_are_kept_by_their_geometries_when_given():
    """A block whose circuits are re-sized (other values, the same routes) keeps its area when
    the geometries' hashes are given (routeplan.outputs.reuse.geometry_hashes, as the writer
    passes them); by the rows' content hashes it is drawn again. The page equals a cold one
    byte for byte either way."""
    from routeplan.map.tiles import MapMemo
    from routeplan.outputs.reuse import geometry_hashes

    frames, site = synthetic_frames(n_blocks=600)
    c = frames["circuits"].copy()
    strings = np.flatnonzero(c["kind"].to_numpy() == "string")
    c.loc[c.index[strings[:40]], "utilisation"] = 0.99  # re-sized, routes unchanged
    edited = {**frames, "circuits": c}
    for by_geometry in (True, False):

        def kw(f, by_geometry=by_geometry):
            if not by_geometry:
                return {}
            return {"geometry_hashes": {k: geometry_hashes(f[k].geometry.to_numpy()) for k in f}}

        first = MapMemo()
        render(frames, site, aggregate_strings_above=1000, memo=first, **kw(frames))
        memo = MapMemo.load(first.export())
        html = render(edited, site, aggregate_strings_above=1000, memo=memo, **kw(edited))
        kept = set(memo.shapes) == set(first.shapes)
        assert kept == by_geometry
        assert html == render(edited, site, aggregate_strings_above=1000, **kw(edited))


# --------------------------------------------------------------------------------------------
# review data (routeplan.map.details)


def _review_column(table: dict, name: str) -> list:
    """A column of a review-data table, decoded as the page reads it (list, distinct values
    and indices, one value, or a profile's column)."""
    c = table["k"].get(name)
    if c is None:
        p = table["p"]
        j = p["k"].index(name)
        return [p["v"][i][j] for i in p["i"]]
    if isinstance(c, list):
        return c
    if "i" in c:
        return [c["v"][i] for i in c["i"]]
    return c["v"] * table["n"]


def test_review_data_lists_each_segments_circuits_in_order():
    segments = pd.DataFrame({"circuit_ids": ["B;A", "", "C;X;A"]})
    counts, flat = map_details.segment_circuits(segments, np.array(["A", "B", "C"], dtype=object))
    assert counts == [2, 0, 2]  # X is no circuit of the table: left out
    assert flat == [1, 0, 2, 0]


def test_review_data_numbers_have_the_schedules_digits():
    # cable_schedule.csv writes route_m with 2 decimals, utilisation with 3, parallel as is
    df = pd.DataFrame(
        {
            "circuit_id": ["a", "b", "c"],
            "route_m": [12.3449, 7.0, np.nan],
            "utilisation": [0.98765, 1.0004, 0.5],
            "parallel": [1, 2, 4],
        }
    )
    data = json.loads(map_details.table_json(df, ("circuit_id", "route_m", "utilisation",
                                                     "parallel")))  # fmt: skip
    assert data["n"] == 3
    assert _review_column(data, "route_m") == [12.34, 7.0, None]
    assert _review_column(data, "utilisation") == [0.988, 1.0, 0.5]
    assert _review_column(data, "parallel") == [1, 2, 4]


def test_review_data_writes_each_value_as_the_json_module_does():
    """The review data's columns are built from each distinct value's JSON text: joined, they
    are the text json.dumps gives for the whole list (Python's json module, the reference),
    with ``$ ` { }`` as \\u escapes; -0.0 stays -0.0, a text needing escapes is escaped."""
    values = ["plain", 'q"uote', "back\\slash", "new\nline", "\x01", "${x}", "`t`", "é\u2028",
              "<b>&", "", None, 0.0, -0.0, 1e20, 12.5, 3, -7]  # fmt: skip
    expected = json.dumps(values, ensure_ascii=False, separators=(",", ":"), allow_nan=False)
    for raw, escaped in (("$", "\\u0024"), ("`", "\\u0060"), ("{", "\\u007b"), ("}", "\\u007d")):
        expected = expected.replace(raw, escaped)
    assert "[" + ",".join(map_details._tokens(values)) + "]" == expected
    texts = [v for v in values if isinstance(v, str)]
    assert "[" + ",".join(map_details._tokens(texts)) + "]" == json.dumps(
        texts, ensure_ascii=False, separators=(",", ":")
    ).replace("$", "\\u0024").replace("`", "\\u0060").replace("{", "\\u007b").replace(
        "}", "\\u007d"
    )
    with pytest.raises(ValueError):  # as json.dumps(..., allow_nan=False)
        map_details._tokens([float("inf")])
    # a column with 0.0 and -0.0: each row keeps its own value
    df = pd.DataFrame({"circuit_id": ["a", "b", "c"], "route_m": [0.0, -0.0, np.nan]})
    data = json.loads(map_details.table_json(df, ("circuit_id", "route_m")))
    column = _review_column(data, "route_m")
    assert column == [0.0, 0.0, None] and [np.signbit(x) for x in column[:2]] == [False, True]


def test_review_data_shows_no_user_text_as_it_is():
    frames, _ = make_frames(HOSTILE)
    text = map_details.review_json(
        frames["circuits"], frames["segments"], frames["rows"], frames["equipment"]
    )
    for raw in HOSTILE.values():
        assert raw not in text
    data = json.loads(text)  # and the JSON gives the ids back as they are
    assert HOSTILE["R1/S1"] in _review_column(data["c"], "circuit_id")
    assert HOSTILE["T1#2"] in _review_column(data["s"], "segment_id")
