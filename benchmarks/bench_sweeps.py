"""Speed of the sweeps: Monte Carlo of a fixed design, and a trade-off on the demo study.

    python benchmarks/bench_sweeps.py            # both, updates benchmarks/RESULTS.md
    python benchmarks/bench_sweeps.py --skip-tradeoff

(a) 1,000 Monte Carlo samples of a fixed design on a 2,000-section route (the seeded,
    invented route of ``benchmarks/generate.py`` with a three-piece design written here),
    median of 5 runs; target <= 2 s.
(b) a 25-step trade-off over the source level on the demo study
    (studies/demo-gravity-main/study.toml), serial and with 2 worker processes, wall
    time; target <= 30 s on 2 cores. Each step is solved with ``--gap`` (default 1e-2)
    and ``--time-limit`` (default 20 s): at the study's own gap of 1e-4 one demo solve
    alone can take the whole default time limit.

Only the section between ``<!-- sweeps:start -->`` and ``<!-- sweeps:end -->`` of
``benchmarks/RESULTS.md`` is rewritten; the rest of the file is kept as it is.
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import tempfile
import time
from pathlib import Path

import generate  # benchmarks/generate.py, beside this script
import numpy as np
from results_file import update_section

import optimiser
from optimiser.analysis.sensitivity import RoughnessDistribution, monte_carlo
from optimiser.model import Status
from optimiser.sweeps.tradeoff import tradeoff

ROOT = Path(__file__).resolve().parent.parent
RESULTS = ROOT / "benchmarks" / "RESULTS.md"
DEMO = ROOT / "studies" / "demo-gravity-main" / "study.toml"
START = "<!-- sweeps:start -->"
END = "<!-- sweeps:end -->"
SEED = 1
# A fixed design for the generator's route: three runs of its invented "synthetic" pipe,
# getting smaller downstream, PN25 throughout (fractions of the route length).
DESIGN = [(0.0, 0.45, 700), (0.45, 0.75, 600), (0.75, 1.0, 500)]


def synthetic_study(folder: Path, sections: int = 2000, seed: int = SEED) -> Path:
    """The benchmark generator's invented route (``benchmarks/generate.py``) with
    ``sections`` sections, and a three-piece design beside it; returns the study path."""
    path = generate.write(folder, sections, rules=False, seed=seed)
    study = optimiser.load_study(path)
    total = study.route.total_chainage_m
    rows = ["from_m,to_m,material,dn_mm,pressure_class"]
    rows += [f"{a * total:.3f},{b * total:.3f},synthetic,{dn},PN25" for a, b, dn in DESIGN]
    (folder / "design.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def bench_monte_carlo(runs: int = 5, samples: int = 1000) -> dict:
    with tempfile.TemporaryDirectory() as temporary:
        path = synthetic_study(Path(temporary))
        study = optimiser.load_study(path)
        design = optimiser.load_design(path.parent / "design.csv", study)
    distribution = RoughnessDistribution("log-uniform", 0.01, 0.5)
    rates = {"synthetic": 0.01}
    times = []
    result = None
    for _ in range(runs):
        started = time.perf_counter()
        result = monte_carlo(study, design, distribution, samples=samples, seed=7,
                             years=25.0, ageing_mm_per_year=rates)
        times.append(time.perf_counter() - started)
    assert result is not None
    summary = result.summary
    return {"sections": study.route.n_sections, "pieces": len(design.pieces),
            "scenarios": len(study.scenarios), "samples": samples, "times_s": times,
            "median_s": statistics.median(times),
            "probability": dict(zip(summary["scenario"], summary["probability_meets"],
                                    strict=True))}


def bench_tradeoff(steps: int = 25, mip_gap: float = 1e-2, time_limit_s: float = 20.0
                   ) -> dict:
    study = optimiser.load_study(DEMO)
    own = study.source.level_m
    values = np.linspace(own - 6.0, own + 18.0, steps).tolist()
    figures: dict = {"steps": steps, "from_m": values[0], "to_m": values[-1],
                     "mip_gap": mip_gap, "time_limit_s": time_limit_s}
    tables = {}
    for workers in (1, 2):
        started = time.perf_counter()
        tables[workers] = tradeoff(study, "source-level", values, workers=workers,
                                   mip_gap=mip_gap, time_limit_s=time_limit_s)
        figures[f"workers_{workers}_s"] = time.perf_counter() - started
    # Solves stopped by the time limit may differ between runs; compare the rest.
    stable = tables[1]["status"] != Status.FEASIBLE
    figures["identical"] = tables[1][stable].equals(tables[2][stable])
    figures["statuses"] = tables[1]["status"].value_counts().to_dict()
    figures["ratio"] = figures["workers_1_s"] / figures["workers_2_s"]
    return figures


def section_text(mc: dict, trade: dict) -> str:
    lines = [START, "## Sweeps (`benchmarks/bench_sweeps.py`)", "",
             f"Machine: {os.cpu_count()} cores, Python {platform.python_version()}, "
             f"numpy {np.__version__}; shared and noisy, figures from one run.", ""]
    if mc:
        runs = ", ".join(f"{t:.3f}" for t in mc["times_s"])
        lines += [
            f"- Monte Carlo: {mc['samples']:,} samples of a fixed {mc['pieces']}-piece design "
            f"on an invented {mc['sections']:,}-section route, {mc['scenarios']} scenarios "
            f"(capacity by vectorised root search, margins, probability of meeting): "
            f"median **{mc['median_s']:.3f} s** of 5 runs ({runs} s); target <= 2 s "
            f"({'met' if mc['median_s'] <= 2.0 else 'MISSED'}).",
        ]
    if trade:
        statuses = ", ".join(f"{v} {k}" for k, v in sorted(trade["statuses"].items()))
        lines += [
            f"- Trade-off: {trade['steps']} steps of source level "
            f"{trade['from_m']:.1f}-{trade['to_m']:.1f} m on the demo study, each "
            f"re-optimised with `--gap {trade['mip_gap']:g} --time-limit "
            f"{trade['time_limit_s']:g}` ({statuses}): serial "
            f"**{trade['workers_1_s']:.1f} s**, `--workers 2` "
            f"**{trade['workers_2_s']:.1f} s** (serial/parallel "
            f"{trade['ratio']:.2f}); tables identical apart from steps stopped by the time "
            f"limit: {trade['identical']}; target <= 30 s on 2 cores "
            f"({'met' if trade['workers_2_s'] <= 30.0 else 'MISSED'}).",
        ]
    lines += ["", END]
    return "\n".join(lines) + "\n"


def update_results(text: str) -> None:
    """Replace only this script's section of RESULTS.md (append it if missing)."""
    body = text.replace(START, "").replace(END, "")
    update_section(RESULTS, "sweeps", body)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--skip-tradeoff", action="store_true",
                        help="Monte Carlo only (RESULTS.md is then left as it is)")
    parser.add_argument("--gap", type=float, default=1e-2, help="trade-off: relative gap")
    parser.add_argument("--time-limit", type=float, default=20.0,
                        help="trade-off: seconds per solve")
    parser.add_argument("--no-write", action="store_true", help="print only")
    arguments = parser.parse_args()
    mc = bench_monte_carlo()
    print(f"Monte Carlo: median {mc['median_s']:.3f} s; runs "
          f"{', '.join(f'{t:.3f}' for t in mc['times_s'])}; P(meets) {mc['probability']}")
    if arguments.skip_tradeoff:
        return
    trade = bench_tradeoff(mip_gap=arguments.gap, time_limit_s=arguments.time_limit)
    print(f"Trade-off: serial {trade['workers_1_s']:.1f} s, 2 workers "
          f"{trade['workers_2_s']:.1f} s, ratio {trade['ratio']:.2f}, identical "
          f"{trade['identical']}, statuses {trade['statuses']}")
    if not arguments.no_write:
        update_results(section_text(mc, trade))
        print(f"updated {RESULTS}")


if __name__ == "__main__":
    main()
