"""Choosing the working CRS, checking that it measures lengths truly, and reprojecting into it.

Rules (in order):

1. ``[site] crs`` in site.toml, when given, is the working CRS. It must be projected with
   metre axes, hold the site within its area of use (:data:`AREA_MARGIN_DEG` of margin) and
   distort lengths on the site by at most :data:`MAX_SCALE_ERROR` (or no more than the local
   UTM zone would); otherwise it is refused, and the message names the local UTM zone.
2. Otherwise the first of the layers' own projected CRSs in metres that distorts lengths on the
   site by at most :data:`MAX_SCALE_ERROR` (or no more than the local UTM zone) is the working
   CRS; layers in another CRS are reprojected into it.
3. Otherwise (geographic layers; layers in feet; layers whose CRS distorts lengths here, such as
   Web Mercator, EPSG:3857) the local UTM zone of the site's centre (:func:`utm_for`) is the
   working CRS, and the note says why.

A layer without a CRS is refused unless ``[site] source_crs`` declares the CRS its coordinates
are in; then that is assumed, and the note says so.

Before choosing, each layer is placed on the earth from its bounding box (WGS 84 lon/lat):

- geographic coordinates out of range (|latitude| > 90°) are refused;
- a layer lying more than :data:`FAR_LAYER_M` from the other layers is refused (a PV site is a
  few km across);
- layers lying outside the area of use of ``[site] source_crs`` are refused, and so are layers
  outside the area of use of their file's CRS when their coordinates swapped (or read as
  degrees) would fit it; otherwise the note says the site lies outside it.

Where swapping a layer's x and y would put it where it belongs, the message says its
coordinates look like (latitude, longitude) — or (y, x) for a projected CRS. Every check works
on bounding boxes and a few dozen sample points, never per feature.

References: pyproj (PROJ transformations, CRS area of use; ``pyproj.Geod``
geodesics on the CRS's own ellipsoid, Karney's algorithm).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import geopandas as gpd
import numpy as np
import pyproj
import shapely

from .errors import Problem
from .sources import SITE_TOML

#: largest relative length error a working CRS may have on the site (0.1 %, common practice:
#: well below the slack allowances added to cable lengths, and met by every UTM zone within
#: its own 6° band — the zone's scale factor at the band edge is 1.00097 at the equator)
MAX_SCALE_ERROR = 1e-3
#: margin [degrees] around a CRS's area of use within which the site is accepted, so a site
#: overhanging a UTM zone edge a little is not refused (the scale check still applies)
AREA_MARGIN_DEG = 1.0
#: a layer whose bounding box lies farther than this [m] from the other layers' is misplaced:
#: a PV site is a few km across, a wrong CRS or swapped axes move a layer by hundreds of km
FAR_LAYER_M = 50_000.0
#: sample points per side of the site's bounding box for the scale check (5 × 5 points)
SAMPLE_GRID = 5
#: length [m of the projected CRS] of each sample line of the scale check
SAMPLE_LINE_M = 100.0

WGS84 = pyproj.CRS.from_epsg(4326)
_GEOD_WGS84 = pyproj.Geod(ellps="WGS84")
_PROJ_ERRORS = (pyproj.exceptions.ProjError, pyproj.exceptions.CRSError)


def parse_crs(text: str, where: str) -> tuple[pyproj.CRS | None, list[Problem]]:
    """A CRS from user text (``"EPSG:32633"``, WKT, PROJ string)."""
    try:
        return pyproj.CRS.from_user_input(text), []
    except (pyproj.exceptions.CRSError, TypeError) as exc:
        return None, [Problem(SITE_TOML, where, f"unknown CRS {text!r}: {exc}")]


def is_metric(crs: pyproj.CRS) -> bool:
    """True for a projected CRS whose axes are in metres."""
    if not crs.is_projected:
        return False
    units = {(ax.unit_name or "").lower() for ax in crs.axis_info}
    return units <= {"metre", "meter", "m"}


def crs_label(crs: pyproj.CRS) -> str:
    """The CRS in words for messages: ``"EPSG:32633 (WGS 84 / UTM zone 33N)"``.

    A CRS without an authority code is shown by its name, or by its PROJ string when it has
    none. Labels are cached: finding that a CRS has no code searches the whole database.
    """
    key = crs.to_wkt()
    label = _LABELS.get(key)
    if label is None:
        auth = crs.to_authority()
        name = crs.name if crs.name and crs.name != "unknown" else ""
        if auth:
            code = f"{auth[0]}:{auth[1]}"
            label = f"{code} ({name})" if name else code
        else:
            label = name or crs.to_string()
        _LABELS[key] = label
    return label


_LABELS: dict[str, str] = {}


def utm_for(lon: float, lat: float) -> pyproj.CRS:
    """The WGS 84 / UTM zone CRS containing (lon, lat) [degrees].

    Zones are the 6° bands of longitude eastwards from 180° W, north (EPSG:326zz) from the
    equator to 84° N and south (EPSG:327zz) from 80° S, as the EPSG areas of use of the WGS 84
    UTM zones define them (the tests check the choice against pyproj's UTM query, which takes
    tens of milliseconds where this takes microseconds).

    Raises
    ------
    ValueError
        When no UTM zone covers the point (beyond 84° N or 80° S: the polar regions).
    """
    if not (-80.0 <= lat <= 84.0 and math.isfinite(lon)):
        raise ValueError(f"no UTM zone covers ({lon:.5f}, {lat:.5f})")
    zone = min(int(((lon + 180.0) % 360.0) // 6.0) + 1, 60)
    return pyproj.CRS.from_epsg((32600 if lat >= 0.0 else 32700) + zone)


def scale_error(crs: pyproj.CRS, bounds_lonlat: Sequence[float]) -> float:
    """Largest relative length error of ``crs`` on a WGS 84 lon/lat box, in any direction.

    At each of :data:`SAMPLE_GRID` × :data:`SAMPLE_GRID` points spread over the box, four lines
    of :data:`SAMPLE_LINE_M` projected metres centred on the point (along x, along y and along
    both diagonals) are compared with the geodesic distance between their end points on the
    CRS's own ellipsoid. The four lengths give the local metric (ground length² per projected
    length², a 2 × 2 symmetric matrix); its eigenvalues give the largest and the smallest scale
    over all directions, so a projection that is not conformal (e.g. Lambert azimuthal
    equal-area, whose worst direction is oblique to the axes) is measured at its worst.

    Parameters
    ----------
    crs : pyproj.CRS
        A projected CRS in metres.
    bounds_lonlat : sequence of 4 float
        (west, south, east, north) [degrees, WGS 84]; ``east`` may exceed 180.

    Returns
    -------
    float
        ``projected length / geodesic length − 1`` in the direction and at the sample point
        where its magnitude is largest: positive where the CRS lengthens distances. NaN when
        the box cannot be projected.

    Notes
    -----
    The extremes are the semi-axes of Tissot's indicatrix, ``a`` and ``b``, at the sample
    points. For a conformal projection both equal the point scale factor ``k``: Mercator
    ``k = sec φ`` on the sphere; transverse Mercator ``k ≈ k0 (1 + (Δλ cos φ)² / 2)`` (Snyder,
    *Map Projections — A Working Manual*, USGS Professional Paper 1395, 1987, the Mercator and
    transverse Mercator chapters). Geodesics: pyproj ``Geod.inv`` (Karney's algorithm).
    """
    west, south, east, north = (float(v) for v in bounds_lonlat)
    lon, lat = np.meshgrid(
        np.linspace(west, east, SAMPLE_GRID), np.linspace(south, north, SAMPLE_GRID)
    )
    geodetic = crs.geodetic_crs
    if geodetic is None:
        return math.nan
    half = SAMPLE_LINE_M / 2
    diag = math.sqrt(0.5)
    dx = np.array([1.0, 0.0, diag, diag]) * half  # x, y, diagonal, anti-diagonal
    dy = np.array([0.0, 1.0, diag, -diag]) * half
    try:
        x, y = _transformer(WGS84, crs).transform(lon.ravel(), lat.ravel())
        x, y = np.asarray(x)[:, None], np.asarray(y)[:, None]
        back = _transformer(crs, geodetic)
        lon0, lat0 = back.transform((x - dx).ravel(), (y - dy).ravel())
        lon1, lat1 = back.transform((x + dx).ravel(), (y + dy).ravel())
        _, _, dist = crs.get_geod().inv(lon0, lat0, lon1, lat1)
    except _PROJ_ERRORS:
        return math.nan
    ground = (np.asarray(dist, dtype=float) / SAMPLE_LINE_M).reshape(-1, 4) ** 2
    # metric G: ground² = uᵀ G u for a unit projected direction u
    g11, g22 = ground[:, 0], ground[:, 1]
    g12 = (ground[:, 2] - ground[:, 3]) / 2
    mean, radius = (g11 + g22) / 2, np.hypot((g11 - g22) / 2, g12)
    with np.errstate(invalid="ignore", divide="ignore"):
        errors = 1.0 / np.sqrt(np.concatenate([mean - radius, mean + radius])) - 1.0
    if not np.all(np.isfinite(errors)):
        return math.nan
    return float(errors[np.argmax(np.abs(errors))])


def area_of_use_overhang(
    crs: pyproj.CRS, bounds_lonlat: Sequence[float], margin_deg: float = AREA_MARGIN_DEG
) -> str | None:
    """How a lon/lat box leaves the area of use of ``crs`` by more than ``margin_deg``.

    Returns None when the box lies within the area of use widened by ``margin_deg`` on every
    side, or when the CRS has no area of use; otherwise words such as ``"9.0° east"`` (how far
    the box reaches beyond the area of use itself [degrees], per direction).
    """
    aou = crs.area_of_use
    if aou is None:
        return None
    a_west, a_south, a_east, a_north = aou.bounds
    if a_east < a_west:  # the area crosses the antimeridian
        a_east += 360.0
    west, south, east, north = (float(v) for v in bounds_lonlat)
    shifts = (0.0, -360.0, 360.0)
    beyond = [(max(a_west - (west + s), 0.0), max((east + s) - a_east, 0.0)) for s in shifts]
    by_west, by_east = min(beyond, key=lambda b: max(b))
    parts = []
    for deg, word in (
        (north - a_north, "north"),
        (a_south - south, "south"),
        (by_east, "east"),
        (by_west, "west"),
    ):
        if deg > margin_deg:
            parts.append(f"{deg:.1f}° {word}")
    return " and ".join(parts) or None


def choose_working_crs(
    frames: dict[str, gpd.GeoDataFrame],
    site_crs: pyproj.CRS | None,
    source_crs: pyproj.CRS | None,
) -> tuple[pyproj.CRS | None, str, dict[str, gpd.GeoDataFrame], list[Problem]]:
    """Assign missing CRSs, place the layers, pick the working CRS and reproject into it.

    Parameters
    ----------
    frames : dict of str to GeoDataFrame
        The site's layers, each in its file's CRS (or none).
    site_crs, source_crs : pyproj.CRS or None
        ``[site] crs`` and ``[site] source_crs`` of site.toml.

    Returns
    -------
    tuple
        (working CRS, note, reprojected frames, problems). ``note`` says how the CRS was chosen
        and its measured scale error on the site, for the check summary and summary.json. When
        there are problems the CRS is None and the frames are returned as given.
    """
    problems: list[Problem] = []
    notes: list[str] = []
    assigned: dict[str, gpd.GeoDataFrame] = {}
    for name, frame in frames.items():
        if frame.crs is None:
            if source_crs is None:
                problems.append(
                    Problem(
                        name,
                        None,
                        "has no CRS; add one to the file (e.g. a .prj for a "
                        "shapefile) or declare it with [site] source_crs = 'EPSG:…'",
                    )
                )
                continue
            frame = frame.set_crs(source_crs)
            notes.append(
                f"{name}: no CRS in file, assumed {source_crs.to_string()} ([site] source_crs)"
            )
        assigned[name] = frame
    if problems:
        return None, "", frames, problems

    extents: list[_Extent] = []
    for name, frame in assigned.items():
        extent, p = _place(name, frame, from_source=frames[name].crs is None)
        problems += p
        if extent is not None:
            extents.append(extent)
    if not extents:
        if not problems:
            problems.append(Problem("site", None, "no geometry to place the site"))
        return None, "", frames, problems
    main, far = _split_far(extents)
    problems += [_far_problem(e, main) for e in far]
    box = _union([e.lonlat for e in main])
    lon, lat = _centre(box)
    try:
        utm = utm_for(lon, lat)
    except ValueError:
        problems.append(
            Problem(
                "site",
                None,
                f"lies at ({lon:.5f}, {lat:.5f}), where no UTM zone applies (polar region): "
                "set [site] crs to a projected CRS in metres made for the site",
            )
        )
        return None, "", frames, problems
    utm_error = scale_error(utm, box)
    suggestion = f"a projected CRS in metres such as {crs_label(utm)}, the local UTM zone"
    problems += _declared_crs_problems(main, notes)

    crs: pyproj.CRS | None
    if site_crs is not None:
        reason = _unsuitable(site_crs, box, utm_error)
        if reason:
            problems.append(
                Problem(SITE_TOML, "site.crs", f"{crs_label(site_crs)} {reason}; use {suggestion}")
            )
            crs = None
        else:
            crs, how = site_crs, "from [site] crs"
    else:
        crs, how = _from_layers(main, box, utm, utm_error, (lon, lat))
    if problems or crs is None:
        return None, "", frames, problems

    out: dict[str, gpd.GeoDataFrame] = {}
    for name, frame in assigned.items():
        if not frame.crs.equals(crs):
            try:
                frame = frame.to_crs(crs)
            except Exception as exc:  # PROJ, pyproj and geopandas raise several types
                problems.append(
                    Problem(name, None, f"cannot reproject from {crs_label(frame.crs)}: {exc}")
                )
                continue
        out[name] = frame
    if problems:
        return None, "", frames, problems
    error = utm_error if crs.equals(utm) else scale_error(crs, box)
    sign = "+" if error >= 0 else "−"
    note = f"{crs_label(crs)}, {how}; scale error on the site {sign}{_pct(error)}"
    if notes:
        note += "; " + "; ".join(notes)
    return crs, note, out, problems


@dataclass(frozen=True)
class _Extent:
    """Where one layer lies: bounding box in its own CRS and in WGS 84 lon/lat."""

    name: str
    crs: pyproj.CRS
    raw: tuple[float, float, float, float]  # (xmin, ymin, xmax, ymax) in ``crs``
    lonlat: tuple[float, float, float, float]  # (west, south, east, north) [degrees]
    features: int
    from_source: bool  # the CRS is [site] source_crs (the file has none)


def _place(
    name: str, frame: gpd.GeoDataFrame, from_source: bool
) -> tuple[_Extent | None, list[Problem]]:
    """The layer's extent, or a problem when its coordinates cannot lie on the earth."""
    bounds = shapely.bounds(np.asarray(frame.geometry.values))  # NaN for missing or empty
    placed = ~np.isnan(bounds[:, 0])
    n = int(placed.sum())
    if n == 0:
        return None, []
    b = bounds[placed]
    raw = (b[:, 0].min(), b[:, 1].min(), b[:, 2].max(), b[:, 3].max())
    raw = tuple(float(v) for v in raw)
    crs = frame.crs
    whose = "[site] source_crs" if from_source else "the file's CRS"
    if crs.is_geographic and not _in_degree_range(raw):
        xmin, ymin, xmax, ymax = raw
        if ymax > 90.0 or ymin < -90.0:
            what, bad, limit = "latitude", ymax if ymax > 90.0 else ymin, "±90°"
        else:
            what, bad, limit = "longitude", xmax if xmax > 360.0 else xmin, "±360°"
        if _in_degree_range((ymin, xmin, ymax, xmax)):
            hint = _swap_hint(crs)
        else:
            hint = (
                "its coordinates look like metres of a projected CRS, not degrees: "
                f"{whose} ({crs_label(crs)}) is not the CRS they are in"
            )
        return None, [Problem(name, None, f"{what} {bad:.6g}° is out of range ({limit}): {hint}")]
    lonlat = _to_lonlat(crs, raw)
    if lonlat is None:
        return None, [
            Problem(
                name,
                None,
                f"its coordinates ({_box_text(raw)}) cannot be placed on the earth in "
                f"{crs_label(crs)}: check {whose} and the axis order (x = easting or longitude "
                "first)",
            )
        ]
    return _Extent(name, crs, raw, lonlat, n, from_source), []


def _swap_hint(crs: pyproj.CRS, whose: str = "its") -> str:
    """The axis-order hint: the coordinates look swapped."""
    if crs.is_geographic:
        return (
            f"{whose} coordinates look like (latitude, longitude); GeoJSON and most formats "
            "store longitude first (x = longitude, y = latitude)"
        )
    return (
        f"{whose} coordinates look like (y, x), northing first; GeoJSON and most formats "
        "store x (easting) first"
    )


def _to_lonlat(crs: pyproj.CRS, raw: Sequence[float]) -> tuple[float, float, float, float] | None:
    """A box of ``crs`` as a WGS 84 lon/lat box (east > west, east up to 540°), or None."""
    if crs.is_geographic and not _in_degree_range(raw):
        return None
    try:
        box = _transformer(crs, WGS84).transform_bounds(*raw, densify_pts=21)
    except _PROJ_ERRORS:
        return None
    if not np.all(np.isfinite(box)):
        return None
    west, south, east, north = (float(v) for v in box)
    if east < west:  # across the antimeridian
        east += 360.0
    return west, south, east, north


def _in_degree_range(raw: Sequence[float]) -> bool:
    """True when a box (x, y) fits geographic coordinates: |latitude| ≤ 90°, |longitude| ≤ 360°
    (longitudes 0…360° are accepted as well as −180…180°)."""
    return _within(raw, 360.0, 90.0)


def _within(raw: Sequence[float], x_limit: float, y_limit: float) -> bool:
    """True when a box's |x| ≤ ``x_limit`` and |y| ≤ ``y_limit``."""
    xmin, ymin, xmax, ymax = raw
    return max(abs(xmin), abs(xmax)) <= x_limit and max(abs(ymin), abs(ymax)) <= y_limit


def _split_far(extents: list[_Extent]) -> tuple[list[_Extent], list[_Extent]]:
    """(the layers that lie together, the layers far from them).

    Layers are linked when their boxes lie within :data:`FAR_LAYER_M` of each other; the site
    is the linked group with the most layers, then the most features, then the first layer in
    reading order.
    """
    n = len(extents)
    group = list(range(n))

    def root(i: int) -> int:
        while group[i] != i:
            i = group[i]
        return i

    for i in range(n):
        for j in range(i + 1, n):
            if _box_gap_m(extents[i].lonlat, extents[j].lonlat) <= FAR_LAYER_M:
                group[root(j)] = root(i)
    members: dict[int, list[int]] = {}
    for i in range(n):
        members.setdefault(root(i), []).append(i)
    best = max(
        members.values(),
        key=lambda m: (len(m), sum(extents[i].features for i in m), -min(m)),
    )
    return [extents[i] for i in best], [extents[i] for i in range(n) if i not in best]


def _far_problem(extent: _Extent, main: list[_Extent]) -> Problem:
    gap = min(_box_gap_m(extent.lonlat, e.lonlat) for e in main)
    others = ", ".join(e.name for e in main)
    text = (
        f"lies {gap / 1000:,.0f} km from the other layers ({others}); a site's layers lie "
        f"within {FAR_LAYER_M / 1000:.0f} km of each other: "
    )
    if _swap_fits(extent, lambda box: min(_box_gap_m(box, e.lonlat) for e in main) <= FAR_LAYER_M):
        text += _swap_hint(extent.crs)
    elif extent.from_source:
        text += f"check [site] source_crs ({crs_label(extent.crs)}, assumed for this layer)"
    else:
        text += f"check its CRS (the file says {crs_label(extent.crs)})"
    return Problem(extent.name, None, text)


def _swap_fits(extent: _Extent, fits) -> bool:
    """True when the layer's box with x and y swapped lies on the earth and ``fits(box)``."""
    xmin, ymin, xmax, ymax = extent.raw
    swapped = _to_lonlat(extent.crs, (ymin, xmin, ymax, xmax))
    return swapped is not None and bool(fits(swapped))


def _declared_crs_problems(main: list[_Extent], notes: list[str]) -> list[Problem]:
    """Layers outside the area of use of the CRS they declare (file or ``[site] source_crs``).

    - Outside ``[site] source_crs``: a problem on that key.
    - Outside a file's CRS while every layer lies outside its own CRS's area of use (nothing
      confirms where the site is): a problem (the coordinates may be swapped, or not in that
      CRS at all: local grid or degrees labelled as a projected CRS).
    - Outside a file's CRS while other layers, within their CRS's area of use, lie beside
      them: a note (the CRS is used beyond its area of use on purpose, e.g. one UTM zone for
      a whole country; the scale check guards the lengths).
    """
    problems: list[Problem] = []
    groups: dict[tuple[str, bool], list[_Extent]] = {}
    for e in main:
        groups.setdefault((e.crs.to_wkt(), e.from_source), []).append(e)
    outside = {}
    for key, members in groups.items():
        overhang = area_of_use_overhang(members[0].crs, _union([e.lonlat for e in members]))
        if overhang is not None:
            outside[key] = overhang
    confirmed = len(outside) < len(groups)
    for key, overhang in outside.items():
        members = groups[key]
        crs, from_source = members[0].crs, key[1]
        names = ", ".join(e.name for e in members)
        where = f"{overhang} of the area of use of {crs_label(crs)} ({_area_text(crs)})"
        if from_source:
            hint = _misplaced_hint(members)
            problems.append(
                Problem(
                    SITE_TOML,
                    "site.source_crs",
                    f"the layers without a CRS ({names}) lie {where}: "
                    + (f"{hint}; " if hint else "")
                    + "check that their coordinates are in this CRS, x (easting or longitude) "
                    "first, or correct [site] source_crs",
                )
            )
        elif not confirmed:
            hint = _misplaced_hint(members)
            problems.append(
                Problem(
                    "site",
                    None,
                    f"the layers ({names}) lie {where}: "
                    + (f"{hint}; " if hint else "")
                    + "check the CRS the files declare and the axis order (x = easting or "
                    "longitude first); a file without a CRS takes [site] source_crs",
                )
            )
        else:
            notes.append(f"{names}: the site lies {where}")
    return problems


def _misplaced_hint(members: list[_Extent]) -> str:
    """Why layers may lie outside their CRS's area of use: swapped axes, or degrees given as
    metres ('' when neither fits)."""
    crs = members[0].crs
    if all(_swap_fits(e, lambda b: area_of_use_overhang(crs, b) is None) for e in members):
        return _swap_hint(crs, "their")
    if crs.is_projected and _within(_union([e.raw for e in members]), 180.0, 90.0):
        return "their coordinates look like degrees (longitude, latitude), not metres"
    return ""


def _unsuitable(crs: pyproj.CRS, box, utm_error: float) -> str:
    """Why ``crs`` cannot be the working CRS on ``box`` ('' when it can)."""
    if not crs.is_projected:
        kind = "geographic" if crs.is_geographic else "not projected"
        return f"is not a projected CRS in metres: it is {kind} (axes in {_units(crs)})"
    if not is_metric(crs):
        return f"has axes in {_units(crs)}, not metres"
    reasons = []
    overhang = area_of_use_overhang(crs, box)
    if overhang is not None:
        reasons.append(f"the site reaches {overhang} of its area of use ({_area_text(crs)})")
    error = scale_error(crs, box)
    if math.isnan(error):
        reasons.append("the site cannot be projected in it")
    elif _too_distorting(error, utm_error):
        reasons.append(
            f"it would {_change(error)} distances by {_pct(error)} on the site "
            f"(limit {_pct(MAX_SCALE_ERROR)})"
        )
    return "does not suit this site: " + " and ".join(reasons) if reasons else ""


def _from_layers(
    main: list[_Extent], box, utm: pyproj.CRS, utm_error: float, centre: tuple[float, float]
) -> tuple[pyproj.CRS, str]:
    """The working CRS from the layers' own CRSs, or the local UTM zone: (crs, how)."""
    why: list[str] = []
    seen: list[pyproj.CRS] = []
    for crs in (e.crs for e in main):
        if any(crs.equals(s) for s in seen):
            continue
        seen.append(crs)
        if not crs.is_projected:
            continue
        if not is_metric(crs):
            why.append(f"layers in {crs_label(crs)} are in {_units(crs)}")
            continue
        error = scale_error(crs, box)
        if math.isnan(error):
            why.append(f"layers in {crs_label(crs)} cannot be measured on the site")
        elif _too_distorting(error, utm_error):
            why.append(
                f"layers in {crs_label(crs)} would {_change(error)} distances by "
                f"{_pct(error)} here (limit {_pct(MAX_SCALE_ERROR)})"
            )
        else:
            return crs, "from the layers' projected CRS"
    lon, lat = centre
    how = f"the local UTM zone of the site centre ({lon:.5f}, {lat:.5f})"
    if why:
        how += ": " + ", ".join(why)
    else:
        how += ": the layers are geographic (lon/lat)"
    return utm, how


def _too_distorting(error: float, utm_error: float) -> bool:
    """Beyond the limit and worse than the local UTM zone (which, at the edge of its band near
    the equator, may itself just exceed the limit: then the zone is still the best choice)."""
    utm = abs(utm_error) if math.isfinite(utm_error) else 0.0
    return abs(error) > MAX_SCALE_ERROR and abs(error) > utm + 1e-9


def _units(crs: pyproj.CRS) -> str:
    names = sorted({(ax.unit_name or "unknown unit") for ax in crs.axis_info})
    return " and ".join(names) or "unknown units"


def _change(error: float) -> str:
    return "lengthen" if error > 0 else "shorten"


def _pct(error: float) -> str:
    pct = abs(error) * 100
    return f"{pct:.3f} %" if pct < 1 else f"{pct:.2f} %" if pct < 10 else f"{pct:.1f} %"


def _area_text(crs: pyproj.CRS) -> str:
    aou = crs.area_of_use
    if aou is None:
        return "no area of use"
    name = aou.name.split(". ")[0].rstrip(".")
    w, s, e, n = aou.bounds
    lons = f"{_deg(w, 'E', 'W')}…{_deg(e, 'E', 'W')}"
    return f"{name}: {lons}, {_deg(s, 'N', 'S')}…{_deg(n, 'N', 'S')}"


def _deg(value: float, positive: str, negative: str) -> str:
    return f"{abs(value):g}° {positive if value >= 0 else negative}"


def _box_text(box: Sequence[float]) -> str:
    xmin, ymin, xmax, ymax = box
    return f"x {xmin:.6g}…{xmax:.6g}, y {ymin:.6g}…{ymax:.6g}"


def _union(boxes: Sequence[Sequence[float]]) -> tuple[float, float, float, float]:
    b = np.asarray(boxes, dtype=float)
    return float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max())


