"""The workbook's summary sheet: ``summary.json`` as a table a reader can scan and filter.

One line per value: ``section``, ``item``, ``value``, ``unit``. Values keep their type —
numbers are numbers, true/false are booleans, text is text (the workbook writer writes each
cell by its type, :func:`routeplan.outputs.xlsx.typed_cells`) — and keys are words, not JSON
paths: ``Circuits — string`` / ``failing``, not ``circuits.string.fail``. Keys this module does
not know (a summary grown since) are still listed, their names made readable
(:func:`readable`), so nothing of ``summary.json`` is left out.
"""

from __future__ import annotations

import math
from typing import Any

import pandas as pd

#: columns of the sheet
COLUMNS: tuple[str, ...] = ("section", "item", "value", "unit")

#: a circuit kind in words (the ids' kinds, README "Outputs")
KINDS = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC"}

#: per-kind figures: key → (item, unit)
KIND_ITEMS: dict[str, tuple[str, str]] = {
    "circuits": ("circuits", ""),
    "fail": ("failing", ""),
    "fail_capacity": ("failing on capacity", ""),
    "fail_drop": ("failing on voltage drop", ""),
    "fail_other": ("failing for another reason", ""),
    "worst_vdrop_pct": ("worst voltage drop", "%"),
    "worst_utilisation": ("worst utilisation", ""),
    "loss_w": ("losses at operating current", "W"),
    "energy_loss_kwh": ("annual energy loss (estimate)", "kWh"),
}
#: drop keys in words (worst drops and limits)
DROP_ITEMS = {**KINDS, "dc_total": "DC total, string to inverter"}
#: unit suffixes of summary keys (the glossary's: SI, unit in every name)
UNITS: tuple[tuple[str, str], ...] = (
    ("_pct", "%"),
    ("_kwh", "kWh"),
    ("_mm2", "mm²"),
    ("_m", "m"),
    ("_ft", "ft"),
    ("_w", "W"),
    ("_a", "A"),
    ("_v", "V"),
    ("_s", "s"),
    ("_c", "°C"),
    ("_hz", "Hz"),
    ("_ka", "kA"),
)
#: words for abbreviations in key names
WORDS = {"vdrop": "voltage drop", "crs": "CRS", "ac": "AC", "dc": "DC", "id": "id"}


def readable(key: str) -> tuple[str, str]:
    """A key in words and its unit, from the naming rule (unit suffix, underscores).

    Examples
    --------
    >>> readable("worst_vdrop_pct")
    ('worst voltage drop', '%')
    >>> readable("crs_note")
    ('CRS note', '')
    """
    unit = ""
    for suffix, u in UNITS:
        if key.endswith(suffix) and len(key) > len(suffix):
            key, unit = key[: -len(suffix)], u
            break
    words = [WORDS.get(w, w) for w in key.split("_") if w]
    return " ".join(words), unit


def _value(v: Any) -> Any:
    """A JSON value as a cell: numbers and booleans as they are, None and NaN empty."""
    if isinstance(v, float) and not math.isfinite(v):
        return None
    return v


