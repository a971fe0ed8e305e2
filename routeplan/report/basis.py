"""The design basis of a plan, as plain rows for the report.

Everything here is read from the finished plan: the settings in force
(:class:`routeplan.config.DesignConfig`, with :attr:`~routeplan.config.DesignConfig.defaulted`
telling a default from a value of site.toml, and each :class:`routeplan.config.Key`'s note),
the module data of site.toml, the rule set, and the ``#`` header lines and ``tag`` column of
calc's data tables (:mod:`calc.tables`). No cable rule is applied here.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

import calc
from calc.tables import load_table, table_names
from layers import Site

from ..config import (
    AIR_ARRANGEMENT_DEFAULT,
    ALLOWANCE_KEYS,
    DESIGN_KEYS,
    DROP_PCT_DEFAULT,
    KINDS,
    MATERIAL_DEFAULT,
    RATING_KEYS,
    DesignConfig,
    insulation_default,
)
from ..network import CAPACITY_ATTRIBUTES

#: unit of a setting or module value, by the ending of its name (the glossary's convention:
#: the unit in every name)
_UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_pct_per_c", "%/°C"),
    ("_k_m_w", "K·m/W"),
    ("_mm2", "mm²"),
    ("_pct", "%"),
    ("_ka", "kA"),
    ("_hz", "Hz"),
    ("_c", "°C"),
    ("_m", "m"),
    ("_h", "h"),
    ("_s", "s"),
    ("_v", "V"),
    ("_a", "A"),
    ("_w", "W"),
)

#: data tables that only a setting brings into use: (setting, value that uses it; None =
#: any value set). Every other table of the rule set is read on every plan, but those of
#: :data:`UNUSED_TABLES`.
CONDITIONAL_TABLES: dict[str, tuple[str, str | None]] = {
    "iec60364_4_43_2008_table_43a_k.csv": ("fault_ka", None),
    "iec60898_1_breaker_ratings.csv": ("ac_breaker_device", "iec60898-1"),
    "iec60947_2_breaker_ratings.csv": ("ac_breaker_device", "iec60947-2"),
    # the NEC 2023 rule set's tables (calc.nec; read only when rules = "nec")
    **{
        name: ("rules", "nec")
        for name in table_names()
        if name.startswith("nec_2023_") or name in ("astm_b258_awg.csv", "us_customary_units.csv")
    },
}
#: data tables calc holds that the plan pipeline never reads, and why
UNUSED_TABLES: dict[str, str] = {
    "iec60269_1_fuse_ratings.csv": "no (string fuses are chosen from the gPV list)",
    "iec60949_adiabatic_constants.csv": "no (the adiabatic k is read from Table 43A)",
    "conductor_density.csv": "no (read by routeplan place, for the conductor mass)",
}
#: the rule set's default size lists: read unless site.toml sets every kind's sizes
DEFAULT_SIZES_TABLE = "default_size_lists.csv"


def unit_of(name: str) -> str:
    """The unit a key's name carries (``depth_m`` → ``m``); ``''`` when it names none.

    >>> unit_of("soil_k_m_w"), unit_of("laying"), unit_of("voc_temp_coeff_pct_per_c")
    ('K·m/W', '', '%/°C')
    """
    for suffix, unit in _UNIT_SUFFIXES:
        if name.endswith(suffix):
            return unit
    return ""


def show_value(value: Any) -> str:
    """A setting's value as text: numbers without trailing zeros, lists comma-separated, an
    unset number (NaN) as ``unset``."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "unset" if math.isnan(value) else f"{value:g}"
    if isinstance(value, (tuple, list)):
        return ", ".join(show_value(v) for v in value)
    if hasattr(value, "item"):
        return show_value(value.item())
    return str(value)


@dataclass(frozen=True)
class Setting:
    """One setting in force: dotted key, value as text, unit, source and note."""

    key: str
    value: str
    unit: str
    source: str  # "site.toml" or "default"
    note: str


