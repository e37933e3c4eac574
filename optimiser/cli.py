"""Command line: a thin layer over the public API. Exit codes per contract section 6."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console

from optimiser.analysis import check_design
from optimiser.io import InputError, load_design, load_study
from optimiser.io.writers import prepare_out_dir, write_csv, write_json
from optimiser.reports.results import check_dict
from optimiser.reports.terminal import print_cautions, print_check

EXIT_OK = 0
EXIT_VIOLATION = 1
EXIT_BAD_INPUT = 2
EXIT_SOLVER = 3

app = typer.Typer(
    help="Least-cost sizing and checking of gravity water mains (preliminary design aid).",
    no_args_is_help=True, add_completion=False, pretty_exceptions_enable=False)
console = Console()
error_console = Console(stderr=True)


def fail_input(error: InputError) -> None:
    for problem in error.problems:
        error_console.print(f"error: {problem}", markup=False, highlight=False,
                            soft_wrap=True)
    raise typer.Exit(EXIT_BAD_INPUT)


@app.callback()
def _root() -> None:
    """Least-cost sizing and checking of gravity water mains (preliminary design aid)."""


StudyArgument = Annotated[Path, typer.Argument(help="Study file (TOML).", show_default=False)]
JsonOption = Annotated[Path | None, typer.Option("--json", help="Write the result as JSON.")]


@app.command()
def check(
    study_path: StudyArgument,
    design_path: Annotated[Path, typer.Option("--design", help="Design CSV to analyse.")],
    json_path: JsonOption = None,
) -> None:
    """Analyse a given design in every scenario: pressures, classes, velocities, outlet."""
    try:
        study = load_study(study_path)
        design = load_design(design_path, study)
        result = check_design(study, design)
        if json_path is not None:
            write_json(json_path, check_dict(result))
    except InputError as error:
        fail_input(error)
    print_check(console, result)
    print_cautions(console)
    raise typer.Exit(EXIT_OK if result.ok else EXIT_VIOLATION)


@app.command()
def design(
    study_path: StudyArgument,
    json_path: JsonOption = None,
    out_dir: Annotated[Path | None, typer.Option(
        "--out", help="Folder for design.csv, result.json, report.html and "
        "appurtenances.csv (created if missing).")] = None,
    solver: Annotated[str | None, typer.Option(
        "--solver", help="highs or cbc (default: the study's solver name).")] = None,
    time_limit_s: Annotated[float | None, typer.Option(
        "--time-limit", help="Time limit of the whole run [s] (default: the study's).")] = None,
    gap: Annotated[float | None, typer.Option(
        "--gap", help="Relative optimality gap (default: the study's mip_gap).")] = None,
) -> None:
    """Cheapest verified telescoping design (MILP): schedule, cost, bound and gap."""
    from optimiser.milp import SolverError, VerificationError, optimise_design
    from optimiser.reports.design_report import design_dict, design_table, print_design
    from optimiser.reports.files import design_info, write_report_files

    try:
        problems = []
        if solver is not None and solver.lower() not in ("highs", "cbc"):
            problems.append(f"--solver: {solver!r} is not a solver; use highs or cbc")
        if time_limit_s is not None and not time_limit_s > 0:
            problems.append(f"--time-limit: must be > 0 seconds, got {time_limit_s:g}")
        if gap is not None and not 0 <= gap < 1:
            problems.append(f"--gap: must be at least 0 and below 1, got {gap:g}")
        if out_dir is not None and out_dir.exists() and not out_dir.is_dir():
            problems.append(f"{out_dir}: --out must be a folder, but a file has this name")
        if json_path is not None and json_path.is_dir():
            problems.append(f"{json_path}: --json must be a file, but a folder has this name")
        if problems:
            raise InputError(problems)
        study = load_study(study_path)
        if study.surge.min_transient_pressure_m is not None:
            # The optimiser has no rows for the down-surge limit yet: refuse plainly
            # rather than return designs the check would reject.
            raise InputError(f"{study_path}: [surge] min_transient_pressure_m: `design` "
                             "does not yet optimise against the down-surge limit; remove "
                             "the key to design, then `check` the design with it")
    except InputError as error:
        fail_input(error)
    try:
        outcome = optimise_design(study, solver_name=solver, time_limit_s=time_limit_s,
                                  mip_gap=gap)
    except (SolverError, VerificationError) as error:
        error_console.print(f"error: {error}", markup=False, highlight=False,
                            soft_wrap=True)
        raise typer.Exit(EXIT_SOLVER) from None
    payload = design_dict(outcome, study)
    try:
        if json_path is not None:
            write_json(json_path, payload)
        if out_dir is not None:
            folder = prepare_out_dir(out_dir)
            if outcome.design is not None:
                write_csv(folder / "design.csv", design_table(outcome))
            write_json(folder / "result.json", payload)
            if outcome.check is not None:
                write_report_files(folder, outcome.check, design_info(outcome))
    except InputError as error:
        fail_input(error)
    print_design(console, outcome, study)
    print_cautions(console)
    raise typer.Exit(EXIT_OK if outcome.verified else EXIT_VIOLATION)


# Commands kept in their own modules; imported last because they use the helpers above.
from optimiser.cli_reports import compare, report  # noqa: E402
from optimiser.cli_sweeps import sensitivity, tradeoff  # noqa: E402

app.command()(report)
app.command()(compare)
app.command()(tradeoff)
app.command()(sensitivity)


def main() -> None:
    app()


if __name__ == "__main__":
    main()
