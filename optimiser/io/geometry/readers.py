"""Readers of routes given by coordinates (contract section 11): an ``x_m, y_m`` profile
CSV, a ``.gpx`` track or route (gpxpy) and a ``.geojson`` LineString.

Each returns a :class:`SurveyLine`: the points in file order with their plan coordinates
in the file's own CRS, ground levels (NaN where the file gives none), labels, zones and a
reference to the point in the file (``line 7``, ``point 12``) for messages and for the
table of profile points written back.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import gpxpy
import gpxpy.gpx
import numpy as np

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.tables import number, read_rows

XY_COLUMNS = ["x_m", "y_m"]
XY_OPTIONAL = ["ground_m", "label", "zone"]


@dataclass
class SurveyLine:
    """Points of a route in file order, in the coordinates of the file."""

    path: Path
    a: np.ndarray
    """Easting [m] in a projected CRS, or longitude [deg] in a geographic one."""
    b: np.ndarray
    """Northing [m], or latitude [deg]."""
    ground_m: np.ndarray
    labels: list[str]
    zones: list[str]
    refs: list[str]
    summary: str

    def __len__(self) -> int:
        return len(self.a)


def _read_bytes(path: Path, what: str) -> str:
    if path.is_dir():
        raise InputError(f"{path}: the {what} is a folder, not a file")
    if not path.is_file():
        raise InputError(f"{path}: {what} not found")
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except OSError as error:
        raise InputError(f"{path}: cannot read the {what} ({error})") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: the {what} is not UTF-8 text") from None
    if not text.strip():
        raise InputError(f"{path}: the {what} is empty")
    return text


def csv_header(path: Path) -> list[str]:
    """Column names of a CSV (first non-blank line), or [] when it cannot be read."""
    try:
        with path.open(encoding="utf-8-sig") as handle:
            for line in handle:
                if line.strip():
                    return [name.strip() for name in line.split(",")]
    except (OSError, UnicodeDecodeError):
        return []
    return []


def read_xy_csv(path: Path) -> SurveyLine:
    """A profile CSV with ``x_m, y_m`` (projected metres), optional ``ground_m``, ``label``,
    ``zone`` (contract sections 2 and 11)."""
    rows, header = read_rows(path, XY_COLUMNS, XY_OPTIONAL, what="profile")
    if "chainage_m" in header:
        raise InputError(f"{path}: give either chainage_m or x_m, y_m, not both (with "
                         "coordinates the chainage is measured along the line)")
    problems = ProblemList()
    a, b, ground = [], [], []
    for row in rows:
        x = number(path, row, "x_m", problems)
        y = number(path, row, "y_m", problems)
        z = number(path, row, "ground_m", problems, allow_empty=True)
        a.append(np.nan if x is None else x)
        b.append(np.nan if y is None else y)
        ground.append(np.nan if z is None else z)
    problems.raise_if_any()
    return SurveyLine(path, np.array(a), np.array(b), np.array(ground),
                      [r.cells.get("label", "") for r in rows],
                      [r.cells.get("zone", "") for r in rows],
                      [f"line {r.line}" for r in rows], f"{len(rows)} points (x_m, y_m)")


def read_gpx(path: Path) -> SurveyLine:
    """One GPX track (its segments joined in order) or one GPX route, WGS 84 lon/lat with
    elevations where the file has them (GPX 1.1, parsed by gpxpy)."""
    text = _read_bytes(path, "GPX file")
    try:
        document = gpxpy.parse(text)
    except (gpxpy.gpx.GPXException, ValueError) as error:
        raise InputError(f"{path}: not a readable GPX file ({error})") from None
    tracks = [t for t in document.tracks if any(s.points for s in t.segments)]
    routes = [r for r in document.routes if r.points]
    if len(tracks) + len(routes) == 0:
        raise InputError(f"{path}: the GPX file has no track or route with points")
    if len(tracks) + len(routes) > 1:
        raise InputError(f"{path}: the GPX file has {len(tracks)} track(s) and "
                         f"{len(routes)} route(s) with points; give exactly one")
    if tracks:
        segments = [s for s in tracks[0].segments if s.points]
        points = [p for s in segments for p in s.points]
        name = tracks[0].name or "unnamed"
        summary = (f"{len(points)} points of track {name!r}"
                   + (f" ({len(segments)} segments joined in order)" if len(segments) > 1
                      else ""))
    else:
        points = routes[0].points
        summary = f"{len(points)} points of route {routes[0].name or 'unnamed'!r}"
    lon = np.array([p.longitude for p in points], dtype=float)
    lat = np.array([p.latitude for p in points], dtype=float)
    ground = np.array([np.nan if p.elevation is None else p.elevation for p in points],
                      dtype=float)
    labels = [p.name or "" for p in points]
    return SurveyLine(path, lon, lat, ground, labels, [""] * len(points),
                      [f"point {i}" for i in range(1, len(points) + 1)], summary)


def _line_coordinates(path: Path, data: object) -> list:
    """The coordinate list of the one LineString in a GeoJSON object."""
    if not isinstance(data, dict):
        raise InputError(f"{path}: not a GeoJSON object")
    kind = data.get("type")
    if kind == "FeatureCollection":
        features = data.get("features") or []
        lines = [f for f in features if isinstance(f, dict)
                 and isinstance(f.get("geometry"), dict)
                 and f["geometry"].get("type") == "LineString"]
        if len(lines) != 1:
            raise InputError(f"{path}: the FeatureCollection must hold exactly one "
                             f"LineString feature (it has {len(lines)})")
        return _line_coordinates(path, lines[0])
    if kind == "Feature":
        return _line_coordinates(path, data.get("geometry"))
    if kind != "LineString":
        raise InputError(f"{path}: expected a LineString (or a Feature or FeatureCollection "
                         f"holding one), got type {kind!r}")
    coordinates = data.get("coordinates")
    if not isinstance(coordinates, list):
        raise InputError(f"{path}: the LineString has no coordinates list")
    return coordinates


def _finite_number(value: object) -> bool:
    """A JSON number that is finite as a float: an integer too long for a float (JSON
    allows any number of digits) is not."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return False
    try:
        return math.isfinite(float(value))
    except OverflowError:
        return False


