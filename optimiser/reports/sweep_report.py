"""Output of sweeps: terminal tables, JSON dictionaries and the files written to --out.

Every JSON and HTML file carries the cautions; files are written atomically, and only
after every number is in hand, so a failed run leaves nothing half-written.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from rich.console import Console
from rich.table import Table

from optimiser import __version__
from optimiser.analysis.check import CheckResult
from optimiser.analysis.sensitivity import MonteCarloResult, RoughnessDistribution
from optimiser.io.writers import atomic_write_text, write_csv, write_json
from optimiser.milp import DesignOutcome
from optimiser.model import Study
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.design_report import design_dict, design_table
from optimiser.reports.results import PIECE_FIELDS, assumptions
from optimiser.reports.sweep_charts import (
    figures_page,
    histogram_figure,
    roughness_figure,
    tradeoff_figure,
)
from optimiser.reports.terminal import chainage_label, flow_text
from optimiser.reports.text import console_title, short_title
from optimiser.sweeps.robust import RoughnessRuns, SolvedDesign
from optimiser.sweeps.tradeoff import COLUMNS, STATUS_FAILED, TradeoffResult

VALUE_COLUMN = {"source-level": "source_level_m", "required-head": "required_head_m",
                "flow": "flow_m3_s"}
AXIS_TITLE = {"source-level": "source design level (m)",
              "required-head": "required energy level at the outlet (m)",
              "flow": "outlet flow of the first scenario (L/s)"}
INFEASIBLE_NOTE = ("Steps marked infeasible have no design meeting every limit; they are "
                   "results of the sweep, not errors.")


# --------------------------------------------------------------------------- shared


def _money(value: float | None, currency: str = "") -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:,.0f}" + (f" {currency}" if currency else "")


def _gap_text(value: float | None) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:.1e}"


def _records(table: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as dicts with None for missing values (JSON null, not NaN)."""
    return [{k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in r.items()}
            for r in table.to_dict(orient="records")]


def _flow(value: float | None) -> str:
    """A flow for the terminal; a missing value (None or NaN) reads "none"."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "none"
    return flow_text(float(value))


def _status_style(status: str) -> str:
    return {"optimal": "green", "feasible": "yellow", "infeasible": "red",
            STATUS_FAILED: "bold red"}.get(status, "")


def design_result_dict(outcome: DesignOutcome, study: Study, command: str) -> dict[str, Any]:
    """The JSON ``design`` writes (contract section 6), with this command's name."""
    payload = design_dict(outcome, study)
    payload["command"] = command
    return payload


def _sweep_terminal_table(title: str, table: pd.DataFrame, value_header: str,
                          value_text, currency: str) -> tuple[Table, list[str]]:
    """The table of a sweep, and one line per step without a design (its reason)."""
    view = Table(title=title, title_justify="left")
    for column, justify in ((value_header, "right"), ("status", "left"),
                            ("least cost", "right"), ("gap", "right"),
                            ("pieces", "left"), ("binding", "left")):
        view.add_column(column, justify=justify)
    reasons = []
    for row in table.itertuples(index=False):
        row = row._asdict()
        status = row["status"]
        value = value_text(row[table.columns[0]])
        if status in ("optimal", "feasible"):
            binding = (f"{row['binding_what']} at {chainage_label(row['binding_chainage_m'])}"
                       f", {row['binding_scenario']} ({row['binding_margin_m']:+.2f} m)")
            detail = row["pieces"]
        else:
            binding = ""
            detail = "no design (see below)" if status == "infeasible" else \
                "solver failed (see below)"
            reasons.append(f"{value}: {status}: {row['note'] or 'no reason given'}")
        style = _status_style(status)
        view.add_row(value, f"[{style}]{status}[/{style}]", _money(row["cost"], currency),
                     _gap_text(row["gap"]), detail, binding)
    return view, reasons


def _print_sweep(console: Console, view: Table, reasons: list[str]) -> None:
    console.print(view)
    for reason in reasons:
        console.print(f"- {reason}", markup=False, highlight=False)


