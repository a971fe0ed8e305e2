"""US outputs (issue 17): size labels per rule set, lengths in feet, ``design.units``, and the
equipment grounding conductors of NEC 2023 Table 250.122 in the bill of quantities.

Sources named beside each check:

- the international foot: 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959;
  NIST SP 811, 2008 ed., B.6); the international mile is 5280 ft = 1609.344 m exactly (same
  agreement); pint's ``foot`` (a reference library) is the international foot;
- IEC 60228:2004 (Ed. 3) Table 2, nominal cross-sections of class 2 conductors (1.5 … 630 mm²,
  ``../shared/REFERENCE_VALUES.md`` §1, confirmed);
- NFPA 70 NEC 2023 Chapter 9 Table 8, conductor sizes and areas in circular mils
  (``../shared/REFERENCE_VALUES.md`` §4.4, confirmed 14 AWG … 500 kcmil;
  ``calc/data/nec_2023_chapter9_table8_conductors.csv`` S1 for 600 … 1000 kcmil);
- NEC 2023 Table 250.122 rows (``calc/data/nec_2023_table_250_122_egc.csv``, tag confirmed, S1),
  240.6(A) standard ratings (15, 20, 25, 30 … A), 690.8(A)(1)(a)(1) (1.25 × Isc) and 690.9(B)(1)
  (device ≥ 1.25 × maximum current) for the assumed device of 690.45 (from memory).
"""

from __future__ import annotations

import csv
import math
from collections import defaultdict
from pathlib import Path

import numpy as np
import pandas as pd
import pint
import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.config import parse_design
from routeplan.quantities import bill_of_quantities
from routeplan.units import FOOT_M, feet, length_unit, size_labels

from ..conftest import SITE_TOML, write_site

runner = CliRunner()

#: NEC 2023 Chapter 9 Table 8: size and area [circular mils] (REFERENCE_VALUES.md §4.4; the
#: 600–1000 kcmil rows from the data file's source S1)
TABLE_8_CMIL = {
    "14 AWG": 4110, "12 AWG": 6530, "10 AWG": 10380, "8 AWG": 16510, "6 AWG": 26240,
    "4 AWG": 41740, "3 AWG": 52620, "2 AWG": 66360, "1 AWG": 83690, "1/0 AWG": 105600,
    "2/0 AWG": 133100, "3/0 AWG": 167800, "4/0 AWG": 211600, "250 kcmil": 250000,
    "300 kcmil": 300000, "350 kcmil": 350000, "400 kcmil": 400000, "500 kcmil": 500000,
    "600 kcmil": 600000, "700 kcmil": 700000, "750 kcmil": 750000, "800 kcmil": 800000,
    "900 kcmil": 900000, "1000 kcmil": 1000000,
}  # fmt: skip
#: circular mil [mm²]: a circle of 0.001 in = 0.0254 mm diameter (definition)
CMIL_MM2 = math.pi / 4 * 0.0254**2
#: IEC 60228:2004 Table 2 nominal cross-sections [mm²] (REFERENCE_VALUES.md §1)
IEC_SIZES = [1.5, 2.5, 4, 6, 10, 16, 25, 35, 50, 70, 95, 120, 150, 185, 240, 300, 400, 500, 630]


# -- feet ------------------------------------------------------------------------------------


def test_the_foot_is_the_international_foot():
    # 1959 agreement / NIST SP 811 B.6: 1 ft = 0.3048 m exactly
    assert FOOT_M == 0.3048
    # the international mile: 5280 ft = 1609.344 m exactly
    assert feet(1609.344) == pytest.approx(5280.0, rel=1e-15)
    # pint (a reference library) defines foot as the international foot
    ureg = pint.UnitRegistry()
    assert feet(100.0) == pytest.approx(ureg.Quantity(100.0, "m").to("ft").magnitude, rel=1e-15)
    # the US survey foot (1200/3937 m) is not it: 2 ppm apart, 0.2 mm per 100 m
    assert abs(feet(100.0) - 100.0 / (1200 / 3937)) > 1e-4
    assert np.isnan(feet([np.nan])[0])  # a missing length stays missing


def test_length_unit_of_each_system():
    assert length_unit("si") == "m" and length_unit("us") == "ft"


# -- size labels -----------------------------------------------------------------------------


def test_iec_labels_are_the_iec_60228_nominal_sizes():
    # IEC 60228:2004 Table 2: the label is the nominal cross-section in mm²
    labels = size_labels(IEC_SIZES, "iec").tolist()
    assert labels == [f"{s:g} mm²" for s in IEC_SIZES]
    assert labels[:3] == ["1.5 mm²", "2.5 mm²", "4 mm²"]
    # unknown (NaN) sizes are empty, in any rule set
    assert size_labels([np.nan, 10.0], "iec").tolist() == ["", "10 mm²"]


