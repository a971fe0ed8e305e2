"""The map's panel (site, totals, safety caution) and legend, as plain HTML and CSS.

No script and no external resource: the colour bars are CSS gradients and the symbols small
inline SVG drawings. Every data string is escaped with
:func:`routeplan.map.text.escape_text`.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

import routeplan
from routeplan.map.features import (
    CASING_EXTRA,
    EQUIPMENT_POLYGON_STYLE,
    EQUIPMENT_STYLE,
    FAIL_DASH,
    HALO_DASH,
    ROW_POLYGON_STYLE,
    SEGMENT_HALO_WEIGHT,
    SEGMENT_WEIGHT,
    circuit_kind,
    is_fail,
)
from routeplan.map.scales import (
    CASING_COLOUR,
    FILL,
    NAN_COLOUR,
    PROBLEM_COLOUR,
    UTILISATION,
    circuit_weight,
)
from routeplan.map.text import MISSING, escape_text, fmt_number, join_limited

#: Shown on every map, always visible (the project's one caution text).
CAUTION = routeplan.CAUTION


@dataclass
class Totals:
    """Totals of a plan for the panel; lengths [m], drops [%], losses [W]."""

    circuits_by_kind: dict[str, int]
    failing_ids: list[str]
    worst_dc_drop_pct: float
    worst_dc_drop_id: str
    worst_ac_drop_pct: float
    worst_ac_drop_id: str
    #: run metres: Σ ``cable_m`` (one cable length per circuit, allowances included)
    cable_m_by_kind: dict[str, float]
    loss_w: float
    segments: int
    trench_m: float
    over_capacity: int
    extra: list[str] = field(default_factory=list)


def _worst(values: np.ndarray, ids: np.ndarray) -> tuple[float, str]:
    if values.size == 0 or np.isnan(values).all():
        return float("nan"), ""
    i = int(np.nanargmax(values))
    return float(values[i]), str(ids[i])


def plan_totals(circuits: pd.DataFrame, segments: pd.DataFrame, over: np.ndarray) -> Totals:
    """Totals for the panel from the circuits and segments tables.

    The worst DC drop is the largest ``vdrop_total_pct`` of string and array circuits; the worst
    AC drop the largest ``vdrop_total_pct`` of AC circuits (``vdrop_pct`` where the total is
    missing). Run metres are the sum of ``cable_m`` by kind (each circuit's cable once; the
    conductor metres, × conductors, are in the bill of quantities).
    """
    kinds = circuit_kind(circuits)
    ids = circuits["circuit_id"].astype(str).to_numpy() if len(circuits) else np.array([])

    def num(name: str) -> np.ndarray:
        if name not in circuits.columns:
            return np.full(len(circuits), np.nan)
        return pd.to_numeric(circuits[name], errors="coerce").to_numpy(dtype=float)

    total = num("vdrop_total_pct")
    own = num("vdrop_pct")
    dc = np.isin(kinds, ("string", "subarray", "array"))
    ac = kinds == "ac"
    dc_drop, dc_id = _worst(total[dc], ids[dc])
    ac_drop, ac_id = _worst(np.where(np.isnan(total), own, total)[ac], ids[ac])
    cable = num("cable_m")
    known = ["string", "subarray", "array", "ac"]
    order = [*known, *sorted(set(kinds) - set(known))]
    by_kind = {k: int((kinds == k).sum()) for k in order if (kinds == k).any()}
    cable_by_kind = {k: float(np.nansum(cable[kinds == k])) for k in by_kind}
    seg_len = (
        pd.to_numeric(segments["length_m"], errors="coerce").to_numpy(dtype=float)
        if "length_m" in segments.columns
        else np.array([])
    )
    return Totals(
        circuits_by_kind=by_kind,
        failing_ids=[str(i) for i in ids[is_fail(circuits)]],
        worst_dc_drop_pct=dc_drop,
        worst_dc_drop_id=dc_id,
        worst_ac_drop_pct=ac_drop,
        worst_ac_drop_id=ac_id,
        cable_m_by_kind=cable_by_kind,
        loss_w=float(np.nansum(num("loss_w"))),
        segments=len(segments),
        trench_m=float(np.nansum(seg_len)),
        over_capacity=int(np.sum(over)),
    )


_KIND = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC"}

CSS = """
.rp-box{position:absolute;z-index:1001;max-width:300px;overflow:auto;
 background:rgba(255,255,255,.95);border:1px solid #757575;border-radius:4px;padding:4px 9px;
 font:12px/1.35 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif;color:#212121}
#rp-panel{left:54px;top:10px;max-height:calc(100vh - 60px)}
#rp-legend{right:10px;bottom:26px;max-height:calc(100vh - 250px)}
.rp-box summary{font-weight:600;cursor:pointer;margin:2px 0}
.rp-box table{border-collapse:collapse;margin:2px 0 4px}
.rp-box th{text-align:left;font-weight:500;padding:1px 8px 1px 0;vertical-align:top;color:#424242}
.rp-box td{padding:1px 0;vertical-align:top}
.rp-site{font-size:14px;font-weight:700;margin:0 0 2px}
.rp-caution{margin:6px 0 2px;padding:4px 6px;border-left:4px solid #212121;background:#eeeeee}
.rp-bar{height:12px;border:1px solid #616161;margin:2px 0 0}
.rp-ticks{display:flex;justify-content:space-between;font-size:11px;color:#424242}
.rp-key{display:flex;align-items:center;gap:6px;margin:2px 0}
.rp-key svg{flex:none}
.rp-note{font-size:11px;color:#424242;margin:1px 0 4px}
.rp-fail{color:#000;font-weight:600}
.rp-box button{font:inherit;cursor:pointer}
.rp-box button:focus-visible,.rp-box input:focus-visible,.rp-box summary:focus-visible{
 outline:2px solid #0072B2;outline-offset:1px}
#rp-review{top:10px;left:50%;transform:translateX(-50%);width:300px;max-height:calc(100vh - 60px)}
#rp-find{position:relative;margin:2px 0 4px}
#rp-find label{display:block;font-weight:600}
#rp-q{width:100%;box-sizing:border-box;font:inherit;padding:2px 4px}
#rp-hits{position:absolute;left:0;right:0;z-index:1002;margin:0;padding:0;list-style:none;
 background:#fff;border:1px solid #757575;max-height:240px;overflow:auto}
#rp-hits li{padding:2px 6px;cursor:pointer;overflow-wrap:anywhere}
#rp-hits li[aria-selected=true]{background:#0072B2;color:#fff}
#rp-hits .rp-hit-kind{color:#616161;margin-left:6px;font-size:11px}
#rp-hits .rp-hit-more{color:#616161;cursor:default;font-style:italic}
#rp-hits li[aria-selected=true] .rp-hit-kind{color:#fff}
#rp-views{border:0;padding:0;margin:4px 0}
#rp-views legend{font-weight:600;padding:0}
#rp-views label{display:block}
.rp-go{background:none;border:0;padding:0;color:#0050a0;text-decoration:underline;
 text-align:left;overflow-wrap:anywhere}
.rp-fails ul{margin:2px 0 4px;padding-left:16px}
#rp-details{right:10px;top:10px;max-width:390px;width:390px;max-height:calc(100vh - 50px);
 z-index:1003;background:#fff}
#rp-details[hidden]{display:none}
#rp-details h2{font-size:13px;margin:2px 24px 4px 0;overflow-wrap:anywhere}
#rp-details td{overflow-wrap:anywhere}
#rp-details .rp-list th,#rp-details .rp-list td{padding:1px 6px 1px 0;white-space:nowrap}
#rp-details .rp-list td:first-child{white-space:normal}
#rp-close{position:absolute;right:4px;top:2px;border:1px solid #9e9e9e;background:#fff;
 border-radius:3px;padding:0 6px}
.rp-swatch{display:inline-block;width:18px;height:8px;margin-right:4px;vertical-align:middle}
.leaflet-container{background:#fafafa}
.leaflet-tooltip.rp-tip{padding:4px 7px}
.rp-tip table{font-size:12px;border-collapse:collapse}
.rp-tip th{text-align:left;font-weight:600;white-space:nowrap;padding:1px 10px 1px 0;
 vertical-align:top;color:#424242}
.rp-tip td{padding:1px 0;vertical-align:top;white-space:normal;min-width:14em;max-width:26em;
 overflow-wrap:anywhere}
"""


def _svg_line(*layers: tuple[str, float, str | None, float], width: int = 40, height: int = 22):
    """An inline SVG of stacked horizontal strokes: (colour, weight, dasharray, opacity)."""
    y = height / 2
    parts = []
    for colour, weight, dash, opacity in layers:
        d = f' stroke-dasharray="{dash}"' if dash else ""
        parts.append(
            f'<line x1="2" y1="{y}" x2="{width - 2}" y2="{y}" stroke="{colour}" '
            f'stroke-width="{weight}" stroke-opacity="{opacity}"{d}/>'
        )
    return f'<svg width="{width}" height="{height}" aria-hidden="true">{"".join(parts)}</svg>'


def _svg_circle(style: dict) -> str:
    r = style["radius"]
    size = 2 * r + style["weight"] + 2
    c = size / 2
    return (
        f'<svg width="{size}" height="{size}" aria-hidden="true"><circle cx="{c}" cy="{c}" '
        f'r="{r}" fill="{style["fillColor"]}" stroke="{style["color"]}" '
        f'stroke-width="{style["weight"]}"/></svg>'
    )


def _svg_rect(style: dict) -> str:
    return (
        '<svg width="22" height="16" aria-hidden="true"><rect x="2" y="2" width="18" height="12" '
        f'fill="{style["fillColor"]}" fill-opacity="{style["fillOpacity"]}" '
        f'stroke="{style["color"]}" stroke-width="{style["weight"]}"/></svg>'
    )


def _key(symbol: str, text: str) -> str:
    return f'<div class="rp-key">{symbol}<span>{text}</span></div>'


def legend_html(*, segment_reference: int, aggregated: bool) -> str:
    """The legend: both colour scales, the problem marks, line weights and the symbols."""
    weights = [(a, float(circuit_weight([a], [1])[0])) for a in (4, 16, 95, 400)]
    weight_keys = " ".join(
        f"{_svg_line(('#424242', w, None, 1), width=26)}{a:g}" for a, w in weights
    )
    fail_w = 3.0
    parts = [
        "<b>Circuits: utilisation</b>",
        '<div class="rp-note">design current ÷ derated ampacity</div>',
        f'<div class="rp-bar" style="background:{UTILISATION.css_gradient()}"></div>',
        '<div class="rp-ticks"><span>0 %</span><span>50 %</span><span>≥ 100 %</span></div>',
        _key(
            _svg_line(
                (CASING_COLOUR, fail_w + CASING_EXTRA, FAIL_DASH, 1),
                (PROBLEM_COLOUR, fail_w, None, 1),
            ),
            '<span class="rp-fail">failing circuit</span> (reason in its tooltip)',
        ),
        _key(_svg_line((NAN_COLOUR, 3, None, 1)), "no value"),
        f'<div class="rp-key"><span>Line weight ~ cross-section × parallel [mm²]:</span></div>'
        f'<div class="rp-key">{weight_keys}</div>',
    ]
    if aggregated:
        parts.append(
            '<div class="rp-note">Strings are drawn one line per row and destination: the '
            "row's longest string route, coloured by its worst string.</div>"
        )
    no_cap = (
        f"where no capacity is set: circuits ÷ {segment_reference} (the most in any segment)"
        if segment_reference
        else ""
    )
    parts += [
        "<b>Trench segments: fill</b>",
        f'<div class="rp-note">circuits or cable sets ÷ capacity{"; " + no_cap if no_cap else ""}'
        "</div>",
        f'<div class="rp-bar" style="background:{FILL.css_gradient()};opacity:.55"></div>',
        '<div class="rp-ticks"><span>0 %</span><span>50 %</span><span>≥ 100 %</span></div>',
        _key(
            _svg_line(
                (PROBLEM_COLOUR, SEGMENT_HALO_WEIGHT, HALO_DASH, 0.9),
                (FILL.colour(1.0), SEGMENT_WEIGHT, None, 0.55),
            ),
            '<span class="rp-fail">over capacity</span>',
        ),
        "<b>Site</b>",
        _key(_svg_rect(ROW_POLYGON_STYLE), "module row"),
        _key(_svg_circle(EQUIPMENT_STYLE["combiner"]), "combiner"),
        _key(
            _svg_circle(EQUIPMENT_STYLE["inverter"]) + _svg_rect(EQUIPMENT_POLYGON_STYLE),
            "inverter (point or pad)",
        ),
        _key(_svg_circle(EQUIPMENT_STYLE["grid"]), "grid point"),
    ]
    return "\n".join(parts)


def _row(label: str, value: str) -> str:
    return f"<tr><th>{label}</th><td>{value}</td></tr>"


def summary_html(site_name: str, totals: Totals, *, crs_name: str) -> str:
    """The totals table; ``site_name`` and ids are escaped here."""
    kinds = " · ".join(
        f"{n:,} {escape_text(_KIND.get(k, k))}" for k, n in totals.circuits_by_kind.items()
    )
    n_fail = len(totals.failing_ids)
    failing = (
        f'<span class="rp-fail">{n_fail}</span>: '
        + escape_text(join_limited(totals.failing_ids, limit=5))
        if n_fail
        else "0"
    )

    def drop(value: float, cid: str) -> str:
        if np.isnan(value):
            return MISSING
        return f"{fmt_number([value], 2, '%')[0]} ({escape_text(cid)})"

    cable = " · ".join(
        f"{escape_text(_KIND.get(k, k))} {fmt_number([m], 0, 'm')[0]}"
        for k, m in totals.cable_m_by_kind.items()
    )
    over = (
        f'<span class="rp-fail">{totals.over_capacity} over capacity</span>'
        if totals.over_capacity
        else "none over capacity"
    )
    rows = [
        _row("Circuits", kinds or "0"),
        _row("Failing", failing),
        _row("Worst DC drop, total", drop(totals.worst_dc_drop_pct, totals.worst_dc_drop_id)),
        _row("Worst AC drop", drop(totals.worst_ac_drop_pct, totals.worst_ac_drop_id)),
        _row("Run metres", cable or MISSING),
        _row("Cable losses", fmt_number([totals.loss_w], 0, "W")[0]),
        _row(
            "Trench segments",
            f"{totals.segments:,} · {fmt_number([totals.trench_m], 0, 'm')[0]} · {over}",
        ),
    ]
    rows += [_row("Note", escape_text(x)) for x in totals.extra]
    return (
        f'<div class="rp-site">{escape_text(site_name)}</div>'
        f"<table>{''.join(rows)}</table>"
        f'<div class="rp-note">Working CRS {escape_text(crs_name)}, shown in WGS 84.</div>'
    )


def panel_html(
    site_name: str, totals: Totals, *, crs_name: str, legend: str, review: str = ""
) -> str:
    """The boxes: summary with the caution (always visible) at the top left, legend at the
    bottom right; both fold away. ``review`` (:func:`review_html`), when given, comes with
    the details box (:func:`details_html`)."""
    return (
        f"<style>{CSS}</style>"
        '<div class="rp-box" id="rp-panel">'
        "<details open><summary>Summary</summary>"
        f"{summary_html(site_name, totals, crs_name=crs_name)}</details>"
        f'<div class="rp-caution" role="note"><b>Caution.</b> {escape_text(CAUTION)}</div>'
        "</div>"
        '<div class="rp-box" id="rp-legend">'
        f"<details open><summary>Legend</summary>{legend}</details>"
        "</div>"
        f"{review}{details_html() if review else ''}"
    )


#: Choices of the colour view: (value, label). "drawn" is how the page opens.
VIEWS = (
    ("drawn", "utilisation, 0–100 % (as drawn)"),
    ("util", "utilisation, spread over the values that occur"),
    ("drop", "voltage drop ÷ its limit"),
    ("status", "status"),
)


def failing_html(ids: list[str], blocks: list[str]) -> str:
    """The failing circuits as buttons that select each one (``data-find``: the id), grouped
    by block (``blocks``: each one's inverter id) in natural order (:mod:`routeplan.order`)
    when more than one block has failures. Ids and blocks are escaped here."""
    from routeplan.order import natural_rank

    if not ids:
        return ""
    ids_a = np.asarray(ids, dtype=object)
    blk = np.asarray(blocks, dtype=object)
    order = np.lexsort((natural_rank(ids_a), natural_rank(blk)))
    ids_a, blk = ids_a[order], blk[order]

    def items(sel: np.ndarray) -> str:
        return "".join(
            f'<li><button type="button" class="rp-go" data-find="{e}">{e}</button></li>'
            for e in (escape_text(i) for i in sel.tolist())
        )

    head = f"<summary>Failing circuits ({len(ids_a):,})</summary>"
    # sorted by block: each block's circuits are one run
    starts = np.r_[0, np.flatnonzero(blk[1:] != blk[:-1]) + 1]
    if len(starts) <= 1:
        body = f"<ul>{items(ids_a)}</ul>"
    else:
        body = "".join(
            f"<details><summary>Block {escape_text(blk[a]) or MISSING} "
            f"({b - a:,})</summary><ul>{items(ids_a[a:b])}</ul></details>"
            for a, b in itertools.pairwise([*starts.tolist(), len(blk)])
        )
    return f'<details class="rp-fails" id="rp-failing">{head}{body}</details>'


def review_html(failing: str) -> str:
    """The review box at the top centre: the search box, the colour view control and the
    failing list (both folded at first, so the box stays small)."""
    views = "".join(
        f'<label><input type="radio" name="rp-view" value="{v}"'
        f"{' checked' if v == 'drawn' else ''}> {label}</label>"
        for v, label in VIEWS
    )
    return (
        '<div class="rp-box" id="rp-review" role="region" aria-label="Review">'
        '<div id="rp-find" role="search">'
        '<label for="rp-q">Find an id</label>'
        '<input id="rp-q" type="search" autocomplete="off" spellcheck="false" role="combobox" '
        'aria-autocomplete="list" aria-expanded="false" aria-controls="rp-hits" '
        'placeholder="circuit, row, combiner, inverter, trench segment">'
        '<ul id="rp-hits" role="listbox" aria-label="Matching ids" hidden></ul></div>'
        '<details id="rp-view"><summary>Colour view</summary>'
        f'<fieldset id="rp-views"><legend>Colour circuits by</legend>{views}</fieldset>'
        '<div id="rp-view-key" aria-live="polite"></div></details>'
        f"{failing}</div>"
    )


def details_html() -> str:
    """The (empty, hidden) box where the page shows a feature's details."""
    return (
        '<div class="rp-box" id="rp-details" role="region" aria-label="Details" hidden>'
        '<button type="button" id="rp-close" aria-label="Close the details">×</button>'
        '<div id="rp-details-body" aria-live="polite"></div></div>'
    )
