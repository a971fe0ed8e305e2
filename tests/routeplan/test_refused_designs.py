"""Designs that `plan` cannot carry out are refused by `routeplan check` as well, each in one
line naming the key or the feature (exit 2, nothing written): settings a cable cannot have,
pairs of settings that only make sense together, a drop budget that leaves nothing, and a
trench too shallow to bury what it carries. And `diff` reads a trench schedule written before
sub-array cables existed.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from routeplan.cli import app
from tests.conftest import SITE_TOML, base_frames, write_site

from .test_settings_strict import in_design, run_check

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize(
    ("toml", "line"),
    [
        pytest.param(
            in_design('insulation = { array = "PV" }'),
            "error: site.toml 'design.insulation.array': PV cable (EN 50618 / IEC 62930) is "
            "rated here for string circuits only: set 'XLPE' or 'PVC'",
            id="pv-insulation-on-an-array-cable",
        ),
        pytest.param(
            in_design('material = { string = "Al" }'),
            "error: site.toml 'design.material.string': string circuits use PV cable, whose "
            "tabulated ratings are for copper conductors: set 'Cu'",
            id="aluminium-strings",
        ),
        pytest.param(
            in_design("fault_ka = 25.0"),
            "error: site.toml 'design.clear_s': missing: the AC short-circuit check needs both "
            "fault_ka and clear_s (fault_ka is set)",
            id="fault-without-clearing-time",
        ),
        pytest.param(
            in_design("clear_s = 0.2"),
            "error: site.toml 'design.fault_ka': missing: the AC short-circuit check needs both "
            "fault_ka and clear_s (clear_s is set)",
            id="clearing-time-without-fault",
        ),
        pytest.param(
            in_design("drop_pct = { string = 2.0, dc_total = 2.0 }"),
            "error: site.toml 'design.drop_pct.string': 2 % leaves nothing of dc_total 2 % for "
            "the sub-array and array cables: set it below dc_total",
            id="string-drop-equal-to-the-total",
        ),
        pytest.param(
            # IEC 60287-1-1's skin and proximity formulas are for power frequencies (50/60 Hz)
            in_design("frequency_hz = 400"),
            "error: site.toml 'design.frequency_hz': 400 is outside 50–60",
            id="frequency-beyond-power-grids",
        ),
        pytest.param(
            # 0 Hz is no a.c. grid: it took the reactance and skin effect away (lower drops)
            in_design("frequency_hz = 0"),
            "error: site.toml 'design.frequency_hz': 0 is outside 50–60",
            id="frequency-zero",
        ),
    ],
)
def test_settings_plan_cannot_apply_are_refused_by_check(tmp_path, toml, line):
    code, errors = run_check(write_site(tmp_path / "s", toml=toml))
    assert code == 2
    assert errors == [line]


def test_a_trench_too_shallow_for_its_cable_is_named(tmp_path):
    # a direct-buried circuit must lie deeper than half its outer diameter, or it is not buried
    frames = base_frames()
    frames["trenches"]["depth_m"] = [0.01, None]
    root = write_site(tmp_path / "s", frames)
    code, errors = run_check(root)
    assert code == 2
    # 0.04 m: the design's default outer diameter of a buried circuit (common practice)
    assert errors == [
        "error: trenches 'T1': depth_m 0.01 m does not exceed half the direct-buried cable's "
        "outer diameter (0.04 m): the cable would not be buried"
    ]
    result = runner.invoke(app, ["plan", str(root), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2 and errors[0] in result.stderr.splitlines()
    assert not (tmp_path / "out").exists()


def test_a_combiner_no_string_reaches_is_named(tmp_path):
    # the demo's west combiner CB-W2 with its rows deleted (a phase not built yet): its array
    # cable would carry nothing; it was refused as a fault of site.toml's design settings
    import json

    site = tmp_path / "demo"
    shutil.copytree(ROOT / "demo_site", site)
    path = site / "rows.geojson"
    rows = json.loads(path.read_text(encoding="utf-8"))
    rows["features"] = [
        f for f in rows["features"] if not str(f["properties"]["id"]).startswith("W2-")
    ]
    path.write_text(json.dumps(rows), encoding="utf-8")
    line = (
        "error: combiners 'CB-W2': no strings reach it (no row or combiner names it in `to`, "
        "and every row without one went to a nearer destination with room): remove it or give "
        "it rows"
    )
    code, errors = run_check(site)
    assert code == 2 and errors == [line]
    result = runner.invoke(app, ["plan", str(site), "--out", str(tmp_path / "out")])
    assert result.exit_code == 2 and line in result.stderr.splitlines()
    assert "site.toml" not in result.stderr
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize(("ac_max_a", "refused"), [(10.0, True), (577.0, True), (578.0, False)])
def test_an_inverter_maximum_current_under_half_its_rating_is_named(tmp_path, ac_max_a, refused):
    # the demo's INV-W, 1600 kVA at 800 V three-phase: I = S / (√3 · U) = 1,600,000 / (1.7321
    # × 800) = 1154.7 A (IEC 60364 / Ohm's law); half of it 577.4 A (the plausibility line,
    # common practice). A lost digit (122 for 1220) sized the AC cable for a tenth of its
    # current, marked ok.
    import json

    site = tmp_path / "demo"
    shutil.copytree(ROOT / "demo_site", site)
    path = site / "inverters.geojson"
    inverters = json.loads(path.read_text(encoding="utf-8"))
    for f in inverters["features"]:
        if f["properties"]["id"] == "INV-W":
            assert (f["properties"]["ac_kva"], f["properties"]["ac_v"]) == (1600.0, 800.0)
            f["properties"]["ac_max_a"] = ac_max_a
    path.write_text(json.dumps(inverters), encoding="utf-8")
    code, errors = run_check(site)
    if not refused:
        assert code == 0, errors
        return
    assert code == 2
    assert errors == [
        f"error: inverters 'INV-W': ac_max_a {ac_max_a:g} A is less than half the current of "
        "its rating, 1155 A (ac_kva / (√3 × ac_v)): the AC cable is sized for ac_max_a; check "
        "the datasheet"
    ]


def test_diff_refuses_a_trench_schedule_without_sub_array_counts(tmp_path):
    """A schedule written before sub-array cables existed has no `subarrays` column. It was
    read as 0 sub-array cables on every segment; an earlier version's folder is refused now
    (its segments were numbered, not placed along their trench), one line naming the file
    and what to do, on either side of the comparison."""
    root = write_site(tmp_path / "s", toml=SITE_TOML)
    new = tmp_path / "new"
    result = runner.invoke(app, ["plan", str(root), "--out", str(new), "--quiet"])
    assert result.exit_code == 0, result.output
    old = tmp_path / "old"
    shutil.copytree(new, old)
    path = old / "trench_schedule.csv"
    with open(path, encoding="utf-8", newline="") as fh:
        rows = list(csv.reader(fh))
    col = rows[0].index("subarrays")
    with open(path, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh, lineterminator="\n").writerows([r[:col] + r[col + 1 :] for r in rows])
    for args in ([str(old), str(new)], [str(new), str(old)]):
        result = runner.invoke(app, ["diff", *args, "--out", str(tmp_path / "d")])
        assert result.exit_code == 2 and result.stdout == ""
        assert result.stderr == (
            f"error: {path}: no column subarrays: made by an earlier routeplan, which numbered "
            "trench segments and compared fewer values: plan that site again with this version "
            "to compare\n"
        )
        assert not (tmp_path / "d" / "diff.csv").exists()
    # a column every version wrote, renamed: the plain message
    rows[0][rows[0].index("strings")] = "strands"
    with open(path, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh, lineterminator="\n").writerows(rows)
    result = runner.invoke(app, ["diff", str(old), str(new)])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        f"error: {path}: no column strings (a schedule of 'routeplan plan' has it)"
    ]


def test_a_refused_run_stops_its_packing_children_before_it_cleans_up(tmp_path, monkeypatch):
    """The cache packs its entries in child processes while the plan goes on. A refused run
    (a trench too shallow) closes the output folder it created and removes it; a child still
    writing its file meanwhile kept the folder from being removed — seen once under load in
    CI. Here the child is slowed down so that it writes after the run has ended (it sleeps
    1.5 s, then makes its folder again and writes its entry): the run stops its children
    first, so 2 s after it ended the folder is still gone."""
    import time

    import routeplan.cache as cache_module

    dump = cache_module._dump_entry

    def slow(value, path):
        time.sleep(1.5)
        path.parent.mkdir(parents=True, exist_ok=True)
        dump(value, path)

    monkeypatch.setattr(cache_module, "_dump_entry", slow)
    frames = base_frames()
    frames["trenches"]["depth_m"] = [0.01, None]
    root = write_site(tmp_path / "s", frames)
    out = tmp_path / "out"
    result = runner.invoke(app, ["plan", str(root), "--out", str(out)])
    assert result.exit_code == 2, result.output
    time.sleep(2.0)
    assert not out.exists()
