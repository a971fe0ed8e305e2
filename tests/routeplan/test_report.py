"""report.html in every plan folder: the design basis shows every setting and data table, the
results equal an independent recomputation from the schedules (csv module, hand arithmetic),
user text is escaped, and the file follows the folder's rules (manifest, reuse, a user's file
of that name refused). ``routeplan report --pdf``'s refusals, each with its exit code and the
path it names. The page in a browser and the PDF: test_report_browser.py.
"""

from __future__ import annotations

import csv
import hashlib
import html
import json
import math
import re
import shutil
import sys
import tomllib
from collections import Counter, defaultdict
from pathlib import Path

import geopandas as gpd
import pandas as pd
import pytest
from typer.testing import CliRunner

from routeplan import CAUTION
from routeplan.cli import app
from routeplan.config import ALLOWANCE_KEYS, DESIGN_KEYS, KINDS, RATING_KEYS
from routeplan.report.results import LIST_CAP, results

from .report_sites import DEMO, HOSTILE_IDS, HOSTILE_NAME, ROOT, Tables, hostile_site, read_rows

runner = CliRunner()
KIND_LABEL = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC"}


@pytest.fixture(scope="module")
def planned(tmp_path_factory) -> dict[str, Path]:
    """The demo site and the hostile site, each planned with the command line."""
    tmp = tmp_path_factory.mktemp("report")
    demo = runner.invoke(app, ["plan", str(DEMO), "--out", str(tmp / "demo")])
    assert demo.exit_code == 0, demo.output
    site = hostile_site(tmp / "hostile-site")
    hostile = runner.invoke(app, ["plan", str(site), "--out", str(tmp / "hostile")])
    assert hostile.exit_code == 1, hostile.output  # circuits and segments fail their limits
    return {"demo": tmp / "demo", "hostile": tmp / "hostile", "hostile_site": site}


def page(out: Path) -> Tables:
    return Tables((out / "report.html").read_text(encoding="utf-8"))


def num(text: str) -> float:
    return float(text.replace(",", ""))


# -- design basis ----------------------------------------------------------------------------


def test_every_setting_key_is_shown_with_its_source(planned):
    rows = page(planned["demo"]).tables["settings"]
    assert rows[0] == ["key", "value", "unit", "source", "note"]
    shown = {r[0]: r for r in rows[1:]}
    expected = (
        {f"design.{k.name}" for k in DESIGN_KEYS}
        | {f"design.{t}.{k}" for t in ("material", "insulation", "sizes_mm2") for k in KINDS}
        | {f"design.air_arrangement.{k}" for k in KINDS}
        | {f"design.drop_pct.{k}" for k in (*KINDS, "dc_total")}
        | {f"design.ratings_a.{k}" for k in RATING_KEYS}
        | {f"allowances.{k.name}" for k in ALLOWANCE_KEYS}
    )
    assert set(shown) == expected
    # the source, from the demo's site.toml read with tomllib
    toml = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))

    def given(key: str) -> bool:
        node = toml
        for part in key.split("."):
            if not isinstance(node, dict) or part not in node:
                return False
            node = node[part]
        return True

    for key, row in shown.items():
        assert row[3] == ("site.toml" if given(key) else "default"), key
    # values the demo sets, as site.toml gives them ("700 mm" is 0.7 m)
    assert shown["design.ground_temp_c"][1:3] == ["25", "°C"]
    assert shown["design.depth_m"][1:3] == ["0.7", "m"]
    assert shown["design.soil_k_m_w"][1:3] == ["1.5", "K·m/W"]
    assert shown["design.max_circuits"][1] == "unset"
    assert shown["design.sizes_mm2.ac"][1] == "50, 70, 95, 120, 150, 185, 240, 300"
    assert shown["design.material.ac"][1] == "Al"
    assert shown["allowances.termination_m"][1:4] == ["1.5", "m", "site.toml"]
    # a default's note says where the default comes from (routeplan/config.py's Key.note)
    assert "reference" in shown["design.ground_temp_c"][4]
    # a layer attribute's default says how many features take it: counted here in the demo's
    # layer files (geopandas), a feature without the attribute takes it
    trenches = gpd.read_file(DEMO / "trenches.geojson")
    inverters = gpd.read_file(DEMO / "inverters.geojson")
    for key, frame, layer, attrs in (
        ("depth_m", trenches, "trenches", ["depth_m"]),
        ("laying", trenches, "trenches", ["laying"]),
        ("soil_k_m_w", trenches, "trenches", ["soil_k_m_w"]),
        ("max_circuits", trenches, "trenches", ["max_circuits", "max_cable_sets"]),
        ("power_factor", inverters, "inverters", ["pf"]),
    ):
        present = [a for a in attrs if a in frame.columns]
        own = frame[present].notna().any(axis=1) if present else pd.Series(False, frame.index)
        k, n = int((~own).sum()), len(frame)
        note = shown[f"design.{key}"][4]
        if k == 0:
            assert f"here for none of the {n} {layer}" in note, key
        elif k == n:
            assert f"here for all {n} {layer}" in note, key
        else:
            assert f"here for {k} of {n} {layer}" in note, key


