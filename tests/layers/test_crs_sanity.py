"""The working CRS must measure lengths truly on the site: scale error, area of use, axis order.

References: Snyder, *Map Projections — A Working Manual*, USGS Professional Paper 1395 (1987):
Mercator chapter (scale factor k = sec φ on the sphere, k = sec φ (1 − e² sin² φ)^½ on the
ellipsoid), transverse Mercator chapter (sphere: k = k0 / (1 − B²)^½ with B = cos φ sin Δλ;
ellipsoid series k = k0 [1 + (1 + C) A²/2 + …] with A = Δλ cos φ, C = e'² cos² φ — the
series' terms from memory), equidistant cylindrical chapter (h = 1, k = sec φ for standard
parallel 0). pyproj: ``Geod`` geodesic lengths (Karney), ``Proj.get_factors`` (Tissot's
indicatrix semi-axes), the UTM zone query of the PROJ database.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pyproj
import pytest
import shapely
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info
from typer.testing import CliRunner

import layers
from layers.crs import MAX_SCALE_ERROR, scale_error, utm_for
from routeplan.cli import app
from tests.conftest import E0, N0, SITE_TOML, UTM33, base_frames, write_site

runner = CliRunner()
WGS84 = "EPSG:4326"
#: WGS 84 ellipsoid: first eccentricity squared (from the flattening 1/298.257223563)
F = 1 / 298.257223563
E2 = F * (2 - F)
EP2 = E2 / (1 - E2)  # second eccentricity squared e'²
#: the suggestion every refusal of a [site] crs ends with at the test site (15° E, 47.85° N)
SUGGEST_UTM33 = (
    "; use a projected CRS in metres such as EPSG:32633 (WGS 84 / UTM zone 33N), the local UTM zone"
)


def site_toml(**site: str) -> str:
    """SITE_TOML with extra ``[site]`` keys."""
    lines = "".join(f'{k} = "{v}"\n' for k, v in site.items())
    return SITE_TOML.replace("[site]\n", "[site]\n" + lines)


def lonlat_frames(dlon: float = 0.0, dlat: float = 0.0) -> dict:
    """The test site in WGS 84 lon/lat, moved by (dlon, dlat) degrees."""
    frames = {k: v.to_crs(WGS84) for k, v in base_frames().items()}
    return {k: moved(v, dlon, dlat) for k, v in frames.items()}


def moved(frame, dlon: float, dlat: float):
    geoms = shapely.transform(frame.geometry.values, lambda c: c + np.array([dlon, dlat]))
    return frame.set_geometry(geoms, crs=frame.crs)


def swapped(frame):
    """The layer with x and y swapped (latitude, longitude for lon/lat data)."""
    geoms = shapely.transform(frame.geometry.values, lambda c: c[:, ::-1])
    return frame.set_geometry(geoms, crs=frame.crs)


def check(root) -> tuple[int, list[str], str]:
    """``routeplan check``: (exit code, the ``error:`` lines, all output)."""
    result = runner.invoke(app, ["check", str(root)])
    errors = [line for line in result.stderr.splitlines() if line.startswith("error: ")]
    return result.exit_code, errors, result.output + result.stderr


def site_lat() -> float:
    """Latitude of the test site's origin (E0, N0 in UTM 33N) [degrees]."""
    to_geo = pyproj.Transformer.from_crs(UTM33, WGS84, always_xy=True)
    return to_geo.transform(E0, N0)[1]


# ---------------------------------------------------------------------------------------------
# the scale-error measure against published formulas


@pytest.mark.parametrize("lat", [0.0, 30.0, 60.0, 75.0])
def test_mercator_on_the_sphere_scale_is_sec_phi(lat):
    # Snyder 1987, Mercator: k = sec φ on the sphere. rel 1e-9: the 100 m sample lines differ
    # from the point scale by (L/R)² ≈ 3e-10 of it.
    crs = pyproj.CRS("+proj=merc +R=6371000 +units=m +type=crs")
    got = scale_error(crs, (10.0, lat, 10.0, lat))
    assert got == pytest.approx(1 / math.cos(math.radians(lat)) - 1, rel=1e-9, abs=1e-9)
    # lat = 0: the limiting case, no distortion on the equator


