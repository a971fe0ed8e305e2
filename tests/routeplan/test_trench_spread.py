"""The trench schedule's ``spread_m`` and the report's widest layer, recomputed from the demo
site's own files (its trench layer's ``spacing_m``, site.toml's default) and the cable
schedule's routes.

IEC 60364-5-52:2009 Tables B.52.18 and B.52.19 give grouping factors for circuits laid side
by side in one horizontal layer at a stated clearance (from memory, ../shared/
REFERENCE_VALUES.md 3.8, 3.9): n cable sets at a clear spacing s need (n − 1) × s across
besides the cables themselves. The audit that asked for it found a generated trench carrying
60 sets at 0.25 m: about 15 m of spacing, a trench nobody digs.
"""

from __future__ import annotations

import json
import re
import tomllib
from collections import Counter
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from routeplan.cli import app

ROOT = Path(__file__).resolve().parents[2]
runner = CliRunner()


def _plan(site: str, out: Path) -> Path:
    done = runner.invoke(app, ["plan", str(ROOT / site), "--out", str(out), "--no-cache"])
    assert done.exit_code == 0, done.output
    return out


@pytest.fixture(scope="module")
def iec(tmp_path_factory) -> Path:
    return _plan("demo_site", tmp_path_factory.mktemp("spread") / "out")


def _spacing_by_trench(site: Path) -> dict[str, float]:
    """Each trench's clear spacing [m] as the site gives it: its own, else site.toml's."""
    settings = tomllib.loads((site / "site.toml").read_text(encoding="utf-8"))
    default = settings["design"]["spacing_m"]
    features = json.loads((site / "trenches.geojson").read_text(encoding="utf-8"))["features"]
    out = {}
    for f in features:
        value = f["properties"].get("spacing_m")
        out[str(f["properties"]["id"])] = float(default if value is None else value)
    return out


def _sets_by_segment(out: Path) -> Counter:
    """Cable sets per trench segment, counted from the cable schedule's routes (a circuit of n
    parallel sets is n sets in every segment it runs through)."""
    cs = pd.read_csv(out / "cable_schedule.csv", dtype={"trench_segments": str})
    sets: Counter = Counter()
    for route, parallel in zip(cs["trench_segments"].fillna(""), cs["parallel"], strict=True):
        for seg in filter(None, route.split(";")):
            sets[seg] += int(parallel)
    return sets


def test_spread_is_the_spacing_across_the_cable_sets_of_each_segment(iec):
    spacing = _spacing_by_trench(ROOT / "demo_site")
    sets = _sets_by_segment(iec)
    ts = pd.read_csv(iec / "trench_schedule.csv")
    assert len(ts) > 0
    spaced = 0
    for seg, trench, written in zip(ts["segment_id"], ts["trench_id"], ts["spread_m"], strict=True):
        assert seg.startswith(f"{trench}@")
        expected = max(sets[seg] - 1, 0) * spacing[str(trench)]
        assert written == pytest.approx(expected, abs=0.005), seg
        spaced += expected > 0
    assert spaced >= 5  # the demo spaces several trenches: the check is not all zeros


def test_the_report_names_the_widest_layer(iec):
    spacing = _spacing_by_trench(ROOT / "demo_site")
    sets = _sets_by_segment(iec)
    widths = {
        seg: (n, spacing[seg.split("@")[0]], (n - 1) * spacing[seg.split("@")[0]])
        for seg, n in sets.items()
    }
    w = max(v[2] for v in widths.values())
    assert w > 0
    # among equally wide segments, the first in the trench schedule's order
    order = pd.read_csv(iec / "trench_schedule.csv")["segment_id"].tolist()
    seg = min((k for k, v in widths.items() if v[2] == w), key=order.index)
    n, s = widths[seg][:2]
    text = (iec / "report.html").read_text(encoding="utf-8")
    m = re.search(r"Widest layer: segment ([^,]+), ([\d,]+) cable sets ([\d.]+) m apart, "
                  r"at least ([\d.]+) m across", text)  # fmt: skip
    assert m, "no widest layer in the report"
    assert m.group(1) == seg
    assert int(m.group(2).replace(",", "")) == n
    assert float(m.group(3)) == pytest.approx(s, abs=0.005)
    assert float(m.group(4)) == pytest.approx(w, abs=0.005)


def test_no_widest_layer_under_nec_where_spacing_is_not_represented(tmp_path):
    # NEC 2023 310.15(C)(1) adjusts for the conductors of a bundle, not for their spacing
    out = _plan("demo_site_us", tmp_path / "out")
    assert "Widest layer" not in (out / "report.html").read_text(encoding="utf-8")
    assert "spread_m" in pd.read_csv(out / "trench_schedule.csv").columns