def _shown(value: object, width: int = 80) -> str:
    """``repr(value)``, cut to ``width`` characters for a message."""
    text = repr(value)
    return text if len(text) <= width else text[:width - 1] + "…"


def read_geojson(path: Path) -> SurveyLine:
    """One LineString of a GeoJSON file: [x, y] or [x, y, elevation] positions (RFC 7946:
    longitude, latitude in WGS 84 unless ``[route] crs`` names another CRS)."""
    text = _read_bytes(path, "GeoJSON file")
    try:
        data = json.loads(text)
    except json.JSONDecodeError as error:
        raise InputError(f"{path}: line {error.lineno}: not valid JSON ({error.msg})") \
            from None
    coordinates = _line_coordinates(path, data)
    problems = ProblemList()
    a, b, ground = [], [], []
    for index, position in enumerate(coordinates, start=1):
        ok = (isinstance(position, list) and len(position) in (2, 3)
              and all(_finite_number(v) for v in position))
        if not ok:
            problems.add(f"{path}: position {index} of the LineString: expected [x, y] or "
                         f"[x, y, elevation] numbers, got {_shown(position)}")
            continue
        a.append(float(position[0]))
        b.append(float(position[1]))
        ground.append(float(position[2]) if len(position) == 3 else np.nan)
    problems.raise_if_any()
    n = len(a)
    return SurveyLine(path, np.array(a), np.array(b), np.array(ground), [""] * n, [""] * n,
                      [f"position {i}" for i in range(1, n + 1)],
                      f"{n} positions of a LineString")