def _given(config: dict[str, Any], *path: str) -> bool:
    """Whether site.toml (parsed: ``config``) holds the dotted key ``path``."""
    node: Any = config
    for part in path:
        if not isinstance(node, dict) or part not in node:
            return False
        node = node[part]
    return True


#: ``[design]`` keys that are the default of a layer's attribute: the layer and the attributes
#: a feature gives its own value in (any of them)
LAYER_DEFAULTS: dict[str, tuple[str, tuple[str, ...]]] = {
    "soil_k_m_w": ("trenches", ("soil_k_m_w",)),
    "depth_m": ("trenches", ("depth_m",)),
    "laying": ("trenches", ("laying",)),
    "spacing_m": ("trenches", ("spacing_m",)),
    "max_circuits": ("trenches", CAPACITY_ATTRIBUTES),
    "power_factor": ("inverters", ("pf",)),
}


def layer_default_use(site: Site) -> dict[str, str]:
    """For each key of :data:`LAYER_DEFAULTS`, how many of the layer's features take the
    default (a sentence for the settings' note): "here for 4 of 52 trenches (the others give
    their own laying)"."""
    out = {}
    for key, (layer, attrs) in LAYER_DEFAULTS.items():
        frame = site.layer(layer)
        n = len(frame)
        own = np.zeros(n, dtype=bool)
        for a in attrs:
            if a in frame.columns:
                own |= frame[a].notna().to_numpy()
        k = int(n - own.sum())
        given = " or ".join(attrs)
        if k == n:
            out[key] = f"here for all {n:,} {layer}"
        elif k == 0:
            out[key] = f"here for none of the {n:,} {layer}: each gives its own {given}"
        else:
            out[key] = f"here for {k:,} of {n:,} {layer} (the others give their own {given})"
    return out


def settings(
    design: DesignConfig, config: dict[str, Any], site: Site | None = None
) -> list[Setting]:
    """Every setting in force, in the order of the README's settings table: ``[design]``
    scalars, its sub-tables per kind, then ``[allowances]``. ``config`` is the parsed
    site.toml (:attr:`layers.Site.config`), which tells a sub-table entry set there from a
    default; a scalar's source is :attr:`DesignConfig.defaulted`. With the ``site``, the note
    of a key that is a layer attribute's default says how many features take it
    (:func:`layer_default_use`)."""
    out: list[Setting] = []
    use = layer_default_use(site) if site is not None else {}
    for k in DESIGN_KEYS:
        key = f"design.{k.name}"
        source = "default" if key in design.defaulted else "site.toml"
        note = f"{k.note}; {use[k.name]}" if k.name in use else k.note
        out.append(Setting(key, show_value(design.values[k.name]), unit_of(k.name), source, note))
    rules = calc.get_rules(design.values["rules"])
    code = {
        "string": calc.KIND_STRING,
        "subarray": calc.KIND_SUBARRAY,
        "array": calc.KIND_ARRAY,
        "ac": calc.KIND_AC,
    }
    sub: list[tuple[str, dict[str, Any], str, str]] = [
        (
            "material",
            design.material,
            "",
            "conductor material (default: " + _kinds(MATERIAL_DEFAULT) + ")",
        ),
        (
            "insulation",
            design.insulation,
            "",
            "insulation (default: " + _kinds(insulation_default(rules)) + ")",
        ),
        (
            "drop_pct",
            design.drop_pct,
            "%",
            "voltage-drop limit (common practice; default: " + _kinds(DROP_PCT_DEFAULT) + ")",
        ),
        (
            "air_arrangement",
            design.air_arrangement,
            "",
            "arrangement where the kind's cables share a stretch in air, "
            + rules.air_arrangement_source
            + " (default: "
            + _kinds(AIR_ARRANGEMENT_DEFAULT)
            + ")",
        ),
    ]
    for name, values, unit, note in sub:
        for kind, value in values.items():
            source = "site.toml" if _given(config, "design", name, kind) else "default"
            out.append(Setting(f"design.{name}.{kind}", show_value(value), unit, source, note))
    for kind in KINDS:
        if kind in design.sizes_mm2:
            value, source = design.sizes_mm2[kind], "site.toml"
        else:
            value = rules.default_sizes_mm2(code[kind], design.material[kind])
            source = "default"
        out.append(
            Setting(
                f"design.sizes_mm2.{kind}",
                show_value(value),
                "mm²",
                source,
                f"candidate sizes (default: the rule set's list, {rules.name})",
            )
        )
    for key, what in RATING_KEYS.items():
        if key in design.ratings_a:
            value, source = design.ratings_a[key], "site.toml"
        elif key == "ac_breaker":
            value = rules.breaker_ratings_a(design.values["ac_breaker_device"])
            source = "default"
        else:
            value, source = rules.gpv_fuse_ratings_a(), "default"
        out.append(
            Setting(
                f"design.ratings_a.{key}",
                show_value(tuple(float(v) for v in value)),
                "A",
                source,
                f"{what} (default: the rule set's data table)",
            )
        )
    for k in ALLOWANCE_KEYS:
        key = f"allowances.{k.name}"
        source = "default" if key in design.defaulted else "site.toml"
        out.append(
            Setting(key, show_value(design.allowances[k.name]), unit_of(k.name), source, k.note)
        )
    return out


