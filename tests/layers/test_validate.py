"""One test per validation rule: each names the layer and the exact feature id."""

from __future__ import annotations

import json

import pytest
from shapely.geometry import LineString, Point, Polygon

import layers
from tests.conftest import E0, N0, SITE_TOML, base_frames, write_site


def problems_of(root) -> list[str]:
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    return [str(p) for p in info.value.problems]


def write(tmp_path, frames=None, **kw):
    return write_site(tmp_path / "site", frames if frames is not None else base_frames(), **kw)


def test_valid_site_has_no_problems(tmp_path):
    layers.read_site(write(tmp_path))


def test_missing_site_toml(tmp_path):
    root = write(tmp_path)
    (root / "site.toml").unlink()
    assert any(p.startswith("site.toml: missing") for p in problems_of(root))


def test_unparsable_site_toml(tmp_path):
    root = write(tmp_path, toml="[site\nname = 1")
    assert any(p.startswith("site.toml: cannot be parsed") for p in problems_of(root))


@pytest.mark.parametrize(
    "toml", [None, "[site\nname = 1", b"\x00\xff[[["], ids=["missing", "syntax", "not text"]
)
def test_a_site_toml_that_cannot_be_read_is_the_one_problem(tmp_path, toml):
    # the site maps its grid layer in [layers]; without site.toml's settings, the missing
    # [modules] and the grid 'to' of every inverter were reported too, as if they were wrong
    frames = base_frames()
    root = write(tmp_path, frames)
    (root / "grid.geojson").rename(root / "substation.geojson")
    text = (root / "site.toml").read_text(encoding="utf-8")
    (root / "site.toml").write_text(text + '\n[layers]\ngrid = "substation.geojson"\n', "utf-8")
    layers.read_site(root)  # valid as it is
    if toml is None:
        (root / "site.toml").unlink()
    elif isinstance(toml, bytes):
        (root / "site.toml").write_bytes(toml)
    else:
        (root / "site.toml").write_text(toml, encoding="utf-8")
    (problem,) = problems_of(root)
    assert problem.startswith("site.toml: ")


def test_missing_required_layer(tmp_path):
    frames = base_frames()
    del frames["trenches"]
    msgs = problems_of(write(tmp_path, frames))
    assert any(p.startswith("trenches: required layer missing") for p in msgs)


def test_unreadable_file(tmp_path):
    root = write(tmp_path)
    (root / "combiners.geojson").write_text("this is not GeoJSON")
    msgs = problems_of(root)
    assert any(p.startswith("combiners: cannot read combiners.geojson") for p in msgs)


def test_an_empty_file_is_named_as_empty(tmp_path):
    root = write(tmp_path)
    (root / "combiners.geojson").write_bytes(b"")
    assert "combiners: cannot read combiners.geojson: the file is empty" in problems_of(root)


def test_gdal_advice_to_prefix_a_driver_is_left_out(tmp_path):
    # GDAL suggests "prefixing the file path with '<DRIVER>:'": a site.toml names files, so
    # the advice would mislead; the reason itself stays
    root = write(tmp_path)
    (root / "combiners.geojson").write_bytes(bytes(range(256)) * 4)
    (msg,) = [p for p in problems_of(root) if p.startswith("combiners:")]
    assert "not recognized as being in a supported file format" in msg
    assert "DRIVER" not in msg and "might help" not in msg


@pytest.mark.parametrize("named", [False, True], ids=["found by name", "named in [layers]"])
@pytest.mark.parametrize("target", ["loop", "missing"])
def test_a_layer_file_that_is_a_link_to_nothing_is_one_problem(tmp_path, named, target):
    root = write(tmp_path)
    file = "substation.geojson" if named else "grid.geojson"
    (root / "grid.geojson").unlink()
    (root / file).symlink_to(file if target == "loop" else "gone.geojson")
    if named:
        text = (root / "site.toml").read_text(encoding="utf-8")
        (root / "site.toml").write_text(text + f'\n[layers]\ngrid = "{file}"\n', "utf-8")
    msgs = problems_of(root)
    want = f"grid: {file!r} is a symbolic link that leads to no file (a loop or a missing target)"
    assert want in msgs


def test_an_unclosed_ring_is_a_problem_without_a_warning(tmp_path, recwarn):
    root = write(tmp_path)
    path = root / "rows.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    (x0, y0), (x1, _) = data["features"][0]["geometry"]["coordinates"][:2]
    # a rectangle whose last corner is not a number: the ring no longer closes
    ring = [[x0, y0], [x1, y0], [x1, y0 + 4.0], [x0, y0 + 4.0], [float("nan"), y0]]
    data["features"][0]["geometry"] = {"type": "Polygon", "coordinates": [ring]}
    path.write_text(json.dumps(data).replace("NaN", "nan"), encoding="utf-8")
    assert any(p.startswith("rows: cannot read rows.geojson") for p in problems_of(root))
    assert not [w for w in recwarn if "ring" in str(w.message).lower()]