def test_nec_labels_name_the_chapter_9_table_8_sizes():
    # the NEC sizes the rule set uses (areas from the ASTM B258 / circular-mil definitions)
    from calc.nec.sizes import sizes_mm2

    sizes = sizes_mm2()
    labels = size_labels(sizes, "nec").tolist()
    assert labels == list(TABLE_8_CMIL)
    # each size is Table 8's area; rtol: the table gives 3 to 4 significant digits (14 AWG:
    # 4110 cmil for the 4107 cmil of the ASTM B258 diameter, 0.08 %)
    table = np.array(list(TABLE_8_CMIL.values()), dtype=float) * CMIL_MM2
    np.testing.assert_allclose(sizes, table, rtol=1e-3)
    # the labels follow the sizes, in any order and repeated (one label per distinct size)
    pick = sizes[[13, 2, 2, 9, 23]]
    assert size_labels(pick, "nec").tolist() == [
        "250 kcmil", "10 AWG", "10 AWG", "1/0 AWG", "1000 kcmil"
    ]  # fmt: skip


def test_a_size_outside_the_nec_list_keeps_its_mm2_label():
    # 10 mm² is no AWG size (8 AWG = 8.37 mm², 6 AWG = 13.3 mm²): no AWG name is invented for it
    assert size_labels([10.0], "nec").tolist() == ["10 mm²"]


# -- design.units ----------------------------------------------------------------------------


def test_units_key_defaults_to_si_and_takes_us():
    cfg, problems = parse_design({"design": {}})
    assert not problems and cfg.values["units"] == "si"
    cfg, problems = parse_design({"design": {"units": "us"}})
    assert not problems and cfg.values["units"] == "us"


@pytest.mark.parametrize(
    ("value", "message"),
    [
        ('"imperial"', "error: site.toml 'design.units': 'imperial'; expected one of si, us"),
        ("3", "error: site.toml 'design.units': must be a string, one of si, us, not an integer"),
    ],
)
def test_a_bad_units_value_is_one_line_naming_the_key(tmp_path, value, message):
    site = write_site(tmp_path / "site", toml=SITE_TOML + f"units = {value}\n")
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out"), "--quiet"])
    assert result.exit_code == 2
    lines = [x for x in result.output.splitlines() if "design.units" in x]
    assert len(lines) == 1 and message in lines[0], result.output


# -- plans: the schedule's new columns and the bill in feet ----------------------------------


