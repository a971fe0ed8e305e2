"""The calculation report as one self-contained HTML page.

No script, no external file, no network: inline CSS only, so the page opens offline and
prints to A4 or Letter from any browser (``@page`` margins, each main section on a new
page, table rows never split, table headers repeated on every page). Every text that comes
from the user's files (site name, ids, module keys, notes) is HTML-escaped
(:func:`html.escape` with quotes).
"""

from __future__ import annotations

import html
import math
from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np

import calc

from .. import CAUTION, __version__
from ..units import feet, size_labels
from .basis import assumptions, data_tables, methods, module_rows, settings
from .results import LIST_CAP, Results, results

#: the document's title; also routeplan's mark in the PDF made from it (its first object,
#: the document information, holds the title: see :mod:`routeplan.report.pdf`)
TITLE = "routeplan calculation report"
#: routeplan's mark in report.html (within its first bytes)
HTML_MARK = '<meta name="generator" content="routeplan report">'

#: the start of the print CSS's page rule (the paper size: the browser's, or ``--pdf``'s)
PAGE_RULE = "@page { size: auto;"

KIND_LABEL = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC"}

CSS = """
:root { color-scheme: light; }
body { font: 10.5pt/1.4 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #111;
       font-variant-ligatures: none;
       margin: 0 auto; max-width: 60rem; padding: 1.5rem; }
h1 { font-size: 20pt; margin: 0 0 .4rem; }
h2 { font-size: 15pt; border-bottom: 2px solid #234; padding-bottom: .15rem; margin-top: 2rem; }
h3 { font-size: 12pt; margin: 1.2rem 0 .4rem; }
p, li { max-width: 52rem; }
table { border-collapse: collapse; margin: .4rem 0 1rem; font-size: 9pt; width: 100%; }
th, td { border: 1px solid #aab; padding: .15rem .35rem; text-align: left; vertical-align: top; }
th { background: #e8ecf2; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.id, td.key { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; }
td.id { overflow-wrap: anywhere; }
td.key { white-space: nowrap; }
td.file { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 8pt;
          word-break: break-all; width: 11rem; }
.caution { border: 2px solid #a40; background: #fff4ec; padding: .6rem .8rem; margin: 1rem 0; }
.meta td:first-child { width: 14rem; font-weight: bold; }
.signoff td { height: 2.2rem; }
.signoff td:first-child { width: 9rem; }
.fail { color: #a00; font-weight: bold; }
.small { font-size: 8.5pt; color: #333; }
nav ol { margin: .3rem 0; }
@page { size: auto; margin: 16mm 14mm 18mm 14mm;
  @bottom-left { content: "routeplan calculation report"; font: 8pt sans-serif; color: #555; }
  @bottom-right { content: "page " counter(page) " of " counter(pages); font: 8pt sans-serif;
                  color: #555; }
}
@media print {
  body { max-width: none; padding: 0; font-size: 9.5pt; }
  section.major { break-before: page; page-break-before: always; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  tr, td, th { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  .caution { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"""


def esc(value: object) -> str:
    """``value`` as HTML text: ``& < > " '`` escaped."""
    return html.escape(str(value), quote=True)


def _num(value: float, digits: int) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    return f"{value:,.{digits}f}"


def _table(
    headers: Sequence[str],
    rows: Iterable[Sequence[tuple[str, str]]],
    *,
    ident: str = "",
    cls: str = "",
) -> str:
    """A table; each cell is (css class, already escaped HTML)."""
    head = "".join(f"<th>{esc(h)}</th>" for h in headers)
    body = "".join(
        "<tr>"
        + "".join(f'<td class="{c}">{cell}</td>' if c else f"<td>{cell}</td>" for c, cell in row)
        + "</tr>"
        for row in rows
    )
    attr = (f' class="{cls}"' if cls else "") + (f' id="{ident}"' if ident else "")
    return f"<table{attr}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _t(value: object) -> tuple[str, str]:
    return ("", esc(value))


def _i(value: object) -> tuple[str, str]:
    return ("id", esc(value))


