"""The report's charts (routeplan.report.plots): the data behind each chart against the schedules
read with the csv module and numpy.histogram (the data, not pixels), one embedded image per
chart, deterministic SVG. The demo site is planned once (384 strings, 4 kinds, trench segments
with and without a capacity)."""

from __future__ import annotations

import base64
import csv
import re
import tomllib
import xml.etree.ElementTree as ET
from collections import defaultdict
from pathlib import Path

import numpy as np
import pytest

from routeplan.pipeline import plan
from routeplan.report.plots import plan_plots
from tests.routeplan.promise_sites import plan_cli

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
KEYS = ["utilisation", "vdrop", "conductor_m", "trench_fill", "losses"]
LABELS = {"string": "string", "subarray": "sub-array", "array": "array", "ac": "AC"}


def _read(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("plots") / "out"
    result = plan_cli(DEMO, out)
    assert result.exit_code == 0, result.output
    p = plan(DEMO)
    plots = plan_plots(p.circuits, p.segments, p.design)
    return p, out, plots


def test_one_embedded_image_per_chart(demo):
    p, _, plots = demo
    assert [c.key for c in plots.charts] == KEYS
    figures = re.findall(
        r'<figure data-chart="([a-z_]+)"><img alt="[^"]*" '
        r'src="data:image/svg\+xml;base64,([A-Za-z0-9+/=]+)">',
        plots.html,
    )
    assert [key for key, _ in figures] == KEYS
    assert plots.html.count("<img ") == len(KEYS)
    for (key, b64), chart in zip(figures, plots.charts, strict=True):
        svg = base64.b64decode(b64).decode("utf-8")
        assert svg == chart.svg, key
        assert ET.fromstring(svg.encode()).tag == "{http://www.w3.org/2000/svg}svg"
        assert "<dc:date>" not in svg, key  # no date: the same plan gives the same bytes
    again = plan_plots(p.circuits, p.segments, p.design)
    assert again.html == plots.html


def test_distributions_equal_numpy_histogram_of_the_schedules(demo):
    _, out, plots = demo
    circuits = _read(out / "cable_schedule.csv")
    limits = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))["design"]["drop_pct"]
    util, share = plots.chart("utilisation").histograms, plots.chart("vdrop").histograms
    assert [h.label for h in util] == [h.label for h in share] == list(LABELS.values())
    for kind, label in LABELS.items():
        rows = [r for r in circuits if r["kind"] == kind]
        h = next(h for h in util if h.label == label)
        values = np.array([float(r["utilisation"]) for r in rows])
        assert h.edges[0] == 0 and h.edges[-1] >= max(values.max(), 1.2)
        np.testing.assert_allclose(np.diff(h.edges), 0.05)
        assert h.counts.tolist() == np.histogram(values, bins=h.edges)[0].tolist(), label
        assert h.n == len(rows) == h.counts.sum() and h.limit == 1.0

        h = next(h for h in share if h.label == label)
        values = np.array([100.0 * float(r["vdrop_pct"]) / limits[kind] for r in rows])
        np.testing.assert_allclose(np.diff(h.edges), 5.0)
        assert h.counts.tolist() == np.histogram(values, bins=h.edges)[0].tolist(), label
        assert h.n == len(rows) == h.counts.sum() and h.limit == 100.0

    segments = _read(out / "trench_schedule.csv")
    fills = np.array([float(r["fill"]) for r in segments if r["fill"] != ""])
    (h,) = plots.chart("trench_fill").histograms
    assert 0 < len(fills) < len(segments)  # the demo site sets capacities on some trenches
    assert h.counts.tolist() == np.histogram(fills, bins=h.edges)[0].tolist()
    assert h.n == len(fills)
    assert plots.chart("trench_fill").note == (
        f"{len(segments) - len(fills)} of {len(segments)} segments have no capacity set "
        "(not drawn)."
    )


def test_bars_equal_the_schedule_sums(demo):
    _, out, plots = demo
    circuits = _read(out / "cable_schedule.csv")
    metres: dict[str, float] = defaultdict(float)
    metres_tol: dict[str, float] = defaultdict(float)
    loss: dict[str, float] = defaultdict(float)
    loss_tol: dict[str, float] = defaultdict(float)
    for r in circuits:
        key = f"{LABELS[r['kind']]} {r['material']} {float(r['size_mm2']):g} mm²"
        metres[key] += float(r["cable_m"]) * int(r["conductors"])
        # cable_m is written to 0.01 m: up to 0.005 m × conductors off per circuit
        metres_tol[key] += 0.005 * int(r["conductors"])
        loss[LABELS[r["kind"]]] += float(r["loss_w"]) / 1e3
        loss_tol[LABELS[r["kind"]]] += 0.05 / 1e3  # loss_w is written to 0.1 W
    bars = plots.chart("conductor_m").bars
    assert sorted(bars) == sorted(metres)
    for key, value in metres.items():
        assert bars[key] == pytest.approx(value, abs=metres_tol[key]), key
    assert list(plots.chart("losses").bars) == list(LABELS.values())
    for key, value in loss.items():
        assert plots.chart("losses").bars[key] == pytest.approx(value, abs=loss_tol[key]), key
