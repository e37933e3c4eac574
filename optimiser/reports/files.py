"""Report files written beside a design: the HTML report and the appurtenance schedule."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from optimiser.analysis.appurtenances import schedule
from optimiser.analysis.check import CheckResult
from optimiser.io.writers import atomic_write_text, write_csv
from optimiser.reports.html import render_report
from optimiser.reports.run_summary import RunSummary

REPORT_FILES = frozenset({"report.html", "appurtenances.csv"})
"""The files :func:`write_report_files` writes."""

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
    return [report, table]