def _n(value: float, digits: int) -> tuple[str, str]:
    return ("n", _num(value, digits))


#: the review and approval block of the cover, filled in by hand on the printed report
_SIGN_OFF = (
    '<table class="signoff" id="signoff"><thead><tr><th>role</th><th>name</th>'
    "<th>signature</th><th>date</th></tr></thead><tbody>"
    + "".join(
        f"<tr><td>{role}</td><td></td><td></td><td></td></tr>"
        for role in ("prepared by", "checked by", "approved by")
    )
    + "</tbody></table>"
)


def report_html(
    plan: Any,
    summary: dict | None = None,
    *,
    worked: str | None = None,
    charts: str | None = None,
) -> str:
    """The calculation report of a finished plan (:class:`routeplan.pipeline.Plan`).

    Parameters
    ----------
    plan
        The plan: ``site``, ``design``, ``circuits``, ``segments``, ``inputs``.
    summary
        The plan's summary with the inputs' digests (``summary.json``); ``plan.summary`` when
        None.
    worked, charts
        Self-contained HTML fragments of the worked calculations and the charts; the section
        is left out when its fragment is None or empty.
    """
    summary = summary if summary is not None else plan.summary
    site, design = plan.site, plan.design
    res = results(plan.circuits, plan.segments, getattr(plan, "inputs", None))
    sections: list[tuple[str, str, str]] = [
        ("basis", "Design basis", _basis(plan, summary)),
        ("results", "Results", _results(res, design)),
    ]
    if worked:
        sections.append(("worked", "Worked calculations", worked))
    if charts:
        sections.append(("charts", "Charts", charts))
    toc = "".join(f'<li><a href="#{ident}">{esc(title)}</a></li>' for ident, title, _ in sections)
    body = "".join(
        f'<section class="major" id="{ident}"><h2>{i}. {esc(title)}</h2>{content}</section>'
        for i, (ident, title, content) in enumerate(sections, start=1)
    )
    status = "every circuit, trench segment and inverter input meets its limits"
    if not summary.get("ok", True):
        status = "some circuits, trench segments or inverter inputs fail a limit (see Results)"
    cover = (
        '<section class="cover">'
        f"<h1>Calculation report</h1>"
        f'<p class="site" style="font-size:14pt">{esc(site.name)}</p>'
        + _table(
            ("item", "value"),
            [
                [_t("project / site"), _t(site.name)],
                [_t("working CRS"), _t(summary.get("site", {}).get("crs", ""))],
                [_t("rule set"), _t(design.values["rules"])],
                [_t("conductor identification"), _t(design.values["marking"])],
                [_t("result"), _t(status)],
                [
                    _t("circuits"),
                    _t(
                        f"{sum(r.circuits for r in res.kinds):,} "
                        f"({sum(r.failing for r in res.kinds):,} failing)"
                    ),
                ],
                [
                    _t("trench segments"),
                    _t(f"{sum(n for _, n, _ in res.fill):,} ({res.over_count:,} over capacity)"),
                ],
                [_t("written by"), _t(f"routeplan {__version__}")],
            ],
            ident="cover",
            cls="meta",
        )
        + f'<div class="caution" id="caution"><strong>Caution.</strong> {esc(CAUTION)}</div>'
        + _SIGN_OFF
        + f"<nav><strong>Contents</strong><ol>{toc}</ol></nav></section>"
    )
    return (
        '<!DOCTYPE html>\n<html lang="en"><head>'
        f'<meta charset="utf-8">{HTML_MARK}'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{TITLE}</title><style>{CSS}</style></head><body>"
        f"{cover}{body}"
        f'<p class="caution">{esc(CAUTION)}</p>'
        "</body></html>\n"
    )