@pytest.mark.parametrize("lat", [0.0, 30.0, 47.85, 60.0])
def test_mercator_on_the_ellipsoid_scale(lat):
    # Snyder 1987, Mercator: k = sec φ (1 − e² sin² φ)^½ on the ellipsoid (EPSG:3395, WGS 84)
    phi = math.radians(lat)
    expected = math.sqrt(1 - E2 * math.sin(phi) ** 2) / math.cos(phi) - 1
    got = scale_error(pyproj.CRS("EPSG:3395"), (10.0, lat, 10.0, lat))
    assert got == pytest.approx(expected, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("lat", [0.0, 45.0, 70.0])
@pytest.mark.parametrize("dlon", [0.0, 1.0, 3.0, 10.0])
def test_transverse_mercator_on_the_sphere_exact(lat, dlon):
    # Snyder 1987, transverse Mercator (sphere): k = k0 / (1 − B²)^½, B = cos φ sin Δλ (exact).
    # abs 5e-7: PROJ's spherical inverse loses about 1.2e-7 of scale along the meridian right
    # on the equator (its point scale there is off by as much); 2000 times below the limit
    crs = pyproj.CRS("+proj=tmerc +R=6371000 +lon_0=15 +k=0.9996 +units=m +type=crs")
    b = math.cos(math.radians(lat)) * math.sin(math.radians(dlon))
    got = scale_error(crs, (15 + dlon, lat, 15 + dlon, lat))
    assert got == pytest.approx(0.9996 / math.sqrt(1 - b * b) - 1, abs=5e-7)
    # dlon = 0: the limiting case, k = k0 on the central meridian


@pytest.mark.parametrize("lat", [0.0, 30.0, 47.85, 60.0])
@pytest.mark.parametrize("dlon", [0.5, 1.5, 3.0])
def test_utm_scale_against_first_order_transverse_mercator(lat, dlon):
    # Snyder 1987, transverse Mercator (ellipsoid), to first order in A²:
    #   k ≈ k0 (1 + A²/2), A = Δλ cos φ.
    # Tolerance: the terms this leaves out of Snyder's series, C·A²/2 with C = e'² cos² φ
    # (≤ e'² A²/2) and the A⁴ terms ((5 − 4T + …) A⁴/24 with T = tan² φ, below A⁴ here):
    # atol = k0 (e'² A²/2 + A⁴), about 1 % of the first-order effect at Δλ = 3°.
    k0 = 0.9996
    a = math.radians(dlon) * math.cos(math.radians(lat))
    expected = k0 * (1 + a * a / 2) - 1
    got = scale_error(pyproj.CRS("EPSG:32633"), (15 + dlon, lat, 15 + dlon, lat))
    assert got == pytest.approx(expected, abs=k0 * (EP2 * a * a / 2 + a**4))
    # and the left-out terms are smaller than the effect measured: not a trivial pass
    assert abs(got - (k0 - 1)) > 10 * k0 * (EP2 * a * a / 2 + a**4)


@pytest.mark.parametrize("lon_lat", [(15.0, 47.85), (30.0, 62.0), (-8.0, 38.0)])
def test_non_conformal_projection_is_measured_in_its_worst_direction(lon_lat):
    # pyproj Proj.get_factors: Tissot's indicatrix semi-axes a, b of Lambert azimuthal
    # equal-area (EPSG:3035, ETRS89-extended / LAEA Europe). Its worst direction is oblique to
    # the meridian and parallel here, so lines along x and y alone would understate it.
    crs = pyproj.CRS("EPSG:3035")
    f = pyproj.Proj(crs).get_factors(*lon_lat)
    a, b = f.tissot_semimajor - 1, f.tissot_semiminor - 1
    expected = a if abs(a) >= abs(b) else b
    got = scale_error(crs, (*lon_lat, *lon_lat))
    assert got == pytest.approx(expected, abs=1e-7)  # pyproj's factors: numerical derivatives
    assert abs(got) > max(abs(f.meridional_scale - 1), abs(f.parallel_scale - 1)) + 1e-4


@pytest.mark.parametrize("lat", [0.0, 45.0, 60.0])
def test_equidistant_cylindrical_worst_scale_is_along_the_parallel(lat):
    # Snyder 1987, equidistant cylindrical (standard parallel 0, sphere): h = 1 along the
    # meridian, k = sec φ along the parallel; the measure reports the larger, sec φ − 1
    crs = pyproj.CRS("+proj=eqc +R=6371000 +units=m +type=crs")
    got = scale_error(crs, (5.0, lat, 5.0, lat))
    assert got == pytest.approx(1 / math.cos(math.radians(lat)) - 1, rel=1e-9, abs=1e-9)


def test_scale_error_is_the_worst_over_the_box():
    # a box from 13° to 19° E, 47° to 48° N in UTM 33N (central meridian 15° E): the worst
    # point is the south-east corner, 4° from the meridian at the lower latitude (first-order
    # transverse Mercator, as above)
    a = math.radians(4.0) * math.cos(math.radians(47.0))
    got = scale_error(pyproj.CRS("EPSG:32633"), (13.0, 47.0, 19.0, 48.0))
    assert got == pytest.approx(0.9996 * (1 + a * a / 2) - 1, abs=0.9996 * (EP2 * a * a / 2 + a**4))


@pytest.mark.parametrize(
    "lon_lat",
    [(15.0, 47.85), (-3.9, 38.96), (135.0, -22.1), (-73.0, 40.8), (179.9, 10.0), (-179.9, -10.0),
     (0.5, 51.5), (5.0, 60.0), (20.0, 83.9), (-70.0, -79.9)],
)  # fmt: skip
def test_utm_zone_matches_the_pyproj_database_query(lon_lat):
    # pyproj: the EPSG areas of use of the WGS 84 UTM zones
    lon, lat = lon_lat
    infos = query_utm_crs_info(
        datum_name="WGS 84", area_of_interest=AreaOfInterest(lon, lat, lon, lat)
    )
    assert utm_for(lon, lat).to_epsg() in {int(i.code) for i in infos}


def test_no_utm_zone_in_the_polar_regions():
    # limiting case: beyond 84° N no UTM zone applies (the pyproj query finds none either)
    assert not query_utm_crs_info(
        datum_name="WGS 84", area_of_interest=AreaOfInterest(10.0, 85.0, 10.0, 85.0)
    )
    with pytest.raises(ValueError, match="no UTM zone covers"):
        utm_for(10.0, 85.0)


# ---------------------------------------------------------------------------------------------
# the layers' own CRS, no [site] crs


def test_web_mercator_layers_go_to_the_local_utm_zone_with_geodesic_lengths(tmp_path):
    frames = {k: v.to_crs("EPSG:3857") for k, v in base_frames().items()}
    site = layers.read_site(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert site.crs.to_epsg() == 32633
    assert site.crs_note.startswith(
        "EPSG:32633 (WGS 84 / UTM zone 33N), the local UTM zone of the site centre ("
    )
    assert "layers in EPSG:3857 (WGS 84 / Pseudo-Mercator) would lengthen distances by" in (
        site.crs_note
    )
    # pyproj.Geod (WGS 84): each trench's length is its geodesic length within 0.05 %; what is
    # left is UTM's own scale factor, 0.9996 near the central meridian (0.04 % short)
    geod = pyproj.Geod(ellps="WGS84")
    geodesic = [geod.geometry_length(g) for g in base_frames()["trenches"].to_crs(WGS84).geometry]
    np.testing.assert_allclose(shapely.length(site.trenches.geometry.values), geodesic, rtol=5e-4)


def test_layers_in_feet_go_to_the_local_utm_zone(tmp_path):
    # the test site moved to Long Island (73° W, 40.8° N) in NAD83 / New York Long Island (ftUS)
    frames = {k: v.to_crs("EPSG:2263") for k, v in lonlat_frames(-88.0, -7.05).items()}
    site = layers.read_site(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert site.crs.to_epsg() == 32618  # 73° W lies in zone 18 (78°–72° W)
    assert "layers in EPSG:2263 (NAD83 / New York Long Island (ftUS)) are in US survey foot" in (
        site.crs_note
    )
    geod = pyproj.Geod(ellps="WGS84")
    geodesic = [geod.geometry_length(g) for g in frames["trenches"].to_crs(WGS84).geometry]
    # pyproj.Geod; UTM 18N's scale 2° from its meridian at 40.8° N is 0.99995: within 0.05 %
    np.testing.assert_allclose(shapely.length(site.trenches.geometry.values), geodesic, rtol=5e-4)


def test_a_distorting_national_crs_is_replaced_and_its_note_kept(tmp_path):
    # the rule is general, not only for Web Mercator: trenches in ETRS89 / UTM zone 32N, 6° from
    # that zone's meridian, beside lon/lat layers that place the site. UTM 32N would lengthen
    # lengths by about 0.21 % here (first-order TM: 0.9996 (1 + (6° cos 47.85°)²/2) − 1), so
    # the local zone 33N is used; 32N's area of use (6°–12° E) is left by 3° east: a note.
    frames = lonlat_frames()
    frames["trenches"] = frames["trenches"].to_crs("EPSG:25832")
    site = layers.read_site(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert site.crs.to_epsg() == 32633
    match = re.search(
        r"layers in EPSG:25832 \(ETRS89 / UTM zone 32N\) would lengthen distances by "
        r"(\d\.\d{3}) % here \(limit 0\.100 %\)",
        site.crs_note,
    )
    assert match, site.crs_note
    a = math.radians(6.0) * math.cos(math.radians(site_lat()))
    assert float(match.group(1)) == pytest.approx(100 * (0.9996 * (1 + a * a / 2) - 1), abs=0.005)
    assert "trenches: the site lies 3.0° east of the area of use of EPSG:25832" in site.crs_note


def test_geographic_layers_note_their_utm_zone_and_scale(tmp_path):
    site = layers.read_site(write_site(tmp_path / "s", lonlat_frames()))
    assert site.crs.to_epsg() == 32633
    # UTM 33N on its central meridian: k0 = 0.9996, 0.040 % short
    assert site.crs_note.endswith(
        ": the layers are geographic (lon/lat); scale error on the site −0.040 %"
    )


# ---------------------------------------------------------------------------------------------
# [site] crs: refused when unfit, through the command line


def test_site_crs_web_mercator_is_refused(tmp_path):
    code, errors, output = check(write_site(tmp_path / "s", toml=site_toml(crs="EPSG:3857")))
    assert code == 2
    assert len(errors) == 1, errors
    prefix = (
        "error: site.toml 'site.crs': EPSG:3857 (WGS 84 / Pseudo-Mercator) does not suit this "
        "site: it would lengthen distances by "
    )
    assert errors[0].startswith(prefix) and errors[0].endswith(SUGGEST_UTM33), errors[0]
    pct = float(re.match(r"([\d.]+) % on the site \(limit 0\.100 %\)", errors[0][len(prefix) :])[1])
    # Pseudo-Mercator applies the sphere's y = a ln tan(π/4 + φ/2) to WGS 84 latitudes: along
    # the meridian it stretches a·sec φ dφ over the ellipsoid's M dφ (Snyder 1987, radius of
    # curvature in the meridian M = a (1 − e²) / (1 − e² sin² φ)^{3/2}); 0.1 % = the message's
    # rounding plus the site's own extent
    phi = math.radians(site_lat())
    k_meridian = (1 - E2 * math.sin(phi) ** 2) ** 1.5 / ((1 - E2) * math.cos(phi))
    assert pct == pytest.approx(100 * (k_meridian - 1), abs=0.1)
    assert "Traceback" not in output


def test_site_crs_two_utm_zones_away_is_refused(tmp_path):
    code, errors, _ = check(write_site(tmp_path / "s", toml=site_toml(crs="EPSG:32631")))
    assert code == 2
    # 0.950 %: first-order TM 0.9996 (1 + (12° cos 47.85°)²/2) − 1 = 0.947 % (Snyder 1987);
    # the series' next term C·A²/2 adds 0.003 % at A = 0.14 (C = e'² cos² φ = 0.003)
    assert errors == [
        "error: site.toml 'site.crs': EPSG:32631 (WGS 84 / UTM zone 31N) does not suit this site: "
        "the site reaches 9.0° east of its area of use (Between 0°E and 6°E, northern hemisphere "
        "between equator and 84°N, onshore and offshore: 0° E…6° E, 0° N…84° N) and it would "
        "lengthen distances by 0.950 % on the site (limit 0.100 %)" + SUGGEST_UTM33
    ]


def test_site_crs_in_feet_is_refused(tmp_path):
    code, errors, _ = check(write_site(tmp_path / "s", toml=site_toml(crs="EPSG:2263")))
    assert code == 2
    assert errors == [
        "error: site.toml 'site.crs': EPSG:2263 (NAD83 / New York Long Island (ftUS)) has axes "
        "in US survey foot, not metres" + SUGGEST_UTM33
    ]


def test_site_crs_geographic_is_refused(tmp_path):
    code, errors, _ = check(write_site(tmp_path / "s", toml=site_toml(crs="EPSG:4326")))
    assert code == 2
    assert errors == [
        "error: site.toml 'site.crs': EPSG:4326 (WGS 84) is not a projected CRS in metres: it is "
        "geographic (axes in degree)" + SUGGEST_UTM33
    ]


@pytest.mark.parametrize(
    ("code", "label"),
    [
        ("EPSG:25833", "EPSG:25833 (ETRS89 / UTM zone 33N)"),  # national UTM, ETRS89
        ("EPSG:31287", "EPSG:31287 (MGI / Austria Lambert)"),  # national Lambert conformal
    ],
)
def test_national_metric_crs_valid_at_the_site_is_accepted(tmp_path, code, label):
    site = layers.read_site(write_site(tmp_path / "s", toml=site_toml(crs=code)))
    assert site.crs.equals(pyproj.CRS(code))
    assert site.crs_note.startswith(f"{label}, from [site] crs; scale error on the site −0.0")
    result = runner.invoke(app, ["check", str(tmp_path / "s")])
    assert result.exit_code == 0, result.stderr
    assert f"CRS      {label}, from [site] crs" in result.output


def test_site_overhanging_its_utm_zone_a_little_is_accepted(tmp_path):
    # limiting case: 0.5° east of zone 33N's band (12°–18° E) lies within the 1° margin; the
    # scale check still applies (4.0° from the meridian: +0.044 %, below 0.1 %)
    root = write_site(tmp_path / "s", lonlat_frames(3.5), toml=site_toml(crs="EPSG:32633"))
    site = layers.read_site(root)
    assert site.crs.to_epsg() == 32633


def test_site_beyond_the_area_margin_is_refused_by_area_alone(tmp_path):
    # limiting case: 1.5° east of zone 33N's band, beyond the 1° margin; the scale error there
    # (4.5° from the meridian at 47.85° N) is +0.099 %, just under the limit, so only the area
    # of use refuses it
    root = write_site(tmp_path / "s", lonlat_frames(4.5), toml=site_toml(crs="EPSG:32633"))
    code, errors, _ = check(root)
    assert code == 2
    assert errors == [
        "error: site.toml 'site.crs': EPSG:32633 (WGS 84 / UTM zone 33N) does not suit this site: "
        "the site reaches 1.5° east of its area of use (Between 12°E and 18°E, northern "
        "hemisphere between equator and 84°N, onshore and offshore: 12° E…18° E, 0° N…84° N); "
        "use a projected CRS in metres such as EPSG:32634 (WGS 84 / UTM zone 34N), the local UTM "
        "zone"
    ]


# custom transverse Mercator on the site's meridian (15° E, the test site's UTM 33N meridian);
# its scale factor k is its scale error on the site (Snyder: k = k0 on the central meridian;
# the site's 150 m reach 0.002° of longitude, (Δλ cos φ)²/2 ≈ 1e-9). It has no area of use,
# so that check is skipped (limiting case: CRSs without an area of use).
def custom_tm(k: float) -> str:
    return f"+proj=tmerc +lat_0=0 +lon_0=15 +k={k} +x_0=500000 +y_0=0 +datum=WGS84 +units=m"


def test_scale_error_just_under_the_limit_is_accepted(tmp_path):
    # limiting case: 0.099 % < 0.1 %
    site = layers.read_site(write_site(tmp_path / "s", toml=site_toml(crs=custom_tm(1.00099))))
    assert site.crs.equals(pyproj.CRS(custom_tm(1.00099)))
    assert site.crs_note.endswith("from [site] crs; scale error on the site +0.099 %")
    assert MAX_SCALE_ERROR == 1e-3


def test_scale_error_just_over_the_limit_is_refused(tmp_path):
    # limiting case: 0.101 % > 0.1 %
    code, errors, _ = check(write_site(tmp_path / "s", toml=site_toml(crs=custom_tm(1.00101))))
    assert code == 2
    assert errors == [
        "error: site.toml 'site.crs': " + pyproj.CRS(custom_tm(1.00101)).to_string()
        + " does not suit this site: it would lengthen distances by 0.101 % on the site "
        "(limit 0.100 %)" + SUGGEST_UTM33
    ]  # fmt: skip


# ---------------------------------------------------------------------------------------------
# misplaced layers: swapped axes, wrong CRS


def test_one_layer_with_latitude_and_longitude_swapped(tmp_path):
    frames = lonlat_frames()
    frames["combiners"] = swapped(frames["combiners"])  # GeoJSON holding (lat, lon)
    code, errors, output = check(write_site(tmp_path / "s", frames))
    assert code == 2
    # only the swapped layer is blamed
    assert len(errors) == 1, errors
    match = re.fullmatch(
        r"error: combiners: lies ([\d,]+) km from the other layers \(rows, inverters, trenches, "
        r"grid\); a site's layers lie within 50 km of each other: its coordinates look like "
        r"\(latitude, longitude\); GeoJSON and most formats store longitude first "
        r"\(x = longitude, y = latitude\)",
        errors[0],
    )
    assert match, errors[0]
    # pyproj.Geod: from the swapped combiner to the nearest corner of the other layers' extent
    lon, lat = frames["combiners"].geometry.iloc[0].coords[0]
    others = np.array([f.total_bounds for k, f in frames.items() if k != "combiners"])
    corner = (others[:, 2].max(), others[:, 1].min())  # east and south: towards (47.8 E, 15 N)
    km = pyproj.Geod(ellps="WGS84").inv(lon, lat, *corner)[2] / 1000
    assert int(match.group(1).replace(",", "")) == pytest.approx(km, abs=1)
    assert "Traceback" not in output


def test_latitude_out_of_range_gets_the_axis_order_hint(tmp_path):
    # the test site moved to 135° E, 22° S: with lat/lon swapped its latitude would be 135°
    frames = lonlat_frames(120.0, -70.0)
    frames["rows"] = swapped(frames["rows"])
    code, errors, output = check(write_site(tmp_path / "s", frames))
    assert code == 2
    assert len(errors) == 1, errors
    assert re.fullmatch(
        r"error: rows: latitude 135\.\d+° is out of range \(±90°\): its coordinates look like "
        r"\(latitude, longitude\); GeoJSON and most formats store longitude first "
        r"\(x = longitude, y = latitude\)",
        errors[0],
    ), errors[0]
    assert "Traceback" not in output


def test_projected_metres_labelled_as_degrees(tmp_path):
    frames = base_frames()
    frames["grid"] = frames["grid"].set_crs(WGS84, allow_override=True)  # UTM numbers as lon/lat
    code, errors, _ = check(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert code == 2
    assert errors == [
        "error: grid: latitude 5.3e+06° is out of range (±90°): its coordinates look like "
        "metres of a projected CRS, not degrees: the file's CRS (EPSG:4326 (WGS 84)) is not the "
        "CRS they are in"
    ]


def test_whole_site_with_swapped_projected_axes(tmp_path):
    # every layer's (easting, northing) stored as (northing, easting); nothing places the site
    frames = {k: swapped(v) for k, v in base_frames().items()}
    code, errors, _ = check(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert code == 2
    assert len(errors) == 1, errors
    assert errors[0].startswith(
        "error: site: the layers (rows, combiners, inverters, trenches, grid) lie "
    )
    where = " east of the area of use of EPSG:32633 (WGS 84 / UTM zone 33N) (Between 12°E"
    assert where in errors[0]
    assert errors[0].endswith(
        "their coordinates look like (y, x), northing first; GeoJSON and most formats store x "
        "(easting) first; check the CRS the files declare and the axis order (x = easting or "
        "longitude first); a file without a CRS takes [site] source_crs"
    )


def test_source_crs_that_does_not_fit_the_coordinates(tmp_path):
    # shapefiles without .prj holding lon/lat degrees, declared as UTM 33N metres: (15, 47.85)
    # in UTM 33N lies 500 km west of the zone's meridian, at 10.5° E on the equator
    frames = lonlat_frames()
    root = write_site(tmp_path / "s", frames, fmt="shp", toml=site_toml(source_crs="EPSG:32633"))
    for prj in root.glob("*.prj"):
        prj.unlink()
    code, errors, _ = check(root)
    assert code == 2
    assert errors == [
        "error: site.toml 'site.source_crs': the layers without a CRS (rows, combiners, "
        "inverters, trenches, grid) lie 1.5° west of the area of use of EPSG:32633 (WGS 84 / "
        "UTM zone 33N) (Between 12°E and 18°E, northern hemisphere between equator and 84°N, "
        "onshore and offshore: 12° E…18° E, 0° N…84° N): their coordinates look like degrees "
        "(longitude, latitude), not metres; check that their coordinates are in this CRS, x "
        "(easting or longitude) first, or correct [site] source_crs"
    ]


def test_layer_far_from_the_others_names_its_crs(tmp_path):
    # limiting case of the 50 km threshold: the grid point 80 km north of the site, no swap
    # brings it back
    frames = base_frames()
    frames["grid"] = moved(frames["grid"], 0.0, 80_000.0)
    code, errors, _ = check(write_site(tmp_path / "s", frames, fmt="gpkg"))
    assert code == 2
    assert errors == [
        "error: grid: lies 80 km from the other layers (rows, combiners, inverters, trenches); a "
        "site's layers lie within 50 km of each other: check its CRS (the file says EPSG:32633 "
        "(WGS 84 / UTM zone 33N))"
    ]
