"""The design report as a self-contained HTML page (plotly.js embedded once, works
offline), rendered from ``templates/design_report.html.j2``; the same page laid out for
print is what :mod:`optimiser.reports.pdf` turns into ``report.pdf``."""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.reports import numbers as fmt
from optimiser.reports.charts import cost_figure, pressure_velocity_figure, profile_figure
from optimiser.reports.colours import option_colour
from optimiser.reports.inputs import input_tables
from optimiser.reports.outlet_control import control_sentence
from optimiser.reports.pages import TitleBlock, chart, render
from optimiser.reports.pdf import PRINTABLE_WIDTH_PX
from optimiser.reports.plan_view import plan_figure, plan_notes
from optimiser.reports.run_summary import RunSummary
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
    charts = [
        chart("Levels along the route", "plot-0",
              profile_figure(result, title="", colour=colour,
                             appurtenances=appurtenances), width),
        chart("Pressure head and velocity", "plot-1", pressure_velocity_figure(result), width),
        chart("Cost by pipe", "plot-2", cost_figure(result, colour=colour), width),
    ]
    if study.route.coordinates is not None:
        charts.append(chart("Plan", "plot-plan", plan_figure(result, appurtenances), width))
    title = TitleBlock.make(study.title, option, study.path, DOCUMENT)
    return render(
        "design_report.html.j2", title, printing, charts=charts, colour=colour,
        summary=_summary_rows(result, summary), scenario_table=_scenario_grid(result),
        plan_notes=plan_notes(result),
        outlet_control=[control_sentence(s) for s in result.scenarios
                        if s.capacity_outlet_only_m3_s is not None or s.outlet_margin_m < 0],
        schedule=_schedule_grid(result), total_cost=fmt.money(result.total_cost, study.currency),
        change_cost=(fmt.money(result.change_cost_total, study.currency)
                     if result.change_cost_total else ""),
        violations=_violations_grid(result), appurtenances=_appurtenance_grid(appurtenances),
        tanks=Grid(TANK_GRID_COLUMNS, tank_rows(result)) if result.tanks else None,
        tank_cost=(fmt.money(result.tank_cost_total, study.currency)
                   if result.tank_cost_total else ""),
        inputs=input_tables(study, summary))


def _summary_rows(result: CheckResult, summary: RunSummary | None
                  ) -> list[tuple[str, str, str]]:
    study = result.study
    currency = study.currency
    status = (("every limit met in every scenario", "status-ok") if result.ok else
              (f"{len(result.violations)} violation(s)", "status-bad"))
    rows = [("route length", f"{fmt.length(study.route.total_chainage_m)} m (chainage)", ""),
            ("independent check", *status),
            ("capital cost", fmt.money(result.total_cost, currency), "")]
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
            chainage_label(float(least["chainage_m"])),
            fmt.velocity(float(s.segments["velocity_m_s"].max())),
            "none" if s.capacity_m3_s is None else fmt.flow_l_s(s.capacity_m3_s)))
    return Grid(("scenario", "inflow (L/s)", "outlet energy (m)", "required (m)",
                 "outlet margin (m)", "least pressure margin (m)", "least margin at",
                 "highest velocity (m/s)", "capacity (L/s)"), rows)


def _violations_grid(result: CheckResult) -> Grid | None:
    if result.ok:
        return None
    return Grid(("kind", "scenario", "chainage", "value", "limit", "detail"), [
        (v.kind, v.scenario or "(static)", chainage_label(v.chainage_m), fmt.head(v.value),
         fmt.head(v.limit), v.message) for v in result.violations[:200]])


def _appurtenance_grid(appurtenances: list[Appurtenance]) -> Grid | None:
    if not appurtenances:
        return None
    return Grid(("kind", "chainage", "pipe level (m)", "ground (m)", "reason", "label"), [
        (a.kind, chainage_label(a.chainage_m), fmt.head(a.pipe_level_m), fmt.head(a.ground_m),
         a.reason, a.label) for a in appurtenances])


def _schedule_grid(result: CheckResult) -> Grid:
    currency = result.study.currency
    rows = []
    for p in result.pieces.itertuples():
        by_surge = p.class_governs == "static + surge"
        rows.append((
            chainage_label(p.from_m), chainage_label(p.to_m), fmt.length(p.length_m),
            p.material, fmt.dn(p.dn_mm), fmt.head(p.internal_diameter_mm), p.pressure_class,
            fmt.head(p.static_head_m), fmt.head(p.surge_head_m),
            fmt.head(p.allowable_surge_head_m if by_surge else p.allowable_head_m),
            "surge" if by_surge else "static", fmt.money(p.cost)))
    return Grid(("from", "to", "length (m)", "material", "DN", "ID (mm)", "class",
                 "static head (m)", "surge (m)", "limit (m)", "set by",
                 f"cost ({currency})" if currency else "cost"), rows)