# --------------------------------------------------------------------------- trade-off


def _display_value(variable: str, value_si: float) -> float:
    """Values as shown to the engineer: flows in L/s, levels in m."""
    return value_si * 1000.0 if variable == "flow" else value_si


def tradeoff_table(result: TradeoffResult) -> pd.DataFrame:
    """The CSV table: the varied value under its own name with unit, then the columns,
    then the change in least cost per unit of the varied quantity between steps."""
    table = result.table.rename(columns={"value": VALUE_COLUMN[result.variable]})
    values = np.array([_display_value(result.variable, v) for v in result.table["value"]])
    cost = result.table["cost"].astype(float).to_numpy()
    marginal = np.full(len(values), np.nan)
    if len(values) > 1:
        with np.errstate(invalid="ignore", divide="ignore"):
            marginal[1:] = np.diff(cost) / np.diff(values)
    unit = "l_s" if result.variable == "flow" else "m"
    table[f"cost_change_per_{unit}"] = marginal
    return table


def tradeoff_dict(result: TradeoffResult, study: Study) -> dict[str, Any]:
    own = result.own_row
    return {
        "command": "tradeoff", "tool_version": __version__, "title": study.title,
        "study": str(study.path) if study.path else None, "currency": study.currency,
        "variable": result.variable, "value_column": VALUE_COLUMN[result.variable],
        "study_point": {"value": result.own_value, "status": own["status"],
                        "cost": own["cost"], "pieces": own["pieces"]},
        "steps": _records(tradeoff_table(result)),
        "infeasible_steps": int((result.table["status"] == "infeasible").sum()),
        "failed_steps": int((result.table["status"] == STATUS_FAILED).sum()),
        "notes": [INFEASIBLE_NOTE],
        "assumptions": assumptions(study),
        "cautions": list(CAUTIONS),
    }


def tradeoff_chart(result: TradeoffResult, study: Study) -> go.Figure:
    table = result.table.copy()
    table["value"] = [_display_value(result.variable, v) for v in table["value"]]
    table["cost"] = table["cost"].astype(float)
    own_cost = result.own_row["cost"]
    return tradeoff_figure(table, AXIS_TITLE[result.variable],
                           _display_value(result.variable, result.own_value),
                           None if own_cost is None or math.isnan(own_cost) else own_cost,
                           study.currency)


def write_tradeoff_files(out_dir: Path, result: TradeoffResult, study: Study) -> list[Path]:
    """``tradeoff.csv``, ``tradeoff.json`` and ``tradeoff.html`` in ``out_dir``."""
    out_dir = Path(out_dir)
    paths = [out_dir / "tradeoff.csv", out_dir / "tradeoff.json", out_dir / "tradeoff.html"]
    page = figures_page(
        f"{short_title(study.title)}: least cost against {AXIS_TITLE[result.variable]}",
        [("Least cost", tradeoff_chart(result, study))],
        [INFEASIBLE_NOTE, "Each step is re-optimised on its own; the diamond (or dashed "
         "line) is the study as written."])
    write_csv(paths[0], tradeoff_table(result))
    write_json(paths[1], tradeoff_dict(result, study))
    atomic_write_text(paths[2], page)
    return paths


def print_tradeoff(console: Console, result: TradeoffResult, study: Study) -> None:
    variable = result.variable

    def text(value: float) -> str:
        return _flow(value) if variable == "flow" else f"{value:.2f} m"

    console.print(f"[bold]{console_title(study.title)}[/bold]  (trade-off over {variable}, "
                  f"{len(result.table)} steps)")
    _print_sweep(console, *_sweep_terminal_table(
        "Least cost at each step", result.table, AXIS_TITLE[variable].split(" (")[0], text,
        study.currency))
    own = result.own_row
    console.print(f"This study ({text(result.own_value)}): {own['status']}, least cost "
                  f"{_money(own['cost'], study.currency)}")
    infeasible = int((result.table["status"] == "infeasible").sum())
    if infeasible:
        console.print(f"[red]{infeasible} step(s) infeasible[/red]: {INFEASIBLE_NOTE}")


