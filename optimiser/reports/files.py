"""Files written for a design: design.csv and result.json of a design run, the HTML report
and the appurtenance schedule."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

from optimiser.analysis.appurtenances import schedule
from optimiser.analysis.check import CheckResult
from optimiser.io.writers import atomic_write_text, write_csv, write_json
from optimiser.model import Study
from optimiser.reports.design_report import design_dict, design_table
from optimiser.reports.geojson import write_geometry_files
from optimiser.reports.html import render_report
from optimiser.reports.run_summary import RunSummary

if TYPE_CHECKING:
    from optimiser.milp import DesignOutcome

REPORT_FILES = frozenset({"report.html", "appurtenances.csv", "design.geojson",
                          "profile_points.csv"})
"""The files :func:`write_report_files` writes (the last two for routes with coordinates)."""
DESIGN_FILES = frozenset({"design.csv", "result.json", *REPORT_FILES})
"""The files :func:`write_design_files` writes (result.json only when there is no design)."""

APPURTENANCE_COLUMNS = ["kind", "chainage_m", "pipe_level_m", "ground_m", "reason", "label"]


def write_report_files(out_dir: Path, result: CheckResult,
                       summary: RunSummary | None = None) -> list[Path]:
    """Write ``report.html`` and ``appurtenances.csv`` into ``out_dir``; return the paths."""
    items = schedule(result)
    report = Path(out_dir) / "report.html"
    table = Path(out_dir) / "appurtenances.csv"
    atomic_write_text(report, render_report(result, items, summary))
    frame = pd.DataFrame([a.as_dict() for a in items], columns=APPURTENANCE_COLUMNS)
    write_csv(table, frame.round({"chainage_m": 2, "pipe_level_m": 3, "ground_m": 3}))
    return [report, table, *write_geometry_files(out_dir, result, items)]  # with coordinates


def write_design_files(folder: Path, outcome: DesignOutcome, study: Study,
                       command: str = "design") -> list[Path]:
    """design.csv, result.json, report.html and appurtenances.csv of one design run into
    ``folder`` (result.json only, when the run found no design); return the paths."""
    folder = Path(folder)
    paths = []
    if outcome.design is not None:
        write_csv(folder / "design.csv", design_table(outcome))
        paths.append(folder / "design.csv")
    write_json(folder / "result.json", design_dict(outcome, study, command))
    paths.append(folder / "result.json")
    if outcome.check is not None:
        paths += write_report_files(folder, outcome.check, RunSummary.from_outcome(outcome))
    return paths