def test_four_numbers_per_position_are_read_without_a_warning(tmp_path, recwarn):
    # GeoJSON positions x, y, z, m (RFC 7946 3.1.1 allows more than three numbers): GDAL reads
    # x, y, z and warned on the user's terminal with pyogrio's source line; z is dropped too
    root = write(tmp_path)
    path = root / "trenches.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    geometry = data["features"][0]["geometry"]
    geometry["coordinates"] = [[*c[:2], 1.5, 7.0] for c in geometry["coordinates"]]
    path.write_text(json.dumps(data), encoding="utf-8")
    site = layers.read_site(root)
    first = site.trenches.geometry.iloc[0]
    assert not first.has_z
    assert [list(c) for c in first.coords] == [c[:2] for c in geometry["coordinates"]]
    assert not [w for w in recwarn if "members" in str(w.message)]


def test_truncated_file(tmp_path):
    root = write(tmp_path, fmt="gpkg")
    path = root / "rows.gpkg"
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 3])
    msgs = problems_of(root)
    assert any(p.startswith("rows: cannot read rows.gpkg") for p in msgs)


def test_two_candidate_files_for_one_layer(tmp_path):
    root = write(tmp_path)
    base_frames()["grid"].to_file(root / "grid.gpkg", engine="pyogrio")
    assert any("several files could be this layer" in p for p in problems_of(root))


@pytest.mark.parametrize(("length", "refused"), [(200, False), (201, True), (100_000, True)])
def test_an_id_longer_than_200_characters_is_refused(tmp_path, length, refused):
    # a pasted text as an id: it became a circuit id and a workbook cell past a spreadsheet's
    # cell limit (Excel 32,767 characters, from memory)
    frames = base_frames()
    frames["rows"].loc[1, "id"] = "R" * length
    root = write(tmp_path, frames, fmt="gpkg")
    if not refused:
        assert "R" * length in layers.read_site(root).rows["id"].tolist()
        return
    assert problems_of(root) == [
        f"rows '#2': id {'R' * 20!r}… has {length:,} characters: at most 200 (ids name "
        "circuits, cable tags and spreadsheet cells)"
    ]


def test_missing_and_empty_ids(tmp_path):
    frames = base_frames()
    frames["rows"].loc[1, "id"] = ""
    frames["trenches"] = frames["trenches"].drop(columns="id")
    msgs = problems_of(write(tmp_path, frames, fmt="gpkg"))
    assert "rows '#2': missing or empty id" in msgs
    assert "trenches: no 'id' column" in msgs


def test_duplicate_ids_across_layers(tmp_path):
    frames = base_frames()
    frames["grid"].loc[0, "id"] = "CB1"  # same id as the combiner
    frames["inverters"].loc[0, "to"] = None
    msgs = problems_of(write(tmp_path, frames))
    assert (
        "grid 'CB1': duplicate id: already used in layer 'combiners' (ids are unique across layers)"
        in msgs
    )


def test_duplicate_ids_within_a_layer(tmp_path):
    frames = base_frames()
    frames["rows"].loc[1, "id"] = "R1"
    msgs = problems_of(write(tmp_path, frames))
    assert any(p.startswith("rows 'R1': duplicate id: already used in this layer") for p in msgs)


def test_wrong_geometry_type(tmp_path):
    frames = base_frames()
    frames["combiners"] = frames["combiners"].set_geometry(
        [LineString([(E0 + 45, N0), (E0 + 46, N0)])], crs=frames["combiners"].crs
    )
    msgs = problems_of(write(tmp_path, frames, fmt="gpkg"))
    assert "combiners 'CB1': geometry is LineString; expected Point" in msgs


def test_empty_geometry(tmp_path):
    frames = base_frames()
    frames["grid"] = frames["grid"].set_geometry([None], crs=frames["grid"].crs)
    msgs = problems_of(write(tmp_path, frames, fmt="gpkg"))
    assert "grid 'G1': empty or missing geometry" in msgs


def test_self_intersecting_polygon(tmp_path):
    frames = base_frames()
    bowtie = Polygon([(E0, N0 + 20), (E0 + 40, N0 + 24), (E0 + 40, N0 + 20), (E0, N0 + 24)])
    frames["rows"] = frames["rows"].set_geometry(
        [frames["rows"].geometry.iloc[0], bowtie], crs=frames["rows"].crs
    )
    msgs = problems_of(write(tmp_path, frames, fmt="gpkg"))
    assert any(p.startswith("rows 'R2': invalid geometry: Self-intersection") for p in msgs)


def test_non_numeric_attribute(tmp_path):
    frames = base_frames()
    frames["rows"]["strings"] = frames["rows"]["strings"].astype(object)
    frames["rows"].loc[0, "strings"] = "three"
    msgs = problems_of(write(tmp_path, frames))
    assert "rows 'R1': strings is 'three', expected an integer" in msgs


def test_out_of_range_attributes(tmp_path):
    frames = base_frames()
    frames["trenches"].loc[0, "depth_m"] = -0.5
    frames["rows"].loc[1, "strings"] = 0
    frames["inverters"].loc[0, "phases"] = 2
    msgs = problems_of(write(tmp_path, frames))
    assert "trenches 'T1': depth_m is -0.5, must be > 0" in msgs
    assert "rows 'R2': strings is 0, must be ≥ 1" in msgs
    assert "inverters 'INV1': phases is 2, expected one of 1, 3" in msgs