def _kinds(values: dict[str, Any]) -> str:
    return ", ".join(f"{k} {show_value(v)}" for k, v in values.items())


def module_rows(modules: dict[str, Any]) -> list[tuple[str, str, str, str]]:
    """Module data from site.toml: (module key, field, value, unit), one row per field."""
    fields = (
        "isc_a",
        "imp_a",
        "voc_v",
        "vmp_v",
        "per_string",
        "max_fuse_a",
        "bifaciality",
        "isc_bifacial_a",
        "voc_temp_coeff_pct_per_c",
    )
    rows = []
    for key, m in modules.items():
        for f in fields:
            rows.append((str(key), f, show_value(getattr(m, f)), unit_of(f)))
        for f, v in (getattr(m, "extra", None) or {}).items():
            rows.append((str(key), str(f), show_value(v), unit_of(str(f))))
    return rows


@dataclass(frozen=True)
class DataTable:
    """One of calc's data tables: file, its source line (standard, edition, table), the
    header's tag statement, how many rows carry each tag, and whether this plan uses it."""

    name: str
    source: str
    tag_note: str
    tags: dict[str, int]
    used: str


def _header_field(header: tuple[str, ...], field: str) -> str:
    """The text of a ``# field:`` header line with its indented continuation lines."""
    out: list[str] = []
    inside = False
    for line in header:
        body = line[1:]
        stripped = body.strip()
        if body.startswith(f" {field}:"):
            out.append(stripped[len(field) + 1 :].strip())
            inside = True
        elif inside and body.startswith("  ") and stripped:
            out.append(stripped)
        else:
            inside = False
    return " ".join(out)


def data_tables(design: DesignConfig) -> list[DataTable]:
    """calc's data tables with their provenance, and whether the plan's settings use each
    (:data:`CONDITIONAL_TABLES`)."""
    out = []
    for name in table_names():
        t = load_table(name)
        tags = Counter(str(v) for v in t["tag"])
        used = "yes"
        if name in UNUSED_TABLES:
            used = UNUSED_TABLES[name]
        elif name == DEFAULT_SIZES_TABLE and all(k in design.sizes_mm2 for k in KINDS):
            used = "no (site.toml sets every kind's sizes)"
        elif name in CONDITIONAL_TABLES:
            key, wanted = CONDITIONAL_TABLES[name]
            value = design.values[key]
            if wanted is None:
                on = not (isinstance(value, float) and math.isnan(value))
                used = "yes" if on else f"no ({key} unset)"
            else:
                used = "yes" if value == wanted else f"no ({key} = {value})"
        out.append(
            DataTable(
                name=name,
                source=_header_field(t.header, "source"),
                tag_note=_header_field(t.header, "tag"),
                tags=dict(sorted(tags.items())),
                used=used,
            )
        )
    return out


