"""Benchmark: break-pressure tanks chosen with the pipes (issue 15).

A seeded, invented 100 km route of 2,000 sections falling about 850 m (so the static
head alone rules out every class without tanks below about 255 m), sites at every
point, at most 8 new tanks, the rules on (minimum piece length, changes limited, change
cost). Runs ``optimise_design`` once with new tanks allowed and reports status, gap,
wall time, the tanks chosen and the saving against the best design without new tanks
(or that none exists). Writes its own section of ``benchmarks/RESULTS.md``.

    python benchmarks/bench_tanks.py [--sections 2000] [--time-limit 60]

Nothing here describes a real place or price.
"""

from __future__ import annotations

import argparse
import csv
import os
import tempfile
import time
from pathlib import Path

import generate  # benchmarks/generate.py, beside this script
import numpy as np
from results_file import update_section

from optimiser.io import load_study
from optimiser.milp import optimise_design

TANK_COST = 60000.0
MAX_TANKS = 8


def write_study(folder: Path, n_sections: int, seed: int, time_limit_s: float,
                gap: float) -> Path:
    """An invented falling route with the generator's catalogue; returns study.toml."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    total = 100_000.0
    chainage = np.linspace(0.0, total, n_sections + 1)
    x = chainage / total
    ground = 1000.0 - 850.0 * x + 12.0 * np.sin(2 * np.pi * 5 * x) * (1 - x)
    ground += rng.normal(0.0, 0.4, ground.shape)
    with open(folder / "profile.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["chainage_m", "ground_m", "label", "zone"])
        for c, g in zip(chainage, ground, strict=True):
            writer.writerow([f"{c:.3f}", f"{g:.3f}", "", "normal"])
    with open(folder / "catalogue.csv", "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["material", "dn_mm", "internal_diameter_mm", "pressure_class",
                         "allowable_head_m", "roughness_mm", "hazen_williams_c", "cost_per_m",
                         "note"])
        writer.writerows(generate.catalogue_rows())
    source = float(ground[0]) + 4.0
    (folder / "study.toml").write_text(f"""title = "synthetic falling route with tanks (invented)"
currency = "USD"

[source]
level_m = {source:.3f}
top_water_level_m = {source + 1.0:.3f}

[outlet]
required_head_m = {float(ground[-1]) + 20.0:.3f}

[route]
profile = "profile.csv"
cover_m = 1.0
min_pressure_m = 2.0

[[offtake]]
chainage_m = 50000.0
flow = "5 L/s"
min_pressure_m = 5.0

[[scenario]]
name = "design"
flow = "60 L/s"

[[scenario]]
name = "horizon"
flow = "75 L/s"
roughness_factor = 2.0

[catalogue]
file = "catalogue.csv"

[rules]
min_piece_length_m = 200.0
max_changes = 30
velocity_max_m_s = 3.0

[costs]
change_cost = 1000.0

[break_pressure_tanks]
cost = {TANK_COST}
height_m = 3.0
max_count = {MAX_TANKS}

[solver]
time_limit_s = {time_limit_s}
mip_gap = {gap}
""", encoding="utf-8")
    return folder / "study.toml"


def run(n_sections: int, seed: int, time_limit_s: float, gap: float) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        study = load_study(write_study(Path(tmp), n_sections, seed, time_limit_s, gap))
        load = os.getloadavg()[0]
        begun = time.perf_counter()
        outcome = optimise_design(study)
        wall = time.perf_counter() - begun
    tanks = [] if outcome.design is None else [t for t in outcome.design.tanks if t.new]
    return {"status": str(outcome.status), "gap": outcome.gap, "wall_s": wall,
            "cost": outcome.total_cost, "bound": outcome.lower_bound,
            "tanks": [round(t.chainage_m) for t in tanks], "load": load,
            "no_new_tank_cost": outcome.no_new_tank_cost,
            "no_new_tank_status": outcome.no_new_tank_status,
            "stages": [(s.name, str(s.status), round(s.seconds, 1)) for s in outcome.stages]}


def report(result: dict, n_sections: int, seed: int, gap: float) -> str:
    baseline = result["no_new_tank_cost"]
    if baseline is None:
        saving = f"no design without new tanks exists ({result['no_new_tank_status']})"
    else:
        saving = (f"{baseline - result['cost']:,.0f} USD against the best design without new "
                  f"tanks ({baseline:,.0f} USD, {result['no_new_tank_status']})")
    stages = "; ".join(f"{name}: {status}, {seconds} s" for name, status, seconds
                       in result["stages"])
    gap_text = "n/a" if result["gap"] is None else f"{result['gap']:.2e}"
    cost = "n/a" if result["cost"] is None else f"{result['cost']:,.0f} USD"
    bound = f"{result['bound'] or 0:,.0f} USD"
    where = ", ".join(map(str, result["tanks"]))
    return f"""## Break-pressure tanks chosen with the pipes (bench_tanks.py)

Seeded invented route (seed {seed}): 100 km, {n_sections} sections, falling about 850 m,
sites at every point, at most {MAX_TANKS} new tanks at {TANK_COST:,.0f} USD each, rules on
(min piece 200 m, at most 30 changes, 1,000 USD a change), two scenarios, 30 options.
Target gap {gap:g}. One run on a shared 2-core machine (load average
{result['load']:.1f} when it started).

| status | gap | wall time | cost | bound | new tanks at (m) |
| --- | --- | --- | --- | --- | --- |
| {result['status']} | {gap_text} | {result['wall_s']:.1f} s | {cost} | {bound} | {where} |

Saving: {saving}.

Stages: {stages}.
"""


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sections", type=int, default=2000)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--time-limit", type=float, default=60.0)
    parser.add_argument("--gap", type=float, default=1e-3)
    parser.add_argument("--no-write", action="store_true")
    args = parser.parse_args()
    result = run(args.sections, args.seed, args.time_limit, args.gap)
    text = report(result, args.sections, args.seed, args.gap)
    print(text)
    if not args.no_write:
        update_section(Path(__file__).with_name("RESULTS.md"), "bench-tanks", text)


if __name__ == "__main__":
    main()
