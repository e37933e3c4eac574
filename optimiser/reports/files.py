"""Files written for a design: design.csv and result.json of a design run, the report
(HTML and PDF), the workbook and the appurtenance schedule."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

from optimiser.analysis.appurtenances import schedule
from optimiser.analysis.check import CheckResult
from optimiser.io.writers import atomic_write_bytes, atomic_write_text, write_csv, write_json
from optimiser.model import Study
from optimiser.reports.design_report import design_dict, design_table
from optimiser.reports.geojson import write_geometry_files
from optimiser.reports.html import default_option_name, render_report
from optimiser.reports.pages import TitleBlock
from optimiser.reports.pdf import PageFooter, PdfUnavailableError, html_to_pdf
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.tank_tables import TANK_COLUMNS, tank_table_rows
from optimiser.reports.workbook import design_workbook

if TYPE_CHECKING:
    from optimiser.milp import DesignOutcome

REPORT_FILES = frozenset({"report.html", "report.pdf", "design.xlsx", "appurtenances.csv",
                          "design.geojson", "profile_points.csv"})
"""The files :func:`write_report_files` writes (report.pdf when a browser is found, the
last two for routes with coordinates)."""
DESIGN_FILES = frozenset({"design.csv", "result.json", "break_pressure_tanks.csv",
                          *REPORT_FILES})
"""The files :func:`write_design_files` writes (result.json only when there is no design)."""

APPURTENANCE_COLUMNS = ["kind", "chainage_m", "pipe_level_m", "ground_m", "reason", "label"]
CSV_DECIMALS = {"length_m": 3, "chainage_m": 3,
                "internal_diameter_mm": 1, "cost": 2, "velocity_m_s": 3,
                "unit_head_loss_m_per_km": 3, "pipe_level_m": 3, "ground_m": 3}
"""Decimals of each CSV column (lengths to 0.001 m; DN is written as an integer). The
piece boundaries ``from_m`` and ``to_m`` of design.csv stay exact: design.csv is read
back by ``check`` and ``report``, and a design whose limits bind exactly (the cheapest
usually does) would fail the check by a rounding of its boundaries."""


def rounded_csv(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` as the CSVs carry it: the decimals of ``CSV_DECIMALS``, whole DN."""
    table = table.round({k: v for k, v in CSV_DECIMALS.items() if k in table})
    if "dn_mm" in table and (table["dn_mm"] == table["dn_mm"].round()).all():
        table = table.assign(dn_mm=table["dn_mm"].round().astype(int))
    return table


def write_pdf(path: Path, page_html: str, title: TitleBlock, paper: str,
              notes: list[str]) -> list[Path]:
    """Print ``page_html`` to ``path``; without a browser, add one line to ``notes``."""
    with tempfile.TemporaryDirectory(prefix="optimiser-print-") as folder:
        page = Path(folder) / "page.html"
        page.write_text(page_html, encoding="utf-8")
        try:
            data = html_to_pdf(page, paper, PageFooter(title.footer()))
        except PdfUnavailableError as error:
            notes.append(f"{path.name} not written: {error}; the HTML report is written")
            return []
    atomic_write_bytes(path, data)
    return [path]


def write_report_files(out_dir: Path, result: CheckResult,
                       summary: RunSummary | None = None, *, paper: str = "a4",
                       option: str | None = None, colour: str | None = None,
                       notes: list[str] | None = None) -> list[Path]:
    """Write ``report.html``, ``report.pdf``, ``design.xlsx`` and ``appurtenances.csv``
    into ``out_dir``; return the paths. A PDF that cannot be made is a line in ``notes``."""
    notes = [] if notes is None else notes
    out_dir = Path(out_dir)
    items = schedule(result)
    option = option or default_option_name(result)
    report = out_dir / "report.html"
    atomic_write_text(report, render_report(result, items, summary, option=option,
                                            colour=colour))
    title = TitleBlock.make(result.study.title, option, result.study.path,
                            "Pipeline sizing report")
    pdf = write_pdf(out_dir / "report.pdf", render_report(
        result, items, summary, option=option, colour=colour, printing=True),
        title, paper, notes)
    workbook = out_dir / "design.xlsx"
    atomic_write_bytes(workbook, design_workbook(result, items, summary, option))
    table = out_dir / "appurtenances.csv"
    frame = pd.DataFrame([a.as_dict() for a in items], columns=APPURTENANCE_COLUMNS)
    write_csv(table, rounded_csv(frame))
    return [report, *pdf, workbook, table,
            *write_geometry_files(out_dir, result, items)]  # with coordinates


def write_design_files(folder: Path, outcome: DesignOutcome, study: Study,
                       command: str = "design", *, paper: str = "a4",
                       option: str | None = None, colour: str | None = None,
                       notes: list[str] | None = None) -> list[Path]:
    """design.csv, result.json and the report files of one design run into ``folder``
    (result.json only, when the run found no design); return the paths."""
    folder = Path(folder)
    paths = []
    if outcome.design is not None:
        write_csv(folder / "design.csv", rounded_csv(design_table(outcome)))
        paths.append(folder / "design.csv")
    if outcome.check is not None and outcome.check.tanks:  # contract section 8
        frame = pd.DataFrame(tank_table_rows(study, outcome.check.tanks), columns=TANK_COLUMNS)
        write_csv(folder / "break_pressure_tanks.csv", frame)
        paths.append(folder / "break_pressure_tanks.csv")
    write_json(folder / "result.json", design_dict(outcome, study, command))
    paths.append(folder / "result.json")
    if outcome.check is not None:
        paths += write_report_files(folder, outcome.check, RunSummary.from_outcome(outcome),
                                    paper=paper, option=option, colour=colour, notes=notes)
    return paths