# --------------------------------------------------------------------------- sensitivity


@dataclass
class MonteCarloSettings:
    distribution: RoughnessDistribution
    samples: int
    seed: int
    years: float
    ageing_mm_per_year: dict[str, float]


@dataclass
class SensitivityResult:
    """Everything a ``sensitivity`` run found, ready to print and write."""

    study: Study
    roughness_mm: list[float]
    design_source: str  # "given" (--design FILE) or "optimised" (the nominal design)
    fixed_check: CheckResult | None  # the fixed design checked on the study as written
    fixed_sweep: pd.DataFrame | None
    runs: RoughnessRuns
    robust_sweep: pd.DataFrame | None = None
    monte_carlo: MonteCarloResult | None = None
    monte_carlo_settings: MonteCarloSettings | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def design_flows_m3_s(self) -> dict[str, float]:
        return {s.name: s.outlet_flow_m3_s for s in self.study.scenarios}


def _solved_summary(solved: SolvedDesign | None) -> dict[str, Any] | None:
    if solved is None:
        return None
    row = solved.row
    return {"status": row["status"], "total_cost": row["cost"], "gap": row["gap"],
            "lower_bound": row["lower_bound"], "pieces": row["pieces"],
            "verified": row["verified"], "note": row["note"]}


def sensitivity_dict(result: SensitivityResult) -> dict[str, Any]:
    study = result.study
    runs = result.runs
    payload: dict[str, Any] = {
        "command": "sensitivity", "tool_version": __version__, "title": study.title,
        "study": str(study.path) if study.path else None, "currency": study.currency,
        "quantity": "roughness_mm",
        "roughness_mm": result.roughness_mm,
        "roughness_note": "replaces every option's roughness, as a scenario's roughness_mm "
                          "does; flows, levels and offtakes as each scenario states them",
        "fixed_design": None,
        "reoptimised": None if runs.reoptimised is None else _records(runs.reoptimised),
        "nominal": _solved_summary(runs.nominal),
        "robust": None,
        "monte_carlo": None,
        "notes": [*result.notes, INFEASIBLE_NOTE],
        "assumptions": assumptions(study),
        "cautions": list(CAUTIONS),
    }
    if result.fixed_check is not None and result.fixed_sweep is not None:
        check = result.fixed_check
        payload["fixed_design"] = {
            "source": result.design_source, "total_cost": check.total_cost,
            "ok_as_written": check.ok,
            "pieces": check.pieces[PIECE_FIELDS].to_dict(orient="records"),
            "sweep": _records(result.fixed_sweep),
        }
    if runs.robust is not None:
        payload["robust"] = {
            **(_solved_summary(runs.robust) or {}),
            "premium": runs.premium, "premium_fraction": runs.premium_fraction,
            "files": ["robust/result.json", "robust/design.csv"]
            if runs.robust.outcome is not None and runs.robust.outcome.check is not None
            else [],
            "sweep": None if result.robust_sweep is None else _records(result.robust_sweep),
        }
    if result.monte_carlo is not None and result.monte_carlo_settings is not None:
        settings = result.monte_carlo_settings
        distribution = settings.distribution
        payload["monte_carlo"] = {
            "distribution": {"kind": distribution.kind, "low_mm": distribution.low_mm,
                             "high_mm": distribution.high_mm,
                             "mode_mm": distribution.mode_mm},
            "samples": settings.samples, "seed": settings.seed, "years": settings.years,
            "ageing_mm_per_year": settings.ageing_mm_per_year,
            "ageing_note": "roughness grows linearly with years in service, "
                           "eps(T) = eps_0 + rate * T (Colebrook & White 1937)",
            "summary": _records(result.monte_carlo.summary),
        }
    return payload


