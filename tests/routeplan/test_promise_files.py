"""README promises about the files a plan writes, end to end:

- ``summary.json``'s inputs digest is the SHA-256 (``hashlib``) of site.toml and of every
  layer file and side file the layers are read from — nothing else;
- the CSV files and the workbook are byte-identical when the same site is planned in two
  separate Python processes with different ``PYTHONHASHSEED`` values (``subprocess``);
- all or nothing: a writer that fails part-way leaves the previous outputs byte for byte
  (``hashlib`` snapshots) and the folder usable, and a re-plan replaces exactly routeplan's
  files (the manifest's), equal to a plan into a new folder.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from openpyxl import load_workbook

from routeplan.cache import CACHE_DIR
from routeplan.folder import MANIFEST
from routeplan.outputs import write as write_mod
from routeplan.outputs.write import CSV_FILES, FILES
from tests.conftest import write_site

from .promise_sites import RICH_TOML, edited, plan_cli, rich_frames
from .test_folder import assert_complete, one_error_line, snapshot

ROOT = Path(__file__).resolve().parents[2]
XLSX = "cable_schedule.xlsx"


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


# -- 4. the inputs digest --------------------------------------------------------------------

#: the ESRI Shapefile Technical Description (1998): main file, index file, dBASE table;
#: GDAL adds the projection (.prj) beside them
SHAPEFILE_PARTS = {".shp", ".shx", ".dbf", ".prj"}


@pytest.mark.filterwarnings("ignore:.*(truncated|Normalized).*")
def test_the_inputs_digest_is_the_sha256_of_every_file_read(tmp_path):
    """Layers in four placements: a Shapefile in a subfolder and one beside site.toml (each
    with its side files), a GeoPackage layer under another name, GeoJSON files; files in
    the site folder that are no layer's are not inputs."""
    frames = rich_frames(polygons=False)
    site = tmp_path / "site"
    (site / "gis").mkdir(parents=True)
    frames["rows"].to_file(site / "gis" / "rows.shp", engine="pyogrio")
    frames["trenches"].to_file(site / "trenches.shp", engine="pyogrio")
    frames["inverters"].to_file(site / "equipment.gpkg", layer="pads", engine="pyogrio")
    frames["combiners"].to_file(site / "combiners.geojson", engine="pyogrio")
    frames["grid"].to_file(site / "substation.geojson", engine="pyogrio")
    toml = RICH_TOML + (
        '\n[layers]\nrows = "gis/rows.shp"\ninverters = "equipment.gpkg:pads"\n'
        'grid = "substation.geojson"\n'
    )
    (site / "site.toml").write_text(toml, encoding="utf-8")
    # not inputs: notes, a photo, an old copy of a layer under another name
    (site / "notes.txt").write_text("survey notes", encoding="utf-8")
    (site / "photos").mkdir()
    (site / "photos" / "pad.jpg").write_bytes(b"\xff\xd8\xff")
    frames["rows"].to_file(site / "rows_old.geojson", engine="pyogrio")

    out = tmp_path / "out"
    result = plan_cli(site, out, "--quiet")
    assert result.exit_code == 0, result.output

    def parts(folder: str, stem: str) -> list[str]:
        names = sorted(p.name for p in (site / folder).iterdir() if p.stem == stem)
        assert {Path(n).suffix for n in names} >= SHAPEFILE_PARTS
        return [f"{folder}/{n}".lstrip("./") for n in names]

    read = ["site.toml", "combiners.geojson", "equipment.gpkg", "substation.geojson"]
    read += parts("gis", "rows") + parts(".", "trenches")
    expected = {name: sha256(site / name) for name in read}  # hashlib, file by file
    summary = json.loads((out / "summary.json").read_text(encoding="utf-8"))
    assert summary["inputs"] == expected
    # the workbook's summary sheet carries the same digest (openpyxl)
    rows = load_workbook(out / XLSX)["summary"].iter_rows(min_row=2, values_only=True)
    assert {r[1]: r[2] for r in rows if r[0] == "Input files (SHA-256)"} == expected


# -- 5. determinism across processes ---------------------------------------------------------

#: ``routeplan`` run by a fresh interpreter from this source tree
CODE = (
    "import sys; sys.path.insert(0, sys.argv.pop(1)); "
    "from routeplan.cli import app; app(prog_name='routeplan')"
)


def plan_in_a_new_process(site: Path, out: Path, hash_seed: str) -> None:
    env = dict(os.environ, PYTHONHASHSEED=hash_seed)
    cmd = [sys.executable, "-c", CODE, str(ROOT), "plan", str(site), "--out", str(out), "-q"]
    done = subprocess.run(
        [*cmd, "--no-cache"], env=env, capture_output=True, text=True, timeout=600
    )
    assert done.returncode in (0, 1), done.stderr
    assert done.stderr == ""


@pytest.fixture(scope="module")
def synth_site(tmp_path_factory) -> Path:
    """An invented 5 MW plant (``routeplan synth``): some rows without ``to``, assigned by
    route length."""
    from routeplan.synth import generate_site

    site = tmp_path_factory.mktemp("synth") / "site"
    generate_site(5.0, 4, site)
    return site