def _units_text(design: Any) -> str:
    """What ``design.units`` means for this report and the bill."""
    sizes = (
        "conductor sizes in AWG/kcmil (NEC 2023 Chapter 9 Table 8; mm² from circular mils)"
        if design.values["rules"] == "nec"
        else "conductor sizes in mm² (IEC 60228)"
    )
    if design.values.get("units", "si") == "us":
        return (
            "us: the bill of quantities gives lengths in feet, and the results give conductor "
            "feet beside conductor metres (international foot, 1 ft = 0.3048 m exactly); "
            f"{sizes}; the schedules carry route_m/cable_m and route_ft/cable_ft"
        )
    return f"si: lengths in metres (the schedules also give route_ft/cable_ft); {sizes}"


def _basis(plan: Any, summary: dict) -> str:
    site, design = plan.site, plan.design
    info = summary.get("site", {})
    parts = ["<h3>Project and site</h3>"]
    parts.append(
        _table(
            ("item", "value"),
            [
                [_t("project / site name"), _t(site.name)],
                [_t("working CRS"), _t(info.get("crs", ""))],
                [_t("CRS note"), _t(info.get("crs_note", ""))],
                [_t("rule set"), _t(f"{design.values['rules']}: {_rules_text(design)}")],
                [_t("units"), _t(_units_text(design))],
            ],
            ident="site",
        )
    )
    inputs = summary.get("inputs") or {}
    if inputs:
        parts.append(
            "<h3>Input files</h3><p>SHA-256 of site.toml and of every layer file read.</p>"
        )
        parts.append(
            _table(
                ("file", "SHA-256"),
                ([_i(name), _i(sha)] for name, sha in sorted(inputs.items())),
                ident="inputs",
            )
        )
    parts.append(
        "<h3>Settings in force</h3><p>Every setting of <code>[design]</code>, its sub-tables "
        "and <code>[allowances]</code>, with its value, unit and source: <em>site.toml</em> "
        "when the site's file sets it, <em>default</em> when routeplan's default applies.</p>"
    )
    parts.append(
        _table(
            ("key", "value", "unit", "source", "note"),
            (
                [("key", esc(s.key)), _t(s.value), _t(s.unit), _t(s.source), _t(s.note)]
                for s in settings(design, site.config, site)
            ),
            ident="settings",
        )
    )
    mods = module_rows(site.modules)
    parts.append("<h3>Module data</h3><p>From site.toml's <code>[modules]</code>.</p>")
    parts.append(
        _table(
            ("module", "field", "value", "unit"),
            ([_i(k), ("key", esc(f)), _t(v), _t(u)] for k, f, v, u in mods),
            ident="modules",
        )
    )
    parts.append(
        "<h3>Data tables</h3><p>calc's data tables of the rule set, with the source, edition "
        "and table named in each file's header, and how many rows carry each provenance tag: "
        "<em>confirmed</em> (read in the standard or a faithful reproduction), <em>memory</em> "
        "(recalled, not read: verify before relying on it), <em>memory-low</em> (recalled with "
        "low confidence), <em>common practice</em> (a rule of thumb, no published source).</p>"
    )
    parts.append(
        _table(
            ("table", "source, edition, table", "tags (rows)", "tag note", "used"),
            (
                [
                    ("file", esc(t.name)),
                    _t(t.source),
                    ("tags", esc("; ".join(f"{k} {n}" for k, n in t.tags.items()))),
                    _t(t.tag_note),
                    _t(t.used),
                ]
                for t in data_tables(design)
            ),
            ident="tables",
        )
    )
    parts.append(_identification(design.values["marking"]))
    parts.append("<h3>Methods</h3><dl>")
    for name, text in methods(design.values["rules"]):
        parts.append(f"<dt><strong>{esc(name)}</strong></dt><dd>{esc(text)}</dd>")
    parts.append("</dl><h3>Assumptions</h3><ul>")
    parts.extend(f"<li>{esc(a)}</li>" for a in assumptions(design.values["rules"]))
    parts.append("</ul>")
    parts.append(f'<div class="caution"><strong>Caution.</strong> {esc(CAUTION)}</div>')
    return "".join(parts)


