"""Output of ``sensitivity``: terminal tables, ``sensitivity.json``, the CSV tables, the
nominal and robust designs' files and ``sensitivity.html``. Every JSON and HTML file
carries the cautions."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pandas as pd
import plotly.graph_objects as go
from rich.console import Console
from rich.table import Table

from optimiser import __version__
from optimiser.io.writers import atomic_write_text, write_csv, write_json
from optimiser.model import Status
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.files import write_design_files
from optimiser.reports.monte_carlo_report import (
    delivery_points_figure,
    print_monte_carlo,
    probability_figure,
    probability_notes,
)
from optimiser.reports.pump_sensitivity import (
    print_station_sweep,
    station_figure,
    station_head_histogram,
    station_probability_figure,
)
from optimiser.reports.results import PIECE_FIELDS, assumptions
from optimiser.reports.sweep_charts import figures_page, histogram_figure, roughness_figure
from optimiser.reports.sweep_tables import (
    INFEASIBLE_NOTE,
    flow,
    money,
    print_sweep,
    records,
    sweep_terminal_table,
)
from optimiser.reports.text import console_title, short_title
from optimiser.sweeps.robust import RoughnessRuns, SolvedDesign
from optimiser.sweeps.sensitivity import ROUGHNESS_RULE, SensitivityResult

SENSITIVITY_FILES = frozenset({
    "fixed_design_roughness.csv", "reoptimised_roughness.csv", "robust", "nominal",
    "robust_design_roughness.csv", "monte_carlo_samples.csv", "monte_carlo_summary.csv",
    "monte_carlo_delivery_points.csv", "sensitivity.json", "sensitivity.html"})
"""The files and folders :func:`write_sensitivity_files` may write."""


def _solved_summary(solved: SolvedDesign | None) -> dict[str, Any] | None:
    if solved is None:
        return None
    row = solved.row
    summary = {"status": row["status"], "total_cost": row["cost"], "gap": row["gap"],
               "lower_bound": row["lower_bound"], "pieces": row["pieces"],
               "verified": row["verified"], "note": row["note"]}
    if solved.study.pump is not None:  # the objective, which the premium compares
        summary["life_cycle_cost"] = solved.objective
    return summary


def sensitivity_dict(result: SensitivityResult) -> dict[str, Any]:
    study = result.study
    runs = result.runs
    payload: dict[str, Any] = {
        "command": "sensitivity", "tool_version": __version__, "title": study.title,
        "study": str(study.path) if study.path else None, "currency": study.currency,
        "quantity": "roughness_mm",
        "roughness_mm": result.roughness_mm,
        "roughness_note": ROUGHNESS_RULE,
        "fixed_design": None,
        "reoptimised": None if runs.reoptimised is None else records(runs.reoptimised),
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
            "sweep": records(result.fixed_sweep),
        }
        if result.pumped:  # the station at the study's own roughness
            payload["fixed_design"]["life_cycle_cost"] = check.life_cycle_cost
            payload["fixed_design"]["pump"] = check.station.as_dict() if check.station \
                else None
    if runs.robust is not None:
        payload["robust"] = {
            **(_solved_summary(runs.robust) or {}),
            "premium": runs.premium, "premium_fraction": runs.premium_fraction,
            "files": ["robust/design.csv", "robust/result.json", "robust/report.html",
                      "robust/appurtenances.csv"]
            if runs.robust.outcome is not None and runs.robust.outcome.check is not None
            else [],
            "sweep": None if result.robust_sweep is None else records(result.robust_sweep),
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
                           "eps(T) = eps_0 + rate * T (Colebrook & White 1937), in every "
                           "scenario; a scenario's roughness_factor multiplies eps(T)",
            "summary": records(result.monte_carlo.summary),
        }
        if result.monte_carlo.delivery_points is not None:  # a scheme's delivery points
            payload["monte_carlo"]["delivery_points"] = records(
                result.monte_carlo.delivery_points)
    return payload


def _robust_figure_note(runs: RoughnessRuns, currency: str) -> str:
    if runs.robust is None:
        return ""
    premium = runs.premium
    if premium is None:
        return f"Robust design: {runs.robust.row['status']}."
    nominal = runs.nominal.objective if runs.nominal else None
    what = "life-cycle cost " if runs.robust.study.pump is not None else ""
    energy = (" The robust design's energy is the mean over the roughness range, the "
              "nominal design's that at the catalogue's roughness."
              if runs.robust.study.pump is not None else "")
    return (f"Robust design: {what}{money(runs.robust.objective, currency)}, premium "
            f"{money(premium, currency)} ({100 * (runs.premium_fraction or 0):.1f} %) over "
            f"the nominal design's {money(nominal, currency)}.{energy}")


def sensitivity_figures(result: SensitivityResult) -> list[tuple[str, go.Figure]]:
    figures: list[tuple[str, go.Figure]] = []
    runs = result.runs
    currency = result.study.currency
    reoptimised = None
    if runs.reoptimised is not None:
        reoptimised = runs.reoptimised.copy()
        reoptimised["cost"] = reoptimised["cost"].astype(float)
    if result.fixed_sweep is not None and result.pumped:
        label = "given" if result.design_source == "given" else "nominal least-cost"
        figures.append((f"Fixed design ({label}) and its pump station across roughness",
                        station_figure(result.fixed_sweep, currency)))
        if reoptimised is not None:
            figures.append(("Re-optimised least cost across roughness",
                            _reoptimised_figure(reoptimised, currency)))
    elif result.fixed_sweep is not None:
        figure = roughness_figure(result.fixed_sweep, result.design_flows_m3_s, reoptimised,
                                  currency)
        if reoptimised is not None and runs.robust is not None and runs.robust.cost:
            figure.add_hline(y=runs.robust.cost, row=3, col=1,
                             line={"color": "#7b3294", "dash": "dash"},
                             annotation_text="robust design")
        label = "given" if result.design_source == "given" else "nominal least-cost"
        figures.append((f"Fixed design ({label}) across roughness", figure))
    elif reoptimised is not None:
        figures.append(("Re-optimised least cost across roughness",
                        _reoptimised_figure(reoptimised, currency)))
    if result.robust_sweep is not None and result.pumped:
        figures.append(("Robust design and its pump station across roughness",
                        station_figure(result.robust_sweep, currency)))
    elif result.robust_sweep is not None:
        figures.append(("Robust design across roughness",
                        roughness_figure(result.robust_sweep, result.design_flows_m3_s)))
    if result.monte_carlo is not None and result.pumped:
        figures += _station_monte_carlo_figures(result)
    elif result.monte_carlo is not None:
        years = result.monte_carlo.years
        figures.append((f"Monte Carlo: probability of meeting each scenario at year "
                        f"{years:g}", probability_figure(result.monte_carlo.summary)))
        if result.monte_carlo.delivery_points is not None:
            figures.append((f"Monte Carlo: each delivery point at year {years:g}",
                            delivery_points_figure(result.monte_carlo.delivery_points)))
        figures.append((f"Monte Carlo: capacity at year {years:g}",
                        histogram_figure(result.monte_carlo.samples, result.design_flows_m3_s,
                                         years)))
    return figures


def _station_monte_carlo_figures(result: SensitivityResult) -> list[tuple[str, go.Figure]]:
    """The pumped main's Monte Carlo: the summary table and the heads drawn."""
    mc = result.monte_carlo
    assert mc is not None and result.study.pump is not None
    return [(f"Monte Carlo: can the station do it at year {mc.years:g}?",
             station_probability_figure(mc.summary, result.study.currency)),
            (f"Monte Carlo: least station head at year {mc.years:g}",
             station_head_histogram(mc.samples, result.study.pump.max_head_m))]


