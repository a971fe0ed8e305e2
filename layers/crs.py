"""Choosing the working CRS and bringing every layer into it.

Rules (in order):

1. ``[site] crs`` in site.toml, when given, is the working CRS; it must be projected with
   metre units.
2. Otherwise, when the layers are in a projected metric CRS, the first one found (rows first)
   is the working CRS; layers in another CRS are reprojected into it.
3. Otherwise (geographic data, e.g. GeoJSON in WGS 84), the local UTM zone of the site's
   centre, found with pyproj's UTM query, is the working CRS.

A layer without a CRS is refused unless ``[site] source_crs`` declares the CRS its
coordinates are in; then that is assumed, and the summary says so.
"""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pyproj
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info

from .errors import Problem
from .sources import SITE_TOML


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


def utm_for(lon: float, lat: float) -> pyproj.CRS:
    """The WGS 84 / UTM zone CRS containing (lon, lat) (pyproj database query)."""
    infos = query_utm_crs_info(
        datum_name="WGS 84",
        area_of_interest=AreaOfInterest(lon, lat, lon, lat),
    )
    return pyproj.CRS.from_epsg(infos[0].code)


def choose_working_crs(
    frames: dict[str, gpd.GeoDataFrame],
    site_crs: pyproj.CRS | None,
    source_crs: pyproj.CRS | None,
) -> tuple[pyproj.CRS | None, str, dict[str, gpd.GeoDataFrame], list[Problem]]:
    """Assign missing CRSs, pick the working CRS and reproject every frame into it.

    Returns (crs, note, reprojected frames, problems). ``note`` says how the CRS was chosen,
    for the check summary.
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

    if site_crs is not None:
        if not is_metric(site_crs):
            return (
                None,
                "",
                frames,
                [
                    Problem(
                        SITE_TOML,
                        "site.crs",
                        f"{site_crs.to_string()} is not a projected CRS in "
                        "metres; lengths need one (e.g. the local UTM zone)",
                    )
                ],
            )
        crs, how = site_crs, "[site] crs"
    else:
        metric = [f.crs for f in assigned.values() if is_metric(f.crs)]
        if metric:
            crs, how = metric[0], "the layers' projected CRS"
        else:
            lon, lat = _centre_lonlat(assigned)
            if not (np.isfinite(lon) and np.isfinite(lat)):
                return None, "", frames, [Problem("site", None, "no geometry to place the site")]
            crs = utm_for(lon, lat)
            how = f"local UTM zone for the site centre ({lon:.5f}, {lat:.5f})"
    out: dict[str, gpd.GeoDataFrame] = {}
    for name, frame in assigned.items():
        if not frame.crs.equals(crs):
            try:
                frame = frame.to_crs(crs)
            except Exception as exc:
                problems.append(
                    Problem(name, None, f"cannot reproject from {frame.crs.to_string()}: {exc}")
                )
                continue
        out[name] = frame
    note = f"{crs.to_string()} ({crs.name}), from {how}"
    if notes:
        note += "; " + "; ".join(notes)
    return crs, note, out, problems


def _centre_lonlat(frames: dict[str, gpd.GeoDataFrame]) -> tuple[float, float]:
    boxes = []
    for frame in frames.values():
        valid = frame[frame.geometry.notna() & ~frame.geometry.is_empty]
        if len(valid):
            boxes.append(valid.to_crs("EPSG:4326").total_bounds)
    if not boxes:
        return float("nan"), float("nan")
    b = np.array(boxes)
    return float((b[:, 0].min() + b[:, 2].max()) / 2), float((b[:, 1].min() + b[:, 3].max()) / 2)
