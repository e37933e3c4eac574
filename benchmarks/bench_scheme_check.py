"""Time the check of a given design on a branched scheme (contract section 7).

A seeded, invented scheme: a 20 km trunk of 200 sections and 60 branches of 30 sections
each (2,000 sections in all), 3 scenarios, one pipe per line. The check runs without
capacities (as the optimiser's search calls it) and with them (the delivery point of
every line and its uncontrolled flow, as ``check`` and the final check of ``design``
call it). For comparison, the same on the seeded 2,000-section single route of
``generate.py`` (30 options, 3 scenarios) with a fixed design of three pieces. Rewrites
only its own section (``<!-- scheme-check:start -->`` and ``<!-- scheme-check:end -->``)
of ``benchmarks/RESULTS.md`` unless ``--no-write``.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import statistics
import tempfile
import time
from datetime import UTC, datetime
from pathlib import Path

import generate
import numpy as np
from results_file import update_section

from optimiser import check_design, load_study
from optimiser.model import (
    Branch,
    Catalogue,
    CostRules,
    Design,
    DesignRules,
    Friction,
    Outlet,
    Piece,
    PipeOption,
    Route,
    Scenario,
    SolverSettings,
    Source,
    Study,
)

RESULTS = Path(__file__).with_name("RESULTS.md")


def _route(chainage_m: np.ndarray, ground_m: np.ndarray) -> Route:
    n = len(chainage_m)
    return Route(chainage_m=chainage_m, ground_m=ground_m, cover_m=1.0, labels=[""] * n,
                 zones=[""] * (n - 1))


def scheme(seed: int = 1, branches: int = 60) -> tuple[Study, Design]:
    """The invented scheme and a design of one option per line (invented prices)."""
    rng = np.random.default_rng(seed)
    trunk_chainage = np.linspace(0.0, 20_000.0, 201)
    trunk_ground = 500.0 - 0.01 * trunk_chainage + rng.normal(0.0, 1.0, 201)
    big = PipeOption("DI", 300, 312.0, "K9", 250.0, 0.1, 140.0, 140.0)
    small = PipeOption("PE", 160, 141.0, "PN10", 102.0, 0.02, 150.0, 30.0)
    lines, pieces = [], [Piece(0.0, 20_000.0, big)]
    for index in range(branches):
        at = float(trunk_chainage[3 * index + 5])
        chainage = np.linspace(0.0, 1_500.0, 31)
        ground = float(np.interp(at, trunk_chainage, trunk_ground)) - 0.01 * chainage \
            + np.concatenate([[0.0], rng.normal(0.0, 0.5, 30)])
        lines.append(Branch(name=f"branch {index + 1}", parent="main", at_chainage_m=at,
                            route=_route(chainage, ground), flow_m3_s=0.0005,
                            required_head_m=float(ground[-1])))
        pieces.append(Piece(0.0, 1_500.0, small, f"branch {index + 1}"))
    study = Study(
        title="Invented benchmark scheme", currency="", kinematic_viscosity_m2_s=1.14e-6,
        temperature_c=None, source=Source(505.0, 506.0), outlet=Outlet(200.0),
        route=_route(trunk_chainage, trunk_ground), min_pressure_m=0.0,
        local_k_per_km=0.0, fittings=(), offtakes=(),
        scenarios=tuple(Scenario(name, flow, 505.0) for name, flow in
                        (("average", 0.010), ("peak", 0.020), ("night", 0.004))),
        catalogue=Catalogue((big, small)), surge_allowance_m=0.0,
        friction=Friction.COLEBROOK_WHITE, rules=DesignRules(), costs=CostRules(),
        solver=SolverSettings())
    return dataclasses.replace(study, branches=tuple(lines)), Design(tuple(pieces))


def single_route(folder: Path) -> tuple[Study, Design]:
    """The seeded 2,000-section route of ``generate.py`` (rules on) and a design of three
    pieces (DN600 PN16, DN500 PN25, DN450 PN25 by thirds; not its optimum)."""
    study = load_study(generate.write(folder, 2000, rules=True))
    option = {(o.dn_mm, o.pressure_class): o for o in study.catalogue.options}
    end = float(study.route.chainage_m[-1])
    cuts = [0.0, end / 3, 2 * end / 3, end]
    chosen = [option[(600, "PN16")], option[(500, "PN25")], option[(450, "PN25")]]
    return study, Design(tuple(Piece(a, b, o) for a, b, o in
                               zip(cuts[:-1], cuts[1:], chosen, strict=True)))


def median_times(study: Study, design: Design, runs: int) -> dict[bool, float]:
    """Median wall time [s] of the check without and with capacities."""
    times: dict[bool, list[float]] = {False: [], True: []}
    for _ in range(runs):
        for capacity in (False, True):
            start = time.perf_counter()
            check_design(study, design, capacity=capacity)
            times[capacity].append(time.perf_counter() - start)
    return {capacity: statistics.median(values) for capacity, values in times.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--no-write", action="store_true", help="do not update RESULTS.md")
    args = parser.parse_args()
    study, design = scheme()
    sections = study.route.n_sections + sum(b.route.n_sections for b in study.branches)
    load = " / ".join(f"{value:.1f}" for value in os.getloadavg())
    when = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    on_scheme = median_times(study, design, args.runs)
    with tempfile.TemporaryDirectory() as folder:
        route_study, route_design = single_route(Path(folder))
        on_route = median_times(route_study, route_design, args.runs)
    text = "\n".join([
        "## Check of a branched scheme (`bench_scheme_check.py`)", "",
        f"Measured {when}, load average {load} (1 / 5 / 15 min) at the start, on the "
        f"shared 2-core machine. Seeded invented scheme: a trunk and "
        f"{len(study.branches)} branches, {sections} sections, {len(study.scenarios)} "
        f"scenarios; the 2,000-section single route of `generate.py` with a fixed "
        f"three-piece design for comparison; median of {args.runs} runs.", "",
        "| check | scheme, median s | single route, median s |", "| --- | --- | --- |",
        f"| without capacities | {on_scheme[False]:.2f} | {on_route[False]:.2f} |",
        f"| with capacities and every delivery point's uncontrolled flow | "
        f"{on_scheme[True]:.2f} | {on_route[True]:.2f} |"])
    print(text)
    if not args.no_write:
        update_section(RESULTS, "scheme-check", text)


if __name__ == "__main__":
    main()
