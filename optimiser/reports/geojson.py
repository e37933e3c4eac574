"""Geometry of a design for a GIS: ``design.geojson`` and ``profile_points.csv``.

``design.geojson`` is a GeoJSON FeatureCollection (RFC 7946: H. Butler et al., 2016,
"The GeoJSON Format", IETF): positions are [longitude, latitude] on WGS 84, in degrees
to 8 decimals (about 1 mm). Pipe pieces are LineStrings through every route point
between their ends; the source, the outlet, offtakes, fittings, air valves and washouts
are Points; each carries its chainage. The collection carries the study's title, the
survey notes and the cautions as foreign members (RFC 7946 section 6.1). It is written
only when the route has coordinates in a known CRS (contract section 11).

``profile_points.csv`` lists every node of the route (survey point, raster sample or
inserted offtake or fitting) with its chainage, ground, plan coordinates and where it
came from in the profile file, so the chainage can be checked against the survey. It is
written whenever the route has coordinates.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from shapely.geometry import LineString, Point, mapping

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.io.geometry import to_lon_lat
from optimiser.io.writers import atomic_write_text, json_safe, write_csv
from optimiser.model.route import RouteCoordinates
from optimiser.reports.cautions import CAUTIONS

DECIMALS = 8
PROFILE_POINT_COLUMNS = ["chainage_m", "ground_m", "pipe_level_m", "x_m", "y_m",
                         "longitude", "latitude", "from_file", "label"]


def _lon_lat(coordinates: RouteCoordinates, chainage_m: np.ndarray) -> np.ndarray:
    """[lon, lat] rows at the given chainages."""
    x, y = coordinates.xy_at(np.asarray(chainage_m, dtype=float))
    assert coordinates.crs is not None
    lon, lat = to_lon_lat(x, y, coordinates.crs)
    return np.round(np.column_stack([lon, lat]), DECIMALS)


def _piece_chainages(coordinates: RouteCoordinates, from_m: float, to_m: float) -> np.ndarray:
    inside = coordinates.chainage_m[(coordinates.chainage_m > from_m)
                                    & (coordinates.chainage_m < to_m)]
    return np.concatenate([[from_m], inside, [to_m]])


def _feature(geometry: Any, properties: dict[str, Any]) -> dict[str, Any]:
    return {"type": "Feature", "geometry": mapping(geometry),
            "properties": json_safe(properties)}


def _piece_features(result: CheckResult) -> list[dict[str, Any]]:
    coordinates = result.study.route.coordinates
    assert coordinates is not None
    features = []
    for row in result.pieces.itertuples():
        positions = _lon_lat(coordinates, _piece_chainages(coordinates, row.from_m, row.to_m))
        label = f"DN{row.dn_mm:g} {row.material} {row.pressure_class}"
        features.append(_feature(LineString(positions), {
            "kind": "pipe piece", "option": label, "material": row.material,
            "dn_mm": row.dn_mm, "pressure_class": row.pressure_class,
            "internal_diameter_mm": row.internal_diameter_mm, "from_m": row.from_m,
            "to_m": row.to_m, "length_m": row.length_m, "cost": row.cost,
            "currency": result.study.currency}))
    return features


def point_items(result: CheckResult, appurtenances: list[Appurtenance]
                ) -> list[dict[str, Any]]:
    """Source, outlet, offtakes, fittings, air valves and washouts, with chainage."""
    study = result.study
    route = study.route
    end = route.total_chainage_m
    items: list[dict[str, Any]] = [
        {"kind": "source", "chainage_m": 0.0, "label": route.labels[0] if route.labels
         else "", "level_m": study.source.level_m},
        {"kind": "outlet", "chainage_m": end, "label": route.labels[-1] if route.labels
         else "", "required_head_m": study.outlet.required_head_m},
    ]
    items += [{"kind": "offtake", "chainage_m": o.chainage_m, "label": o.label,
               "flow_l_s": o.flow_m3_s * 1000.0} for o in study.offtakes]
    items += [{"kind": "fitting", "chainage_m": f.chainage_m, "label": f.label, "k": f.k}
              for f in study.fittings]
    items += [{"kind": a.kind, "chainage_m": a.chainage_m, "label": a.label,
               "reason": a.reason} for a in appurtenances]
    for item in items:
        item["ground_m"] = float(route.ground_at(np.array([item["chainage_m"]]))[0])
        item["pipe_level_m"] = float(route.pipe_level_at(np.array([item["chainage_m"]]))[0])
    return items


def design_feature_collection(result: CheckResult, appurtenances: list[Appurtenance]
                              ) -> dict[str, Any]:
    """The FeatureCollection of a checked design whose route has coordinates."""
    coordinates = result.study.route.coordinates
    if coordinates is None or coordinates.crs is None:
        raise ValueError("the route has no coordinates in a known CRS")
    features = _piece_features(result)
    items = point_items(result, appurtenances)
    positions = _lon_lat(coordinates, np.array([i["chainage_m"] for i in items]))
    features += [_feature(Point(p), item) for p, item in zip(positions, items, strict=True)]
    return {"type": "FeatureCollection", "features": features,
            "title": result.study.title, "plan_crs": coordinates.crs,
            "total_cost": result.total_cost, "currency": result.study.currency,
            "survey_notes": list(coordinates.notes), "cautions": list(CAUTIONS)}


def profile_points(result: CheckResult) -> pd.DataFrame:
    """Every node of the route with chainage, ground, plan position and origin."""
    route = result.study.route
    coordinates = route.coordinates
    assert coordinates is not None
    x, y = coordinates.xy_at(route.chainage_m)
    index = np.clip(np.searchsorted(coordinates.chainage_m, route.chainage_m), 0,
                    len(coordinates.chainage_m) - 1)
    same = np.isclose(coordinates.chainage_m[index], route.chainage_m, rtol=0, atol=1e-6)
    refs = list(coordinates.point_refs) or [""] * len(coordinates.chainage_m)
    frame = pd.DataFrame({
        "chainage_m": route.chainage_m, "ground_m": route.ground_m,
        "pipe_level_m": route.pipe_level_m, "x_m": x, "y_m": y,
        "from_file": [refs[i] if s else "inserted (offtake or fitting)"
                      for i, s in zip(index, same, strict=True)],
        "label": route.labels})
    if coordinates.crs is not None:
        lon, lat = to_lon_lat(x, y, coordinates.crs)
        frame["longitude"], frame["latitude"] = np.round(lon, DECIMALS), np.round(lat,
                                                                                   DECIMALS)
    else:
        frame["longitude"] = frame["latitude"] = np.nan
    return frame[PROFILE_POINT_COLUMNS].round({"chainage_m": 3, "ground_m": 3,
                                               "pipe_level_m": 3, "x_m": 3, "y_m": 3})


def write_geometry_files(out_dir: Path, result: CheckResult,
                         appurtenances: list[Appurtenance]) -> list[Path]:
    """``design.geojson`` (route in a known CRS) and ``profile_points.csv`` (any route
    with coordinates) into ``out_dir``; nothing for a chainage profile."""
    coordinates = result.study.route.coordinates
    if coordinates is None:
        return []
    collection = None if coordinates.crs is None else \
        design_feature_collection(result, appurtenances)
    return write_plan_files(out_dir, collection, profile_points(result))


def write_plan_files(out_dir: Path, collection: dict | None,
                     points: pd.DataFrame) -> list[Path]:
    """Write ``design.geojson`` (when there is a feature collection: the plan is in a
    known CRS) and ``profile_points.csv``; the paths written."""
    written = []
    if collection is not None:
        path = Path(out_dir) / "design.geojson"
        atomic_write_text(path, json.dumps(json_safe(collection)) + "\n")
        written.append(path)
    path = Path(out_dir) / "profile_points.csv"
    write_csv(path, points)
    return [*written, path]
