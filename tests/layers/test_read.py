"""Reading sites in each format, and CRS handling."""

from __future__ import annotations

import json
import sqlite3
import warnings

import numpy as np
import pyproj
import pytest
import shapely

import layers
from tests.conftest import UTM33, base_frames, write_site


@pytest.mark.filterwarnings("ignore:.*(truncated|Normalized).*")
@pytest.mark.parametrize("fmt", ["geojson", "gpkg", "shp", "site.gpkg"])
def test_reads_every_format(tmp_path, fmt):
    # GeoJSON, GeoPackage (one file per layer), Shapefile, one GeoPackage holding every layer
    frames = base_frames()
    if fmt == "geojson":  # RFC 7946: GeoJSON is WGS 84 lon/lat
        frames = {k: v.to_crs("EPSG:4326") for k, v in frames.items()}
    root = write_site(tmp_path / fmt, frames, fmt=fmt)
    site = layers.read_site(root)
    assert [len(site.layer(n)) for n in layers.LAYER_NAMES] == [2, 1, 1, 2, 1]
    assert site.rows["id"].tolist() == ["R1", "R2"]
    assert site.rows["strings"].tolist() == [2, 3]
    assert site.inverters["phases"].tolist() == [3]
    # the Shapefile format truncates names to 10 characters (max_strings -> max_string)
    assert site.combiners["max_strings"].tolist() == [12]
    assert site.crs.equals(pyproj.CRS(UTM33))  # UTM 33N is the zone of these coordinates
    # metric lengths survive the round trip (within GeoJSON's 7-decimal rounding, ~1 cm)
    lengths = shapely.length(site.trenches.geometry.values)
    np.testing.assert_allclose(lengths, [30.0, 108.0], atol=0.02)
    assert np.isnan(site.trenches["depth_m"].iloc[1])  # missing optional attribute stays NaN


def test_layer_named_in_toml(tmp_path):
    frames = base_frames()
    root = write_site(tmp_path / "s", {k: v for k, v in frames.items() if k != "grid"})
    frames["grid"].to_file(root / "poc.gpkg", layer="points", engine="pyogrio")
    (root / "site.toml").write_text(
        (root / "site.toml").read_text() + '\n[layers]\ngrid = "poc.gpkg:points"\n'
    )
    site = layers.read_site(root)
    assert site.grid["id"].tolist() == ["G1"]
    assert site.sources["grid"] == "poc.gpkg:points"


def test_grid_is_optional(tmp_path):
    frames = {k: v for k, v in base_frames().items() if k != "grid"}
    frames["inverters"] = frames["inverters"].assign(to=[None])
    site = layers.read_site(write_site(tmp_path / "s", frames))
    assert len(site.grid) == 0


def test_geographic_data_goes_to_local_utm_with_geodesic_lengths(tmp_path):
    # Reference: pyproj.Geod (WGS 84 ellipsoid) geodesic lengths of the lon/lat lines.
    frames = {k: v.to_crs("EPSG:4326") for k, v in base_frames().items()}
    site = layers.read_site(write_site(tmp_path / "s", frames))
    assert site.crs.to_epsg() == 32633
    assert "UTM" in site.crs_note
    geod = pyproj.Geod(ellps="WGS84")
    geodesic = [geod.geometry_length(g) for g in frames["trenches"].geometry]
    projected = shapely.length(site.trenches.geometry.values)
    np.testing.assert_allclose(projected, geodesic, rtol=1e-3)


def test_geographic_site_far_from_meridian_still_within_0p1pct(tmp_path):
    # Reference: pyproj.Geod. A 2 km trench at 62° N, 2.9° from its zone's central meridian.
    from shapely.geometry import LineString

    frames = base_frames()
    lon0, lat0 = 17.9, 62.0
    trench = LineString([(lon0, lat0), (lon0 + 0.03, lat0 + 0.005), (lon0 + 0.035, lat0 + 0.015)])
    geo = {k: v.to_crs("EPSG:4326") for k, v in frames.items()}
    shift = lambda g: shapely.transform(g, lambda c: c - [15.0, 47.83] + [lon0, lat0])  # noqa: E731
    for k in geo:
        geo[k] = geo[k].set_geometry(shift(geo[k].geometry.values), crs="EPSG:4326")
    geo["trenches"] = geo["trenches"].set_geometry(
        [trench, geo["trenches"].geometry.iloc[1]], crs="EPSG:4326"
    )
    site = layers.read_site(write_site(tmp_path / "s", geo))
    assert site.crs.to_epsg() == 32633  # 17.9° E lies in zone 33 (12°–18° E)
    geod = pyproj.Geod(ellps="WGS84")
    assert shapely.length(site.trenches.geometry.iloc[0]) == pytest.approx(
        geod.geometry_length(trench), rel=1e-3
    )