def _robust_figure_note(runs: RoughnessRuns, currency: str) -> str:
    if runs.robust is None:
        return ""
    premium = runs.premium
    if premium is None:
        return f"Robust design: {runs.robust.row['status']}."
    nominal = runs.nominal.cost if runs.nominal else None
    return (f"Robust design: {_money(runs.robust.cost, currency)}, premium "
            f"{_money(premium, currency)} ({100 * (runs.premium_fraction or 0):.1f} %) over "
            f"the nominal design's {_money(nominal, currency)}.")


def sensitivity_figures(result: SensitivityResult) -> list[tuple[str, go.Figure]]:
    figures: list[tuple[str, go.Figure]] = []
    runs = result.runs
    currency = result.study.currency
    reoptimised = None
    if runs.reoptimised is not None:
        reoptimised = runs.reoptimised.copy()
        reoptimised["cost"] = reoptimised["cost"].astype(float)
    if result.fixed_sweep is not None:
        figure = roughness_figure(result.fixed_sweep, result.design_flows_m3_s, reoptimised,
                                  currency)
        if reoptimised is not None and runs.robust is not None and runs.robust.cost:
            figure.add_hline(y=runs.robust.cost, row=3, col=1,
                             line={"color": "#7b3294", "dash": "dash"},
                             annotation_text="robust design")
        label = "given" if result.design_source == "given" else "nominal least-cost"
        figures.append((f"Fixed design ({label}) across roughness", figure))
    elif reoptimised is not None:
        figure = go.Figure(go.Scatter(x=reoptimised["roughness_mm"], y=reoptimised["cost"],
                                      mode="lines+markers", name="re-optimised cost"))
        figure.update_layout(template="plotly_white", xaxis_title="absolute roughness (mm)",
                             yaxis_title=f"least cost ({currency})")
        figures.append(("Re-optimised least cost across roughness", figure))
    if result.robust_sweep is not None:
        figures.append(("Robust design across roughness",
                        roughness_figure(result.robust_sweep, result.design_flows_m3_s)))
    if result.monte_carlo is not None:
        figures.append((f"Monte Carlo: capacity at year {result.monte_carlo.years:g}",
                        histogram_figure(result.monte_carlo.samples, result.design_flows_m3_s,
                                         result.monte_carlo.years)))
    return figures


def write_sensitivity_files(out_dir: Path, result: SensitivityResult) -> list[Path]:
    """Every table, the robust and nominal design files, ``sensitivity.json`` and
    ``sensitivity.html`` in ``out_dir``; returns the paths written."""
    out_dir = Path(out_dir)
    runs = result.runs
    writes: list[tuple[Path, Any]] = []
    if result.fixed_sweep is not None:
        writes.append((out_dir / "fixed_design_roughness.csv", result.fixed_sweep))
    if runs.reoptimised is not None:
        writes.append((out_dir / "reoptimised_roughness.csv", runs.reoptimised))
    for name, solved in (("robust", runs.robust),
                         ("nominal", runs.nominal if result.design_source == "optimised"
                          else None)):
        if solved is None or solved.outcome is None or solved.outcome.check is None:
            continue
        command = "sensitivity --robust" if name == "robust" else "sensitivity"
        writes.append((out_dir / name / "design.csv", design_table(solved.outcome)))
        writes.append((out_dir / name / "result.json",
                       design_result_dict(solved.outcome, solved.study, command)))
    if result.robust_sweep is not None:
        writes.append((out_dir / "robust_design_roughness.csv", result.robust_sweep))
    if result.monte_carlo is not None:
        writes.append((out_dir / "monte_carlo_samples.csv", result.monte_carlo.samples))
        writes.append((out_dir / "monte_carlo_summary.csv", result.monte_carlo.summary))
    writes.append((out_dir / "sensitivity.json", sensitivity_dict(result)))
    notes = [*result.notes, INFEASIBLE_NOTE]
    robust_note = _robust_figure_note(runs, result.study.currency)
    if robust_note:
        notes.append(robust_note)
    page = figures_page(f"{short_title(result.study.title)}: roughness sensitivity",
                        sensitivity_figures(result), notes)
    paths = []
    for path, content in writes:
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, pd.DataFrame):
            write_csv(path, content)
        else:
            write_json(path, content)
        paths.append(path)
    atomic_write_text(out_dir / "sensitivity.html", page)
    paths.append(out_dir / "sensitivity.html")
    return paths


