"""Worked calculations under ``rules = "nec"`` (NFPA 70 NEC 2023), step by step.

The NEC counterpart of the IEC steps in :mod:`routeplan.report.worked`: for a PV source circuit
(``string``), a PV output circuit (``array`` / ``subarray``) and an inverter output circuit
(``ac``) it lays out the 690.8(A) maximum current, the two conditions of 690.8(B) — (1)
1.25 × I_max against the uncorrected table value in the 110.14(C) termination column, (2) I_max
against the ampacity after the 310.15(B)(1) ambient correction and the Table 310.15(C)(1)
adjustment for the current-carrying conductors — which one governs, the overcurrent device
(690.9(B), 240.6(A)) and its 240.4 check, and the voltage drop with Chapter 9 Table 8 (d.c.) or
Table 9 (a.c.) impedance. The engine's results come from the cable schedule; the table values
(the Table 310.16 / 310.17 cells, the factors, the resistances) from calc's public NEC functions
(:mod:`calc.nec`), never a second implementation of a rule. Sizes are AWG / kcmil labels; with
``design.units = "us"`` lengths are given in feet beside metres.

routeplan is a design aid; the NEC as adopted by the authority having jurisdiction, the equipment
listings and the engineer of record govern.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

import calc
from calc.losses import loss_w
from calc.nec import ampacity as nec_amp
from calc.nec import impedance as nec_z
from calc.nec import protection as nec_prot
from calc.nec import pv as nec_pv
from calc.nec.sizes import foot_m, size_label
from calc.tables import load_table
from calc.vdrop import vdrop_v
from routeplan.config import DesignConfig
from routeplan.pipeline import design_params, governing_condition
from routeplan.report.worked import RuleTexts, Step, _rows, _source
from routeplan.report.worked import _num as n

__all__ = ["KIND_LABELS_NEC", "NEC_TEXTS", "governing_condition", "nec_steps"]

#: the kinds as NEC 690 names them
KIND_LABELS_NEC: dict[str, str] = {
    "string": "PV source circuit",
    "subarray": "PV output circuit (sub-array)",
    "array": "PV output circuit",
    "ac": "inverter output circuit",
}

_RULES = "nec_2023_rules.csv"
_T16 = "nec_2023_table_310_16_ampacity.csv"
_T17 = "nec_2023_table_310_17_free_air.csv"
_AMB = "nec_2023_table_310_15_b_1_ambient.csv"
_ADJ = "nec_2023_table_310_15_c_1_adjustment.csv"
_T8 = "nec_2023_chapter9_table8_conductors.csv"
_T8A = "nec_2023_chapter9_table8_temperature.csv"
_T9 = "nec_2023_chapter9_table9_ac_impedance.csv"
_R240_6 = "nec_2023_240_6_a_standard_ratings.csv"
_R240_4D = "nec_2023_240_4_d_small_conductors.csv"
#: the strings in parallel, as the schedule's protection text gives them
_PARALLEL = re.compile(r"([\d.]+) string(?:s|\(s\))? in parallel")
_REL = 1e-9


def _rule_src(*names: str) -> str:
    mask = np.zeros(len(load_table(_RULES)), bool)
    for name in names:
        mask |= _rows(_RULES, name=name)
    return _source(_RULES, mask)


def _src9(lab: str, column: str) -> str:
    """Table 9's source (its header's first sentence holds "a.c.", which the shared helper
    would cut), with the tag of the row read."""
    t = load_table(_T9)
    tag = ", ".join(sorted(set(t["tag"][t["size_label"] == lab].tolist()))) or "–"
    return (
        "NFPA 70 NEC 2023, Chapter 9, Table 9 (a.c. resistance and reactance, 600 V cables, "
        f"3-phase, 60 Hz, 75 °C, three single conductors in conduit), column {column} "
        f"[calc/data/{_T9}; tag: {tag}]"
    )


def _label(size_mm2: float) -> str:
    return str(size_label(size_mm2))


def _length(m: float, us: bool) -> str:
    """A length as the report gives it: metres, and feet with ``units = "us"``."""
    return f"{n(m / foot_m())} ft ({n(m)} m)" if us else f"{n(m)} m"


#: the table of condition (1), the terminations: Table 310.16 in every environment, also for a
#: conductor in free air (NEC 2023 110.14(C)(1), as the engine takes it)
_TERMINAL_LOC = "raceway"


def _location(row: pd.Series) -> str:
    """The table of the governing stretch (condition 2): ``"raceway"`` (Table 310.16: raceway,
    cable or earth) or ``"free_air"`` (Table 310.17)."""
    gov = str(row["governing"])
    in_trench = gov in str(row["trench_segments"]).split(";") if gov else False
    return "raceway" if in_trench else "free_air"


# --------------------------------------------------------------------------------------------
# 690.8(A) maximum current


def _current_steps(row: pd.Series, circuits: pd.DataFrame, design: DesignConfig) -> list:
    kind = row["kind"]
    k = nec_amp.nec_rule("source_isc_factor")
    steps = []
    if kind == "string":
        isc = float(row["isc_design_a"])
        steps.append(
            Step("Module Isc", "I_SC (bifacial I_SC where the design gives one)",
                 "schedule column isc_design_a", isc, "A",
                 "datasheet / calc.protection.bifacial_isc_a; schedule column isc_design_a")
        )  # fmt: skip
        i_max = float(nec_pv.source_circuit_max_current_a([isc])[0])
        steps.append(
            Step("Maximum current I_max", "I_max = 1.25 · I_SC (690.8(A)(1)(a)(1))",
                 f"{n(k)} × {n(isc)}", i_max, "A",
                 "NEC 2023 690.8(A)(1)(a)(1), calc.nec.pv.source_circuit_max_current_a; "
                 + _rule_src("source_isc_factor"))
        )  # fmt: skip
        fuse = float(row["fuse_a"])
        if not np.isfinite(fuse):
            m = _PARALLEL.search(str(row["protection"]))
            s_par = float(m.group(1)) if m else 1.0
            value = max(i_max, (s_par - 1.0) * i_max)
            steps.append(
                Step("Conductor current (unfused)",
                     "max(I_max, (n − 1) · I_max): the other parallel source circuits feed a "
                     "fault (690.9(A) exception)",
                     f"max({n(i_max)}, ({n(s_par)} − 1) × {n(i_max)})", value, "A",
                     "NEC 2023 690.9(A), calc.rules.nec.NecRules.string_design_current_a")
            )  # fmt: skip
    elif kind in ("array", "subarray"):
        isc = float(row["isc_design_a"])
        below = circuits.loc[
            (circuits["to_id"].astype(str) == str(row["from_id"]))
            & circuits["kind"].isin(["string", "subarray"])
            & (circuits["inverter_id"].astype(str) == str(row["inverter_id"]))
        ]
        if len(below) and np.isclose(below["isc_design_a"].sum(), isc, rtol=1e-9):
            src_max = nec_pv.source_circuit_max_current_a(below["isc_design_a"].to_numpy(float))
            i_max = float(nec_pv.output_circuit_max_current_a(src_max, np.zeros(len(below)))[0])
            subst = (
                f"Σ of {len(below)} circuits' 1.25 × I_SC = {n(k)} × {n(isc)} A "
                f"({', '.join(below['circuit_id'].astype(str).head(4))}"
                + (", …" if len(below) > 4 else "")
                + ")"
            )
        else:
            i_max = float(nec_pv.source_circuit_max_current_a([isc])[0])
            subst = f"{n(k)} × Σ I_SC {n(isc)} A"
        steps.append(
            Step("Σ Isc of the source circuits", "Σ I_SC of the source circuits it collects",
                 "schedule column isc_design_a", isc, "A", "schedule column isc_design_a")
        )  # fmt: skip
        steps.append(
            Step("Maximum current I_max", "I_max = Σ 1.25 · I_SC,i (690.8(A)(2))", subst, i_max,
                 "A", "NEC 2023 690.8(A)(2), calc.nec.pv.output_circuit_max_current_a; "
                 + _rule_src("source_isc_factor"))
        )  # fmt: skip
        bf = float(row["backfeed_a"]) if pd.notna(row["backfeed_a"]) else 0.0
        if bf > 0:
            fuse = float(row["array_fuse_a"]) if pd.notna(row["array_fuse_a"]) else math.nan
            steps.append(
                Step("Backfeed", "Σ 1.25 · I_SC of the other circuits on the inverter input",
                     "schedule column backfeed_a"
                     + (f"; an output-circuit device of {n(fuse)} A is fitted"
                        if np.isfinite(fuse) else "; no device: the conductor carries it"),
                     bf, "A", "NEC 2023 690.9(A), calc.rules.nec.NecRules.backfeed_a")
            )  # fmt: skip
    else:
        ib = float(row["operating_current_a"])
        steps.append(
            Step("Maximum current I_max",
                 "inverter continuous output current rating, else S / (√3 · U) (690.8(A)(3))",
                 "schedule column operating_current_a", ib, "A",
                 "NEC 2023 690.8(A)(3) / 705.28 (from memory), calc.pv.ac_max_current_a")
        )  # fmt: skip
    steps.append(
        Step("Design current (schedule)", "I_max as the conductor must carry it",
             "schedule column design_current_a", float(row["design_current_a"]), "A",
             "cable schedule")
    )  # fmt: skip
    return steps


# --------------------------------------------------------------------------------------------
# 690.8(B): the two conditions


def _capacity_steps(row: pd.Series, design: DesignConfig) -> list:
    kind = row["kind"]
    rs = calc.get_rules("nec")
    dp = design_params(design)
    size = float(row["size_mm2"])
    lab = _label(size)
    material, insulation = str(row["material"]), str(row["insulation"])
    rating = rs.insulation_rating_c(insulation)
    term_c = rs.terminal_c(dp)
    col1 = min(rating, term_c)
    p = int(row["parallel"])
    i_des = float(row["design_current_a"])
    gov = str(row["governing"])
    loc2 = _location(row)
    loc1 = _TERMINAL_LOC
    table = {"raceway": ("Table 310.16", _T16), "free_air": ("Table 310.17", _T17)}
    steps = [
        Step("Governing stretch", "the stretch with the lowest ampacity after correction and "
             "adjustment (310.14(A)(2): the lower ampacity governs, but for a short stretch)",
             f"{gov}: " + ("in the ground, Table 310.16 (raceway, cable or earth)"
                           if loc2 == "raceway" else "in air, Table 310.17 (free air)"),
             gov, "", "schedule column governing")
    ]  # fmt: skip

    # condition (1)
    req1 = float(rs.terminal_required_a([i_des])[0])
    k1 = nec_amp.nec_rule("conductor_factor")
    steps.append(
        Step("Condition (1): required", "1.25 · I_max, before correction and adjustment "
             "(690.8(B)(1))", f"{n(k1)} × {n(i_des)}", req1, "A", _rule_src("conductor_factor"))
    )  # fmt: skip
    t1_name, t1_file = table[loc1]
    cell1 = float(nec_amp.table_ampacity_a([size], material, col1, loc1)[0])
    term_src = (
        f"design.terminal_temp_c = {term_c}"
        if dp.terminal_temp_c is not None
        else f"terminal_temp_c not set: {n(nec_amp.nec_rule('terminal_default_c'))} °C ("
        + _rule_src("terminal_default_c")
        + ")"
    )
    steps.append(
        Step("Condition (1): terminal column", "I_t at min(insulation, termination) °C, "
             "uncorrected (110.14(C)), × p sets",
             f"{t1_name}, {lab} {material}, {col1} °C column (insulation {rating} °C, "
             f"terminations {term_c} °C) = {n(cell1)} A × {p}",
             cell1 * p, "A",
             _source(t1_file, _rows(t1_file, material=material, size_label=lab))
             + "; " + term_src)
    )  # fmt: skip
    ratio1 = req1 / (cell1 * p)
    steps.append(
        Step("Condition (1) ratio", "1.25 · I_max / I_t,terminal", f"{n(req1)} / {n(cell1 * p)}",
             ratio1, "", "690.8(B)(1)")
    )  # fmt: skip

    # condition (2)
    t2_name, t2_file = table[loc2]
    cell2 = float(nec_amp.table_ampacity_a([size], material, rating, loc2)[0])
    steps.append(
        Step("Condition (2): table ampacity", "I_t at the insulation's rating, ≤ 3 current-"
             "carrying conductors, 30 °C",
             f"{t2_name}, {lab} {material}, {rating} °C column ({insulation})", cell2, "A",
             _source(t2_file, _rows(t2_file, material=material, size_label=lab))
             + "; schedule column ampacity_base_a")
    )  # fmt: skip
    if loc2 == "raceway":
        temp_c, what = dp.ground_temp_c, "earth temperature θ_ground"
    else:
        behind = kind == "string" and (gov.startswith("row run ") or gov == "air")
        use_row = behind and dp.row_air_temp_c is not None
        temp_c = dp.row_air_temp_c if use_row else dp.air_temp_c
        what = "air behind the modules" if use_row else "air temperature"
    f_amb = float(nec_amp.ambient_factor([temp_c], rating)[0])
    amb = load_table(_AMB)
    amb_mask = (
        amb["temp_max_c"]
        == amb["temp_max_c"][
            min(int(np.searchsorted(amb["temp_max_c"], math.ceil(temp_c))), len(amb) - 1)
        ]
    )
    steps.append(
        Step("Ambient correction F_T", "310.15(B)(1) table, 30 °C base, conductor rating column",
             f"{what} {n(temp_c)} °C ({n(temp_c * 9 / 5 + 32)} °F), {rating} °C column",
             f_amb, "", _source(_AMB, amb_mask) + "; schedule column factor_temp")
    )  # fmt: skip
    count = float(row["group_count"])
    spaced = loc2 == "free_air" and design.air_arrangement[kind] == "spaced"
    ccc = max(math.ceil(count), 1)
    f_adj = 1.0 if spaced else float(nec_amp.adjustment_factor([ccc])[0])
    adj = load_table(_ADJ)
    adj_mask = (
        adj["conductors_min"]
        == adj["conductors_min"][int(np.searchsorted(adj["conductors_min"], ccc, side="right")) - 1]
    )
    per_set = 3 if kind == "ac" and int(row["conductors"]) // p == 3 else 2
    steps.append(
        Step("Adjustment F_C", "Table 310.15(C)(1) by the current-carrying conductors sharing "
             "the stretch (" + str(per_set) + " per set; the trench's conductors as one bundle)",
             f"{ccc} current-carrying conductors"
             + (", spaced in air: not adjusted" if spaced else ""),
             f_adj, "", _source(_ADJ, adj_mask) + "; schedule columns group_count, factor_group")
    )  # fmt: skip
    amp2 = cell2 * f_amb * f_adj * p
    steps.append(
        Step("Ampacity I", "I = I_t · F_T · F_C · p (310.15(B), (C))",
             f"{n(cell2)} × {n(f_amb, 4)} × {n(f_adj, 4)} × {p} = {n(amp2)}",
             float(row["ampacity_a"]), "A", "schedule column ampacity_a")
    )  # fmt: skip
    ratio2 = i_des / float(row["ampacity_a"])
    steps.append(
        Step("Condition (2) ratio", "I_max / I", f"{n(i_des)} / {n(float(row['ampacity_a']))}",
             ratio2, "", "690.8(B)(2)")
    )  # fmt: skip
    cond = str(governing_condition([i_des], [float(row["ampacity_a"])], [req1], [cell1 * p])[0])
    which = (
        "(1) 1.25 × I_max in the terminal column"
        if cond == "690.8(B)(1)"
        else "(2) I_max after correction and adjustment"
    )
    steps.append(
        Step("Governing condition", "the larger of the two ratios governs the size",
             f"max({n(ratio1, 4)}, {n(ratio2, 4)}): {which}", cond, "",
             "NEC 2023 690.8(B); the engine's choice: calc.rules.nec.NecRules.terminal_capacity_a")
    )  # fmt: skip
    steps.append(
        Step("Utilisation", "u = the governing ratio", f"max({n(ratio1, 4)}, {n(ratio2, 4)})",
             float(row["utilisation"]), "", "schedule column utilisation")
    )  # fmt: skip
    return steps


# --------------------------------------------------------------------------------------------
# voltage drop and losses


def _drop_steps(row: pd.Series, design: DesignConfig) -> list:
    kind = row["kind"]
    rs = calc.get_rules("nec")
    dp = design_params(design)
    us = design.values.get("units", "si") == "us"
    ft = foot_m()
    size = float(row["size_mm2"])
    lab = _label(size)
    material = str(row["material"])
    p = int(row["parallel"])
    poles = int(row["conductors"]) // p
    phases = 0 if kind != "ac" else (3 if poles == 3 else 1)
    theta = float(row["conductor_temp_c"])
    rating = rs.insulation_rating_c(str(row["insulation"]))
    steps = [
        Step("Conductor temperature θ",
             "θ = the insulation's rating (conductor_temp = max)" if dp.conductor_temp == "max"
             else "θ = θ_amb + (θ_max − θ_amb) · (I / I_z)² (conductor_temp = loading)",
             f"{row['insulation']}: {rating} °C rating", theta, "°C",
             "schedule column conductor_temp_c; calc.vdrop.conductor_temp_c")
    ]  # fmt: skip
    r75 = float(nec_z.dc_resistance_ohm_km([size], material, 75.0)[0])
    col = {"Cu": "r_cu_ohm_kft", "Al": "r_al_ohm_kft"}[material]
    steps.append(
        Step("Table 8 resistance R75", "d.c. resistance of a stranded conductor at 75 °C",
             f"{lab} {material}, uncoated, {n(r75 * ft)} Ω/kft ÷ 0.3048", r75, "Ω/km",
             _source(_T8, _rows(_T8, size_label=lab)) + f"; column {col}")
    )  # fmt: skip
    alpha, t_ref = nec_z.table8_alpha_per_k(material)
    r_theta = float(nec_z.dc_resistance_ohm_km([size], material, theta)[0])
    steps.append(
        Step("Resistance at θ", "R_θ = R75 · (1 + α · (θ − 75)) (Table 8 note)",
             f"{n(r75)} × (1 + {alpha:g} × ({n(theta)} − {n(t_ref)}))", r_theta, "Ω/km",
             _source(_T8A, _rows(_T8A, material=material)))
    )  # fmt: skip
    r, x, pf = r_theta, 0.0, 1.0
    if phases:
        fac = float(rs.ac_resistance_factor(np.array([size]), material, np.array([r_theta]),
                                            dp.frequency_hz, np.array([phases]))[0])  # fmt: skip
        r = r_theta * fac
        rac9 = float(nec_z.ac_resistance_ohm_km([size], material, "pvc")[0])
        steps.append(
            Step("a.c. resistance R", "R = R_θ · max(1, R_ac,Table 9 / R_dc,Table 8) at 75 °C",
                 f"{n(r_theta)} × max(1, {n(rac9 * ft)} / {n(r75 * ft)}) = {n(r_theta)} × "
                 f"{n(fac)}", r, "Ω/km",
                 _src9(lab, f"r_{material.lower()}_pvc_ohm_kft")
                 + "; calc.rules.nec.NecRules.ac_resistance_factor")
        )  # fmt: skip
        x = float(nec_z.reactance_ohm_km([size], "pvc")[0])
        steps.append(
            Step("Reactance X_L", "Table 9, PVC conduit, 60 Hz", f"{lab}: {n(x * ft)} Ω/kft",
                 x, "Ω/km", _src9(lab, "xl_pvc_al_ohm_kft"))
        )  # fmt: skip
        pf = float(row["power_factor"])
        z = float(nec_z.effective_z_ohm_km([r], [x], pf)[0])
        sin = math.sqrt(1 - pf * pf)
        steps.append(
            Step("Effective Z", "Z = R cos θ + X_L sin θ (Table 9 note 2)",
                 f"{n(r)} × {n(pf, 4)} + {n(x)} × {n(sin, 4)}", z, "Ω/km",
                 "NEC 2023 Chapter 9 Table 9 note 2, calc.nec.impedance.effective_z_ohm_km; "
                 "cos θ = schedule column power_factor")
        )  # fmt: skip
    length = float(row["cable_m"])
    i_op = float(row["operating_current_a"])
    if us:
        l_txt, r_txt, x_txt = f"{n(length / ft / 1e3)} kft", f"{n(r * ft)}", f"{n(x * ft)}"
        unit = "Ω/kft"
    else:
        l_txt, r_txt, x_txt = f"{n(length / 1e3)} km", n(r), n(x)
        unit = "Ω/km"
    if phases == 0:
        formula = "ΔU = 2 · L · I · R / p"
        subst = f"2 × {l_txt} × {n(i_op)} A × {r_txt} {unit} / {p}"
    else:
        b = "√3" if phases == 3 else "2"
        formula = f"ΔU = {b} · L · I · (R cos θ + X_L sin θ) / p"
        subst = (f"{b} × {l_txt} × {n(i_op)} A × ({r_txt} × {n(pf, 4)} + {x_txt} × "
                 f"{n(math.sqrt(1 - pf * pf), 4)}) {unit} / {p}")  # fmt: skip
    subst += f" = {n(float(vdrop_v(length, i_op, r, x, pf, phases, p)))}"
    steps.append(
        Step("Voltage drop ΔU", formula, subst, float(row["vdrop_v"]), "V",
             f"Ohm's law with R at θ; L = cable length {_length(length, us)}, I = "
             "operating_current_a; schedule column vdrop_v")
    )  # fmt: skip
    u = float(row["voltage_v"])
    steps.append(
        Step("Voltage drop ΔU %", "ΔU % = 100 · ΔU / U", f"100 × {n(float(row['vdrop_v']))} / "
             f"{n(u)}", float(row["vdrop_pct"]), "%",
             "schedule column vdrop_pct; U = voltage_v (d.c. Vmp, a.c. U)")
    )  # fmt: skip
    limit = float(design.drop_pct[kind])
    steps.append(
        Step("Drop limit", "ΔU % ≤ the kind's limit, a design choice (the NEC gives "
             "informational notes only, 210.19 / 215.2: common practice)",
             f"{n(float(row['vdrop_pct']))} % of {n(limit)} % = "
             f"{100 * float(row['vdrop_pct']) / limit:.1f} % of the limit",
             limit, "%", f"design.drop_pct.{kind}")
    )  # fmt: skip
    if kind != "ac":
        total = float(design.drop_pct["dc_total"])
        steps.append(
            Step("Cumulative d.c. drop", "source + output circuit drop on the worst path ≤ "
                 "dc_total", f"{n(float(row['vdrop_total_pct']))} % ≤ {n(total)} %",
                 float(row["vdrop_total_pct"]), "%",
                 "schedule column vdrop_total_pct; design.drop_pct.dc_total")
        )  # fmt: skip
    k = 3 if phases == 3 else 2
    steps.append(
        Step("Loss P", "P = n · I² · R · L / p",
             f"{k} × {n(i_op)}² A² × {n(r)} Ω/km × {n(length / 1e3)} km / {p} = "
             f"{n(float(loss_w(i_op, length, r, phases, p)))}",
             float(row["loss_w"]), "W", "Joule's law, calc.losses.loss_w; schedule column loss_w")
    )  # fmt: skip
    steps.append(
        Step("Annual loss estimate", "E = P · h_loss / 1000",
             f"{n(float(row['loss_w']))} W × {n(float(design.values['loss_hours_h']))} h / 1000",
             float(row["energy_loss_kwh"]), "kWh",
             "design.loss_hours_h (common practice); schedule column energy_loss_kwh")
    )  # fmt: skip
    return steps


# --------------------------------------------------------------------------------------------
# 690.9 / 240.6(A) device and 240.4


def _protection_steps(row: pd.Series, design: DesignConfig) -> list:
    kind = row["kind"]
    size = float(row["size_mm2"])
    lab = _label(size)
    material = str(row["material"])
    p = int(row["parallel"])
    i_des = float(row["design_current_a"])
    steps = []
    col = {"string": "fuse_a", "array": "array_fuse_a", "subarray": "array_fuse_a",
           "ac": "ac_breaker_a"}[kind]  # fmt: skip
    dev = float(row[col]) if pd.notna(row[col]) else math.nan
    if kind == "ac":
        i_basis, what = float(row["operating_current_a"]), "inverter output breaker"
    else:
        k = nec_amp.nec_rule("source_isc_factor")
        i_basis = k * float(row["isc_design_a"])
        what = "source-circuit fuse" if kind == "string" else "output-circuit device"
    k_ocpd = nec_amp.nec_rule("ocpd_factor")
    ratings = load_table(_R240_6)
    if np.isfinite(dev):
        pick = nec_prot.pv_ocpd([i_basis], fuses=kind != "ac")
        steps.append(
            Step("Overcurrent device", f"{what}: smallest 240.6(A) rating ≥ 1.25 · I_max "
                 "(690.9(B)" + (", ≤ the module's maximum series fuse)" if kind == "string"
                                else ")"),
                 f"{n(k_ocpd)} × {n(i_basis)} = {n(float(pick.min_a[0]))} A → "
                 f"{n(float(pick.rating_a[0]))} A; schedule: {n(dev)} A; {row['protection']}",
                 dev, "A", _source(_R240_6, ratings["rating_a"] == dev) + "; "
                 + _rule_src("ocpd_factor") + f"; schedule column {col}")
        )  # fmt: skip
        # 240.4 against the ampacity with the terminal limit
        loc1 = _TERMINAL_LOC
        rs = calc.get_rules("nec")
        col1 = min(
            rs.insulation_rating_c(str(row["insulation"])), rs.terminal_c(design_params(design))
        )
        term = float(nec_amp.table_ampacity_a([size], material, col1, loc1)[0]) * p
        amp = min(float(row["ampacity_a"]), term)
        ok = bool(nec_prot.conductor_protected([dev], [amp], [size], material)[0])
        nxt = float(nec_prot.next_standard_rating_a([amp])[0])
        lim = float(nec_prot.small_conductor_limit_a([size], material)[0])
        small = load_table(_R240_4D)
        steps.append(
            Step("Conductor protection (240.4)",
                 "I_n ≤ I, or I_n the next standard rating above I and ≤ 800 A (240.4(B)); "
                 "I_n ≤ the 240.4(D) limit of small conductors",
                 f"I = min({n(float(row['ampacity_a']))}, terminal {n(term)}) = {n(amp)} A; "
                 f"next rating above I {n(nxt)} A; {lab} {material} 240.4(D) limit "
                 + (f"{n(lim)} A" if np.isfinite(lim) else "none")
                 + f"; I_n {n(dev)} A",
                 "passes" if ok else "FAILS", "",
                 "calc.nec.protection.conductor_protected; "
                 + _source(_R240_4D, _rows(_R240_4D, material=material, size_label=lab)
                           if (small["size_label"] == lab).any() else None)
                 + "; " + _rule_src("next_size_up_max_a"))
        )  # fmt: skip
    else:
        steps.append(
            Step("Overcurrent device", f"{what} where required (690.9(A))",
                 str(row["protection"]), "none", "", "schedule column protection")
        )  # fmt: skip
    iz = float(row["ampacity_a"])
    steps.append(
        Step("Capacity check", "both 690.8(B) conditions, 240.4 and the drop",
             f"I {n(iz)} ≥ I_max {n(i_des)}; utilisation {n(float(row['utilisation']), 4)}",
             str(row["status"]), "", "schedule column status")
    )  # fmt: skip
    return steps


def nec_steps(row: pd.Series, circuits: pd.DataFrame, design: DesignConfig) -> list:
    """Every step of one circuit's NEC worked calculation (see the module docstring)."""
    return (
        _current_steps(row, circuits, design)
        + _capacity_steps(row, design)
        + _drop_steps(row, design)
        + _protection_steps(row, design)
    )


#: the NEC rule set's worked calculation (:func:`routeplan.report.worked.rule_texts`)
NEC_TEXTS = RuleTexts(
    steps=lambda row, segments, circuits, design: nec_steps(row, circuits, design),
    titles=KIND_LABELS_NEC,
    read=(
        "the NEC 2023 table values (Tables 310.16 / 310.17 cells, the 310.15(B)(1) and "
        "310.15(C)(1) factors, Chapter 9 Tables 8 and 9, the 240.6(A) ratings)"
    ),
    review=(
        "routeplan is a design aid: the NEC as adopted by the authority having jurisdiction, "
        "the equipment listings and a qualified, licensed engineer of record govern."
    ),
)
