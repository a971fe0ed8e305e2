"""The US demo site's layers (``demo_site_us``), drawn in feet in a US State Plane CRS
(EPSG:2223, NAD83 / Arizona Central (ft), international feet), read into metres.

References: pyproj (PROJ transformations; ``pyproj.Geod`` geodesics on the GRS 80 / WGS 84
ellipsoid, Karney's algorithm); the international foot, 0.3048 m exactly (1959 agreement).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pyproj
import shapely

import layers

DEMO_US = Path(__file__).resolve().parents[2] / "demo_site_us"


def test_the_demo_layers_are_in_international_feet():
    crs = pyproj.CRS("EPSG:2223")
    assert {a.unit_name for a in crs.axis_info} == {"foot"}
    assert {a.unit_conversion_factor for a in crs.axis_info} == {0.3048}
    for name in ("rows", "combiners", "inverters", "trenches", "transformers"):
        data = json.loads((DEMO_US / f"{name}.geojson").read_text(encoding="utf-8"))
        assert data["crs"]["properties"]["name"] == "urn:ogc:def:crs:EPSG::2223", name


def test_the_demo_is_read_in_metres_in_the_local_utm_zone():
    site = layers.read_site(DEMO_US)
    assert site.crs.to_epsg() == 32612  # 112.45° W lies in UTM zone 12 (114°–108° W)
    assert "layers in EPSG:2223 (NAD83 / Arizona Central (ft)) are in foot" in site.crs_note
    raw = [
        f["geometry"]["coordinates"]
        for f in json.loads((DEMO_US / "trenches.geojson").read_text(encoding="utf-8"))["features"]
    ]
    to_lonlat = pyproj.Transformer.from_crs("EPSG:2223", "EPSG:4326", always_xy=True)
    geod = pyproj.Geod(ellps="GRS80")
    geodesic = []
    for coords in raw:
        lon, lat = to_lonlat.transform(*np.asarray(coords, dtype=float).T)
        geodesic.append(geod.line_length(lon, lat))
    got = shapely.length(site.trenches.geometry.values)
    # pyproj.Geod: UTM 12N's scale 1.45° east of its meridian at 33° N is 0.99982 (0.02 % short)
    np.testing.assert_allclose(got, geodesic, rtol=5e-4)
    # the same lengths as the drawn feet × 0.3048 (Arizona Central's scale error is < 0.01 %)
    drawn_ft = [shapely.length(shapely.LineString(c)) for c in raw]
    np.testing.assert_allclose(got, np.array(drawn_ft) * 0.3048, rtol=5e-4)
    # and not the feet themselves
    assert not np.allclose(got, drawn_ft, rtol=0.1)
