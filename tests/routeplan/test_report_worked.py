"""The report's worked calculations (routeplan.report.worked) against hand arithmetic.

The small test site of ``tests.conftest`` (2 rows, 5 strings of 26 modules → CB1 → INV1
250 kVA 800 V → G1; T1 direct at 0.8 m, T2 in duct at the 0.7 m default, nothing else set) is
planned once; each kind's governing circuit is recomputed here from published values and must
equal both the fragment's numbers and the cable schedule's row (read with the csv module).
Published values used (standard, edition, table):

- IEC 60364-5-52:2009 Table B.52.3 (XLPE, 2 loaded, Cu) method D2, 4 mm²: 46 A; Table B.52.12
  (XLPE, Cu) method E two loaded, 16 mm²: 115 A; Table B.52.5 (XLPE, 3 loaded, Al) method D1,
  185 mm²: 220 A (all from memory); Table B.52.14 XLPE at 40 °C: 0.91; Table B.52.15 at the 20 °C
  reference: 1.00; Table B.52.16 at the 2.5 K·m/W reference: 1.00; Table B.52.18, 5 circuits
  touching: 0.55 (from memory); Table B.52.17 item 1 (bunched), 2 circuits: 0.80.
- IEC 60228:2004 Table 2 (class 2): Cu 16 mm² 1.15 Ω/km, Al 185 mm² 0.164 Ω/km; Table 3
  (class 5, tinned): 4 mm² 5.09 Ω/km (from memory).
- IEC 60287-1-1 (Ed.2.1 2014) Table 1: α20 Cu 3.93e-3 /K, Al 4.03e-3 /K (from memory).
- BS 7671 Appendix 4 Table 4E1B (single-core XLPE), three-phase trefoil, 185 mm²: x = 0.140
  mV/A/m (from memory; the edition is not pinned).
- IEC 62548:2016: string cable ≥ max(I_n, 1.25 I_SC), array cable 1.25 · N · I_SC (from memory);
  string fuse ≥ 1.5 I_SC → 19.5 A → 20 A, the next IEC 60269-1 preferred rating (from memory).
- IEC 60947-2 / IEC 60059 R10 rating above 180.4 A: 200 A, I2 = 1.30 I_n; IEC 60364-4-43:2008
  433.1: Iz ≥ max(I_n, I2 / 1.45) (from memory).
- IEC 60287-2-1 T4 = ρ/2π · ln(u + √(u² − 1)), u = 2L/D_e, D_e 0.04 m (common practice): the
  depth factor √(T4(0.7 m) / T4(0.8 m)) (from memory).
"""

from __future__ import annotations

import csv
import html as html_module
import math
from html.parser import HTMLParser
from pathlib import Path

import pytest

from routeplan.pipeline import plan
from routeplan.report.worked import (
    WorkedCalculation,
    governing_circuits,
    worked_calculation,
    worked_circuit,
    worked_html,
)
from tests.conftest import base_frames, write_site
from tests.iec60287 import ac_over_dc
from tests.routeplan.promise_sites import RICH_TOML, plan_cli, rich_frames

#: the test site's string: 26 modules of Vmp 41.2 V, Imp 12.3 A, Isc 13.0 A (tests.conftest)
VMP_V, IMP_A, ISC_A = 26 * 41.2, 12.3, 13.0


@pytest.fixture(scope="module")
def planned(tmp_path_factory):
    root = tmp_path_factory.mktemp("worked")
    site = write_site(root / "site")
    out = root / "out"
    result = plan_cli(site, out)
    assert result.exit_code == 0, result.output
    with (out / "cable_schedule.csv").open(newline="", encoding="utf-8") as f:
        rows = {r["circuit_id"]: r for r in csv.DictReader(f)}
    p = plan(site)
    worked = worked_calculation(p.circuits, p.segments, p.design)
    return p, rows, worked


