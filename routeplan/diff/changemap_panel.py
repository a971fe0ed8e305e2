"""The change map's panel (what changed, the plant-level table, the safety caution) and its
legend, as plain HTML and CSS in the plan map's boxes (:mod:`routeplan.map.panel`).

No script and no external resource. Every data string (site names, folders, kinds of change,
bill items and units) is escaped with :func:`routeplan.map.text.escape_text`; numbers
are written with fixed decimals.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from routeplan.map.features import EQUIPMENT_STYLE
from routeplan.map.panel import CAUTION, CSS, _key, _svg_circle, _svg_line
from routeplan.map.text import MISSING, escape_text

from .changemap_features import (
    ADDED_RING,
    ARROW_COLOUR,
    FAILING_WEIGHT,
    LOOK_COLOUR,
    LOOKS,
    NEW_WEIGHT,
    OLD_COLOUR,
    OLD_DASH,
    OLD_EQUIPMENT_STYLE,
    OLD_WEIGHT,
    SEGMENT_COLOUR,
    SEGMENT_OLD_STYLE,
)

#: Decimals of the plant-level table's numbers.
PLANT_DECIMALS = 2

#: The change map's own rules, after the plan map's (``CSS``): a wider summary box for the
#: plant table, numbers right-aligned.
CHANGE_CSS = """
#rp-panel{max-width:440px}
.rp-plant th,.rp-plant td{padding:1px 6px 1px 0;white-space:nowrap}
.rp-plant td.rp-num{text-align:right;font-variant-numeric:tabular-nums}
.rp-plant td.rp-item{white-space:normal;min-width:10em}
.rp-plant tr.rp-head th{border-bottom:1px solid #9e9e9e}
"""


@dataclass
class ChangeCounts:
    """What the panel counts: kinds of change of circuits and segment events (in order of
    first appearance), moved/added/removed equipment, and what could not be drawn."""

    looks: dict[str, int]
    events: dict[str, int]
    moved: int
    added: int
    removed: int
    notes: list[str] = field(default_factory=list)


def count_values(values: Iterable[object], order: Iterable[str] = ()) -> dict[str, int]:
    """Counts of the text of ``values``: the names in ``order`` first, the others after, in
    order of first appearance.

    Examples
    --------
    >>> count_values(["longer", "added", "longer", "odd"], ["added", "longer"])
    {'added': 1, 'longer': 2, 'odd': 1}
    """
    c = Counter("" if v is None else str(v) for v in values)
    out = {k: c.pop(k) for k in order if k in c}
    out.update(c)
    return out


def _counts_text(counts: dict[str, int]) -> str:
    return " · ".join(f"{n:,} {escape_text(k)}" for k, n in counts.items()) or "0"


def _number(value: float, *, signed: bool = False) -> str:
    if value is None or not np.isfinite(value):
        return MISSING
    text = f"{value:+,.{PLANT_DECIMALS}f}" if signed else f"{value:,.{PLANT_DECIMALS}f}"
    return text.replace("-", "−")  # U+2212 minus sign


def plant_table_html(plant: pd.DataFrame) -> str:
    """The plant-level rows (``item``, ``unit``, ``old``, ``new``, ``delta``) as an HTML
    table; numbers with ``PLANT_DECIMALS`` decimals, the delta signed, "–" where absent."""
    if plant is None or len(plant) == 0:
        return '<div class="rp-note">No plant-level change.</div>'

    def num(name: str) -> np.ndarray:
        if name not in plant.columns:
            return np.full(len(plant), np.nan)
        return pd.to_numeric(plant[name], errors="coerce").to_numpy(dtype=float)

    old, new, delta = num("old"), num("new"), num("delta")
    items = plant["item"].tolist() if "item" in plant.columns else [""] * len(plant)
    units = plant["unit"].tolist() if "unit" in plant.columns else [""] * len(plant)
    rows = ['<tr class="rp-head"><th>Item</th><th>Unit</th><th>Old</th><th>New</th><th>Δ</th></tr>']
    for i in range(len(plant)):
        rows.append(
            f'<tr><td class="rp-item">{escape_text(items[i])}</td>'
            f"<td>{escape_text(units[i])}</td>"
            f'<td class="rp-num">{_number(old[i])}</td>'
            f'<td class="rp-num">{_number(new[i])}</td>'
            f'<td class="rp-num">{_number(delta[i], signed=True)}</td></tr>'
        )
    return f'<table class="rp-plant">{"".join(rows)}</table>'


def _row(label: str, value: str) -> str:
    return f"<tr><th>{label}</th><td>{value}</td></tr>"


def panel_html(
    *,
    old_site: str,
    new_site: str,
    old_dir: str,
    new_dir: str,
    counts: ChangeCounts,
    plant: pd.DataFrame,
    crs_name: str,
) -> str:
    """The summary box (sites, folders, counts, plant-level table, caution) and the legend
    box; every text argument is escaped here."""
    site = escape_text(new_site)
    if old_site != new_site:
        site = f"{escape_text(old_site)} → {site}"
    equipment = f"{counts.moved:,} moved · {counts.added:,} added · {counts.removed:,} removed"
    rows = [
        _row("Old plan", escape_text(old_dir)),
        _row("New plan", escape_text(new_dir)),
        _row("Circuits changed", _counts_text(counts.looks)),
        _row("Trench segments", _counts_text(counts.events)),
        _row("Equipment", equipment),
    ]
    rows += [_row("Note", escape_text(n)) for n in counts.notes]
    return (
        f"<style>{CSS}{CHANGE_CSS}</style>"
        '<div class="rp-box" id="rp-panel">'
        "<details open><summary>Changes</summary>"
        f'<div class="rp-site">{site}</div>'
        f"<table>{''.join(rows)}</table>"
        f'<div class="rp-note">Working CRS {escape_text(crs_name)}, shown in WGS 84.</div>'
        "</details>"
        "<details open><summary>Plant</summary>"
        f"{plant_table_html(plant)}</details>"
        f'<div class="rp-caution" role="note"><b>Caution.</b> {escape_text(CAUTION)}</div>'
        "</div>"
        '<div class="rp-box" id="rp-legend">'
        f"<details open><summary>Legend</summary>{legend_html()}</details>"
        "</div>"
    )


def _svg_arrow() -> str:
    return (
        '<svg width="40" height="22" aria-hidden="true">'
        f'<polyline points="4,11 34,11" stroke="{ARROW_COLOUR}" stroke-width="2.5" fill="none"/>'
        f'<polyline points="27,6 34,11 27,16" stroke="{ARROW_COLOUR}" stroke-width="2.5" '
        'fill="none"/></svg>'
    )


def legend_html() -> str:
    """The legend: the line of each kind of change, the old route, the segment bands and the
    equipment symbols."""
    parts = ["<b>Changed circuits, new route</b>"]
    for look in LOOKS:
        if look == "removed":
            continue
        w = FAILING_WEIGHT if look == "now failing" else NEW_WEIGHT
        parts.append(_key(_svg_line((LOOK_COLOUR[look], w, None, 1)), look))
    parts += [
        "<b>Old route</b>",
        _key(
            _svg_line(
                (OLD_COLOUR, OLD_WEIGHT, OLD_DASH, 0.9),
                (LOOK_COLOUR["longer"], NEW_WEIGHT, None, 1),
            ),
            "old route under the new one",
        ),
        _key(_svg_line((OLD_COLOUR, OLD_WEIGHT, OLD_DASH, 0.9)), "old route alone (removed)"),
        "<b>Trench segments</b>",
        _key(_svg_line((SEGMENT_COLOUR, 12, None, 0.8)), "changed segment (new plan)"),
        _key(
            _svg_line((SEGMENT_COLOUR, 12, SEGMENT_OLD_STYLE["dashArray"], 0.8)),
            "segment of the old plan only",
        ),
        "<b>Equipment</b>",
        _key(
            _svg_circle(dict(OLD_EQUIPMENT_STYLE, radius=7))
            + _svg_arrow()
            + _svg_circle(EQUIPMENT_STYLE["combiner"]),
            "moved: old position → new",
        ),
        _key(_svg_circle(dict(EQUIPMENT_STYLE["combiner"], color=ADDED_RING, weight=4)), "added"),
        _key(_svg_circle(dict(OLD_EQUIPMENT_STYLE, radius=7)), "removed (dashed grey)"),
        '<div class="rp-note">Grey background: the new plan\'s rows, trench segments and '
        "unchanged equipment.</div>",
    ]
    return "\n".join(parts)
