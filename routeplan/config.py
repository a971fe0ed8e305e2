"""The design settings of ``site.toml``: ``[design]``, its sub-tables, and ``[allowances]``.

Each key has a documented default (the table :data:`DESIGN_KEYS` is the single source for the
README's settings table and for ``routeplan check``). Values may be plain numbers in the unit
named by the key, or pint-parsable quantities (``depth_m = "800 mm"``), converted here once.
Every problem is reported as a :class:`layers.Problem` on ``site.toml`` naming the key.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from layers import Problem
from layers.units import to_number

KINDS: tuple[str, ...] = ("string", "array", "ac")


@dataclass(frozen=True)
class Key:
    """One setting: its default, allowed range or choices, and where the default comes from."""

    name: str
    default: Any
    low: float | None = None
    high: float | None = None
    choices: tuple[str, ...] = ()
    note: str = ""


#: ``[design]`` scalar keys. Sources: IEC 60364-5-52:2009 Annex B reference conditions
#: (ground 20 °C, soil 2.5 K·m/W, depth 0.7 m, air 30 °C) where a default is a reference value.
DESIGN_KEYS: tuple[Key, ...] = (
    Key(
        "rules", "iec", choices=("iec",), note="rule set; 'iec' = IEC 60364-5-52/62548/60228/60287"
    ),
    Key("ground_temp_c", 20.0, -20, 60, note="IEC 60364-5-52 reference ground temperature"),
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
    Key("soil_k_m_w", 2.5, 0.3, 6.0, note="IEC 60364-5-52 reference soil thermal resistivity"),
    Key("depth_m", 0.7, 0.2, 5.0, note="IEC 60364-5-52 reference laying depth"),
    Key(
        "laying", "direct", choices=("direct", "duct"), note="trench laying where a trench has none"
    ),
    Key(
        "spacing_m",
        0.0,
        0.0,
        2.0,
        note="clear distance between circuits; 0 = touching (conservative)",
    ),
    Key(
        "max_circuits",
        math.nan,
        1,
        10_000,
        note="trench capacity where a trench has none; unset = none",
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
    Key("max_parallel", 4, 1, 12, note="most conductors in parallel per pole/phase (array, ac)"),
    Key(
        "loss_hours_h",
        1000.0,
        0.0,
        8760.0,
        note="equivalent full-load loss hours for the annual loss estimate (common practice)",
    ),
    Key("fault_ka", math.nan, 0.0, 200.0, note="prospective AC fault current; unset = no check"),
    Key("clear_s", math.nan, 0.0, 5.0, note="AC protective device clearing time"),
    Key("marking", "iec", choices=("iec", "us"), note="conductor identification convention"),
)

#: per-kind tables under ``[design]``
MATERIAL_DEFAULT: dict[str, str] = {"string": "Cu", "array": "Cu", "ac": "Al"}
INSULATION_DEFAULT: dict[str, str] = {"string": "PV", "array": "XLPE", "ac": "XLPE"}
#: voltage-drop limits, percent (common practice: ≤ 1 % string, ≤ 2 % DC total, ≤ 1 % AC LV)
DROP_PCT_DEFAULT: dict[str, float] = {"string": 1.0, "array": 1.5, "dc_total": 2.0, "ac": 1.0}

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
class DesignConfig:
    """Parsed design settings, SI, defaults filled. ``values`` holds the ``[design]`` scalars."""

    values: dict[str, Any]
    material: dict[str, str]
    insulation: dict[str, str]
    drop_pct: dict[str, float]
    sizes_mm2: dict[str, tuple[float, ...]]  # only kinds set in site.toml; else the rule set's
    allowances: dict[str, float]
    defaulted: tuple[str, ...] = field(default=())

    def __getitem__(self, key: str) -> Any:
        return self.values[key]


def parse_design(config: dict[str, Any]) -> tuple[DesignConfig, list[Problem]]:
    """Read ``[design]`` and ``[allowances]`` from a parsed site.toml; return (config, problems)."""
    problems: list[Problem] = []
    design = config.get("design", {}) or {}
    allowances = config.get("allowances", {}) or {}
    tables = {"design.material", "design.insulation", "design.drop_pct", "design.sizes_mm2"}
    known = {k.name for k in DESIGN_KEYS} | {t.split(".")[1] for t in tables}
    for key in design:
        if key not in known:
            problems.append(Problem("site.toml", f"design.{key}", "unknown key"))
    for key in allowances:
        if key not in {k.name for k in ALLOWANCE_KEYS}:
            problems.append(Problem("site.toml", f"allowances.{key}", "unknown key"))

    values, defaulted = _scalars("design", design, DESIGN_KEYS, problems)
    allow, defaulted2 = _scalars("allowances", allowances, ALLOWANCE_KEYS, problems)

    material = _choices(
        "material", design.get("material", {}), MATERIAL_DEFAULT, ("Cu", "Al"), problems
    )
    insulation = _choices(
        "insulation",
        design.get("insulation", {}),
        INSULATION_DEFAULT,
        ("XLPE", "PVC", "PV"),
        problems,
    )
    if insulation["string"] != "PV":
        problems.append(
            Problem(
                "site.toml",
                "design.insulation.string",
                "string circuits use PV cable (EN 50618 / IEC 62930): set 'PV'",
            )
        )
    drop = dict(DROP_PCT_DEFAULT)
    raw_drop = design.get("drop_pct", {}) or {}
    for key, value in raw_drop.items():
        where = f"design.drop_pct.{key}"
        if key not in drop:
            problems.append(Problem("site.toml", where, f"unknown key; expected {', '.join(drop)}"))
            continue
        try:
            x = to_number(value, "drop_pct")
        except ValueError as exc:
            problems.append(Problem("site.toml", where, str(exc)))
            continue
        if not 0 < x <= 20:
            problems.append(Problem("site.toml", where, f"{x:g} % is outside 0–20 %"))
            continue
        drop[key] = x
    if drop["string"] > drop["dc_total"]:
        problems.append(
            Problem(
                "site.toml",
                "design.drop_pct.string",
                f"{drop['string']:g} % exceeds dc_total {drop['dc_total']:g} %",
            )
        )
    sizes: dict[str, tuple[float, ...]] = {}
    for key, value in (design.get("sizes_mm2", {}) or {}).items():
        where = f"design.sizes_mm2.{key}"
        if key not in KINDS:
            problems.append(
                Problem("site.toml", where, f"unknown kind; expected {', '.join(KINDS)}")
            )
            continue
        try:
            lst = tuple(sorted(to_number(v, "size_mm2") for v in value))
        except (ValueError, TypeError) as exc:
            problems.append(Problem("site.toml", where, f"must be a list of sizes in mm²: {exc}"))
            continue
        if not lst or lst[0] <= 0:
            problems.append(
                Problem("site.toml", where, "must be a non-empty list of positive sizes")
            )
            continue
        sizes[key] = lst
    cfg = DesignConfig(values, material, insulation, drop, sizes, allow, defaulted + defaulted2)
    return cfg, problems


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
        if k.choices:
            if not isinstance(v, str) or v not in k.choices:
                problems.append(
                    Problem("site.toml", where, f"{v!r}; expected one of {', '.join(k.choices)}")
                )
                values[k.name] = k.default
            else:
                values[k.name] = v
            continue
        try:
            x = to_number(v, k.name)
        except ValueError as exc:
            problems.append(Problem("site.toml", where, str(exc)))
            values[k.name] = k.default
            continue
        if (k.low is not None and x < k.low) or (k.high is not None and x > k.high):
            problems.append(Problem("site.toml", where, f"{x:g} is outside {k.low:g}–{k.high:g}"))
            values[k.name] = k.default
            continue
        values[k.name] = (
            int(x) if isinstance(k.default, int) and not isinstance(k.default, bool) else x
        )
    return values, tuple(defaulted)


def _choices(name, raw, defaults, allowed, problems):
    out = dict(defaults)
    if not isinstance(raw, dict):
        problems.append(Problem("site.toml", f"design.{name}", "must be a table of kind = value"))
        return out
    for key, value in raw.items():
        where = f"design.{name}.{key}"
        if key not in defaults:
            problems.append(
                Problem("site.toml", where, f"unknown kind; expected {', '.join(defaults)}")
            )
        elif value not in allowed:
            problems.append(
                Problem("site.toml", where, f"{value!r}; expected one of {', '.join(allowed)}")
            )
        else:
            out[key] = value
    return out