class _Rows(HTMLParser):
    """Collects each worked circuit's table: {circuit heading: {step label: [cells]}}."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: dict[str, dict[str, list[str]]] = {}
        self._heading: str | None = None
        self._in_h3 = False
        self._step: str | None = None
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        if tag == "h3":
            self._in_h3, self._heading = True, ""
        elif tag == "tr" and dict(attrs).get("data-step"):
            self._step = dict(attrs)["data-step"]
            self.tables.setdefault(self._heading, {})[self._step] = []
        elif tag == "td" and self._step is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag == "h3":
            self._in_h3 = False
        elif tag == "td" and self._cell is not None:
            self.tables[self._heading][self._step].append("".join(self._cell))
            self._cell = None
        elif tag == "tr":
            self._step = None

    def handle_data(self, data):
        if self._in_h3:
            self._heading += data
        elif self._cell is not None:
            self._cell.append(data)


def _fragment_values(worked) -> dict[str, dict[str, float | str]]:
    """{circuit id: {step label: the value shown}} parsed back from the HTML fragment."""
    parser = _Rows()
    parser.feed(worked.html)
    out = {}
    for heading, steps in parser.tables.items():
        cid = heading.split(" circuit ", 1)[1]
        vals = {}
        for label, cells in steps.items():
            text = cells[3]
            try:
                vals[label] = float(text)
            except ValueError:
                vals[label] = text
        out[cid] = vals
    return out


def _check(worked_circuit, shown: dict, row: dict, hand: dict[str, tuple[float, str | None]]):
    """Each hand value equals the step's value, the fragment's number (5 significant digits)
    and, where named, the schedule column (written rounded: compared to its last digit)."""
    for label, (value, column) in hand.items():
        step = worked_circuit.step(label)
        assert step.value == pytest.approx(value, rel=1e-4), label
        assert shown[label] == pytest.approx(value, rel=1e-4), label
        if column is not None:
            written = row[column]
            decimals = len(written.split(".")[1]) if "." in written else 0
            assert float(written) == pytest.approx(value, abs=0.51 * 10**-decimals), label


def test_governing_circuit_of_each_kind(planned):
    p, rows, worked = planned
    chosen = [(w.kind, w.circuit_id) for w in worked.circuits]
    # strings: R1/S1 and R1/S2 share the highest utilisation (first in schedule order); the
    # longer R2 strings have the highest drop
    assert chosen == [
        ("string", "R1/S1"),
        ("string", "R2/S1"),
        ("array", "A:CB1"),
        ("ac", "AC:INV1"),
    ]
    best = max(
        (r for r in rows.values() if r["kind"] == "string"), key=lambda r: float(r["utilisation"])
    )
    assert rows["R1/S1"]["utilisation"] == best["utilisation"]
    assert [reason for _, reason in governing_circuits(p.circuits, p.design)][1] == (
        "highest voltage drop of the 5 string circuits as a share of their 1 % limit: "
        f"{float(rows['R2/S1']['vdrop_pct']):.3f} % = 71.2 %"
    )


def test_string_by_hand(planned):
    _, rows, worked = planned
    w = worked.circuits[0]
    row = rows["R1/S1"]
    length_km = float(row["cable_m"]) / 1e3
    base = 46.0 * math.sqrt(4.61 / 5.09)  # B.52.3 D2 × √(R20 class 2 / class 5 tinned)
    k_depth = math.sqrt(math.acosh(2 * 0.7 / 0.04) / math.acosh(2 * 0.8 / 0.04))
    iz = base * 1.0 * 1.0 * k_depth * 0.55
    design = max(20.0, 1.25 * ISC_A)  # fuse 20 A
    r90 = 5.09 * (1 + 3.93e-3 * (90 - 20))  # PV cable buried: 90 °C (EN 50618, from memory)
    drop_v = 2 * length_km * IMP_A * r90
    hand = {
        "Design Isc": (ISC_A, "isc_design_a"),
        "Design current": (design, "design_current_a"),
        "Tabulated capacity It": (base, "ampacity_base_a"),
        "Temperature factor kT": (1.0, "factor_temp"),
        "Soil factor kS": (1.0, "factor_soil"),
        "Depth factor kD": (k_depth, "factor_depth"),
        "Grouping factor kG": (0.55, "factor_group"),
        "Capacity Iz": (iz, "ampacity_a"),
        "Utilisation": (design / iz, "utilisation"),
        "Resistance at 20 °C R20": (5.09, None),
        "Resistance at θ": (r90, None),
        "Voltage drop ΔU": (drop_v, "vdrop_v"),
        "Voltage drop ΔU %": (100 * drop_v / VMP_V, "vdrop_pct"),
        "Loss P": (2 * IMP_A**2 * r90 * length_km, "loss_w"),
    }
    _check(w, _fragment_values(worked)["R1/S1"], row, hand)
    assert w.step("Governing stretch").value == row["governing"] == "T1@20.0-30.0"
    assert "Table B.52.18" in w.step("Grouping factor kG").source
    assert "tag: memory" in w.step("Grouping factor kG").source


def test_array_by_hand_in_air(planned):
    _, rows, worked = planned
    w = worked.circuits[2]
    row = rows["A:CB1"]
    length_km = float(row["cable_m"]) / 1e3
    iz = 115.0 * 0.91 * 0.80  # B.52.12 method E, B.52.14 at 40 °C, B.52.17 bunched × 2
    design = 1.25 * 5 * ISC_A
    r90 = 1.15 * (1 + 3.93e-3 * 70)
    drop_v = 2 * length_km * 5 * IMP_A * r90
    hand = {
        "Design Isc": (5 * ISC_A, "isc_design_a"),
        "Design current": (design, "design_current_a"),
        "Tabulated capacity It": (115.0, "ampacity_base_a"),
        "Temperature factor kT": (0.91, "factor_temp"),
        "Grouping factor kG": (0.80, "factor_group"),
        "Capacity Iz": (iz, "ampacity_a"),
        "Utilisation": (design / iz, "utilisation"),
        "Resistance at θ": (r90, None),
        "Voltage drop ΔU": (drop_v, "vdrop_v"),
        "Voltage drop ΔU %": (100 * drop_v / VMP_V, "vdrop_pct"),
        "Loss P": (2 * (5 * IMP_A) ** 2 * r90 * length_km, "loss_w"),
    }
    _check(w, _fragment_values(worked)["A:CB1"], row, hand)
    assert row["governing"] == "stub INV1"
    assert "in air" in w.step("Governing stretch").substituted
    assert "Table B.52.17" in w.step("Grouping factor kG").source


def test_ac_by_hand(planned):
    _, rows, worked = planned
    w = worked.circuits[3]
    row = rows["AC:INV1"]
    length_km = float(row["cable_m"]) / 1e3
    ib = 250e3 / (math.sqrt(3) * 800.0)
    design = max(200.0, 1.30 * 200.0 / 1.45)
    r90 = 0.164 * (1 + 4.03e-3 * 70)
    r_ac = r90 * float(ac_over_dc(r90 / 1e3, 185.0, "Al", 3))  # IEC 60287-1-1 2.1 (tests)
    x = 0.140 / math.sqrt(3)
    cos, sin = 0.9, math.sqrt(1 - 0.81)  # design.power_factor default 0.9 (README)
    drop_v = math.sqrt(3) * length_km * ib * (r_ac * cos + x * sin)
    hand = {
        "Operating current Ib": (ib, "operating_current_a"),
        "Breaker rating In": (200.0, "ac_breaker_a"),
        "Design current": (design, "design_current_a"),
        "Tabulated capacity It": (220.0, "ampacity_base_a"),
        "Capacity Iz": (220.0, "ampacity_a"),
        "Utilisation": (design / 220.0, "utilisation"),
        "Resistance at 20 °C R20": (0.164, None),
        "Resistance at θ": (r90, None),
        "AC resistance R": (r_ac, None),
        "Reactance X": (x, None),
        "Voltage drop ΔU": (drop_v, "vdrop_v"),
        "Voltage drop ΔU %": (100 * drop_v / 800.0, "vdrop_pct"),
        "Loss P": (3 * ib**2 * r_ac * length_km, "loss_w"),
    }
    _check(w, _fragment_values(worked)["AC:INV1"], row, hand)
    assert w.step("Overload protection").value == "passes"
    assert "Table 4E1B" in w.step("Reactance X").source


def test_fragment_final_values_equal_the_schedule_row(planned):
    _, rows, worked = planned
    shown = _fragment_values(worked)
    final = {
        "Design current (schedule)": "design_current_a",
        "Capacity Iz": "ampacity_a",
        "Utilisation": "utilisation",
        "Voltage drop ΔU": "vdrop_v",
        "Voltage drop ΔU %": "vdrop_pct",
        "Loss P": "loss_w",
        "Annual loss estimate": "energy_loss_kwh",
    }
    for w in worked.circuits:
        row = rows[w.circuit_id]
        for label, column in final.items():
            written = row[column]
            decimals = len(written.split(".")[1]) if "." in written else 0
            value = shown[w.circuit_id][label]
            assert value == pytest.approx(float(written), abs=0.51 * 10**-decimals), (
                w.circuit_id,
                label,
            )
        assert shown[w.circuit_id]["Capacity check"] == row["status"] == "ok"


def test_user_text_is_escaped(planned):
    p, _, _ = planned
    circuits = p.circuits.copy()
    circuits.loc[circuits["circuit_id"] == "A:CB1", "circuit_id"] = "<img src=x onerror=alert(1)>"
    worked = worked_calculation(circuits, p.segments, p.design)
    assert "<img" not in worked.html
    assert html_module.escape("<img src=x onerror=alert(1)>") in worked.html


def test_no_circuits_gives_a_sentence(planned):
    p, _, _ = planned
    worked = worked_calculation(p.circuits.iloc[0:0], p.segments, p.design)
    assert worked.circuits == ()
    assert "No circuits: nothing to work out." in worked.html


# -- the demo site: a string governed in air, a sub-array cable with its fuse ----------------

DEMO = Path(__file__).resolve().parents[2] / "demo_site"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("worked_demo") / "out"
    result = plan_cli(DEMO, out)
    assert result.exit_code == 0, result.output
    with (out / "cable_schedule.csv").open(newline="", encoding="utf-8") as f:
        rows = {r["circuit_id"]: r for r in csv.DictReader(f)}
    p = plan(DEMO)
    return rows, worked_calculation(p.circuits, p.segments, p.design)


def test_string_in_air_by_hand(demo):
    """The demo's string with the highest drop share runs along its row: EN 50618:2014 Table
    A.3, two cables adjacent on a surface, 4 mm²: 44 A (from memory); Table A.4 at the demo's
    70 °C behind the modules: 0.91 (√((120 − 70)/60) = 0.913, from memory); IEC 60364-5-52:2009
    Table B.52.17 item 4 (perforated tray, the demo's string arrangement), 4 circuits: 0.77;
    the conductor at 120 °C, the rating temperature of Table A.3."""
    rows, worked = demo
    (w,) = [c for c in worked.circuits if c.kind == "string" and "voltage drop" in c.reason]
    row = rows[w.circuit_id]
    assert row["governing"] == w.step("Governing stretch").value
    assert row["governing"].startswith("row run ")
    assert row["group_count"] == "4"
    length_km, i_op = float(row["cable_m"]) / 1e3, float(row["operating_current_a"])
    iz = 44.0 * 0.91 * 0.77
    r120 = 5.09 * (1 + 3.93e-3 * (120 - 20))
    drop_v = 2 * length_km * i_op * r120
    hand = {
        "Tabulated capacity It": (44.0, "ampacity_base_a"),
        "Temperature factor kT": (0.91, "factor_temp"),
        "Grouping factor kG": (0.77, "factor_group"),
        "Capacity Iz": (iz, "ampacity_a"),
        "Utilisation": (25.0 / iz, "utilisation"),  # fuse 25 A > 1.25 × 15.54 A
        "Conductor temperature θ": (120.0, "conductor_temp_c"),
        "Resistance at θ": (r120, None),
        "Voltage drop ΔU": (drop_v, "vdrop_v"),
        "Loss P": (2 * i_op**2 * r120 * length_km, "loss_w"),
    }
    _check(w, _fragment_values(worked)[w.circuit_id], row, hand)
    assert "EN 50618:2014 Annex A, Table A.3" in w.step("Tabulated capacity It").source
    assert "tray" in w.step("Grouping factor kG").substituted


def test_subarray_fuse_by_hand(demo):
    """A fused sub-array cable: Iz ≥ max(1.25 I_SC, I_n, I2 / 1.45) with a gPV fuse's
    I2 = 1.45 I_n (IEC 60269-6, from memory; IEC 60364-4-43:2008 433.1)."""
    rows, worked = demo
    w = next(c for c in worked.circuits if c.kind == "subarray")
    row = rows[w.circuit_id]
    fuse = float(row["array_fuse_a"])
    isc = float(row["isc_design_a"])
    hand = {
        "Own current": (1.25 * isc, None),
        "Design current": (max(1.25 * isc, fuse, 1.45 * fuse / 1.45), "design_current_a"),
    }
    _check(w, _fragment_values(worked)[w.circuit_id], row, hand)
    assert float(row["backfeed_a"]) > float(row["ampacity_a"])  # why the fuse is there
    # the fuse lies in IEC 62548's 1.25-2.4 x I_SC range for array fuses (from memory)
    assert 1.25 * isc <= w.step("Protection").value == fuse <= 2.4 * isc


def test_unfused_string_by_hand(tmp_path):
    """Two strings on the combiner need no string fuse (IEC 62548:2016: with the module's
    maximum series fuse 25 A ≥ (S − 1) · 1.25 · I_SC = 16.25 A; from memory): the cable carries
    1.25 · I_SC · max(S − 1, 1) = 16.25 A."""
    frames = base_frames()
    frames["rows"]["strings"] = [1, 1]
    site = write_site(tmp_path / "site", frames)
    p = plan(site)
    worked = worked_calculation(p.circuits, p.segments, p.design)
    w = worked.circuits[0]
    assert w.kind == "string"
    step = w.step("Design current")
    assert step.formula == "I_d = k · I_SC,d · max(S − 1, 1)"
    assert step.substituted == "1.25 × 13 × max(2 − 1, 1)"
    assert step.value == pytest.approx(1.25 * ISC_A)
    assert w.step("Protection").value == "none"
    row = p.circuits.set_index("circuit_id").loc[w.circuit_id]
    assert row["design_current_a"] == pytest.approx(1.25 * ISC_A)


def test_single_phase_ac_by_hand(tmp_path):
    """The rich site's single-phase inverter INV2 (20 kVA, 400 V, pf not given: 0.9): Ib =
    S / U = 50 A; breaker 50 A (IEC 60898-1 preferred value, the moulded-case list below 160 A:
    common practice), Iz ≥ max(50, 1.30 × 50 / 1.45) = 50 A; IEC 60364-5-52:2009 Table B.52.3
    (XLPE, 2 loaded) Al 50 mm² method D1: 126 A (from memory); Table B.52.19 part B, 5 circuits
    touching: 0.60 (from memory); no depth credit at 0.6 m; IEC 60228:2004 Table 2 Al 50 mm²:
    0.641 Ω/km; BS 7671 Table 4E1B, two cables single-phase touching, 50 mm²: x = 0.180
    mV/A/m, X = x / 2 (from memory); ΔU = 2 · L · I · (R cos φ + X sin φ)."""
    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    result = plan_cli(site, out)
    assert result.exit_code == 0, result.output
    with (out / "cable_schedule.csv").open(newline="", encoding="utf-8") as f:
        row = next(r for r in csv.DictReader(f) if r["circuit_id"] == "AC:INV2")
    assert (row["size_mm2"], row["material"], row["conductors"]) == ("50.0", "Al", "2")
    assert row["group_count"] == "5"
    p = plan(site)
    w = worked_circuit(p.circuits, p.segments, p.design, "AC:INV2")
    length_km = float(row["cable_m"]) / 1e3
    r90 = 0.641 * (1 + 4.03e-3 * 70)
    r_ac = r90 * float(ac_over_dc(r90 / 1e3, 50.0, "Al", phases=1))
    x = 0.180 / 2
    drop_v = 2 * length_km * 50.0 * (r_ac * 0.9 + x * math.sqrt(1 - 0.81))
    hand = {
        "Operating current Ib": (20e3 / 400.0, "operating_current_a"),
        "Breaker rating In": (50.0, "ac_breaker_a"),
        "Design current": (max(50.0, 1.30 * 50 / 1.45), "design_current_a"),
        "Tabulated capacity It": (126.0, "ampacity_base_a"),
        "Depth factor kD": (1.0, "factor_depth"),
        "Grouping factor kG": (0.60, "factor_group"),
        "Capacity Iz": (126.0 * 0.60, "ampacity_a"),
        "AC resistance R": (r_ac, None),
        "Reactance X": (x, None),
        "Voltage drop ΔU": (drop_v, "vdrop_v"),
        "Voltage drop ΔU %": (100 * drop_v / 400.0, "vdrop_pct"),
        "Loss P": (2 * 50.0**2 * r_ac * length_km, "loss_w"),
    }
    html = worked_html([w])
    _check(w, _fragment_values(WorkedCalculation((w,), html))["AC:INV2"], row, hand)
    assert "two cables touching" in w.step("AC resistance R").substituted
    assert w.step("Voltage drop ΔU").formula == "ΔU = 2 · L · I · (R cos φ + X sin φ) / p"
    with pytest.raises(KeyError):
        worked_circuit(p.circuits, p.segments, p.design, "AC:NOWHERE")


def test_every_rule_set_has_its_worked_calculation():
    """A rule set added to calc without its worked calculation would otherwise be worked out
    under another's formulas and clauses: each must have its own steps, a title per kind and
    its review note (the safety caution)."""
    from calc.rules import rule_names
    from routeplan.report.worked import rule_texts

    texts = {name: rule_texts(name) for name in rule_names()}
    assert len({id(t) for t in texts.values()}) == len(texts)
    for name, t in texts.items():
        assert set(t.titles) == {"string", "subarray", "array", "ac"}, name
        assert "design aid" in t.review and "qualified, licensed" in t.review, name


def test_every_rule_set_has_its_own_methods_and_assumptions():
    from calc.rules import rule_names
    from routeplan.report.basis import assumptions, methods

    for name in rule_names():
        others = [n for n in rule_names() if n != name]
        assert all(methods(name) != methods(o) for o in others), name
        assert all(assumptions(name) != assumptions(o) for o in others), name


def test_a_count_between_the_table_rows_is_worked_at_the_next_larger_row():
    """The demo's busiest trench holds 10 cable sets touching, direct in the ground: IEC
    60364-5-52:2009 Table B.52.18 gives 9 (0.41) and 12 circuits (0.36, from memory) and no
    reading between; the worked step says the next larger row is read and shows 0.36."""
    demo = Path(__file__).resolve().parents[2] / "demo_site"
    p = plan(demo)
    c = p.circuits
    cid = c.loc[c["group_count"] == 10, "circuit_id"].iloc[0]
    w = worked_circuit(c, p.segments, p.design, cid)
    (step,) = [s for s in w.steps if s.label == "Grouping factor kG"]
    assert (
        step.substituted
        == "10 cable sets, spacing 0 m (between the table's rows: the next larger, 12)"
    )
    assert step.value == pytest.approx(0.36, abs=1e-12)


def test_the_air_table_is_worked_at_its_own_rows():
    """IEC 60364-5-52:2009 Table B.52.17 (confirmed): the single-layer items (here a perforated
    tray, item 4) give no further reduction beyond 9 circuits, bunched circuits (item 1) are
    tabulated to 20; the worked step names the row read and why."""
    from calc.tables import load_table
    from routeplan.report.worked import _count_row

    t = load_table("iec60364_5_52_2009_b52_17_group_air.csv")
    tray_9 = float(t["tray"][t["circuits"] == 9][0])
    rows, note = _count_row(t["circuits"], 12.0, t["tray"], tray_9)
    assert (
        t["circuits"][rows].tolist() == [9] and note == " (no further reduction beyond 9 circuits)"
    )
    rows, note = _count_row(t["circuits"], 10.0, t["bunched"], 0.45)
    assert t["circuits"][rows].tolist() == [12]
    assert note == " (between the table's rows: the next larger, 12)"
    rows, note = _count_row(t["circuits"], 24.0, t["bunched"], 0.35)
    assert t["circuits"][rows].tolist() == [20]
    assert note == " (beyond the table: 1/k² extrapolated linearly, derived)"
    assert _count_row(t["circuits"], 4.0, t["bunched"], 0.65)[1] == ""


def test_ac_short_circuit_withstand_by_hand(demo):
    """The demo gives fault_ka = 25 kA and clear_s = 0.2 s: the adiabatic minimum of
    IEC 60364-4-43:2008 434.5.2, S = I·√t / k, with k = 94 for aluminium under XLPE (Table 43A,
    confirmed; BS 7671 Table 43.1 alike): 25 000 × √0.2 / 94 = 118.94 mm² for every AC circuit
    (the whole fault current in each conductor, conservative); its 120 mm² cables pass by 1 %."""
    rows, worked = demo
    s_min = 25_000 * math.sqrt(0.2) / 94
    assert s_min == pytest.approx(118.94, abs=0.005)
    ac = {cid: r for cid, r in rows.items() if r["kind"] == "ac"}
    assert ac and all(float(r["sc_min_mm2"]) == pytest.approx(s_min, abs=0.05) for r in ac.values())
    assert all(r["sc_min_mm2"] == "" for r in rows.values() if r["kind"] != "ac")
    shown = [c for c in worked.circuits if c.kind == "ac"]
    assert shown
    for w in shown:  # each AC circuit the report works through
        step = w.step("Short-circuit withstand")
        assert step.value == pytest.approx(s_min, rel=1e-9) and step.unit == "mm²"
        size = float(rows[w.circuit_id]["size_mm2"])
        assert step.substituted == f"25000 × √0.2 / 94 = 118.94 mm² ≤ {size:g} mm²: passes"
        assert "Table 43A" in step.source


def test_a_short_circuit_step_that_fails_says_so():
    # the same check on a 95 mm² Al/XLPE conductor: 118.94 mm² needed (k = 94, IEC 60364-4-43
    # Table 43A), so it fails, and the comparison reads ">"
    import pandas as pd

    from routeplan.report.worked import _short_circuit_steps

    row = pd.Series({"size_mm2": 95.0, "material": "Al", "insulation": "XLPE",
                     "sc_min_mm2": 118.94})  # fmt: skip
    design = plan(DEMO).design
    (step,) = _short_circuit_steps(row, design)
    assert step.substituted == "25000 × √0.2 / 94 = 118.94 mm² > 95 mm²: FAILS"
