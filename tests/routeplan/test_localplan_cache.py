"""``routeplan plan`` into the same output folder after a pad or combiner move: the last run's
plan, kept in the folder's cache, is re-planned locally (:func:`routeplan.localplan.from_cache`)
and every output equals a cold plan of the edited site; so is a trench edit.

The sites are invented scenarios (:func:`routeplan.synth.generate_site`). The reference is a
cold plan of the same edited files, without a cache: the output CSV files and summary.json are
compared byte for byte, the plan's tables, routes and sizing value for value (remedies
included: one plant restricts its size lists and parallel sets so that circuits fail and carry
a remedy). Edits a local re-plan does not cover, and a cache it cannot trust, plan as before.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pyogrio
import pytest
import shapely
import shapely.geometry

from routeplan import routing
from routeplan.cache import CACHE_DIR, PlanCache
from routeplan.localplan import last_baseline
from routeplan.outputs.write import CSV_FILES, write_plan
from routeplan.pipeline import plan
from routeplan.synth import generate_site
from tests.routeplan.test_localplan import assert_same_plan

#: invented design settings that make array and a.c. cables fail (two sizes, one set each):
#: failing circuits get a remedy, which the local re-plan must give as a cold plan does
FAILING = """
[design.sizes_mm2]
array = [16, 25]
ac = [95, 120]
"""

COMPARED = (*CSV_FILES, "summary.json")


def _make(root: Path, mw: float, seed: int, failing: bool = False, nec: bool = False) -> Path:
    generate_site(mw, seed, root)
    toml = root / "site.toml"
    text = toml.read_text()
    if failing:
        text = text.replace("max_parallel = 12", "max_parallel = 1", 1) + FAILING
    if nec:  # the NEC rule set's own size lists, insulations and air arrangements
        text = text.replace('rules = "iec"', 'rules = "nec"')
        text = re.sub(r"\n\[design\.air_arrangement\].*?\n\n", "\n\n", text, flags=re.S)
    toml.write_text(text)
    return root


def _move(site: Path, layer: str, row: int, dx: float, dy: float) -> None:
    frame = pyogrio.read_dataframe(site / "site.gpkg", layer=layer)
    geoms = frame.geometry.to_numpy().copy()
    geoms[row] = shapely.affinity.translate(geoms[row], xoff=dx, yoff=dy)
    frame = frame.set_geometry(geoms, crs=frame.crs)
    pyogrio.write_dataframe(frame, site / "site.gpkg", layer=layer, driver="GPKG")


def _replan(site: Path, out: Path):
    p = plan(site, cache=PlanCache(out))
    write_plan(p, out)
    return p


def _same_as_cold(p, site: Path, out: Path, tmp: Path) -> None:
    cold_dir = tmp / "cold"
    shutil.rmtree(cold_dir, ignore_errors=True)
    cold = plan(site)
    write_plan(cold, cold_dir)
    for name in COMPARED:
        assert (out / name).read_bytes() == (cold_dir / name).read_bytes(), name
    assert_same_plan(p, cold)
    assert list(p.circuits["remedy"]) == list(cold.circuits["remedy"])


@pytest.fixture(scope="module")
def failing_site(tmp_path_factory):
    src = _make(tmp_path_factory.mktemp("failing") / "site", 8, 5, failing=True)
    return src


def test_failing_site_has_remedies(failing_site, tmp_path):
    p = plan(failing_site)
    assert (p.circuits["status"] != "ok").sum() > 0
    assert (p.circuits["remedy"] != "").sum() > 0


@pytest.mark.parametrize(
    ("case", "moves"),
    [
        ("pad", [("inverters", 0, 0.0, 6.0)]),
        ("combiner", [("combiners", 1, -4.0, 3.0)]),
        ("both", [("inverters", 1, 5.0, 0.0), ("combiners", 0, 0.0, -5.0)]),
        # a trench redrawn (moved as a whole), alone or with a pad move
        ("trench moved", [("trenches", 0, 0.5, 0.0)]),
        ("trench and pad", [("trenches", 3, 0.0, -1.0), ("inverters", 0, 0.0, 6.0)]),
    ],
)
def test_a_move_replans_locally_and_equals_a_cold_plan(failing_site, tmp_path, case, moves):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    for layer, row, dx, dy in moves:
        _move(site, layer, row, dx, dy)
    p = _replan(site, out)
    assert p.cache.reused.get("local") is True
    assert p.timings_s["local"] == 1.0
    # the remedies' what-if sizings re-sized from the last run's (a what-if the last run did
    # not make, e.g. a spacing for trenches whose circuits passed then, is sized whole)
    assert p.timings_s["local.whatifs"] >= 1
    _same_as_cold(p, site, out, tmp_path)


def test_the_baseline_rebuilt_from_the_cache_keeps_the_last_schedule_order(failing_site, tmp_path):
    # the local re-plan's cable schedule takes its row order from the baseline, which the
    # cache rebuilds without the last plan's tables: that order must be the schedule's (block,
    # combiner, kind, row, string number; routeplan.order) as the last plan sorted it
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    last = _replan(site, out)
    base = last_baseline(PlanCache(out), last.design)
    assert base.plan.circuits is None  # no table read back
    ids = base.plan.routes.circuits["circuit_id"].to_numpy(dtype=object)[base.order]
    assert ids.tolist() == last.circuits["circuit_id"].tolist()


def test_chained_moves_and_an_unchanged_run_reuse_what_the_local_replan_kept(
    failing_site, tmp_path
):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    _move(site, "inverters", 0, 0.0, 5.0)
    assert _replan(site, out).cache.reused.get("local") is True
    _move(site, "inverters", 0, 3.0, 0.0)  # a second move: the baseline is the local re-plan
    p = _replan(site, out)
    assert p.cache.reused.get("local") is True
    _same_as_cold(p, site, out, tmp_path)
    again = _replan(site, out)  # nothing changed: the entries the local re-plan kept
    assert again.cache.reused == {"site": True, "route": True, "size": True, "remedy": True,
                                  "outputs": True}  # fmt: skip
    _same_as_cold(again, site, out, tmp_path)


def test_nec_plant_move(tmp_path):
    site, out = _make(tmp_path / "site", 4, 3, nec=True), tmp_path / "out"
    _replan(site, out)
    _move(site, "inverters", 0, -4.0, 4.0)
    p = _replan(site, out)
    assert p.cache.reused.get("local") is True
    _same_as_cold(p, site, out, tmp_path)


def _with_setting(site: Path, old: str, new: str) -> None:
    toml = site / "site.toml"
    text = toml.read_text()
    assert old in text
    toml.write_text(text.replace(old, new, 1))


def _set(site: Path, layer: str, row: int, column: str, value) -> None:
    frame = pyogrio.read_dataframe(site / "site.gpkg", layer=layer)
    frame.loc[frame.index[row], column] = value
    pyogrio.write_dataframe(frame, site / "site.gpkg", layer=layer, driver="GPKG")


@pytest.mark.parametrize(
    ("case", "layer", "row", "column", "value"),
    [
        ("a row's strings", "rows", 2, "strings", 1),
        ("an inverter's rating", "inverters", 0, "ac_kva", 4000.0),
    ],
)
def test_other_site_edits_are_sized_locally_from_the_cache(
    failing_site, tmp_path, case, layer, row, column, value
):
    """A row's strings changed (circuits removed), an inverter's rating changed: routed in
    full, only the blocks whose sizing input changed sized again — remedies included, each
    what-if re-sized from the last run's — and every output equals a cold plan's."""
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    first = _replan(site, out)
    _set(site, layer, row, column, value)
    p = _replan(site, out)
    assert p.cache.reused.get("local") is True
    assert p.timings_s["local"] == 0.75
    assert p.timings_s["local.circuits"] < len(first.circuits)
    assert p.timings_s["local.whatifs"] >= 1
    if column == "strings":
        assert len(p.circuits) < len(first.circuits)
    _same_as_cold(p, site, out, tmp_path)


def _networks_built(monkeypatch) -> list[int]:
    """Count the trench networks routing builds from here on (one entry per build)."""
    built: list[int] = []
    build = routing.site_network

    def counted(*args, **kwargs):
        built.append(1)
        return build(*args, **kwargs)

    monkeypatch.setattr(routing, "site_network", counted)
    return built


def test_a_row_edit_keeps_the_network_and_its_noding_for_the_next_move(
    failing_site, tmp_path, monkeypatch
):
    """A row's strings changed: the trenches and equipment are the last run's, so the re-plan
    routes on the last run's network (none built) and keeps its noding; the next pad move
    then re-plans locally on that noding, equal to a cold plan."""
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    _set(site, "rows", 4, "strings", 1)
    built = _networks_built(monkeypatch)
    p = _replan(site, out)
    assert p.timings_s["local"] == 0.75
    assert not built
    _same_as_cold(p, site, out, tmp_path)
    _move(site, "inverters", 0, 0.0, 5.0)
    moved = _replan(site, out)
    assert moved.timings_s["local"] == 1.0
    assert moved.cache.reused["noding"] is True
    _same_as_cold(moved, site, out, tmp_path)


def test_a_row_edit_with_a_move_builds_the_network_again(failing_site, tmp_path, monkeypatch):
    """A row's strings changed and a pad moved: not a move alone, so routed in full and sized
    locally — on a network built again for the moved pad (the last one would route its
    circuits from where it stood), equal to a cold plan."""
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    _set(site, "rows", 4, "strings", 1)
    _move(site, "inverters", 0, 0.0, 6.0)
    built = _networks_built(monkeypatch)
    p = _replan(site, out)
    assert p.timings_s["local"] == 0.75
    assert built
    _same_as_cold(p, site, out, tmp_path)


@pytest.mark.parametrize("edit", ["drop limit", "routing allowance", "nothing"])
def test_other_edits_with_a_move_plan_in_full(failing_site, tmp_path, edit):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    if edit != "nothing":
        _move(site, "inverters", 0, 0.0, 6.0)
    if edit == "drop limit":  # a sizing setting: every circuit sized again
        _with_setting(site, "dc_total = 2.0\nac = 1.0", "dc_total = 2.0\nac = 0.9")
    elif edit == "routing allowance":  # a setting that routes
        _with_setting(site, "termination_m = 1.5", "termination_m = 2.25")
    p = _replan(site, out)
    assert not p.cache.reused.get("local")
    _same_as_cold(p, site, out, tmp_path)


@pytest.mark.parametrize("entry", ["route", "size", "site", "noding"])
def test_a_damaged_or_missing_entry_plans_without_it(failing_site, tmp_path, entry):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    _move(site, "combiners", 0, 2.0, 2.0)
    (found,) = (out / CACHE_DIR).glob(f"{entry}-*.npz")
    found.write_bytes(found.read_bytes()[:-40] + b"\0" * 40)  # damaged: its SHA-256 differs
    p = _replan(site, out)
    assert bool(p.cache.reused.get("local")) is (entry == "noding")  # the memo only saves time
    _same_as_cold(p, site, out, tmp_path)


def test_a_move_off_the_network_is_refused_as_a_cold_plan_refuses_it(failing_site, tmp_path):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(failing_site, site)
    _replan(site, out)
    _move(site, "inverters", 0, 3000.0, 0.0)  # far beyond snap_m of every trench
    _, message = _refused_alike(site, out)
    assert "INV001" in message and "snap_m" in message


def _refused_alike(site: Path, out: Path) -> tuple[str, str]:
    """The error a plan of ``site`` raises with the folder's cache, which must be the one a
    plan without it raises: its class name and message."""
    messages = []
    for cache in (PlanCache(out), None):
        with pytest.raises(Exception) as caught:
            plan(site, cache=cache)
        messages.append((type(caught.value).__name__, str(caught.value)))
    assert messages[0] == messages[1]
    return messages[0]


# -- destinations chosen by route length (the US demo: row B2-T5 has no ``to``) --------------

US_DEMO = Path(__file__).resolve().parents[2] / "demo_site_us"


def _move_json(site: Path, layer_file: str, fid: str, dx: float, dy: float) -> None:
    """Move feature ``fid`` of a GeoJSON layer by (dx, dy) in the layer's CRS units."""
    path = site / layer_file
    data = json.loads(path.read_text(encoding="utf-8"))
    (feature,) = [f for f in data["features"] if f["properties"]["id"] == fid]
    geom = shapely.geometry.shape(feature["geometry"])
    feature["geometry"] = shapely.geometry.mapping(shapely.affinity.translate(geom, dx, dy))
    path.write_text(json.dumps(data), encoding="utf-8")


