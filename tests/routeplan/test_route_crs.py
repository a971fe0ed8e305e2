"""The same invented site given in lat/lon and in UTM routes to the same lengths.

References: pyproj (the reprojection, and ``pyproj.Geod`` geodesic lengths on the WGS 84
ellipsoid as the outside measure of every route).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pyproj
import shapely
from numpy.testing import assert_allclose

from routeplan.routing import route_site

UTM = "EPSG:32633"  # zone 33N, central meridian 15° E
WGS84 = "EPSG:4326"
LAYERS = ("rows", "combiners", "inverters", "trenches", "grid")


def placed(site, east_m=500_000.0, north_m=5_320_000.0):
    """The site's coordinates moved near 15° E, 48° N in UTM zone 33N: on the zone's central
    meridian (the invented site's own grid is relabelled, its shape kept exactly)."""
    frames = {
        name: site.layer(name)
        .set_geometry(site.layer(name).translate(east_m, north_m))
        .set_crs(UTM, allow_override=True)
        for name in LAYERS
    }
    return dataclasses.replace(site, crs=pyproj.CRS(UTM), **frames)


def via_lat_lon(site, decimals=None):
    """The site written in lat/lon (optionally rounded to ``decimals``), then read back in UTM.

    Stands in for ``layers.read_site`` on a GeoJSON site: switch to it when it lands.
    """
    frames = {}
    for name in LAYERS:
        geo = site.layer(name).to_crs(WGS84)
        if decimals is not None:
            grid = 10.0**-decimals
            geo = geo.set_geometry(shapely.set_precision(np.asarray(geo.geometry.array), grid))
        frames[name] = geo.to_crs(UTM)
    return dataclasses.replace(site, **frames)


def stretches(plan) -> list[list[tuple[str, float, float]]]:
    """Each circuit's route as (trench id, from_m, to_m) of its segments, in route order."""
    seg = plan.segments.set_index("segment_id")
    return [
        [(seg.at[i, "trench_id"], seg.at[i, "start_m"], seg.at[i, "end_m"]) for i in ids.split(";")]
        if ids
        else []
        for ids in plan.circuits["segment_ids"]
    ]


def test_lat_lon_and_utm_give_the_same_routes(comb):
    site = placed(comb(4, 3, 2))
    utm = route_site(site)
    latlon = route_site(via_lat_lon(site))
    a, b = utm.circuits, latlon.circuits
    assert a["circuit_id"].tolist() == b["circuit_id"].tolist()
    assert a["segment_ids"].tolist() == b["segment_ids"].tolist()
    assert utm.segments["circuits"].tolist() == latlon.segments["circuits"].tolist()
    # pyproj: the round trip through lat/lon changes lengths far below 0.1 %
    assert_allclose(b["route_m"], a["route_m"], rtol=1e-3)


def test_lat_lon_rounded_to_six_decimals_keeps_the_topology(comb):
    site = placed(comb(4, 3, 2))
    utm = route_site(site)
    rounded = route_site(via_lat_lon(site, decimals=6))  # RFC 7946 §11.2: about 10 cm
    a, b = utm.circuits, rounded.circuits
    # the default node_tol_m (0.1 m) joins the trench ends that rounding pulled apart: every
    # route runs the same stretches of the same trenches, in the same order. The segment ids
    # carry the chainage to 0.1 m (README, Outputs), which the rounding moves by a few cm:
    # they may differ in the last decimal, so the stretches are compared by trench and
    # chainage instead (atol as for the lengths below)
    sa, sb = stretches(utm), stretches(rounded)
    assert [[t for t, _, _ in r] for r in sa] == [[t for t, _, _ in r] for r in sb]
    assert_allclose(
        [m for r in sb for _, *ends in r for m in ends],
        [m for r in sa for _, *ends in r for m in ends],
        rtol=0,
        atol=0.2,
    )
    assert utm.segments["circuits"].tolist() == rounded.segments["circuits"].tolist()
    # atol: rounding to 1e-6° moves each point by up to 0.056 m north and 0.037 m east
    # (at 48° N); a route's two ends and the nodes on its way each move that much
    assert_allclose(b["route_m"], a["route_m"], rtol=0, atol=0.2)


def test_route_lengths_match_geodesic_lengths(comb):
    plan = route_site(placed(comb(4, 3, 2)))
    geod = pyproj.Geod(ellps="WGS84")
    lonlat = plan.circuits.to_crs(WGS84)
    geodesic = np.array([geod.geometry_length(g) for g in lonlat.geometry])
    # pyproj.Geod: UTM shrinks lengths by its scale factor, 0.9996 on the central meridian,
    # so grid lengths are 0.04 % short of the ellipsoid's; the check allows 0.1 %
    assert_allclose(plan.circuits["route_m"], geodesic, rtol=1e-3)
    assert_allclose(plan.circuits["route_m"] / geodesic, 0.9996, atol=2e-5)
