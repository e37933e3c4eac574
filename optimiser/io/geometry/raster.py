"""Ground levels from a GeoTIFF elevation model (rasterio), sampled at given points.

The raster's value is taken as the level of its pixel centre. ``bilinear``: the level
at a point is the bilinear interpolation of the four pixel centres around it (exact for
a plane; for a smooth surface the error is of order h^2 * |curvature| / 8 for pixel size
h). ``nearest``: the level of the pixel the point falls in. Points within half a pixel
of the raster's edge use the edge pixels' levels (no extrapolation). A point outside the
raster, or one whose level would use a no-data pixel, is an input error.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import rasterio
import rasterio.errors
import rasterio.windows
from rasterio.transform import Affine

from optimiser.io.errors import InputError
from optimiser.io.geometry.plan import transform

TILE = 512


def _open(path: Path):
    if not path.is_file():
        raise InputError(f"{path}: ground raster not found")
    try:
        return rasterio.open(path)
    except rasterio.errors.RasterioIOError as error:
        raise InputError(f"{path}: not a readable raster ({error})") from None


def _outside(path: Path, mask: np.ndarray, chainage_m: np.ndarray, why: str) -> InputError:
    where = ", ".join(f"{c:,.1f} m" for c in chainage_m[mask][:5])
    more = f" and {int(mask.sum()) - 5} more" if mask.sum() > 5 else ""
    return InputError(f"{path}: {int(mask.sum())} point(s) of the route {why} (at chainage "
                      f"{where}{more})")


def _pixel_coordinates(raster_transform: Affine, x: np.ndarray,
                       y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Fractional column and row of points, measured from the first pixel's centre."""
    col, row = ~raster_transform @ (x, y)
    return np.asarray(col) - 0.5, np.asarray(row) - 0.5


def sample_ground(path: Path, x_m: np.ndarray, y_m: np.ndarray, crs: str,
                  chainage_m: np.ndarray, method: str) -> np.ndarray:
    """Ground level [m] from band 1 of the raster at plan points given in ``crs``."""
    with _open(path) as dataset:
        if dataset.crs is None:
            raise InputError(f"{path}: the raster has no coordinate reference system")
        x, y = transform(x_m, y_m, crs, dataset.crs.to_wkt())
        col, row = _pixel_coordinates(dataset.transform, x, y)
        height, width = dataset.height, dataset.width
        outside = ~((col >= -0.5) & (col <= width - 0.5) & (row >= -0.5)
                    & (row <= height - 0.5))
        if outside.any():
            raise _outside(path, outside, chainage_m, "lie outside the raster")
        col = np.clip(col, 0.0, width - 1.0)
        row = np.clip(row, 0.0, height - 1.0)
        ground = np.full(len(col), np.nan)
        # Read the raster in tiles around the points only: a fine elevation model of a
        # long route's whole bounding box would not fit in memory.
        tile = np.floor(row).astype(int) // TILE * (width // TILE + 1) \
            + np.floor(col).astype(int) // TILE
        for key in np.unique(tile):
            chosen = tile == key
            r0 = int(np.floor(row[chosen].min()))
            c0 = int(np.floor(col[chosen].min()))
            r1 = min(int(np.floor(row[chosen].max())) + 2, height)
            c1 = min(int(np.floor(col[chosen].max())) + 2, width)
            band = dataset.read(1, window=rasterio.windows.Window(c0, r0, c1 - c0, r1 - r0),
                                masked=True).astype(float)
            values = np.where(np.ma.getmaskarray(band), np.nan, np.ma.getdata(band))
            ground[chosen] = _interpolate(values, col[chosen] - c0, row[chosen] - r0, method)
    missing = ~np.isfinite(ground)
    if missing.any():
        raise _outside(path, missing, chainage_m, "fall on no-data pixels")
    return ground


def _interpolate(values: np.ndarray, col: np.ndarray, row: np.ndarray,
                 method: str) -> np.ndarray:
    if method == "nearest":
        return values[np.floor(row + 0.5).astype(int), np.floor(col + 0.5).astype(int)]
    return _bilinear(values, col, row)


def _bilinear(values: np.ndarray, col: np.ndarray, row: np.ndarray) -> np.ndarray:
    """Bilinear interpolation between pixel centres (a weight of 0 ignores a neighbour,
    so a no-data pixel only matters where it is used)."""
    rows, cols = values.shape
    i = np.minimum(np.floor(row).astype(int), max(rows - 2, 0))
    j = np.minimum(np.floor(col).astype(int), max(cols - 2, 0))
    fr = row - i
    fc = col - j
    i1 = np.minimum(i + 1, rows - 1)
    j1 = np.minimum(j + 1, cols - 1)
    total = np.zeros_like(col)
    for vi, vj, weight in ((i, j, (1 - fr) * (1 - fc)), (i, j1, (1 - fr) * fc),
                           (i1, j, fr * (1 - fc)), (i1, j1, fr * fc)):
        value = values[vi, vj]
        total = total + np.where(weight > 0, weight * np.nan_to_num(value, nan=0.0), 0.0)
        total = np.where((weight > 0) & ~np.isfinite(value), np.nan, total)
    return total