def _reoptimised_figure(reoptimised: pd.DataFrame, currency: str) -> go.Figure:
    """Least cost at each roughness (and the life-cycle cost with a pump)."""
    figure = go.Figure(go.Scatter(x=reoptimised["roughness_mm"], y=reoptimised["cost"],
                                  mode="lines+markers", name="re-optimised cost"))
    if "life_cycle_cost" in reoptimised.columns:
        figure.add_trace(go.Scatter(x=reoptimised["roughness_mm"],
                                    y=reoptimised["life_cycle_cost"].astype(float),
                                    mode="lines+markers", name="re-optimised life-cycle cost"))
    figure.update_layout(template="plotly_white", xaxis_title="absolute roughness (mm)",
                         yaxis_title=f"least cost ({currency})")
    return figure



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
    if result.robust_sweep is not None:
        writes.append((out_dir / "robust_design_roughness.csv", result.robust_sweep))
    if result.monte_carlo is not None:
        writes.append((out_dir / "monte_carlo_samples.csv", result.monte_carlo.samples))
        writes.append((out_dir / "monte_carlo_summary.csv", result.monte_carlo.summary))
        if result.monte_carlo.delivery_points is not None:
            writes.append((out_dir / "monte_carlo_delivery_points.csv",
                           result.monte_carlo.delivery_points))
    writes.append((out_dir / "sensitivity.json", sensitivity_dict(result)))
    notes = [*result.notes, INFEASIBLE_NOTE]
    robust_note = _robust_figure_note(runs, result.study.currency)
    if robust_note:
        notes.append(robust_note)
    notes += probability_notes(result)
    page = figures_page(f"{short_title(result.study.title)}: roughness sensitivity",
                        sensitivity_figures(result), notes)
    paths = _write_designs(out_dir, result)
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


