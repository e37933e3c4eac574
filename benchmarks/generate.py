"""Seeded generator of synthetic (invented) gravity-main studies for the benchmark.

A route of ``length_km`` with ``n_sections`` survey sections: ground falling on average
from a hill intake, with random undulation, two ridges the energy line must clear, rock
stretches (zone factor 1.5) and three offtakes. A 30-option catalogue (10 sizes x 3
pressure classes, invented prices rising with size and class) and three scenarios
(today, horizon, horizon with aged pipe). Nothing here describes a real place or price.
"""

from __future__ import annotations

import argparse
import csv
from pathlib import Path

import numpy as np

SIZES_MM = [150, 200, 250, 300, 350, 400, 450, 500, 600, 700]
CLASSES = [("PN10", 102.0, 0.0, 1.00), ("PN16", 163.2, 0.045, 1.22),
           ("PN25", 254.9, 0.085, 1.45)]


def catalogue_rows() -> list[list]:
    rows = []
    for dn in SIZES_MM:
        for name, allowable, wall, price in CLASSES:
            internal = dn * (0.94 - wall)
            cost = (0.55 * dn + 0.0011 * dn**2) * price
            rows.append(["synthetic", dn, round(internal, 1), name, allowable, 0.05, 140,
                         round(cost, 2), "invented benchmark data"])
    return rows


def write(folder: Path, n_sections: int, *, rules: bool, seed: int = 1,
          length_km: float = 100.0, solver: str = "highs", time_limit_s: float = 60.0) -> Path:
    """Write study.toml, profile.csv and catalogue.csv; return the study path."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    total = length_km * 1000.0
    chainage = np.linspace(0.0, total, n_sections + 1)
    x = chainage / total
    # the same underlying terrain at every density (seeded on the shape, not the grid)
    shape_rng = np.random.default_rng(seed + 1000)
    harmonics = shape_rng.normal(0.0, 1.0, (12, 2))
    ground = 900.0 - 160.0 * x
    for k, (a, b) in enumerate(harmonics, start=1):
        ground += 6.0 / k**0.7 * (a * np.sin(2 * np.pi * k * x) + b * np.cos(2 * np.pi * k * x))
    for centre, height in ((0.28, 30.0), (0.63, 25.0)):
        ground += height * np.exp(-(((x - centre) / 0.04) ** 2))
    ground += rng.normal(0.0, 0.3, ground.shape)
    zone = np.where(np.sin(2 * np.pi * 9 * x + 1.0) > 0.75, "rock", "normal")
    with open(folder / "profile.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["chainage_m", "ground_m", "label", "zone"])
        for c, g, z in zip(chainage, ground, zone, strict=True):
            writer.writerow([f"{c:.3f}", f"{g:.3f}", "", z])
    with open(folder / "catalogue.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["material", "dn_mm", "internal_diameter_mm", "pressure_class",
                         "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m",
                         "note"])
        writer.writerows(catalogue_rows())
    source = float(ground[0]) + 8.0
    required = float(ground[-1]) + 35.0
    offtakes = "".join(
        f'\n[[offtake]]\nchainage_m = {c:.3f}\nflow = "{q} L/s"\nmin_pressure_m = 10.0\n'
        for c, q in ((total * 0.2, 6), (total * 0.5, 8), (total * 0.8, 5)))
    rules_text = ("min_piece_length_m = 200.0\nmax_changes = 10\n" if rules else "")
    change_cost = 2000.0 if rules else 0.0
    text = f"""title = "synthetic benchmark route, {n_sections} sections (invented)"
currency = "USD"

[source]
level_m = {source:.3f}
top_water_level_m = {source + 2.0:.3f}

[outlet]
required_head_m = {required:.3f}

[route]
profile = "profile.csv"
cover_m = 1.2
min_pressure_m = 5.0
local_k_per_km = 0.3
{offtakes}
[[scenario]]
name = "today"
flow = "120 L/s"

[[scenario]]
name = "horizon"
flow = "160 L/s"
offtake_factor = 1.5

[[scenario]]
name = "horizon aged"
flow = "150 L/s"
offtake_factor = 1.5
roughness_factor = 3.0

[catalogue]
file = "catalogue.csv"
surge_allowance_m = 20.0

[rules]
{rules_text}velocity_min_m_s = 0.2
velocity_max_m_s = 2.5

[costs]
change_cost = {change_cost}

[costs.zone_factor]
rock = 1.5

[solver]
name = "{solver}"
time_limit_s = {time_limit_s}
mip_gap = 1e-4
"""
    path = folder / "study.toml"
    path.write_text(text)
    return path


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("folder", type=Path)
    parser.add_argument("--sections", type=int, default=2000)
    parser.add_argument("--rules", action="store_true")
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()
    print(write(args.folder, args.sections, rules=args.rules, seed=args.seed))


if __name__ == "__main__":
    main()