#: the circuit types of the identification table, as the report names them
CIRCUIT_TYPES = {
    "dc": "d.c., two-wire",
    "dc3": "d.c. with mid-point",
    "ac1": "a.c. single-phase",
    "ac3": "a.c. three-phase",
}
#: what each row basis means for the site team
BASES = {
    "standard": "the standard's colour",
    "practice": "common practice",
    "older": "older colour, still met on site (not for new work)",
}


def _identification(system: str) -> str:
    """The conductor identification system in force, every colour with its source and tag
    (calc.marking): the colours the site team terminates to."""
    rows = calc.identification_rows(system)
    return (
        f"<h3>Conductor identification</h3><p>System <code>{esc(system)}</code> "
        "(<code>[design] marking</code>). The schedule's <code>marking</code> column gives each "
        "circuit the colours below; where the standard names no colour it says "
        "<em>per project specification</em> (with the common practice, where one is recorded, "
        "as a hint); colours marked common practice are a convention, not a requirement.</p>"
        + _table(
            ("circuit", "up to V (a.c.)", "conductor", "colour", "basis", "source", "tag"),
            (
                [
                    _t(CIRCUIT_TYPES.get(r["circuit"], r["circuit"])),
                    _t(r["ac_v_max"] or "any"),
                    _t(r["conductor"]),
                    _t(r["colour"]),
                    _t(BASES.get(r["basis"], r["basis"])),
                    _t(r["source"]),
                    _t(r["tag"]),
                ]
                for r in rows
            ),
            ident="identification",
        )
    )


def _rules_text(design: Any) -> str:
    try:
        return calc.get_rules(design.values["rules"]).description
    except Exception:  # pragma: no cover - an unknown rule set is refused before planning
        return ""


def _kind_cells(row, limit: float | None) -> list[tuple[str, str]]:
    fail = row.failing
    return [
        _n(row.circuits, 0),
        ("n fail" if fail else "n", _num(fail, 0)),
        _n(row.worst_utilisation, 3),
        _i(row.worst_utilisation_id),
        _n(row.worst_drop_pct, 3),
        _i(row.worst_drop_id),
        _n(limit if limit is not None else float("nan"), 2),
        _n(row.loss_w / 1000.0, 2),
        _n(row.energy_loss_kwh / 1000.0, 2),
        _n(row.conductor_m, 1),
    ]


_KIND_HEAD = (
    "circuits",
    "failing",
    "worst utilisation",
    "at circuit",
    "worst drop %",
    "at circuit",
    "drop limit %",
    "losses kW",
    "energy loss MWh/year",
    "conductor m",
)


