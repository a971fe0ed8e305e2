"""The design settings of ``site.toml``: ``[design]``, its sub-tables, and ``[allowances]``.

Each key has a documented default (the table :data:`DESIGN_KEYS` is the single source for the
README's settings table and for ``routeplan check``). Values may be plain numbers in the unit
named by the key, or quantities ``<number> <unit>`` (``depth_m = "800 mm"``, see
:func:`layers.units.to_number`), converted here once.

The settings are checked strictly. Every problem is reported — all of them, not the first —
as a :class:`layers.Problem` on ``site.toml`` naming the dotted key:

- an unknown top-level table (anything but :data:`layers.SITE_TABLES` and
  :data:`DESIGN_TABLES`), an unknown key of ``[design]``, its sub-tables or
  ``[allowances]``: with the closest known name as a suggestion (``did you mean
  'allowances'?``);
- a table given as a value (``design = "rules"``) or a value given as a table;
- a value of the wrong type (a boolean is never a number), outside its range, or not a
  whole number for an integer key (:attr:`Key.integer`; a whole float such as ``4.0`` is
  taken as 4, as layer attributes are: many writers store integers as floats).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

import calc
from calc.nec.sizes import size_from_label
from layers import SITE_TABLES, Problem
from layers.sources import SITE_TOML, toml_type, unknown_key
from layers.validate import setting_number

KINDS: tuple[str, ...] = ("string", "subarray", "array", "ac")


@dataclass(frozen=True)
class Key:
    """One setting: its default, allowed range or choices, and where the default comes from.
    ``integer``: the value must be a whole number."""

    name: str
    default: Any
    low: float | None = None
    high: float | None = None
    choices: tuple[str, ...] = ()
    note: str = ""
    integer: bool = False


#: ``[design]`` scalar keys. Sources: IEC 60364-5-52:2009 Annex B reference conditions
#: (ground 20 °C, soil 2.5 K·m/W, depth 0.7 m, air 30 °C) where a default is a reference value.
DESIGN_KEYS: tuple[Key, ...] = (
    Key(
        "rules",
        "iec",
        choices=calc.rule_names(),
        note="rule set; 'iec' = IEC 60364-5-52/62548/60228/60287, 'nec' = NFPA 70 NEC 2023",
    ),
    Key(
        "ground_temp_c",
        20.0,
        -20,
        60,
        note="ground temperature at cable depth (default: 20 °C, the IEC 60364-5-52 reference)",
    ),
    Key(
        "air_temp_c",
        40.0,
        -30,
        80,
        note="shade air temperature for stubs and exposed runs (common practice for outdoor sites)",
    ),
    Key(
        "row_air_temp_c",
        70.0,
        -30,
        100,
        note="air around string cables run behind the modules (common practice)",
    ),
    Key(
        "soil_k_m_w",
        2.5,
        0.3,
        6.0,
        note="soil thermal resistivity where a trench has none (default: 2.5 K·m/W, the "
        "IEC 60364-5-52 reference)",
    ),
    Key(
        "depth_m",
        0.7,
        0.2,
        5.0,
        note="depth to the cables where a trench has none (default: 0.7 m, the IEC 60364-5-52 "
        "reference)",
    ),
    Key(
        "laying", "direct", choices=("direct", "duct"), note="trench laying where a trench has none"
    ),
    Key(
        "spacing_m",
        0.0,
        0.0,
        2.0,
        note="clear distance between circuits where a trench has none; 0 = touching (conservative)",
    ),
    Key(
        "max_circuits",
        math.nan,
        1,
        10_000,
        note="trench capacity where a trench has none; unset = none",
        integer=True,
    ),
    Key("snap_m", 30.0, 0.0, 1_000.0, note="longest straight stub from equipment to a trench"),
    Key("node_tol_m", 0.1, 0.0, 5.0, note="trench ends and vertices closer than this are joined"),
    Key(
        "power_factor",
        0.9,
        0.1,
        1.0,
        note="inverter power factor where a pad has no pf (common practice: grid codes often "
        "ask for reactive capability at rated apparent power)",
    ),
    Key(
        "conductor_temp",
        "max",
        choices=("max", "loading"),
        note="conductor temperature for drop/losses: insulation maximum, or from loading",
    ),
    Key(
        "max_parallel",
        4,
        1,
        12,
        note="most conductors in parallel per pole/phase (array, ac)",
        integer=True,
    ),
    Key(
        "loss_hours_h",
        1000.0,
        0.0,
        8760.0,
        note="equivalent full-load loss hours for the annual loss estimate (common practice)",
    ),
    Key("fault_ka", math.nan, 0.0, 200.0, note="prospective AC fault current; unset = no check"),
    Key("clear_s", math.nan, 0.0, 5.0, note="AC protective device clearing time"),
    Key(
        "marking",
        "iec",
        choices=calc.MARKING_SYSTEMS,
        note="conductor identification system: 'iec' (IEC 60445) or an ISO 3166 country code "
        "(gb, au, in, us, ca, cn, jp, ru); default: the rule set's (iec: iec, nec: us)",
    ),
    Key(
        "rear_irradiance_ratio",
        calc.bnpi_rear_ratio(),
        0.0,
        1.0,
        note="rear / front irradiance for the design Isc of bifacial modules (0.135: the bifacial "
        "nameplate irradiance of IEC 61215-1)",
    ),
    Key(
        "array_protection",
        "fuse",
        choices=calc.ARRAY_PROTECTION,
        note="array cables against the backfeed of the other arrays on their inverter input: "
        "'fuse' (an array fuse where needed) or 'cable' (no array fuses: rated for the backfeed)",
    ),
    Key(
        "ac_breaker_device",
        "iec60947-2",
        choices=tuple(d for r in calc.rule_names() for d in calc.get_rules(r).breaker_devices),
        note="AC circuit-breaker kind: 'iec60947-2' (moulded-case) or 'iec60898-1' (≤ 125 A); "
        "nec: 'nec240.6a' (the default under nec)",
    ),
    Key(
        "min_ambient_c",
        -10.0,
        -60.0,
        30.0,
        note="lowest expected ambient (= module) temperature for the strings' maximum Voc "
        "(common practice: the site's record low)",
    ),
    Key(
        "dc_rated_v",
        1500.0,
        100.0,
        2000.0,
        note="rated DC voltage of cables and equipment the maximum Voc is checked against",
    ),
    Key(
        "units",
        "si",
        choices=("si", "us"),
        note="lengths of the bill of quantities: 'si' metres, 'us' international feet "
        "(0.3048 m); the schedules give both (route_m/route_ft, cable_m/cable_ft)",
    ),
    Key(
        "frequency_hz",
        50.0,
        50.0,
        60.0,
        note="AC frequency of the grid for the skin and proximity effect and the reactance "
        "(IEC 60287-1-1; power grids: 50 or 60 Hz; nec: 60, the default under nec, Chapter 9 "
        "Table 9)",
    ),
    Key(
        "terminal_temp_c",
        math.nan,
        60.0,
        90.0,
        note="nec: temperature rating of the terminations (110.14(C)): 60, 75 or 90; unset = 75, "
        "the equipment taken as listed for 75 °C terminations (common practice for PV "
        "equipment) — where it is not, 110.14(C)(1)(a) holds circuits of 100 A or less and "
        "14–1 AWG conductors to 60 °C: confirm the marking",
    ),
    Key(
        "buried_rating",
        "table",
        choices=("table", "engineered"),
        note="buried circuits rated by the rule set's tables ('table'); 'engineered' (IEC 60287 / "
        "Neher–McGrath) is not available yet",
    ),
)

#: per-kind tables under ``[design]``
MATERIAL_DEFAULT: dict[str, str] = {"string": "Cu", "subarray": "Cu", "array": "Cu", "ac": "Al"}


def insulation_default(rule_set: calc.rules.RuleSet) -> dict[str, str]:
    """Each kind's insulation unless site.toml sets one: the rule set's PV string cable
    (``"PV"``) for strings, its first insulation for the others (iec: XLPE; nec: 90C)."""
    feeders = dict.fromkeys(("subarray", "array", "ac"), rule_set.insulations[0])
    return {"string": "PV", **feeders}


#: how each kind's cables run where they share a stretch in air (IEC 60364-5-52 Table B.52.17
#: item): bunched, the most onerous, unless the site says otherwise
AIR_ARRANGEMENT_DEFAULT: dict[str, str] = dict.fromkeys(KINDS, "bunched")
#: the project's protective-device ratings (``[design.ratings_a]``): keys and what they restrict
RATING_KEYS: dict[str, str] = {
    "string_fuse": "string fuse ratings (gPV)",
    "array_fuse": "array fuse ratings (gPV)",
    "ac_breaker": "AC breaker ratings",
}
#: voltage-drop limits, percent (common practice: ≤ 1 % string, ≤ 2 % DC total, ≤ 1 % AC LV;
#: a sub-array cable ≤ 1 %, the array cable takes what its strings and sub-arrays leave)
DROP_PCT_DEFAULT: dict[str, float] = {
    "string": 1.0,
    "subarray": 1.0,
    "array": 1.5,
    "dc_total": 2.0,
    "ac": 1.0,
}

ALLOWANCE_KEYS: tuple[Key, ...] = (
    Key("termination_m", 1.0, 0.0, 50.0, note="added per cable end (common practice)"),
    Key("slack_pct", 3.0, 0.0, 50.0, note="added to the routed length (common practice)"),
    Key(
        "row_run_factor",
        0.5,
        0.0,
        2.0,
        note="string cable along its row = factor × row length (0.5: strings spread along the row)",
    ),
)


@dataclass(frozen=True)
class CostConfig:
    """``[costs]``: prices for ranking design alternatives (``routeplan place``).

    ``conductor_per_m``: price per metre of one conductor (core), by (material, size in mm²);
    ``energy_price_per_kwh`` (nan = not given), ``lifetime_years`` and ``discount_rate_pct``
    capitalise the yearly losses (calc.costs); ``currency`` is a label only.
    """

    conductor_per_m: dict[tuple[str, float], float] = field(default_factory=dict)
    energy_price_per_kwh: float = math.nan
    lifetime_years: float = math.nan
    discount_rate_pct: float = math.nan
    currency: str = ""

    @property
    def priced(self) -> bool:
        """Whether conductor prices are given (else placement ranks by conductor mass)."""
        return bool(self.conductor_per_m)

    @property
    def energy_priced(self) -> bool:
        return not math.isnan(self.energy_price_per_kwh)


#: ``[costs]`` number keys: (name, low, high, note)
COST_KEYS: tuple[tuple[str, float, float, str], ...] = (
    # any currency: a kWh costs well under 1e6 in every one (a guard against a typo, no more)
    ("energy_price_per_kwh", 0.0, 1e6, "price of a lost kWh, in the currency"),
    ("lifetime_years", 1.0, 100.0, "years over which losses are capitalised"),
    ("discount_rate_pct", 0.0, 50.0, "yearly discount rate for the present value, %"),
)


def parse_costs(raw: dict[str, Any], problems: list[Problem]) -> CostConfig:
    """Read ``[costs]`` (see :class:`CostConfig`); plain numbers only, every problem named by
    its key. With ``energy_price_per_kwh``, ``lifetime_years`` and ``discount_rate_pct`` are
    required (no default stands for a project's finance)."""
    known = ("currency", "conductor_per_m", *(k[0] for k in COST_KEYS))
    for key in raw:
        if key not in known:
            problems.append(unknown_key(f"costs.{key}", key, known))
    numbers: dict[str, float] = {}
    for name, low, high, _ in COST_KEYS:
        if name not in raw:
            continue
        v = raw[name]
        where = f"costs.{name}"
        if isinstance(v, bool) or not isinstance(v, int | float):
            problems.append(Problem(SITE_TOML, where, f"must be a number, not {toml_type(v)}"))
        elif not (low <= v <= high):
            problems.append(Problem(SITE_TOML, where, f"{v:g} is outside {low:g}–{high:g}"))
        else:
            numbers[name] = float(v)
    if "energy_price_per_kwh" in raw:
        for name in ("lifetime_years", "discount_rate_pct"):
            if name not in raw:
                problems.append(
                    Problem(SITE_TOML, f"costs.{name}", "is needed with costs.energy_price_per_kwh")
                )
    currency = raw.get("currency", "")
    if not isinstance(currency, str):
        problems.append(
            Problem(SITE_TOML, "costs.currency", f"must be a string, not {toml_type(currency)}")
        )
        currency = ""
    prices: dict[tuple[str, float], float] = {}
    given: dict[tuple[str, float], str] = {}  # the key that priced each conductor
    table = raw.get("conductor_per_m", {})
    if not isinstance(table, dict):
        problems.append(
            Problem(SITE_TOML, "costs.conductor_per_m", f"must be a table, not {toml_type(table)}")
        )
        table = {}
    for key, v in table.items():
        where = f"costs.conductor_per_m.{key}"
        material, _, size = str(key).partition(" ")
        try:
            size_mm2 = float(size)
        except ValueError:
            size_mm2 = math.nan
        if material not in MATERIALS or not math.isfinite(size_mm2) or size_mm2 <= 0:
            problems.append(
                Problem(SITE_TOML, where, 'key must be "<Cu|Al> <size in mm²>", e.g. "Cu 10"')
            )
        elif isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v) or v < 0:
            problems.append(Problem(SITE_TOML, where, "must be a price ≥ 0 (a number)"))
        elif (material, size_mm2) in given:
            problems.append(
                Problem(
                    SITE_TOML,
                    where,
                    f'prices the same conductor as "{given[(material, size_mm2)]}": give one price '
                    "per material and size",
                )
            )
        else:
            prices[(material, size_mm2)] = float(v)
            given[(material, size_mm2)] = str(key)
    return CostConfig(
        prices,
        numbers.get("energy_price_per_kwh", math.nan),
        numbers.get("lifetime_years", math.nan),
        numbers.get("discount_rate_pct", math.nan),
        currency,
    )


