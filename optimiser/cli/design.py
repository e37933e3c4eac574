"""Commands that run the optimiser: ``design`` (one study) and ``compare`` (one study per
option, ranked by cost)."""

from __future__ import annotations

import re
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from optimiser.cli.common import (
    EXIT_OK,
    EXIT_SOLVER,
    EXIT_VIOLATION,
    GapOption,
    JsonOption,
    Paper,
    PaperOption,
    SolverOption,
    StudyArgument,
    console,
    error_console,
    fail_input,
    fail_solver,
    print_notes,
    print_written,
)
from optimiser.cli.interrupt import staged_outputs

if TYPE_CHECKING:
    import pandas as pd

    from optimiser.io.writers import StagedOutput
    from optimiser.sweeps.options import OptionResult


def _design_problems(solver: str | None, time_limit_s: float | None, gap: float | None,
                     out_dir: Path | None, json_path: Path | None) -> list[str]:
    problems = []
    if solver is not None and solver.lower() not in ("highs", "cbc"):
        problems.append(f"--solver: {solver!r} is not a solver; use highs or cbc")
    if time_limit_s is not None:
        from optimiser.io.limits import TIME

        # the range of [solver] time_limit_s (section 9): inf or 1e300 s is a slip
        if not time_limit_s > 0:
            problems.append(f"--time-limit: must be > 0 seconds, got {time_limit_s:g}")
        elif TIME.message(time_limit_s):
            problems.append(f"--time-limit: {TIME.message(time_limit_s)}")
    if gap is not None and not 0 <= gap < 1:
        problems.append(f"--gap: must be at least 0 and below 1, got {gap:g}")
    if out_dir is not None and out_dir.exists() and not out_dir.is_dir():
        problems.append(f"{out_dir}: --out must be a folder, but a file has this name")
    if json_path is not None and json_path.is_dir():
        problems.append(f"{json_path}: --json must be a file, but a folder has this name")
    return problems


def design(
    study_path: StudyArgument,
    json_path: JsonOption = None,
    out_dir: Annotated[Path | None, typer.Option(
        "--out", help="Folder for design.csv, result.json, report.html, report.pdf, "
        "design.xlsx and appurtenances.csv (created if missing).", metavar="FOLDER",
        show_default=False)] = None,
    solver: SolverOption = None,
    time_limit_s: Annotated[float | None, typer.Option(
        "--time-limit", help="Time limit of the whole run [s] (default: the study's).",
        metavar="SECONDS", show_default=False)] = None,
    gap: GapOption = None,
    paper: PaperOption = Paper.A4,
) -> None:
    """Cheapest verified telescoping design (MILP): schedule, cost, bound and gap."""
    from optimiser.io import InputError, load_study
    from optimiser.io.writers import input_paths, write_json
    from optimiser.milp import SolverError, VerificationError, optimise_design
    from optimiser.reports.design_report import design_dict, print_design
    from optimiser.reports.files import DESIGN_FILES, write_design_files
    from optimiser.reports.terminal import print_cautions

    try:
        problems = _design_problems(solver, time_limit_s, gap, out_dir, json_path)
        if problems:
            raise InputError(problems)
        study = load_study(study_path)
    except InputError as error:
        fail_input(error)
    try:
        outcome = optimise_design(study, solver_name=solver, time_limit_s=time_limit_s,
                                  mip_gap=gap)
    except (SolverError, VerificationError) as error:
        fail_solver(str(error))
    notes: list[str] = []
    try:
        def write(output: StagedOutput) -> None:
            if json_path is not None:
                write_json(output.file(json_path), design_dict(outcome, study))
            if out_dir is not None:
                write_design_files(output.folder(out_dir, DESIGN_FILES), outcome, study,
                                   paper=paper.value, notes=notes)

        written = staged_outputs(write, input_paths(study))
    except InputError as error:
        fail_input(error)
    print_design(console, outcome, study)
    print_written(written)
    print_notes(notes)
    print_cautions(console)
    raise typer.Exit(EXIT_OK if outcome.verified else EXIT_VIOLATION)


def _slug(text: str, taken: set[str]) -> str:
    slug = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")[:40] or "option"
    candidate, counter = slug, 2
    while candidate in taken:
        candidate, counter = f"{slug}-{counter}", counter + 1
    taken.add(candidate)
    return candidate


def _write_comparison(output: StagedOutput, out_dir: Path, table: pd.DataFrame,
                      options: list[OptionResult], paper: str, notes: list[str]) -> None:
    """comparison.csv, .xlsx, .html, .pdf and one folder per option with a design."""
    from optimiser.reports.compare_report import COMPARISON_FILES, write_comparison_files

    taken: set[str] = set()
    slugs = [_slug(option.label, taken) for option in options]
    folder = output.folder(out_dir, {*COMPARISON_FILES, *slugs})
    write_comparison_files(folder, table, options, slugs, paper=paper, notes=notes)


def compare(
    study_paths: Annotated[list[Path], typer.Argument(
        help="Study files, one per option.", show_default=False, metavar="STUDY_FILE")],
    out_dir: Annotated[Path | None, typer.Option(
        "--out", help="Folder for comparison.csv, .xlsx, .html, .pdf and each option's "
        "files.",
        metavar="FOLDER", show_default=False)] = None,
    paper: PaperOption = Paper.A4,
) -> None:
    """Design every option and compare them side by side, ranked by capital cost."""
    from optimiser.io import InputError, load_study
    from optimiser.io.writers import input_paths
    from optimiser.reports.compare import comparison_table, print_comparison
    from optimiser.reports.terminal import print_cautions
    from optimiser.sweeps.options import design_options

    problems: list[str] = []
    for path in study_paths:
        try:
            load_study(path)
        except InputError as error:
            problems.extend(error.problems)
    if out_dir is not None and out_dir.exists() and not out_dir.is_dir():
        problems.append(f"{out_dir}: --out must be a folder, but a file has this name")
    if problems:
        fail_input(InputError(problems))
    options = design_options(list(study_paths), console=error_console)
    table = comparison_table(options)
    print_comparison(console, table)
    written: list[Path] = []
    notes: list[str] = []
    if out_dir is not None:
        try:
            written = staged_outputs(lambda output: _write_comparison(
                output, out_dir, table, options, paper.value, notes),
                input_paths(None, *study_paths))
        except InputError as error:
            fail_input(error)
    print_written(written)
    print_notes(notes)
    print_cautions(console)
    if all(o.outcome is None for o in options):
        raise typer.Exit(EXIT_SOLVER)
    raise typer.Exit(EXIT_OK)