def _write_designs(out_dir: Path, result: SensitivityResult) -> list[Path]:
    """The robust and nominal designs' files in ``robust/`` and ``nominal/``, as
    ``design --out`` writes them (design.csv, result.json, report.html,
    appurtenances.csv)."""
    runs = result.runs
    paths: list[Path] = []
    for name, solved in (("robust", runs.robust),
                         ("nominal", runs.nominal if result.design_source == "optimised"
                          else None)):
        if solved is None or solved.outcome is None or solved.outcome.check is None:
            continue
        command = "sensitivity --robust" if name == "robust" else "sensitivity"
        folder = out_dir / name
        folder.mkdir(parents=True, exist_ok=True)
        paths += write_design_files(folder, solved.outcome, solved.study, command)
    return paths


def print_sensitivity(console: Console, result: SensitivityResult) -> None:
    study = result.study
    runs = result.runs
    currency = study.currency
    low, high = min(result.roughness_mm), max(result.roughness_mm)
    console.print(f"[bold]{console_title(study.title)}[/bold]  (roughness {low:g} to {high:g} mm, "
                  f"{len(result.roughness_mm)} steps)")
    if result.fixed_sweep is not None and result.pumped:
        print_station_sweep(console, result.fixed_sweep, f"Fixed design "
                            f"({result.design_source}) and its pump station across "
                            "roughness", currency)
    elif result.fixed_sweep is not None:
        _print_fixed_sweep(console, result)
    if runs.reoptimised is not None:
        print_sweep(console, *sweep_terminal_table(
            "Re-optimised least cost at each roughness", runs.reoptimised, "roughness",
            lambda v: f"{v:g} mm", currency))
        infeasible = int((runs.reoptimised["status"] == Status.INFEASIBLE).sum())
        if infeasible:
            console.print(f"[red]{infeasible} roughness step(s) infeasible[/red]: "
                          f"{INFEASIBLE_NOTE}")
    if runs.nominal is not None:
        console.print(f"Nominal design (study as written): {runs.nominal.row['status']}, "
                      f"{_costs_text(runs.nominal, currency)}")
    if runs.robust is not None:
        row = runs.robust.row
        console.print(f"Robust design over {low:g}-{high:g} mm: {row['status']}, "
                      f"{_costs_text(runs.robust, currency)}"
                      + (f"; premium {money(runs.premium, currency)} "
                         f"({100 * (runs.premium_fraction or 0):.1f} %) over nominal"
                         if runs.premium is not None else "")
                      + (f"; {row['pieces']}" if row["pieces"] else ""))
    print_monte_carlo(console, result)
    for note in result.notes:
        console.print(f"note: {note}", markup=False, highlight=False)


def _costs_text(solved: SolvedDesign, currency: str) -> str:
    """The capital cost, and with a pump the life-cycle cost the premium compares."""
    text = money(solved.row["cost"], currency)
    if solved.study.pump is not None and solved.objective is not None:
        text = f"pipes {text}, life-cycle cost {money(solved.objective, currency)}"
    return text


def _print_fixed_sweep(console: Console, result: SensitivityResult) -> None:
    """The gravity design's capacity and margins at each roughness."""
    assert result.fixed_sweep is not None
    view = Table(title=f"Fixed design ({result.design_source}) across roughness",
                 title_justify="left")
    for column in ("scenario", "roughness mm", "capacity (all limits)",
                   "capacity (outlet only)", "outlet margin m", "least pressure margin m",
                   "meets"):
        view.add_column(column, justify="left" if column == "scenario" else "right")
    for row in result.fixed_sweep.itertuples():
        view.add_row(row.scenario, f"{row.roughness_mm:g}", flow(row.capacity_m3_s),
                     flow(row.capacity_outlet_only_m3_s),
                     f"{row.outlet_margin_m:+.2f}", f"{row.least_pressure_margin_m:+.2f}",
                     "[green]yes[/green]" if row.meets else "[red]no[/red]")
    console.print(view)
