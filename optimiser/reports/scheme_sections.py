"""The sections a scheme adds to the design report (contract section 7): the scheme
diagram, the branches with their totals, a long section of every line in its governing
scenario, and the delivery margins of every delivery point in every scenario.

The long section of a line is the route's long section (:func:`profile_figure`) drawn
on the line's view of the check (:func:`branch_view`), in the one scenario that
governs that line: the smallest of its least pressure margin and its delivery margin.
Its energy line is shown beside the hydraulic grade line, and the junctions of the
branches that leave it are marked.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import plotly.graph_objects as go

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.model import TRUNK
from optimiser.model.lines import children_of, study_lines
from optimiser.reports import numbers as fmt
from optimiser.reports.branch_view import branch_view
from optimiser.reports.charts import profile_figure
from optimiser.reports.pages import Chart, chart
from optimiser.reports.scheme_diagram import diagram_note, scheme_figure
from optimiser.reports.scheme_tables import totals_rows
from optimiser.reports.terminal import chainage_label

MARGIN_COLUMNS = ("scenario", "branch", "delivery flow (L/s)", "energy (m)",
                  "required head (m)", "margin (m)", "spare head (m)",
                  "uncontrolled flow (L/s)")
"""Columns of the delivery margins table (energy after the exit loss; spare head is the
head a flow-control valve takes at the delivery flow)."""

JUNCTION_MARKER = ("circle", "#3A3A3A", 9)


@dataclass(frozen=True)
class LongSection:
    """A line's long section: the line, the scenario drawn, a sentence and the chart."""

    branch: str
    scenario: str
    note: str
    chart: Chart


@dataclass(frozen=True)
class SchemeSections:
    """What the report's template shows for a scheme (tables as columns and rows)."""

    diagram: Chart
    diagram_note: str
    branches: tuple[tuple[str, ...], list[tuple[str, ...]]]
    long_sections: list[LongSection]
    margins: tuple[tuple[str, ...], list[tuple[str, ...]]]

    @property
    def charts(self) -> list[Chart]:
        return [self.diagram, *(section.chart for section in self.long_sections)]


def governing_index(view: CheckResult) -> int:
    """Index of the scenario with the smallest margin on a line (least pressure margin
    or delivery margin)."""
    margins = []
    for scenario in view.scenarios:
        least = scenario.least_pressure_margin
        margins.append(min(float(least["pressure_m"] - least["min_pressure_m"]),
                           scenario.outlet_margin_m))
    return int(np.argmin(margins))


def _junction_trace(fig: go.Figure, view: CheckResult, result: CheckResult, name: str) -> None:
    """The junctions of the branches leaving line ``name``, labelled with their names."""
    children = children_of(result.study, name)
    if not children:
        return
    x = np.array([child.at_chainage_m for child in children])
    symbol, colour, size = JUNCTION_MARKER
    fig.add_trace(go.Scatter(
        x=x, y=view.study.route.pipe_level_at(x), mode="markers+text", name="junction",
        text=[child.name for child in children], textposition="bottom center",
        textfont={"size": 9, "color": colour},
        marker={"symbol": symbol, "color": colour, "size": size},
        customdata=[chainage_label(c) for c in x],
        hovertemplate="junction of %{text}<br>%{customdata}<extra></extra>"), row=1, col=1)


def long_section(result: CheckResult, name: str, appurtenances: list[Appurtenance],
                 colour: str, div_id: str, width: int | None) -> LongSection:
    """The long section of line ``name`` in its governing scenario."""
    view = branch_view(result, name)
    index = governing_index(view)
    scenario = view.scenarios[index]
    one = dataclasses.replace(view, scenarios=[scenario])
    fig = profile_figure(one, title="", colour=colour,
                         appurtenances=[a for a in appurtenances if a.branch == name])
    fig.for_each_trace(lambda t: t.update(visible=True),
                       selector=lambda t: (t.name or "").startswith("energy line"))
    _junction_trace(fig, view, result, name)
    least = scenario.least_pressure_margin
    note = (f"Scenario {scenario.name!r} governs this line: delivery margin "
            f"{fmt.head(scenario.outlet_margin_m)} m, least pressure margin "
            f"{fmt.head(float(least['pressure_m'] - least['min_pressure_m']))} m at "
            f"{chainage_label(float(least['chainage_m']))}. Chainage from "
            + ("the source." if name == TRUNK else "its junction."))
    heading = f"the trunk ({TRUNK})" if name == TRUNK else f"branch {name}"
    return LongSection(name, scenario.name, note,
                       chart(f"Long section: {heading}", div_id, fig, width))


def margin_rows(result: CheckResult) -> list[tuple[str, ...]]:
    """One row per delivery point per scenario (:data:`MARGIN_COLUMNS`)."""
    rows = []
    for scenario in result.scenarios:
        for outlet in scenario.outlets:
            uncontrolled = outlet.uncontrolled_flow_m3_s
            rows.append((scenario.name, outlet.branch, fmt.flow_l_s(outlet.flow_m3_s),
                         fmt.head(outlet.energy_m), fmt.head(outlet.required_head_m),
                         fmt.head(outlet.margin_m), fmt.head(max(outlet.margin_m, 0.0)),
                         "unbounded" if uncontrolled == float("inf")
                         else fmt.flow_l_s(uncontrolled)))
    return rows


def scheme_sections(result: CheckResult, appurtenances: list[Appurtenance], colour: str,
                    width: int | None) -> SchemeSections:
    """Every section a scheme adds to the report."""
    study = result.study
    diagram = chart("Scheme diagram", "plot-scheme", scheme_figure(study, result.design),
                    width)
    sections = [long_section(result, line.name, appurtenances, colour, f"plot-line-{n}", width)
                for n, line in enumerate(study_lines(study))]
    return SchemeSections(diagram, diagram_note(study),
                          totals_rows(study, result.pieces, result.change_cost_total),
                          sections, (MARGIN_COLUMNS, margin_rows(result)))
