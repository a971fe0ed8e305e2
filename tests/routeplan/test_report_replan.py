"""The report's charts drawn again: a user's matplotlib settings never change them."""

from __future__ import annotations

from pathlib import Path

import matplotlib
import pytest

from routeplan.pipeline import plan
from routeplan.report.plots import plan_plots

DEMO = Path(__file__).resolve().parents[2] / "demo_site"


@pytest.fixture(scope="module")
def demo():
    return plan(DEMO)


def test_a_users_matplotlib_settings_do_not_change_the_charts(demo):
    p = demo
    plain = plan_plots(p.circuits, p.segments, p.design)
    mine = {"font.family": "serif", "axes.facecolor": "#ff0000", "patch.linewidth": 3.0,
            "axes.formatter.use_locale": True, "xtick.direction": "in"}  # fmt: skip
    with matplotlib.rc_context(mine):
        styled = plan_plots(p.circuits, p.segments, p.design)
    assert styled.html == plain.html