def test_a_trench_edit_that_splits_the_network_is_refused_as_a_cold_plan_refuses_it(tmp_path):
    """Block B's duct trench moved 1 ft east leaves its ends off the network: combiners can no
    longer reach their inverter. The re-plan from the cache refuses it with the cold plan's
    words (the local re-plan leaves it to the full plan, which names the circuits)."""
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(US_DEMO, site)
    _replan(site, out)
    _move_json(site, "trenches.geojson", "T-B-DUCT", 1.0, 0.0)
    name, message = _refused_alike(site, out)
    assert name == "UnreachableError" and "CB-B1" in message


@pytest.mark.parametrize(
    ("layer_file", "fid", "dx", "dy", "path"),
    [
        # the pad of block A: B2-T5 keeps CB-B2, the nearest
        ("inverters.geojson", "INV-A", 0.0, 10.0, 1.0),
        # CB-B2 40 ft along its trench: B2-T5 keeps it, by a longer route (the assignment's
        # route length changes, and the summary says so)
        ("combiners.geojson", "CB-B2", 40.0, 0.0, 1.0),
        # CB-B2 250 ft along: B2-T5 keeps it only as the nearest with room — the rule that
        # chose it changed: routed in full, and sized locally
        ("combiners.geojson", "CB-B2", 250.0, 0.0, 0.75),
        # block B's ring trench redrawn 2 ft north: every route searched again, B2-T5 keeps
        # CB-B2 (re-planned locally)
        ("trenches.geojson", "T-B-RING", 0.0, 2.0, 1.0),
    ],
)
def test_a_move_with_destinations_chosen_by_route(tmp_path, layer_file, fid, dx, dy, path):
    site, out = tmp_path / "site", tmp_path / "out"
    shutil.copytree(US_DEMO, site)
    before = _replan(site, out).summary["assigned"]
    assert [a["id"] for a in before] == ["B2-T5"]
    _move_json(site, layer_file, fid, dx, dy)
    p = _replan(site, out)
    assert p.cache.reused.get("local") is True
    assert p.timings_s["local"] == path
    _same_as_cold(p, site, out, tmp_path)
    if fid == "CB-B2":
        assert p.summary["assigned"][0]["route_m"] > before[0]["route_m"]
