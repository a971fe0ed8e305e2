"""Output columns: names (the contract), units, number formats and descriptions.

One table serves the CSV writers (fixed decimals, so reruns are byte-identical), the XLSX
writer (units in the column titles) and the docs. The first columns of each table are the
contract (README, "Outputs"); more columns follow them.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Col:
    """One output column: name, unit (for titles), decimals (None = text/integer), meaning."""

    name: str
    unit: str = ""
    decimals: int | None = None
    doc: str = ""

    @property
    def title(self) -> str:
        """Column title with its unit, for spreadsheets: ``route_m [m]``."""
        return f"{self.name} [{self.unit}]" if self.unit else self.name


CIRCUIT_COLUMNS: tuple[Col, ...] = (
    Col(
        "circuit_id",
        doc="stable circuit id: <row>/S<k>, SA:<combiner>, A:<combiner>, AC:<inverter>",
    ),
    Col("kind", doc="string, subarray, array or ac"),
    Col("from_id", doc="source feature id"),
    Col("to_id", doc="destination feature id"),
    Col("inverter_id", doc="the inverter the circuit ultimately feeds (its block)"),
    Col("material", doc="conductor material, Cu or Al"),
    Col("size_mm2", "mm²", 1, "conductor cross-section per conductor"),
    Col("parallel", doc="conductors in parallel per pole/phase"),
    Col("route_m", "m", 2, "routed length: stubs + trench segments"),
    Col("cable_m", "m", 2, "cable length per conductor, allowances included"),
    Col("trench_segments", doc="';'-separated trench segment ids, in route order"),
    Col("group_max", doc="most circuits sharing one trench segment on the route"),
    Col(
        "design_current_a",
        "A",
        2,
        "capacity the cable must have: IEC 62548 DC currents with the backfeed or the fuse "
        "protecting it; AC the breaker's In (IEC 60364-4-43)",
    ),
    Col("ampacity_base_a", "A", 1, "tabulated capacity of one conductor at the governing stretch"),
    Col("derating", "", 3, "product of the correction factors at the governing stretch"),
    Col("ampacity_a", "A", 1, "governing derated capacity of the installed conductors"),
    Col("utilisation", "", 3, "design_current_a / ampacity_a"),
    Col("vdrop_v", "V", 2, "voltage drop at operating current"),
    Col("vdrop_pct", "%", 3, "voltage drop, % of the circuit's operating voltage"),
    Col("vdrop_total_pct", "%", 3, "cumulative DC drop string→inverter; the AC circuit's own"),
    Col("loss_w", "W", 1, "I²R loss at operating current"),
    Col("status", doc="ok or fail"),
    Col("note", doc="why a circuit fails, and other remarks"),
    # -- beyond the contract
    Col(
        "remedy",
        doc="for a failing circuit: the stretch that governs, the setting that limits the size, "
        "and the smallest change found by re-sizing that makes it pass (routeplan.remedy)",
    ),
    Col("insulation", doc="insulation: PV (EN 50618), XLPE or PVC"),
    Col("conductors", doc="conductors in the circuit (poles/phases × parallel)"),
    Col("stub_m", "m", 2, "straight stubs from equipment to the trench network"),
    Col("row_run_m", "m", 2, "string cable along its row (air)"),
    Col(
        "operating_current_a",
        "A",
        2,
        "Imp × strings (DC) or Ib, the inverter's maximum continuous output current (AC)",
    ),
    Col("voltage_v", "V", 1, "reference voltage for vdrop_pct"),
    Col("conductor_temp_c", "°C", 1, "conductor temperature used for resistance (drop, loss)"),
    Col("power_factor", "", 3, "cos φ of AC circuits"),
    Col(
        "governing",
        doc="where capacity governs: a trench segment id, or a stretch in air ('stub <id>', "
        "'row run <row>')",
    ),
    Col("factor_temp", "", 3, "ambient/ground temperature factor at the governing stretch"),
    Col("factor_soil", "", 3, "soil resistivity factor"),
    Col("factor_depth", "", 3, "depth factor"),
    Col("factor_group", "", 3, "grouping factor"),
    Col("group_count", doc="circuits grouped at the governing stretch (parallels included)"),
    Col("fuse_a", "A", 0, "string fuse rating where one is fitted (required, or fixed: `fuse_a`)"),
    Col("isc_design_a", "A", 2, "Isc the DC design currents use (bifacial gain included)"),
    Col("voc_max_v", "V", 1, "highest open-circuit voltage, at the lowest expected temperature"),
    Col("backfeed_a", "A", 1, "arrays: current the other arrays of the input feed into a fault"),
    Col("array_fuse_a", "A", 0, "array fuse rating; empty where none is needed"),
    Col("ac_breaker_a", "A", 0, "AC breaker rating In"),
    Col("protection", doc="which protection rule governed the cable"),
    Col("input", doc="the inverter DC input the circuit's current lands on"),
    Col("loss_pct", "%", 3, "loss, % of the circuit's power"),
    Col("energy_loss_kwh", "kWh", 0, "annual energy-loss estimate (equivalent loss hours)"),
    Col("marking", doc="conductor identification colours"),
    Col(
        "size_label",
        doc="conductor size as the rule set names it: '10 mm²' (iec, IEC 60228), '10 AWG' or "
        "'250 kcmil' (nec, NEC 2023 Chapter 9 Table 8)",
    ),
    Col("route_ft", "ft", 2, "route_m in international feet (1 ft = 0.3048 m exactly)"),
    Col("cable_ft", "ft", 2, "cable_m in international feet (1 ft = 0.3048 m exactly)"),
    Col(
        "governing_condition",
        doc="nec: the NEC 2023 690.8(B) condition that governs the size, '690.8(B)(1)' (1.25 × "
        "the maximum current in the 110.14(C) terminal column, uncorrected) or '690.8(B)(2)' "
        "(the maximum current after correction and adjustment); empty under iec",
    ),
    Col(
        "sc_min_mm2",
        "mm²",
        1,
        "AC circuits, when fault_ka is set: the smallest cross-section per conductor that "
        "withstands the fault (adiabatic, IEC 60364-4-43 434.5.2: fault_ka · √clear_s / k)",
    ),
)

SEGMENT_COLUMNS: tuple[Col, ...] = (
    Col(
        "segment_id",
        doc="<trench id>@<from>-<to>: chainage of the segment's ends along its trench [m, 0.1]",
    ),
    Col("trench_id", doc="trench feature id"),
    Col("length_m", "m", 2, "segment length"),
    Col("circuits", doc="circuits in the segment (`cable_sets` counts parallel sets)"),
    Col("strings", doc="string circuits"),
    Col("arrays", doc="array circuits"),
    Col("ac", doc="AC circuits"),
    Col("max_circuits", doc="capacity of the trench in circuits; empty = not given so"),
    Col(
        "fill",
        "",
        3,
        "circuits / max_circuits, or cable_sets / max_cable_sets (the capacity given, "
        "fill_basis); empty = no capacity",
    ),
    Col("status", doc="ok or over (over capacity)"),
    Col("circuit_ids", doc="';'-separated circuit ids"),
    # -- beyond the contract
    Col("max_cable_sets", doc="capacity of the trench in cable sets; empty = not given so"),
    Col("fill_basis", doc="what fill counts: circuits or cable_sets; empty = no capacity"),
    Col("depth_m", "m", 2, "laying depth"),
    Col("laying", doc="direct or duct"),
    Col("spacing_m", "m", 3, "clear distance between circuits"),
    Col("soil_k_m_w", "K·m/W", 2, "soil thermal resistivity"),
    Col("group_factor", "", 3, "grouping factor in force for the segment's cable sets"),
    Col("cable_sets", doc="circuits counting each parallel set; used for grouping and fill"),
    Col(
        "spread_m",
        "m",
        2,
        "clear spacing across the cable sets laid side by side: (cable_sets − 1) × spacing_m; "
        "the width the grouping factor's single layer needs besides the cables themselves",
    ),
    Col("subarrays", doc="sub-array circuits"),
    Col("from_m", "m", 2, "chainage of the segment's start along its trench"),
    Col("to_m", "m", 2, "chainage of the segment's end along its trench"),
)

INPUT_COLUMNS: tuple[Col, ...] = (
    Col("inverter_id", doc="inverter feature id"),
    Col("input", doc="DC input number, 1…dc_inputs"),
    Col("strings", doc="strings whose current flows into the input (through arrays too)"),
    Col("circuits", doc="circuits landing on the input (strings and array cables)"),
    Col("imp_a", "A", 2, "Σ Imp of what lands on the input"),
    Col("isc_a", "A", 2, "Σ design Isc (bifacial gain included)"),
    Col("input_max_strings", doc="string terminals of the input; empty = not given"),
    Col("input_max_a", "A", 1, "maximum operating input current; empty = not given"),
    Col("input_max_isc_a", "A", 1, "maximum input short-circuit current; empty = not given"),
    Col("status", doc="ok or over (a limit exceeded)"),
    Col("note", doc="which limit is exceeded, by how much"),
    Col("circuit_ids", doc="';'-separated circuit ids landing on the input"),
)

QUANTITY_COLUMNS: tuple[Col, ...] = (
    Col(
        "item",
        doc="cable, equipment grounding conductor (nec), termination, connector pair, trench, "
        "string/sub-array/array fuse, AC breaker, or '<family> total'",
    ),
    Col("kind", doc="circuit kind (cable, termination, connector pair, fuse, breaker)"),
    Col("material", doc="conductor material, Cu or Al (cable, termination, connector pair)"),
    Col("size_mm2", "mm²", None, "conductor cross-section (cable, termination, connector pair)"),
    Col("laying", doc="trench laying (trench)"),
    Col("depth_m", "m", 2, "trench depth (trench)"),
    Col(
        "quantity",
        "",
        2,
        "conductor metres (cable, grounding), trench metres (trench) or pieces; feet with "
        "design.units = 'us'",
    ),
    Col("unit", doc="m, ft (design.units = 'us') or pcs"),
    # -- beyond the contract
    Col("rating_a", "A", None, "rated current In (fuse, breaker)"),
    Col("poles", "", None, "poles (breaker)"),
    Col(
        "family",
        doc="item family: cable, grounding (nec), termination, connector, trench, fuse, breaker "
        "(its total last)",
    ),
    Col(
        "size_label",
        doc="conductor size as the rule set names it ('10 mm²'; '10 AWG', '250 kcmil' under nec)",
    ),
    Col("designation", doc="what to order, by open standard (no maker's code)"),
    Col("cores_x_size", doc="cores × conductor size [mm²; AWG/kcmil under nec]"),
    Col("conductor_class", "", None, "IEC 60228 conductor class"),
    Col("insulation", doc="insulation (cable)"),
    Col("rated_voltage", doc="rated voltage: U0/U (Um) of a cable, or the device's"),
    Col("standard", doc="the standard the designation follows"),
    Col("source", doc="standard, edition and clause the designation's text rests on"),
    Col("tag", doc="memory: recalled, verify against the edition in force; common practice"),
    Col("note", doc="where no designation fits the plan's rated voltage, why"),
)


def names(cols: tuple[Col, ...]) -> list[str]:
    """The column names, in order."""
    return [c.name for c in cols]