#: what the engine does, one statement per method (see calc/engine.py and the README)
METHODS: tuple[tuple[str, str], ...] = (
    (
        "Routing",
        "The trench corridors are noded at crossings, T-junctions and shared vertices; each "
        "piece of equipment joins the nearest trench by a straight stub; every circuit follows "
        "the shortest path through the noded network (Dijkstra's algorithm, one search per "
        "destination). Rows or combiners without a destination are assigned to the nearest one "
        "by route length, within its max_strings.",
    ),
    (
        "Cable length",
        "Conductor length per circuit = route length × (1 + slack) + one termination "
        "allowance per cable end (+ the row run for string cables); conductor metres = cable "
        "length × current-carrying conductors (DC: 2 per parallel set; three-phase AC: 3).",
    ),
    (
        "Design currents and protection",
        "DC design currents and string fuses after IEC 62548:2016 with the bifacial design "
        "Isc; array and sub-array cables against the backfeed of the other branches on their "
        "inverter input (an array fuse, or a cable rated for it); AC circuits against their "
        "breaker by IEC 60364-4-43:2008 433.1 (Ib ≤ In ≤ Iz, I2 ≤ 1.45 Iz).",
    ),
    (
        "Current-carrying capacity",
        "IEC 60364-5-52:2009 Annex B tabulated capacities (methods D1, D2 in ground; E, F in "
        "air) and EN 50618:2014 Table A.3 for PV string cable in air, multiplied by the "
        "correction factors for ambient or ground temperature, soil thermal resistivity, "
        "laying depth (IEC 60287 external thermal resistance) and grouping (from each "
        "stretch's actual circuit count), evaluated for every stretch of the route; the "
        "smallest capacity governs. The smallest candidate size (with parallel sets up to "
        "max_parallel) whose capacity and voltage drop meet the limits is chosen.",
    ),
    (
        "Voltage drop",
        "Ohm's law on the circuit's loop: IEC 60228:2004 maximum conductor resistance at "
        "20 °C, corrected to the conductor temperature by IEC 60287-1-1 (with the skin and "
        "proximity effect for AC), and BS 7671 Appendix 4 reactance for AC circuits; each "
        "kind against its limit and a string's whole DC path against the DC total.",
    ),
    (
        "Losses",
        "I²R losses of every conductor at the operating current and conductor temperature; "
        "the annual energy loss = loss × the equivalent full-load loss hours (loss_hours_h).",
    ),
    (
        "Short circuit",
        "When fault_ka and clear_s are set: the adiabatic check S ≥ √(I²t) / k of "
        "IEC 60364-4-43:2008 434.5.2 with k of Table 43A for the AC circuits.",
    ),
    (
        "Trench fill",
        "Per trench segment: the circuits and cable sets routed through it; fill = circuits "
        "÷ max_circuits, or cable sets ÷ max_cable_sets, whichever capacity the trench gives "
        "(fill_basis); a segment over 100 % is over capacity.",
    ),
)

#: the row run of strings, under every rule set
_ROW_RUN = (
    "Every string of a row runs row_run_factor × the row's length along it (default 0.5, the "
    "average of strings spread along the row): the bill is right on average, but the voltage "
    "drop of a row's farthest string is understated by up to half the row's length of cable; "
    "set row_run_factor = 1 to check the farthest string."
)

#: the inverter's DC inputs, under every rule set
_DC_INPUTS = (
    "An inverter's DC inputs (dc_inputs) are independent: what lands on one input cannot feed "
    "a fault on another, so the backfeed and the string-fuse rule count only the circuits of "
    "the same input. Inputs joined on one DC busbar inside the inverter are one input: give "
    "dc_inputs = 1 for such an inverter, as its datasheet shows."
)

