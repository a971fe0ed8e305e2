"""``examples/place_distributed.py``: the candidates of ``routeplan place`` evaluated on a Dask
``LocalCluster`` (two workers, threads of this process) rank as ``place`` ranks them, for one
feature and for a portfolio of two (an inverter and a combiner of one site), with the site read
at most once per worker and every candidate but the current position evaluated by a local
re-plan of the worker's baseline (:class:`routeplan.localplan.MoveSearch`), not a full plan.

The site is the straight-trench site of ``test_placement`` with a second block, so that one
candidate is infeasible and the ranking's two keys (feasible first, then objective) both
matter. ``dask[distributed]`` is in the test extra: without it this test skips locally and
fails under ``CI=true``.
"""

from __future__ import annotations

import importlib.util
import os
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from routeplan.check import load
from routeplan.placement import search

from .test_placement import straight_site

EXAMPLE = Path(__file__).resolve().parents[2] / "examples" / "place_distributed.py"


def _example():
    try:
        import distributed  # noqa: F401
    except ImportError:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("dask[distributed] is not installed (the test extra has it)", pytrace=False)
        pytest.skip("dask[distributed] is not installed")
    spec = importlib.util.spec_from_file_location("place_distributed", EXAMPLE)
    module = importlib.util.module_from_spec(spec)
    sys.modules["place_distributed"] = module  # tasks are pickled by reference to it
    spec.loader.exec_module(module)
    return module


def _assert_same(got: pd.DataFrame, want: pd.DataFrame) -> None:
    """The same candidates, in the same order, with the same figures."""
    assert len(got) == len(want)
    assert got["rank"].tolist() == want["rank"].tolist()
    assert got["candidate"].tolist() == want["candidate"].tolist()
    assert got["feasible"].tolist() == want["feasible"].tolist()
    for col in ("x", "y", "moved_m", "objective", "delta_objective", "energy_loss_kwh",
                "worst_utilisation", "worst_vdrop_total_pct"):  # fmt: skip
        np.testing.assert_allclose(got[col].to_numpy(float), want[col].to_numpy(float),
                                   rtol=1e-12, err_msg=col)  # fmt: skip
    ints = ["failing_in_block", "new_failures", "failing_circuits", "segments_over"]
    pd.testing.assert_frame_equal(got[ints], want[ints])
    assert got["note"].tolist() == want["note"].tolist()


def test_the_distributed_ranking_equals_place(tmp_path):
    ex = _example()
    from distributed import Client, LocalCluster

    site_dir = straight_site(tmp_path / "s", second_block=True)
    site, design = load(site_dir)
    want_inv, _ = search(site, design, "inverter", "INV1", radius_m=80.0, step_m=20.0)
    want_cmb, _ = search(site, design, "combiner", "C2", radius_m=20.0, step_m=10.0)
    assert (~want_inv["feasible"]).any() and want_inv["feasible"].any()
    with (
        LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                     dashboard_address=None) as cluster,
        Client(cluster) as client,
    ):  # fmt: skip
        got = ex.distributed_search(client, site_dir, "inverter", "INV1", 80.0, 20.0, batch=3)
        # a portfolio: two features of the site at once, the plants kept from the first call
        both = ex.portfolio_search(
            client,
            [(site_dir, "inverter", "INV1", 80.0, 20.0), (site_dir, "combiner", "C2", 20.0, 10.0)],
            batch=2,
        )
        loads = client.run(lambda dask_worker: dask_worker.plugins[ex.PLUGIN].loads)
        local = client.run(lambda dask_worker: dask_worker.plugins[ex.PLUGIN].local_replans())
    assert len(got) == 8 and len(both) == 2
    _assert_same(got, want_inv)
    inv, cmb = both.values()
    _assert_same(inv, want_inv)
    _assert_same(cmb, want_cmb)
    # each worker read the site at most once, for both calls and both features
    assert 1 <= sum(loads.values()) <= 2 and max(loads.values()) == 1
    # every routable candidate but the current position was a local re-plan of the worker's
    # baseline (none fell back to a full plan): the inverter's twice, the combiner's once
    routable = [(t["candidate"] > 0) & t["objective"].notna() for t in (want_inv, want_cmb)]
    assert routable[0].sum() > 0 and routable[1].sum() > 0
    assert sum(local.values()) == 2 * routable[0].sum() + routable[1].sum()
