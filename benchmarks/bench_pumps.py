"""Pumped mains: a 2,000-section rising main, and random rising mains against an
independent linear programme; writes the ``pumps`` section of benchmarks/RESULTS.md.

    python benchmarks/bench_pumps.py                  # 2,000 sections, 100 + 100 mains
    python benchmarks/bench_pumps.py --cases 10       # a quick look
    python benchmarks/bench_pumps.py --max-changes 1 2 3   # the long main with each limit

1. A seeded random rising main of 2,000 sections (``tests/pump_reference.py``, invented
   data: about 11 km rising about 60 m, offtakes, three scenarios with their hours,
   three pressure classes per size, a minimum piece length, a change limit and a change
   cost), designed at gap 1e-4: status, gap, stages, wall time (target: proven within
   1e-4 in at most 10 s); with ``--max-changes`` the rules' change limit set to each
   value given instead of the one drawn.
2. Random rising mains whose classes all take the pressure, rules off: the life-cycle
   cost of the verified design against the independent LP of the same problem (pipe
   lengths and station heads as its variables): never below it, and within 1e-4.
3. Random rising mains with classes and rules on (each given ``--limit`` seconds): never
   below that LP, and every design passes the check.

Not a test: nothing here asserts. The machine is shared; quote the load with the times.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
import tomllib
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE))

from builders import toml_text  # noqa: E402
from pump_reference import independent_life_cycle_cost, write_main  # noqa: E402
from results_file import update_section  # noqa: E402

from optimiser import load_study  # noqa: E402
from optimiser.milp import SolverError, optimise_design  # noqa: E402


def long_main(folder: Path, time_limit_s: float, max_changes: int | None) -> list[str]:
    """Design the 2,000-section main (with ``max_changes`` instead of the drawn change
    limit unless None); lines for the results file."""
    _, path = write_main(folder / f"long-{max_changes}", 2026, sections=2000, classes=True,
                         rules=True, mip_gap=1e-4)
    if max_changes is not None:
        table = tomllib.loads(path.read_text(encoding="utf-8"))
        table["rules"]["max_changes"] = max_changes
        path.write_text(toml_text(table), encoding="utf-8")
    study = load_study(path)
    limit = f"max_changes = {study.rules.max_changes}" + \
        (" as drawn" if max_changes is None else " set")
    started = time.perf_counter()
    try:
        outcome = optimise_design(study, time_limit_s=time_limit_s)
    except SolverError as error:
        return [f"2,000-section rising main ({limit}): no design within {time_limit_s:g} s "
                f"({error}), after {time.perf_counter() - started:.1f} s."]
    wall = time.perf_counter() - started
    lines = [f"2,000-section rising main, 3 scenarios, classes and rules on (seed 2026, "
             f"{limit}, time limit {time_limit_s:g} s, load "
             f"{os.getloadavg()[0]:.2f} at the end): status **{outcome.status}**, gap "
             f"{100 * (outcome.gap or 0):.4f} %, wall time {wall:.1f} s, life-cycle cost "
             f"{outcome.check.life_cycle_cost:,.0f}, verified {outcome.verified}.", "",
             "| stage | status | seconds | objective | bound | binaries |",
             "| --- | --- | --- | --- | --- | --- |"]
    for stage in outcome.stages:
        lines.append(f"| {stage.name} | {stage.status} | {stage.seconds:.2f} | "
                     f"{_money(stage.objective)} | {_money(stage.bound)} | {stage.binaries} |")
    return lines


def _money(value: float | None) -> str:
    return "–" if value is None else f"{value:,.0f}"


def random_mains(folder: Path, cases: int, classes: bool, limit_s: float) -> list[str]:
    """Random mains against the independent LP; one summary line (none without cases)."""
    if cases <= 0:
        return []
    below = above = failed = missing = 0
    worst = 0.0
    seconds = []
    for seed in range(cases):
        main, path = write_main(folder / f"m{seed}-{int(classes)}", seed, classes=classes,
                                rules=classes, mip_gap=1e-4 if classes else 1e-6)
        started = time.perf_counter()
        try:
            outcome = optimise_design(load_study(path), time_limit_s=limit_s)
        except SolverError:
            missing += 1
            seconds.append(time.perf_counter() - started)
            continue
        seconds.append(time.perf_counter() - started)
        reference = independent_life_cycle_cost(main)
        if outcome.check is None or not outcome.verified or not outcome.check.ok:
            failed += 1
            continue
        relative = outcome.check.life_cycle_cost / reference - 1.0
        below += relative < -1e-9
        above += relative > 1e-4
        worst = max(worst, relative)
    what = ("classes and rules on" if classes else "classes take any pressure, rules off")
    seconds.sort()
    return [f"{cases} random rising mains, {what}: below the LP {below}, more than 1e-4 "
            f"above it {above}, failing the check {failed}, no design within the limit "
            f"{missing}; largest excess "
            f"{worst:.2e}; median {seconds[len(seconds) // 2]:.2f} s, slowest "
            f"{seconds[-1]:.1f} s (limit {limit_s:g} s each)."]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=100)
    parser.add_argument("--limit", type=float, default=10.0,
                        help="seconds per random main with classes and rules on")
    parser.add_argument("--long-limit", type=float, default=60.0)
    parser.add_argument("--max-changes", type=int, nargs="+", default=None,
                        help="run the long main with each of these change limits "
                             "(default: the one drawn)")
    args = parser.parse_args()
    load = os.getloadavg()
    with tempfile.TemporaryDirectory() as temporary:
        folder = Path(temporary)
        lines = [f"Load average at the start: {load[0]:.2f} / {load[1]:.2f} / "
                 f"{load[2]:.2f} (2 cores, shared).", ""]
        for max_changes in args.max_changes or [None]:
            lines += long_main(folder, args.long_limit, max_changes)
            lines.append("")
        lines += random_mains(folder, args.cases, classes=False, limit_s=60.0)
        lines.append("")
        lines += random_mains(folder, args.cases, classes=True, limit_s=args.limit)
    lines.append("")
    lines.append(f"Load average at the end: {os.getloadavg()[0]:.2f}.")
    text = "\n".join(["## Pumped mains (`benchmarks/bench_pumps.py`)", "", *lines])
    update_section(HERE / "RESULTS.md", "pumps", text)
    print(text)


if __name__ == "__main__":
    main()