#: assumptions the engine makes that a reviewer should know (each stated in the code)
ASSUMPTIONS: tuple[str, ...] = (
    "Current-carrying conductors per circuit: DC + and −; three-phase AC L1, L2, L3 (PV "
    "inverter outputs are commonly three-wire, without neutral: common practice). Protective "
    "conductors are not counted.",
    "String cables are PV cable (EN 50618 / IEC 62930, class 5 tinned copper), run along their "
    "row in air at row_air_temp_c; feeders are single-core cables of IEC 60228 class 2.",
    "Where cables share a stretch in air their arrangement is the kind's air_arrangement "
    "(bunched, the most onerous, unless site.toml says otherwise).",
    "The depth factor uses a common-practice outer diameter of the buried circuit and duct "
    "where the design gives none (calc/data/design_defaults.csv).",
    "The depth factor is that of one isolated cable (IEC 60287-2-1 external thermal "
    "resistance against 0.7 m) and multiplies the grouping factors tabulated at 0.7 m: the "
    "mutual heating of a group laid much deeper is not derived again, so for grouped trenches "
    "deeper than about 1 m the capacity may be optimistic; have them rated by the full "
    "IEC 60287 method.",
    "Grouping factors use each stretch's actual circuit count, parallel sets counted; "
    "circuits in one trench lie side by side in one layer, spaced spacing_m apart (0 = "
    "touching, conservative). The trench schedule's spread_m is the width that layer needs "
    "besides the cables; a trench narrower than that holds them in several layers or closer "
    "together, which rates them lower than computed.",
    "The parallel sets of one circuit share its current equally (same material, size, length "
    "and route, as IEC 60364-4-43:2008 433.4.1 asks); a fault on one set fed from both ends by "
    "the others (434.4) is not checked: review circuits of several sets without protection "
    "of each set.",
    _ROW_RUN,
    _DC_INPUTS,
    "Values tagged 'memory' or 'memory-low' were recalled rather than read in the standard; "
    "'common practice' marks rules of thumb without a published source. Check them against "
    "the standards in force before relying on them.",
)


#: the methods under rules = "nec" (NFPA 70 NEC 2023; calc.rules.nec states each rule)
NEC_METHODS: tuple[tuple[str, str], ...] = (
    METHODS[0],
    METHODS[1],
    (
        "Design currents and protection",
        "NEC 2023 690.8(A): PV source circuit maximum current 1.25 × Isc (the bifacial Isc "
        "where given); PV output circuit the sum of its source circuits'; inverter output "
        "circuit the inverter's continuous output current. Source-circuit fuses where the other "
        "parallel circuits can feed more than the module's maximum series fuse (690.9(A)), "
        "rated ≥ 1.25 × the maximum current at the next 240.6(A) standard rating (690.9(B)); "
        "output circuits protected or rated for the backfeed of their inverter input; the "
        "inverter output breaker ≥ 1.25 × its continuous current (240.6(A)). Every device "
        "protects its conductor per 240.4(B)/(C)/(D).",
    ),
    (
        "Conductor ampacity",
        "NEC 2023 690.8(B), both conditions: (1) 1.25 × the maximum current against Table "
        "310.16 in the termination's column, also for conductors in free air (110.14(C)(1); "
        "75 °C unless the equipment is marked for 90 °C: terminal_temp_c), "
        "uncorrected; (2) the maximum current against the insulation's column corrected for the "
        "ambient or earth temperature (310.15(B)(1)) and adjusted for the current-carrying "
        "conductors sharing the stretch (Table 310.15(C)(1); the conductors in a trench segment "
        "taken as one bundle), evaluated for every stretch of the route; the lowest ampacity "
        "governs, except a stretch short enough for the 310.14(A)(2) exception (10 ft or 10 % of "
        "the circuit, whichever is less). The smallest candidate AWG / kcmil size (with "
        "parallel sets up to max_parallel) meeting both conditions, 240.4 and the voltage drop "
        "is chosen; the schedule's utilisation is the governing condition's ratio.",
    ),
    (
        "Voltage drop",
        "Ohm's law on the circuit's loop: NEC 2023 Chapter 9 Table 8 d.c. resistance at "
        "75 °C, corrected to the conductor temperature by the table's note; a.c. circuits with "
        "the Table 9 a.c. resistance and reactance (PVC conduit, 60 Hz) and the effective "
        "impedance at the power factor (Table 9 note 2). Drop limits are design choices: the "
        "NEC gives informational notes only.",
    ),
    METHODS[5],
    (
        "Short circuit",
        "Not checked: NEC 2023 has no adiabatic table (ICEA P-32-382 not applied); every a.c. "
        "circuit says so when fault_ka and clear_s are set.",
    ),
    METHODS[7],
)