@dataclass(frozen=True)
class DesignConfig:
    """Parsed design settings, SI, defaults filled. ``values`` holds the ``[design]`` scalars."""

    values: dict[str, Any]
    material: dict[str, str]
    insulation: dict[str, str]
    drop_pct: dict[str, float]
    sizes_mm2: dict[str, tuple[float, ...]]  # only kinds set in site.toml; else the rule set's
    allowances: dict[str, float]
    defaulted: tuple[str, ...] = field(default=())
    air_arrangement: dict[str, str] = field(default_factory=lambda: dict(AIR_ARRANGEMENT_DEFAULT))
    #: only lists set in site.toml (``string_fuse``, ``array_fuse``, ``ac_breaker``)
    ratings_a: dict[str, tuple[float, ...]] = field(default_factory=dict)
    #: the ``[costs]`` table (placement's objective); empty when site.toml has none
    costs: CostConfig = field(default_factory=lambda: CostConfig())

    def __getitem__(self, key: str) -> Any:
        return self.values[key]


#: a candidate size written as an AWG or kcmil label (NEC sizes) rather than in mm²
_AWG_LABEL = re.compile(r"(awg|kcmil)\s*$", re.IGNORECASE)

#: top-level tables of site.toml read here (``layers.SITE_TABLES`` are read by ``layers``)
DESIGN_TABLES: tuple[str, ...] = ("design", "allowances", "costs")
#: sub-tables of ``[design]``
DESIGN_SUBTABLES: tuple[str, ...] = (
    "material",
    "insulation",
    "drop_pct",
    "sizes_mm2",
    "air_arrangement",
    "ratings_a",
)
MATERIALS: tuple[str, ...] = ("Cu", "Al")
#: most candidate sizes per kind (common practice: IEC 60228's series of nominal
#: cross-sections has a few tens of sizes, and no cable type is made in more)
MAX_SIZES = 64