def _results(res: Results, design: Any) -> str:
    limits = design.drop_pct
    us = design.values.get("units", "si") == "us"
    nec = design.values["rules"] == "nec"
    sizes = np.array([s for _, _, s, _ in res.metres], dtype=float)
    labels = size_labels(sizes, design.values["rules"]) if nec else None
    parts = [
        "<h3>By kind</h3><p>Utilisation = design current ÷ current-carrying capacity after "
        "derating; drop = the circuit's own voltage drop, % of its operating voltage; conductor "
        "metres = cable length (allowances included) × current-carrying conductors.</p>",
        _table(
            ("kind", *_KIND_HEAD),
            (
                [_t(KIND_LABEL.get(r.kind, r.kind)), *_kind_cells(r, limits.get(r.kind))]
                for r in res.kinds
            ),
            ident="kinds",
        ),
        '<p id="totals">Totals: losses '
        f"<span>{_num(res.loss_w_total / 1000.0, 2)}</span> kW, energy loss "
        f"<span>{_num(res.energy_loss_kwh_total / 1000.0, 2)}</span> MWh/year, conductor "
        f"<span>{_num(res.conductor_m_total, 1)}</span> m"
        + (f" (<span>{_num(float(feet(res.conductor_m_total)), 1)}</span> ft)" if us else "")
        + ".</p>",
    ]
    if res.dc_total_drop_id:
        parts.append(
            '<p id="dc-total">Worst DC total drop (string + sub-array + array): '
            f"<span>{_num(res.dc_total_drop_pct, 3)}</span> % at string "
            f"<code>{esc(res.dc_total_drop_id)}</code>, limit {_num(limits['dc_total'], 2)} %.</p>"
        )
    parts.append(
        "<h3>By inverter block</h3><p>A circuit's block is the inverter it ultimately feeds "
        "(through its combiners).</p>"
    )
    parts.append(
        _table(
            ("block", "kind", *_KIND_HEAD),
            (
                [_i(b), _t(KIND_LABEL.get(r.kind, r.kind)), *_kind_cells(r, limits.get(r.kind))]
                for b, r in res.blocks
            ),
            ident="blocks",
        )
    )
    parts.append("<h3>Conductor metres by size</h3>")
    parts.append(
        _table(
            (
                "kind",
                "material",
                "size mm²",
                "conductor m",
                *(["size"] if nec else []),
                *(["conductor ft"] if us else []),
            ),
            (
                [
                    _t(KIND_LABEL.get(k, k)),
                    _t(mat),
                    _n(s, 1 if s != int(s) else 0),
                    _n(v, 1),
                    *([_t(str(labels[i]))] if nec else []),
                    *([_n(float(feet(v)), 1)] if us else []),
                ]
                for i, (k, mat, s, v) in enumerate(res.metres)
            ),
            ident="metres",
        )
    )
    parts.append(
        "<h3>Trench fill</h3><p>Fill = circuits in the segment ÷ <code>max_circuits</code>, or "
        "cable sets ÷ <code>max_cable_sets</code>, whichever capacity the trench gives "
        "(<code>fill_basis</code>).</p>"
    )
    parts.append(
        _table(
            ("fill band", "segments", "trench m"),
            ([_t(b), _n(n, 0), _n(m, 1)] for b, n, m in res.fill),
            ident="fill",
        )
    )
    if res.over_count:
        parts.append(
            f"<p>Segments over capacity: {res.over_count}"
            + (f" (the first {LIST_CAP} listed)" if res.over_count > LIST_CAP else "")
            + ".</p>"
        )
        parts.append(
            _table(
                ("segment", "cable sets", "fill"),
                ([_i(s), _n(n, 0), _n(f, 3)] for s, n, f in res.over),
                ident="over",
            )
        )
    if res.widest is not None and not nec:  # nec: spacing is not represented
        seg, n, spacing, spread = res.widest
        parts.append(
            f"<p>Widest layer: segment {esc(seg)}, {n:,} cable sets {_num(spacing, 2)} m apart, "
            f"at least {_num(spread, 2)} m across besides the cables (<code>spread_m</code> "
            "of the trench schedule). The grouping factors take each trench's cable sets "
            "side by side in one layer at its <code>spacing_m</code>; a trench narrower than "
            "that holds them in several layers or closer together, which rates them lower "
            "than computed.</p>"
        )
    if res.inputs_over_count:
        parts.append(
            f"<h3>Inverter inputs over a limit</h3><p>{res.inputs_over_count} input(s)"
            + (f", the first {LIST_CAP} listed" if res.inputs_over_count > LIST_CAP else "")
            + ".</p>"
        )
        parts.append(
            _table(
                ("inverter", "input", "note"),
                ([_i(a), _i(b), _t(n)] for a, b, n in res.inputs_over),
                ident="inputs-over",
            )
        )
    parts.append("<h3>Failing circuits</h3>")
    if not res.failing_count:
        parts.append('<p id="failing-none">None: every circuit meets its limits.</p>')
    else:
        more = (
            f" The first {LIST_CAP} in schedule order are listed; the cable schedule has them all."
            if res.failing_count > LIST_CAP
            else ""
        )
        parts.append(f'<p id="failing-count">{res.failing_count} circuit(s) fail.{more}</p>')
        parts.append(
            _table(
                ("circuit", "kind", "block", "reason", "what would make it pass"),
                (
                    [_i(cid), _t(KIND_LABEL.get(k, k)), _i(b), _t(note), _t(remedy)]
                    for cid, k, b, note, remedy in res.failing
                ),
                ident="failing",
            )
        )
    return "".join(parts)
