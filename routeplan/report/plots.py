"""Charts of a finished plan for the calculation report (matplotlib, SVG embedded as data: URIs).

:func:`plan_plots` takes the cable schedule, the trench schedule and the design settings and draws:

* ``utilisation`` — distribution of ``utilisation`` per kind, against the limit 1;
* ``vdrop`` — distribution of each circuit's voltage drop as a share of its kind's limit
  (``100 · vdrop_pct / design.drop_pct[kind]``, %), against 100 %;
* ``conductor_m`` — conductor metres (``cable_m × conductors``, allowances included) by kind,
  material and size;
* ``trench_fill`` — distribution of the trench schedule's ``fill``, against 1 (segments without a
  capacity are counted apart);
* ``losses`` — conductor losses at the operating point by kind (Σ ``loss_w``, kW).

Distributions are histograms over fixed bins (never one mark per circuit), so a 1 GW plant costs
what a small one does; they bin the values as the schedules write them (:func:`as_written`).
Every chart keeps the numbers it shows (:class:`Chart`), so tests check the data, not pixels.
Output is deterministic: the SVG carries no date and a fixed hash salt, and it is drawn with
matplotlib's default settings whatever ``matplotlibrc`` the user has.

An SVG depends only on what it is drawn from (axis label, histograms, bars) and on matplotlib's
version, so :class:`ChartMemo` keeps the last run's SVGs under a digest of exactly that
(:func:`chart_digest`): an unchanged chart is taken from the memo, the same bytes as drawn, and
matplotlib is imported only when some chart must be drawn.
"""

from __future__ import annotations

import base64
import dataclasses
import hashlib
import html
import io
import json
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np
import pandas as pd

from routeplan.config import DesignConfig
from routeplan.outputs.columns import CIRCUIT_COLUMNS, SEGMENT_COLUMNS, Col
from routeplan.outputs.tables import fixed_text
from routeplan.units import size_labels

__all__ = [
    "Chart",
    "ChartMemo",
    "Histogram",
    "Plots",
    "as_written",
    "chart_digest",
    "histogram_edges",
    "plan_plots",
]

#: the kinds in report order, with their label
KIND_LABELS: dict[str, str] = {"string": "string", "subarray": "sub-array", "array": "array",
                               "ac": "AC"}  # fmt: skip
_SVG_SALT = "routeplan-report"


@dataclass(frozen=True)
class Histogram:
    """Counts of one distribution: ``counts[i]`` values in [edges[i], edges[i+1]) (the last bin
    closed, as numpy.histogram), of ``n`` finite values; ``limit`` is the line drawn."""

    label: str
    edges: np.ndarray
    counts: np.ndarray
    n: int
    limit: float


@dataclass(frozen=True)
class Chart:
    """One chart: its key, title, the data drawn (``histograms`` or ``bars``, along an axis
    labelled ``xlabel``) and the image (SVG text)."""

    key: str
    title: str
    histograms: tuple[Histogram, ...] = ()
    bars: dict[str, float] = field(default_factory=dict)
    note: str = ""
    svg: str = ""
    xlabel: str = ""
    #: how it is drawn: ``"histograms"`` (side by side) or ``"bars"`` (horizontal)
    style: str = "histograms"

    @property
    def data_uri(self) -> str:
        """The SVG as a ``data:`` URI."""
        return "data:image/svg+xml;base64," + base64.b64encode(self.svg.encode()).decode("ascii")


@dataclass(frozen=True)
class Plots:
    """Every chart in report order, and the HTML fragment that shows them."""

    charts: tuple[Chart, ...]
    html: str

    def chart(self, key: str) -> Chart:
        """The chart with this key (KeyError if there is none)."""
        for c in self.charts:
            if c.key == key:
                return c
        raise KeyError(key)


@dataclass
class ChartMemo:
    """SVGs of charts by :func:`chart_digest`: the last run's (``last``) and those of this run
    (``used``, what :meth:`export` gives the plan cache), with the count of charts drawn and
    reused."""

    last: dict[str, str] = field(default_factory=dict)
    used: dict[str, str] = field(default_factory=dict)
    drawn: int = 0
    reused: int = 0

    @classmethod
    def load(cls, stored: object) -> ChartMemo:
        """A memo from :meth:`export`'s value (anything else: an empty memo)."""
        try:
            svgs = stored["svg"]  # type: ignore[index]
            last = {str(k): v for k, v in dict(svgs).items() if isinstance(v, str)}
        except (KeyError, TypeError, ValueError, AttributeError):
            return cls()
        return cls(last=last)

    def export(self) -> dict:
        """This run's SVGs, for the next one (strings only, no pickle: :mod:`routeplan.cache`)."""
        return {"svg": dict(self.used)}

    def svg(self, chart: Chart) -> str:
        """The SVG of ``chart``: the last run's for the same digest, else drawn."""
        key = chart_digest(chart)
        svg = self.last.get(key)
        if svg is None:
            svg = _draw(chart)
            self.drawn += 1
        else:
            self.reused += 1
        self.used[key] = svg
        return svg