def test_every_data_table_is_shown_with_its_tags(planned):
    rows = page(planned["demo"]).tables["tables"]
    shown = {r[0]: r for r in rows[1:]}
    files = sorted((ROOT / "calc" / "data").glob("*.csv"))
    assert set(shown) == {f.name for f in files}
    for f in files:
        lines = f.read_text(encoding="utf-8").splitlines()
        source = next(line for line in lines if line.startswith("# source:"))
        body = [line for line in lines if line.strip() and not line.startswith("#")]
        tags = Counter(r["tag"].strip() for r in csv.DictReader(body))
        row = shown[f.name]
        assert source[len("# source:") :].strip() in row[1], f.name
        assert row[2] == "; ".join(f"{k} {n}" for k, n in sorted(tags.items())), f.name
    # the demo sets fault_ka and moulded-case breakers
    assert shown["iec60364_4_43_2008_table_43a_k.csv"][4] == "yes"
    assert shown["iec60947_2_breaker_ratings.csv"][4] == "yes"
    assert shown["iec60898_1_breaker_ratings.csv"][4] == "no (ac_breaker_device = iec60947-2)"


def test_design_basis_has_site_crs_modules_methods_and_the_caution(planned):
    out = planned["demo"]
    p = page(out)
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    site = dict(r for r in p.tables["site"][1:])
    assert site["project / site name"] == summary["site"]["name"]
    assert site["working CRS"] == summary["site"]["crs"] == "EPSG:32630"
    assert site["CRS note"] == summary["site"]["crs_note"]
    assert site["rule set"].startswith("iec: IEC 60364-5-52:2009")
    mods = {(r[0], r[1]): r[2] for r in p.tables["modules"][1:]}
    assert mods[("m575", "isc_a")] == "14.2" and mods[("m575", "per_string")] == "27"
    assert mods[("m575", "pmax_w")] == "575"
    files = dict(r for r in p.tables["inputs"][1:])
    assert files == summary["inputs"]
    text = (out / "report.html").read_text(encoding="utf-8")
    for heading in ("Settings in force", "Module data", "Data tables", "Methods", "Assumptions"):
        assert f"<h3>{heading}</h3>" in text
    for method in ("Dijkstra", "Ohm's law", "IEC 60228:2004", "BS 7671", "IEC 60364-5-52:2009"):
        assert method in html.unescape(text)
    assert p.texts["caution"] == "Caution. " + CAUTION
    # the cover's review block, left blank for the reviewers' hands
    assert p.tables["signoff"] == [
        ["role", "name", "signature", "date"],
        ["prepared by", "", "", ""],
        ["checked by", "", "", ""],
        ["approved by", "", "", ""],
    ]
    # a plan's report carries the worked calculations and the charts
    assert 'id="worked"' in text and 'id="charts"' in text


