"""The report written again: a chart drawn from the same numbers as one of the last run's is
taken from the plan cache's memo (routeplan.report.plots.ChartMemo) with the bytes a drawing
gives, any changed number draws it again, and report.html after a pad move is byte for byte the
one a cold run of the edited site writes (the re-plan-equals-cold rule of DEVELOPERS.md)."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import matplotlib
import pytest

from routeplan.cache import CACHE_DIR, MANIFEST, dumps, loads
from routeplan.outputs.write import write_plan
from routeplan.pipeline import plan
from routeplan.report import plots
from routeplan.report.plots import ChartMemo, chart_digest, plan_plots

from .test_cache import move_gpkg_pad, run

DEMO = Path(__file__).resolve().parents[2] / "demo_site"
KEYS = ["utilisation", "vdrop", "conductor_m", "trench_fill", "losses"]


@pytest.fixture(scope="module")
def demo():
    return plan(DEMO)


def _counting(monkeypatch) -> list[str]:
    """The keys of the charts drawn from now on (drawn as usual)."""
    drawn: list[str] = []
    draw = plots._draw

    def counted(chart):
        drawn.append(chart.key)
        return draw(chart)

    monkeypatch.setattr(plots, "_draw", counted)
    return drawn


def test_a_memo_gives_the_drawn_bytes_without_drawing(demo, monkeypatch):
    p = demo
    first = ChartMemo()
    cold = plan_plots(p.circuits, p.segments, p.design, first)
    assert (first.drawn, first.reused) == (5, 0)
    memo = ChartMemo.load(loads(dumps(first.export())))  # as the plan cache stores it
    drawn = _counting(monkeypatch)
    again = plan_plots(p.circuits, p.segments, p.design, memo)
    assert drawn == []
    assert (memo.drawn, memo.reused) == (0, 5)
    assert again.html == cold.html
    assert memo.export() == first.export()  # kept for the run after


def test_a_chart_is_drawn_again_when_a_number_it_shows_changes(demo, monkeypatch):
    p = demo
    first = ChartMemo()
    plan_plots(p.circuits, p.segments, p.design, first)
    circuits = p.circuits.copy()
    i = int((circuits["utilisation"] < 1.1).to_numpy().argmax())
    # one more metre of one cable: one conductor_m bar changes (its loss_w is left as it is)
    circuits.loc[i, "cable_m"] += 1.0
    # a utilisation moved from below 1.1 into the bin [1.15, 1.2): one histogram count
    circuits.loc[i, "utilisation"] = 1.17
    memo = ChartMemo.load(first.export())
    drawn = _counting(monkeypatch)
    edited = plan_plots(circuits, p.segments, p.design, memo)
    assert sorted(drawn) == ["conductor_m", "utilisation"]
    assert memo.reused == 3
    cold = plan_plots(circuits, p.segments, p.design)  # no memo: every chart drawn
    assert edited.html == cold.html


def test_the_digest_holds_every_input_of_the_drawing(demo, monkeypatch):
    p = demo
    charts = {c.key: c for c in plan_plots(p.circuits, p.segments, p.design).charts}
    digests = {k: chart_digest(c) for k, c in charts.items()}
    assert len(set(digests.values())) == 5
    bars = charts["losses"]
    label = next(iter(bars.bars))
    nudged = dict(bars.bars, **{label: bars.bars[label] * (1 + 1e-15)})
    assert chart_digest(plots.Chart(**{**vars(bars), "bars": nudged})) != digests["losses"]
    relabelled = plots.Chart(**{**vars(bars), "xlabel": "MW"})
    assert chart_digest(relabelled) != digests["losses"]
    retitled = plots.Chart(**{**vars(bars), "title": "another title", "note": "a note"})
    assert chart_digest(retitled) == digests["losses"]  # title and note are the page's
    monkeypatch.setattr(plots, "_matplotlib_version", lambda: "0.0")
    assert chart_digest(bars) != digests["losses"]


def test_a_users_matplotlib_settings_do_not_change_the_charts(demo):
    p = demo
    plain = plan_plots(p.circuits, p.segments, p.design)
    mine = {"font.family": "serif", "axes.facecolor": "#ff0000", "patch.linewidth": 3.0,
            "axes.formatter.use_locale": True, "xtick.direction": "in"}  # fmt: skip
    with matplotlib.rc_context(mine):
        styled = plan_plots(p.circuits, p.segments, p.design)
    assert styled.html == plain.html


def test_a_pad_moves_report_equals_a_cold_runs(gen, tmp_path):
    out, cold = tmp_path / "out", tmp_path / "cold"
    run(gen, out)
    manifest = json.loads((out / CACHE_DIR / MANIFEST).read_text(encoding="utf-8"))
    assert "report" in manifest["outputs"]["aux"]
    move_gpkg_pad(gen)
    run(gen, out)
    run(gen, cold, cache=False)
    assert (out / "report.html").read_bytes() == (cold / "report.html").read_bytes()


def test_a_report_written_again_from_unchanged_data_draws_no_chart(gen, tmp_path, monkeypatch):
    out, other = tmp_path / "out", tmp_path / "other"
    run(gen, out)
    shutil.copytree(out, other)
    monkeypatch.setenv("ROUTEPLAN_SERIAL", "1")  # the report written in this process
    drawn = _counting(monkeypatch)
    # other map options: the outputs are written anew, the report's data are the same
    p = run_with_map_options(gen, out)
    assert drawn == []
    assert p.cache.reused["outputs"] is False
    assert (out / "report.html").read_bytes() == (other / "report.html").read_bytes()


def run_with_map_options(site: Path, out: Path):
    from routeplan.cache import PlanCache

    p = plan(site, cache=PlanCache(out))
    write_plan(p, out, map_options={"aggregate_strings_above": 1})
    return p