def parse_design(config: dict[str, Any]) -> tuple[DesignConfig, list[Problem]]:
    """Read ``[design]`` and ``[allowances]`` from a parsed site.toml; return (config, problems).

    Also checks that site.toml holds no top-level table other than :data:`DESIGN_TABLES` and
    ``layers.SITE_TABLES`` (whose contents ``layers`` checks). Every key that is missing or
    wrong takes its default in the returned config; ``problems`` says what was wrong.
    """
    problems: list[Problem] = []
    top = (*SITE_TABLES, *DESIGN_TABLES)
    for key, value in config.items():
        if key not in top:
            what = "table" if isinstance(value, dict) else "key"
            problems.append(unknown_key(str(key), key, top, what))
    design = _table(config, "design", "design", problems)
    allowances = _table(config, "allowances", "allowances", problems)
    costs = parse_costs(_table(config, "costs", "costs", problems), problems)
    known = (*(k.name for k in DESIGN_KEYS), *DESIGN_SUBTABLES)
    for key in design:
        if key not in known:
            problems.append(unknown_key(f"design.{key}", key, known))
    for key in allowances:
        if key not in {k.name for k in ALLOWANCE_KEYS}:
            names = [k.name for k in ALLOWANCE_KEYS]
            problems.append(unknown_key(f"allowances.{key}", key, names))

    values, defaulted = _scalars("design", design, DESIGN_KEYS, problems)
    allow, defaulted2 = _scalars("allowances", allowances, ALLOWANCE_KEYS, problems)
    if "design.marking" in defaulted:  # the identification system follows the rule set
        values["marking"] = calc.default_marking(values["rules"])
    rule_set = calc.get_rules(values["rules"])
    if "design.frequency_hz" in defaulted:  # nec: Chapter 9 Table 9 is for 60 Hz
        values["frequency_hz"] = rule_set.default_frequency_hz
    # a device no rule set knows is one problem already (_scalars): not a second one here
    named = any(p.feature_id == "design.ac_breaker_device" for p in problems)
    if values["ac_breaker_device"] not in rule_set.breaker_devices:
        if "design.ac_breaker_device" in defaulted or named:
            values["ac_breaker_device"] = rule_set.breaker_devices[0]
        else:
            problems.append(
                Problem(
                    SITE_TOML,
                    "design.ac_breaker_device",
                    f"{values['ac_breaker_device']!r} is not a breaker of rules "
                    f"'{values['rules']}'; expected one of {', '.join(rule_set.breaker_devices)}",
                )
            )
            values["ac_breaker_device"] = rule_set.breaker_devices[0]

    if math.isnan(values["fault_ka"]) != math.isnan(values["clear_s"]):
        given, missing = ("fault_ka", "clear_s")[:: 1 if math.isnan(values["clear_s"]) else -1]
        problems.append(
            Problem(
                SITE_TOML,
                f"design.{missing}",
                f"missing: the AC short-circuit check needs both fault_ka and clear_s ({given} "
                "is set)",
            )
        )
    material = _choices("material", design, MATERIAL_DEFAULT, MATERIALS, problems)
    # the rule set's insulation names (iec: XLPE, PVC; nec: temperature ratings "90C" …) and
    # its PV string cable
    insulations = (*rule_set.insulations, "PV")
    default = insulation_default(rule_set)
    insulation = _choices("insulation", design, default, insulations, problems)
    cable, copper = rule_set.pv_cable, rule_set.pv_cable_copper
    types = f" (e.g. {rule_set.feeder_types})" if rule_set.feeder_types else ""
    if insulation["string"] != "PV":
        problems.append(
            Problem(
                SITE_TOML,
                "design.insulation.string",
                f"string circuits use {cable}: set 'PV'",
            )
        )
    for kind in ("subarray", "array", "ac"):
        if insulation[kind] == "PV":
            problems.append(
                Problem(
                    SITE_TOML,
                    f"design.insulation.{kind}",
                    f"{cable} is rated here for string circuits only: "
                    f"set {' or '.join(repr(x) for x in insulations if x != 'PV')}" + types,
                )
            )
    if material["string"] != "Cu":
        problems.append(
            Problem(
                SITE_TOML,
                "design.material.string",
                f"string circuits use {copper}: set 'Cu'",
            )
        )
    drop = dict(DROP_PCT_DEFAULT)
    for key, value in _table(design, "drop_pct", "design.drop_pct", problems).items():
        where = f"design.drop_pct.{key}"
        if key not in drop:
            problems.append(unknown_key(where, key, DROP_PCT_DEFAULT))
            continue
        try:
            x = setting_number(value, "drop_pct")
        except ValueError as exc:
            problems.append(Problem(SITE_TOML, where, str(exc)))
            continue
        if not 0 < x <= 20:
            problems.append(Problem(SITE_TOML, where, f"{x:g} % is outside 0–20 %"))
            continue
        drop[key] = x
    if drop["string"] >= drop["dc_total"]:
        problems.append(
            Problem(
                SITE_TOML,
                "design.drop_pct.string",
                f"{drop['string']:g} % leaves nothing of dc_total {drop['dc_total']:g} % for the "
                "sub-array and array cables: set it below dc_total",
            )
        )
    sizes: dict[str, tuple[float, ...]] = {}
    for key, value in _table(design, "sizes_mm2", "design.sizes_mm2", problems).items():
        where = f"design.sizes_mm2.{key}"
        if key not in KINDS:
            problems.append(unknown_key(where, key, KINDS, "kind"))
            continue
        lst = _sizes(value, where, problems, rule_set=rule_set)
        if lst is not None:
            sizes[key] = lst
    rules = values["rules"]
    arrangement = _choices(
        "air_arrangement",
        design,
        AIR_ARRANGEMENT_DEFAULT,
        calc.get_rules(rules).air_arrangements,
        problems,
    )
    ratings: dict[str, tuple[float, ...]] = {}
    for key, value in _table(design, "ratings_a", "design.ratings_a", problems).items():
        where = f"design.ratings_a.{key}"
        if key not in RATING_KEYS:
            problems.append(unknown_key(where, key, RATING_KEYS))
            continue
        lst = _sizes(
            value, where, problems, unit="A", key="rating_a", example="[15, 20, 25]", item="rating"
        )
        if lst is not None:
            ratings[key] = lst
    cfg = DesignConfig(
        values,
        material,
        insulation,
        drop,
        sizes,
        allow,
        defaulted + defaulted2,
        arrangement,
        ratings,
        costs,
    )
    return cfg, problems