# -- results against the schedules ----------------------------------------------------------


def block_of(rows: list[dict[str, str]]) -> dict[str, str]:
    """Each circuit's inverter, walking the schedule's from_id → to_id through combiners."""
    up = {r["from_id"]: r["to_id"] for r in rows if r["kind"] in ("subarray", "array")}
    out = {}
    for r in rows:
        node = r["from_id"] if r["kind"] == "ac" else r["to_id"]
        while node in up:
            node = up[node]
        out[r["circuit_id"]] = node
    return out


def expected_groups(rows, key) -> dict:
    groups = defaultdict(list)
    for r in rows:
        groups[key(r)].append(r)
    return groups


def check_line(cells: list[str], group: list[dict[str, str]]) -> None:
    """One line of the by-kind or by-block table against its circuits from the CSV. The
    report rounds the plan's values; the CSV rounds them too (utilisation and drop to 0.001,
    losses to 0.1 W, energy to 1 kWh, cable_m to 0.01 m): each check allows both roundings."""
    n = len(group)
    count, failing, util, util_id, drop, drop_id = cells[:6]
    loss_kw, energy_mwh, metres = cells[7:10]
    assert int(count) == n
    assert int(failing) == sum(r["status"] != "ok" for r in group)
    u = [float(r["utilisation"]) for r in group]
    assert abs(num(util) - max(u)) <= 0.001 + 1e-9
    ids = {r["circuit_id"]: r for r in group}
    assert float(ids[util_id]["utilisation"]) == max(u)
    d = [float(r["vdrop_pct"]) for r in group]
    assert abs(num(drop) - max(d)) <= 0.001 + 1e-9
    assert float(ids[drop_id]["vdrop_pct"]) == max(d)
    loss = sum(float(r["loss_w"]) for r in group) / 1000
    assert abs(num(loss_kw) - loss) <= n * 0.05e-3 + 0.005
    energy = sum(float(r["energy_loss_kwh"]) for r in group) / 1000
    assert abs(num(energy_mwh) - energy) <= n * 0.5e-3 + 0.005
    m = sum(float(r["cable_m"]) * int(r["conductors"]) for r in group)
    assert abs(num(metres) - m) <= sum(0.005 * int(r["conductors"]) for r in group) + 0.05


@pytest.mark.parametrize("which", ["demo", "hostile"])
def test_results_by_kind_and_block_equal_the_schedule(planned, which):
    out = planned[which]
    rows = read_rows(out / "cable_schedule.csv")
    p = page(out)
    kinds = expected_groups(rows, lambda r: r["kind"])
    table = p.tables["kinds"]
    assert [r[0] for r in table[1:]] == [KIND_LABEL[k] for k in KINDS if k in kinds]
    label = {v: k for k, v in KIND_LABEL.items()}
    for line in table[1:]:
        check_line(line[1:], kinds[label[line[0]]])
    cover = dict(p.tables["cover"][1:])
    bad = sum(r["status"] != "ok" for r in rows)
    assert cover["circuits"] == f"{len(rows):,} ({bad:,} failing)"
    segments = read_rows(out / "trench_schedule.csv")
    over = sum(s["status"] != "ok" for s in segments)
    assert cover["trench segments"] == f"{len(segments):,} ({over:,} over capacity)"
    blocks = block_of(rows)
    groups = expected_groups(rows, lambda r: (blocks[r["circuit_id"]], r["kind"]))
    table = p.tables["blocks"]
    assert {(r[0], label[r[1]]) for r in table[1:]} == set(groups)
    assert len(table) - 1 == len(groups)
    for line in table[1:]:
        check_line(line[2:], groups[(line[0], label[line[1]])])
    # conductor metres by kind, material and size
    metres = defaultdict(float)
    for r in rows:
        metres[(r["kind"], r["material"], float(r["size_mm2"]))] += float(r["cable_m"]) * int(
            r["conductors"]
        )
    shown = {(label[r[0]], r[1], num(r[2])): num(r[3]) for r in p.tables["metres"][1:]}
    assert set(shown) == set(metres)
    for key, m in metres.items():
        assert abs(shown[key] - m) <= 0.005 * 3 * len(rows) + 0.05, key
    # the worst DC total of the strings
    strings = kinds["string"]
    worst = max(float(r["vdrop_total_pct"]) for r in strings)
    found = re.fullmatch(r".*: ([\d.]+) % at string (\S+), limit .*", p.texts["dc-total"])
    assert found is not None, p.texts["dc-total"]
    assert abs(num(found[1]) - worst) <= 0.001 + 1e-9
    assert max(float(r["vdrop_total_pct"]) for r in strings if r["circuit_id"] == found[2]) == worst


