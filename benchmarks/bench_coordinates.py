"""Speed of a route from coordinates: a 25,000-point GPS track of about 250 km is loaded,
designed with rules on, and its design.geojson written.

    python benchmarks/bench_coordinates.py                 # 3 runs, updates RESULTS.md
    python benchmarks/bench_coordinates.py --runs 1 --points 5000

The route is invented: the seeded terrain of ``benchmarks/generate.py`` (its 30-option
catalogue, three scenarios, three offtakes, rules on: pieces of at least 200 m, at most
10 changes, change cost 2,000), laid along a wandering line on the grid of WGS 84 / UTM
zone 9S in the open South Pacific (no real place) and written as a GPX track in
longitude, latitude (8 decimals) with elevations. The generator's rock zones are left
out (a GPX track carries none), and the outlet flows are lowered (70, 90, 85 L/s) to suit
the 2.5 times longer route. The study smooths the ground over 50 m of chainage.

Timed per run: load (GPX parse by gpxpy, clean-up, geodesic chainage, projection to UTM,
smoothing, study validation), design (``optimise_design``: every stage and the check),
geometry (the appurtenance schedule, ``design.geojson`` and ``profile_points.csv``).
Target from the issue: load + design + GeoJSON <= 15 s. Only the section between
``<!-- coordinates:start -->`` and ``<!-- coordinates:end -->`` of
``benchmarks/RESULTS.md`` is rewritten.
"""

from __future__ import annotations

import argparse
import csv
import os
import platform
import re
import statistics
import tempfile
import time
from pathlib import Path

import generate  # benchmarks/generate.py, beside this script
import gpxpy.gpx
import numpy as np
import pyproj
from results_file import update_section

import optimiser
from optimiser.analysis.appurtenances import schedule
from optimiser.milp import optimise_design
from optimiser.reports.geojson import write_geometry_files

ROOT = Path(__file__).resolve().parent.parent
RESULTS = ROOT / "benchmarks" / "RESULTS.md"
SEED = 3
TARGET_S = 15.0