def test_site_crs_overrides_and_mixed_crs_layers_are_reprojected(tmp_path):
    frames = base_frames()
    frames["grid"] = frames["grid"].to_crs("EPSG:4326")  # one layer in another CRS
    toml = "[site]\ncrs = 'EPSG:3035'\n" + "\n".join(
        line
        for line in __import__("tests.conftest", fromlist=["SITE_TOML"]).SITE_TOML.splitlines()
        if not line.startswith("[site]")
    )
    site = layers.read_site(write_site(tmp_path / "s", frames, fmt="gpkg", toml=toml))
    assert site.crs.to_epsg() == 3035
    assert all(site.layer(n).crs.equals(site.crs) for n in layers.LAYER_NAMES)


def test_units_in_values_are_converted():
    from layers.units import to_number

    assert to_number("800 mm", "depth_m") == 0.8
    assert to_number("2.5 MVA", "ac_kva") == 2500.0
    with pytest.raises(ValueError, match="not a quantity in A"):
        to_number("3 m", "isc_a")


@pytest.mark.parametrize(
    ("table", "column", "value", "message"),
    [
        # SQLite keeps a real in an INTEGER column (type affinity: 2.5 is not an integer) and
        # GDAL reads it as 2, silently; GeoJSON's 2.5 was refused
        ("rows", "strings", 2.5, "strings is 2.5 in the file (a real in a column of type"),
        ("rows", "strings", "abc", "strings is 'abc' in the file (text in a column of type"),
        ("rows", "strings", 1e30, "strings is 1e+30 in the file"),
        ("inverters", "ac_kva", "big", "ac_kva is 'big' in the file (text in a column of type"),
    ],
)
def test_a_geopackage_value_gdal_would_read_as_another_number_is_refused(
    tmp_path, table, column, value, message
):
    # SQLite 3 "Datatypes In SQLite", 3.1 (type affinity): a value stored in a column of
    # another type keeps its own type when it cannot be converted losslessly
    frames = base_frames()
    root = write_site(tmp_path / "s", frames, fmt="gpkg")
    assert layers.read_site(root)  # valid as written
    path = root / f"{table}.gpkg"
    frames[table].to_file(path, engine="pyogrio", layer_options={"SPATIAL_INDEX": "NO"})
    con = sqlite3.connect(path)
    first = con.execute(f'SELECT id FROM "{table}" ORDER BY fid LIMIT 1').fetchone()[0]
    con.execute(f'UPDATE "{table}" SET "{column}" = ? WHERE id = ?', (value, first))
    con.commit()
    con.close()
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    found = [str(p) for p in info.value.problems]
    assert len(found) == 1, found  # the value GDAL read from it is not reported again
    assert found[0].startswith(f"{table} '{first}': {message}")
    assert found[0].endswith("expected a whole number" if column == "strings" else "a number")


def test_a_whole_real_or_a_numeric_text_in_a_geopackage_is_its_number(tmp_path):
    # SQLite converts 3.0 and '3' to the integer 3 in an INTEGER column (type affinity)
    root = write_site(tmp_path / "s", base_frames(), fmt="gpkg")
    base_frames()["rows"].to_file(
        root / "rows.gpkg", engine="pyogrio", layer_options={"SPATIAL_INDEX": "NO"}
    )
    con = sqlite3.connect(root / "rows.gpkg")
    con.execute("UPDATE rows SET strings = '3' WHERE id = 'R1'")
    con.commit()
    con.close()
    assert layers.read_site(root).rows["strings"].tolist() == [3, 3]


def _rows_read_quietly(tmp_path, edit) -> tuple[list, list[str]]:
    """The test site with its rows.geojson edited by ``edit(data)`` (the parsed JSON), read:
    the rows' ids and every warning shown while reading."""
    root = write_site(tmp_path / "s", base_frames())
    path = root / "rows.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    edit(data)
    path.write_text(json.dumps(data), encoding="utf-8")
    with warnings.catch_warnings(record=True) as shown:
        warnings.simplefilter("always")
        site = layers.read_site(root)
    return site.rows["id"].tolist(), [str(w.message) for w in shown]


