"""Commands that write reports: ``report`` (over an existing design) and ``compare``.

Registered on the main app at the bottom of :mod:`optimiser.cli`.
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Annotated

import pandas as pd
import typer
from rich.table import Table

from optimiser.analysis import check_design
from optimiser.cli import (
    EXIT_OK,
    EXIT_SOLVER,
    EXIT_VIOLATION,
    console,
    error_console,
    fail_input,
)
from optimiser.io import InputError, load_design, load_study
from optimiser.io.writers import (
    atomic_write_text,
    prepare_out_dir,
    write_csv,
    write_json,
    write_workbook,
)
from optimiser.milp import SolverError, VerificationError, optimise_design
from optimiser.reports.compare import (
    OptionResult,
    comparison_html,
    comparison_table,
    option_name,
)
from optimiser.reports.design_report import design_dict, design_table
from optimiser.reports.files import design_info, write_report_files
from optimiser.reports.terminal import print_cautions, print_check
from optimiser.sweeps.runner import run_all


def report(
    study_path: Annotated[Path, typer.Argument(help="Study file (TOML).", show_default=False)],
    design_path: Annotated[Path, typer.Option("--design", help="Design CSV to report on.")],
    out_dir: Annotated[Path, typer.Option("--out", help="Folder for report.html and "
                                          "appurtenances.csv.")],
    result_path: Annotated[Path | None, typer.Option(
        "--result", help="result.json from `design`, for the optimiser's figures.")] = None,
) -> None:
    """Write the HTML report and appurtenance schedule of an existing design."""
    try:
        study = load_study(study_path)
        design = load_design(design_path, study)
        info = None
        if result_path is not None:
            info = _read_design_info(result_path)
        result = check_design(study, design)
        out = prepare_out_dir(out_dir)
        paths = write_report_files(out, result, info)
    except InputError as error:
        fail_input(error)
    print_check(console, result)
    for path in paths:
        console.print(f"wrote {path}")
    print_cautions(console)
    raise typer.Exit(EXIT_OK if result.ok else EXIT_VIOLATION)


def _read_design_info(path: Path) -> dict:
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"{path}: result file not found") from None
    except (OSError, ValueError) as error:
        raise InputError(f"{path}: not a readable JSON result ({error})") from None
    if not isinstance(data, dict) or "status" not in data:
        raise InputError(f"{path}: not a result written by `optimiser design` (no status)")
    uniform = data.get("uniform")
    if isinstance(uniform, dict) and "cost" in uniform:
        label = uniform.get("label") or (f"{uniform.get('material', '')} "
                                         f"DN{uniform.get('dn_mm', 0):g} "
                                         f"{uniform.get('pressure_class', '')}")
        uniform = {"label": label, "cost": uniform["cost"]}
    else:
        uniform = None
    return {key: data.get(key) for key in ("status", "gap", "lower_bound", "lp_bound",
                                           "solve_time_s")} | {
        "solver": data.get("solver"), "uniform": uniform}


def _design_option(path: Path) -> OptionResult:
    """Load and design one option (module level, so it can run in another process)."""
    study = load_study(path)
    try:
        return OptionResult(path, study, optimise_design(study))
    except (SolverError, VerificationError) as error:
        return OptionResult(path, study, None, f"{type(error).__name__}: {error}")


def _slug(text: str, taken: set[str]) -> str:
    slug = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")[:40] or "option"
    candidate, counter = slug, 2
    while candidate in taken:
        candidate, counter = f"{slug}-{counter}", counter + 1
    taken.add(candidate)
    return candidate


def compare(
    study_paths: Annotated[list[Path], typer.Argument(help="Study files, one per option.",
                                                      show_default=False)],
    out_dir: Annotated[Path | None, typer.Option(
        "--out", help="Folder for comparison.csv, .xlsx, .html and each option's files.")]
    = None,
) -> None:
    """Design every option and compare them side by side, ranked by capital cost."""
    problems: list[str] = []
    for path in study_paths:
        try:
            load_study(path)
        except InputError as error:
            problems.extend(error.problems)
    if problems:
        fail_input(InputError(problems))
    if out_dir is not None:
        try:
            out = prepare_out_dir(out_dir)
        except InputError as error:
            fail_input(error)
    options = run_all(_design_option, list(study_paths), console=error_console,
                      label="designing options")
    table = comparison_table(options)
    _print_comparison(table)
    if out_dir is not None:
        schedules: dict[str, pd.DataFrame] = {"comparison": table}
        taken: set[str] = set()
        for option in options:
            slug = _slug(option_name(option.path), taken)
            outcome = option.outcome
            if outcome is None or outcome.check is None:
                continue
            folder = prepare_out_dir(out / slug)
            write_csv(folder / "design.csv", design_table(outcome))
            write_json(folder / "result.json", design_dict(outcome, option.study))
            write_report_files(folder, outcome.check, design_info(outcome))
            schedules[slug] = outcome.check.pieces
        write_csv(out / "comparison.csv", table)
        write_workbook(out / "comparison.xlsx", schedules)
        atomic_write_text(out / "comparison.html", comparison_html(table, options))
        console.print(f"wrote {out / 'comparison.csv'}, comparison.xlsx, comparison.html "
                      "and one folder per option with a design")
    print_cautions(console)
    if all(o.outcome is None for o in options):
        raise typer.Exit(EXIT_SOLVER)
    raise typer.Exit(EXIT_OK)


def _print_comparison(table: pd.DataFrame) -> None:
    view = Table(title="Options ranked by capital cost", title_justify="left")
    # The terminal keeps the deciding figures; every column is in comparison.csv.
    columns = [("rank", "#"), ("option", "option"), ("status", "status"),
               ("total_cost", "cost"), ("n_changes", "changes"),
               ("least_pressure_margin_m", "least margin m"), ("verified", "verified")]
    for _, title in columns:
        view.add_column(title, justify="left" if title in ("option", "status") else "right")
    for row in table.itertuples(index=False):
        cells = []
        for key, _ in columns:
            value = getattr(row, key)
            if value is None or (isinstance(value, float) and pd.isna(value)):
                cells.append("–")
            elif isinstance(value, float):
                cells.append(f"{value:,.0f}" if abs(value) >= 100 else f"{value:.2f}")
            else:
                cells.append(str(value))
        view.add_row(*cells)
    console.print(view)
    for row in table.itertuples(index=False):
        if row.diagnosis:
            console.print(f"[bold]{row.option}[/bold]: {row.diagnosis}")
