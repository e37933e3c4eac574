"""Command functions ``tradeoff`` and ``sensitivity`` for the command line.

They are plain typer command functions; ``optimiser.cli`` registers them with
``app.command()(tradeoff)`` and ``app.command()(sensitivity)``. Exit codes follow
contract section 6: 0 done (a step without a feasible design is a result of a sweep,
not an error), 2 bad input or usage, 3 a solver failed on some step (the other steps are
still printed and written).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Annotated, TypeVar

import numpy as np
import typer

from optimiser.analysis import check_design
from optimiser.analysis.sensitivity import (
    DISTRIBUTIONS,
    RoughnessDistribution,
    monte_carlo,
    roughness_sweep,
)
from optimiser.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_SOLVER, console, error_console, fail_input
from optimiser.io import InputError, load_design, load_study
from optimiser.io.units import parse_flow_m3_s
from optimiser.io.writers import prepare_out_dir
from optimiser.milp.solvers import SOLVERS
from optimiser.model import Design, Friction, Study
from optimiser.reports.sweep_report import (
    MonteCarloSettings,
    SensitivityResult,
    print_sensitivity,
    print_tradeoff,
    write_sensitivity_files,
    write_tradeoff_files,
)
from optimiser.reports.terminal import print_cautions
from optimiser.sweeps.robust import roughness_runs
from optimiser.sweeps.tradeoff import STATUS_FAILED, tradeoff_with_study_point
from optimiser.sweeps.variants import VARIABLES

T = TypeVar("T")
_LEVEL = re.compile(r"^\s*([-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?)\s*(m)?\s*$")

StudyArgument = Annotated[Path, typer.Argument(help="Study file (TOML).", show_default=False)]
OutOption = Annotated[Path, typer.Option("--out", help="Folder for the CSV, JSON and HTML "
                                         "files (created if missing).", show_default=False)]
WorkersOption = Annotated[int, typer.Option(
    "--workers", help="Solve on this many local processes (results identical to serial).")]
DaskOption = Annotated[str | None, typer.Option(
    "--dask", help="Address of an existing Dask scheduler to run the solves on, e.g. "
    "tcp://127.0.0.1:8786.", show_default=False)]
SolverOption = Annotated[str | None, typer.Option(
    "--solver", help="highs or cbc (default: the study's solver name).", show_default=False)]
TimeLimitOption = Annotated[float | None, typer.Option(
    "--time-limit", help="Seconds per solve (default: the study's).", show_default=False)]
GapOption = Annotated[float | None, typer.Option(
    "--gap", help="Relative optimality gap (default: the study's).", show_default=False)]


# --------------------------------------------------------------------------- parsing


def parse_level_m(option: str, text: str) -> float:
    """A level or head in metres: ``842.5`` or ``842.5 m``."""
    match = _LEVEL.match(text)
    if not match or not math.isfinite(float(match.group(1))):
        raise ValueError(f"{option}: expected a level in metres such as 842.5, got {text!r}")
    return float(match.group(1))


def parse_sweep_value(option: str, variable: str, text: str) -> float:
    """``--from``/``--to`` in SI units: a flow with its unit for ``flow``, else metres."""
    if variable == "flow":
        try:
            return parse_flow_m3_s(text)
        except ValueError as error:
            raise ValueError(f"{option}: {error}") from None
    return parse_level_m(option, text)


def parse_ageing(items: list[str]) -> tuple[dict[str, float], list[str]]:
    """``MATERIAL=RATE`` items (mm/year) into a dict, and the problems found."""
    rates: dict[str, float] = {}
    problems: list[str] = []
    for item in items:
        material, sign, rate_text = item.rpartition("=")
        material = material.strip()
        if not sign or not material:
            problems.append(f"--ageing {item!r}: expected MATERIAL=RATE with the rate in "
                            "mm/year, e.g. --ageing \"ductile iron=0.02\"")
            continue
        try:
            rate = float(rate_text)
        except ValueError:
            problems.append(f"--ageing {item!r}: the rate {rate_text.strip()!r} is not a "
                            "number (mm/year)")
            continue
        if not math.isfinite(rate) or rate < 0:
            problems.append(f"--ageing {item!r}: the rate must be a finite number of "
                            "mm/year, 0 or more")
            continue
        if material in rates:
            problems.append(f"--ageing: material {material!r} is given twice")
            continue
        rates[material] = rate
    return rates, problems


def _solver_problems(solver: str | None, time_limit_s: float | None, mip_gap: float | None,
                     workers: int, dask_address: str | None) -> list[str]:
    problems = []
    if solver is not None and solver.lower() not in SOLVERS:
        problems.append(f"--solver: unknown solver {solver!r}; use one of {', '.join(SOLVERS)}")
    if time_limit_s is not None and not (math.isfinite(time_limit_s) and time_limit_s > 0):
        problems.append(f"--time-limit: must be a positive number of seconds, not "
                        f"{time_limit_s:g}")
    if mip_gap is not None and not (0.0 <= mip_gap < 1.0):
        problems.append(f"--gap: must be a relative gap from 0 up to (not including) 1, not "
                        f"{mip_gap:g}")
    if workers < 1:
        problems.append(f"--workers: must be 1 or more, not {workers}")
    if dask_address is not None:
        if not dask_address.strip():
            problems.append("--dask: the scheduler address is empty")
        if workers > 1:
            problems.append("--dask and --workers: give one of them (the Dask cluster has "
                            "its own workers)")
    return problems


def _out_problems(out_dir: Path) -> list[str]:
    if out_dir.exists() and not out_dir.is_dir():
        return [f"{out_dir}: --out must be a folder, but a file has this name"]
    return []


def _load(study_path: Path, problems: list[str]) -> Study | None:
    try:
        return load_study(study_path)
    except InputError as error:
        problems.extend(error.problems)
        return None


def _progress_console():
    """The progress bar goes to stderr, and only on a terminal."""
    return error_console if error_console.is_terminal else None


def _spread(dask_address: str | None, run: Callable[[], T]) -> T:
    """``run()``; on a Dask cluster, a scheduler that cannot be reached is bad usage
    (exit 2) and a failure on the cluster (e.g. a worker without this package) exits 3
    with its message instead of a traceback."""
    if dask_address is None:
        return run()
    try:
        return run()
    except (OSError, TimeoutError) as error:
        fail_input(InputError(f"--dask {dask_address}: cannot use the Dask scheduler there "
                              f"({error})"))
    except Exception as error:  # anything raised on the cluster's workers
        error_console.print(f"error: the run on the Dask cluster at {dask_address} failed: "
                            f"{type(error).__name__}: {error}", markup=False, highlight=False)
        raise typer.Exit(EXIT_SOLVER) from None
    raise AssertionError("unreachable")


def _solver_options(solver: str | None, time_limit_s: float | None,
                    mip_gap: float | None) -> dict:
    return {"solver_name": solver.lower() if solver else None, "time_limit_s": time_limit_s,
            "mip_gap": mip_gap}


def _print_written(paths: list[Path]) -> None:
    console.print("Written: " + ", ".join(str(p) for p in paths), markup=False,
                  highlight=False)


def _finish(failures: list[str]) -> None:
    if failures:
        for message in failures:
            error_console.print(f"solver failed: {message}", markup=False, highlight=False)
        raise typer.Exit(EXIT_SOLVER)
    raise typer.Exit(EXIT_OK)


# --------------------------------------------------------------------------- tradeoff


def tradeoff(
    study_path: StudyArgument,
    vary: Annotated[str, typer.Option(
        "--vary", help="What to vary: source-level (m), required-head (m) or flow (with a "
        "unit, e.g. \"40 L/s\"; the first scenario's outlet flow, the others in proportion).",
        show_default=False)],
    from_text: Annotated[str, typer.Option("--from", help="First value.", show_default=False)],
    to_text: Annotated[str, typer.Option("--to", help="Last value.", show_default=False)],
    out_dir: OutOption,
    steps: Annotated[int, typer.Option("--steps", help="Number of values, evenly spaced, "
                                       "both ends included.")] = 11,
    workers: WorkersOption = 1,
    dask_address: DaskOption = None,
    solver: SolverOption = None,
    time_limit_s: TimeLimitOption = None,
    mip_gap: GapOption = None,
) -> None:
    """Least cost against available head or flow: re-optimise at each step.

    Prints a table and writes tradeoff.csv, tradeoff.json and tradeoff.html (cost
    against the varied value, the infeasible range shaded, the study's own point marked).
    """
    problems: list[str] = []
    variable = vary.strip().lower()
    low = high = None
    if variable not in VARIABLES:
        problems.append(f"--vary: cannot vary {vary!r}; choose one of {', '.join(VARIABLES)}")
    else:
        for option, text in (("--from", from_text), ("--to", to_text)):
            try:
                value = parse_sweep_value(option, variable, text)
            except ValueError as error:
                problems.append(str(error))
                continue
            if option == "--from":
                low = value
            else:
                high = value
        if low is not None and high is not None and low >= high:
            problems.append(f"--from ({from_text}) must be less than --to ({to_text})")
    if steps < 2:
        problems.append(f"--steps: must be 2 or more, not {steps}")
    problems += _solver_problems(solver, time_limit_s, mip_gap, workers, dask_address)
    problems += _out_problems(out_dir)
    study = _load(study_path, problems)
    if problems:
        fail_input(InputError(problems))
    assert study is not None and low is not None and high is not None
    values = np.linspace(low, high, steps)
    result = _spread(dask_address, lambda: tradeoff_with_study_point(
        study, variable, values.tolist(), workers=workers, dask_address=dask_address,
        console=_progress_console(), **_solver_options(solver, time_limit_s, mip_gap)))
    print_tradeoff(console, result, study)
    try:
        prepare_out_dir(out_dir)
        paths = write_tradeoff_files(out_dir, result, study)
    except InputError as error:
        fail_input(error)
    _print_written(paths)
    print_cautions(console)
    failures = [f"step {row.value:g}: {row.note}"
                for row in result.table[result.table["status"] == STATUS_FAILED].itertuples()]
    if result.own_row["status"] == STATUS_FAILED:
        failures.append(f"the study as written: {result.own_row['note']}")
    _finish(failures)


# --------------------------------------------------------------------------- sensitivity


def _monte_carlo_problems(samples: int | None, seed: int | None, distribution: str | None,
                          mode_mm: float | None, years: float | None, ageing: list[str],
                          low_mm: float, high_mm: float) -> list[str]:
    problems = []
    if samples is None:
        for given, option in ((seed is not None, "--seed"),
                              (distribution is not None, "--distribution"),
                              (mode_mm is not None, "--mode"), (years is not None, "--years"),
                              (bool(ageing), "--ageing")):
            if given:
                problems.append(f"{option}: applies to Monte Carlo only; give --samples N")
        return problems
    if samples < 1:
        problems.append(f"--samples: must be 1 or more, not {samples}")
    if seed is not None and seed < 0:
        problems.append(f"--seed: must be 0 or more, not {seed}")
    kind = (distribution or "uniform").lower()
    if kind not in DISTRIBUTIONS:
        problems.append(f"--distribution: unknown distribution {distribution!r}; use one of "
                        f"{', '.join(DISTRIBUTIONS)}")
    if kind == "log-uniform" and low_mm <= 0:
        problems.append("--roughness-from: must be above 0 for --distribution log-uniform")
    if mode_mm is not None:
        if kind != "triangular":
            problems.append("--mode: applies to --distribution triangular only")
        elif not (low_mm <= mode_mm <= high_mm):
            problems.append(f"--mode: {mode_mm:g} mm is outside the roughness range "
                            f"{low_mm:g}-{high_mm:g} mm")
    if years is not None and not (math.isfinite(years) and years >= 0):
        problems.append(f"--years: must be 0 or more, not {years:g}")
    return problems


def sensitivity(
    study_path: StudyArgument,
    roughness_from_mm: Annotated[float, typer.Option(
        "--roughness-from", help="Lowest absolute roughness (mm); replaces every option's "
        "roughness, as a scenario's roughness_mm does.", show_default=False)],
    roughness_to_mm: Annotated[float, typer.Option(
        "--roughness-to", help="Highest absolute roughness (mm).", show_default=False)],
    out_dir: OutOption,
    steps: Annotated[int, typer.Option("--steps", help="Roughness values, evenly spaced, "
                                       "both ends included.")] = 9,
    design_path: Annotated[Path | None, typer.Option(
        "--design", help="Fixed design CSV to analyse (default: the least-cost design of "
        "the study as written).", show_default=False)] = None,
    robust: Annotated[bool, typer.Option(
        "--robust", help="Also find one design feasible at every roughness of the range, "
        "and its premium over the nominal design.")] = False,
    reoptimise: Annotated[bool, typer.Option(
        "--reoptimise/--no-reoptimise", help="Re-optimise the least cost at each "
        "roughness.")] = True,
    samples: Annotated[int | None, typer.Option(
        "--samples", help="Monte Carlo: number of samples of roughness, drawn per material.",
        show_default=False)] = None,
    seed: Annotated[int | None, typer.Option(
        "--seed", help="Monte Carlo: random seed (default 0; always recorded).",
        show_default=False)] = None,
    distribution: Annotated[str | None, typer.Option(
        "--distribution", help="Monte Carlo: uniform (default), log-uniform, triangular or "
        "fixed, between --roughness-from and --roughness-to (fixed: always "
        "--roughness-from).", show_default=False)] = None,
    mode_mm: Annotated[float | None, typer.Option(
        "--mode", help="Monte Carlo: mode of the triangular distribution, mm (default the "
        "middle of the range).", show_default=False)] = None,
    years: Annotated[float | None, typer.Option(
        "--years", help="Monte Carlo: years in service T at which to judge the design "
        "(default 0).", show_default=False)] = None,
    ageing: Annotated[list[str] | None, typer.Option(
        "--ageing", help="Monte Carlo: MATERIAL=RATE, roughness growth in mm/year "
        "(repeatable); roughness at year T = drawn value + RATE x T.",
        show_default=False)] = None,
    workers: WorkersOption = 1,
    dask_address: DaskOption = None,
    solver: SolverOption = None,
    time_limit_s: TimeLimitOption = None,
    mip_gap: GapOption = None,
) -> None:
    """What if the roughness assumption is wrong, or the pipe ages?

    For a fixed design: capacity and least pressure margin across the roughness range.
    Also the re-optimised least cost across it; with --robust, one design feasible at
    every roughness of the range and its premium; with --samples, a Monte Carlo of
    roughness (and ageing) giving the probability that the design meets each scenario.
    """
    ageing = list(ageing or [])
    problems: list[str] = []
    for option, value in (("--roughness-from", roughness_from_mm),
                          ("--roughness-to", roughness_to_mm)):
        if not math.isfinite(value) or value < 0:
            problems.append(f"{option}: roughness must be 0 mm or more, not {value:g}")
    if roughness_from_mm >= roughness_to_mm:
        problems.append(f"--roughness-from ({roughness_from_mm:g}) must be less than "
                        f"--roughness-to ({roughness_to_mm:g})")
    if steps < 2:
        problems.append(f"--steps: must be 2 or more, not {steps}")
    problems += _monte_carlo_problems(samples, seed, distribution, mode_mm, years, ageing,
                                      roughness_from_mm, roughness_to_mm)
    rates, ageing_problems = parse_ageing(ageing)
    problems += ageing_problems
    problems += _solver_problems(solver, time_limit_s, mip_gap, workers, dask_address)
    problems += _out_problems(out_dir)
    study = _load(study_path, problems)
    given: Design | None = None
    if study is not None:
        if study.friction is not Friction.COLEBROOK_WHITE:
            problems.append(f"{study.path}: [catalogue] friction = {study.friction.value}: "
                            "roughness sensitivity needs colebrook-white (with Hazen-Williams, "
                            "age the C values in a catalogue instead)")
        materials = (study.full_catalogue or study.catalogue).materials
        for material in rates:
            if material not in materials:
                problems.append(f"--ageing: no material {material!r} in the catalogue "
                                f"{study.catalogue_path}; its materials are "
                                f"{', '.join(materials)}")
        if design_path is not None:
            try:
                given = load_design(design_path, study)
            except InputError as error:
                problems.extend(error.problems)
    if problems:
        fail_input(InputError(problems))
    assert study is not None
    values = np.linspace(roughness_from_mm, roughness_to_mm, steps)
    runs = _spread(dask_address, lambda: roughness_runs(
        study, values.tolist(), nominal=given is None, robust=robust,
        reoptimise=reoptimise, workers=workers, dask_address=dask_address,
        console=_progress_console(), **_solver_options(solver, time_limit_s, mip_gap)))

    notes: list[str] = []
    fixed = given
    fixed_check = check_design(study, given, capacity=False) if given is not None else None
    if given is None and runs.nominal is not None and runs.nominal.outcome is not None:
        fixed = runs.nominal.outcome.design
        fixed_check = runs.nominal.outcome.check
    if fixed is None:
        notes.append("The study as written has no design (status "
                     f"{runs.nominal.row['status'] if runs.nominal else 'unknown'}), so the "
                     "fixed-design analysis and the Monte Carlo are skipped; give --design.")
    elif fixed_check is not None and not fixed_check.ok:
        notes.append("The fixed design does not meet every limit of the study as written "
                     "(run check for the list).")
    fixed_sweep = roughness_sweep(study, fixed, values) if fixed is not None else None
    robust_sweep = None
    if runs.robust is not None and runs.robust.outcome is not None \
            and runs.robust.outcome.design is not None:
        robust_sweep = roughness_sweep(study, runs.robust.outcome.design, values)
    mc = settings = None
    if samples is not None and fixed is not None:
        kind = (distribution or "uniform").lower()
        low = roughness_from_mm
        high = roughness_from_mm if kind == "fixed" else roughness_to_mm
        settings = MonteCarloSettings(RoughnessDistribution(kind, low, high, mode_mm),
                                      samples, 0 if seed is None else seed,
                                      0.0 if years is None else years, rates)
        mc = monte_carlo(study, fixed, settings.distribution, samples=samples,
                         seed=settings.seed, years=settings.years, ageing_mm_per_year=rates)
        if rates and settings.years == 0:
            notes.append("--ageing has no effect at year 0: give --years T.")
        unused = sorted(set(rates) - {p.option.material for p in fixed.pieces})
        if unused:
            notes.append(f"--ageing: the fixed design uses no {', '.join(unused)}.")
    result = SensitivityResult(study, values.tolist(), "given" if given is not None
                               else "optimised", fixed_check, fixed_sweep, runs,
                               robust_sweep, mc, settings, notes)
    print_sensitivity(console, result)
    try:
        prepare_out_dir(out_dir)
        paths = write_sensitivity_files(out_dir, result)
    except InputError as error:
        fail_input(error)
    _print_written(paths)
    print_cautions(console)
    _finish(runs.failures)


__all__ = ["EXIT_BAD_INPUT", "parse_ageing", "parse_level_m", "sensitivity", "tradeoff"]
