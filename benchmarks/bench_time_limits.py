"""Benchmark: does every path of ``design`` end near its time limit?

Runs :func:`optimiser.milp.optimise_design` on every demo in ``studies/`` and on the
seeded, invented benchmark studies (the 2,000-section route with the rules, also on CBC;
the tank route of ``bench_tanks.py``; the 2,000-section pumped main of ``bench_pumps.py``
with one and with three changes allowed; the 60-branch scheme and the 70-node network of
``bench_schemes.py``; a falling scheme where ``design`` adds tanks at every point; the
60-branch scheme fed by a pump) with time limits of 2, 5 and 10 s, and prints for each
run the wall time, wall / limit, the status, the sum of the stage records' seconds and
the time of the final check (the check with capacities, timed again after the run:
every run ends with it and it comes on top of the limit). A run is flagged when, the
final check left out, it ends more than 10 % + 1 s after its limit. Writes its own
section of ``benchmarks/RESULTS.md``.

    python benchmarks/bench_time_limits.py [--limits 2 5 10] [--cases NAME ...] [--no-write]

Not a test: nothing here asserts. The machine is shared; the load average is printed with
every run. Nothing here describes a real place or price.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import sys
import tempfile
import time
import tomllib
from collections.abc import Callable
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests"))
sys.path.insert(0, str(HERE))

import bench_schemes  # noqa: E402
import bench_tanks  # noqa: E402
import generate  # noqa: E402
from builders import toml_text  # noqa: E402
from falling_scheme import write_falling_scheme  # noqa: E402
from pump_reference import write_main  # noqa: E402
from results_file import update_section  # noqa: E402

from optimiser import load_study  # noqa: E402
from optimiser.analysis import check_design  # noqa: E402
from optimiser.milp import SolverError, optimise_design  # noqa: E402
from optimiser.model import PumpStation, Study  # noqa: E402

STUDIES = HERE.parent / "studies"
Builder = Callable[[Path], Study]


def _demo(path: Path) -> Builder:
    return lambda folder: load_study(path)


def _route(folder: Path) -> Study:
    return load_study(generate.write(folder, 2000, rules=True, seed=1))


def _with_cbc(build: Builder) -> Builder:
    def built(folder: Path) -> Study:
        study = build(folder)
        return dataclasses.replace(study, solver=dataclasses.replace(study.solver, name="cbc"))
    return built


def _tank_route(folder: Path) -> Study:
    return load_study(bench_tanks.write_study(folder, 2000, 7, 60.0, 1e-3))


def _pumped_main(folder: Path, changes: int = 3) -> Study:
    _, path = write_main(folder, 2026, sections=2000, classes=True, rules=True, mip_gap=1e-4)
    table = tomllib.loads(path.read_text(encoding="utf-8"))
    table["rules"]["max_changes"] = changes
    path.write_text(toml_text(table), encoding="utf-8")
    return load_study(path)


def scheme_new_tanks(folder: Path) -> Study:
    """The falling scheme of ``tests/falling_scheme.py`` (new tanks at every point)."""
    return load_study(write_falling_scheme(folder))


def pumped_scheme(folder: Path) -> Study:
    """The 60-branch scheme fed by a pump, its source 25 m lower."""
    study = bench_schemes.scheme_60(folder)
    scenarios = tuple(dataclasses.replace(s, source_level_m=s.source_level_m - 25.0,
                                          hours_per_year=2000.0) for s in study.scenarios)
    return dataclasses.replace(study, scenarios=scenarios,
                               pump=PumpStation(efficiency=0.7, energy_price=0.15))


def cases() -> dict[str, Builder]:
    found: dict[str, Builder] = {}
    for path in sorted(STUDIES.glob("*/**/*.toml")):
        name = str(path.relative_to(STUDIES).with_suffix(""))
        found[name.replace("/study", "")] = _demo(path)
    found |= {"route 2,000 sections, rules": _route,
              "route 2,000 sections, rules, CBC": _with_cbc(_route),
              "tank route 2,000 sections": _tank_route,
              "pumped main 2,000 sections, 1 change": lambda f: _pumped_main(f, 1),
              "pumped main 2,000 sections, 3 changes": _pumped_main,
              "scheme 60 branches": bench_schemes.scheme_60,
              "network 70 nodes": bench_schemes.rural_70,
              "scheme with new tanks": scheme_new_tanks,
              "pumped scheme 60 branches": pumped_scheme}
    return found


def measure(build: Builder, limit_s: float) -> dict:
    """One run of ``design`` with ``limit_s``: wall time, status, stages, final check."""
    with tempfile.TemporaryDirectory() as tmp:
        study = build(Path(tmp))
        load = os.getloadavg()[0]
        begun = time.perf_counter()
        try:
            outcome = optimise_design(study, time_limit_s=limit_s)
        except Exception as error:
            kind = "no design" if isinstance(error, SolverError) else type(error).__name__
            return {"wall": time.perf_counter() - begun, "status": f"{kind}: {error}"[:60],
                    "stages": 0.0, "check": None, "load": load, "slowest": ""}
        wall = time.perf_counter() - begun
        check_s = None
        if outcome.design is not None:
            checked = time.perf_counter()
            check_design(study, outcome.design)
            check_s = time.perf_counter() - checked
    slowest = max(outcome.stages, key=lambda s: s.seconds + s.build_seconds, default=None)
    return {"wall": wall, "status": str(outcome.status), "load": load,
            "stages": sum(s.seconds + s.build_seconds for s in outcome.stages),
            "check": check_s, "gap": outcome.gap,
            "slowest": "" if slowest is None else
            f"{slowest.name[:70]} ({slowest.seconds + slowest.build_seconds:.1f} s)"}


def overruns(result: dict, limit_s: float) -> bool:
    """More than 10 % + 1 s past the limit, the final check (allowed on top) left out."""
    return result["wall"] - (result["check"] or 0.0) > 1.1 * limit_s + 1.0


def row(name: str, limit_s: float, result: dict) -> str:
    check = "–" if result["check"] is None else f"{result['check']:.2f}"
    gap = result.get("gap")
    gap_text = "–" if gap is None else f"{100 * gap:.3f} %"
    flag = " **over**" if overruns(result, limit_s) else ""
    return (f"| {name} | {limit_s:g} | {result['wall']:.1f} | {result['wall'] / limit_s:.2f}"
            f"{flag} | {result['status']} | {gap_text} | {result['stages']:.1f} | {check} | "
            f"{result['load']:.1f} | {result['slowest']} |")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--limits", type=float, nargs="+", default=[2.0, 5.0, 10.0])
    parser.add_argument("--cases", nargs="+", default=None,
                        help="names (or parts of names) of the cases to run")
    parser.add_argument("--no-write", action="store_true")
    args = parser.parse_args()
    chosen = {name: build for name, build in cases().items()
              if args.cases is None or any(part in name for part in args.cases)}
    start_load = os.getloadavg()
    lines = ["| case | limit s | wall s | wall / limit | status | gap | stages s | "
             "final check s | load | slowest stage |",
             "| --- | ---: | ---: | ---: | --- | ---: | ---: | ---: | ---: | --- |"]
    print("\n".join(lines), flush=True)
    over = 0
    for name, build in chosen.items():
        for limit_s in args.limits:
            result = measure(build, limit_s)
            over += overruns(result, limit_s)
            lines.append(row(name, limit_s, result))
            print(lines[-1], flush=True)
    text = "\n".join([
        "## Time limits (`benchmarks/bench_time_limits.py`)", "",
        f"Measured {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())} on the shared 2-core "
        f"machine, load average {start_load[0]:.1f} / {start_load[1]:.1f} / "
        f"{start_load[2]:.1f} (1 / 5 / 15 min) at the start; each row's load at its start.",
        "Every run of `design` with the limit given; wall time of `optimise_design` (its "
        "final check included); 'stages s': the stage records' seconds (build + solve) "
        "summed; 'final check s': the check with capacities timed again after the run "
        "(every run ends with one). **over**: wall less the final check more than 10 % + 1 s "
        "past the limit.", "",
        *lines, "",
        f"Runs past 10 % + 1 s of their limit: {over} of {len(lines) - 2}."])
    print(f"\nRuns past 10 % + 1 s of their limit: {over} of {len(lines) - 2}.")
    if not args.no_write:
        update_section(HERE / "RESULTS.md", "time-limits", text)


if __name__ == "__main__":
    main()