def print_sensitivity(console: Console, result: SensitivityResult) -> None:
    study = result.study
    runs = result.runs
    currency = study.currency
    low, high = min(result.roughness_mm), max(result.roughness_mm)
    console.print(f"[bold]{console_title(study.title)}[/bold]  (roughness {low:g} to {high:g} mm, "
                  f"{len(result.roughness_mm)} steps)")
    if result.fixed_sweep is not None:
        view = Table(title=f"Fixed design ({result.design_source}) across roughness",
                     title_justify="left")
        for column in ("scenario", "roughness mm", "capacity (all limits)",
                       "capacity (outlet only)", "outlet margin m", "least pressure margin m",
                       "meets"):
            view.add_column(column, justify="left" if column == "scenario" else "right")
        for row in result.fixed_sweep.itertuples():
            view.add_row(row.scenario, f"{row.roughness_mm:g}", _flow(row.capacity_m3_s),
                         _flow(row.capacity_outlet_only_m3_s),
                         f"{row.outlet_margin_m:+.2f}", f"{row.least_pressure_margin_m:+.2f}",
                         "[green]yes[/green]" if row.meets else "[red]no[/red]")
        console.print(view)
    if runs.reoptimised is not None:
        _print_sweep(console, *_sweep_terminal_table(
            "Re-optimised least cost at each roughness", runs.reoptimised, "roughness",
            lambda v: f"{v:g} mm", currency))
        infeasible = int((runs.reoptimised["status"] == "infeasible").sum())
        if infeasible:
            console.print(f"[red]{infeasible} roughness step(s) infeasible[/red]: "
                          f"{INFEASIBLE_NOTE}")
    if runs.nominal is not None:
        row = runs.nominal.row
        console.print(f"Nominal design (study as written): {row['status']}, "
                      f"{_money(row['cost'], currency)}")
    if runs.robust is not None:
        row = runs.robust.row
        console.print(f"Robust design over {low:g}-{high:g} mm: {row['status']}, "
                      f"{_money(row['cost'], currency)}"
                      + (f"; premium {_money(runs.premium, currency)} "
                         f"({100 * (runs.premium_fraction or 0):.1f} %) over nominal"
                         if runs.premium is not None else "")
                      + (f"; {row['pieces']}" if row["pieces"] else ""))
    if result.monte_carlo is not None and result.monte_carlo_settings is not None:
        settings = result.monte_carlo_settings
        view = Table(title=f"Monte Carlo: {settings.samples} samples, seed {settings.seed}, "
                           f"{settings.distribution.kind} {settings.distribution.low_mm:g}-"
                           f"{settings.distribution.high_mm:g} mm, year {settings.years:g}",
                     title_justify="left")
        for column in ("scenario", "design flow", "P(meets)", "capacity p05", "p50", "p95"):
            view.add_column(column, justify="left" if column == "scenario" else "right")
        for row in result.monte_carlo.summary.itertuples():
            view.add_row(row.scenario, _flow(row.design_flow_m3_s),
                         f"{row.probability_meets:.3f}", _flow(row.capacity_p05_m3_s),
                         _flow(row.capacity_p50_m3_s), _flow(row.capacity_p95_m3_s))
        console.print(view)
    for note in result.notes:
        console.print(f"note: {note}", markup=False, highlight=False)


__all__ = ["COLUMNS", "MonteCarloSettings", "SensitivityResult", "design_result_dict",
           "print_sensitivity", "print_tradeoff", "sensitivity_dict", "write_sensitivity_files",
           "write_tradeoff_files"]
