"""Sizing engine: design currents, capacity per route environment, voltage drop, size selection.

Entry point: :func:`size_circuits` (``SizingInput`` + ``DesignParams`` → ``SizingResult``). Every
input and output is a numpy array with one element per circuit (or per trench segment for
``seg_*``). The results are a design aid, subject to local codes and to review by a qualified
person.

Method (all steps vectorised over circuits × sizes):

1. Design currents and protection (:mod:`calc.protection`, IEC 62548:2016 from memory,
   IEC 60364-4-43:2008 433.1). The module Isc of every d.c. circuit is the bifacial design Isc
   (datasheet bifacial value, else Isc · (1 + φ · G_rear/G_front)); an array's is the mean of
   its strings'. Strings: protection by the module maximum series fuse, fuse from the gPV list;
   cable ≥ fuse or 1.25·Isc·(S−1), ≥ 1.25·Isc. Arrays: ≥ 1.25·Isc·N, and against the backfeed
   B of the other arrays on the same inverter d.c. input: where the cable's derated capacity
   Iz < B, an array fuse in 1.25–2.4·Isc·N with Iz ≥ max(In, I2/1.45) (``array_protection =
   "fuse"``), or Iz ≥ B (``"cable"``). a.c.: Ib = the inverter's maximum continuous output
   current (rated current where not given), breaker In = the smallest standard rating ≥ Ib,
   Iz ≥ max(In, I2/1.45).
2. Capacity per environment of the route: the stretches in air (each shared stub and row run:
   PV cable Table A.3 for strings, method F/E for feeders) × air temperature factor × grouping
   in air (IEC 60364-5-52 Table B.52.17, by the circuits sharing the stretch and the kind's
   arrangement); each trench segment (D1 duct / D2 direct) × ground temperature × soil × depth ×
   grouping factor. The governing capacity is the minimum over the environments; per circuit the
   governing stretch is the one with the smallest product of its factors.
3. Voltage drop (Ohm's law) at operating current, R at conductor temperature (IEC 60287-1-1), for
   a.c. with the skin and proximity effect (R = R'(1 + y_s + y_p), IEC 60287-1-1).
4. Size selection: walk each kind's ascending size list; the first size meeting capacity, voltage
   drop and (a.c., when a fault level is given) adiabatic withstand is taken. Array and a.c.
   circuits that no single conductor can serve get 2…``max_parallel`` conductors per pole/phase;
   each extra set counts as one more circuit in each trench segment and air stretch on its route,
   so all circuits are re-evaluated until the parallel counts stop changing (counts only grow, so
   this ends).

Rule sets (:mod:`calc.rules`) supply every table and rule above; the steps are those of the IEC
rule set. A rule set changes them through its hooks (defaults: the IEC behaviour): the NEC 2023
rule set (:mod:`calc.rules.nec`) holds each circuit to 690.8(B)'s two conditions (the 690.8(A)
maximum current against the corrected and adjusted ampacity, and 1.25 × it against the
termination's column uncorrected — ``terminal_required_a`` / ``terminal_ampacity_a``; the
utilisation is the governing one), counts current-carrying conductors for grouping, checks each
candidate size's protection by its device (240.4), disregards a short governing stretch
(310.14(A)(2) exception) and notes every buried circuit for review.

DC voltage-drop budget (decision): strings are sized first against min(drop_string_pct,
drop_dc_total_pct); each array cable then gets min(drop_array_pct, drop_dc_total_pct − the largest
drop of its own strings). So every string path meets ``drop_dc_total_pct`` by construction; the
array cable, which has the longer size ladder and parallel conductors, takes up what the strings
leave.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from calc.errors import ConvergenceError, InputError, TableRangeError, check_option
from calc.kinds import FEEDER_KINDS, KIND_AC, KIND_ARRAY, KIND_NAMES, KIND_STRING, KIND_SUBARRAY
from calc.losses import energy_loss_kwh, loss_w
from calc.marking import MARKING_SYSTEMS, conductor_marking
from calc.pv import voc_above_rating
from calc.rules import RuleSet, get_rules
from calc.tables import load_table
from calc.vdrop import CONDUCTOR_TEMP_MODES, conductor_temp_c, vdrop_pct, vdrop_v

__all__ = [
    "KIND_AC",
    "KIND_ARRAY",
    "KIND_NAMES",
    "KIND_STRING",
    "KIND_SUBARRAY",
    "DesignParams",
    "SizingInput",
    "SizingResult",
    "failure_causes",
    "size_circuits",
]

ENV_NAMES = ("air", "D1", "D2")  # governing environment codes 0, 1, 2
#: how array cables are protected against the backfeed of the other arrays on their input
ARRAY_PROTECTION = ("fuse", "cable")
_LAYING_OF_ENV = {"D1": 1, "D2": 0}  # D1 = in duct (laying 1), D2 = direct (laying 0)
_EPS = 1e-9


@dataclass
class SizingInput:
    """Circuits and trench segments to size (numpy arrays; n circuits, m segments, q incidences).

    Per circuit (length n). Fields marked *DC* apply to kinds 0/1/3, *AC* to kind 2; others may be
    nan.

    kind : int8 — 0 string, 1 array, 2 ac, 3 sub-array (``KIND_STRING``, ``KIND_ARRAY``,
        ``KIND_AC``, ``KIND_SUBARRAY``). IEC 62548 terms: a sub-array cable joins a combiner to
        the combiner above it, the array cable the last combiner to the inverter.
    cable_m : route length for voltage drop and losses, allowances included [m].
    air_m : length in air (stubs + run along the row) [m]; > 0 means the air environment applies.
        Default 0.
    parent : for a string, index of the cable of its combiner (array or sub-array), or −1 if it
        goes straight to an inverter; for a sub-array cable, index of the cable of the combiner it
        feeds (array or sub-array); −1 otherwise. Default −1.
    isc_a, imp_a : *DC* module (= string) Isc and Imp at STC, front side [A]; for an array,
        the mean over its strings.
    bifaciality : *DC* bifaciality of the module's Isc, φ in [0, 1]; nan = monofacial. Default nan.
    isc_bifacial_a : *DC* datasheet Isc with the rear side's gain at the design rear irradiance
        [A]; nan = from φ. Default nan. (An array circuit with strings in the input takes the mean
        of its strings' design Isc; these two fields of an array apply only to an array given
        without its strings.)
    vmp_v : *DC* string Vmp (module Vmp × modules in series) [V].
    voc_v : *DC* string Voc at STC (module Voc × modules in series) [V]; NaN = not checked.
        Default NaN. (A feeder's is taken from its strings.)
    voc_coeff_pct_per_c : *DC* temperature coefficient of the module's Voc [%/°C] (negative);
        NaN = not given (the rule set's factor for missing data applies). Default NaN.
    modules_in_series : *DC* strings: the modules in series; NaN = not given. Default NaN. Not
        used in the sizing: a remedy of a Voc above the rated voltage reads it
        (:func:`calc.pv.max_modules_in_series`).
    n_strings : *DC* strings carried (1 for a string, N for an array). Default 1.
    strings_in_parallel : *DC* strings paralleled without an overcurrent device at the string's
        destination (IEC 62548 S). Default 1.
    max_fuse_a : *DC* module maximum series fuse rating [A]; nan = not given. Default nan.
    fuse_a : *DC* string fuse fixed by the combiner [A]; nan = calc picks. Default nan.
    dc_group : *DC* arrays: id of the inverter d.c. input (or common d.c. bus) the array is
        paralleled on with the other arrays of the same id; −1 = alone on its input. A sub-array
        cable takes its array's. Default −1.
    ac_kva : *AC* inverter rated apparent power [kVA].
    ac_v : *AC* voltage [V]: line-to-line for 3-phase, inverter output line-to-neutral for 1-phase.
    phases : *AC* 1 or 3. Default 3.
    pf : *AC* power factor cos φ; nan = ``DesignParams.power_factor``. Default nan.
    ac_max_a : *AC* inverter maximum continuous output current [A]; nan = rated current
        S/(√3·U) (three-phase) or S/U (single-phase). Default nan.

    Per trench segment (length m): ``seg_depth_m`` depth to the cable/duct axis [m]; ``seg_laying``
    0 direct in ground (method D2) / 1 in duct (D1); ``seg_spacing_m`` clear distance between
    circuits (0 touching) [m]; ``seg_soil_k_m_w`` soil thermal resistivity [K·m/W]; ``seg_count``
    circuits routed through it as counted by routing (calc uses at least the number of incident
    circuits given).

    ``seg_length_m`` (optional, nan = not given) the segment's length [m], used only by a rule set
    with a short-section exception (nec 310.14(A)(2)); likewise ``air_length_m`` per air stretch.

    Incidence (length q): ``inc_circuit[k]`` passes ``inc_segment[k]``.

    Stretches in air (length r, e.g. a shared stub or a row's run): ``air_count`` circuits
    counted on the stretch (calc uses at least the number of incident circuits given; default
    that number); ``air_behind_modules`` True where the stretch runs behind the modules (a
    row's run: string cables there are rated at ``row_air_temp_c``; elsewhere at
    ``air_temp_c``; default False); incidence ``air_inc_circuit[k]`` runs along
    ``air_inc_stretch[k]``. A circuit with ``air_m`` > 0 and no stretch is rated in air as a
    single circuit at its kind's air temperature (strings: ``row_air_temp_c``).
    """

    kind: np.ndarray
    cable_m: np.ndarray
    air_m: np.ndarray | None = None
    parent: np.ndarray | None = None
    isc_a: np.ndarray | None = None
    imp_a: np.ndarray | None = None
    vmp_v: np.ndarray | None = None
    n_strings: np.ndarray | None = None
    strings_in_parallel: np.ndarray | None = None
    max_fuse_a: np.ndarray | None = None
    fuse_a: np.ndarray | None = None
    ac_kva: np.ndarray | None = None
    ac_v: np.ndarray | None = None
    phases: np.ndarray | None = None
    pf: np.ndarray | None = None
    bifaciality: np.ndarray | None = None
    isc_bifacial_a: np.ndarray | None = None
    voc_v: np.ndarray | None = None
    voc_coeff_pct_per_c: np.ndarray | None = None
    modules_in_series: np.ndarray | None = None
    dc_group: np.ndarray | None = None
    ac_max_a: np.ndarray | None = None
    seg_depth_m: np.ndarray | None = None
    seg_laying: np.ndarray | None = None
    seg_spacing_m: np.ndarray | None = None
    seg_soil_k_m_w: np.ndarray | None = None
    seg_count: np.ndarray | None = None
    seg_length_m: np.ndarray | None = None
    inc_circuit: np.ndarray | None = None
    inc_segment: np.ndarray | None = None
    air_count: np.ndarray | None = None
    air_behind_modules: np.ndarray | None = None
    air_inc_circuit: np.ndarray | None = None
    air_inc_stretch: np.ndarray | None = None
    air_length_m: np.ndarray | None = None


def design_default(name: str) -> float:
    """A default of :class:`DesignParams` kept as data (``design_defaults.csv``)."""
    t = load_table("design_defaults.csv")
    return float(t["value"][t.where(name=name)][0])


@dataclass(frozen=True)
class DesignParams:
    """Design settings (SI units; defaults with their source).

    ground_temp_c : ground temperature [°C]; 20 = IEC 60364-5-52 reference (set from site data).
    air_temp_c : design ambient air temperature [°C]; 40 = common practice for outdoor runs (set the
        site maximum; PV cable ratings need no correction up to 60 °C, EN 50618 Table A.4).
    row_air_temp_c : air temperature around string cables in air [°C] — they run along the racking,
        behind the modules, hotter than the shade air; None = ``air_temp_c``. 70 °C is common
        practice for cables behind modules.
    material_array, material_subarray, material_ac : "Cu" or "Al" (class 2). Strings are always
        EN 50618 PV cable (class 5 tinned Cu).
    insulation_array, insulation_subarray, insulation_ac : "XLPE" (90 °C) or "PVC" (70 °C).
    drop_string_pct, drop_subarray_pct, drop_array_pct, drop_dc_total_pct, drop_ac_pct :
        voltage-drop limits [%]; 1.0 / 1.0 / 1.5 / 2.0 / 1.0 are common practice (no standard sets
        a PV d.c. limit; ≤ 2 % d.c. and ≤ 1 % a.c. is common practice). See the module docstring
        for how the d.c. budget is shared along a string's path.
    sizes_string_mm2, sizes_array_mm2, sizes_subarray_mm2, sizes_ac_mm2 : ascending candidate
        sizes [mm²]; None = the
        rule set's default (iec: string 4, 6, 10 — PV cable ≥ 4 mm² is common practice; feeders
        16–300).
    max_parallel : most conductors per pole/phase for array and a.c. circuits (common practice 4).
    conductor_temp : "max" (resistance at the rating temperature, conservative) or "loading"
        (θ = θamb + (θmax − θamb)(I/Iz)²).
    power_factor : cos φ of a.c. circuits whose ``pf`` is nan; 0.9 = common practice (reactive-power
        capability often required by grid connection rules; gives a larger drop than 1.0).
    loss_hours_h : equivalent full-load loss hours per year [h] for the energy-loss estimate; 1000
        is an order-of-magnitude placeholder (common practice), to be replaced by Σ(I/I_op)²Δt of
        the site.
    fault_ka, clear_s : prospective a.c. fault current [kA] and clearing time [s]; None = no check.
    marking : conductor identification system (calc.marking.MARKING_SYSTEMS: "iec" = IEC 60445,
        "us" = NEC, or an ISO 3166 country code).
    pv_installation : EN 50618 Table A.3 column for string cables in air: "two_adjacent_surface"
        (default, conservative: + and − touching along the racking), "on_surface" or "free_air".
    air_arrangement : how the cables of each kind (string, array, a.c., sub-array: by kind code)
        run where they share a
        stretch in air, one of the rule set's ``air_arrangements`` (iec: IEC 60364-5-52 Table
        B.52.17 items "bunched", "wall", "ceiling", "tray", "ladder"); "bunched" (the most
        onerous) by default.
    cable_od_m, duct_od_m : outer diameter of a direct-buried circuit and of a duct [m] used by the
        IEC 60287 depth factor; 0.04 and 0.11 are common practice (the factor changes < 1 % for
        0.03–0.06).
    string_fuse_ratings_a, array_fuse_ratings_a : the project's fuse ratings [A], each in the rule
        set's PV fuse list (iec: gPV, IEC 60269-6); None = the whole list.
    array_protection : "fuse" (an array fuse where the backfeed of the other arrays on the input
        exceeds the cable's capacity) or "cable" (no array fuses: the cable carries the backfeed).
    rear_irradiance_ratio : design rear / front irradiance of bifacial modules [1]; None = the
        rule set's default (iec: 0.135, the bifacial nameplate irradiance of IEC 61215-1).
    ac_breaker_device : kind of a.c. circuit-breaker, one of the rule set's ``breaker_devices``
        (iec: "iec60947-2" moulded-case, the default, or "iec60898-1"); ac_breaker_ratings_a: the
        project's ratings [A] within that kind's list; None = the whole list.
    frequency_hz : a.c. frequency [Hz] for the skin and proximity effect; 50 by default.
    min_ambient_c : lowest expected ambient (= module) temperature [°C] for the maximum d.c.
        voltage; −10 °C by default (common practice: set the site's record low).
    dc_rated_v : rated d.c. voltage of the cables and equipment [V] the strings' maximum Voc is
        checked against; 1500 by default (the usual PV system voltage class, common practice;
        NEC equipment is rated 600, 1000 or 1500 V).
    terminal_temp_c : nec only: temperature rating of the terminations [°C] (110.14(C)), 60, 75
        or 90; None = 75 (equipment marked 75 °C, common practice). Set 90 only where the
        equipment is marked for 90 °C.
    buried_rating : how buried circuits are rated: "table" (the rule set's tables; under nec
        Table 310.16 with a review note on every buried circuit). "engineered" (an IEC 60287 /
        Neher–McGrath calculation, NEC 310.14(B)) is refused until it exists.
    """

    ground_temp_c: float = 20.0
    air_temp_c: float = 40.0
    row_air_temp_c: float | None = None
    material_array: str = "Cu"
    material_ac: str = "Cu"
    insulation_array: str = "XLPE"
    insulation_ac: str = "XLPE"
    material_subarray: str = "Cu"
    insulation_subarray: str = "XLPE"
    drop_string_pct: float = 1.0
    drop_subarray_pct: float = 1.0
    drop_array_pct: float = 1.5
    drop_dc_total_pct: float = 2.0
    drop_ac_pct: float = 1.0
    sizes_string_mm2: tuple[float, ...] | None = None
    sizes_array_mm2: tuple[float, ...] | None = None
    sizes_ac_mm2: tuple[float, ...] | None = None
    sizes_subarray_mm2: tuple[float, ...] | None = None
    max_parallel: int = 4
    conductor_temp: str = "max"
    power_factor: float = 0.9
    loss_hours_h: float = 1000.0
    fault_ka: float | None = None
    clear_s: float | None = None
    marking: str = "iec"
    pv_installation: str = "two_adjacent_surface"
    air_arrangement: tuple[str, ...] = ("bunched", "bunched", "bunched", "bunched")
    cable_od_m: float = field(default_factory=lambda: design_default("cable_od_m"))
    duct_od_m: float = field(default_factory=lambda: design_default("duct_od_m"))
    string_fuse_ratings_a: tuple[float, ...] | None = None
    array_fuse_ratings_a: tuple[float, ...] | None = None
    array_protection: str = "fuse"
    rear_irradiance_ratio: float | None = None
    ac_breaker_device: str = "iec60947-2"
    ac_breaker_ratings_a: tuple[float, ...] | None = None
    frequency_hz: float = 50.0
    min_ambient_c: float = -10.0
    dc_rated_v: float = 1500.0
    terminal_temp_c: float | None = None
    buried_rating: str = "table"


@dataclass
class SizingResult:
    """Sizing results, one element per circuit unless noted.

    size_mm2, parallel (conductors per pole/phase), material, insulation ("PV" = EN 50618 cable);
    design_current_a (minimum capacity required), operating_current_a (Imp·N or rated a.c. current);
    ampacity_base_a (tabulated, at the governing environment, one conductor set); derating (product
    of all factors there); ampacity_a = base × derating × parallel; utilisation = design / ampacity;
    governing_segment (−1 = air) and governing_env ("air", "D1", "D2"); factor_temp, factor_soil,
    factor_depth, factor_group, group_count (circuits incl. parallel sets, 0 in air) at the
    governing environment; conductor_temp_c used for R; vdrop_v, vdrop_pct (own circuit),
    vdrop_limit_pct
    (budget applied), vdrop_total_pct (the worst path from a string to the inverter through the
    circuit: a string's own + its feeders'; a feeder's own + the worst below and above it; a.c.:
    own); loss_w, loss_pct (of circuit power at operating point), energy_loss_kwh (estimate);
    sc_min_mm2 (adiabatic minimum, nan if not checked); fuse_required, fuse_a (string fuses);
    isc_design_a (d.c.: the Isc the design currents use — a string's module Isc, a feeder's total,
    bifacial gain included); voc_max_v (d.c.: the highest open-circuit voltage, at the lowest
    expected temperature; a feeder's: the highest of its strings', nan where not given);
    backfeed_a (array and sub-array cables: current the rest of the inverter input can feed into
    it); array_fuse_a (array or sub-array fuse, nan where none); ac_ib_a (a.c. design current
    Ib), ac_breaker_a (In); protection (which rule governed, text); governing_air (the air
    stretch that governs, −1 if none or not air); ok; note (reason or assumption, "" if none) and
    marking (conductor identification) as object arrays of str.

    Rule sets with a second, uncorrected ampacity condition (nec: 690.8(B)(1) with the 110.14(C)
    termination column): terminal_required_a (1.25 × the maximum current, all parallel sets) and
    terminal_ampacity_a (the table value in the termination's column, uncorrected, × parallel);
    nan under iec. design_current_a / ampacity_a are then the 690.8(B)(2) condition (maximum
    current against the corrected and adjusted ampacity) and utilisation is the larger of the two
    ratios — the governing condition. Under nec, group_count and factor_group count
    current-carrying conductors (Table 310.15(C)(1)), not circuits.

    Per segment: seg_soil_factor, seg_depth_factor, seg_group_factor (in force with the final
    counts), seg_count_final (routing count incl. extra parallel sets). Per air stretch:
    air_count_final (circuits incl. extra parallel sets).
    Per kind (index = kind code, :data:`KIND_NAMES`): total_loss_w, total_loss_pct,
    total_energy_loss_kwh.
    """

    size_mm2: np.ndarray
    parallel: np.ndarray
    material: np.ndarray
    insulation: np.ndarray
    design_current_a: np.ndarray
    operating_current_a: np.ndarray
    ampacity_base_a: np.ndarray
    derating: np.ndarray
    ampacity_a: np.ndarray
    utilisation: np.ndarray
    governing_segment: np.ndarray
    governing_env: np.ndarray
    factor_temp: np.ndarray
    factor_soil: np.ndarray
    factor_depth: np.ndarray
    factor_group: np.ndarray
    group_count: np.ndarray
    conductor_temp_c: np.ndarray
    vdrop_v: np.ndarray
    vdrop_pct: np.ndarray
    vdrop_limit_pct: np.ndarray
    vdrop_total_pct: np.ndarray
    loss_w: np.ndarray
    loss_pct: np.ndarray
    energy_loss_kwh: np.ndarray
    sc_min_mm2: np.ndarray
    fuse_required: np.ndarray
    fuse_a: np.ndarray
    isc_design_a: np.ndarray
    voc_max_v: np.ndarray
    backfeed_a: np.ndarray
    array_fuse_a: np.ndarray
    ac_ib_a: np.ndarray
    ac_breaker_a: np.ndarray
    protection: np.ndarray
    governing_air: np.ndarray
    ok: np.ndarray
    note: np.ndarray
    marking: np.ndarray
    seg_soil_factor: np.ndarray
    seg_depth_factor: np.ndarray
    seg_group_factor: np.ndarray
    seg_count_final: np.ndarray
    air_count_final: np.ndarray
    total_loss_w: np.ndarray
    total_loss_pct: np.ndarray
    total_energy_loss_kwh: np.ndarray
    terminal_required_a: np.ndarray
    terminal_ampacity_a: np.ndarray
    iterations: int = 0
    rules: str = "iec"


# --------------------------------------------------------------------------------------------
# input preparation


def _arr(value, n: int, default: float, dtype=float) -> np.ndarray:
    if value is None:
        return np.full(n, default, dtype=dtype)
    a = np.asarray(value, dtype=dtype)
    return np.broadcast_to(a, (n,)).copy() if a.ndim == 0 else a.copy()


def _fractional(value) -> np.ndarray:
    """True where a code or an index is given with a fractional part (phases 1.5): the integer
    cast would truncate it silently. nan is left to the range checks; None (not given) is fine."""
    v = np.asarray(np.zeros(0) if value is None else value)
    if v.dtype.kind not in "fc":
        return np.zeros(v.shape, bool)
    with np.errstate(invalid="ignore"):
        return np.isfinite(v) & (v != np.trunc(v))


def _where(mask: np.ndarray) -> str:
    idx = np.flatnonzero(mask)
    more = f" and {len(idx) - 5} more" if len(idx) > 5 else ""
    return f"{idx[:5].tolist()}{more}"


def _prepare(inp: SizingInput, design: DesignParams) -> dict:
    problems: list[str] = []
    kind = np.asarray(inp.kind)
    if kind.ndim != 1:
        raise InputError("kind must be a 1-d array")
    n = kind.size
    a: dict[str, np.ndarray] = {"kind": kind.astype(np.int8)}
    a["cable_m"] = _arr(inp.cable_m, n, np.nan)
    a["air_m"] = _arr(inp.air_m, n, 0.0)
    a["parent"] = _arr(inp.parent, n, -1, np.int64)
    for name, default in (
        ("isc_a", np.nan),
        ("imp_a", np.nan),
        ("vmp_v", np.nan),
        ("n_strings", 1.0),
        ("strings_in_parallel", 1.0),
        ("max_fuse_a", np.nan),
        ("fuse_a", np.nan),
        ("ac_kva", np.nan),
        ("ac_v", np.nan),
        ("pf", np.nan),
        ("bifaciality", np.nan),
        ("isc_bifacial_a", np.nan),
        ("voc_v", np.nan),
        ("voc_coeff_pct_per_c", np.nan),
        ("modules_in_series", np.nan),
        ("ac_max_a", np.nan),
    ):
        a[name] = _arr(getattr(inp, name), n, default)
    a["phases"] = _arr(inp.phases, n, 3, np.int64)
    a["dc_group"] = _arr(inp.dc_group, n, -1, np.int64)
    for name, arr in a.items():
        if arr.shape != (n,):
            problems.append(f"{name} must have length {n} (one per circuit)")
    if problems:
        raise InputError("; ".join(problems))

    for name in ("kind", "parent", "phases", "dc_group"):
        bad = _fractional(getattr(inp, name))
        if np.any(bad):
            problems.append(f"{name} must be a whole number at circuits {_where(bad)}")
    dc = kind != KIND_AC
    ac = ~dc
    bad = (kind < 0) | (kind >= len(KIND_NAMES))
    if np.any(bad):
        problems.append(f"kind must be 0, 1, 2 or 3 at circuits {_where(bad)}")
    for name, mask in (("cable_m", np.ones(n, bool)), ("air_m", np.ones(n, bool))):
        bad = mask & ~(a[name] >= 0)
        if np.any(bad):
            problems.append(f"{name} must be >= 0 m at circuits {_where(bad)}")
    for name in ("isc_a", "imp_a", "vmp_v"):
        bad = dc & ~(a[name] > 0)
        if np.any(bad):
            problems.append(f"{name} must be > 0 for d.c. circuits {_where(bad)}")
    for name in ("n_strings", "strings_in_parallel"):
        bad = dc & ~(a[name] >= 1)
        if np.any(bad):
            problems.append(f"{name} must be >= 1 for d.c. circuits {_where(bad)}")
    for name in ("ac_kva", "ac_v"):
        bad = ac & ~(a[name] > 0)
        if np.any(bad):
            problems.append(f"{name} must be > 0 for a.c. circuits {_where(bad)}")
    bad = ac & (a["phases"] != 1) & (a["phases"] != 3)
    if np.any(bad):
        problems.append(f"phases must be 1 or 3 at a.c. circuits {_where(bad)}")
    bad = ac & ~np.isnan(a["pf"]) & ~((a["pf"] > 0) & (a["pf"] <= 1))
    if np.any(bad):
        problems.append(f"pf must be in (0, 1] at a.c. circuits {_where(bad)}")
    bad = ac & ~np.isnan(a["ac_max_a"]) & ~(a["ac_max_a"] > 0)
    if np.any(bad):
        problems.append(f"ac_max_a must be > 0 at a.c. circuits {_where(bad)}")
    bad = dc & ~np.isnan(a["bifaciality"]) & ~((a["bifaciality"] >= 0) & (a["bifaciality"] <= 1))
    if np.any(bad):
        problems.append(f"bifaciality must be within 0-1 at d.c. circuits {_where(bad)}")
    m = a["modules_in_series"]
    bad = ~np.isnan(m) & ~((m >= 1) & (m == np.floor(m)))
    if np.any(bad):
        problems.append(f"modules_in_series must be a whole number >= 1 at circuits {_where(bad)}")
    bad = dc & ~np.isnan(a["voc_v"]) & ~(a["voc_v"] > 0)
    if np.any(bad):
        problems.append(f"voc_v must be > 0 (or NaN: not checked) at d.c. circuits {_where(bad)}")
    bad = dc & ~np.isnan(a["isc_bifacial_a"]) & ~(a["isc_bifacial_a"] >= a["isc_a"])
    if np.any(bad):
        problems.append(f"isc_bifacial_a must be >= isc_a at d.c. circuits {_where(bad)}")
    feeder = np.isin(kind, FEEDER_KINDS)
    bad = feeder & (a["dc_group"] < -1)
    if np.any(bad):
        problems.append(f"dc_group must be >= -1 at array circuits {_where(bad)}")
    par = a["parent"]
    takes_parent = (kind == KIND_STRING) | (kind == KIND_SUBARRAY)
    bad = (par >= n) | (par < -1) | (~takes_parent & (par != -1))
    ok_idx = (par >= 0) & (par < n)
    bad |= ok_idx & ~np.isin(kind[np.clip(par, 0, n - 1)], FEEDER_KINDS)
    bad |= (kind == KIND_SUBARRAY) & (par < 0)
    if np.any(bad):
        problems.append(
            "parent must be the index of an array or sub-array circuit (strings: or -1; sub-array "
            f"circuits: always; others: -1) at circuits {_where(bad)}"
        )
    if problems:
        raise InputError("; ".join(problems))
    a["level"] = _levels(par, kind)

    m = 0 if inp.seg_depth_m is None else np.asarray(inp.seg_depth_m).size
    a["seg_depth_m"] = _arr(inp.seg_depth_m, m, 0.7)
    a["seg_laying"] = _arr(inp.seg_laying, m, 0, np.int64)
    a["seg_spacing_m"] = _arr(inp.seg_spacing_m, m, 0.0)
    a["seg_soil_k_m_w"] = _arr(inp.seg_soil_k_m_w, m, 2.5)
    a["seg_count"] = _arr(inp.seg_count, m, 1.0)
    a["seg_length_m"] = _arr(inp.seg_length_m, m, np.nan)
    for name in ("inc_circuit", "inc_segment"):
        value = getattr(inp, name)
        a[name] = np.zeros(0, np.int64) if value is None else np.asarray(value, np.int64).ravel()
    for name in (
        "seg_depth_m",
        "seg_laying",
        "seg_spacing_m",
        "seg_soil_k_m_w",
        "seg_count",
        "seg_length_m",
    ):
        if a[name].shape != (m,):
            problems.append(f"{name} must have length {m} (one per segment)")
    if a["inc_circuit"].shape != a["inc_segment"].shape:
        problems.append("inc_circuit and inc_segment must have the same length")
    if problems:
        raise InputError("; ".join(problems))
    for name, where in (
        ("seg_laying", "segments"),
        ("inc_circuit", "positions"),
        ("inc_segment", "positions"),
    ):
        bad = _fractional(getattr(inp, name))
        if np.any(bad):
            problems.append(f"{name} must be a whole number at {where} {_where(bad)}")
    lay = a["seg_laying"]
    for name, bad in (
        ("seg_laying must be 0 (direct) or 1 (duct)", (lay != 0) & (lay != 1)),
        ("seg_spacing_m must be >= 0", ~(a["seg_spacing_m"] >= 0)),
        ("seg_soil_k_m_w must be > 0", ~(a["seg_soil_k_m_w"] > 0)),
        ("seg_count must be >= 0", ~(a["seg_count"] >= 0)),
        (
            "seg_depth_m must exceed half the cable/duct diameter",
            ~buried_deep_enough(a["seg_depth_m"], lay == 1, design),
        ),
    ):
        if np.any(bad):
            problems.append(f"{name} at segments {_where(bad)}")
    ic, js = a["inc_circuit"], a["inc_segment"]
    bad = (ic < 0) | (ic >= n) | (js < 0) | (js >= m)
    if np.any(bad):
        problems.append(f"incidence pairs out of range at positions {_where(bad)}")
    if problems:
        raise InputError("; ".join(problems))
    # sort by circuit (the engine relies on it); duplicate pairs count once
    key = ic * max(m, 1) + js
    if key.size and not np.all(key[1:] > key[:-1]):
        key = np.sort(key)
        key = key[np.r_[True, key[1:] != key[:-1]]]
    a["inc_circuit"], a["inc_segment"] = key // max(m, 1), key % max(m, 1)
    incident = np.bincount(a["inc_segment"], minlength=m)
    a["seg_count"] = np.maximum(a["seg_count"], incident).astype(float)
    a["pf"] = np.where(np.isnan(a["pf"]), design.power_factor, a["pf"])
    _prepare_air(a, inp, n)
    return a


def _levels(parent: np.ndarray, kind: np.ndarray) -> np.ndarray:
    """Each feeder's level: 0 for an array cable, 1 + its parent's for a sub-array cable (a
    chain of parents must end at an array cable); −1 for strings and a.c. circuits."""
    n = kind.size
    level = np.where(kind == KIND_ARRAY, 0, -1).astype(np.int64)
    todo = kind == KIND_SUBARRAY
    for _ in range(n + 1):
        if not todo.any():
            return level
        up = level[parent[todo]]
        ready = up >= 0
        idx = np.flatnonzero(todo)[ready]
        level[idx] = up[ready] + 1
        todo[idx] = False
        if not ready.any():
            break
    raise InputError(f"sub-array circuits {_where(todo)} do not lead to an array circuit (a cycle)")


def _prepare_air(a: dict, inp: SizingInput, n: int) -> None:
    """The air stretches' counts and incidence (sorted by circuit; duplicates count once)."""
    ic = np.zeros(0, np.int64) if inp.air_inc_circuit is None else np.asarray(inp.air_inc_circuit)
    ks = np.zeros(0, np.int64) if inp.air_inc_stretch is None else np.asarray(inp.air_inc_stretch)
    for name, value in (("air_inc_circuit", ic), ("air_inc_stretch", ks)):
        bad = _fractional(value)
        if np.any(bad):
            raise InputError(f"{name} must be a whole number at positions {_where(bad)}")
    ic, ks = ic.astype(np.int64).ravel(), ks.astype(np.int64).ravel()
    if ic.shape != ks.shape:
        raise InputError("air_inc_circuit and air_inc_stretch must have the same length")
    r = int(ks.max()) + 1 if ks.size else 0
    if inp.air_count is not None:
        r = max(r, np.asarray(inp.air_count).size)
    count = _arr(inp.air_count, r, 0.0)
    if count.shape != (r,) or np.any(~(count >= 0)):
        raise InputError(f"air_count must be {r} numbers >= 0 (one per air stretch)")
    behind = _arr(inp.air_behind_modules, r, False, bool)
    if behind.shape != (r,):
        raise InputError(f"air_behind_modules must have length {r} (one per air stretch)")
    a["air_behind_modules"] = behind
    length = _arr(inp.air_length_m, r, np.nan)
    if length.shape != (r,):
        raise InputError(f"air_length_m must have length {r} (one per air stretch)")
    a["air_length_m"] = length
    bad = (ic < 0) | (ic >= n) | (ks < 0)
    if np.any(bad):
        raise InputError(f"air incidence pairs out of range at positions {_where(bad)}")
    key = np.unique(ic * max(r, 1) + ks)
    a["air_inc_circuit"], a["air_inc_stretch"] = key // max(r, 1), key % max(r, 1)
    a["air_count"] = np.maximum(count, np.bincount(a["air_inc_stretch"], minlength=r)).astype(float)


def _check_design(design: DesignParams, rs: RuleSet) -> None:
    rs.check_design(design)
    check_option("material_array", design.material_array, rs.materials)
    check_option("material_subarray", design.material_subarray, rs.materials)
    check_option("insulation_subarray", design.insulation_subarray, rs.insulations)
    check_option("material_ac", design.material_ac, rs.materials)
    check_option("insulation_array", design.insulation_array, rs.insulations)
    check_option("insulation_ac", design.insulation_ac, rs.insulations)
    check_option("conductor_temp", design.conductor_temp, CONDUCTOR_TEMP_MODES)
    check_option("marking", design.marking, MARKING_SYSTEMS)
    check_option("array_protection", design.array_protection, ARRAY_PROTECTION)
    check_option("ac_breaker_device", design.ac_breaker_device, rs.breaker_devices)
    if len(design.air_arrangement) != len(KIND_NAMES):
        raise InputError(
            "air_arrangement must name one arrangement per kind (string, array, ac, subarray)"
        )
    for name, value in zip(KIND_NAMES, design.air_arrangement, strict=True):
        check_option(f"air_arrangement ({name})", value, rs.air_arrangements)
    problems = []
    for f in (
        "drop_string_pct",
        "drop_subarray_pct",
        "drop_array_pct",
        "drop_dc_total_pct",
        "drop_ac_pct",
        "loss_hours_h",
        "cable_od_m",
        "duct_od_m",
    ):
        if not getattr(design, f) > 0:
            problems.append(f"{f} must be > 0")
    if not (0 < design.power_factor <= 1):
        problems.append("power_factor must be in (0, 1]")
    if not design.frequency_hz >= 0:
        problems.append("frequency_hz must be >= 0")
    ratio = design.rear_irradiance_ratio
    if ratio is not None and not 0 <= ratio <= 1:
        problems.append("rear_irradiance_ratio must be within 0-1")
    if int(design.max_parallel) < 1:
        problems.append("max_parallel must be >= 1")
    if (design.fault_ka is None) != (design.clear_s is None):
        problems.append("fault_ka and clear_s must be given together")
    elif design.fault_ka is not None and not (design.fault_ka > 0 and design.clear_s > 0):
        problems.append("fault_ka and clear_s must be > 0")
    if problems:
        raise InputError("; ".join(problems))


# --------------------------------------------------------------------------------------------
# per-kind cable data


@dataclass
class _KindData:
    kind: int
    idx: np.ndarray  # global circuit indices of this kind
    material: str
    insulation: str
    sizes: np.ndarray  # [S]
    r20: np.ndarray  # [S]
    theta_air: float
    theta_bur: float
    base: dict  # (env, loaded) -> [S]
    x: dict  # phases -> [S]
    k_sc: np.ndarray | None  # [S]
    p_max: int
    term: np.ndarray | None = None  # [S] capacity before correction (nec 690.8(B)(1)), any env


def _cable_of(kind: int, design: DesignParams, rs: RuleSet) -> tuple[str, str, np.ndarray]:
    """(material, insulation, size list [mm²]) of a kind's cable under ``design``."""
    if kind == KIND_STRING:
        material, insulation, sizes = "Cu", "PV", design.sizes_string_mm2
    elif kind == KIND_ARRAY:
        material, insulation = design.material_array, design.insulation_array
        sizes = design.sizes_array_mm2
    elif kind == KIND_SUBARRAY:
        material, insulation = design.material_subarray, design.insulation_subarray
        sizes = design.sizes_subarray_mm2
    else:
        material, insulation, sizes = design.material_ac, design.insulation_ac, design.sizes_ac_mm2
    if sizes is None:
        sizes = rs.default_sizes_mm2(kind, material)
    return material, insulation, np.asarray(sizes, dtype=float)


def size_list_mm2(kind: int, design: DesignParams | None = None, rules: str = "iec") -> np.ndarray:
    """The sizes a kind's circuits are chosen from [mm²]: the design's list, else the rule
    set's default for the kind's material."""
    design = design if design is not None else DesignParams()
    return _cable_of(kind, design, get_rules(rules))[2]


def larger_sizes_mm2(
    kind: int, design: DesignParams | None = None, rules: str = "iec"
) -> np.ndarray:
    """The rule set's standard sizes larger than every size in a kind's list that the rule
    set can size for that kind's cable (a resistance, for a.c. circuits an a.c. resistance, and
    a tabulated capacity in every environment), ascending [mm²]: the sizes a failing circuit
    could still be given.

    Source of the candidates: :meth:`calc.rules.RuleSet.nominal_sizes_mm2` (iec: IEC 60228:2004
    Tables 2 and 3; nec: Chapter 9 Table 8).
    """
    design = design if design is not None else DesignParams()
    rs = get_rules(rules)
    material, insulation, sizes = _cable_of(kind, design, rs)
    nominal = rs.nominal_sizes_mm2()
    out = []
    for s in nominal[nominal > sizes.max(initial=0.0)].tolist():
        try:
            rs.r20_ohm_km(kind, material, np.array([s]))
        except TableRangeError:
            continue
        if kind == KIND_AC:  # and an a.c. resistance (nec: Table 9 lacks 700-900 kcmil)
            try:
                rs.ac_resistance_factor(
                    np.array([s]), material, np.ones(1), design.frequency_hz, np.array([3])
                )
            except InputError:
                continue
        base = _base_capacities(kind, material, insulation, np.array([s]), design, rs)
        if not any(np.isnan(b).any() for b in base.values()):
            out.append(s)
    return np.array(out, dtype=float)


def _base_capacities(kind, material, insulation, s, design: DesignParams, rs: RuleSet) -> dict:
    """Tabulated capacity [A] of the sizes ``s`` per (environment, loaded conductors); nan
    where the rule set's tables have none."""
    loaded_set = (2, 3) if kind == KIND_AC else (2,)
    return {
        (env, loaded): rs.base_capacity_a(
            kind, material, insulation, loaded, env, s, design.pv_installation
        )
        for env in ENV_NAMES
        for loaded in loaded_set
    }


def _kind_data(kind: int, idx: np.ndarray, design: DesignParams, rs: RuleSet) -> _KindData:
    material, insulation, s = _cable_of(kind, design, rs)
    name = KIND_NAMES[kind]
    if s.ndim != 1 or s.size == 0 or np.any(np.diff(s) <= 0):
        raise InputError(f"sizes for {name} circuits must be a non-empty ascending list")
    r20 = rs.r20_ohm_km(kind, material, s)
    base = _base_capacities(kind, material, insulation, s, design, rs)
    for (env, loaded), b in base.items():
        if np.any(np.isnan(b)):
            raise InputError(
                f"{name} sizes {s[np.isnan(b)].tolist()} mm² {material}/{insulation} have no "
                f"tabulated capacity for environment {env} with {loaded} loaded conductors "
                f"({rs.name} rules); remove them from the size list"
            )
    x = {ph: rs.reactance_ohm_km(s, insulation, ph) for ph in (1, 3)}
    k_sc = None
    if kind == KIND_AC and design.fault_ka is not None and rs.short_circuit_checked:
        k_sc = rs.k_adiabatic(material, insulation, s)
    term = None  # the terminations' capacity: the same in every environment (nec 110.14(C)(1))
    if rs.terminal_condition:
        term = rs.terminal_capacity_a(kind, material, insulation, s, design)
    return _KindData(
        kind=kind,
        idx=idx,
        material=material,
        insulation=insulation,
        sizes=s,
        r20=r20,
        theta_air=rs.theta_max_c(insulation, "air"),
        theta_bur=rs.theta_max_c(insulation, "buried"),
        base=base,
        x=x,
        k_sc=k_sc,
        p_max=1 if kind == KIND_STRING else int(design.max_parallel),
        term=term,
    )


# --------------------------------------------------------------------------------------------
# governing stretch per circuit (trench segments of each laying, stretches in air)


class _Governing(NamedTuple):
    """Per circuit, the governing stretch of one environment (the trench segments of one
    laying, or the stretches in air): the one with the smallest product of its factors."""

    product: np.ndarray  # that product [1]
    stretch: np.ndarray  # the segment or air stretch, −1 where the circuit has none
    count: np.ndarray  # what the grouping counted there (circuits or conductors; 0: none)
    group: np.ndarray  # grouping factor [1] (1: none)
    temp: np.ndarray | None  # temperature factor [1] (in air, nan: none; None in the ground)
    #: with a rule set's short-section exception (else None): whether the stretch may be
    #: disregarded, and the runner-up stretch (product inf where there is none)
    short: np.ndarray | None = None
    runner_up: _Governing | None = None


def _runner_up(cr: np.ndarray, pr: np.ndarray, keep: np.ndarray, starts: np.ndarray):
    """Position of the second smallest ``pr`` in each run of ``cr`` (``keep``: the smallest's);
    ``cr.size`` where a run has one element."""
    pr2 = pr.copy()
    pr2[keep] = np.inf
    lo2 = np.minimum.reduceat(pr2, starts)
    rep2 = np.repeat(lo2, np.diff(np.r_[starts, cr.size]))
    pos2 = np.where((pr2 == rep2) & np.isfinite(pr2), np.arange(cr.size), cr.size)
    return np.minimum.reduceat(pos2, starts)


def _governing(n: int, c, per_inc: tuple, none_product: float, short_of=None) -> _Governing:
    """Per circuit, the incidence with the smallest product (the first of equals).

    ``c``: each incidence's circuit (sorted by circuit); ``per_inc``: its (product, stretch,
    count, group factor, temperature factor or None); a circuit without an incidence gets
    ``none_product`` and the defaults of :class:`_Governing`. ``short_of(pos, who)`` (a rule
    set's short-section exception): whether the stretches at the positions ``pos`` may be
    disregarded on the circuits ``who``; with it the runner-up is gathered too.
    """

    def empty(product: float) -> _Governing:
        temp = None if per_inc[4] is None else np.full(n, np.nan)
        return _Governing(
            np.full(n, product), np.full(n, -1, dtype=np.int64), np.zeros(n), np.ones(n), temp
        )

    def gather(into: _Governing, who: np.ndarray, pos: np.ndarray) -> None:
        for dst, src in zip(into[:5], per_inc, strict=True):
            if src is not None:
                dst[who] = src[pos]

    out = empty(none_product)
    if short_of is not None:
        short, second = np.zeros(n, dtype=bool), empty(np.inf)
    if c.size:
        prod = per_inc[0]
        starts = np.flatnonzero(np.r_[True, c[1:] != c[:-1]])
        lo = np.minimum.reduceat(prod, starts)
        first = prod == np.repeat(lo, np.diff(np.r_[starts, c.size]))
        keep = np.minimum.reduceat(np.where(first, np.arange(c.size), c.size), starts)
        who = c[keep]
        gather(out, who, keep)
        if short_of is not None:
            short[who] = short_of(keep, who)
            k2 = _runner_up(c, prod, keep, starts)
            has2 = k2 < c.size
            gather(second, who[has2], k2[has2])
    if short_of is None:
        return out
    return out._replace(short=short, runner_up=second)


def _governing_buried(
    a, seg_fixed, counts, rows_mask_c, delta, rs: RuleSet, short=False
) -> dict[str, _Governing]:
    """Per laying ("D1", "D2"), each circuit's incident segment with the smallest
    soil·depth·group product (:class:`_Governing`, product inf where none).

    Only incidences of circuits with ``rows_mask_c`` are evaluated; ``delta`` (per circuit) is added
    to the counts of that circuit's own segments (its candidate extra parallel sets). The incidence
    is sorted by circuit (see ``_prepare``), so minima are taken with ``reduceat`` over circuit
    runs. With ``short`` (a rule set's short-section exception), whether that segment is short
    enough to be disregarded and the runner-up segment.
    """
    n = rows_mask_c.size
    ic, js = a["inc_circuit"], a["inc_segment"]
    sel = rows_mask_c[ic]
    c, s = ic[sel], js[sel]
    cnt = counts[s] + delta[c]
    g = rs.group_factor(cnt, a["seg_spacing_m"][s], a["seg_laying"][s])
    prod = seg_fixed[s] * g
    out = {}
    for env, lay in _LAYING_OF_ENV.items():
        r = a["seg_laying"][s] == lay
        sr = s[r]
        short_of = None
        if short:

            def short_of(pos, who, sr=sr):
                return rs.short_section(a["seg_length_m"][sr[pos]], a["cable_m"][who])

        out[env] = _governing(n, c[r], (prod[r], sr, cnt[r], g[r], None), np.inf, short_of)
    return out


def _governing_air(
    a, counts, rows_mask_c, delta, rs: RuleSet, arrangement, t_open, t_row, short=False
) -> _Governing:
    """Per circuit, the air stretch with the smallest product of temperature and grouping
    factors (:class:`_Governing`; a circuit without a stretch: product nan, stretch −1, count 0,
    grouping factor 1.0, temperature factor nan).

    Only incidences of circuits with ``rows_mask_c`` are evaluated; ``delta`` (per circuit) is
    added to the counts of that circuit's own stretches (its candidate extra parallel sets);
    ``arrangement`` is each circuit's arrangement in air; ``t_open`` / ``t_row`` the kind's
    temperature factor in open air / behind the modules. The incidence is sorted by circuit.
    With ``short`` (a rule set's short-section exception): whether the governing stretch may be
    disregarded, and the runner-up stretch.
    """
    n = rows_mask_c.size
    ic, ks = a["air_inc_circuit"], a["air_inc_stretch"]
    sel = rows_mask_c[ic]
    c, k = ic[sel], ks[sel]
    cnt = counts[k] + delta[c]
    g = rs.air_group_factor(cnt, arrangement[c]) if c.size else np.ones(0)
    t = np.where(a["air_behind_modules"][k], t_row, t_open)
    short_of = None
    if short:

        def short_of(pos, who):
            return rs.short_section(a["air_length_m"][k[pos]], a["cable_m"][who])

    return _governing(n, c, (t * g, k, cnt, g, t), np.nan, short_of)


# --------------------------------------------------------------------------------------------
# selection for one kind


def _select(kd: _KindData, sub, a, c, seg, counts, p_cur, budget, design, rs, per_set=None) -> dict:
    """Pick (parallel, size) for the circuits ``kd.idx[sub]``; per-circuit details in that order."""
    idx = kd.idx[sub]
    k = idx.size
    n_sizes = kd.sizes.size
    n = a["kind"].size
    chosen = np.zeros(k, dtype=bool)
    out_pp = np.full(k, kd.p_max, dtype=np.int64)
    out_s = np.full(k, n_sizes - 1, dtype=np.int64)
    det: dict[str, np.ndarray] = {}
    p_loc = p_cur[idx]
    for pp in range(1, kd.p_max + 1):
        last = pp == kd.p_max
        act = ~chosen & (p_loc <= pp)
        if not np.any(act):
            continue
        li = np.flatnonzero(act)
        gi = idx[li]
        mask_c = np.zeros(n, dtype=bool)
        mask_c[gi] = True
        delta = np.zeros(n)
        delta[gi] = pp - p_cur[gi]
        if per_set is not None:  # grouping counts conductors
            delta[gi] *= per_set[gi]
        short = c["short"]
        bur = _governing_buried(a, seg["fixed"], counts[0], mask_c, delta, rs, short)
        t_open, t_row = c["t_open"][kd.kind], c["t_air"][kd.kind]
        air = _governing_air(
            a, counts[1], mask_c, delta, rs, c["arrangement"], t_open, t_row, short
        )
        ev = _evaluate(kd, a, c, gi, pp, bur, air, budget[li], design, rs)
        ok = ev["ok"]
        anyok = ok.any(axis=1)
        first = np.argmax(ok, axis=1)
        take = anyok | last
        s_idx = np.where(anyok, first, n_sizes - 1)
        rows = np.flatnonzero(take)
        out_pp[li[rows]] = pp
        out_s[li[rows]] = s_idx[rows]
        chosen[li[rows]] = True
        picked = {key: mat[rows, s_idx[rows]] for key, mat in ev.items() if key != "ok"}
        picked.update(_details(picked["env"], gi[rows], bur, air, c, kd, picked.get("alt")))
        for key, vec in picked.items():
            if key not in det:
                det[key] = np.zeros(k, dtype=vec.dtype)
            det[key][li[rows]] = vec
        if chosen.all():
            break
    det["pp"] = out_pp
    det["s_idx"] = out_s
    det["size"] = kd.sizes[out_s]
    return det


def _group_units(a: dict, rs: RuleSet) -> np.ndarray | None:
    """Per circuit, what one cable set adds to a grouping count: None where the rule set counts
    circuits (cable sets), else its current-carrying conductors."""
    if rs.group_counts == "circuits":
        return None
    phases = np.where(a["kind"] == KIND_AC, a["phases"], 0)
    return np.asarray(rs.current_carrying_conductors(a["kind"], phases), dtype=float)


def _group_base(a: dict, per_set: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Conductors per trench segment and per air stretch with one set per circuit: those of the
    incident circuits, plus, for circuits counted by routing but not given to calc, the most
    conductors of any circuit there (2 where none is given) each (conservative)."""
    out = []
    for inc_c, inc_s, count in (
        (a["inc_circuit"], a["inc_segment"], a["seg_count"]),
        (a["air_inc_circuit"], a["air_inc_stretch"], a["air_count"]),
    ):
        size = count.size
        given = np.bincount(inc_s, weights=per_set[inc_c], minlength=size)
        incident = np.bincount(inc_s, minlength=size)
        most = np.full(size, 2.0)
        np.maximum.at(most, inc_s, per_set[inc_c])
        out.append(given + np.maximum(count - incident, 0) * most)
    return out[0], out[1]


def _on_routes(
    a: dict, base: tuple[np.ndarray, np.ndarray], per_circuit: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """``base`` (per trench segment, per air stretch) plus each circuit's ``per_circuit`` on
    every segment and air stretch of its route."""
    seg, air = base
    return (
        seg
        + np.bincount(a["inc_segment"], weights=per_circuit[a["inc_circuit"]], minlength=seg.size),
        air
        + np.bincount(
            a["air_inc_stretch"], weights=per_circuit[a["air_inc_circuit"]], minlength=air.size
        ),
    )


def _air_temp_c(design: DesignParams, kind: int) -> float:
    """Air temperature of a kind's air environment [°C]: strings run behind the modules."""
    if kind == KIND_STRING and design.row_air_temp_c is not None:
        return design.row_air_temp_c
    return design.air_temp_c


def _evaluate(kd: _KindData, a, c, gi, pp, bur, air, budget, design, rs) -> dict:
    """Matrices [circuits, sizes] of capacity, drop and pass flags at ``pp`` parallel sets.

    A size carries the circuit when its capacity Iz meets the design current and either the
    backfeed (arrays: the other arrays of the input; 0 otherwise) or, failing that, the capacity
    the protection then needs (an array fuse's max(In, I2/1.45); infinite where none can be
    fitted). ``i_req`` is what the size is held to: the design current and the backfeed where
    the size carries the backfeed or no fuse can be fitted, else the fuse's capacity.
    """
    loaded = c["loaded"][gi]
    has_air = a["air_m"][gi] > 0
    no_env = ~has_air & ~np.isfinite(bur["D1"].product[gi]) & ~np.isfinite(bur["D2"].product[gi])
    has_air |= no_env
    t_air = c["t_air"][kd.kind]
    t_gnd = c["t_gnd"][kd.kind]
    f_env = np.stack(
        [
            np.where(has_air, np.where(np.isnan(air.product[gi]), t_air, air.product[gi]), np.inf),
            t_gnd * bur["D1"].product[gi],
            t_gnd * bur["D2"].product[gi],
        ]
    )  # [3, k]; inf = environment absent
    base = np.stack(
        [
            np.where(
                (loaded == 3)[:, None],
                kd.base.get((env, 3), kd.base[(env, 2)])[None, :],
                kd.base[(env, 2)][None, :],
            )
            for env in ENV_NAMES
        ]
    )  # [3, k, S]
    with np.errstate(invalid="ignore"):
        cap_env = np.where(np.isfinite(f_env)[:, :, None], base * f_env[:, :, None], np.inf)
    env = np.argmin(cap_env, axis=0)  # [k, S]
    alt = None
    if air.short is not None:  # a short governing stretch may be disregarded (nec 310.14(A)(2))
        cap_env, env, alt = _short_section(cap_env, env, base, bur, air, gi, t_air, t_gnd)
    cap = np.take_along_axis(cap_env, env[None], axis=0)[0]  # per conductor set, derated
    base_g = np.take_along_axis(base, env[None], axis=0)[0]
    cap_tot = cap * pp

    i_op = c["i_op"][gi][:, None]
    i_des = c["i_design"][gi][:, None]
    i_bf = c["i_backfeed"][gi][:, None]
    i_prot = c["i_protected"][gi][:, None]
    theta_max = np.where(env == 0, kd.theta_air, kd.theta_bur)
    amb = np.where(env == 0, _air_temp_c(design, kd.kind), design.ground_temp_c)
    theta = conductor_temp_c(design.conductor_temp, theta_max, amb, i_op, cap_tot)
    r = rs.r_at_temp_ohm_km(kd.r20[None, :], theta, kd.material)
    ph = c["phases_eff"][gi]
    if kd.kind == KIND_AC:  # skin and proximity effect, IEC 60287-1-1
        r = r * rs.ac_resistance_factor(
            kd.sizes[None, :], kd.material, r, design.frequency_hz, ph[:, None]
        )
    x = np.where((ph == 1)[:, None], kd.x[1][None, :], kd.x[3][None, :])
    dv = vdrop_v(a["cable_m"][gi][:, None], i_op, r, x, a["pf"][gi][:, None], ph[:, None], pp)
    pct = vdrop_pct(dv, c["u_ref"][gi][:, None])

    carries = cap_tot >= i_bf * (1.0 - _EPS)  # the backfeed, unprotected (0 but for arrays)
    ok_cap = (cap_tot >= i_des * (1.0 - _EPS)) & (carries | (cap_tot >= i_prot * (1.0 - _EPS)))
    # where no array fuse can be fitted (none fits, or the design uses none) the cable must
    # carry the backfeed itself: that is what it is held to, fitting or not
    fusable = np.isfinite(i_prot)
    i_req = np.where(carries | ~fusable, np.maximum(i_des, i_bf), np.maximum(i_des, i_prot))
    req1 = cap1 = np.full(ok_cap.shape, np.nan)
    if kd.term is not None:  # a second condition before correction (nec 690.8(B)(1))
        cap1 = np.broadcast_to(kd.term * pp, ok_cap.shape)  # [k, S]
        req1 = np.broadcast_to(rs.terminal_required_a(i_des), ok_cap.shape)
        ok_cap = ok_cap & (cap1 >= req1 * (1.0 - _EPS))
        # the device each size would have: string fuse / a.c. breaker, or the array fuse where
        # the size does not carry the backfeed; protection with the limited ampacity (240.4)
        if rs.protection_per_size:
            ocpd = np.where(carries, c["ocpd"][gi][:, None], c["array_fuse"][gi][:, None])
            prot = rs.conductor_protected(
                ocpd, np.minimum(cap_tot, cap1), kd.sizes[None, :], kd.material
            )
            ok_cap = ok_cap & prot
    ok_vd = pct <= budget[:, None] + _EPS
    ok = ok_cap & ok_vd
    if kd.k_sc is not None:
        smin = design.fault_ka * 1e3 * np.sqrt(design.clear_s) / kd.k_sc  # [S], per conductor
        ok_sc = np.broadcast_to(kd.sizes >= smin * (1.0 - _EPS), ok.shape)
        ok = ok & ok_sc
        smin_m = np.broadcast_to(smin, ok.shape)
    else:
        ok_sc = np.ones_like(ok)
        smin_m = np.full(ok.shape, np.nan)

    return {
        "ok": ok,
        "ok_cap": ok_cap,
        "i_req": i_req,
        "carries": carries,
        "ok_vd": ok_vd,
        "ok_sc": ok_sc,
        "cap_tot": cap_tot,
        "base": base_g,
        "env": env,
        "theta": theta,
        "r": r,
        "dv": dv,
        "pct": pct,
        "smin": smin_m,
        "no_env": np.broadcast_to(no_env[:, None], env.shape),
        "req1": req1,
        "cap1": cap1,
        **({} if alt is None else {"alt": alt}),
    }


def _short_section(cap_env, env, base, bur, air, gi, t_air, t_gnd):
    """Disregard the governing stretch where it is short (the rule set's
    :meth:`~calc.rules.RuleSet.short_section`): its environment's capacity becomes that of the
    environment's runner-up stretch (none: absent), and the governing environment is chosen
    again. Only the one governing stretch is disregarded, and only where another stretch
    remains. Returns (capacities [3, k, S], environment [k, S], whether the runner-up of the
    environment governs [k, S])."""
    envs = (air, bur["D1"], bur["D2"])
    f2 = np.stack([air.runner_up.product[gi], *(t_gnd * g.runner_up.product[gi] for g in envs[1:])])
    shorts = np.stack([g.short[gi] for g in envs])  # [3, k]
    gshort = np.take_along_axis(np.broadcast_to(shorts[:, :, None], cap_env.shape), env[None], 0)[0]
    with np.errstate(invalid="ignore"):
        cap2 = np.where(np.isfinite(f2)[:, :, None], base * f2[:, :, None], np.inf)
    mod = cap_env.copy()
    e = env[None]
    np.put_along_axis(mod, e, np.take_along_axis(cap2, e, 0), 0)
    env2 = np.argmin(mod, axis=0)
    applies = gshort & np.isfinite(np.min(mod, axis=0))
    new_env = np.where(applies, env2, env)
    used2 = applies & (env2 == env)
    out = np.where(applies[None], mod, cap_env)
    return out, new_env, used2


def _chosen(g: _Governing, gi: np.ndarray, alt: np.ndarray | None) -> _Governing:
    """``g`` at the circuits ``gi`` (product, stretch, count, group and temperature factors);
    the runner-up's where ``alt`` (short-section exception)."""
    first = [None if f is None else f[gi] for f in g[:5]]
    if alt is None or g.runner_up is None:
        return _Governing(*first)
    second = g.runner_up[:5]
    return _Governing(
        *(
            None if f is None else np.where(alt, f2[gi], f)
            for f, f2 in zip(first, second, strict=True)
        )
    )


def _details(
    env: np.ndarray, gi: np.ndarray, bur: dict, air_g: _Governing, c: dict, kd, alt=None
) -> dict:
    """Factors at the governing environment of the chosen size (vectors over circuits ``gi``);
    ``alt``: where the environment's runner-up stretch governs (short-section exception)."""
    air = env == 0
    in_air = _chosen(air_g, gi, alt)
    t_air = np.where(np.isnan(in_air.temp), c["t_air"][kd.kind], in_air.temp)
    temp_f = np.where(air, t_air, c["t_gnd"][kd.kind])
    seg_i = np.full(env.shape, -1, dtype=np.int64)
    group = np.where(air, in_air.group, 1.0)
    gcount = np.where(air, in_air.count, 0.0)
    stretch = np.where(air, in_air.stretch, -1)
    for e, name in ((1, "D1"), (2, "D2")):
        sel = env == e
        seg_g = _chosen(bur[name], gi, alt)
        seg_i = np.where(sel, seg_g.stretch, seg_i)
        group = np.where(sel, seg_g.group, group)
        gcount = np.where(sel, seg_g.count, gcount)
    has = seg_i >= 0
    safe = np.maximum(seg_i, 0)
    soil = np.where(has, c["seg_soil"][safe] if c["seg_soil"].size else 1.0, 1.0)
    depth = np.where(has, c["seg_depth"][safe] if c["seg_depth"].size else 1.0, 1.0)
    return {
        "temp_f": temp_f,
        "soil_f": soil,
        "depth_f": depth,
        "group_f": group,
        "group_count": gcount,
        "seg": seg_i,
        "air_stretch": stretch,
    }


# --------------------------------------------------------------------------------------------
# main entry


def size_circuits(
    inp: SizingInput, design: DesignParams | None = None, rules: str = "iec"
) -> SizingResult:
    """Size every circuit of ``inp`` (see the module docstring for the method).

    Parameters
    ----------
    inp : SizingInput
        Circuits, trench segments and their incidence (SI units).
    design : DesignParams, optional
        Design settings; default ``DesignParams()``.
    rules : str
        Rule set name (``calc.rules.rule_names()``); "iec" by default.

    Returns
    -------
    SizingResult
        Per-circuit sizes, capacities, factors, drops, losses, status and notes. A circuit that
        cannot be sized has ``ok = False`` and a note with the numbers; invalid input raises
        :class:`~calc.errors.InputError`.

    Examples
    --------
    One string (10 A Isc, 9.5 A Imp, 1000 V) on a 100 m route, 20 m of it in air and the rest in one
    direct-buried trench segment at the reference conditions, shared by 4 circuits touching:

    >>> inp = SizingInput(kind=np.array([0]), cable_m=np.array([100.0]), air_m=np.array([20.0]),
    ...     isc_a=np.array([10.0]), imp_a=np.array([9.5]), vmp_v=np.array([1000.0]),
    ...     seg_depth_m=np.array([0.7]), seg_laying=np.array([0]), seg_spacing_m=np.array([0.0]),
    ...     seg_soil_k_m_w=np.array([2.5]), seg_count=np.array([4]),
    ...     inc_circuit=np.array([0]), inc_segment=np.array([0]))
    >>> r = size_circuits(inp)
    >>> float(r.size_mm2[0]), str(r.governing_env[0]), float(r.factor_group[0]), bool(r.ok[0])
    (6.0, 'D2', 0.6, True)
    >>> round(float(r.vdrop_pct[0]), 2)  # 4 mm² would give 1.35 % > 1 % (R at 120 °C)
    0.82
    """
    design = DesignParams() if design is None else design
    rs = get_rules(rules)
    _check_design(design, rs)
    a = _prepare(inp, design)
    n = a["kind"].size
    m = a["seg_depth_m"].size
    kind = a["kind"]
    dc = kind != KIND_AC
    is_str = kind == KIND_STRING
    is_ac = kind == KIND_AC

    kinds = {k: np.flatnonzero(kind == k) for k in range(len(KIND_NAMES))}
    kd = {k: _kind_data(k, idx, design, rs) for k, idx in kinds.items() if idx.size}
    # the order circuits are sized in: strings, the feeders from the strings up (sub-array levels,
    # deepest first, then the array cables), a.c.; each step: (kind, its circuits' positions)
    level = a["level"]
    steps = [(KIND_STRING, None)]
    sub_levels = sorted(set(level[kinds[KIND_SUBARRAY]].tolist()), reverse=True)
    steps += [(KIND_SUBARRAY, lv) for lv in sub_levels]
    steps += [(KIND_ARRAY, None), (KIND_AC, None)]
    limit = {KIND_SUBARRAY: design.drop_subarray_pct, KIND_ARRAY: design.drop_array_pct}

    # ---- design and operating currents, protection
    prot_c = _protection(a, design, rs)
    i_op = prot_c["i_op"]
    u_ref = np.where(dc, a["vmp_v"], a["ac_v"])
    p_w = np.where(dc, a["vmp_v"] * i_op, a["ac_kva"] * 1e3 * a["pf"])
    phases_eff = np.where(is_ac, a["phases"], 0)

    c = {
        **prot_c,
        "u_ref": u_ref,
        "phases_eff": phases_eff,
        "loaded": np.where(is_ac & (a["phases"] == 3), 3, 2),
        "arrangement": np.asarray(design.air_arrangement, dtype=object)[kind],
        # the rule set's short-section exception, where the stretches' lengths are given
        "short": rs.short_section_exception
        and bool(np.isfinite(a["seg_length_m"]).any() or np.isfinite(a["air_length_m"]).any()),
        "t_air": {
            k: rs.air_temp_factor(_air_temp_c(design, k), d.insulation) for k, d in kd.items()
        },
        "t_open": {k: rs.air_temp_factor(design.air_temp_c, d.insulation) for k, d in kd.items()},
        "t_gnd": {
            k: rs.ground_temp_factor(design.ground_temp_c, d.insulation) for k, d in kd.items()
        },
    }

    # ---- fixed per-segment factors
    lay = a["seg_laying"]
    seg_soil = rs.soil_factor(a["seg_soil_k_m_w"], lay) if m else np.zeros(0)
    seg_depth = (
        rs.depth_factor(a["seg_depth_m"], np.where(lay == 1, design.duct_od_m, design.cable_od_m))
        if m
        else np.zeros(0)
    )
    c["seg_soil"], c["seg_depth"] = seg_soil, seg_depth
    seg = {"fixed": seg_soil * seg_depth}

    # ---- iterate parallel sets <-> grouping; after the first pass only circuits on segments whose
    # count changed (and the feeders above them) are re-evaluated. ``below``: each d.c.
    # circuit's own drop plus the worst path below it, filled as the levels are sized
    p = np.ones(n, dtype=np.int64)
    budgets = np.full(n, np.nan)
    budgets[is_str] = min(design.drop_string_pct, design.drop_dc_total_pct)
    budgets[is_ac] = design.drop_ac_pct
    det: dict[int, dict] = {}
    below = np.zeros(n)
    prev = None
    affected = np.ones(n, dtype=bool)
    # what the grouping factors count: circuits (cable sets), or current-carrying conductors
    # (each extra set then adds its circuit's conductors)
    per_set = _group_units(a, rs)
    sets_base = (a["seg_count"], a["air_count"])
    group_base = sets_base if per_set is None else _group_base(a, per_set)
    unit = 1.0 if per_set is None else per_set
    iterations = 0
    # a pass that does not settle adds at least one conductor set (a circuit's count never falls:
    # _select starts from it) and no circuit exceeds max_parallel, so the iteration settles
    # within 1 + n · (max_parallel − 1) passes (a fixed cap could refuse a plan still settling)
    max_passes = 1 + n * (int(design.max_parallel) - 1)
    for iteration in range(1, max_passes + 1):
        iterations = iteration
        group = _on_routes(a, group_base, (p - 1) * unit)
        if prev is not None:  # a count of conductors changes where one of cable sets does
            changed = group[0] != prev[0]
            air_changed = group[1] != prev[1]
            affected = np.zeros(n, dtype=bool)
            affected[a["inc_circuit"][changed[a["inc_segment"]]]] = True
            affected[a["air_inc_circuit"][air_changed[a["air_inc_stretch"]]]] = True
            affected = _with_feeders_above(a["parent"], affected)
        prev = group
        for k, lv in steps:
            if k not in kd:
                continue
            mine = affected[kinds[k]] & (True if lv is None else level[kinds[k]] == lv)
            if k in limit:
                child_max = _child_max(a["parent"], below, n)
                budgets[kinds[k]] = np.minimum(
                    limit[k], design.drop_dc_total_pct - child_max[kinds[k]]
                )
            sub = np.flatnonzero(mine)
            if sub.size == 0:
                continue
            new = _select(
                kd[k], sub, a, c, seg, group, p, budgets[kinds[k][sub]], design, rs, per_set
            )
            if k not in det:
                det[k] = {key: np.zeros(kinds[k].size, val.dtype) for key, val in new.items()}
            for key, val in new.items():
                det[k][key][sub] = val
            if k != KIND_AC:  # own drop + the worst path below, for the level above
                idx = kinds[k][sub]
                below[idx] = new["pct"] + (0.0 if k == KIND_STRING else child_max[idx])
        new_p = p.copy()
        for k, d in det.items():
            new_p[kinds[k]] = d["pp"]
        if np.array_equal(new_p, p):
            break
        p = new_p
    else:  # pragma: no cover - unreachable: counts only grow, bounded by max_parallel (above)
        raise ConvergenceError(f"parallel/grouping iteration did not settle in {max_passes} passes")
    child_max = _child_max(a["parent"], below, n)
    # cable sets per segment and air stretch: the grouping count, unless that counts conductors
    counts, air_counts = group if per_set is None else _on_routes(a, sets_base, p - 1.0)

    c.update(p_w=p_w, group_final=group)
    settled = _Settled(det, counts, air_counts, budgets, child_max, iterations)
    return _assemble(a, c, kd, kinds, settled, design, rs)


def _protection(a: dict, design: DesignParams, rs: RuleSet) -> dict:
    """Design Isc, protection and the currents each circuit is held to (per circuit).

    Returns ``isc_design`` (d.c.: a string's module Isc, an array's total, bifacial gain
    included), ``i_design`` (capacity always needed), ``i_backfeed`` (arrays: what the other
    arrays of the input feed into a fault; 0 otherwise), ``i_protected`` (the capacity needed
    instead where the cable does not carry the backfeed: an array fuse's max(In, I2/1.45);
    infinite where no fuse is used or none fits), ``i_op`` (drop and losses), the string
    protection ``prot`` and the strings in parallel it counted (``n_par``), the ``array_fuse``
    pick and the ``breaker`` of a.c. circuits.
    """
    kind = a["kind"]
    n = kind.size
    dc, is_str, is_ac = kind != KIND_AC, kind == KIND_STRING, kind == KIND_AC
    is_feed = np.isin(kind, FEEDER_KINDS)
    # bifacial design Isc of every d.c. circuit; a feeder with strings below it: the mean of
    # their design Isc (summed up the tree, the deepest level first)
    isc = np.full(n, np.nan)
    d = np.flatnonzero(dc)
    isc[d] = rs.bifacial_isc_a(
        a["isc_a"][d], a["bifaciality"][d], design.rear_irradiance_ratio, a["isc_bifacial_a"][d]
    )
    par, level = a["parent"], a["level"]
    total, count = np.zeros(n), np.zeros(n)
    child = is_str & (par >= 0)
    np.add.at(total, par[child], isc[child])
    np.add.at(count, par[child], 1.0)
    for lv in range(int(level.max(initial=0)), 0, -1):  # sub-array levels carry their strings up
        up = (kind == KIND_SUBARRAY) & (level == lv)
        np.add.at(total, par[up], total[up])
        np.add.at(count, par[up], count[up])
    isc = np.where(is_feed & (count > 0), total / np.maximum(count, 1), isc)
    strings = rs.gpv_fuse_ratings_a(design.string_fuse_ratings_a, "string_fuse_ratings_a")
    n_par = _strings_in_parallel(a, is_str, is_feed)
    prot = rs.string_protection(isc, n_par, a["max_fuse_a"], a["fuse_a"], strings)
    fuse_a = np.where(is_str, prot.fuse_a, np.nan)
    isc_total = np.where(is_feed, isc * a["n_strings"], isc)

    i_backfeed, i_protected = np.zeros(n), np.full(n, np.inf)
    array_fuse = np.full(n, np.nan)
    fuse_fits = np.ones(n, dtype=bool)
    feed = np.flatnonzero(is_feed)
    if feed.size:
        i_backfeed[feed] = rs.backfeed_a(isc_total[feed], _input_of(a, feed), level[feed] == 0)
        ratings = rs.gpv_fuse_ratings_a(design.array_fuse_ratings_a, "array_fuse_ratings_a")
        pick = rs.array_fuse(isc_total[feed], ratings)
        fuse_fits[feed] = pick.ok
        if design.array_protection == "fuse":
            array_fuse[feed] = pick.fuse_a
            fused = rs.array_min_capacity_a(isc_total[feed], i_backfeed[feed], pick.fuse_a)
            i_protected[feed] = np.where(pick.ok, fused, np.inf)

    ib = np.full(n, np.nan)
    breaker_in, breaker_i2, iz_min = (np.full(n, np.nan) for _ in range(3))
    breaker_ok = np.ones(n, dtype=bool)
    ac = np.flatnonzero(is_ac)
    if ac.size:
        ib[ac] = rs.ac_max_current_a(
            a["ac_kva"][ac], a["ac_v"][ac], a["phases"][ac], a["ac_max_a"][ac]
        )
        br = rs.ac_breaker(
            ib[ac], design.ac_breaker_device, design.ac_breaker_ratings_a, "ac_breaker_ratings_a"
        )
        breaker_in[ac], breaker_i2[ac], iz_min[ac] = br.in_a, br.i2_a, br.iz_min_a
        breaker_ok[ac] = br.ok

    i_design = np.select(
        [is_str, is_feed],
        [
            rs.string_design_current_a(isc, n_par, fuse_a),
            rs.array_design_current_a(isc, a["n_strings"]),
        ],
        default=np.where(breaker_ok, iz_min, ib),
    )
    i_op = np.where(dc, a["imp_a"] * a["n_strings"], ib)
    return {
        "ocpd": np.where(is_str, fuse_a, breaker_in),  # the device fitted (nan: none)
        "isc_design": np.where(dc, isc_total, np.nan),
        "i_design": i_design,
        "i_backfeed": i_backfeed,
        "i_protected": i_protected,
        "i_op": i_op,
        "prot": prot,
        "n_par": n_par,
        "fuse_required": prot.required & is_str,
        "fuse_a": fuse_a,
        "array_fuse": array_fuse,
        "array_fuse_fits": fuse_fits,
        "ib": ib,
        "breaker_in": breaker_in,
        "breaker_i2": breaker_i2,
        "breaker_ok": breaker_ok,
    }


def _voc_max(a: dict, design: DesignParams, rs: RuleSet) -> np.ndarray:
    """Each d.c. circuit's highest open-circuit voltage [V] (:func:`calc.pv.voc_max_v`): a
    string's at ``min_ambient_c``; a feeder's, the highest of the strings below it."""
    kind, par, level = a["kind"], a["parent"], a["level"]
    out = np.full(kind.size, np.nan)
    s = kind == KIND_STRING
    out[s] = rs.voc_max_v(a["voc_v"][s], a["voc_coeff_pct_per_c"][s], design.min_ambient_c)
    given = np.isin(kind, FEEDER_KINDS)
    out[given] = rs.voc_max_v(
        a["voc_v"][given], a["voc_coeff_pct_per_c"][given], design.min_ambient_c
    )  # a feeder given without its strings
    top = np.full(kind.size, -np.inf)
    child = s & (par >= 0)
    np.fmax.at(top, par[child], out[child])
    for lv in range(int(level.max(initial=0)), 0, -1):
        up = (kind == KIND_SUBARRAY) & (level == lv)
        merged = np.fmax(top[up], out[up])
        np.fmax.at(top, par[up], merged)
    has = np.isfinite(top)
    out[has] = np.fmax(top[has], np.nan_to_num(out[has], nan=-np.inf))
    return out


def _strings_in_parallel(a: dict, is_str: np.ndarray, is_feed: np.ndarray) -> np.ndarray:
    """The strings each string is in parallel with for the IEC 62548 string rule: the strings
    a fault on it can draw current from up to the nearest overcurrent device (IEC 62548:2016,
    from memory). A string at a combiner counts every string of its inverter input: an array
    or sub-array cable rated for the backfeed has no fuse, and whether an array fuse is fitted
    is known only once the array cable is sized, so the count is the input's whole (on the
    safe side where array fuses are fitted). Strings straight on an input count the strings of
    that input (``strings_in_parallel``)."""
    n_par = a["strings_in_parallel"]
    par = a["parent"]
    s = np.flatnonzero(is_str & (par >= 0))
    if not s.size:
        return n_par
    top = np.flatnonzero(is_feed & (a["level"] == 0))
    keys, inverse = np.unique(_input_of(a, top), return_inverse=True)
    total = np.bincount(inverse, weights=a["n_strings"][top], minlength=keys.size)
    out = n_par.astype(float).copy()
    out[s] = np.maximum(out[s], total[np.searchsorted(keys, _input_of(a, par[s]))])
    return out


def buried_deep_enough(
    depth_m: np.ndarray, in_duct: np.ndarray, design: DesignParams
) -> np.ndarray:
    """Whether each buried stretch lies deeper than half the outer diameter of what it holds
    (``design.duct_od_m`` in a duct, else ``design.cable_od_m``): shallower, the cable or duct
    is not buried and the depth factor has no meaning. nan depths are not deep enough."""
    od_m = np.where(np.asarray(in_duct, dtype=bool), design.duct_od_m, design.cable_od_m)
    return np.asarray(depth_m, dtype=float) > od_m / 2


def _input_of(a: dict, feed: np.ndarray) -> np.ndarray:
    """The inverter input of each feeder in ``feed``: its array cable's ``dc_group``, or, where
    that is −1 (alone on its input), an id of that array cable alone (negative, unique)."""
    par, kind = a["parent"], a["kind"]
    top = feed.copy()
    for _ in range(int(a["level"].max(initial=0))):  # climb to the array cable
        sub = kind[top] == KIND_SUBARRAY
        top[sub] = par[top[sub]]
    group = a["dc_group"][top]
    return np.where(group >= 0, group, -1 - top)


class _Settled(NamedTuple):
    """Where the parallel-sets/grouping iteration settled."""

    det: dict[int, dict]  # per kind: the selection of each of its circuits
    counts: np.ndarray  # cable sets per segment
    air_counts: np.ndarray  # cable sets per air stretch
    budgets: np.ndarray  # voltage-drop budget of each circuit [%]
    child_max: np.ndarray  # worst path drop below each feeder (its strings, sub-arrays) [%]
    iterations: int


def _child_max(parent: np.ndarray, below: np.ndarray, n: int) -> np.ndarray:
    """Worst path drop [%] below each feeder: the largest ``below`` among the circuits whose
    parent it is (0 if none)."""
    child_max = np.zeros(n)
    has = parent >= 0
    if has.any():
        np.maximum.at(child_max, parent[has], below[has])
    return child_max


def _with_feeders_above(parent: np.ndarray, affected: np.ndarray) -> np.ndarray:
    """``affected`` with every feeder above an affected circuit (its budget depends on them)."""
    out = affected.copy()
    frontier = affected & (parent >= 0)
    while frontier.any():
        up = np.zeros_like(out)
        up[parent[frontier]] = True
        frontier = up & ~out & (parent >= 0)
        out |= up
    return out


def _fmt_size(pp: int, size: float, material: str, rs: RuleSet | None = None) -> str:
    text = f"{size:g} mm²" if rs is None else rs.size_text(size)
    return f"{pp}×{text} {material}" if pp > 1 else f"{text} {material}"


def _assemble(a, c, kd, kinds, settled: _Settled, design, rs) -> SizingResult:
    """The result arrays from the settled iteration (``a``: the input arrays, ``c``: the
    per-circuit and per-segment values computed once, ``kd``: the data of each kind)."""
    det, counts, air_counts, budgets, child_max, iterations = settled
    fuse_required, fuse_a, prot, p_w = c["fuse_required"], c["fuse_a"], c["prot"], c["p_w"]
    seg_soil, seg_depth = c["seg_soil"], c["seg_depth"]
    n = a["kind"].size
    m = a["seg_depth_m"].size
    kind = a["kind"]
    out = {
        "size_mm2": np.full(n, np.nan),
        "parallel": np.ones(n, dtype=np.int64),
        "material": np.full(n, "", dtype="U4"),
        "insulation": np.full(n, "", dtype="U4"),
        "ampacity_base_a": np.full(n, np.nan),
        "derating": np.full(n, np.nan),
        "ampacity_a": np.full(n, np.nan),
        "governing_segment": np.full(n, -1, dtype=np.int64),
        "governing_air": np.full(n, -1, dtype=np.int64),
        "governing_env": np.full(n, "air", dtype="U3"),
        "factor_temp": np.full(n, np.nan),
        "factor_soil": np.full(n, np.nan),
        "factor_depth": np.full(n, np.nan),
        "factor_group": np.full(n, np.nan),
        "group_count": np.zeros(n),
        "conductor_temp_c": np.full(n, np.nan),
        "vdrop_v": np.full(n, np.nan),
        "vdrop_pct": np.full(n, np.nan),
        "sc_min_mm2": np.full(n, np.nan),
        "r_ohm_km": np.full(n, np.nan),
    }
    i_req = np.full(n, np.nan)
    req1, cap1 = np.full(n, np.nan), np.full(n, np.nan)
    carries = np.ones(n, bool)
    fail_cap = np.zeros(n, bool)
    fail_vd = np.zeros(n, bool)
    fail_sc = np.zeros(n, bool)
    no_env = np.zeros(n, bool)
    for k, d in det.items():
        idx = kinds[k]
        out["size_mm2"][idx] = d["size"]
        out["parallel"][idx] = d["pp"]
        out["material"][idx] = kd[k].material
        out["insulation"][idx] = kd[k].insulation
        out["ampacity_base_a"][idx] = d["base"]
        out["ampacity_a"][idx] = d["cap_tot"]
        out["governing_segment"][idx] = d["seg"]
        out["governing_air"][idx] = d["air_stretch"]
        out["governing_env"][idx] = np.asarray(ENV_NAMES)[d["env"]]
        out["factor_temp"][idx] = d["temp_f"]
        out["factor_soil"][idx] = d["soil_f"]
        out["factor_depth"][idx] = d["depth_f"]
        out["factor_group"][idx] = d["group_f"]
        out["group_count"][idx] = d["group_count"]
        out["conductor_temp_c"][idx] = d["theta"]
        out["vdrop_v"][idx] = d["dv"]
        out["vdrop_pct"][idx] = d["pct"]
        out["sc_min_mm2"][idx] = d["smin"]
        out["r_ohm_km"][idx] = d["r"]
        i_req[idx] = d["i_req"]
        req1[idx], cap1[idx] = d["req1"], d["cap1"]
        carries[idx] = d["carries"]
        fail_cap[idx] = ~d["ok_cap"]
        fail_vd[idx] = ~d["ok_vd"]
        fail_sc[idx] = ~d["ok_sc"]
        no_env[idx] = d["no_env"]
    out["derating"] = (
        out["factor_temp"] * out["factor_soil"] * out["factor_depth"] * out["factor_group"]
    )
    i_op = c["i_op"]
    i_design = i_req  # the capacity each circuit is held to, backfeed and protection included
    utilisation = i_design / out["ampacity_a"]
    has_term = np.isfinite(req1)
    if has_term.any():  # the governing of the two conditions (nec 690.8(B))
        utilisation = np.where(has_term, np.fmax(utilisation, req1 / cap1), utilisation)

    # cumulative d.c. drop: the worst path through each circuit, from a string to the inverter
    # (the drop below it, its own, and the feeders' above it)
    is_str = kind == KIND_STRING
    is_arr = np.isin(kind, FEEDER_KINDS)  # array and sub-array cables
    par, level = a["parent"], a["level"]
    own = out["vdrop_pct"]
    above = np.zeros(n)
    for lv in range(1, int(level.max(initial=0)) + 1):  # sub-array levels, top down
        sub = (kind == KIND_SUBARRAY) & (level == lv)
        above[sub] = above[par[sub]] + own[par[sub]]
    child = is_str & (par >= 0)
    above[child] = above[par[child]] + own[par[child]]
    total = np.where(kind == KIND_AC, own, np.where(is_arr, own + child_max, own) + above)
    fail_path = is_str & (total > design.drop_dc_total_pct + 1e-9)

    # losses (Joule's law, calc.losses) with the resistance of the drop
    loss = loss_w(i_op, a["cable_m"], out["r_ohm_km"], c["phases_eff"], out["parallel"])
    loss_pct = 100.0 * loss / p_w
    energy = energy_loss_kwh(loss, design.loss_hours_h)
    tot_loss = np.array([loss[kind == k].sum() for k in range(len(KIND_NAMES))])
    tot_p = np.array([p_w[kind == k].sum() for k in range(len(KIND_NAMES))])
    with np.errstate(invalid="ignore", divide="ignore"):
        tot_pct = np.where(tot_p > 0, 100.0 * tot_loss / tot_p, 0.0)

    # protection, verified on the cables as sized (calc.protection)
    is_ac = kind == KIND_AC
    iz = out["ampacity_a"]
    arr_fuse = np.where(is_arr & ~carries, c["array_fuse"], np.nan)
    bf, b_in, b_i2 = c["i_backfeed"], c["breaker_in"], c["breaker_i2"]
    arr_check = _check(is_arr, lambda i: rs.array_cable_check(iz[i], bf[i], arr_fuse[i]))
    ac_check = _check(is_ac, lambda i: rs.overload_check(c["ib"][i], b_in[i], iz[i], b_i2[i]))
    prot_ok = np.where(is_str, prot.ok, np.where(is_ac, c["breaker_ok"], True))
    voc_max = _voc_max(a, design, rs)
    over_voltage = voc_above_rating(voc_max, design.dc_rated_v)
    prot_ok &= ~over_voltage
    ok = ~(fail_cap | fail_vd | fail_sc | fail_path) & prot_ok & arr_check[0] & ac_check[0]
    notes = np.where(is_str, prot.note, "").astype(object)
    _add_notes(
        notes,
        over_voltage,
        lambda i: (
            f"Voc {voc_max[i]:.0f} V at {design.min_ambient_c:g} °C exceeds the rated "
            f"{design.dc_rated_v:g} V ({rs.voc_source})"
        ),
        (voc_max,),
    )
    no_breaker = is_ac & ~c["breaker_ok"]
    _add_notes(
        notes,
        no_breaker,
        lambda i: (
            f"Ib {c['ib'][i]:.0f} A exceeds the largest {design.ac_breaker_device} breaker rating"
        ),
        (c["ib"],),
    )
    unfusable = is_arr & ~carries & ~c["array_fuse_fits"] & (design.array_protection == "fuse")
    _add_notes(
        notes,
        unfusable & fail_cap,
        lambda i: (
            "no standard array fuse within 1.25–2.4 × the array's Isc "
            f"{c['isc_design'][i]:.0f} A (IEC 62548)"
        ),
        (c["isc_design"],),
    )
    _add_notes(notes, no_env, lambda i: "no route environment given: in air assumed")
    if m and rs.buried_review:  # buried ratings the rule set flags for review
        routed = {}
        for env, lay in _LAYING_OF_ENV.items():
            routed[env] = np.zeros(n, dtype=bool)
            routed[env][a["inc_circuit"][a["seg_laying"][a["inc_segment"]] == lay]] = True
        d1, d2 = routed["D1"], routed["D2"]
        for mask, envs in ((d1 & ~d2, "D1"), (d2 & ~d1, "D2"), (d1 & d2, "D1+D2")):
            text = rs.buried_note(envs)
            _add_notes(notes, mask, lambda i, t=text: t)
    if design.fault_ka is not None and not rs.short_circuit_checked:
        sc_text = rs.short_circuit_note()
        _add_notes(notes, is_ac, lambda i: sc_text)
    deriv = out["derating"]

    def cap_note(i):
        why = ""
        if is_arr[i] and c["i_backfeed"][i] > 0 and i_design[i] > c["i_design"][i] * (1 + _EPS):
            how = "an array fuse" if np.isfinite(c["array_fuse"][i]) else "no array fuses"
            why = f" (backfeed {c['i_backfeed'][i]:.0f} A from its input, with {how})"
        return (
            f"needs {i_design[i]:.0f} A{why} after derating {deriv[i]:.2f}; largest allowed "
            f"{_fmt_size(out['parallel'][i], out['size_mm2'][i], out['material'][i], rs)} "
            f"carries {out['ampacity_a'][i]:.0f} A"
        )

    def vd_note(i):
        extra = ""
        if is_arr[i] and child_max[i] > 0:
            extra = (
                f" (d.c. total {design.drop_dc_total_pct:g} % less its strings' "
                f"{child_max[i]:.2f} %)"
            )
        return (
            f"voltage drop {own[i]:.2f} % exceeds {budgets[i]:.2f} %{extra} with largest "
            f"allowed {_fmt_size(out['parallel'][i], out['size_mm2'][i], out['material'][i], rs)}"
        )

    def sc_note(i):
        return (
            f"short circuit {design.fault_ka:g} kA for {design.clear_s:g} s needs "
            f"{out['sc_min_mm2'][i]:.0f} mm² per conductor (adiabatic, IEC 60364-4-43)"
        )

    def path_note(i):
        return (
            f"cumulative d.c. drop {total[i]:.2f} % exceeds {design.drop_dc_total_pct:g} % "
            f"(feeder circuit {par[i]})"
        )

    size_keys = (out["parallel"], out["size_mm2"], out["material"])
    # nec: the uncorrected condition (690.8(B)(1)) or the 240.4 protection may fail instead
    term_fail = fail_cap & (req1 > cap1 * (1.0 + _EPS))
    main_fail = fail_cap & ~(has_term & ~(i_design > out["ampacity_a"] * (1.0 + _EPS)))
    prot_fail = fail_cap & ~term_fail & ~main_fail

    def term_note(i):
        return (
            f"needs 1.25 × {i_design[i]:.0f} A = {req1[i]:.0f} A before correction in the "
            f"{rs.terminal_c(design)} °C terminal column (690.8(B)(1), 110.14(C)); largest allowed "
            f"{_fmt_size(out['parallel'][i], out['size_mm2'][i], out['material'][i], rs)} has "
            f"{cap1[i]:.0f} A"
        )

    def prot_note(i):
        dev = c["ocpd"][i] if np.isfinite(c["ocpd"][i]) else c["array_fuse"][i]
        return (
            f"the {dev:g} A device does not protect the largest allowed "
            f"{_fmt_size(out['parallel'][i], out['size_mm2'][i], out['material'][i], rs)} "
            f"(ampacity {min(out['ampacity_a'][i], cap1[i]):.0f} A with the terminal limit; 240.4)"
        )

    _add_notes(notes, term_fail, term_note, (i_design, req1, cap1, *_size_keys(out)))
    _add_notes(notes, prot_fail, prot_note, (c["ocpd"], c["array_fuse"], cap1, *_size_keys(out)))
    _add_notes(
        notes,
        main_fail,
        cap_note,
        (i_design, deriv, out["ampacity_a"], c["i_backfeed"], *size_keys),
    )
    _add_notes(notes, fail_vd, vd_note, (is_arr, child_max, own, budgets, *size_keys))
    _add_notes(notes, fail_sc, sc_note, (out["sc_min_mm2"],))
    _add_notes(notes, fail_path, path_note, (total, par))
    for check, mask in ((arr_check, is_arr), (ac_check, is_ac)):
        _add_notes(notes, mask & ~check[0] & ~fail_cap, lambda i, t=check[1]: t[i], (check[1],))
    protection = _protection_text(a, c, carries, arr_fuse, iz, design, rs)

    seg_cnt = counts
    grouped = c["group_final"][0]  # circuits, or conductors (rs.group_counts)
    seg_group = rs.group_factor(grouped, a["seg_spacing_m"], a["seg_laying"]) if m else np.zeros(0)
    marking = conductor_marking(kind, c["phases_eff"], a["ac_v"], design.marking)
    out.pop("r_ohm_km")
    return SizingResult(
        **out,
        design_current_a=i_design,
        operating_current_a=i_op,
        utilisation=utilisation,
        vdrop_limit_pct=budgets,
        vdrop_total_pct=total,
        loss_w=loss,
        loss_pct=loss_pct,
        energy_loss_kwh=energy,
        fuse_required=fuse_required,
        fuse_a=fuse_a,
        isc_design_a=c["isc_design"],
        voc_max_v=voc_max,
        backfeed_a=np.where(is_arr, c["i_backfeed"], np.nan),
        array_fuse_a=arr_fuse,
        ac_ib_a=c["ib"],
        ac_breaker_a=c["breaker_in"],
        protection=protection,
        ok=ok,
        note=notes,
        marking=marking,
        seg_soil_factor=seg_soil,
        seg_depth_factor=seg_depth,
        seg_group_factor=seg_group,
        seg_count_final=seg_cnt,
        air_count_final=air_counts,
        total_loss_w=tot_loss,
        total_loss_pct=tot_pct,
        total_energy_loss_kwh=energy_loss_kwh(tot_loss, design.loss_hours_h),
        terminal_required_a=req1,
        terminal_ampacity_a=cap1,
        iterations=iterations,
        rules=rs.name,
    )


def _size_keys(out: dict) -> tuple:
    """The per-circuit arrays a note naming the chosen size depends on."""
    return (out["parallel"], out["size_mm2"], out["material"])


def _check(mask: np.ndarray, run) -> tuple[np.ndarray, np.ndarray]:
    """(ok, note) per circuit of a post-sizing check ``run(indices)`` applied to ``mask``'s
    circuits (the others pass)."""
    ok = np.ones(mask.size, dtype=bool)
    note = np.full(mask.size, "", dtype=object)
    idx = np.flatnonzero(mask)
    if idx.size:
        result = run(idx)
        ok[idx], note[idx] = result.ok, result.note
    return ok, note


def _protection_text(a, c, carries, arr_fuse, iz, design, rs) -> np.ndarray:
    """Which protection rule governed each circuit, in words (the schedule's ``protection``)."""
    kind = a["kind"]
    text = np.full(kind.size, "", dtype=object)
    is_str, is_ac = kind == KIND_STRING, kind == KIND_AC
    is_arr = np.isin(kind, FEEDER_KINDS)
    what = np.where(kind == KIND_SUBARRAY, "sub-array", "array")
    s_par = c["n_par"]  # the count the string rule used (a combiner's: its input's strings)
    fused = is_str & np.isfinite(c["fuse_a"])
    _fill(
        text,
        fused,
        lambda i: (
            f"string fuse {c['fuse_a'][i]:g} A {rs.fuse_word}; {s_par[i]:g} strings in parallel"
        ),
        (c["fuse_a"], s_par),
    )
    _fill(
        text,
        is_str & ~fused,
        lambda i: f"no string fuse needed; {s_par[i]:g} string(s) in parallel",
        (s_par,),
    )
    bf = c["i_backfeed"]
    _fill(text, is_arr & (bf <= 0), lambda i: "alone on its inverter input: no backfeed")
    _fill(
        text,
        is_arr & (bf > 0) & np.isfinite(arr_fuse),
        lambda i: (
            f"{what[i]} fuse {arr_fuse[i]:g} A {rs.fuse_word}: backfeed {bf[i]:.0f} A > Iz "
            f"{iz[i]:.0f} A"
        ),
        (arr_fuse, bf, iz, what),
    )
    cable = design.array_protection == "cable"
    _fill(
        text,
        is_arr & (bf > 0) & ~np.isfinite(arr_fuse) & carries,
        lambda i: (
            ("cable carries" if cable else f"no {what[i]} fuse needed:")
            + f" backfeed {bf[i]:.0f} A ≤ Iz {iz[i]:.0f} A"
        ),
        (bf, iz, what),
    )
    b_in, ib = c["breaker_in"], c["ib"]
    _fill(
        text,
        is_ac & np.isfinite(b_in),
        lambda i: rs.breaker_text(b_in[i], ib[i], iz[i], design.ac_breaker_device),
        (b_in, ib, iz),
    )
    return text


def _fill(out: np.ndarray, mask: np.ndarray, text, keys: tuple = ()) -> None:
    """Set ``out[i] = text(i)`` for each circuit in ``mask`` (formatted once per key)."""
    blank = np.full(out.size, "", dtype=object)
    _add_notes(blank, mask, text, keys)
    out[mask] = blank[mask]


def _add_notes(notes: np.ndarray, mask: np.ndarray, text, keys: tuple = ()) -> None:
    """Append a note to each circuit in ``mask`` (formatting only the flagged circuits).

    ``keys``: the per-circuit arrays that ``text(i)`` depends on; a note is then formatted
    once per distinct key (floats compared bit for bit) and reused for the others.
    """
    idx = np.flatnonzero(mask)
    if not len(idx):
        return
    cols = []
    for k in keys:
        v = np.asarray(k)[idx]
        cols.append((v.astype(np.float64).view(np.int64) if v.dtype.kind == "f" else v).tolist())
    memo: dict = {}
    for i, key in zip(idx.tolist(), zip(*cols, strict=True) if cols else [None] * len(idx),
                      strict=True):  # fmt: skip
        t = memo.get(key) if cols else None
        if t is None:
            t = text(i)
            if cols:
                memo[key] = t
        notes[i] = f"{notes[i]}; {t}" if notes[i] else t


def failure_causes(result: SizingResult) -> dict[str, np.ndarray]:
    """Which limit each failing circuit breaks, from the result's own numbers (bool arrays).

    ``capacity``: design current above the governing derated capacity (nec: or 1.25 × the maximum
    current above the uncorrected terminal-column ampacity, 690.8(B)(1)); ``drop``: voltage drop
    above the budget applied to the circuit (``vdrop_limit_pct``: its kind's limit, shared with
    the DC total as described in the module docstring); ``other``: failing for another reason
    (short-circuit withstand, a fixed fuse outside its range, no standard fuse rating; nec: a
    device that does not protect the conductor, 240.4).
    A circuit may fail on capacity and drop at once.
    """
    fail = ~np.asarray(result.ok, dtype=bool)
    tol = 1e-6
    cap = fail & (result.design_current_a > result.ampacity_a * (1.0 + tol))
    # nec: the uncorrected condition (690.8(B)(1)) is a capacity limit too (nan under iec)
    req1 = getattr(result, "terminal_required_a", None)
    if req1 is not None:
        cap |= fail & (req1 > result.terminal_ampacity_a * (1.0 + tol))
    drop = fail & (result.vdrop_pct > result.vdrop_limit_pct + tol)
    return {"capacity": cap, "drop": drop, "other": fail & ~cap & ~drop}


def protection_failures(result: SizingResult, rules: str) -> np.ndarray:
    """Failing circuits whose overcurrent device does not protect the conductor (NEC 2023
    240.4(B)/(C)/(D), the rule set's :meth:`~calc.rules.RuleSet.conductor_protected` with the
    ampacity after correction, adjustment and the 110.14(C) terminal limit) and that break no
    capacity or drop limit (:func:`failure_causes` counts them as ``other``). All False for a
    rule set without such a check (IEC).

    The device is the circuit's own: the source-circuit fuse, the output-circuit (array) device,
    the inverter output breaker; nan = none fitted (protected).
    """
    n = len(result.ok)
    rs = get_rules(rules)
    why = failure_causes(result)
    other = np.asarray(why["other"], dtype=bool)
    out = np.zeros(n, dtype=bool)
    if not other.any() or not rs.protection_per_size:
        return out
    device = np.asarray(result.fuse_a, dtype=float).copy()
    arr = np.asarray(result.array_fuse_a, dtype=float)
    acb = np.asarray(result.ac_breaker_a, dtype=float)
    device = np.where(np.isfinite(device), device, np.where(np.isfinite(arr), arr, acb))
    amp = np.asarray(result.ampacity_a, dtype=float)
    term = np.asarray(getattr(result, "terminal_ampacity_a", np.full(n, np.nan)), dtype=float)
    amp = np.where(np.isfinite(term), np.minimum(amp, term), amp)
    size = np.asarray(result.size_mm2, dtype=float)
    material = np.asarray(result.material).astype(str)
    for mat in np.unique(material[other]).tolist():
        m = other & (material == mat) & np.isfinite(size)
        if not m.any():
            continue
        prot = rs.conductor_protected(device[m], amp[m], size[m], mat)
        out[np.flatnonzero(m)] = ~np.asarray(prot, dtype=bool)
    return out