def test_a_geojson_attribute_of_mixed_types_is_read_without_a_warning(tmp_path):
    # GDAL types a GeoJSON property holding a number and strings as JSON; geopandas warned
    # "Could not parse column 'id' as JSON" (two lines of library code on the terminal)
    def number_id(data):
        data["features"][0]["properties"]["id"] = 12

    assert _rows_read_quietly(tmp_path, number_id) == (["12", "R2"], [])


def test_repeated_geojson_feature_ids_are_read_without_a_warning(tmp_path):
    # RFC 7946, 3.2: a Feature's "id" member is optional and not the "id" property; GDAL
    # renumbers repeated ones and warned on the terminal ("Several features with id = 1")
    def repeated(data):
        for feature in data["features"]:
            feature["id"] = 1

    assert _rows_read_quietly(tmp_path, repeated) == (["R1", "R2"], [])


@pytest.mark.parametrize(
    ("table", "column", "value", "want"),
    [
        (
            "rows",
            "strings",
            True,
            "strings is true in the file (a JSON boolean, which GDAL "
            "would read as 1), expected a whole number",
        ),
        # false would be read as 0 strings: reported once, as what the file holds
        (
            "rows",
            "strings",
            False,
            "strings is false in the file (a JSON boolean, which GDAL "
            "would read as 0), expected a whole number",
        ),
        (
            "inverters",
            "ac_kva",
            True,
            "ac_kva is true in the file (a JSON boolean, which GDAL "
            "would read as 1), expected a number",
        ),
    ],
)
def test_a_geojson_boolean_among_numbers_is_refused(tmp_path, table, column, value, want):
    # RFC 8259: true and false are literals of their own, not numbers; GDAL's GeoJSON driver
    # makes a property of numbers and booleans a number field and reads true as 1, false as 0
    root = write_site(tmp_path / "s", base_frames())
    path = root / f"{table}.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    data["features"][0]["properties"][column] = value
    path.write_text(json.dumps(data), encoding="utf-8")
    import pyogrio

    read = pyogrio.read_dataframe(path)[column].tolist()
    assert read[0] == int(value)  # what GDAL makes of it, silently
    first = str(data["features"][0]["properties"]["id"])
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    found = [str(p) for p in info.value.problems]
    assert found == [f"{table} '{first}': {want}"]


def test_a_geojson_boolean_elsewhere_or_a_feature_without_id_is_named_by_position(tmp_path):
    root = write_site(tmp_path / "s", base_frames())
    path = root / "rows.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    data["features"][0]["properties"]["checked"] = True  # not an attribute read as a number
    path.write_text(json.dumps(data), encoding="utf-8")
    expected = [f["properties"]["strings"] for f in data["features"]]
    assert layers.read_site(root).rows["strings"].tolist() == expected
    data["features"][1]["properties"].pop("id")
    data["features"][1]["properties"]["strings"] = True
    path.write_text(json.dumps(data), encoding="utf-8")
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    assert any(
        str(p).startswith("rows '#2': strings is true in the file") for p in info.value.problems
    )


@pytest.mark.parametrize("lead", [b"\n  ", b"\xef\xbb\xbf"], ids=["blanks", "bom"])
def test_a_geojson_boolean_is_found_after_blanks_or_a_byte_order_mark(tmp_path, lead):
    # RFC 8259 section 2: blanks may precede the document's object; RFC 7946 files written
    # by some editors start with a UTF-8 byte-order mark, which GDAL skips
    root = write_site(tmp_path / "s", base_frames())
    path = root / "rows.geojson"
    data = json.loads(path.read_text(encoding="utf-8"))
    data["features"][0]["properties"]["strings"] = True
    path.write_bytes(lead + json.dumps(data).encode("utf-8"))
    with pytest.raises(layers.SiteError) as info:
        layers.read_site(root)
    first = str(data["features"][0]["properties"]["id"])
    assert [str(p) for p in info.value.problems] == [
        f"rows '{first}': strings is true in the file (a JSON boolean, which GDAL would read "
        "as 1), expected a whole number"
    ]
