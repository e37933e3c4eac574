"""Coordinate reference systems, chainage and plan coordinates (pyproj).

Chainage is horizontal distance along the route. On a geographic CRS (longitude,
latitude) it is the geodesic distance on the CRS's ellipsoid between consecutive points,
by pyproj's ``Geod.inv`` (C. F. F. Karney, 2013, "Algorithms for geodesics", Journal of
Geodesy 87: 43-55; accurate to about 15 nm). In a projected CRS it is the planar (grid)
distance sqrt(dx^2 + dy^2) [m] between consecutive points; it differs from distance on
the ground by the projection's scale factor (UTM: -0.04 % to about +0.1 %).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyproj
from pyproj.aoi import AreaOfInterest
from pyproj.database import query_utm_crs_info
from pyproj.exceptions import CRSError

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.geometry.readers import SurveyLine

WGS84 = "EPSG:4326"


def resolve_crs(text: str, study_path: Path, key: str = "[route] crs") -> pyproj.CRS:
    """A CRS from ``EPSG:....`` (or any string pyproj reads), projected in metres or
    geographic; anything else is an input error naming the study file and key."""
    try:
        crs = pyproj.CRS.from_user_input(text)
    except CRSError:
        raise InputError(f"{study_path}: {key} = {text!r}: no such coordinate reference "
                         "system (give an EPSG code such as \"EPSG:32633\")") from None
    if crs.is_projected:
        unit = crs.axis_info[0].unit_name if crs.axis_info else ""
        if unit not in ("metre", "meter"):
            raise InputError(f"{study_path}: {key} = {text!r}: its unit is {unit!r}; "
                             "a projected CRS in metres is needed")
    elif not crs.is_geographic:
        raise InputError(f"{study_path}: {key} = {text!r}: neither projected nor geographic")
    return crs


def crs_label(crs: pyproj.CRS) -> str:
    """``EPSG:32633`` where the CRS has an EPSG code, else its WKT-free name."""
    code = crs.to_epsg()
    return f"EPSG:{code}" if code is not None else crs.to_string()


def check_positions(line: SurveyLine, crs: pyproj.CRS | None) -> None:
    """Missing coordinates, and longitudes/latitudes out of range on a geographic CRS."""
    problems = ProblemList()
    for index in np.flatnonzero(~np.isfinite(line.a) | ~np.isfinite(line.b))[:10]:
        problems.add(f"{line.path}: {line.refs[index]}: coordinates missing")
    if crs is not None and crs.is_geographic:
        bad = np.flatnonzero((np.abs(line.a) > 180.0) | (np.abs(line.b) > 90.0))
        for index in bad[:10]:
            problems.add(f"{line.path}: {line.refs[index]}: ({line.a[index]:g}, "
                         f"{line.b[index]:g}) is not a longitude, latitude; for projected "
                         "coordinates name their CRS in [route] crs")
        if len(bad) > 10:
            problems.add(f"{line.path}: {len(bad) - 10} more positions out of range")
    problems.raise_if_any()


def step_lengths_m(a: np.ndarray, b: np.ndarray, crs: pyproj.CRS | None) -> np.ndarray:
    """Horizontal distance [m] between consecutive points: geodesic on a geographic CRS
    (Karney 2013 via ``pyproj.Geod.inv``), planar in a projected CRS or a local grid."""
    if crs is not None and crs.is_geographic:
        geod = crs.get_geod()
        assert geod is not None
        _, _, distance = geod.inv(a[:-1], b[:-1], a[1:], b[1:])
        return np.asarray(distance, dtype=float)
    return np.hypot(np.diff(a), np.diff(b))


def plan_crs_for(line: SurveyLine, crs: pyproj.CRS) -> pyproj.CRS:
    """The projected CRS of the plan: the file's own when projected, else the UTM zone
    (on WGS 84) of the route's centre, found in the EPSG database by pyproj."""
    if crs.is_projected:
        return crs
    lon = float(np.mean(line.a))
    lat = float(np.mean(line.b))
    found = query_utm_crs_info(datum_name="WGS 84",
                               area_of_interest=AreaOfInterest(lon, lat, lon, lat))
    if not found:  # polar routes: no UTM zone
        return pyproj.CRS("EPSG:3031" if lat < 0 else "EPSG:3413")
    return pyproj.CRS.from_epsg(int(sorted(found, key=lambda c: c.code)[0].code))


def transform(a: np.ndarray, b: np.ndarray, source: pyproj.CRS | str,
              target: pyproj.CRS | str) -> tuple[np.ndarray, np.ndarray]:
    """Coordinates from one CRS to another, easting/longitude first (always_xy)."""
    transformer = pyproj.Transformer.from_crs(source, target, always_xy=True)
    x, y = transformer.transform(np.asarray(a, dtype=float), np.asarray(b, dtype=float))
    return np.asarray(x, dtype=float), np.asarray(y, dtype=float)


def to_lon_lat(x_m: np.ndarray, y_m: np.ndarray, crs: str) -> tuple[np.ndarray, np.ndarray]:
    """Longitude and latitude [deg] on WGS 84 of plan coordinates in ``crs``."""
    return transform(x_m, y_m, crs, WGS84)
