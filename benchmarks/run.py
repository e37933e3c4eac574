"""Benchmark of ``optimiser design`` on seeded synthetic routes; writes benchmarks/RESULTS.md.

    python benchmarks/run.py                       # 500, 2000, 10000 sections
    python benchmarks/run.py --sizes 500 2000 --time-limit 60 --ga-factor 10

Every case runs in its own process (wall time and peak memory are that process's).
Columns: sections x 30 options x 3 scenarios, rules off/on, HiGHS and CBC, wall time of
the whole run (load, model, solves, verification, uniform comparison), peak resident
memory, cost, best bound, gap, and the LP relaxation's time (build + solve) on the same
instance. A genetic algorithm from a general-purpose library (pymoo's GA; Holland, J.H.
(1975), Adaptation in Natural and Artificial Systems) gets ten times our wall time on
the 2 000-section rules-off instance and its best feasible cost is reported beside ours.
This is a benchmark, not a test: nothing here asserts a time.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from generate import write  # noqa: E402
from results_file import update_section  # noqa: E402


def run_case(study_path: str, solver: str, time_limit_s: float) -> dict:
    """One optimiser run in this process; returns figures as a dict."""
    import warnings

    warnings.filterwarnings("ignore")
    from optimiser import load_study
    from optimiser.milp import StageKind, optimise_design

    started = time.perf_counter()
    study = load_study(study_path)
    try:
        outcome = optimise_design(study, solver_name=solver, time_limit_s=time_limit_s)
        error = ""
    except Exception as exc:  # report the failure in the table, do not stop the run
        outcome, error = None, f"{type(exc).__name__}: {exc}"
    wall = time.perf_counter() - started
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    result = {"wall_s": wall, "peak_mb": peak_mb, "error": error}
    if outcome is not None:
        lp_stages = [s for s in outcome.stages if s.kind is StageKind.LP_RELAXATION]
        result.update({
            "status": outcome.status, "cost": outcome.total_cost,
            "bound": outcome.lower_bound, "gap": outcome.gap, "lp_bound": outcome.lp_bound,
            "lp_s": (sum(s.seconds + s.build_seconds for s in lp_stages)
                     if lp_stages else None),
            "pieces": len(outcome.design.pieces) if outcome.design else None,
            "verified": outcome.verified,
            "stages": [s.as_dict() for s in outcome.stages],
        })
    return result


def run_full_lp(study_path: str) -> dict:
    """The plain LP relaxation of the full model on one instance (rules relaxed, a
    pressure row at every check point not screened out, no row generation): prepare +
    build + solve, in this process. The reference for "x times the LP relaxation"."""
    import warnings

    warnings.filterwarnings("ignore")
    from optimiser import load_study
    from optimiser.milp import prepare
    from optimiser.milp.formulation import build
    from optimiser.milp.solvers import solve

    study = load_study(study_path)
    started = time.perf_counter()
    form = build(prepare(study), with_rules=False, relaxed=True)
    report = solve(form, "highs", time_limit_s=600.0, mip_gap=1e-4)
    return {"full_lp_s": time.perf_counter() - started, "full_lp_status": report.status,
            "full_lp_value": report.objective}


def run_ga(study_path: str, seconds: float, seed: int = 1) -> dict:
    """pymoo GA: one catalogue option per section, constraints = pressure and outlet
    margins (contract section 5, vectorised), best feasible design confirmed by the check."""
    import warnings

    import numpy as np

    warnings.filterwarnings("ignore")
    from pymoo.algorithms.soo.nonconvex.ga import GA
    from pymoo.core.problem import Problem
    from pymoo.operators.crossover.sbx import SBX
    from pymoo.operators.mutation.pm import PM
    from pymoo.operators.repair.rounding import RoundingRepair
    from pymoo.operators.sampling.rnd import IntegerRandomSampling
    from pymoo.optimize import minimize
    from pymoo.termination.max_time import TimeBasedTermination

    from optimiser import load_study
    from optimiser.analysis import check_design
    from optimiser.milp import prepare
    from optimiser.model import Design, Piece

    study = load_study(study_path)
    data = prepare(study)
    n = data.n_sections
    choices = [np.flatnonzero(data.admissible[s]) for s in range(n)]
    upper = np.array([len(c) - 1 for c in choices])
    table = np.full((n, int(upper.max()) + 1), -1)
    for s, c in enumerate(choices):
        table[s, :len(c)] = c
    pipe = data.node_pipe_level_m
    limit = data.node_min_pressure_m
    rows = np.arange(n)

    def evaluate(genes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        options = table[rows[None, :], np.minimum(genes, upper[None, :])]  # (pop, n)
        cost = data.section_cost[rows[None, :], options].sum(axis=1)
        worst = []
        for k in range(data.n_scenarios):
            loss = data.section_loss_m[k][rows[None, :], options]
            head = data.velocity_head_m[k][rows[None, :], options]
            point = data.node_point_k[None, :-1] * head
            point[:, 0] += study.source.entrance_k * head[:, 0]
            start = data.source_level_m[k] - np.cumsum(point + loss, axis=1) + loss
            end = start - loss
            margin = np.minimum((start - head - pipe[None, :-1] - limit[None, :-1]).min(axis=1),
                                (end - head - pipe[None, 1:] - limit[None, 1:]).min(axis=1))
            outlet = (end[:, -1] - (data.node_point_k[-1] + study.outlet.exit_k) * head[:, -1]
                      - study.outlet.required_head_m)
            worst.append(np.minimum(margin, outlet))
        return cost, -np.min(np.array(worst), axis=0)

    class Route(Problem):
        def __init__(self) -> None:
            super().__init__(n_var=n, n_obj=1, n_ieq_constr=1, xl=np.zeros(n), xu=upper,
                             vtype=int)

        def _evaluate(self, x, out, *args, **kwargs):
            cost, violation = evaluate(np.round(x).astype(int))
            out["F"] = cost
            out["G"] = violation

    algorithm = GA(pop_size=100, sampling=IntegerRandomSampling(),
                   crossover=SBX(prob=0.9, eta=3.0, vtype=float, repair=RoundingRepair()),
                   mutation=PM(eta=3.0, vtype=float, repair=RoundingRepair()),
                   eliminate_duplicates=True)
    started = time.perf_counter()
    result = minimize(Route(), algorithm, TimeBasedTermination(max_time=seconds), seed=seed,
                      verbose=False)
    wall = time.perf_counter() - started
    out = {"wall_s": wall, "generations": int(result.algorithm.n_gen), "cost": None,
           "verified": False}
    if result.X is not None and result.CV is not None and float(np.min(result.CV)) <= 0:
        genes = np.round(np.atleast_2d(result.X)[0]).astype(int)
        options = table[rows, np.minimum(genes, upper)]
        chainage = data.node_chainage_m
        design = Design(tuple(Piece(float(chainage[s]), float(chainage[s + 1]),
                                    study.catalogue[int(options[s])])
                              for s in range(n))).merged()
        check = check_design(study, design, capacity=False)
        out.update({"cost": check.total_cost, "verified": check.ok})
    return out


def _child(kind: str, *args: str) -> dict:
    command = [sys.executable, str(Path(__file__).resolve()), f"--{kind}", *args]
    completed = subprocess.run(command, capture_output=True, text=True, check=False)
    try:
        return json.loads(completed.stdout.strip().splitlines()[-1])
    except (IndexError, json.JSONDecodeError):
        return {"error": (completed.stderr or completed.stdout)[-400:]}


def _fmt(value, spec: str, none: str = "-") -> str:
    return none if value is None else format(value, spec)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--sizes", type=int, nargs="+", default=[500, 2000, 10000])
    parser.add_argument("--solvers", nargs="+", default=["highs", "cbc"])
    parser.add_argument("--time-limit", type=float, default=60.0)
    parser.add_argument("--ga-factor", type=float, default=10.0)
    parser.add_argument("--ga-sections", type=int, default=2000)
    parser.add_argument("--no-ga", action="store_true")
    parser.add_argument("--output", type=Path, default=HERE / "RESULTS.md")
    parser.add_argument("--case", nargs=3, help=argparse.SUPPRESS)
    parser.add_argument("--ga", nargs=2, help=argparse.SUPPRESS)
    parser.add_argument("--full-lp", nargs=1, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.full_lp:
        print(json.dumps(run_full_lp(args.full_lp[0])))
        return
    if args.case:
        print(json.dumps(run_case(args.case[0], args.case[1], float(args.case[2]))))
        return
    if args.ga:
        print(json.dumps(run_ga(args.ga[0], float(args.ga[1]))))
        return

    folder = Path(tempfile.mkdtemp(prefix="pipe_bench_"))
    rows = []
    header = ("| sections | rules | solver | status | wall s | peak MB | cost | bound | gap |"
              " LP s | full LP s | pieces |")
    print(header)
    for size in args.sizes:
        for rules in (False, True):
            study = write(folder / f"{size}_{'on' if rules else 'off'}", size, rules=rules)
            full_lp = _child("full-lp", str(study))
            for solver in args.solvers:
                figures = _child("case", str(study), solver, str(args.time_limit))
                figures.update({"sections": size, "rules": rules, "solver": solver,
                                "full_lp_s": full_lp.get("full_lp_s")})
                rows.append(figures)
                line = (f"| {size} | {'on' if rules else 'off'} | {solver} | "
                        f"{figures.get('status', 'error')} | "
                        f"{_fmt(figures.get('wall_s'), '.1f')} | "
                        f"{_fmt(figures.get('peak_mb'), '.0f')} | "
                        f"{_fmt(figures.get('cost'), ',.0f')} | "
                        f"{_fmt(figures.get('bound'), ',.0f')} | "
                        f"{_fmt(figures.get('gap'), '.1e')} | "
                        f"{_fmt(figures.get('lp_s'), '.1f')} | "
                        f"{_fmt(figures.get('full_lp_s'), '.1f')} | "
                        f"{_fmt(figures.get('pieces'), 'd')} |")
                print(line, flush=True)
    ga = None
    ours = next((r for r in rows if r["sections"] == args.ga_sections and not r["rules"]
                 and r["solver"] == "highs" and r.get("cost")), None)
    if not args.no_ga and ours is not None:
        study = folder / f"{args.ga_sections}_off" / "study.toml"
        ga = _child("ga", str(study), str(args.ga_factor * ours["wall_s"]))
        ga["ours"] = ours["cost"]
        print("GA:", ga)
    write_results(args, rows, ga)


def write_results(args, rows: list[dict], ga: dict | None) -> None:
    lines = [
        "# Benchmark of `optimiser design`",
        "",
        "Written by `python benchmarks/run.py` (seeded synthetic routes from",
        "`benchmarks/generate.py`; all data invented). 100 km routes, 30 options (10 sizes x",
        "3 classes), 3 scenarios, 3 offtakes, rock zones; rules on = min piece 200 m, at most",
        "10 changes, change cost 2 000. Time limit "
        f"{args.time_limit:g} s per run, relative gap target 1e-4.",
        "",
        f"Machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
        f"Python {platform.python_version()}.",
        "",
        "Wall = whole run (load, models, solves, verification by the check, uniform "
        "comparison); LP = the optimiser's own LP relaxation, build + solve of all its "
        "row-generation rounds; full LP = the plain LP relaxation of the full model "
        "(rules relaxed, a row at every check point that can bind, no row generation), "
        "prepare + build + solve, on the same instance; x LP = wall / full LP.",
        "",
        "| sections | rules | solver | status | wall s | peak MB | cost | bound | gap | LP s |"
        " full LP s | x LP | pieces | note |",
        "|---:|:---|:---|:---|---:|---:|---:|---:|---:|---:|---:|---:|---:|:---|",
    ]
    for r in rows:
        note = r.get("error", "")[:80]
        if not note and r.get("stages"):
            last = [s for s in r["stages"] if s["status"] != "skipped"][-1]
            note = f"last stage: {last['name']} ({last['status']})"
        ratio = (r["wall_s"] / r["full_lp_s"]) if r.get("wall_s") and r.get("full_lp_s") \
            else None
        lines.append(
            f"| {r['sections']} | {'on' if r['rules'] else 'off'} | {r['solver']} | "
            f"{r.get('status', 'error')} | {_fmt(r.get('wall_s'), '.1f')} | "
            f"{_fmt(r.get('peak_mb'), '.0f')} | {_fmt(r.get('cost'), ',.0f')} | "
            f"{_fmt(r.get('bound'), ',.0f')} | {_fmt(r.get('gap'), '.1e')} | "
            f"{_fmt(r.get('lp_s'), '.1f')} | {_fmt(r.get('full_lp_s'), '.1f')} | "
            f"{_fmt(ratio, '.1f')} | {_fmt(r.get('pieces'), 'd')} | {note} |")
    if ga is not None:
        lines += ["", "## Genetic algorithm (pymoo GA) on the same instance",
                  "",
                  f"{args.ga_sections} sections, rules off, one option per section, "
                  f"{_fmt(ga.get('wall_s'), '.0f')} s ({args.ga_factor:g} x our wall time), "
                  f"{ga.get('generations', '-')} generations: best feasible cost "
                  f"{_fmt(ga.get('cost'), ',.0f', 'none found')} (verified by the check: "
                  f"{ga.get('verified')}) against ours {_fmt(ga.get('ours'), ',.0f')}."]
    update_section(args.output, "design", "\n".join(lines))
    print(f"wrote {args.output}")


if __name__ == "__main__":
    main()
