"""Options of a comparison: each study file designed on its own (the ``compare`` command).

Each option is a task of :func:`optimiser.sweeps.runner.run_all`: a module-level function
of a path, so it can run in another process.

Every option has a name of its own, used in the table, the workbook, the page and the
folder of its files: the folder of a ``study.toml``, else the file's stem. Where two
options would share a name (two studies both in folders called ``opt``), the first
keeps it and the later ones get ``-2``, ``-3``, ... in the order given (``opt``,
``opt-2``), skipping any name another option already has.
"""

from __future__ import annotations

import dataclasses
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
    """One option of a comparison: its study file, loaded study and outcome (or error),
    and its name in the comparison (unique among the options compared)."""

    path: Path
    study: Study
    outcome: DesignOutcome | None
    error: str | None = None
    name: str = ""
    """Set by :func:`design_options`; :attr:`label` falls back to the path's name."""

    @property
    def label(self) -> str:
        """The option's name in the comparison."""
        return self.name or option_name(self.path)


def option_name(path: Path) -> str:
    """A short name for an option: its folder for ``study.toml``, else the file's stem."""
    path = Path(path)
    return path.parent.name or path.stem if path.stem == "study" else path.stem


def unique_names(paths: list[Path]) -> list[str]:
    """The name of each option, told apart where two would be the same (module docstring):
    ``[a/opt/study.toml, b/opt/study.toml]`` gives ``["opt", "opt-2"]``."""
    wanted = [option_name(path) for path in paths]
    taken: set[str] = set()
    names = []
    for index, name in enumerate(wanted):
        candidate, counter = name, 2
        # Never take a name another option has as its own, later in the list included.
        while candidate in taken or (candidate != name and candidate in wanted[index:]):
            candidate, counter = f"{name}-{counter}", counter + 1
        taken.add(candidate)
        names.append(candidate)
    return names


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
    """Every option designed, in the order given, each with its name (:func:`unique_names`)."""
    from optimiser.sweeps.runner import run_all

    results = run_all(design_option, list(paths), console=console, label="designing options")
    return [dataclasses.replace(result, name=name)
            for result, name in zip(results, unique_names(list(paths)), strict=True)]
