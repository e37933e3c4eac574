"""What every command shares: exit codes (contract section 6), the consoles, the way
bad input and solver failures end a command, and the option types used by several
commands.

This module imports nothing heavy (no pandas, plotly, solvers or the check), so that
``optimiser --help`` starts quickly; commands import what they need inside themselves.
"""

from __future__ import annotations

from collections.abc import Iterable
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, NoReturn

import typer
from rich.console import Console

if TYPE_CHECKING:
    from optimiser.io import InputError

EXIT_OK = 0
EXIT_VIOLATION = 1
EXIT_BAD_INPUT = 2
EXIT_SOLVER = 3
EXIT_INTERRUPTED = 130
"""128 + SIGINT, as a shell reports a command ended by Ctrl-C."""

console = Console()
error_console = Console(stderr=True)


def fail_input(error: InputError) -> NoReturn:
    """Print every problem of ``error`` (one line each) and exit 2."""
    for problem in error.problems:
        error_console.print(f"error: {problem}", markup=False, highlight=False,
                            soft_wrap=True)
    raise typer.Exit(EXIT_BAD_INPUT)


def fail_solver(message: str) -> NoReturn:
    """Print a solver or verification failure and exit 3."""
    error_console.print(f"error: {message}", markup=False, highlight=False, soft_wrap=True)
    raise typer.Exit(EXIT_SOLVER)


def print_written(paths: Iterable[Path]) -> None:
    """One line per file written, so the engineer knows where to look."""
    for path in paths:
        console.print(f"wrote {path}", markup=False, highlight=False, soft_wrap=True)


def print_notes(notes: Iterable[str]) -> None:
    """One line per file that could not be made (e.g. a PDF without a browser)."""
    for note in notes:
        error_console.print(f"note: {note}", markup=False, highlight=False, soft_wrap=True)


class Paper(StrEnum):
    """Paper of the PDF reports."""

    A4 = "a4"
    LETTER = "letter"


# Option types shared by several commands. The metavars are plain words (FILE, FOLDER,
# SECONDS, ...) rather than the parser's type names.
StudyArgument = Annotated[Path, typer.Argument(
    help="Study file (TOML).", show_default=False, metavar="STUDY_FILE")]
JsonOption = Annotated[Path | None, typer.Option(
    "--json", help="Write the result as JSON to this file (missing folders are created).",
    metavar="FILE", show_default=False)]
SolverOption = Annotated[str | None, typer.Option(
    "--solver", help="highs or cbc (default: the study's solver name).", show_default=False,
    metavar="NAME")]
TimeLimitOption = Annotated[float | None, typer.Option(
    "--time-limit", help="Time limit of each design run [s] (default: the study's).",
    show_default=False, metavar="SECONDS")]
GapOption = Annotated[float | None, typer.Option(
    "--gap", help="Relative optimality gap (default: the study's mip_gap).",
    show_default=False, metavar="FRACTION")]
DesignFileOption = Annotated[Path, typer.Option(
    "--design", help="Design CSV to analyse.", metavar="FILE", show_default=False)]
PaperOption = Annotated[Paper, typer.Option(
    "--paper", help="Paper of the PDF report: a4 or letter.", case_sensitive=False,
    metavar="a4|letter")]
