"""Report pages from Jinja2 templates (``optimiser/reports/templates``): the engine, the
number filters, the title block of page one and the charts embedded once per page."""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import plotly.graph_objects as go
from jinja2 import Environment, FileSystemLoader, StrictUndefined, select_autoescape
from plotly.offline import get_plotlyjs

from optimiser import __version__
from optimiser.reports import numbers
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.hashing import file_sha256
from optimiser.reports.text import short_title

TEMPLATES = Path(__file__).resolve().parent / "templates"


def _environment() -> Environment:
    env = Environment(loader=FileSystemLoader(TEMPLATES), autoescape=select_autoescape(
        enabled_extensions=("html", "j2"), default_for_string=True),
        undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters.update(money=numbers.money, metres=numbers.length, head=numbers.head,
                       velocity=numbers.velocity, flow_l_s=numbers.flow_l_s,
                       percent=numbers.percent, dn=numbers.dn)
    return env


ENVIRONMENT = _environment()


@dataclass(frozen=True)
class TitleBlock:
    """Page one's record of what the report is about; prepared, checked and approved
    are left blank for the engineers to sign."""

    project: str
    option: str
    study_file: str
    study_sha256: str
    date: str
    tool_version: str
    document: str
    options: tuple[tuple[str, str, str, str], ...] = ()
    """For a comparison: name, colour, study file and its SHA-256 of each option."""

    @classmethod
    def make(cls, title: str, option: str, study_path: Path | None,
             document: str) -> TitleBlock:
        return cls(project=short_title(title), option=option,
                   study_file=str(study_path) if study_path else "built in code (no file)",
                   study_sha256=file_sha256(study_path),
                   date=datetime.now(UTC).strftime("%Y-%m-%d"), tool_version=__version__,
                   document=document)

    def footer(self) -> str:
        """One line for the foot of every printed page."""
        return short_title(f"{self.document} · {self.project} · {self.option}", 110)


@dataclass(frozen=True)
class Chart:
    """A figure placed on a page: heading, element id and the figure as JSON."""

    heading: str
    div_id: str
    figure_json: str
    height_px: int


def chart(heading: str, div_id: str, figure: go.Figure, print_width_px: int | None) -> Chart:
    """``figure`` ready for the page; for print, laid out at the printable width."""
    if print_width_px is not None:
        figure.update_layout(width=print_width_px)
    height = int(figure.layout.height or 450)
    # "</" inside a script element would end it early (a title may contain anything).
    return Chart(heading, div_id, figure.to_json().replace("</", "<\\/"), height)


def render(template: str, title_block: TitleBlock, printing: bool, **context: Any) -> str:
    """The page ``template`` with the title block, the cautions and plotly.js once."""
    return ENVIRONMENT.get_template(template).render(
        title=title_block, cautions=CAUTIONS, printing=printing,
        plotly_js=get_plotlyjs(), plot_config=json.dumps(
            {"displaylogo": False, "responsive": not printing, "staticPlot": printing}),
        **context)
