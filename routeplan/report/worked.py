"""Worked calculations: the governing circuit of each kind, step by step, for a reviewer.

:func:`worked_calculation` takes the finished plan's cable schedule and trench schedule (the
``Plan.circuits`` and ``Plan.segments`` frames) and the design settings, picks per kind the circuit
with the highest utilisation (and, when it is another circuit, the one with the highest voltage
drop as a share of its kind's limit) and lays out how its numbers were formed: the design current,
every derating factor with its table (standard, edition, table, the data file's provenance tag)
and the value read, the governing stretch, the capacity, the utilisation, the voltage drop with the
numbers substituted, the loss and the protection. The engine's own results are taken from the
schedule; what the schedule does not carry (the resistance per km, the reactance, the tabulated
factors' inputs) comes from calc's public functions and tables, so the report states how the
engine works and never works it out another way.

The result is structured data (:class:`WorkedCircuit` with its :class:`Step` list) and one HTML
fragment (escaped, self-contained, print-friendly) for the calculation report. routeplan is a
design aid; the design remains subject to local codes and review by a qualified person.
"""

from __future__ import annotations

import html
import math
import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pandas as pd

import calc
from calc import ampacity, protection, pv, resistance
from calc.losses import loss_w
from calc.tables import load_table
from calc.vdrop import vdrop_v
from routeplan.config import DesignConfig
from routeplan.pipeline import design_params

__all__ = [
    "IEC_TEXTS",
    "KIND_LABELS",
    "RuleTexts",
    "Step",
    "WorkedCalculation",
    "WorkedCircuit",
    "governing_circuits",
    "rule_texts",
    "worked_calculation",
    "worked_circuit",
    "worked_html",
]

#: the kinds in report order, with their label
KIND_LABELS: dict[str, str] = {
    "string": "string",
    "subarray": "sub-array",
    "array": "array",
    "ac": "AC",
}
_KIND_CODE = {name: code for code, name in enumerate(calc.KIND_NAMES)}


@dataclass(frozen=True)
class Step:
    """One line of a worked calculation.

    label : what is computed; formula : the rule in symbols; substituted : the formula with the
    numbers put in (or the lookup made); value : the result (float, or text for a choice);
    unit : its unit ("" for a ratio); source : standard, edition, table and the data file with
    its provenance tag, or the schedule column the value comes from.
    """

    label: str
    formula: str
    substituted: str
    value: float | str
    unit: str
    source: str

    @property
    def text(self) -> str:
        """The value as the fragment shows it."""
        return _num(self.value) if isinstance(self.value, float) else str(self.value)


@dataclass(frozen=True)
class WorkedCircuit:
    """The worked calculation of one circuit: why it was chosen, and its steps."""

    kind: str
    circuit_id: str
    reason: str
    steps: tuple[Step, ...]

    def step(self, label: str) -> Step:
        """The step with this label (KeyError if there is none)."""
        for s in self.steps:
            if s.label == label:
                return s
        raise KeyError(label)


@dataclass(frozen=True)
class WorkedCalculation:
    """Every worked circuit in report order, and the HTML fragment that shows them."""

    circuits: tuple[WorkedCircuit, ...]
    html: str


# --------------------------------------------------------------------------------------------
# number formatting and table sources