def read_csv(path: Path) -> list[dict[str, str]]:
    with open(path, encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


@pytest.fixture(scope="module")
def us_plan(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("us")
    site = write_site(root / "site", toml=SITE_TOML + 'units = "us"\n')
    out = root / "out"
    result = runner.invoke(app, ["plan", str(site), "--out", str(out), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    return out


def test_schedule_gives_size_label_and_feet(us_plan):
    rows = read_csv(us_plan / "cable_schedule.csv")
    assert rows
    for r in rows:
        # rules iec: the IEC 60228 nominal size, as size_mm2 says
        assert r["size_label"] == f"{float(r['size_mm2']):g} mm²"
        # 2 decimals each: |ft − m / 0.3048| ≤ the two roundings
        for m, ft in (("route_m", "route_ft"), ("cable_m", "cable_ft")):
            assert float(r[ft]) == pytest.approx(float(r[m]) / 0.3048, abs=0.005 / 0.3048 + 0.005)


def test_bill_in_feet_equals_the_schedules_metres_over_0_3048(us_plan):
    # summed here from cable_schedule.csv and trench_schedule.csv, in metres, then / 0.3048
    rows = read_csv(us_plan / "cable_schedule.csv")
    cable_m: dict[tuple, float] = defaultdict(float)
    tol: dict[tuple, float] = defaultdict(float)
    for r in rows:
        key = (r["kind"], r["material"], float(r["size_mm2"]))
        cable_m[key] += float(r["cable_m"]) * int(r["conductors"])
        tol[key] += 0.005 * int(r["conductors"])
    trench_m: dict[tuple, float] = defaultdict(float)
    for s in read_csv(us_plan / "trench_schedule.csv"):
        item = "trench" if int(s["circuits"]) > 0 else "unused trench"
        trench_m[(item, s["laying"], float(s["depth_m"]))] += float(s["length_m"])
    bill = read_csv(us_plan / "quantities.csv")
    seen_cable, seen_trench = set(), set()
    for q in bill:
        if q["item"] == "cable":
            key = (q["kind"], q["material"], float(q["size_mm2"]))
            assert q["unit"] == "ft"
            assert float(q["quantity"]) == pytest.approx(
                cable_m[key] / 0.3048, abs=(tol[key] + 0.005) / 0.3048
            )
            seen_cable.add(key)
        elif q["item"] in ("trench", "unused trench"):
            key = (q["item"], q["laying"], float(q["depth_m"]))
            assert q["unit"] == "ft"
            assert float(q["quantity"]) == pytest.approx(trench_m[key] / 0.3048, abs=0.1)
            # the depth in feet, then metres: 0.8 m = 2.62 ft
            depth = float(q["depth_m"])
            assert f"cables at {depth / 0.3048:.2f} ft ({depth:g} m) depth" in q["designation"]
            seen_trench.add(key)
        elif q["item"] in ("termination", "connector pair", "AC breaker", "string fuse"):
            assert q["unit"] == "pcs"  # pieces stay pieces
    assert seen_cable == set(cable_m) and seen_trench == set(trench_m)
    total = next(q for q in bill if q["item"] == "cable total")
    assert total["unit"] == "ft"
    assert float(total["quantity"]) == pytest.approx(sum(cable_m.values()) / 0.3048, abs=0.5)
    # iec: no equipment grounding conductor lines (the IEC rule set does not size them)
    assert not [q for q in bill if q["family"] == "grounding"]


def test_summary_and_report_say_feet(us_plan):
    import json

    summary = json.loads((us_plan / "summary.json").read_text(encoding="utf-8"))
    assert summary["units"] == "us"
    assert summary["conductor_ft_total"] == pytest.approx(
        summary["conductor_m_total"] / 0.3048, abs=0.02
    )
    for c in summary["conductor_m"]:
        assert c["conductor_ft"] == pytest.approx(c["conductor_m"] / 0.3048, abs=0.02)
        assert c["size_label"] == f"{c['size_mm2']:g} mm²"
    # the workbook's summary sheet names the unit system
    import openpyxl

    wb = openpyxl.load_workbook(us_plan / "cable_schedule.xlsx", read_only=True)
    rows = list(wb["summary"].iter_rows(values_only=True))
    assert (
        "Design",
        "units of the bill of quantities",
        "us (feet: international foot, 0.3048 m)",
        None,
    ) in rows
    report = (us_plan / "report.html").read_text(encoding="utf-8")
    assert "conductor ft" in report and "international foot, 1 ft = 0.3048 m exactly" in report


# -- equipment grounding conductors (NEC 2023 Table 250.122) ---------------------------------


def _circuits(rows: list[dict]) -> pd.DataFrame:
    base = {
        "from_id": "X",
        "to_id": "Y",
        "parallel": 1,
        "insulation": "90C",
        "voltage_v": 1000.0,
        "design_current_a": 10.0,
        "fuse_a": np.nan,
        "array_fuse_a": np.nan,
        "ac_breaker_a": np.nan,
        "isc_design_a": np.nan,
    }
    frame = pd.DataFrame([{**base, **r} for r in rows])
    frame["conductors"] = np.where(frame["kind"] == "ac", 3, 2) * frame["parallel"]
    frame["from_id"] = [f"F{i}" for i in range(len(frame))]
    return frame


def _segments() -> pd.DataFrame:
    return pd.DataFrame({"laying": ["direct"], "depth_m": [0.9], "length_m": [100.0]})


def _sz(label: str) -> float:
    # area of a Table 8 size [mm²], as the schedule carries it
    from calc.nec.sizes import size_from_label

    return float(size_from_label([label])[0])


def test_egc_lines_follow_table_250_122(tmp_path):
    c = _circuits(
        [
            # string, 20 A fuse, Cu 10 AWG: Table 250.122 row 20 A → 12 AWG Cu
            {"kind": "string", "material": "Cu", "size_mm2": _sz("10 AWG"), "cable_m": 50.0,
             "fuse_a": 20.0},
            # string without a fuse: 690.45 assumed device for 1.25 × (1.25 × 14.2 A) = 22.19 A →
            # 25 A (240.6(A)) → row 60 A → 10 AWG Cu
            {"kind": "string", "material": "Cu", "size_mm2": _sz("10 AWG"), "cable_m": 40.0,
             "isc_design_a": 14.2},
            # array, 200 A fuse, Al 4/0 AWG: row 200 A → 4 AWG Al
            {"kind": "array", "material": "Al", "size_mm2": _sz("4/0 AWG"), "cable_m": 120.0,
             "array_fuse_a": 200.0},
            # a.c., 400 A breaker, 2 parallel sets of Al 250 kcmil: row 400 A → 1 AWG Al, one
            # per set (250.122(F))
            {"kind": "ac", "material": "Al", "size_mm2": _sz("250 kcmil"), "cable_m": 30.0,
             "parallel": 2, "ac_breaker_a": 400.0},
            # a.c., 800 A breaker, Cu: row 800 A → 1/0 AWG Cu
            {"kind": "ac", "material": "Cu", "size_mm2": _sz("500 kcmil"), "cable_m": 10.0,
             "ac_breaker_a": 800.0},
        ]
    )  # fmt: skip
    bill = bill_of_quantities(c, _segments(), 1500.0, "iec60947-2", rules="nec")
    egc = bill[bill["item"] == "equipment grounding conductor"]
    got = {(r.kind, r.material, r.size_label, r.rating_a): r.quantity for r in egc.itertuples()}
    assert got == {
        ("string", "Cu", "12 AWG", 20.0): 50.0,
        ("string", "Cu", "10 AWG", 25.0): 40.0,
        ("array", "Al", "4 AWG", 200.0): 120.0,
        ("ac", "Al", "1 AWG", 400.0): 60.0,
        ("ac", "Cu", "1/0 AWG", 800.0): 10.0,
    }
    # the size column is the label's area
    for r in egc.itertuples():
        assert r.size_mm2 == pytest.approx(_sz(r.size_label), rel=1e-12)
        assert "Table 250.122" in r.designation and r.tag == "memory"
        assert "250.122(B)" in r.note  # the increase it does not apply is named
    assumed = egc[egc["rating_a"] == 25.0]
    assert "690.45" in assumed["note"].iloc[0]
    total = bill[bill["item"] == "grounding total"]
    assert float(total["quantity"].iloc[0]) == pytest.approx(280.0)
    # the same bill in feet: metres / 0.3048
    us = bill_of_quantities(c, _segments(), 1500.0, "iec60947-2", rules="nec", units="us")
    us_egc = us[us["item"] == "equipment grounding conductor"]
    np.testing.assert_allclose(us_egc["quantity"], egc["quantity"] / 0.3048, rtol=1e-12)
    assert set(us_egc["unit"]) == {"ft"}


def test_egc_is_never_larger_than_the_circuit_conductors():
    # 250.122(A): a 20 A device asks for 12 AWG Cu (Table 250.122), the circuit is 14 AWG
    c = _circuits(
        [{"kind": "string", "material": "Cu", "size_mm2": _sz("14 AWG"), "cable_m": 5.0,
          "fuse_a": 20.0}]
    )  # fmt: skip
    bill = bill_of_quantities(c, _segments(), 1000.0, "iec60947-2", rules="nec")
    egc = bill[bill["item"] == "equipment grounding conductor"].iloc[0]
    assert egc["size_label"] == "14 AWG" and "250.122(A)" in egc["note"]


def test_iec_bill_has_no_egc_and_labels_in_mm2():
    c = _circuits(
        [
            {
                "kind": "ac",
                "material": "Al",
                "size_mm2": 240.0,
                "cable_m": 30.0,
                "ac_breaker_a": 400.0,
            }
        ]
    )
    bill = bill_of_quantities(c, _segments(), 1500.0, "iec60947-2")
    assert "grounding" not in set(bill["family"])
    cable = bill[bill["item"] == "cable"].iloc[0]
    assert cable["size_label"] == "240 mm²" and cable["unit"] == "m"


def test_nec_bill_names_nec_sizes_and_listings():
    c = _circuits(
        [
            {"kind": "string", "material": "Cu", "size_mm2": _sz("10 AWG"), "cable_m": 50.0,
             "insulation": "PV", "fuse_a": 20.0},
            {"kind": "ac", "material": "Al", "size_mm2": _sz("250 kcmil"), "cable_m": 30.0,
             "ac_breaker_a": 400.0, "voltage_v": 800.0},
        ]
    )  # fmt: skip
    bill = bill_of_quantities(c, _segments(), 1500.0, "nec240.6a", rules="nec")
    cables = bill[bill["item"] == "cable"].set_index("kind")
    assert cables.loc["string", "size_label"] == "10 AWG"
    assert cables.loc["string", "cores_x_size"] == "1×10 AWG"
    assert "UL 4703" in cables.loc["string", "designation"]
    assert cables.loc["ac", "size_label"] == "250 kcmil"
    breaker = bill[bill["item"] == "AC breaker"].iloc[0]
    assert breaker["standard"] == "UL 489" and "400 A" in breaker["designation"]
    fuse = bill[bill["item"] == "string fuse"].iloc[0]
    assert fuse["standard"] == "UL 2579"
    # both poles counted (the module docstring: 690.9(C) would permit one); no warning note
    assert fuse["quantity"] == 2.0 and fuse["note"] == ""


def test_size_lists_take_awg_and_kcmil_labels():
    # NEC 2023 Chapter 9 Table 8 sizes by name: their areas (circular mils → mm², within the
    # table's 3–4 significant digits)
    sizes = {"string": ["10 AWG", "12 AWG"], "ac": ["250 kcmil", "4/0 AWG"]}
    cfg, problems = parse_design({"design": {"rules": "nec", "sizes_mm2": sizes}})
    assert not problems
    assert cfg.sizes_mm2["string"] == pytest.approx((6530 * CMIL_MM2, 10380 * CMIL_MM2), rel=1e-3)
    assert cfg.sizes_mm2["ac"] == pytest.approx((211600 * CMIL_MM2, 250000 * CMIL_MM2), rel=1e-3)
    # a label that is no AWG or kcmil size: one problem naming the key and the item
    _, problems = parse_design(
        {"design": {"rules": "nec", "sizes_mm2": {"ac": ["250 kcmil", "4/0 kcmil"]}}}
    )
    assert [(p.feature_id, p.message) for p in problems] == [
        (
            "design.sizes_mm2.ac",
            "size 2: '4/0 kcmil' is not an AWG or kcmil size ('10 AWG', '1/0 AWG', '250 kcmil')",
        )
    ]


@pytest.mark.parametrize(
    ("rules", "sizes", "message"),
    [
        # 11 AWG is an AWG gauge (ASTM B258) but no NEC 2023 Chapter 9 Table 8 row
        (
            "nec",
            ["10 AWG", "11 AWG"],
            "size 2: '11 AWG' is not a conductor size of rules 'nec' (14 AWG … 1000 kcmil)",
        ),
        # 10 mm² (IEC 60228) lies between 8 AWG (8.367 mm²) and 6 AWG (13.30 mm²)
        ("nec", [10], "size 1: 10 is not a conductor size of rules 'nec' (14 AWG … 1000 kcmil)"),
        # 10 AWG (5.261 mm²) is no IEC 60228:2004 nominal cross-section
        (
            "iec",
            ["10 AWG"],
            "size 1: '10 AWG' is not a conductor size of rules 'iec' (1.5 mm² … 400 mm²)",
        ),
        # 7 mm² lies between the IEC 60228 sizes 6 and 10 mm²
        ("iec", [4, 7], "size 2: 7 is not a conductor size of rules 'iec' (1.5 mm² … 400 mm²)"),
    ],
)
def test_a_size_the_rule_set_does_not_have_is_named_as_written(rules, sizes, message):
    _, problems = parse_design({"design": {"rules": rules, "sizes_mm2": {"string": sizes}}})
    assert [(p.feature_id, p.message) for p in problems] == [("design.sizes_mm2.string", message)]


def test_a_size_close_to_a_nominal_size_is_kept_as_that_size():
    # 2.5000001 is within 1e-6 of the IEC 60228:2004 nominal size 2.5 mm² (a value carried
    # through a unit conversion or a spreadsheet): the design keeps 2.5 exactly, the size the
    # rule set's tables are read at; 0.04 cm² is 4 mm²
    cfg, problems = parse_design(
        {"design": {"rules": "iec", "sizes_mm2": {"string": [2.5000001, "0.04 cm^2"]}}}
    )
    assert not problems
    assert [repr(v) for v in cfg.sizes_mm2["string"]] == ["2.5", "4.0"]


def test_diff_of_the_same_site_in_si_and_us_shows_no_cable_change(us_plan, tmp_path):
    # the plant block compares conductor metres: a bill in feet is read back × 0.3048
    from routeplan.diff import diff_outputs

    site = write_site(tmp_path / "site")
    si = tmp_path / "si"
    result = runner.invoke(app, ["plan", str(site), "--out", str(si), "--quiet", "--no-cache"])
    assert result.exit_code == 0, result.output
    plant = diff_outputs(si, us_plan).plant.set_index("item")
    cables = [i for i in plant.index if i.startswith("cable ") and i.endswith(" mm²")]
    assert cables
    for item in cables:
        assert plant.at[item, "unit"] == "m"
        # the feet are written to 2 decimals: 0.005 ft = 1.5 mm each way
        assert abs(plant.at[item, "delta"]) <= 0.01, item
    # the schedules themselves: the same circuits, no value changed
    changed = diff_outputs(si, us_plan).changes
    assert not (changed["section"] == "circuit").any()
