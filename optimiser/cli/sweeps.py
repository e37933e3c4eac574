"""Commands that solve many variants of a study: ``tradeoff`` and ``sensitivity``.

Exit codes follow contract section 6: 0 done (a step without a feasible design is a
result of a sweep, not an error), 2 bad input or usage, 3 a solver failed on some step
(the other steps are still printed and written).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any, TypeVar

import typer

from optimiser.cli.common import (
    EXIT_OK,
    EXIT_SOLVER,
    GapOption,
    SolverOption,
    StudyArgument,
    console,
    error_console,
    fail_input,
    print_written,
)
from optimiser.cli.interrupt import staged_outputs
from optimiser.cli.sweep_options import (
    ageing_problems,
    monte_carlo_problems,
    out_problems,
    parse_ageing,
    parse_range,
    roughness_problems,
    solver_problems,
    steps_problems,
    study_problems,
)

if TYPE_CHECKING:
    from rich.console import Console

    from optimiser.model import Design, Study
    from optimiser.sweeps.sensitivity import MonteCarloSettings

T = TypeVar("T")

OutOption = Annotated[Path, typer.Option(
    "--out", help="Folder for the CSV, JSON and HTML files (created if missing).",
    show_default=False, metavar="FOLDER")]
WorkersOption = Annotated[int, typer.Option(
    "--workers", help="Solve on this many local processes (results identical to serial).",
    metavar="COUNT")]
DaskOption = Annotated[str | None, typer.Option(
    "--dask", help="Address of an existing Dask scheduler to run the solves on, e.g. "
    "tcp://127.0.0.1:8786.", show_default=False, metavar="ADDRESS")]
SweepTimeLimitOption = Annotated[float | None, typer.Option(
    "--time-limit", help="Seconds per solve (default: the study's).", show_default=False,
    metavar="SECONDS")]


def _load(study_path: Path, problems: list[str]) -> Study | None:
    from optimiser.io import InputError, load_study

    try:
        return load_study(study_path)
    except InputError as error:
        problems.extend(error.problems)
        return None


def _progress_console() -> Console | None:
    """The progress bar goes to stderr, and only on a terminal."""
    return error_console if error_console.is_terminal else None


def _spread(dask_address: str | None, run: Callable[[], T]) -> T:
    """``run()``; on a Dask cluster, a scheduler that cannot be reached is bad usage
    (exit 2) and a failure on the cluster (e.g. a worker without this package) exits 3
    with its message instead of a traceback."""
    from optimiser.io import InputError

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


def _solver_options(solver: str | None, time_limit_s: float | None,
                    mip_gap: float | None) -> dict[str, Any]:
    return {"solver_name": solver.lower() if solver else None, "time_limit_s": time_limit_s,
            "mip_gap": mip_gap}


def _write(out_dir: Path, names: frozenset[str], write: Callable[[Path], Any],
           inputs: frozenset[Path]) -> list[Path]:
    """Stage the files ``write(folder)`` writes, then move them into ``out_dir`` (never
    over one of the run's ``inputs``)."""
    from optimiser.io import InputError

    try:
        return staged_outputs(lambda output: write(output.folder(out_dir, names)), inputs)
    except InputError as error:
        fail_input(error)


def _finish(failures: list[str]) -> None:
    if failures:
        for message in failures:
            error_console.print(f"solver failed: {message}", markup=False, highlight=False)
        raise typer.Exit(EXIT_SOLVER)
    raise typer.Exit(EXIT_OK)


def tradeoff(
    study_path: StudyArgument,
    vary: Annotated[str, typer.Option(
        "--vary", help="What to vary: source-level (m), required-head (m) or flow (with a "
        "unit, e.g. \"40 L/s\"; the first scenario's outlet flow, the others in proportion); "
        "with a [pump]: energy-price (per kWh), discount-rate (0.05 or 5 %) or hours (a "
        "year, all scenarios); on a scheme also branch-head:NAME (m) or branch-flow:NAME "
        "(with a unit) of one branch.",
        show_default=False, metavar="QUANTITY")],
    from_text: Annotated[str, typer.Option("--from", help="First value.", show_default=False,
                                           metavar="VALUE")],
    to_text: Annotated[str, typer.Option("--to", help="Last value.", show_default=False,
                                         metavar="VALUE")],
    out_dir: OutOption,
    steps: Annotated[int, typer.Option("--steps", help="Number of values, evenly spaced, "
                                       "both ends included.", metavar="COUNT")] = 11,
    workers: WorkersOption = 1,
    dask_address: DaskOption = None,
    solver: SolverOption = None,
    time_limit_s: SweepTimeLimitOption = None,
    mip_gap: GapOption = None,
) -> None:
    """Least cost against available head or flow: re-optimise at each step.

    Prints a table and writes tradeoff.csv, tradeoff.json and tradeoff.html (cost
    against the varied value, the infeasible range shaded, the study's own point marked).
    """
    from optimiser.io import InputError
    from optimiser.sweeps.pump_variants import PUMP_VARIABLES

    variable, low, high, problems = parse_range(vary, from_text, to_text)
    problems += steps_problems(steps)
    problems += solver_problems(solver, time_limit_s, mip_gap, workers, dask_address)
    problems += out_problems(out_dir)
    study = _load(study_path, problems)
    if study is not None and study.pump is None and variable in PUMP_VARIABLES:
        problems.append(f"--vary {variable}: the study has no [pump] (contract section 9)")
    if study is not None:
        from optimiser.sweeps.branch_variants import branch_problems

        problems += branch_problems(study, variable)
    if problems:
        fail_input(InputError(problems))
    assert study is not None and low is not None and high is not None

    import numpy as np

    from optimiser.io.writers import input_paths
    from optimiser.model import Status
    from optimiser.reports.terminal import print_cautions
    from optimiser.reports.tradeoff_report import (
        TRADEOFF_FILES,
        print_tradeoff,
        write_tradeoff_files,
    )
    from optimiser.sweeps.tradeoff import tradeoff_with_study_point

    values = np.linspace(low, high, steps).tolist()
    result = _spread(dask_address, lambda: tradeoff_with_study_point(
        study, variable, values, workers=workers, dask_address=dask_address,
        console=_progress_console(), **_solver_options(solver, time_limit_s, mip_gap)))
    print_tradeoff(console, result, study)
    print_written(_write(out_dir, TRADEOFF_FILES,
                         lambda folder: write_tradeoff_files(folder, result, study),
                         input_paths(study)))
    print_cautions(console)
    failures = [f"step {row.value:g}: {row.note}" for row in result.failed.itertuples()]
    if result.own_row["status"] == Status.FAILED:
        failures.append(f"the study as written: {result.own_row['note']}")
    _finish(failures)


def _given_design(study: Study | None, design_path: Path | None, rates: dict[str, float],
                  problems: list[str]) -> Design | None:
    """The design of ``--design``, after what the study must allow (problems collected)."""
    from optimiser.io import InputError, load_design

    if study is None:
        return None
    problems += study_problems(study, rates)
    if design_path is None:
        return None
    try:
        return load_design(design_path, study)
    except InputError as error:
        problems.extend(error.problems)
        return None


def _monte_carlo_settings(samples: int | None, seed: int | None, distribution: str | None,
                          mode_mm: float | None, years: float | None,
                          rates: dict[str, float], low_mm: float,
                          high_mm: float) -> MonteCarloSettings | None:
    from optimiser.analysis.sensitivity import RoughnessDistribution
    from optimiser.sweeps.sensitivity import MonteCarloSettings

    if samples is None:
        return None
    kind = (distribution or "uniform").lower()
    high = low_mm if kind == "fixed" else high_mm
    return MonteCarloSettings(RoughnessDistribution(kind, low_mm, high, mode_mm), samples,
                              0 if seed is None else seed, 0.0 if years is None else years,
                              rates)


# Options of sensitivity.
RoughnessFromOption = Annotated[float, typer.Option(
    "--roughness-from", help="Lowest absolute roughness (mm); stands for every option's "
    "catalogue roughness (a scenario's roughness_factor still multiplies it).",
    show_default=False,
    metavar="MM")]
RoughnessToOption = Annotated[float, typer.Option(
    "--roughness-to", help="Highest absolute roughness (mm).", show_default=False,
    metavar="MM")]
RoughnessStepsOption = Annotated[int, typer.Option(
    "--steps", help="Roughness values, evenly spaced, both ends included.", metavar="COUNT")]
FixedDesignOption = Annotated[Path | None, typer.Option(
    "--design", help="Fixed design CSV to analyse (default: the least-cost design of "
    "the study as written).", show_default=False, metavar="FILE")]
RobustOption = Annotated[bool, typer.Option(
    "--robust", help="Also find one design feasible at every roughness of the range, "
    "and its premium over the nominal design.")]
ReoptimiseOption = Annotated[bool, typer.Option(
    "--reoptimise/--no-reoptimise", help="Re-optimise the least cost at each "
    "roughness.")]
SamplesOption = Annotated[int | None, typer.Option(
    "--samples", help="Monte Carlo: number of samples of roughness, drawn per material.",
    show_default=False, metavar="COUNT")]
SeedOption = Annotated[int | None, typer.Option(
    "--seed", help="Monte Carlo: random seed (default 0; always recorded).",
    show_default=False, metavar="NUMBER")]
DistributionOption = Annotated[str | None, typer.Option(
    "--distribution", help="Monte Carlo: uniform (default), log-uniform, triangular or "
    "fixed, between --roughness-from and --roughness-to (fixed: always "
    "--roughness-from).", show_default=False, metavar="NAME")]
ModeOption = Annotated[float | None, typer.Option(
    "--mode", help="Monte Carlo: mode of the triangular distribution, mm (default the "
    "middle of the range).", show_default=False, metavar="MM")]
YearsOption = Annotated[float | None, typer.Option(
    "--years", help="Monte Carlo: years in service T at which to judge the design in "
    "every scenario (default 0).", show_default=False, metavar="YEARS")]
AgeingOption = Annotated[list[str] | None, typer.Option(
    "--ageing", help="Monte Carlo: MATERIAL=RATE, roughness growth in mm/year "
    "(repeatable); roughness at year T = drawn value + RATE x T.",
    show_default=False, metavar="MATERIAL=RATE")]


def sensitivity(
    study_path: StudyArgument,
    roughness_from_mm: RoughnessFromOption,
    roughness_to_mm: RoughnessToOption,
    out_dir: OutOption,
    steps: RoughnessStepsOption = 9,
    design_path: FixedDesignOption = None,
    robust: RobustOption = False,
    reoptimise: ReoptimiseOption = True,
    samples: SamplesOption = None,
    seed: SeedOption = None,
    distribution: DistributionOption = None,
    mode_mm: ModeOption = None,
    years: YearsOption = None,
    ageing: AgeingOption = None,
    workers: WorkersOption = 1,
    dask_address: DaskOption = None,
    solver: SolverOption = None,
    time_limit_s: SweepTimeLimitOption = None,
    mip_gap: GapOption = None,
) -> None:
    """What if the roughness assumption is wrong, or the pipe ages?

    For a fixed design: capacity and least pressure margin across the roughness range.
    Also the re-optimised least cost across it; with --robust, one design feasible at
    every roughness of the range and its premium; with --samples, a Monte Carlo of
    roughness (and ageing) giving the probability that the design meets each scenario.
    """
    from optimiser.io import InputError

    ageing = list(ageing or [])
    problems = roughness_problems(roughness_from_mm, roughness_to_mm, steps)
    problems += monte_carlo_problems(samples, seed, distribution, mode_mm, years, ageing,
                                     roughness_from_mm, roughness_to_mm)
    rates, unreadable = parse_ageing(ageing)
    problems += unreadable + ageing_problems(rates, years, roughness_to_mm)
    problems += solver_problems(solver, time_limit_s, mip_gap, workers, dask_address)
    problems += out_problems(out_dir)
    study = _load(study_path, problems)
    given = None if problems else _given_design(study, design_path, rates, problems)
    if problems:
        fail_input(InputError(problems))
    assert study is not None

    import numpy as np

    from optimiser.io.writers import input_paths
    from optimiser.reports.sensitivity_report import (
        SENSITIVITY_FILES,
        print_sensitivity,
        write_sensitivity_files,
    )
    from optimiser.reports.terminal import print_cautions
    from optimiser.sweeps.sensitivity import sensitivity_study

    settings = _monte_carlo_settings(samples, seed, distribution, mode_mm, years, rates,
                                     roughness_from_mm, roughness_to_mm)
    values = np.linspace(roughness_from_mm, roughness_to_mm, steps).tolist()
    result = _spread(dask_address, lambda: sensitivity_study(
        study, values, given=given, robust=robust, reoptimise=reoptimise,
        monte_carlo_settings=settings, workers=workers, dask_address=dask_address,
        console=_progress_console(), **_solver_options(solver, time_limit_s, mip_gap)))
    print_sensitivity(console, result)
    print_written(_write(out_dir, SENSITIVITY_FILES,
                         lambda folder: write_sensitivity_files(folder, result),
                         input_paths(study, design_path)))
    print_cautions(console)
    _finish(result.runs.failures)
