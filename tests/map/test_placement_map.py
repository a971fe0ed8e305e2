"""``placement.html`` without a browser: its colour scale against matplotlib's viridis (the
reference library), the reasons given for infeasible candidates, and the file's place among
routeplan's files in the output folder (DEVELOPERS.md, "Files the user owns")."""

from __future__ import annotations

import csv
import json

import numpy as np
import pyproj
import pytest
from matplotlib import colormaps
from typer.testing import CliRunner

from routeplan.cli import app
from routeplan.folder import MANIFEST
from routeplan.map.placement import objective_colours, reasons
from routeplan.map.scales import OBJECTIVE, _hex_to_rgb

from ..routeplan.test_placement import straight_site

runner = CliRunner()


def _rgb255(colours) -> np.ndarray:
    return np.array([_hex_to_rgb(c) for c in colours], dtype=float)


def test_the_objective_scale_is_viridis_reversed():
    # reference: matplotlib's "viridis" (256-entry table; van der Walt & Smith, SciPy 2015)
    viridis = colormaps["viridis"]
    t = np.linspace(0.0, 1.0, 1001)
    ours = _rgb255(OBJECTIVE.colours(t))
    ref = np.rint(viridis(1.0 - t)[:, :3] * 255)
    # 4/255 per channel: our scale interpolates linearly between 20 samples of the table
    # (viridis bends between them); at the samples themselves the two agree within 2/255
    np.testing.assert_allclose(ours, ref, atol=4.0)
    at = np.arange(20) / 19
    np.testing.assert_allclose(
        _rgb255(OBJECTIVE.colours(at)), np.rint(viridis(1.0 - at)[:, :3] * 255), atol=2.0
    )
    # darker is more: lightness (Rec. 709 luma) falls along the scale, from yellow to purple,
    # monotonically but for the rounding of the channels to 8 bits
    luma = ours @ np.array([0.2126, 0.7152, 0.0722])
    assert np.all(np.diff(luma) <= 1.0) and luma[0] - luma[-1] > 150


def test_objective_colours_span_the_feasible_candidates_only():
    objective = np.array([100.0, 140.0, 120.0, 10.0, np.nan])
    feasible = np.array([True, True, True, False, False])
    colours, lo, hi = objective_colours(objective, feasible)
    viridis = colormaps["viridis"]
    assert (lo, hi) == (100.0, 140.0)  # the infeasible 10 kg does not stretch the scale
    np.testing.assert_allclose(
        _rgb255(colours[:3]), np.rint(viridis([1.0, 0.0, 0.5])[:, :3] * 255), atol=4.0
    )
    assert colours[3] == colours[4] == "#9e9e9e"
    # one feasible value: the light end; none: no range
    assert objective_colours(np.array([5.0]), np.array([True]))[0] == ["#fde725"]
    _, lo, hi = objective_colours(np.array([5.0]), np.array([False]))
    assert np.isnan(lo) and np.isnan(hi)


HEADER = ["candidate", "feasible", "failing_in_block", "new_failures", "segments_over",
          "inputs_over", "note"]  # fmt: skip


@pytest.mark.parametrize(
    ("row", "want"),
    [
        (["3", "True", "0", "0", "2", "0", ""], ""),
        (["3", "False", "1", "0", "2", "0", ""], "1 circuit of block B fails"),
        (
            ["3", "False", "0", "1", "2", "3", ""],
            "1 circuit fails that passes at the current position; "
            "3 inverter inputs over a limit (current position: 1)",
        ),
        # as many segments over as at the current position: not a reason
        (["3", "False", "0", "0", "2", "1", "x"], "x"),
        (["3", "False", "0", "0", "2", "1", ""], "does not meet every limit"),
    ],
)
def test_reasons_name_what_fails_against_the_current_position(row, want):
    current = ["0", "True", "0", "0", "2", "1", "current position"]
    assert reasons(HEADER, [current, row], "B") == ["", want]


def test_placement_html_is_routeplans_file_and_a_users_file_of_that_name_is_kept(tmp_path):
    site = straight_site(tmp_path / "s")
    out = tmp_path / "out"
    args = ["place", str(site), "--inverter", "INV1", "--radius", "20", "--step", "20"]
    r = runner.invoke(app, [*args, "--out", str(out)])
    assert r.exit_code == 0, r.output
    assert "placement.html" in r.output
    manifest = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
    assert {"placement.csv", "placement.gpkg", "placement.html"} <= set(manifest["files"])
    # a plan into the same folder removes routeplan's placement files …
    r = runner.invoke(app, ["plan", str(site), "--out", str(out)])
    assert r.exit_code == 0, r.output
    assert not (out / "placement.html").exists()
    # … and a user's file of that name is refused before any planning, and kept
    (out / "placement.html").write_text("my notes", encoding="utf-8")
    r = runner.invoke(app, [*args, "--out", str(out)])
    assert r.exit_code == 2
    assert "'placement.html' is there but was not written by routeplan" in " ".join(
        r.output.split()
    )
    assert (out / "placement.html").read_text(encoding="utf-8") == "my notes"


def _page_data(html: str) -> dict:
    start = html.index('<script type="application/json" id="rp-place-data">')
    body = html[html.index(">", start) + 1 : html.index("</script>", start)]
    return json.loads(body)


@pytest.mark.parametrize(
    ("kind", "feature", "radius"), [("inverter", "INV1", 40.0), ("combiner", "C2", 20.0)]
)
def test_the_map_draws_the_block_of_the_placed_feature_and_every_candidate(
    tmp_path, kind, feature, radius
):
    from routeplan.check import load
    from routeplan.map.placement import write_placement_map
    from routeplan.placement import search, write_placement

    site, design = load(straight_site(tmp_path / "s", second_block=True))
    table, plans = search(site, design, kind, feature, radius_m=radius, step_m=20.0)
    (plan,) = plans.values()
    folder = tmp_path / "out"
    folder.mkdir()
    write_placement(table, site.crs, folder)
    assert write_placement_map(folder, site, kind, feature, plan) == ["placement.html"]
    data = _page_data((folder / "placement.html").read_text(encoding="utf-8"))
    # INV1's block: its three combiners and rows, the grid point; never INV2's (C9, R9)
    assert {q["id"] for q in data["equipment"]} == {"INV1", "C0", "C1", "C2", "G1"}
    assert [q["id"] for q in data["equipment"] if q["moved"]] == [feature]
    assert {r["id"] for r in data["rows"]} == {"R0", "R1", "R2"}
    with (folder / "placement.csv").open(encoding="utf-8", newline="") as f:
        rows = list(csv.reader(f))
    cand = data["candidates"]
    assert [cand["columns"], *cand["rows"]] == rows
    assert cand["rows"][cand["best"]][cand["col"]["rank"]] == "1"
    assert cand["rows"][cand["current"]][cand["col"]["candidate"]] == "0"
    # positions: the CSV's x, y taken to WGS 84 by pyproj (the reference library)
    to_geo = pyproj.Transformer.from_crs(site.crs, "EPSG:4326", always_xy=True)
    x = np.array([float(r[cand["col"]["x"]]) for r in cand["rows"]])
    y = np.array([float(r[cand["col"]["y"]]) for r in cand["rows"]])
    lon, lat = to_geo.transform(x, y)
    np.testing.assert_allclose(np.array(cand["ll"]), np.column_stack([lat, lon]), atol=1e-7)