def _table(parent: dict[str, Any], name: str, where: str, problems: list[Problem]) -> dict:
    """``parent[name]`` when it is a table (``{}`` when absent); else a problem and ``{}``."""
    value = parent.get(name, {})
    if isinstance(value, dict):
        return value
    problems.append(
        Problem(SITE_TOML, where, f"must be a table ([{where}]), not {toml_type(value)}")
    )
    return {}


def _sizes(
    value: Any,
    where: str,
    problems: list[Problem],
    unit: str = "mm²",
    key: str = "size_mm2",
    example: str = "[4, 6, 10]",
    item: str = "size",
    rule_set: calc.rules.RuleSet | None = None,
) -> tuple[float, ...] | None:
    """A list of positive values in ``unit`` (candidate sizes [mm²], ratings [A]), sorted; None
    (and a problem) when it is not one. With ``rule_set``, each value must be one of its
    standard sizes (:meth:`calc.RuleSet.nominal_sizes_mm2`: IEC 60228, NEC Chapter 9 Table 8);
    the problem names the value as written."""
    what = "sizes in mm²" if unit == "mm²" else f"values in {unit}"
    if not isinstance(value, list):
        problems.append(
            Problem(
                SITE_TOML,
                where,
                f"must be an array of {what}, e.g. {example}, not {toml_type(value)}",
            )
        )
        return None
    if not value:
        problems.append(Problem(SITE_TOML, where, f"must be a non-empty array of {what}"))
        return None
    if len(value) > MAX_SIZES:
        problems.append(
            Problem(SITE_TOML, where, f"{len(value)} sizes; at most {MAX_SIZES} are allowed")
        )
        return None
    out: list[float] = []
    for i, v in enumerate(value, start=1):
        try:
            if unit == "mm²" and isinstance(v, str) and _AWG_LABEL.search(v):
                # an AWG or kcmil size ("10 AWG", "1/0 AWG", "250 kcmil"): its area in mm²
                # from the definitions (calc.nec.sizes: ASTM B258, circular mils)
                x = float(size_from_label([v])[0])
            else:
                x = setting_number(v, key)
        except calc.InputError:
            problems.append(
                Problem(
                    SITE_TOML,
                    where,
                    f"{item} {i}: {v!r} is not an AWG or kcmil size ('10 AWG', '1/0 AWG', "
                    "'250 kcmil')",
                )
            )
            return None
        except ValueError as exc:
            problems.append(Problem(SITE_TOML, where, f"{item} {i}: {exc}"))
            return None
        if x <= 0:
            problems.append(Problem(SITE_TOML, where, f"{item} {i}: {x:g} {unit} must be > 0"))
            return None
        if rule_set is not None:
            x = float(rule_set.standard_size_mm2(x))  # its nominal value, nan: none
            if np.isnan(x):
                nominal = rule_set.nominal_sizes_mm2()
                first, last = rule_set.size_text(nominal[0]), rule_set.size_text(nominal[-1])
                problems.append(
                    Problem(
                        SITE_TOML,
                        where,
                        f"{item} {i}: {v!r} is not a conductor size of rules "
                        f"'{rule_set.name}' ({first} … {last})",
                    )
                )
                return None
        out.append(x)
    return tuple(sorted(out))


