"""The workbook's design-basis sheets, read back with openpyxl: every setting of the invented
demo site's site.toml with its value typed as the file gives it, and every calc data table."""

from __future__ import annotations

import tomllib
from pathlib import Path

import openpyxl
import pytest

from routeplan.outputs.write import write_plan
from routeplan.pipeline import plan

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_site"


@pytest.fixture(scope="module")
def workbook(tmp_path_factory):
    out = tmp_path_factory.mktemp("basis") / "out"
    write_plan(plan(DEMO), out)
    return openpyxl.load_workbook(out / "cable_schedule.xlsx")


def rows(ws) -> list[tuple]:
    return list(ws.iter_rows(values_only=True))


def test_every_design_setting_of_site_toml_is_listed_typed_with_its_source(workbook):
    ws = workbook["design basis"]
    head, *body = rows(ws)
    assert head == ("key", "value", "unit", "source", "note")
    got = {r[0]: r for r in body}
    config = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))
    scalars = {k: v for k, v in config["design"].items() if not isinstance(v, dict)}
    for key, value in scalars.items():
        row = got[f"design.{key}"]
        assert row[3] == "site.toml", key
        if isinstance(value, int | float) and not isinstance(value, bool):
            assert row[1] == pytest.approx(float(value)), key  # a number, not text
        elif key == "depth_m":  # "700 mm" in site.toml: a quantity, read in metres
            assert row[1] == pytest.approx(0.7) and row[2] == "m"
        else:
            assert row[1] == value, key
    # a key the demo leaves out comes from the defaults
    assert got["design.max_circuits"][3] == "default"
    for kind, drop in config["design"]["drop_pct"].items():
        assert got[f"design.drop_pct.{kind}"][1] == pytest.approx(drop)


def test_every_data_table_is_listed_with_its_tags(workbook):
    head, *body = rows(workbook["data tables"])
    assert head == ("table", "source", "tag", "rows per tag", "used")
    files = sorted(p.name for p in (ROOT / "calc" / "data").glob("*.csv"))
    assert sorted(r[0] for r in body) == files
    used = {r[0]: r[4] for r in body}
    assert all(u == "yes" or u.startswith("no") for u in used.values())
    # the plan reads IEC 60228's resistances; string fuses come from the gPV list of
    # IEC 60269-6, not from IEC 60269-1's general ratings
    assert used["iec60228_2004_conductor_resistance.csv"] == "yes"
    assert used["iec60269_1_fuse_ratings.csv"].startswith("no")
    tags = {r[0]: r[3] for r in body}
    assert tags["iec60228_2004_conductor_resistance.csv"].startswith("confirmed ")