def write_gps_study(folder: Path, points: int, length_km: float) -> Path:
    """The generator's invented study with its profile replaced by a GPX track."""
    study = generate.write(folder, points - 1, rules=True, seed=SEED, length_km=length_km,
                           time_limit_s=120.0)
    with open(folder / "profile.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    chainage = np.array([float(r["chainage_m"]) for r in rows])
    ground = np.array([float(r["ground_m"]) for r in rows])
    rng = np.random.default_rng(SEED)
    heading = 0.5 + 0.4 * np.sin(np.cumsum(rng.normal(0.0, 0.02, len(chainage) - 1)) * 3)
    step = np.diff(chainage)
    east = 412_000.0 + np.concatenate([[0.0], np.cumsum(step * np.sin(heading))])
    north = 5_400_000.0 + np.concatenate([[0.0], np.cumsum(step * np.cos(heading))])
    lon, lat = pyproj.Transformer.from_crs("EPSG:32709", "EPSG:4326",
                                           always_xy=True).transform(east, north)
    document = gpxpy.gpx.GPX()
    track = gpxpy.gpx.GPXTrack(name="invented benchmark line")
    segment = gpxpy.gpx.GPXTrackSegment()
    segment.points = [gpxpy.gpx.GPXTrackPoint(round(float(b), 8), round(float(a), 8),
                                              elevation=round(float(z), 2))
                      for a, b, z in zip(lon, lat, ground, strict=True)]
    track.segments.append(segment)
    document.tracks.append(track)
    (folder / "route.gpx").write_text(document.to_xml(), encoding="utf-8")
    text = study.read_text()
    text = text.replace('profile = "profile.csv"',
                        'profile = "route.gpx"\nsmoothing_window_m = 50.0')
    text = re.sub(r"\[costs\.zone_factor\]\nrock = 1\.5\n", "", text)
    for flow, lower in (("120 L/s", "70 L/s"), ("160 L/s", "90 L/s"), ("150 L/s", "85 L/s")):
        text = text.replace(f'"{flow}"', f'"{lower}"')  # 2.5 times the generator's length
    study.write_text(text)
    return study


def one_run(study_path: Path, out: Path, gap: float | None) -> dict:
    start = time.perf_counter()
    study = optimiser.load_study(study_path)
    loaded = time.perf_counter()
    outcome = optimise_design(study, mip_gap=gap)
    designed = time.perf_counter()
    assert outcome.check is not None
    out.mkdir(parents=True, exist_ok=True)
    items = schedule(outcome.check)
    scheduled = time.perf_counter()
    paths = write_geometry_files(out, outcome.check, items)
    written = time.perf_counter()
    return {"load_s": loaded - start, "design_s": designed - loaded,
            "appurtenances_s": scheduled - designed, "geometry_s": written - scheduled,
            "total_s": written - start,
            "status": str(outcome.status), "cost": outcome.total_cost,
            "gap": outcome.gap, "pieces": len(outcome.check.pieces),
            "nodes": len(study.route.chainage_m), "length_km": study.route.total_chainage_m
            / 1000, "geojson_mb": paths[0].stat().st_size / 1e6,
            "notes": study.route.coordinates.notes}


def _figures(values: list[float]) -> str:
    return ", ".join(f"{v:.1f}" for v in values)


STEPS = (("load_s", "load (GPX, clean-up, geodesic chainage, UTM)"),
         ("design_s", "design (optimiser and check)"),
         ("appurtenances_s", "air valves and washouts"),
         ("geometry_s", "design.geojson and profile_points.csv"),
         ("total_s", "**total**"))


def report(results: dict[str, list[dict]], points: int) -> str:
    any_runs = next(iter(results.values()))
    first = any_runs[0]
    lines = [
        "## Routes from coordinates (`benchmarks/bench_coordinates.py`)",
        "",
        f"Machine: {platform.machine()}, {os.cpu_count()} cores, Python "
        f"{platform.python_version()}; shared and noisy: medians (all runs listed).",
        "",
        f"An invented GPS track of {points:,} points ({first['length_km']:.1f} km, the "
        "terrain of `benchmarks/generate.py`, 30 options, 3 scenarios, 3 offtakes, rules "
        "on), read from GPX, ground smoothed over 50 m: "
        f"{first['nodes']:,} route nodes; design.geojson {first['geojson_mb']:.1f} MB.",
        "",
        "| relative gap | status | cost (run 1) | gap reached (run 1) | pieces | "
        + " | ".join(name for _, name in STEPS) + " |",
        "|:---|:---|---:|---:|---:|" + "---:|" * len(STEPS),
    ]
    for gap, runs in results.items():
        medians = [statistics.median(r[key] for r in runs) for key, _ in STEPS]
        statuses = "/".join(sorted({r["status"] for r in runs}))
        row = runs[0]
        lines.append(
            f"| {gap} | {statuses} | {row['cost']:,.0f} | {(row['gap'] or 0):.1e} | "
            f"{row['pieces']} | " + " | ".join(f"{m:.1f}" for m in medians) + " |")
    lines.append("")
    for gap, runs in results.items():
        lines.append(f"- gap {gap}: totals {_figures([r['total_s'] for r in runs])} s; "
                     f"design {_figures([r['design_s'] for r in runs])} s.")
    totals = {gap: statistics.median(r["total_s"] for r in runs)
              for gap, runs in results.items()}
    verdict = "; ".join(f"gap {gap}: median {t:.1f} s, {'met' if t <= TARGET_S else 'NOT met'}"
                        for gap, t in totals.items())
    lines += ["", f"Target load + design + GeoJSON <= {TARGET_S:g} s: {verdict}."]
    return "\n".join(lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3, help="runs per gap")
    parser.add_argument("--points", type=int, default=25_000)
    parser.add_argument("--km", type=float, default=250.0)
    parser.add_argument("--gaps", default="2e-3,1e-4",
                        help="relative gaps to run, comma-separated (1e-4: the study's own)")
    parser.add_argument("--no-write", action="store_true", help="do not update RESULTS.md")
    args = parser.parse_args()
    results: dict[str, list[dict]] = {}
    with tempfile.TemporaryDirectory() as folder:
        study = write_gps_study(Path(folder) / "study", args.points, args.km)
        for gap in args.gaps.split(","):
            results[gap] = []
            for index in range(args.runs):
                result = one_run(study, Path(folder) / f"out{index}", float(gap))
                results[gap].append(result)
                print(f"gap {gap} run {index + 1}: load {result['load_s']:.2f} s, design "
                      f"{result['design_s']:.2f} s, appurtenances "
                      f"{result['appurtenances_s']:.2f} s, geometry "
                      f"{result['geometry_s']:.2f} s, total {result['total_s']:.2f} s "
                      f"({result['status']})", flush=True)
    text = report(results, args.points)
    print(text)
    if not args.no_write:
        update_section(RESULTS, "coordinates", text)


if __name__ == "__main__":
    main()