def _scalars(table: str, raw: dict[str, Any], keys: tuple[Key, ...], problems: list[Problem]):
    values: dict[str, Any] = {}
    defaulted: list[str] = []
    for k in keys:
        where = f"{table}.{k.name}"
        if k.name not in raw:
            values[k.name] = k.default
            defaulted.append(where)
            continue
        v = raw[k.name]
        values[k.name] = k.default  # replaced below when the value is good
        if k.choices:
            if not isinstance(v, str):
                problems.append(
                    Problem(
                        SITE_TOML,
                        where,
                        f"must be a string, one of {', '.join(k.choices)}, not {toml_type(v)}",
                    )
                )
            elif v not in k.choices:
                problems.append(
                    Problem(SITE_TOML, where, f"{v!r}; expected one of {', '.join(k.choices)}")
                )
            else:
                values[k.name] = v
            continue
        try:
            x = setting_number(v, k.name)
        except ValueError as exc:
            problems.append(Problem(SITE_TOML, where, str(exc)))
            continue
        if k.integer and x != int(x):
            problems.append(Problem(SITE_TOML, where, f"{x:g} must be a whole number"))
            continue
        if (k.low is not None and x < k.low) or (k.high is not None and x > k.high):
            problems.append(Problem(SITE_TOML, where, f"{x:g} is outside {k.low:g}–{k.high:g}"))
            continue
        values[k.name] = (
            int(x) if isinstance(k.default, int) and not isinstance(k.default, bool) else x
        )
    return values, tuple(defaulted)


def _choices(
    name: str,
    design: dict[str, Any],
    defaults: dict[str, str],
    allowed: tuple[str, ...],
    problems: list[Problem],
) -> dict[str, str]:
    """A per-kind table of choices (``[design.material]``): defaults, overridden where valid."""
    out = dict(defaults)
    for key, value in _table(design, name, f"design.{name}", problems).items():
        where = f"design.{name}.{key}"
        if key not in defaults:
            problems.append(unknown_key(where, key, defaults, "kind"))
        elif not isinstance(value, str):
            problems.append(
                Problem(
                    SITE_TOML,
                    where,
                    f"must be a string, one of {', '.join(allowed)}, not {toml_type(value)}",
                )
            )
        elif value not in allowed:
            problems.append(
                Problem(SITE_TOML, where, f"{value!r}; expected one of {', '.join(allowed)}")
            )
        else:
            out[key] = value
    return out