def _num(x: float, sig: int = 5) -> str:
    """A number with ``sig`` significant digits, no exponent for plant-sized values."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "–"
    x = float(x)
    if x == 0:
        return "0"
    digits = max(sig - 1 - math.floor(math.log10(abs(x))), 0)
    text = f"{x:.{digits}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def _header_source(name: str) -> str:
    """The first sentence of the ``# source:`` paragraph of a data table's header (standard,
    edition, table), on one line; the report's design basis lists the whole headers.

    >>> _header_source("iec60364_4_43_2008_433_1_coordination.csv")[:72]
    'IEC 60364-4-43:2008 (Ed.3) clause 433.1, coordination between conductors'
    """
    out: list[str] = []
    for line in load_table(name).header:
        if not out:
            if line.startswith("# source:"):
                out.append(line[len("# source:") :].strip())
            continue
        if re.match(r"^#\s?[a-z_]+:", line):  # the next "# key:" line ends the paragraph
            break
        out.append(line.lstrip("#").strip())
    return re.split(r"(?<=[a-z0-9)])\. ", " ".join(out), maxsplit=1)[0]


def _source(name: str, mask: np.ndarray | None = None) -> str:
    """Standard, edition and table of a data file, with the tags of the rows read."""
    t = load_table(name)
    tags = t["tag"] if mask is None else t["tag"][mask]
    tag = ", ".join(sorted(set(tags.tolist()))) or "–"
    return f"{_header_source(name)} [calc/data/{name}; tag: {tag}]"


def _bracket(values: np.ndarray, x: float) -> np.ndarray:
    """Rows of an ascending column that a linear interpolation at ``x`` reads (one or two)."""
    v = np.asarray(values, dtype=float)
    if x <= v[0]:
        return v == v[0]
    if x >= v[-1]:
        return v == v[-1]
    hi = int(np.searchsorted(v, x, side="left"))
    return (v == v[hi]) | (v == v[hi - 1]) if v[hi] != x else v == x


def _count_row(
    counts: np.ndarray, count: float, column: np.ndarray | None = None, factor: float = math.nan
) -> tuple[np.ndarray, str]:
    """The row of a grouping table read at ``count`` (its ascending ``circuits``; ``column``:
    the factor column, whose empty cells are not rows of it), as calc reads the grouping
    tables (:func:`calc.ampacity.table_count`), and what the step adds where the count is not
    a row: between rows the next larger; beyond the last row that row, the factor held
    (``factor``, the one applied, is that row's: single-layer items, spaced) or 1/k²
    extrapolated from it."""
    v = np.asarray(counts, dtype=float)
    valid = np.ones(len(v), bool) if column is None else ~np.isnan(np.asarray(column, float))
    k, at = (float(x[0]) for x in ampacity.table_count(v[valid], [count]))
    held = column is not None and factor == float(np.asarray(column, float)[v == at][0])
    if k > at:
        note = (
            f" (no further reduction beyond {_num(at)} circuits)"
            if held
            else " (beyond the table: 1/k² extrapolated linearly, derived)"
        )
    elif count > 1.0 and count != at:
        note = f" (between the table's rows: the next larger, {_num(at)})"
    else:
        note = ""
    return (v == at) & valid, note


def _rows(table_name: str, **equal: float | str) -> np.ndarray:
    t = load_table(table_name)
    mask = np.ones(len(t), bool)
    for col, value in equal.items():
        mask &= t[col] == value
    return mask


#: the table of IEC 60364-5-52:2009 Annex B each capacity column comes from (as the data files'
#: headers state)
_BURIED_TABLE = {("PVC", 2): "B.52.2", ("XLPE", 2): "B.52.3", ("PVC", 3): "B.52.4",
                 ("XLPE", 3): "B.52.5"}  # fmt: skip
_FREE_AIR_TABLE = {"PVC": "B.52.10", "XLPE": "B.52.12"}


# --------------------------------------------------------------------------------------------
# choosing the circuits


def governing_circuits(circuits: pd.DataFrame, design: DesignConfig) -> list[tuple[int, str]]:
    """The circuits worked out per kind: (row position, reason), in report order.

    Per kind (string, sub-array, array, AC) the circuit with the highest ``utilisation``; when
    another circuit has the highest voltage drop as a share of the kind's limit
    (``vdrop_pct / design.drop_pct[kind]``), that one too. Ties go to the first in schedule order.
    """
    out: list[tuple[int, str]] = []
    kinds = circuits["kind"].to_numpy(dtype=object)
    util = circuits["utilisation"].to_numpy(dtype=float)
    drop = circuits["vdrop_pct"].to_numpy(dtype=float)
    for kind, label in KIND_LABELS.items():
        idx = np.flatnonzero(kinds == kind)
        if idx.size == 0:
            continue
        n = idx.size
        u = np.where(np.isnan(util[idx]), -np.inf, util[idx])
        i_u = int(idx[np.argmax(u)])
        out.append(
            (
                i_u,
                f"highest utilisation of the {n:,} {label} circuits: {util[i_u]:.3f}",
            )
        )
        limit = float(design.drop_pct[kind])
        share = np.where(np.isnan(drop[idx]), -np.inf, drop[idx] / limit)
        i_d = int(idx[np.argmax(share)])
        if i_d != i_u:
            out.append(
                (
                    i_d,
                    f"highest voltage drop of the {n:,} {label} circuits as a share of their "
                    f"{_num(limit)} % limit: {drop[i_d]:.3f} % = {100 * drop[i_d] / limit:.1f} %",
                )
            )
    return out


# --------------------------------------------------------------------------------------------
# the steps


def _design_current_steps(row: pd.Series, design: DesignConfig) -> list[Step]:
    kind = row["kind"]
    rules_src = "iec62548_2016_pv_dc_rules.csv"
    k = pv.pv_rule("isc_factor")
    k_src = _source(rules_src, _rows(rules_src, name="isc_factor"))
    steps: list[Step] = []
    if kind != "ac":
        ratio = design_params(design).rear_irradiance_ratio
        ratio = protection.bnpi_rear_ratio() if ratio is None else ratio
        isc = float(row["isc_design_a"])
        what = (
            "module Isc at STC with the rear-side gain"
            if kind == "string"
            else "Σ of the strings' design Isc below the cable"
        )
        steps.append(
            Step(
                "Design Isc",
                "I_SC,d = I_SC · (1 + φ · G_rear / G_front), or the datasheet bifacial I_SC"
                + ("" if kind == "string" else "; feeder: N · mean of its strings' I_SC,d"),
                f"{what}; G_rear / G_front = {_num(ratio)}",
                isc,
                "A",
                "IEC 61215-1 bifacial nameplate irradiance (calc.protection.bifacial_isc_a); "
                "schedule column isc_design_a",
            )
        )
    if kind == "string":
        m = re.search(r"([\d.]+) strings? in parallel|([\d.]+) string\(s\) in parallel",
                      str(row["protection"]))  # fmt: skip
        s_par = float(next(g for g in m.groups() if g)) if m else math.nan
        fuse = float(row["fuse_a"])
        value = float(pv.string_design_current_a([isc], [s_par], [fuse])[0])
        if np.isfinite(fuse):
            formula = "I_d = max(I_n, k · I_SC,d)"
            subst = f"max({_num(fuse)}, {_num(k)} × {_num(isc)})  (S = {_num(s_par)})"
        else:
            formula = "I_d = k · I_SC,d · max(S − 1, 1)"
            subst = f"{_num(k)} × {_num(isc)} × max({_num(s_par)} − 1, 1)"
        steps.append(Step("Design current", formula, subst, value, "A", k_src + "; calc.pv"))
    elif kind in ("array", "subarray"):
        own = k * float(row["isc_design_a"])
        steps.append(
            Step(
                "Own current",
                "k · I_SC,d",
                f"{_num(k)} × {_num(float(row['isc_design_a']))}",
                own,
                "A",
                k_src,
            )
        )
        bf = float(row["backfeed_a"])
        steps.append(
            Step(
                "Backfeed",
                "B = k · Σ I_SC,d of the other branches on the inverter input",
                "schedule column backfeed_a",
                bf,
                "A",
                "IEC 62548:2016 (from memory), calc.protection.backfeed_a",
            )
        )
        fuse = float(row["array_fuse_a"]) if pd.notna(row["array_fuse_a"]) else math.nan
        value = float(protection.array_min_capacity_a([row["isc_design_a"]], [bf], [fuse])[0])
        if np.isfinite(fuse):
            i2 = protection.i2_factor("gpv")
            coord = "iec60364_4_43_2008_433_1_coordination.csv"
            k145 = float(load_table(coord)["value"][_rows(coord, name="i2_max_x_iz")][0])
            formula = "I_d = max(k · I_SC,d, I_n, I_2 / 1.45), I_2 = i2 · I_n"
            subst = f"max({_num(own)}, {_num(fuse)}, {_num(i2)} × {_num(fuse)} / {_num(k145)})"
            src = (
                "IEC 62548:2016 (from memory); IEC 60364-4-43:2008 433.1 "
                + _source(coord)
                + "; gPV I2: "
                + _source("overcurrent_device_conventional_currents.csv",
                          _rows("overcurrent_device_conventional_currents.csv", device="gpv"))
            )  # fmt: skip
        elif bf > 0:
            formula = "I_d = max(k · I_SC,d, B)  (no fuse: the cable carries the backfeed)"
            subst = f"max({_num(own)}, {_num(bf)})"
            src = "IEC 62548:2016 (from memory), calc.protection.array_min_capacity_a"
        else:
            formula = "I_d = k · I_SC,d  (alone on its input: no backfeed)"
            subst = f"{_num(k)} × {_num(float(row['isc_design_a']))}"
            src = k_src
        steps.append(Step("Design current", formula, subst, value, "A", src))
    else:
        ib = float(row["operating_current_a"])
        steps.append(
            Step(
                "Operating current Ib",
                "I_b = inverter ac_max_a, else S / (√3 · U) (single-phase S / U)",
                "schedule column operating_current_a",
                ib,
                "A",
                "calc.pv.ac_max_current_a",
            )
        )
        device = design.values["ac_breaker_device"]
        dev_src = "overcurrent_device_conventional_currents.csv"
        i2f = protection.i2_factor(device)
        in_a = float(row["ac_breaker_a"])
        coord = "iec60364_4_43_2008_433_1_coordination.csv"
        k145 = float(load_table(coord)["value"][_rows(coord, name="i2_max_x_iz")][0])
        steps.append(
            Step(
                "Breaker rating In",
                "smallest standard rating ≥ I_b",
                f"{device} ratings, ≥ {_num(ib)} A",
                in_a,
                "A",
                "schedule column ac_breaker_a; calc.protection.breaker_ratings_a",
            )
        )
        value = max(in_a, i2f * in_a / k145) if np.isfinite(in_a) else ib
        steps.append(
            Step(
                "Design current",
                "I_d = max(I_n, I_2 / 1.45), I_2 = i2 · I_n",
                f"max({_num(in_a)}, {_num(i2f)} × {_num(in_a)} / {_num(k145)})",
                value,
                "A",
                "IEC 60364-4-43:2008 433.1 "
                + _source(coord)
                + f"; {device} I2: "
                + _source(dev_src, _rows(dev_src, device=device)),
            )
        )
    steps.append(
        Step(
            "Design current (schedule)",
            "I_d",
            "schedule column design_current_a",
            float(row["design_current_a"]),
            "A",
            "cable schedule",
        )
    )
    return steps


def _environment(row: pd.Series, segments: pd.DataFrame) -> dict:
    """The governing stretch: environment code, description and its parameters."""
    gov = str(row["governing"])
    seg = segments.loc[segments["segment_id"].astype(str) == gov]
    if len(seg):
        s = seg.iloc[0]
        duct = str(s["laying"]) == "duct"
        return {
            "env": "D1" if duct else "D2",
            "laying": ampacity.LAYING_DUCT if duct else ampacity.LAYING_DIRECT,
            "depth_m": float(s["depth_m"]),
            "spacing_m": float(s["spacing_m"]),
            "soil_k_m_w": float(s["soil_k_m_w"]),
            "text": (
                f"trench segment {gov}: "
                + ("in duct (method D1)" if duct else "direct in ground (method D2)")
                + f", depth {_num(float(s['depth_m']))} m, clear spacing "
                f"{_num(float(s['spacing_m']))} m, soil {_num(float(s['soil_k_m_w']))} K·m/W"
            ),
        }
    behind = gov.startswith("row run ")
    where = "along the module row, behind the modules" if behind else "in air"
    if gov == "air":
        where = "in air (no shared stretch: rated as one circuit)"
    return {"env": "air", "behind": behind, "text": f"{gov}: {where}"}


def _capacity_steps(row: pd.Series, segments: pd.DataFrame, design: DesignConfig) -> list[Step]:
    kind = row["kind"]
    code = _KIND_CODE[kind]
    dp = design_params(design)
    rs = calc.get_rules(design.values["rules"])
    env = _environment(row, segments)
    size = float(row["size_mm2"])
    material, insulation = str(row["material"]), str(row["insulation"])
    parallel = int(row["parallel"])
    poles = int(row["conductors"]) // parallel
    loaded = 3 if kind == "ac" and poles == 3 else 2
    steps = [Step("Governing stretch", "the stretch with the lowest derated capacity",
                  env["text"], str(row["governing"]), "", "schedule column governing")]  # fmt: skip

    # tabulated capacity
    base = float(rs.base_capacity_a(code, material, insulation, loaded, env["env"], [size],
                                    dp.pv_installation)[0])  # fmt: skip
    if kind == "string" and env["env"] == "air":
        name = "en50618_2014_table_a3_pv_cable_capacity.csv"
        src = _source(name, _rows(name, size_mm2=size))
        how = f"{_num(size)} mm² PV cable, column {dp.pv_installation}"
    elif kind == "string":
        name = "iec60364_5_52_2009_buried_capacity.csv"
        r2 = resistance.r20_ohm_km([size], "Cu", 2)[0]
        r5 = resistance.r20_ohm_km([size], "Cu", 5, tinned=True)[0]
        src = (
            "derived (calc.ampacity.pv_cable_buried_capacity_a): "
            + _source(name, _rows(name, material="Cu", size_mm2=size))
            + " × √(R20 class 2 / R20 class 5 tinned), IEC 60228"
        )
        how = (
            f"{_num(size)} mm² Cu, column XLPE_2_{env['env']} (Table B.52.3) × "
            f"√({_num(r2)} / {_num(r5)}) (PV cable buried)"
        )
    elif env["env"] == "air":
        name = "iec60364_5_52_2009_free_air_capacity.csv"
        src = _source(name, _rows(name, material="Cu", size_mm2=size))
        table = _FREE_AIR_TABLE[insulation]
        how = (
            f"{_num(size)} mm² {material} {insulation}, {loaded} loaded, method F (E below "
            f"25 mm²), Table {table}"
        )
        if material == "Al":
            how += " × √(R20 Cu / R20 Al) (IEC 60228, derived)"
    else:
        name = "iec60364_5_52_2009_buried_capacity.csv"
        src = _source(name, _rows(name, material=material, size_mm2=size))
        table = _BURIED_TABLE[(insulation, loaded)]
        how = (
            f"{_num(size)} mm² {material}, column {insulation}_{loaded}_{env['env']} "
            f"(Table {table})"
        )
    steps.append(
        Step("Tabulated capacity It", "I_t (reference conditions, one set)", how, base, "A", src)
    )

    # temperature factor
    if env["env"] == "air":
        row_air = kind == "string" and (env["behind"] or row["governing"] == "air")
        temp_c = dp.row_air_temp_c if row_air and dp.row_air_temp_c is not None else dp.air_temp_c
        if insulation == "PV":
            name, col = "en50618_2014_table_a4_ambient.csv", "factor"
        else:
            name, col = "iec60364_5_52_2009_b52_14_air_temperature.csv", insulation
        label_t = "θ_air"
    else:
        temp_c = dp.ground_temp_c
        name = "iec60364_5_52_2009_b52_15_ground_temperature.csv"
        col = "PVC" if insulation == "PVC" else "XLPE"
        label_t = "θ_ground"
    t = load_table(name)
    steps.append(
        Step(
            "Temperature factor kT",
            "k_T read at the ambient (linear between rows)",
            f"{label_t} = {_num(temp_c)} °C, column {col}",
            float(row["factor_temp"]),
            "",
            _source(name, _bracket(t["temp_c"], temp_c)),
        )
    )
    if env["env"] != "air":
        name = "iec60364_5_52_2009_b52_16_soil_resistivity.csv"
        t = load_table(name)
        col = "duct" if env["env"] == "D1" else "direct"
        rho = env["soil_k_m_w"]
        beyond = rho > float(t["soil_k_m_w"][-1])
        steps.append(
            Step(
                "Soil factor kS",
                "k_S read at ρ (linear between rows; beyond 3 K·m/W: k_S(3) · √(3/ρ), derived)",
                f"ρ = {_num(rho)} K·m/W, column {col}" + (" (beyond the table)" if beyond else ""),
                float(row["factor_soil"]),
                "",
                _source(name, _bracket(t["soil_k_m_w"], rho)),
            )
        )
        de = dp.duct_od_m if env["env"] == "D1" else dp.cable_od_m
        ref = ampacity.reference_condition("depth_m")
        steps.append(
            Step(
                "Depth factor kD",
                "k_D = min(1, √(arcosh(2·L_ref/D_e) / arcosh(2·L/D_e)))",
                f"min(1, √(arcosh(2 × {_num(ref)} / {_num(de)}) / arcosh(2 × "
                f"{_num(env['depth_m'])} / {_num(de)})))",
                float(row["factor_depth"]),
                "",
                "derived from IEC 60287-2-1 (Ed.2 2015) T4 (from memory), calc.ampacity."
                "depth_factor; L_ref: "
                + _source("iec60364_5_52_2009_reference_conditions.csv")
                + "; D_e: "
                + _source("design_defaults.csv"),
            )
        )
        name = (
            "iec60364_5_52_2009_b52_19_group_duct.csv"
            if env["env"] == "D1"
            else "iec60364_5_52_2009_b52_18_group_direct.csv"
        )
        t = load_table(name)
        count = float(row["group_count"])
        rows, note = _count_row(t["circuits"], count)
        steps.append(
            Step(
                "Grouping factor kG",
                "k_G read at the cable sets in the segment and the clear spacing",
                f"{_num(count)} cable sets, spacing {_num(env['spacing_m'])} m{note}",
                float(row["factor_group"]),
                "",
                _source(name, rows),
            )
        )
    else:
        for label, col in (("Soil factor kS", "factor_soil"), ("Depth factor kD", "factor_depth")):
            steps.append(Step(label, "not applicable in air", "–", float(row[col]), "", "–"))
        name = "iec60364_5_52_2009_b52_17_group_air.csv"
        t = load_table(name)
        count = float(row["group_count"])
        arrangement = design.air_arrangement[kind]
        rows, note = _count_row(t["circuits"], count, t[arrangement], float(row["factor_group"]))
        steps.append(
            Step(
                "Grouping factor kG",
                "k_G read at the circuits sharing the stretch and the arrangement",
                f"{_num(max(count, 1.0))} circuit(s), arrangement {arrangement}{note}",
                float(row["factor_group"]),
                "",
                _source(name, rows),
            )
        )
    k = [float(row[c]) for c in ("factor_temp", "factor_soil", "factor_depth", "factor_group")]
    steps.append(
        Step(
            "Derating k",
            "k = k_T · k_S · k_D · k_G",
            " × ".join(_num(v, 4) for v in k),
            float(row["derating"]),
            "",
            "schedule column derating",
        )
    )
    steps.append(
        Step(
            "Capacity Iz",
            "I_z = I_t · k · p",
            f"{_num(float(row['ampacity_base_a']))} × {_num(float(row['derating']), 4)} × "
            f"{parallel} = "
            f"{_num(float(row['ampacity_base_a']) * float(row['derating']) * parallel)}",
            float(row["ampacity_a"]),
            "A",
            "schedule column ampacity_a",
        )
    )
    steps.append(
        Step(
            "Utilisation",
            "u = I_d / I_z",
            f"{_num(float(row['design_current_a']))} / {_num(float(row['ampacity_a']))}",
            float(row["utilisation"]),
            "",
            "schedule column utilisation",
        )
    )
    return steps


def _drop_steps(row: pd.Series, segments: pd.DataFrame, design: DesignConfig) -> list[Step]:
    kind = row["kind"]
    code = _KIND_CODE[kind]
    dp = design_params(design)
    rs = calc.get_rules(design.values["rules"])
    env = _environment(row, segments)["env"]
    size = float(row["size_mm2"])
    material, insulation = str(row["material"]), str(row["insulation"])
    p = int(row["parallel"])
    poles = int(row["conductors"]) // p
    phases = 0 if kind != "ac" else (3 if poles == 3 else 1)
    theta = float(row["conductor_temp_c"])
    theta_max = rs.theta_max_c(insulation, "air" if env == "air" else "buried")
    temps = "insulation_temperatures.csv"
    steps: list[Step] = []
    if dp.conductor_temp == "max":
        steps.append(
            Step(
                "Conductor temperature θ",
                "θ = θ_max of the insulation in the governing environment (conductor_temp = max)",
                f"{insulation}, {'air' if env == 'air' else 'buried'}: {_num(theta_max)} °C",
                theta,
                "°C",
                _source(temps, _rows(temps, insulation=insulation)),
            )
        )
    else:
        steps.append(
            Step(
                "Conductor temperature θ",
                "θ = θ_amb + (θ_max − θ_amb) · (I / I_z)² ≤ θ_max (conductor_temp = loading)",
                f"θ_max = {_num(theta_max)} °C, I = {_num(float(row['operating_current_a']))} A, "
                f"I_z = {_num(float(row['ampacity_a']))} A",
                theta,
                "°C",
                "calc.vdrop.conductor_temp_c (common practice); "
                + _source(temps, _rows(temps, insulation=insulation)),
            )
        )
    r20 = float(rs.r20_ohm_km(code, material, np.array([size]))[0])
    name = "iec60228_2004_conductor_resistance.csv"
    cls, coat = (5, "tinned") if kind == "string" else (2, "plain")
    steps.append(
        Step(
            "Resistance at 20 °C R20",
            "R20 (maximum d.c. resistance)",
            f"{_num(size)} mm² {material}, class {cls}, {coat}",
            r20,
            "Ω/km",
            _source(
                name,
                _rows(
                    name, material=material, conductor_class=float(cls), coating=coat, size_mm2=size
                ),
            ),
        )
    )
    alpha = resistance.alpha20_per_k(material)
    r_theta = float(resistance.r_at_temp_ohm_km(r20, theta, material))
    mat = "iec60287_1_1_conductor_material.csv"
    steps.append(
        Step(
            "Resistance at θ",
            "R_θ = R20 · (1 + α20 · (θ − 20))",
            f"{_num(r20)} × (1 + {alpha:g} × ({_num(theta)} − 20))",
            r_theta,
            "Ω/km",
            _source(mat, _rows(mat, material=material)),
        )
    )
    r = r_theta
    x = 0.0
    pf = 1.0
    if phases:
        fac = float(
            rs.ac_resistance_factor(
                np.array([size]), material, np.array([r_theta]), dp.frequency_hz,
                np.array([phases])
            )[0]
        )  # fmt: skip
        r = r_theta * fac
        steps.append(
            Step(
                "AC resistance R",
                "R = R_θ · (1 + y_s + y_p)",
                f"{_num(r_theta)} × {_num(fac)}  ({_num(dp.frequency_hz)} Hz, "
                + ("trefoil touching" if phases == 3 else "two cables touching")
                + ")",
                r,
                "Ω/km",
                "IEC 60287-1-1 (Ed.2.1 2014) 2.1, calc.rules.iec.ac_resistance_factor; k_s, k_p: "
                + _source("iec60287_1_1_table2_skin_proximity.csv")
                + "; spacing: "
                + _source("lv_single_core_xlpe_cable_geometry.csv"),
            )
        )
        x = float(rs.reactance_ohm_km(np.array([size]), insulation, phases)[0])
        xname = "bs7671_appendix4_reactance.csv"
        t = load_table(xname)
        ins_rows = t["insulation"] == ("PVC" if insulation == "PVC" else "XLPE")
        mask = ins_rows & _bracket(np.where(ins_rows, t["size_mm2"], np.nan), size)
        col = "x_3ph" if phases == 3 else "x_1ph"
        steps.append(
            Step(
                "Reactance X",
                "X = x_3ph / √3 (three-phase) or x_1ph / 2 (single-phase), mV/A/m = Ω/km",
                f"{_num(size)} mm², column {col}",
                x,
                "Ω/km",
                _source(xname, mask),
            )
        )
        pf = float(row["power_factor"])
        steps.append(
            Step(
                "Power factor cos φ",
                "cos φ, sin φ = √(1 − cos² φ)",
                f"sin φ = {_num(math.sqrt(1 - pf * pf), 4)}",
                pf,
                "",
                "schedule column power_factor",
            )
        )
    length = float(row["cable_m"])
    i_op = float(row["operating_current_a"])
    if phases == 0:
        formula = "ΔU = 2 · L · I · R / p"
        subst = f"2 × {_num(length / 1e3)} km × {_num(i_op)} A × {_num(r)} Ω/km / {p}"
    else:
        b = "√3" if phases == 3 else "2"
        formula = f"ΔU = {b} · L · I · (R cos φ + X sin φ) / p"
        sin = math.sqrt(1 - pf * pf)
        subst = (
            f"{b} × {_num(length / 1e3)} km × {_num(i_op)} A × ({_num(r)} × {_num(pf, 4)} + "
            f"{_num(x)} × {_num(sin, 4)}) Ω/km / {p}"
        )
    subst += f" = {_num(float(vdrop_v(length, i_op, r, x, pf, phases, p)))}"
    steps.append(
        Step(
            "Voltage drop ΔU",
            formula,
            subst,
            float(row["vdrop_v"]),
            "V",
            "Ohm's law, IEC 60364-5-52:2009 Annex G (G.52.2) with R at θ; L = cable_m, "
            "I = operating_current_a",
        )
    )
    u = float(row["voltage_v"])
    steps.append(
        Step(
            "Voltage drop ΔU %",
            "ΔU % = 100 · ΔU / U",
            f"100 × {_num(float(row['vdrop_v']))} / {_num(u)}",
            float(row["vdrop_pct"]),
            "%",
            "schedule column vdrop_pct; U = voltage_v (d.c. Vmp, a.c. U)",
        )
    )
    limit = float(design.drop_pct[kind])
    steps.append(
        Step(
            "Drop limit",
            "ΔU % ≤ the kind's limit (feeders: also what dc_total leaves)",
            f"{_num(float(row['vdrop_pct']))} % of {_num(limit)} % = "
            f"{100 * float(row['vdrop_pct']) / limit:.1f} % of the limit",
            limit,
            "%",
            f"design.drop_pct.{kind}",
        )
    )
    if kind != "ac":
        total = float(design.drop_pct["dc_total"])
        steps.append(
            Step(
                "Cumulative d.c. drop",
                "string + sub-array + array drop on the worst path ≤ dc_total",
                f"{_num(float(row['vdrop_total_pct']))} % ≤ {_num(total)} %",
                float(row["vdrop_total_pct"]),
                "%",
                "schedule column vdrop_total_pct; design.drop_pct.dc_total",
            )
        )
    n = 3 if phases == 3 else 2
    steps.append(
        Step(
            "Loss P",
            "P = n · I² · R · L / p",
            f"{n} × {_num(i_op)}² A² × {_num(r)} Ω/km × {_num(length / 1e3)} km / {p} = "
            f"{_num(float(loss_w(i_op, length, r, phases, p)))}",
            float(row["loss_w"]),
            "W",
            "Joule's law, calc.losses.loss_w; schedule column loss_w",
        )
    )
    steps.append(
        Step(
            "Annual loss estimate",
            "E = P · h_loss / 1000",
            f"{_num(float(row['loss_w']))} W × {_num(float(design.values['loss_hours_h']))} h "
            "/ 1000",
            float(row["energy_loss_kwh"]),
            "kWh",
            "design.loss_hours_h (common practice); schedule column energy_loss_kwh",
        )
    )
    return steps


def _protection_steps(row: pd.Series, design: DesignConfig) -> list[Step]:
    kind = row["kind"]
    iz = float(row["ampacity_a"])
    i_d = float(row["design_current_a"])
    steps = [
        Step(
            "Capacity check",
            "I_z ≥ I_d",
            f"{_num(iz)} ≥ {_num(i_d)}: {'passes' if iz >= i_d * (1 - 1e-9) else 'FAILS'}",
            str(row["status"]),
            "",
            "schedule column status",
        )
    ]
    if kind == "ac" and pd.notna(row["ac_breaker_a"]):
        device = design.values["ac_breaker_device"]
        in_a = float(row["ac_breaker_a"])
        i2 = protection.i2_factor(device) * in_a
        ib = float(row["operating_current_a"])
        chk = protection.overload_check([ib], [in_a], [iz], [i2])
        coord = "iec60364_4_43_2008_433_1_coordination.csv"
        k145 = float(load_table(coord)["value"][_rows(coord, name="i2_max_x_iz")][0])
        ok = bool(chk.ok[0])
        steps.append(
            Step(
                "Overload protection",
                f"I_b ≤ I_n ≤ I_z and I_2 ≤ {_num(k145)} · I_z (IEC 60364-4-43:2008 433.1)",
                f"{_num(ib)} ≤ {_num(in_a)} ≤ {_num(iz)}; {_num(i2)} ≤ {_num(k145)} × {_num(iz)}"
                f" = {_num(k145 * iz)}; {row['protection']}",
                "passes" if ok else "FAILS",
                "",
                "calc.protection.overload_check; schedule column protection",
            )
        )
        steps += _short_circuit_steps(row, design)
    else:
        string = kind == "string"
        fuse_col = "fuse_a" if string else "array_fuse_a"
        fuse = float(row[fuse_col]) if pd.notna(row[fuse_col]) else math.nan
        isc = float(row["isc_design_a"])
        lo = pv.pv_rule("fuse_min_x_isc" if string else "array_fuse_min_x_isc")
        hi = pv.pv_rule("fuse_max_x_isc" if string else "array_fuse_max_x_isc")
        rules = "iec62548_2016_pv_dc_rules.csv"
        names = ("fuse_min_x_isc", "fuse_max_x_isc") if string else (
            "array_fuse_min_x_isc", "array_fuse_max_x_isc")  # fmt: skip
        mask = _rows(rules, name=names[0]) | _rows(rules, name=names[1])
        if np.isfinite(fuse):
            subst = (
                f"{_num(lo)} × {_num(isc)} = {_num(lo * isc)} ≤ I_n = {_num(fuse)} ≤ "
                f"{_num(hi)} × {_num(isc)} = {_num(hi * isc)}"
                + (" (and ≤ the module's maximum series fuse)" if string else "")
                + f"; {row['protection']}"
            )
        else:
            subst = str(row["protection"])
        if not string:
            subst += f"; backfeed {_num(float(row['backfeed_a']))} A, I_z {_num(iz)} A"
        steps.append(
            Step(
                "Protection",
                ("string" if string else "array / sub-array")
                + f" gPV fuse where needed: {_num(lo)} · I_SC,d ≤ I_n ≤ {_num(hi)} · I_SC,d",
                subst,
                fuse if np.isfinite(fuse) else "none",
                "A" if np.isfinite(fuse) else "",
                _source(rules, mask) + "; schedule columns protection, " + fuse_col,
            )
        )
    return steps


def _short_circuit_steps(row: pd.Series, design: DesignConfig) -> list[Step]:
    """The adiabatic withstand of an AC circuit (IEC 60364-4-43:2008 434.5.2), when the design
    gives a fault level: S_min = I_k · √t / k, k of Table 43A for the cable's material,
    insulation and size; each conductor carries the whole fault current (conservative)."""
    fault_ka, clear_s = float(design.values["fault_ka"]), float(design.values["clear_s"])
    if not (math.isfinite(fault_ka) and math.isfinite(clear_s)) or pd.isna(row["sc_min_mm2"]):
        return []
    size = float(row["size_mm2"])
    rules = calc.get_rules(design.values["rules"])
    k = float(rules.k_adiabatic(str(row["material"]), str(row["insulation"]), np.array([size]))[0])
    s_min = fault_ka * 1e3 * math.sqrt(clear_s) / k
    ok = size >= s_min * (1 - 1e-9)
    return [
        Step(
            "Short-circuit withstand",
            "S ≥ S_min = I_k · √t / k (IEC 60364-4-43:2008 434.5.2, adiabatic)",
            f"{_num(fault_ka * 1e3)} × √{_num(clear_s)} / {_num(k)} = {_num(s_min)} mm² "
            f"{'≤' if ok else '>'} {_num(size)} mm²: {'passes' if ok else 'FAILS'}",
            s_min,
            "mm²",
            _source("iec60364_4_43_2008_table_43a_k.csv") + "; schedule column sc_min_mm2",
        )
    ]


@dataclass(frozen=True)
class RuleTexts:
    """What a worked calculation takes from its rule set: ``steps(row, segments, circuits,
    design)`` (every step of one circuit), each kind's section ``titles``, which values are
    ``read`` from calc's tables rather than the schedule, and the ``review`` note."""

    steps: Callable[[pd.Series, pd.DataFrame, pd.DataFrame, DesignConfig], list[Step]]
    titles: dict[str, str]
    read: str
    review: str


def _iec_steps(
    row: pd.Series, segments: pd.DataFrame, circuits: pd.DataFrame, design: DesignConfig
) -> list[Step]:
    return (
        _design_current_steps(row, design)
        + _capacity_steps(row, segments, design)
        + _drop_steps(row, segments, design)
        + _protection_steps(row, design)
    )


#: the IEC rule set's worked calculation
IEC_TEXTS = RuleTexts(
    steps=_iec_steps,
    titles={k: f"{label} circuit" for k, label in KIND_LABELS.items()},
    read="R20, R at θ, AC resistance and reactance",
    review=(
        "routeplan is a design aid: check with local codes and have the design reviewed by a "
        "qualified, licensed person."
    ),
)


def rule_texts(rules: str) -> RuleTexts:
    """The worked calculation of a rule set (``design.values["rules"]``); a rule set of calc
    without one raises KeyError (a test asks it of every rule set)."""
    from routeplan.report.worked_nec import NEC_TEXTS  # it builds on this module's steps

    return {"iec": IEC_TEXTS, "nec": NEC_TEXTS}[rules]


def _worked_circuit(
    row: pd.Series,
    reason: str,
    segments: pd.DataFrame,
    design: DesignConfig,
    circuits: pd.DataFrame | None = None,
) -> WorkedCircuit:
    frame = row.to_frame().T if circuits is None else circuits
    steps = rule_texts(design.values["rules"]).steps(row, segments, frame, design)
    return WorkedCircuit(str(row["kind"]), str(row["circuit_id"]), reason, tuple(steps))


# --------------------------------------------------------------------------------------------
# HTML


_STYLE = """<style>
.rp-worked table{border-collapse:collapse;width:100%;font-size:9pt;margin:0 0 1em 0}
.rp-worked th,.rp-worked td{border:1px solid #999;padding:2px 4px;vertical-align:top;
text-align:left}
.rp-worked table{table-layout:fixed}
.rp-worked td{overflow-wrap:anywhere}
.rp-worked td.rp-value{text-align:right;font-weight:bold}
.rp-worked td.rp-source{font-size:7.5pt;color:#333}
.rp-worked h3,.rp-worked h3+p{break-after:avoid;page-break-after:avoid}
.rp-worked tr{break-inside:avoid;page-break-inside:avoid}
@media print{.rp-worked th{background:#eee !important;-webkit-print-color-adjust:exact}}
</style>"""


def _html(worked: list[WorkedCircuit], rules: str = "iec") -> str:
    e = html.escape
    texts = rule_texts(rules)
    parts = ['<div class="rp-worked">', _STYLE]
    if not worked:
        parts.append("<p>No circuits: nothing to work out.</p>")
    for w in worked:
        parts.append('<section class="rp-worked-circuit">')
        parts.append(f"<h3>{e(texts.titles[w.kind])} {e(w.circuit_id)}</h3>")
        parts.append(f"<p>Chosen for the {e(w.reason)}.</p>")
        parts.append(
            '<table><colgroup><col style="width:12%"><col style="width:20%">'
            '<col style="width:24%"><col style="width:10%"><col style="width:5%">'
            '<col style="width:29%"></colgroup>'
            "<thead><tr><th>step</th><th>formula</th><th>numbers</th><th>value</th>"
            "<th>unit</th><th>source</th></tr></thead><tbody>"
        )
        for s in w.steps:
            parts.append(
                f'<tr data-step="{e(s.label)}"><td>{e(s.label)}</td><td>{e(s.formula)}</td>'
                f'<td>{e(s.substituted)}</td><td class="rp-value">{e(s.text)}</td>'
                f'<td>{e(s.unit)}</td><td class="rp-source">{e(s.source)}</td></tr>'
            )
        parts.append("</tbody></table></section>")
    parts.append(
        f"<p><small>Values are the engine's, from the cable schedule, except {texts.read}, "
        f"which are read from calc's tables as the engine reads them. {texts.review}"
        "</small></p></div>"
    )
    return "\n".join(parts)


def worked_circuit(
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    design: DesignConfig,
    circuit_id: str,
    reason: str = "reviewer's choice",
) -> WorkedCircuit:
    """The worked calculation of any one circuit of the schedule (KeyError if there is none).

    Parameters are those of :func:`worked_calculation`; ``reason`` is shown as why it was
    chosen.
    """
    where = np.flatnonzero(circuits["circuit_id"].astype(str).to_numpy() == circuit_id)
    if where.size == 0:
        raise KeyError(circuit_id)
    return _worked_circuit(circuits.iloc[int(where[0])], reason, segments, design, circuits)


def worked_html(worked: list[WorkedCircuit] | tuple[WorkedCircuit, ...], rules: str = "iec") -> str:
    """The HTML fragment of some worked circuits (as :func:`worked_calculation` gives it)."""
    return _html(list(worked), rules)


def worked_calculation(
    circuits: pd.DataFrame, segments: pd.DataFrame, design: DesignConfig
) -> WorkedCalculation:
    """Worked calculations of the governing circuits of a finished plan.

    Parameters
    ----------
    circuits : pandas.DataFrame
        The cable schedule (``Plan.circuits``, columns of ``cable_schedule.csv``).
    segments : pandas.DataFrame
        The trench schedule (``Plan.segments``).
    design : DesignConfig
        The design settings the plan ran with (``Plan.design``).

    Returns
    -------
    WorkedCalculation
        The circuits chosen by :func:`governing_circuits`, each with its steps, and the HTML
        fragment (one ``<section>`` per circuit, a table of steps with formula, numbers, value,
        unit and source).
    """
    if design.values["rules"] not in ("iec", "nec"):  # the steps cite IEC or NEC tables only
        rules = html.escape(str(design.values["rules"]))
        return WorkedCalculation(
            (),
            "<p>Worked calculations are given for rules 'iec' and 'nec' only (rules "
            f"'{rules}').</p>",
        )
    worked = [
        _worked_circuit(circuits.iloc[i], reason, segments, design, circuits)
        for i, reason in governing_circuits(circuits, design)
    ]
    return WorkedCalculation(tuple(worked), _html(worked, design.values["rules"]))
