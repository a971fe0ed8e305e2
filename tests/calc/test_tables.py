"""Packaged data tables: headers, tags, row counts and known cells."""

from pathlib import Path

import numpy as np
import pytest

import calc
from calc.errors import DataFileError
from calc.tables import load_table, parse_table, table_names

ALLOWED_TAGS = {"confirmed", "memory", "memory-low", "common practice", "derived"}


@pytest.mark.parametrize("name", table_names())
def test_every_table_names_its_source_and_tags_each_row(name):
    t = load_table(name)
    assert any(line.startswith("# source:") for line in t.header), name
    assert any("tag" in line for line in t.header), name
    assert set(t["tag"].tolist()) <= ALLOWED_TAGS, name
    assert len(t) > 0


def test_iec60228_loader_row_count_and_known_cell():
    # IEC 60228:2004 Tables 2/3: Cu class 2 and 5, plain and tinned, 1.5-400 mm² (17 sizes each);
    # Al class 2, 10-400 mm² (13 sizes)
    t = load_table("iec60228_2004_conductor_resistance.csv")
    assert len(t) == 4 * 17 + 13
    row = (
        t.where(material="Cu", coating="plain")
        & (t["conductor_class"] == 2)
        & (t["size_mm2"] == 240)
    )
    assert t["r20_ohm_km"][row].tolist() == [0.0754]  # IEC 60228:2004 Table 2, 240 mm² Cu


def test_tables_are_read_only_and_cached():
    t = load_table("iec60269_1_fuse_ratings.csv")
    assert t is load_table("iec60269_1_fuse_ratings.csv")
    with pytest.raises(ValueError):
        t["rating_a"][0] = 1.0


def test_parse_table_empty_cell_is_nan():
    t = parse_table("# source: x\na,tag\n1,memory\n,memory\n")
    assert np.isnan(t["a"][1])


def test_default_size_lists_are_iec_60228_nominal_sizes():
    # IEC 60228:2004 Table 2 nominal cross-sections (the lists' choice is common practice)
    from calc.rules import get_rules

    t = load_table("default_size_lists.csv")
    assert len(t) == 14
    nominal = {1.5, 2.5, 4, 6, 10, 16, 25, 35, 50, 70, 95, 120, 150, 185, 240, 300, 400}
    assert set(t["size_mm2"].tolist()) <= nominal
    assert get_rules("iec").default_sizes_mm2(0, "Cu") == (4.0, 6.0, 10.0)
    assert get_rules("iec").default_sizes_mm2(2, "Al")[-1] == 300.0


def test_coordination_factor_and_design_defaults():
    # IEC 60364-4-43:2008 433.1 b: I2 <= 1.45 Iz (from memory)
    t = load_table("iec60364_4_43_2008_433_1_coordination.csv")
    assert len(t) == 1 and t["value"].tolist() == [1.45]
    d = load_table("design_defaults.csv")
    assert len(d) == 2 and d["value"][d.where(name="duct_od_m")].tolist() == [0.11]


def test_table_names_lists_every_packaged_csv_file():
    # the package's data folder, listed with pathlib (no importlib.resources)
    folder = Path(calc.__file__).parent / "data"
    on_disk = sorted(p.name for p in folder.iterdir() if p.suffix == ".csv")
    assert table_names() == on_disk
    assert "iec60228_2004_conductor_resistance.csv" in on_disk and len(on_disk) == 47


def test_parse_table_keeps_the_name_it_is_given():
    text = "# source: x\na,tag\n1,memory\n"
    assert parse_table(text).name == "<text>"
    assert parse_table(text, "x.csv").name == "x.csv"


def test_parsed_columns_are_read_only():
    t = parse_table("# source: x\na,tag\n1,memory\n")
    assert not t["a"].flags.writeable and not t["tag"].flags.writeable
    with pytest.raises(ValueError):
        t["a"][0] = 2.0


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("# source: x\n\n", "<text>: no header row"),
        ("# source: x\na,tag\n1\n", "<text>: every row must have 2 cells"),
        ("# source: x\na,b\n1,2\n", "<text>: no tag column"),
    ],
)
def test_malformed_tables_are_refused_with_the_reason(text, message):
    with pytest.raises(DataFileError) as e:
        parse_table(text)
    assert str(e.value) == message