@pytest.mark.parametrize("which", ["rich", "synth"])
def test_two_processes_with_different_hash_seeds_write_identical_files(tmp_path, synth_site, which):
    site = synth_site if which == "synth" else write_site(tmp_path / "site", rich_frames())
    if which == "rich":
        (site / "site.toml").write_text(RICH_TOML, encoding="utf-8")
    outs = []
    for seed in ("0", "4242"):  # str hashes, and so set and dict-of-set orders, differ
        outs.append(tmp_path / f"out-{seed}")
        plan_in_a_new_process(site, outs[-1], seed)
    for name in (*CSV_FILES, XLSX, "summary.json"):
        a, b = (o / name for o in outs)
        assert a.read_bytes() == b.read_bytes(), name


# -- 10. all or nothing ----------------------------------------------------------------------


class PlantedError(RuntimeError):
    """The failure planted in a writer."""


def fail_on_call(n: int, real):
    """A stand-in for ``real`` that raises :class:`PlantedError` on its ``n``-th call (the calls
    before it do their work: the failure comes part-way through the writing)."""
    calls = []

    def writer(*args, **kwargs):
        calls.append(1)
        if len(calls) == n:
            raise PlantedError(f"planted failure in call {n}")
        return real(*args, **kwargs)

    return writer


@pytest.mark.parametrize(
    ("target", "call", "args"),
    [
        ("write_gpkg", 1, ("--no-cache",)),  # a whole GeoPackage
        ("update_gpkg", 1, ()),  # the last one, updated row by row
        ("write_csv", 2, ()),  # after cable_schedule.csv was written into the work folder
        ("write_csv", 3, ("--no-cache",)),
        ("write_workbook", 1, ()),
        ("_write_map", 1, ()),  # in a forked child, then again in the main process
    ],
)
def test_a_writer_failing_part_way_leaves_the_previous_outputs(
    tmp_path, monkeypatch, target, call, args
):
    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    assert plan_cli(site, out, "-q").exit_code == 0
    (out / "notes.txt").write_text("site visit", encoding="utf-8")  # the user's own file
    before = snapshot(out)
    new_site = edited(tmp_path / "site2")

    monkeypatch.setattr(write_mod, target, fail_on_call(call, getattr(write_mod, target)))
    result = plan_cli(new_site, out, "-q", *args)
    assert result.exit_code == 2
    line = one_error_line(result)
    assert f"internal error (PlantedError: planted failure in call {call})" in line
    assert snapshot(out) == before  # every file byte for byte, no work folder left
    assert_complete(out)

    monkeypatch.undo()  # the folder is usable: the next run needs no --force
    result = plan_cli(new_site, out, "-q")
    assert result.exit_code == 0, result.output
    assert_complete(out)
    assert (out / "notes.txt").read_text(encoding="utf-8") == "site visit"
    text = (out / "cable_schedule.csv").read_text(encoding="utf-8")
    assert "\nR1/S3," in text and "\nR1/S4," not in text  # the edited site's plan


def test_a_failing_cache_save_leaves_the_previous_outputs(tmp_path, monkeypatch):
    from routeplan.cache import PlanCache

    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    assert plan_cli(site, out, "-q").exit_code == 0
    before = snapshot(out)
    monkeypatch.setattr(PlanCache, "save", fail_on_call(1, PlanCache.save))
    result = plan_cli(edited(tmp_path / "site2"), out, "-q")
    assert result.exit_code == 2 and "PlantedError" in one_error_line(result)
    assert snapshot(out) == before


def page(path: Path) -> str:
    """map.html with folium's random element names (``map_<32 hex digits>``) made equal."""
    return re.sub(r"_[0-9a-f]{32}(?![0-9a-f])", "_ID", path.read_text(encoding="utf-8"))


def test_a_re_plan_replaces_exactly_routeplans_files(tmp_path):
    """A cached plan, the user's files added, then a plan of the edited site without cache:
    the folder then holds the user's files as they were, the new run's files equal to a plan
    of the edited site into a new folder, no plan cache (README: ``--no-cache``: none) and
    nothing else of the first run's."""
    site = write_site(tmp_path / "site", rich_frames(), toml=RICH_TOML)
    out = tmp_path / "out"
    assert plan_cli(site, out, "-q").exit_code == 0
    first = json.loads((out / MANIFEST).read_text(encoding="utf-8"))["files"]
    assert any(n.startswith(f"{CACHE_DIR}/") for n in first)
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    (out / "mine").mkdir()
    (out / "mine" / "markup.pdf").write_bytes(b"%PDF-1.7 mine")
    users = {k: v for k, v in snapshot(out).items() if k in ("notes.txt", "mine/markup.pdf")}

    new_site = edited(tmp_path / "site2")
    assert plan_cli(new_site, out, "-q", "--no-cache").exit_code == 0
    cold = tmp_path / "cold"
    assert plan_cli(new_site, cold, "-q", "--no-cache").exit_code == 0

    manifest = assert_complete(out)
    assert sorted(manifest["files"]) == sorted(FILES)  # no cache entries
    after = snapshot(out)
    assert set(after) == set(FILES) | {MANIFEST} | set(users)
    assert {k: after[k] for k in users} == users
    assert not (out / CACHE_DIR).exists()
    for name in FILES:
        if name == "map.html":  # folium names the page's elements at random
            assert page(out / name) == page(cold / name)
        elif name != "routes.gpkg":  # a GeoPackage records when it was written
            assert (out / name).read_bytes() == (cold / name).read_bytes(), name
    for name in first:  # the first run's files: replaced or gone
        if name in manifest["files"]:
            assert after[name] == manifest["files"][name]["sha256"]
        else:
            assert not (out / name).exists(), name
