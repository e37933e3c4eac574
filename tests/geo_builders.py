"""Builders of invented routes with coordinates for tests (contract section 11).

All coordinates and levels here are invented test data, never check values themselves.
They are placed on the grid of WGS 84 / UTM zone 9S (EPSG:32709) in the open South
Pacific, so they describe no real place. Check values come from the reference libraries
and sources named in each test.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyproj

UTM = "EPSG:32709"
ORIGIN = (412_000.0, 5_512_000.0)

# The default test study's ground (builders.DEFAULT_PROFILE), by distance along the line.
GROUND_CHAINAGE = [0.0, 800.0, 1600.0, 2400.0, 3000.0]
GROUND_LEVEL = [199.0, 190.0, 160.0, 128.0, 145.0]


def invented_line(n_points: int = 41, length_m: float = 3000.0,
                  seed: int = 7) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Easting, northing [m] (UTM 9S) and ground [m] of a wandering invented line."""
    rng = np.random.default_rng(seed)
    heading = 0.6 + np.cumsum(rng.normal(0.0, 0.15, n_points - 1))
    step = length_m / (n_points - 1) * (1.0 + rng.uniform(-0.2, 0.2, n_points - 1))
    step *= length_m / step.sum()
    east = ORIGIN[0] + np.concatenate([[0.0], np.cumsum(step * np.sin(heading))])
    north = ORIGIN[1] + np.concatenate([[0.0], np.cumsum(step * np.cos(heading))])
    along = np.concatenate([[0.0], np.cumsum(step)])
    ground = np.interp(along, GROUND_CHAINAGE, GROUND_LEVEL)
    return east, north, ground


def to_lon_lat(east: np.ndarray, north: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    transformer = pyproj.Transformer.from_crs(UTM, "EPSG:4326", always_xy=True)
    lon, lat = transformer.transform(east, north)
    return np.asarray(lon), np.asarray(lat)


def gpx_text(lon: np.ndarray, lat: np.ndarray, ele: np.ndarray | None,
             route: bool = False) -> str:
    """A GPX 1.1 document with one track (or one route) of the given points."""
    points = []
    tag = "rtept" if route else "trkpt"
    for index, (x, y) in enumerate(zip(lon, lat, strict=True)):
        elevation = "" if ele is None else f"<ele>{ele[index]:.3f}</ele>"
        points.append(f'<{tag} lat="{y:.9f}" lon="{x:.9f}">{elevation}</{tag}>')
    body = "".join(points)
    inner = f"<rte>{body}</rte>" if route else f"<trk><trkseg>{body}</trkseg></trk>"
    return ('<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="test" '
            f'xmlns="http://www.topografix.com/GPX/1/1">{inner}</gpx>\n')


def geojson_text(x: np.ndarray, y: np.ndarray, z: np.ndarray | None) -> str:
    import json

    positions = [[float(a), float(b)] + ([] if z is None else [float(z[i])])
                 for i, (a, b) in enumerate(zip(x, y, strict=True))]
    return json.dumps({"type": "FeatureCollection", "features": [{
        "type": "Feature", "properties": {"name": "invented line"},
        "geometry": {"type": "LineString", "coordinates": positions}}]})


def write_text(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def write_plane_raster(path: Path, crs: str, west: float, north: float, pixel_m: float,
                       shape: tuple[int, int], surface) -> None:
    """A GeoTIFF whose pixel centres hold ``surface(x, y)`` (x east, y north)."""
    import rasterio
    from rasterio.transform import Affine

    rows, cols = shape
    x = west + (np.arange(cols) + 0.5) * pixel_m
    y = north - (np.arange(rows) + 0.5) * pixel_m
    grid_x, grid_y = np.meshgrid(x, y)
    values = surface(grid_x, grid_y).astype("float64")
    with rasterio.open(path, "w", driver="GTiff", height=rows, width=cols, count=1,
                       dtype="float64", crs=crs, nodata=-9999.0,
                       transform=Affine(pixel_m, 0.0, west, 0.0, -pixel_m, north)) as dataset:
        dataset.write(values, 1)