def _centre(box: Sequence[float]) -> tuple[float, float]:
    west, south, east, north = box
    lon = (west + east) / 2
    return ((lon + 180.0) % 360.0) - 180.0, (south + north) / 2


def _box_gap_m(a: Sequence[float], b: Sequence[float]) -> float:
    """Geodesic distance [m] (WGS 84) between the nearest points of two lon/lat boxes.

    Longitudes are compared modulo 360°; where the boxes overlap in latitude the nearest points
    are taken at the middle of the overlap (a close estimate; exact where the boxes overlap in
    longitude).
    """
    best = math.inf
    for shift in (0.0, -360.0, 360.0):
        lon_a, lon_b = _nearest(a[0], a[2], b[0] + shift, b[2] + shift)
        lat_a, lat_b = _nearest(a[1], a[3], b[1], b[3])
        _, _, d = _GEOD_WGS84.inv(lon_a, lat_a, lon_b - shift, lat_b)
        best = min(best, float(d))
    return best


def _nearest(lo_a: float, hi_a: float, lo_b: float, hi_b: float) -> tuple[float, float]:
    """The nearest values of two intervals (the middle of their overlap when they overlap)."""
    if hi_a < lo_b:
        return hi_a, lo_b
    if hi_b < lo_a:
        return lo_a, hi_b
    mid = (max(lo_a, lo_b) + min(hi_a, hi_b)) / 2
    return mid, mid


_TRANSFORMERS: dict[tuple[str, str], pyproj.Transformer] = {}


def _transformer(src: pyproj.CRS, dst: pyproj.CRS) -> pyproj.Transformer:
    """A cached x/y-ordered transformer (building one costs more than the few points sent)."""
    key = (src.to_wkt(), dst.to_wkt())
    t = _TRANSFORMERS.get(key)
    if t is None:
        t = pyproj.Transformer.from_crs(src, dst, always_xy=True)
        _TRANSFORMERS[key] = t
    return t