#: the assumptions under rules = "nec"
NEC_ASSUMPTIONS: tuple[str, ...] = (
    "Current-carrying conductors per circuit: DC + and −; three-phase AC L1, L2, L3 (the "
    "neutral of a balanced three-phase circuit is not counted, 310.15(E)); equipment grounding "
    "conductors (Table 250.122) are not counted.",
    "PV source circuits are PV wire (UL 4703, 90 °C wet or dry, from memory), copper; feeders "
    "are single insulated conductors of a Table 310.4(A) type of the insulation's rating "
    "(e.g. USE-2, XHHW-2 at 90 °C).",
    "Conductors in the ground are rated by Table 310.16 at the earth temperature; soil "
    "thermal resistivity, depth and spacing are not represented (no 310.14(B) engineering "
    "calculation): every such circuit carries a review note.",
    "Where conductors share a stretch in air their arrangement is the kind's air_arrangement "
    "(bunched: Table 310.15(C)(1) applies; spaced: not adjusted).",
    "Conductors in air, bunched ones included, start from Table 310.17 (single insulated "
    "conductors in free air) before the 310.15(C)(1) adjustment; some authorities rate "
    "bundled conductors from Table 310.16 instead, which gives lower ampacities: where the "
    "authority having jurisdiction does, check the bunched string and feeder runs in air "
    "against it.",
    _ROW_RUN,
    _DC_INPUTS,
    ASSUMPTIONS[-1],
)


def methods(rules: str) -> tuple[tuple[str, str], ...]:
    """The report's methods for a rule set (iec: :data:`METHODS`, nec: :data:`NEC_METHODS`);
    a rule set of calc without its own raises KeyError (a test asks it of every rule set)."""
    return {"iec": METHODS, "nec": NEC_METHODS}[rules]


def assumptions(rules: str) -> tuple[str, ...]:
    """The report's assumptions for a rule set (iec: :data:`ASSUMPTIONS`, nec:
    :data:`NEC_ASSUMPTIONS`); KeyError as :func:`methods`."""
    return {"iec": ASSUMPTIONS, "nec": NEC_ASSUMPTIONS}[rules]


def _number_or_text(value: str) -> float | str:
    """A setting's shown value as a number where it is one (for the workbook), else text."""
    try:
        return float(value)
    except ValueError:
        return value


def basis_sheets(
    design: DesignConfig, config: dict[str, Any], site: Site | None = None
) -> dict[str, pd.DataFrame]:
    """The design basis as workbook sheets: ``design basis`` (every setting in force: key,
    value — a number where it is one —, unit, source, note; with the ``site``, how many
    features take a layer attribute's default) and ``data tables`` (every calc data table:
    file, source, tag statement, rows per tag, used by this plan)."""
    rows = settings(design, config, site)
    tables = data_tables(design)
    return {
        "design basis": pd.DataFrame(
            {
                "key": [s.key for s in rows],
                "value": [_number_or_text(s.value) for s in rows],
                "unit": [s.unit for s in rows],
                "source": [s.source for s in rows],
                "note": [s.note for s in rows],
            }
        ),
        "data tables": pd.DataFrame(
            {
                "table": [t.name for t in tables],
                "source": [t.source for t in tables],
                "tag": [t.tag_note for t in tables],
                "rows per tag": [", ".join(f"{k} {v}" for k, v in t.tags.items()) for t in tables],
                "used": [t.used for t in tables],
            }
        ),
    }
