"""Report files written beside a design: the HTML report and the appurtenance schedule."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pandas as pd

from optimiser.analysis.appurtenances import schedule
from optimiser.analysis.check import CheckResult
from optimiser.io.writers import atomic_write_text, write_csv
from optimiser.reports.geojson import write_geometry_files
from optimiser.reports.html import render_report

APPURTENANCE_COLUMNS = ["kind", "chainage_m", "pipe_level_m", "ground_m", "reason", "label"]


def design_info(outcome: Any) -> dict[str, Any]:
    """The optimiser's figures for the report summary, from a ``DesignOutcome``."""
    uniform = outcome.uniform
    return {
        "status": outcome.status, "gap": outcome.gap, "lower_bound": outcome.lower_bound,
        "lp_bound": outcome.lp_bound, "solver": outcome.solver_name,
        "solve_time_s": outcome.solve_time_s,
        "uniform": None if uniform is None else {"label": uniform.option.label,
                                                 "cost": uniform.cost},
    }


def write_report_files(out_dir: Path, result: CheckResult,
                       info: dict[str, Any] | None = None) -> list[Path]:
    """Write ``report.html`` and ``appurtenances.csv`` into ``out_dir``; return the paths."""
    items = schedule(result)
    report = Path(out_dir) / "report.html"
    table = Path(out_dir) / "appurtenances.csv"
    atomic_write_text(report, render_report(result, items, info))
    frame = pd.DataFrame([a.as_dict() for a in items], columns=APPURTENANCE_COLUMNS)
    write_csv(table, frame.round({"chainage_m": 2, "pipe_level_m": 3, "ground_m": 3}))
    return [report, table, *write_geometry_files(out_dir, result, items)]  # with coordinates
