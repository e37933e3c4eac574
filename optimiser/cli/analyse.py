"""Commands over a given design: ``check`` (analyse it in every scenario) and ``report``
(write its HTML report and appurtenance schedule)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from optimiser.cli.common import (
    EXIT_OK,
    EXIT_VIOLATION,
    DesignFileOption,
    JsonOption,
    Paper,
    PaperOption,
    StudyArgument,
    console,
    fail_input,
    print_notes,
    print_written,
)
from optimiser.cli.interrupt import staged_outputs

if TYPE_CHECKING:
    from optimiser.reports.run_summary import RunSummary


TanksOption = Annotated[Path | None, typer.Option(
    "--tanks", help="break_pressure_tanks.csv (as design writes it): tanks added to the "
    "study's own.", metavar="FILE", show_default=False)]


def check(study_path: StudyArgument, design_path: DesignFileOption,
          json_path: JsonOption = None, tanks_path: TanksOption = None) -> None:
    """Analyse a given design in every scenario: pressures, classes, velocities, outlet."""
    from optimiser.analysis import check_design
    from optimiser.io import InputError, load_design, load_study
    from optimiser.io.writers import StagedOutput, input_paths, write_json
    from optimiser.reports.results import check_dict
    from optimiser.reports.terminal import print_cautions, print_check

    try:
        study = load_study(study_path)
        design = load_design(design_path, study)
        if tanks_path is not None:
            import dataclasses

            from optimiser.io.tank_inputs import load_tank_file
            design = dataclasses.replace(design, tanks=load_tank_file(tanks_path, study))
        result = check_design(study, design)
        def write(output: StagedOutput) -> None:
            if json_path is not None:
                write_json(output.file(json_path), check_dict(result))

        written = staged_outputs(write, input_paths(study, design_path, tanks_path))
    except InputError as error:
        fail_input(error)
    print_check(console, result)
    print_written(written)
    print_cautions(console)
    raise typer.Exit(EXIT_OK if result.ok else EXIT_VIOLATION)


def report(
    study_path: StudyArgument,
    design_path: Annotated[Path, typer.Option(
        "--design", help="Design CSV to report on.", metavar="FILE", show_default=False)],
    out_dir: Annotated[Path, typer.Option(
        "--out", help="Folder for report.html, report.pdf, design.xlsx and "
        "appurtenances.csv.", metavar="FOLDER",
        show_default=False)],
    result_path: Annotated[Path | None, typer.Option(
        "--result", help="result.json from `design`, for the optimiser's figures.",
        metavar="FILE", show_default=False)] = None,
    paper: PaperOption = Paper.A4,
) -> None:
    """Write the report (HTML, PDF), workbook and appurtenance schedule of a design."""
    from optimiser.analysis import check_design
    from optimiser.io import InputError, load_design, load_study
    from optimiser.io.writers import input_paths
    from optimiser.reports.files import REPORT_FILES, write_report_files
    from optimiser.reports.terminal import print_cautions, print_check

    try:
        study = load_study(study_path)
        design = load_design(design_path, study)
        summary = None if result_path is None else read_run_summary(result_path)
        result = check_design(study, design)
        notes: list[str] = []
        written = staged_outputs(lambda output: write_report_files(
            output.folder(out_dir, REPORT_FILES), result, summary, paper=paper.value,
            notes=notes), input_paths(study, design_path, result_path))
    except InputError as error:
        fail_input(error)
    print_check(console, result)
    print_written(written)
    print_notes(notes)
    print_cautions(console)
    raise typer.Exit(EXIT_OK if result.ok else EXIT_VIOLATION)


def read_run_summary(path: Path) -> RunSummary:
    """The optimiser's figures from a ``result.json`` written by ``design``."""
    from optimiser.io import InputError
    from optimiser.reports.run_summary import RunSummary

    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{path}: result file not found") from None
    except (OSError, ValueError) as error:
        raise InputError(f"{path}: not a readable JSON result ({error})") from None
    if not isinstance(data, dict) or "status" not in data:
        raise InputError(f"{path}: not a result written by `optimiser design` (no status)")
    try:
        return RunSummary.from_result_dict(data)
    except ValueError as error:
        raise InputError(f"{path}: not a result written by `optimiser design` ({error})") \
            from None