def test_trench_fill_and_over_capacity_equal_the_trench_schedule(planned):
    for which in ("demo", "hostile"):
        out = planned[which]
        seg = read_rows(out / "trench_schedule.csv")
        bands = Counter()
        for s in seg:
            if s["status"] != "ok":
                bands["over capacity (> 100 %)"] += 1
            elif s["fill"] == "":
                bands["no capacity given"] += 1
            else:
                f = float(s["fill"])
                bands[
                    "empty (0 %)"
                    if f == 0
                    else "up to 50 %"
                    if f <= 0.5
                    else "50–80 %"
                    if f <= 0.8
                    else "80–100 %"
                ] += 1
        p = page(out)
        shown = {r[0]: int(r[1]) for r in p.tables["fill"][1:]}
        assert {k: v for k, v in shown.items() if v} == dict(bands), which
        over = [s["segment_id"] for s in seg if s["status"] == "over"]
        if over:
            assert [r[0] for r in p.tables["over"][1:]] == over
        else:
            assert "over" not in p.tables
    assert bands["over capacity (> 100 %)"] > 0  # the hostile site's trunk


def test_failing_circuits_are_listed_with_their_reasons(planned):
    out = planned["hostile"]
    rows = read_rows(out / "cable_schedule.csv")
    failing = [r for r in rows if r["status"] != "ok"]
    assert failing and all(r["kind"] == "string" for r in failing)
    p = page(out)
    listed = p.tables["failing"][1:]
    assert [(r[0], r[3], r[4]) for r in listed] == [
        (r["circuit_id"], r["note"], r["remedy"]) for r in failing
    ]
    assert all(r[4] for r in listed)  # every failing circuit has a remedy or its limits
    assert {r[2] for r in listed} == {HOSTILE_IDS["INV1"]}
    assert p.texts["failing-count"] == f"{len(failing)} circuit(s) fail."
    assert page(planned["demo"]).texts["failing-none"].startswith("None")


def test_the_failing_list_is_capped_at_plant_scale():
    n = LIST_CAP + 57
    circuits = pd.DataFrame(
        {
            "circuit_id": [f"R{i}/S1" for i in range(n)],
            "kind": "string",
            "from_id": [f"R{i}" for i in range(n)],
            "to_id": "INV1",
            "utilisation": 1.2,
            "vdrop_pct": 0.5,
            "vdrop_total_pct": 0.5,
            "loss_w": 1.0,
            "energy_loss_kwh": 1.0,
            "cable_m": 10.0,
            "conductors": 2,
            "status": "fail",
            "note": "needs more",
            "remedy": "passes with 6 mm²",
            "material": "Cu",
            "size_mm2": 4.0,
        }
    )
    segments = pd.DataFrame(
        {
            "segment_id": ["T@0.0-1.0"],
            "length_m": [1.0],
            "fill": [math.nan],
            "status": ["ok"],
            "cable_sets": [0],
        }
    )
    r = results(circuits, segments)
    assert r.failing_count == n
    assert [f[0] for f in r.failing] == [f"R{i}/S1" for i in range(LIST_CAP)]


