"""Command line: a thin layer over the public API. Exit codes per contract section 6."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer
from rich.console import Console

from optimiser.analysis import check_design
from optimiser.io import InputError, load_design, load_study
from optimiser.io.writers import write_json
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
        error_console.print(f"error: {problem}", markup=False, highlight=False)
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


def main() -> None:
    app()


if __name__ == "__main__":
    main()
