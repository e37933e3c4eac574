"""Options of a comparison: each study file designed on its own (the ``compare`` command).

Each option is a task of :func:`optimiser.sweeps.runner.run_all`: a module-level function
of a path, so it can run in another process.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from optimiser.io import load_study
from optimiser.model import Study

if TYPE_CHECKING:
    from rich.console import Console

    from optimiser.milp import DesignOutcome


@dataclass(frozen=True)
class OptionResult:
    """One option of a comparison: its study file, loaded study and outcome (or error)."""

    path: Path
    study: Study
    outcome: DesignOutcome | None
    error: str | None = None


def design_option(path: Path) -> OptionResult:
    """Load and design one option; a solver or verification failure is kept as its error
    (the other options are still compared)."""
    from optimiser.milp import SolverError, VerificationError, optimise_design

    study = load_study(path)
    try:
        return OptionResult(path, study, optimise_design(study))
    except (SolverError, VerificationError) as error:
        return OptionResult(path, study, None, f"{type(error).__name__}: {error}")


def design_options(paths: list[Path], console: Console | None = None) -> list[OptionResult]:
    """Every option designed, in the order given."""
    from optimiser.sweeps.runner import run_all

    return run_all(design_option, list(paths), console=console, label="designing options")