@lru_cache(maxsize=1)
def _matplotlib_version() -> str:
    """The installed matplotlib's version, read without importing it."""
    from importlib.metadata import version

    return version("matplotlib")


def chart_digest(chart: Chart) -> str:
    """SHA-256 of everything ``chart``'s SVG is drawn from: its style, axis label, histograms
    (label, edges, counts, count of values, limit) or bars (labels and values, in order), the
    SVG salt and matplotlib's version. The drawing code is not in it: the plan cache is
    dropped whenever routeplan's source changes (:func:`routeplan.cache.environment`).

    Floats are written with ``repr`` (exact), so two charts share a digest only when the
    numbers they are drawn from are equal.
    """
    data = {
        "style": chart.style,
        "xlabel": chart.xlabel,
        "histograms": [
            [
                h.label,
                [repr(float(x)) for x in h.edges],
                np.asarray(h.counts).tolist(),
                h.n,
                repr(float(h.limit)),
            ]
            for h in chart.histograms
        ],
        "bars": [[k, repr(float(v))] for k, v in chart.bars.items()],
        "salt": _SVG_SALT,
        "matplotlib": _matplotlib_version(),
    }
    text = json.dumps(data, ensure_ascii=False, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _draw(chart: Chart) -> str:
    """The SVG of ``chart`` (matplotlib is imported here, when a chart is drawn)."""
    if chart.style == "bars":
        return _draw_bars(chart.xlabel, chart.bars)
    return _draw_histograms(chart.xlabel, list(chart.histograms))


def warm_up() -> None:
    """Import matplotlib and draw one small chart in this process (the SVG backend and the
    fonts loaded), so that report processes forked from it later draw without importing
    (:meth:`routeplan.watch.Watcher.prepare`, while a watching process waits)."""
    _draw_bars("", {"": 1.0})


#: the most bins a histogram has: beyond, its step is a whole multiple of the usual one
MAX_BINS = 200


def histogram_edges(values: np.ndarray, step: float, upper: float) -> np.ndarray:
    """Bin edges from 0 in ``step`` up to at least ``upper`` and the largest value; where that
    would take more than :data:`MAX_BINS` bins (a circuit loaded far beyond its capacity), in
    the least whole multiple of ``step`` that takes at most as many.

    >>> histogram_edges(np.array([0.2, 1.31]), 0.25, 1.0).tolist()
    [0.0, 0.25, 0.5, 0.75, 1.0, 1.25, 1.5]
    >>> len(histogram_edges(np.array([0.5, 30305.2]), 0.05, 1.2)) - 1 <= MAX_BINS
    True
    """
    v = np.asarray(values, dtype=float)
    top = max(upper, float(v.max()) if v.size else 0.0)
    step *= max(math.ceil(top / step / MAX_BINS - 1e-9), 1)
    n = max(math.ceil(top / step - 1e-9), 1)
    while n * step < top:  # every value within the edges (the last bin is closed)
        n += 1
    return np.arange(n + 1) * step


def as_written(values: np.ndarray, column: str, columns: tuple[Col, ...]) -> np.ndarray:
    """The values as the schedule writes them (its fixed decimals for ``column``), as floats.

    Charts bin these, so a value shown in a bin is the one a reviewer reads in the CSV file
    (a drop written 0.250 % lies in the bin from 0.25 up, whatever digits followed). A column
    the schedule has no fixed decimals for is taken as it is.

    >>> as_written(np.array([0.74951, np.nan]), "utilisation", CIRCUIT_COLUMNS).tolist()
    [0.75, nan]
    """
    v = np.asarray(values, dtype=float)
    decimals = next((c.decimals for c in columns if c.name == column), None)
    if decimals is None:
        return v
    text = fixed_text(v, decimals)
    out = np.full(v.shape, np.nan)
    given = ~np.isnan(v)
    out[given] = text[given].astype(float)
    return out


def _hist(label: str, values: np.ndarray, step: float, upper: float, limit: float) -> Histogram:
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    edges = histogram_edges(v, step, upper)
    counts, _ = np.histogram(v, bins=edges)
    return Histogram(label, edges, counts, int(v.size), limit)


# --------------------------------------------------------------------------------------------
# drawing


def _figure(width_in: float, height_in: float):
    from matplotlib.figure import Figure

    return Figure(figsize=(width_in, height_in), dpi=100)  # fixed margins: a layout engine
    # would double the drawing time


def _svg(fig) -> str:
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": _SVG_SALT, "svg.fonttype": "none"}):
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    return buf.getvalue()


def _defaults(draw: Callable[..., str]) -> Callable[..., str]:
    """``draw`` run with matplotlib's default settings (a user's ``matplotlibrc`` is not one of
    the inputs a chart's digest holds, so it must not change the drawing either)."""

    def drawn(*args: Any) -> str:
        import matplotlib

        with matplotlib.rc_context():
            matplotlib.rcdefaults()
            return draw(*args)

    return drawn


@_defaults
def _draw_histograms(xlabel: str, hists: list[Histogram]) -> str:
    n = max(len(hists), 1)
    fig = _figure(min(2.6 * n, 7.2) if n > 1 else 4.0, 2.4)
    axes = fig.subplots(1, n, squeeze=False)[0]
    fig.subplots_adjust(left=0.6 / fig.get_figwidth(), right=0.98, bottom=0.2, top=0.88,
                        wspace=0.3)  # fmt: skip
    if not hists:
        axes[0].text(0.5, 0.5, "no data", ha="center", va="center", transform=axes[0].transAxes)
        axes[0].set_axis_off()
    for ax, h in zip(axes, hists, strict=False):
        ax.stairs(h.counts, h.edges, fill=True, color="#4c78a8")
        ax.axvline(h.limit, color="#c0392b", linewidth=1.0, linestyle="--")
        # the title at the axes' top, where matplotlib puts it unless top tick labels or a
        # y offset text such as "1e6" could meet it (counts below 10**6 have none): the same
        # bytes without that search, a tenth of the drawing time
        top = 1.0 if h.counts.max(initial=0) < 1e6 else None
        ax.set_title(f"{h.label} ({h.n:,})", fontsize=8, y=top)
        ax.set_xlabel(xlabel, fontsize=7)
        ax.tick_params(labelsize=6)
        ax.set_xlim(h.edges[0], h.edges[-1])
    axes[0].set_ylabel("count", fontsize=7)
    return _svg(fig)


@_defaults
def _draw_bars(xlabel: str, bars: dict[str, float]) -> str:
    labels = list(bars)
    height = max(1.2, 0.22 * len(labels) + 0.8)
    fig = _figure(5.0, height)
    ax = fig.subplots()
    fig.subplots_adjust(left=0.3, right=0.96, bottom=0.45 / height, top=1 - 0.1 / height)
    if not labels:
        ax.text(0.5, 0.5, "no data", ha="center", va="center", transform=ax.transAxes)
        ax.set_axis_off()
        return _svg(fig)
    y = np.arange(len(labels))
    ax.barh(y, [bars[k] for k in labels], color="#4c78a8")
    ax.set_yticks(y, labels, fontsize=6)
    ax.invert_yaxis()
    ax.set_xlabel(xlabel, fontsize=7)
    ax.tick_params(axis="x", labelsize=6)
    return _svg(fig)


# --------------------------------------------------------------------------------------------
# the charts


def _kinds(circuits: pd.DataFrame) -> list[tuple[str, np.ndarray]]:
    kinds = circuits["kind"].to_numpy(dtype=object)
    return [(k, kinds == k) for k in KIND_LABELS if np.any(kinds == k)]


def plan_plots(
    circuits: pd.DataFrame,
    segments: pd.DataFrame,
    design: DesignConfig,
    memo: ChartMemo | None = None,
) -> Plots:
    """Charts of a finished plan and the HTML fragment that embeds them.

    Parameters
    ----------
    circuits : pandas.DataFrame
        The cable schedule (``Plan.circuits``; columns ``kind``, ``utilisation``, ``vdrop_pct``,
        ``cable_m``, ``conductors``, ``material``, ``size_mm2``, ``loss_w``).
    segments : pandas.DataFrame
        The trench schedule (``Plan.segments``; column ``fill``).
    design : DesignConfig
        The design settings (``design.drop_pct`` gives each kind's drop limit).
    memo : ChartMemo, optional
        The last run's SVGs: a chart drawn from the same data is taken from it (the same
        bytes); without it every chart is drawn.

    Returns
    -------
    Plots
        Five charts (``utilisation``, ``vdrop``, ``conductor_m``, ``trench_fill``, ``losses``)
        with their data and SVG, and the HTML fragment (one ``<figure>`` with one ``<img>`` each).
    """
    kinds = _kinds(circuits)
    util = as_written(circuits["utilisation"].to_numpy(dtype=float), "utilisation",
                      CIRCUIT_COLUMNS)  # fmt: skip
    drop = as_written(circuits["vdrop_pct"].to_numpy(dtype=float), "vdrop_pct", CIRCUIT_COLUMNS)
    charts: list[Chart] = []

    hists = [_hist(KIND_LABELS[k], util[m], 0.05, 1.2, 1.0) for k, m in kinds]
    title = "Utilisation (design current / capacity) per kind; limit 1"
    charts.append(Chart("utilisation", title, tuple(hists), xlabel="utilisation"))

    hists = [
        _hist(KIND_LABELS[k], 100.0 * drop[m] / float(design.drop_pct[k]), 5.0, 120.0, 100.0)
        for k, m in kinds
    ]
    title = "Voltage drop as % of the kind's limit; limit 100 %"
    charts.append(Chart("vdrop", title, tuple(hists), xlabel="% of limit"))

    metres = circuits["cable_m"].to_numpy(dtype=float) * circuits["conductors"].to_numpy(float)
    frame = pd.DataFrame(
        {
            "kind": circuits["kind"].to_numpy(dtype=object),
            "material": circuits["material"].to_numpy(dtype=object),
            "size_mm2": circuits["size_mm2"].to_numpy(dtype=float),
            "m": metres,
        }
    )
    order = {k: i for i, k in enumerate(KIND_LABELS)}
    sums = frame.groupby(["kind", "material", "size_mm2"], sort=False)["m"].sum().reset_index()
    sums = sums.assign(_k=sums["kind"].map(order)).sort_values(["_k", "material", "size_mm2"])
    sums = sums.assign(
        size_label=size_labels(sums["size_mm2"].to_numpy(dtype=float), design.values["rules"])
    )
    bars = {
        f"{KIND_LABELS[r.kind]} {r.material} {r.size_label}": float(r.m) for r in sums.itertuples()
    }
    title = "Conductor metres by kind, material and size (allowances included)"
    charts.append(Chart("conductor_m", title, bars=bars, xlabel="conductor metres", style="bars"))

    fill = as_written(segments["fill"].to_numpy(dtype=float), "fill", SEGMENT_COLUMNS)
    rated = np.isfinite(fill)
    hists = [_hist("trench segments with a capacity", fill[rated], 0.05, 1.2, 1.0)]
    note = (
        f"{int((~rated).sum()):,} of {fill.size:,} segments have no capacity set (not drawn)."
        if np.any(~rated)
        else ""
    )
    title = "Trench fill of the segments (what they carry against the capacity given); limit 1"
    charts.append(Chart("trench_fill", title, tuple(hists), note=note, xlabel="fill"))

    loss = circuits["loss_w"].to_numpy(dtype=float)
    bars = {KIND_LABELS[k]: float(np.nansum(loss[m])) / 1e3 for k, m in kinds}
    title = "Conductor losses at the operating point by kind"
    charts.append(Chart("losses", title, bars=bars, xlabel="kW", style="bars"))
    memo = memo if memo is not None else ChartMemo()
    charts = [dataclasses.replace(c, svg=memo.svg(c)) for c in charts]
    return Plots(tuple(charts), _html(charts))


def _html(charts: list[Chart]) -> str:
    e = html.escape
    parts = [
        '<div class="rp-plots">',
        "<style>.rp-plots figure{break-inside:avoid-page;page-break-inside:avoid;margin:0 0 1em 0}"
        ".rp-plots img{max-width:100%;height:auto}.rp-plots figcaption{font-size:8pt}</style>",
    ]
    for c in charts:
        caption = c.title + "." + (f" {c.note}" if c.note else "")
        parts.append(
            f'<figure data-chart="{e(c.key)}"><img alt="{e(c.title)}" src="{c.data_uri}">'
            f"<figcaption>{e(caption)}</figcaption></figure>"
        )
    parts.append("</div>")
    return "\n".join(parts)