def summary_rows(summary: dict[str, Any]) -> pd.DataFrame:
    """The summary sheet's rows (:data:`COLUMNS`) from the summary as written to
    ``summary.json`` (with its ``inputs`` digest)."""
    rows: list[tuple[str, str, Any, str]] = []
    add = rows.append
    s = dict(summary)
    tool = s.pop("tool", {})
    for k, v in tool.items():
        add(("Tool", k, v, ""))
    site = s.pop("site", {})
    for k, v in site.items():
        add(("Site", readable(k)[0], v, ""))
    if "rules" in s:
        add(("Design", "rule set", s.pop("rules"), ""))
    if "marking" in s:
        add(("Design", "conductor identification", s.pop("marking"), ""))
    if "units" in s:
        units = s.pop("units")
        text = {"si": "si (metres)", "us": "us (feet: international foot, 0.3048 m)"}
        add(("Design", "units of the bill of quantities", text.get(units, units), ""))
    if "ok" in s:
        add(("Result", "every circuit, trench segment and inverter input within its limits",
             s.pop("ok"), ""))  # fmt: skip
    for kind, figures in s.pop("circuits", {}).items():
        section = f"Circuits — {KINDS.get(kind, kind)}"
        for k, v in figures.items():
            item, unit = KIND_ITEMS.get(k) or readable(k)
            add((section, item, _value(v), unit))
    for k, v in s.pop("worst_vdrop_pct", {}).items():
        add(("Worst voltage drop", DROP_ITEMS.get(k, readable(k)[0]), _value(v), "%"))
    for k, v in s.pop("drop_limits_pct", {}).items():
        add(("Voltage-drop limits", DROP_ITEMS.get(k, readable(k)[0]), _value(v), "%"))
    seg = s.pop("segments", {})
    names = {"count": "segments", "over_capacity": "over capacity", "trench_m": "trench length"}
    for k, v in seg.items():
        add(("Trench segments", names.get(k) or readable(k)[0], _value(v), readable(k)[1]))
    inputs = s.pop("inverter_inputs", {})
    for k, v in inputs.items():
        item = {"count": "inputs with something landing", "over_limit": "over a limit"}.get(k)
        add(("Inverter DC inputs", item or readable(k)[0], _value(v), ""))
    for key in ("conductor_m", "cable_m"):  # by material and size (cable_m: earlier name)
        for c in s.pop(key, []):
            size = c.get("size_mm2")
            label = c.get("size_label") or (f"{size:g} mm²" if size is not None else "?")
            item = f"{c.get('material', '')} {label}"
            metres = c.get("conductor_m", c.get("metres"))
            add(("Conductor metres, allowances included", item, _value(metres), "m"))
            if "conductor_ft" in c:
                add(("Conductor feet, allowances included", item, _value(c["conductor_ft"]), "ft"))
    totals = {
        "conductor_m_total": "conductor metres (cable length × conductors)",
        "cable_m_total": "conductor metres (cable length × conductors)",
        "run_m_total": "run metres (cable length per circuit, allowances included)",
        "route_m_total": "route metres (circuit routes, no allowances)",
        "conductor_ft_total": "conductor feet (international foot, 0.3048 m)",
        "run_ft_total": "run feet (international foot, 0.3048 m)",
        "loss_w_total": "losses at operating current",
        "energy_loss_kwh_total": "annual energy loss (estimate)",
    }
    for key, item in totals.items():
        if key in s:
            add(("Totals", item, _value(s.pop(key)), readable(key.removesuffix("_total"))[1]))
    for a in s.pop("assigned", []):
        layer = {"rows": "row", "combiners": "combiner"}.get(a.get("layer"), a.get("layer", ""))
        item = f"{layer} {a.get('id', '')} → {a.get('to', '')} ({a.get('rule', '')})"
        add(("Destinations assigned by the planner", item, _value(a.get("route_m")), "m"))
    caution = s.pop("caution", None)
    digests = s.pop("inputs", {})
    for key, value in s.items():  # anything else, readable
        _generic(rows, readable(key)[0].capitalize(), value)
    for path, sha in digests.items():
        add(("Input files (SHA-256)", path, sha, ""))
    if caution is not None:
        add(("Caution", "caution", caution, ""))
    return pd.DataFrame(rows, columns=list(COLUMNS))


def _generic(rows: list, section: str, value: Any, item: str = "") -> None:
    """Rows of a value this module has no words for: nested keys made readable."""
    if isinstance(value, dict):
        for k, v in value.items():
            words, unit = readable(str(k))
            if isinstance(v, (dict, list)):
                _generic(rows, f"{section} — {words}" if words else section, v)
            else:
                rows.append((section, words, _value(v), unit))
    elif isinstance(value, list):
        for i, v in enumerate(value, start=1):
            if isinstance(v, (dict, list)):
                _generic(rows, f"{section} — {i}", v)
            else:
                rows.append((section, str(i), _value(v), ""))
    else:
        rows.append((section, item or "value", _value(value), ""))