# -- user text -------------------------------------------------------------------------------


def test_hostile_site_name_and_ids_are_text_not_markup(planned):
    text = (planned["hostile"] / "report.html").read_text(encoding="utf-8")
    p = Tables(text)
    # the only elements are the report's own: no script, no b from the user's text, and the
    # only images the charts' own (one per chart, each an embedded SVG)
    assert not {"script", "b"} & set(p.tags)
    charts = text[text.index('id="charts"') :]
    assert text.count("<img") == charts.count("<img") == charts.count('src="data:image/svg+xml')
    site = dict(r for r in p.tables["site"][1:])
    assert site["project / site name"] == HOSTILE_NAME
    ids = {r[0] for r in p.tables["failing"][1:]}
    assert f"{HOSTILE_IDS['R1']}/S1" in ids
    assert {r[0] for r in p.tables["blocks"][1:]} == {HOSTILE_IDS["INV1"]}
    assert "&lt;script&gt;alert(3)&lt;/script&gt;" in text
    assert "INV&quot;&amp;&#x27;1" in text


# -- the folder's rules ----------------------------------------------------------------------


def test_report_is_in_the_manifest_and_reused_by_a_re_plan(planned, tmp_path):
    out = tmp_path / "out"
    site = planned["hostile_site"]
    assert runner.invoke(app, ["plan", str(site), "--out", str(out)]).exit_code == 1
    manifest = json.loads((out / ".routeplan-manifest.json").read_text(encoding="utf-8"))
    data = (out / "report.html").read_bytes()
    assert manifest["files"]["report.html"]["sha256"] == hashlib.sha256(data).hexdigest()
    again = runner.invoke(app, ["plan", str(site), "--out", str(out)])
    assert again.exit_code == 1
    assert (out / "report.html").read_bytes() == data


def test_a_users_report_html_is_refused(planned, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "report.html").write_text("mine", encoding="utf-8")
    r = runner.invoke(app, ["plan", str(planned["hostile_site"]), "--out", str(out), "--force"])
    assert r.exit_code == 2
    assert f"error: {out}: 'report.html' is there but was not written by routeplan" in r.output
    assert (out / "report.html").read_text(encoding="utf-8") == "mine"


# -- routeplan report --pdf: refusals --------------------------------------------------------


def test_report_refuses_a_folder_that_is_no_plan(tmp_path):
    folder = tmp_path / "notes"
    folder.mkdir()
    r = runner.invoke(app, ["report", str(folder), "--pdf", str(tmp_path / "r.pdf")])
    assert r.exit_code == 2
    assert r.output.strip().splitlines() == [
        f"error: {folder}: is not an output folder of 'routeplan plan' (no plan manifest "
        ".routeplan-manifest.json): plan the site into it first"
    ]
    assert not (tmp_path / "r.pdf").exists()


def test_report_refuses_a_plan_folder_without_report(planned, tmp_path):
    out = tmp_path / "old"
    shutil.copytree(planned["demo"], out)
    m = json.loads((out / ".routeplan-manifest.json").read_text(encoding="utf-8"))
    del m["files"]["report.html"]  # as an earlier routeplan wrote it
    (out / ".routeplan-manifest.json").write_text(json.dumps(m), encoding="utf-8")
    r = runner.invoke(app, ["report", str(out), "--pdf", str(tmp_path / "r.pdf")])
    assert r.exit_code == 2
    assert r.output.strip() == (
        f"error: {out}: holds no report.html written by routeplan (an earlier version planned "
        "it): plan the site again"
    )