def test_unknown_choice(tmp_path):
    frames = base_frames()
    frames["trenches"].loc[1, "laying"] = "tray"
    msgs = problems_of(write(tmp_path, frames))
    assert "trenches 'T2': laying is 'tray', expected one of direct, duct" in msgs


def test_missing_required_attribute(tmp_path):
    frames = base_frames()
    frames["inverters"] = frames["inverters"].drop(columns="ac_kva")
    msgs = problems_of(write(tmp_path, frames))
    assert "inverters: no 'ac_kva' column (required)" in msgs


def test_unknown_module_key(tmp_path):
    frames = base_frames()
    frames["rows"].loc[1, "module"] = "mod9"
    msgs = problems_of(write(tmp_path, frames))
    assert "rows 'R2': module 'mod9' is not in site.toml [modules] (known: mod1)" in msgs


def test_bad_module_table(tmp_path):
    toml = SITE_TOML.replace("imp_a = 12.3", "imp_a = 14.0").replace("per_string = 26\n", "")
    msgs = problems_of(write(tmp_path, toml=toml))
    assert "site.toml 'modules.mod1': missing per_string" in msgs
    assert "site.toml 'modules.mod1': imp_a 14 exceeds isc_a 13" in msgs


def test_to_points_at_missing_id(tmp_path):
    frames = base_frames()
    frames["rows"].loc[0, "to"] = "CB9"
    msgs = problems_of(write(tmp_path, frames))
    assert "rows 'R1': to = 'CB9': no feature has that id" in msgs


def test_to_points_at_wrong_kind(tmp_path):
    frames = base_frames()
    frames["combiners"].loc[0, "to"] = "T1"  # a trench, not an inverter
    msgs = problems_of(write(tmp_path, frames))
    assert "combiners 'CB1': to = 'T1' is a trench; expected a combiner or inverter" in msgs


def test_combiner_over_max_strings(tmp_path):
    frames = base_frames()
    frames["combiners"].loc[0, "max_strings"] = 4  # rows carry 2 + 3 strings
    msgs = problems_of(write(tmp_path, frames))
    assert "combiners 'CB1': 5 strings are assigned to it but max_strings is 4" in msgs


def test_missing_crs_is_refused(tmp_path):
    frames = base_frames()
    root = write(tmp_path, frames, fmt="shp")
    (root / "grid.prj").unlink()
    msgs = problems_of(root)
    assert any(p.startswith("grid: has no CRS") for p in msgs)


def test_missing_crs_with_declared_source_crs_is_assumed(tmp_path):
    root = write(
        tmp_path,
        fmt="shp",
        toml=SITE_TOML.replace("[site]\n", '[site]\nsource_crs = "EPSG:32633"\n'),
    )
    (root / "grid.prj").unlink()
    site = layers.read_site(root)
    assert "grid: no CRS in file, assumed EPSG:32633" in site.crs_note


def test_unknown_crs(tmp_path):
    root = write(tmp_path, toml=SITE_TOML.replace("[site]\n", '[site]\ncrs = "EPSG:999999"\n'))
    assert any(
        p.startswith("site.toml 'site.crs': unknown CRS 'EPSG:999999'") for p in problems_of(root)
    )


def test_geographic_working_crs_is_refused(tmp_path):
    root = write(tmp_path, toml=SITE_TOML.replace("[site]\n", '[site]\ncrs = "EPSG:4326"\n'))
    assert any("is not a projected CRS in metres" in p for p in problems_of(root))


def test_every_problem_at_once(tmp_path):
    frames = base_frames()
    frames["rows"].loc[0, "to"] = "CB9"
    frames["rows"].loc[1, "module"] = "nope"
    frames["trenches"].loc[1, "depth_m"] = -1
    frames["combiners"] = frames["combiners"].set_geometry([Point()], crs=frames["combiners"].crs)
    msgs = problems_of(write(tmp_path, frames, fmt="gpkg"))
    ids = {m.split(":")[0] for m in msgs}
    assert {"rows 'R1'", "rows 'R2'", "trenches 'T2'", "combiners 'CB1'"} <= ids


@pytest.mark.parametrize("fmt", ["geojson", "gpkg"])
def test_heights_are_dropped_from_every_layer(tmp_path, fmt):
    """Surveyed layers often carry heights (Z): the site is planned in plan view, every
    geometry read as 2D, with the same x and y."""
    import shapely

    flat = layers.read_site(write(tmp_path / "flat", fmt=fmt))
    frames = base_frames()
    for frame in frames.values():
        frame.geometry = shapely.force_3d(frame.geometry.values, 12.5)
    root = write(tmp_path / "z", frames, fmt=fmt)
    site = layers.read_site(root)
    for name in ("trenches", "rows", "combiners", "inverters"):
        got = site.layer(name).geometry.values
        assert not shapely.has_z(got).any(), name
        assert shapely.equals_exact(got, flat.layer(name).geometry.values, 0.0).all(), name
