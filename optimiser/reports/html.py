"""The design report as a self-contained HTML page (plotly.js embedded once, works
offline), rendered from ``templates/design_report.html.j2``; the same page laid out for
print is what :mod:`optimiser.reports.pdf` turns into ``report.pdf``."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.model import TRUNK
from optimiser.reports import numbers as fmt
from optimiser.reports.branch_view import branch_view
from optimiser.reports.charts import cost_figure, pressure_velocity_figure, profile_figure
from optimiser.reports.colours import option_colour
from optimiser.reports.inputs import input_tables
from optimiser.reports.life_cycle import html_section
from optimiser.reports.outlet_control import control_sentences, scheme_control_summary
from optimiser.reports.pages import Chart, TitleBlock, chart, render
from optimiser.reports.pdf import PRINTABLE_WIDTH_PX
from optimiser.reports.plan_view import plan_figure, plan_notes
from optimiser.reports.run_summary import RunSummary
from optimiser.reports.scheme_sections import scheme_sections
from optimiser.reports.scheme_tables import grouped_schedule_rows, scheme_summary
from optimiser.reports.tank_charts import TANK_GRID_COLUMNS, tank_rows
from optimiser.reports.terminal import chainage_label

DOCUMENT = "Pipeline sizing report"


@dataclass(frozen=True)
class Grid:
    """A table of the page: column headings (units in brackets) and rows of text."""

    columns: tuple[str, ...]
    rows: list[tuple[str, ...]]


def default_option_name(result: CheckResult) -> str:
    """The option's name when none is given: the study file's folder or stem."""
    path = result.study.path
    if path is None:
        return "design"
    return path.parent.name or path.stem if path.stem == "study" else path.stem


def render_report(result: CheckResult, appurtenances: list[Appurtenance],
                  summary: RunSummary | None = None, *, option: str | None = None,
                  colour: str | None = None, printing: bool = False) -> str:
    """The report as one HTML string; ``summary`` carries the optimiser's figures when
    the design comes from a design run; ``option`` names it (default: from the study
    file), ``colour`` is its colour in a comparison; ``printing`` lays it out for paper."""
    study = result.study
    option = option or default_option_name(result)
    colour = colour or option_colour(option)
    width = PRINTABLE_WIDTH_PX if printing else None
    scheme = (scheme_sections(result, appurtenances, colour, width) if study.is_scheme
              else None)
    named = _charts(result, appurtenances, colour, width)
    title = TitleBlock.make(study.title, option, study.path, DOCUMENT)
    return render(
        "design_report.html.j2", title, printing, named=named,
        charts=[*named.values(), *(scheme.charts if scheme else [])], colour=colour,
        scheme=scheme, summary=_summary_rows(result, summary),
        scenario_table=_scenario_grid(result), plan_notes=plan_notes(result),
        outlet_control=([scheme_control_summary(s) for s in result.scenarios]
                        if study.is_scheme else
                        [c for s in result.scenarios for c in control_sentences(s)]),
        schedule=_schedule_grid(result), total_cost=fmt.money(result.total_cost, study.currency),
        change_cost=(fmt.money(result.change_cost_total, study.currency)
                     if result.change_cost_total else ""),
        violations=_violations_grid(result), appurtenances=_appurtenance_grid(
            appurtenances, study.is_scheme),
        tanks=Grid(TANK_GRID_COLUMNS, tank_rows(result)) if result.tanks else None,
        tank_cost=(fmt.money(result.tank_cost_total, study.currency)
                   if result.tank_cost_total else ""),
        inputs=input_tables(study, summary), station=html_section(result))


def _charts(result: CheckResult, appurtenances: list[Appurtenance], colour: str,
            width: int | None) -> dict[str, Chart]:
    """The route's charts by name: long section, pressure and velocity, cost, plan. A
    scheme draws a long section per line instead (:mod:`.scheme_sections`), its
    pressures and velocities on the trunk, and its plan in the scheme diagram."""
    study = result.study
    trunk = branch_view(result, TRUNK) if study.is_scheme else result
    charts = {}
    if not study.is_scheme:
        charts["long"] = chart("Levels along the route", "plot-0", profile_figure(
            result, title="", colour=colour, appurtenances=appurtenances), width)
    charts["pressure"] = chart("Pressure head and velocity", "plot-1",
                               pressure_velocity_figure(trunk), width)
    charts["cost"] = chart("Cost by pipe", "plot-2", cost_figure(result, colour=colour), width)
    if study.route.coordinates is not None and not study.is_scheme:
        charts["plan"] = chart("Plan", "plot-plan", plan_figure(result, appurtenances), width)
    return charts


def _summary_rows(result: CheckResult, summary: RunSummary | None
                  ) -> list[tuple[str, str, str]]:
    study = result.study
    currency = study.currency
    status = (("every limit met in every scenario", "status-ok") if result.ok else
              (f"{len(result.violations)} violation(s)", "status-bad"))
    rows = [("route length", f"{fmt.length(study.route.total_chainage_m)} m (chainage)", "")]
    if study.is_scheme:
        rows = [("scheme", scheme_summary(study), "")]
    rows += [("independent check", *status),
             ("capital cost", fmt.money(result.total_cost, currency), "")]
    if result.life_cycle_cost is not None:  # a pumped main
        rows.append(("life-cycle cost", fmt.money(result.life_cycle_cost, currency), ""))
    if summary is not None:
        rows += [("optimiser status", summary.status, ""),
                 ("solver", f"{summary.solver or '–'}, {summary.solve_time_s or 0:.1f} s", ""),
                 ("best bound (no design can cost less)",
                  fmt.money(summary.lower_bound, currency), ""),
                 ("gap between cost and bound", fmt.percent(summary.gap), ""),
                 ("bound with the rules relaxed", fmt.money(summary.lp_bound, currency), "")]
        if summary.uniform_cost:
            saving = summary.uniform_cost - result.total_cost
            rows.append(("cheapest uniform design",
                         f"{summary.uniform_label}: {fmt.money(summary.uniform_cost, currency)};"
                         f" this design saves {fmt.money(saving, currency)} "
                         f"({fmt.percent(saving / summary.uniform_cost, 1)})", ""))
    return rows


def _scenario_grid(result: CheckResult) -> Grid:
    rows = []
    for s in result.scenarios:
        least = s.least_pressure_margin
        rows.append((
            s.name, fmt.flow_l_s(s.inflow_m3_s), fmt.head(s.outlet_energy_m),
            fmt.head(s.required_head_m), fmt.head(s.outlet_margin_m),
            fmt.head(float(least["pressure_m"] - least["min_pressure_m"])),
            _where(result, least),
            fmt.velocity(float(s.segments["velocity_m_s"].max())),
            "none" if s.capacity_m3_s is None else fmt.flow_l_s(s.capacity_m3_s)))
    return Grid(("scenario", "inflow (L/s)", "outlet energy (m)", "required (m)",
                 "outlet margin (m)", "least pressure margin (m)", "least margin at",
                 "highest velocity (m/s)", "capacity (L/s)"), rows)


def _where(result: CheckResult, point: Any) -> str:
    """Chainage of a check point, with its branch on a scheme."""
    at = chainage_label(float(point["chainage_m"]))
    return f"{point['branch']} {at}" if result.study.is_scheme else at


def _violations_grid(result: CheckResult) -> Grid | None:
    if result.ok:
        return None
    grid = Grid(("kind", "scenario", "chainage", "value", "limit", "detail"), [
        (v.kind, v.scenario or "(static)", chainage_label(v.chainage_m), fmt.head(v.value),
         fmt.head(v.limit), v.message) for v in result.violations[:200]])
    if result.study.is_scheme:
        return with_branch_column(grid, [v.branch for v in result.violations[:200]])
    return grid


def _appurtenance_grid(appurtenances: list[Appurtenance], scheme: bool = False
                       ) -> Grid | None:
    if not appurtenances:
        return None
    grid = Grid(("kind", "chainage", "pipe level (m)", "ground (m)", "reason", "label"), [
        (a.kind, chainage_label(a.chainage_m), fmt.head(a.pipe_level_m), fmt.head(a.ground_m),
         a.reason, a.label) for a in appurtenances])
    if scheme:
        return with_branch_column(grid, [a.branch for a in appurtenances])
    return grid


def with_branch_column(grid: Grid, branches: list[str]) -> Grid:
    """``grid`` with a first column naming the branch of each row (a scheme's tables)."""
    return Grid(("branch", *grid.columns),
                [(branch, *row) for branch, row in zip(branches, grid.rows, strict=True)])


def _piece_row(p: Any) -> tuple[str, ...]:
    by_surge = p.class_governs == "static + surge"
    return (chainage_label(p.from_m), chainage_label(p.to_m), fmt.length(p.length_m),
            p.material, fmt.dn(p.dn_mm), fmt.head(p.internal_diameter_mm), p.pressure_class,
            fmt.head(p.static_head_m), fmt.head(p.surge_head_m),
            fmt.head(p.allowable_surge_head_m if by_surge else p.allowable_head_m),
            "surge" if by_surge else "static", fmt.money(p.cost))


def _schedule_grid(result: CheckResult) -> Grid:
    """The schedule of pieces; on a scheme grouped by branch with a total per branch."""
    currency = result.study.currency
    columns = ("from", "to", "length (m)", "material", "DN", "ID (mm)", "class",
               "static head (m)", "surge (m)", "limit (m)", "set by",
               f"cost ({currency})" if currency else "cost")
    if result.study.is_scheme:
        return Grid(("branch", *columns),
                    grouped_schedule_rows(result.study, result.pieces, _piece_row))
    return Grid(columns, [_piece_row(p) for p in result.pieces.itertuples()])