def test_report_never_replaces_a_users_file(planned, tmp_path):
    mine = tmp_path / "mine.pdf"
    mine.write_bytes(b"%PDF-1.4 someone else's report")
    r = runner.invoke(app, ["report", str(planned["demo"]), "--pdf", str(mine)])
    assert r.exit_code == 2
    assert r.output.strip() == (
        f"error: {mine}: is there but was not written by routeplan, and routeplan will not "
        "replace it: choose another name or move it away"
    )
    assert mine.read_bytes() == b"%PDF-1.4 someone else's report"


def test_report_without_chromium_names_what_it_looked_for(planned, tmp_path, monkeypatch):
    empty = tmp_path / "bin"
    empty.mkdir()
    monkeypatch.setenv("PATH", str(empty))
    pdf = tmp_path / "r.pdf"
    r = runner.invoke(app, ["report", str(planned["demo"]), "--pdf", str(pdf)])
    assert r.exit_code == 2
    assert r.output.strip() == (
        f"error: {pdf}: cannot be made: no Chromium found (looked for chromium, "
        "chromium-browser, google-chrome, google-chrome-stable on PATH); install one, e.g. "
        "Debian's chromium package"
    )
    assert not pdf.exists()


def test_report_refuses_an_unknown_paper(planned, tmp_path):
    pdf = tmp_path / "r.pdf"
    r = runner.invoke(app, ["report", str(planned["demo"]), "--pdf", str(pdf), "--paper", "a3"])
    assert r.exit_code == 2
    assert r.output.strip() == "error: --paper: 'a3'; expected one of a4, letter"
    assert not pdf.exists()


# -- the sections fed by other modules ---------------------------------------------------------


def test_worked_and_chart_sections_appear_only_with_their_fragments(site_dir):
    from routeplan.pipeline import plan as run_plan
    from routeplan.report.html import report_html

    p = run_plan(site_dir)
    worked = '<div id="w-frag"><p>I = 12.3 A</p></div>'
    charts = '<div id="c-frag"><svg width="10" height="10"></svg></div>'
    both = Tables(report_html(p, worked=worked, charts=charts))
    assert both.texts["worked"] == "3. Worked calculations" + "I = 12.3 A"  # h2, then the fragment
    assert both.texts["w-frag"] == "I = 12.3 A"
    assert both.texts["charts"].startswith("4. Charts")
    assert "svg" in both.tags
    only = report_html(p, charts=charts)
    assert 'id="worked"' not in only
    assert Tables(only).texts["charts"].startswith("3. Charts")
    none = report_html(p, worked="", charts=None)
    assert "Worked calculations" not in none and "Charts" not in none


@pytest.mark.parametrize("site", ["demo", "base"])
def test_tables_marked_used_are_the_tables_a_plan_reads(site, site_dir, monkeypatch):
    """The tables calc reads while a site is planned (every load of a data file recorded,
    the loader's cache emptied first) are those the report marks used."""
    import calc.tables
    from routeplan.pipeline import plan as run_plan
    from routeplan.report.basis import data_tables

    read: set[str] = set()
    parse = calc.tables.parse_table

    def recording(text, name="<text>"):
        read.add(name)
        return parse(text, name)

    def clear_caches() -> None:  # the loader's, and those of functions built on tables
        for module in list(sys.modules.values()):
            if getattr(module, "__name__", "").startswith("calc"):
                for value in list(vars(module).values()):
                    if callable(getattr(value, "cache_clear", None)):
                        value.cache_clear()

    monkeypatch.setattr(calc.tables, "parse_table", recording)
    clear_caches()
    try:
        p = run_plan(DEMO if site == "demo" else site_dir)
        by_plan = set(read)  # what the plan read, not what the report reads below
    finally:
        clear_caches()
    # read when routeplan.config is imported (the bifacial default of rear_irradiance_ratio)
    by_plan.add("iec61215_1_2021_bifacial_irradiance.csv")
    marked = {t.name for t in data_tables(p.design) if t.used == "yes"}
    assert marked == by_plan
