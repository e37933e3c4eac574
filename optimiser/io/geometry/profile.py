"""A route from coordinates (contract section 11): read, clean, measure, sample, build.

Steps, each recorded in ``RouteCoordinates.notes``: read the file (``x_m, y_m`` CSV,
GPX, GeoJSON); drop duplicate and zero-length points; chainage (geodesic or planar, see
:mod:`optimiser.io.geometry.plan`); plan coordinates in a projected CRS; ground from the
file or from ``[route] ground_raster`` sampled every ``sample_spacing_m`` along the line
and at every vertex; optional smoothing; warnings on spacing and grade.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyproj

from optimiser.io.errors import InputError
from optimiser.io.geometry import cleanup
from optimiser.io.geometry.plan import (
    check_positions,
    crs_label,
    plan_crs_for,
    resolve_crs,
    step_lengths_m,
    transform,
)
from optimiser.io.geometry.raster import sample_ground
from optimiser.io.geometry.readers import (
    SurveyLine,
    csv_header,
    read_geojson,
    read_gpx,
    read_xy_csv,
)
from optimiser.io.limits import CHAINAGE, LEVEL
from optimiser.model.route import Route, RouteCoordinates

COORDINATE_KEYS = ("crs", "ground_raster")


@dataclass
class _Profile:
    """Profile points with plan coordinates, built up step by step."""

    chainage_m: np.ndarray
    x_m: np.ndarray
    y_m: np.ndarray
    ground_m: np.ndarray
    labels: list[str]
    zones: list[str]
    refs: list[str]
    notes: list[str] = field(default_factory=list)


def profile_kind(path: Path) -> str:
    """``gpx``, ``geojson``, ``xy`` (a CSV with x_m, y_m) or ``chainage``."""
    suffix = path.suffix.lower()
    if suffix == ".gpx":
        return "gpx"
    if suffix in (".geojson", ".json"):
        return "geojson"
    header = csv_header(path) if path.is_file() else []
    return "xy" if "x_m" in header or "y_m" in header else "chainage"


def _source_crs(kind: str, spec: Any, study_path: Path) -> pyproj.CRS | None:
    if kind == "gpx":
        if spec.crs is not None:
            crs = resolve_crs(spec.crs, study_path)
            if not crs.equals(pyproj.CRS("EPSG:4326"), ignore_axis_order=True):
                raise InputError(f"{study_path}: [route] crs = {spec.crs!r}: a GPX file is "
                                 "always in WGS 84 longitude, latitude; remove the key")
        return pyproj.CRS("EPSG:4326")
    if spec.crs is not None:
        return resolve_crs(spec.crs, study_path)
    return pyproj.CRS("EPSG:4326") if kind == "geojson" else None


def _measure(line: SurveyLine, crs: pyproj.CRS | None,
             spec: Any) -> tuple[_Profile, pyproj.CRS | None]:
    """Drop close points, then chainage and plan coordinates (and their CRS) of the
    points kept."""
    check_positions(line, crs)
    kept, notes = cleanup.drop_close_points(
        line, lambda i: step_lengths_m(line.a[i], line.b[i], crs), spec.min_point_spacing_m)
    if len(kept) < 2:
        raise InputError(f"{line.path}: the route needs at least two distinct points "
                         f"(it has {len(kept)} after dropping duplicates)")
    a, b = line.a[kept], line.b[kept]
    chainage = np.concatenate([[0.0], np.cumsum(step_lengths_m(a, b, crs))])
    if crs is None:
        x, y = a, b
        notes.insert(0, "chainage: planar distance between consecutive x_m, y_m points "
                        "(a local grid: no [route] crs given, so no map output)")
    elif crs.is_geographic:
        plan = plan_crs_for(line, crs)
        x, y = transform(a, b, crs, plan)
        notes.insert(0, f"chainage: geodesic distance on the {crs.ellipsoid.name} "
                        "ellipsoid between consecutive points (pyproj.Geod, Karney 2013); "
                        f"plan coordinates in {crs_label(plan)} ({plan.name})")
        crs = plan
    else:
        x, y = a, b
        notes.insert(0, f"chainage: planar (grid) distance in {crs_label(crs)} "
                        f"({crs.name}), not corrected for the projection's scale factor")
    notes.insert(0, f"profile {line.path.name}: {line.summary}; every vertex kept "
                    "(no simplification)")
    pick = [int(i) for i in kept]
    return _Profile(chainage, x, y, line.ground_m[kept], [line.labels[i] for i in pick],
                    [line.zones[i] for i in pick], [line.refs[i] for i in pick],
                    notes), crs


def _densify(profile: _Profile, spacing_m: float) -> _Profile:
    """Add points at every multiple of ``spacing_m`` of chainage between the vertices."""
    end = profile.chainage_m[-1]
    samples = np.arange(spacing_m, end, spacing_m)
    near_vertex = np.isclose(samples[:, None], profile.chainage_m[None, :], rtol=0,
                             atol=1e-3).any(axis=1) if samples.size else np.array([], bool)
    samples = samples[~near_vertex]
    chainage = np.concatenate([profile.chainage_m, samples])
    order = np.argsort(chainage, kind="stable")
    vertex = np.concatenate([np.ones(len(profile.chainage_m), bool),
                             np.zeros(len(samples), bool)])[order]
    chainage = chainage[order]
    x = np.interp(chainage, profile.chainage_m, profile.x_m)
    y = np.interp(chainage, profile.chainage_m, profile.y_m)
    labels, zones, refs = [], [], []
    source = iter(range(len(profile.chainage_m)))
    current = -1
    for is_vertex in vertex:
        if is_vertex:
            current = next(source)
            labels.append(profile.labels[current])
            zones.append(profile.zones[current])
            refs.append(profile.refs[current])
        else:  # a sample takes the zone of the section it falls in
            labels.append("")
            zones.append(profile.zones[current])
            refs.append("sample")
    return _Profile(chainage, x, y, np.full(len(chainage), np.nan), labels, zones, refs,
                    profile.notes)


def _ground(profile: _Profile, line: SurveyLine, spec: Any, crs: pyproj.CRS | None,
            study_path: Path) -> _Profile:
    if spec.ground_raster is None:
        missing = np.flatnonzero(~np.isfinite(profile.ground_m))
        if missing.size:
            refs = ", ".join(profile.refs[i] for i in missing[:10])
            raise InputError(f"{line.path}: {missing.size} point(s) have no elevation "
                             f"({refs}{' ...' if missing.size > 10 else ''}); give "
                             "elevations in the file or [route] ground_raster")
        profile.notes.append("ground: the elevations of the file")
        return profile
    raster = (study_path.parent / spec.ground_raster).resolve()
    if crs is None:
        raise InputError(f"{study_path}: [route] ground_raster needs [route] crs, the CRS "
                         f"of the x_m, y_m of {line.path.name}, to place the route on it")
    vertices = len(profile.chainage_m)
    profile = _densify(profile, spec.sample_spacing_m)
    profile.ground_m = sample_ground(raster, profile.x_m, profile.y_m, crs_label(crs),
                                     profile.chainage_m, spec.raster_interpolation)
    ignored = ("; the elevations in the file are not used"
               if np.isfinite(line.ground_m).any() else "")
    profile.notes.append(
        f"ground: from {raster.name} ({spec.raster_interpolation} interpolation between "
        f"pixel centres) at the {vertices} vertices and every {spec.sample_spacing_m:g} m "
        f"of chainage: {len(profile.chainage_m)} profile points{ignored}")
    return profile


def _check_length(line: SurveyLine, profile: _Profile) -> None:
    """The route measured from coordinates within the accepted chainage (contract
    section 9, as a chainage profile's): absurd coordinates (a slip of unit or CRS) are
    refused before anything is sampled along them."""
    complaint = CHAINAGE.message(float(profile.chainage_m[-1]))
    if complaint:
        raise InputError(f"{line.path}: the route measured from its coordinates is "
                         f"{profile.chainage_m[-1]:g} m long: {complaint}")


def _check_ground(profile: _Profile, source: Path) -> None:
    """Ground levels from the file (or the raster) within the accepted range of levels
    (contract section 9, as a chainage profile's ``ground_m``), each point named."""
    bad = [i for i, level in enumerate(profile.ground_m) if LEVEL.message(float(level))]
    if not bad:
        return
    problems = [f"{source}: {profile.refs[i]} (chainage {profile.chainage_m[i]:.1f} m): "
                f"ground {LEVEL.message(float(profile.ground_m[i]))}" for i in bad[:10]]
    if len(bad) > 10:
        problems.append(f"{source}: {len(bad) - 10} more points with the ground out of range")
    raise InputError(problems)


def load_coordinate_profile(profile_path: Path, spec: Any, study_path: Path,
                            cover_m: float, slope_length: bool) -> Route | None:
    """The route of a coordinate profile, or None for a chainage profile (section 2).

    ``spec`` is the study's ``[route]`` table. Coordinate keys given with a chainage
    profile are an error (they would otherwise be ignored).
    """
    kind = profile_kind(profile_path)
    if kind == "chainage":
        given = [k for k in COORDINATE_KEYS if getattr(spec, k) is not None]
        if given and profile_path.is_file():
            raise InputError(f"{study_path}: [route] {', '.join(given)}: apply to a profile "
                             f"with coordinates, but {profile_path.name} gives chainage_m")
        return None
    crs = _source_crs(kind, spec, study_path)
    reader = {"gpx": read_gpx, "geojson": read_geojson, "xy": read_xy_csv}[kind]
    line = reader(profile_path)
    if len(line) == 0:
        raise InputError(f"{profile_path}: the route has no points")
    profile, plan_crs = _measure(line, crs, spec)
    _check_length(line, profile)
    profile = _ground(profile, line, spec, plan_crs, study_path)
    _check_ground(profile, line.path if spec.ground_raster is None
                  else (study_path.parent / spec.ground_raster).resolve())
    if spec.smoothing_window_m > 0:
        profile.ground_m, note = cleanup.smooth_ground(profile.chainage_m, profile.ground_m,
                                                       spec.smoothing_window_m)
        profile.notes.append(note)
    else:
        profile.notes.append("ground not smoothed (smoothing_window_m = 0)")
    profile.notes += cleanup.survey_warnings(profile.chainage_m, profile.ground_m,
                                             profile.refs, spec.warn_point_spacing_m,
                                             spec.warn_grade_percent)
    coordinates = RouteCoordinates(None if plan_crs is None else crs_label(plan_crs),
                                   profile.chainage_m, profile.x_m, profile.y_m,
                                   tuple(profile.notes), tuple(profile.refs))
    return Route(profile.chainage_m, profile.ground_m, cover_m, profile.labels,
                 profile.zones[:-1], slope_length, coordinates=coordinates)
