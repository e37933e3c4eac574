"""Generate the INVENTED GPS track of studies/demo-gps-route/track.gpx.

Nothing here is surveyed: the track is made up. It is laid out in an invented local
valley on the grid of WGS 84 / UTM zone 9S (EPSG:32709) and converted to longitude and
latitude with pyproj; the coordinates fall in the open South Pacific on purpose, so the
track depicts no real place. It mimics what a walked GPS track looks like:

- a line that wanders (a random walk of the heading, seeded) with points about every
  15 m, and a few sharp bends at invented road crossings;
- elevations = an invented smooth valley profile (a ridge near km 4.6, a low point near
  km 8.3) plus GPS elevation noise (normal, sigma 1.5 m);
- three places where the walker stood still (repeated points: duplicates the loader
  drops and counts).

The generator is seeded, so running it again gives the same file byte for byte.

    python studies/demo-gps-route/make_track.py            # writes track.gpx beside it
    python studies/demo-gps-route/make_track.py --out other.gpx [--points N] [--km L]

Needs numpy, pyproj and gpxpy (runtime dependencies of the tool).
"""

from __future__ import annotations

import argparse
from pathlib import Path

import gpxpy.gpx
import numpy as np
import pyproj

SEED = 20261202
PLAN_CRS = "EPSG:32709"  # WGS 84 / UTM zone 9S: the invented valley's grid
ORIGIN_E_N = (412_000.0, 5_512_000.0)  # open ocean near 40.5 S, 130 W: no real place


def invented_ground(fraction: np.ndarray, length_km: float) -> np.ndarray:
    """Smooth invented ground [m] along the route (fraction 0..1 of its length)."""
    km = fraction * length_km
    scale = length_km / 12.0
    ground = 612.0 - 17.0 * km / scale
    ground += 24.0 * np.exp(-(((km / scale) - 4.6) / 0.7) ** 2)   # the ridge
    ground -= 16.0 * np.exp(-(((km / scale) - 8.3) / 0.6) ** 2)   # the low point
    ground += 3.0 * np.sin(2 * np.pi * km / (2.7 * scale))
    return ground


def track(n_points: int, length_km: float, seed: int = SEED) -> dict[str, np.ndarray]:
    """Easting, northing [m] and noisy elevation [m] of an invented walked track."""
    rng = np.random.default_rng(seed)
    step_m = length_km * 1000.0 / (n_points - 1)
    turn = rng.normal(0.0, 0.06, n_points - 1)
    for where in (0.21, 0.47, 0.74):  # invented road crossings: sharp bends
        turn[int(where * (n_points - 1))] += 0.9 * (1 if where < 0.5 else -1)
    heading = 0.35 + np.cumsum(turn) * 0.25
    heading = 0.35 + (heading - heading.mean()) * 0.6  # keep a general direction
    steps = step_m * (1.0 + rng.normal(0.0, 0.08, n_points - 1))
    east = ORIGIN_E_N[0] + np.concatenate([[0.0], np.cumsum(steps * np.sin(heading))])
    north = ORIGIN_E_N[1] + np.concatenate([[0.0], np.cumsum(steps * np.cos(heading))])
    along = np.concatenate([[0.0], np.cumsum(steps)])
    elevation = invented_ground(along / along[-1], length_km)
    elevation += rng.normal(0.0, 1.5, n_points)  # GPS elevation noise
    return {"east": east, "north": north, "elevation": elevation}


def with_pauses(points: dict[str, np.ndarray], pauses: list[tuple[int, int]]
                ) -> dict[str, np.ndarray]:
    """Repeat point i k times (the walker stood still)."""
    index = np.arange(len(points["east"]))
    repeat = np.ones(len(index), dtype=int)
    for i, k in pauses:
        repeat[i] += k
    return {key: np.repeat(value, repeat) for key, value in points.items()}


def write_gpx(path: Path, points: dict[str, np.ndarray], name: str) -> None:
    lon, lat = pyproj.Transformer.from_crs(PLAN_CRS, "EPSG:4326", always_xy=True).transform(
        points["east"], points["north"])
    document = gpxpy.gpx.GPX()
    document.creator = "make_track.py (invented demo data)"
    track_ = gpxpy.gpx.GPXTrack(name=name)
    segment = gpxpy.gpx.GPXTrackSegment()
    for x, y, z in zip(lon, lat, points["elevation"], strict=True):
        segment.points.append(gpxpy.gpx.GPXTrackPoint(latitude=round(float(y), 8),
                                                      longitude=round(float(x), 8),
                                                      elevation=round(float(z), 2)))
    track_.segments.append(segment)
    document.tracks.append(track_)
    path.write_text(document.to_xml(), encoding="utf-8")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).with_name("track.gpx"))
    parser.add_argument("--points", type=int, default=800)
    parser.add_argument("--km", type=float, default=12.0)
    parser.add_argument("--seed", type=int, default=SEED)
    args = parser.parse_args()
    points = track(args.points, args.km, args.seed)
    n = args.points
    points = with_pauses(points, [(n // 9, 2), (n // 2, 3), (4 * n // 5, 1)])
    write_gpx(args.out, points, "invented valley main, walked line (demo)")
    print(f"wrote {args.out} ({len(points['east'])} points, invented)")


if __name__ == "__main__":
    main()
