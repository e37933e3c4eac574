"""Output of ``tradeoff``: the terminal table, ``tradeoff.csv``, ``tradeoff.json`` and
``tradeoff.html``. Every JSON and HTML file carries the cautions."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from rich.console import Console

from optimiser import __version__
from optimiser.io.writers import atomic_write_text, write_csv, write_json
from optimiser.model import Status, Study
from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.life_cycle_chart import (
    PUMP_AXIS,
    PUMP_VALUE_COLUMN,
    life_cycle_figure,
    print_life_cycle_steps,
)
from optimiser.reports.results import assumptions
from optimiser.reports.sweep_charts import figures_page, tradeoff_figure
from optimiser.reports.sweep_tables import (
    INFEASIBLE_NOTE,
    flow,
    money,
    print_sweep,
    records,
    sweep_terminal_table,
)
from optimiser.reports.terminal import chainage_label
from optimiser.reports.text import console_title, short_title
from optimiser.sweeps.branch_variants import axis_title as branch_axis_title
from optimiser.sweeps.branch_variants import is_flow
from optimiser.sweeps.branch_variants import value_column as branch_value_column
from optimiser.sweeps.tradeoff import TradeoffResult

TRADEOFF_FILES = frozenset({"tradeoff.csv", "tradeoff.json", "tradeoff.html"})
"""The files :func:`write_tradeoff_files` writes."""

VALUE_COLUMN = {"source-level": "source_level_m", "required-head": "required_head_m",
                "flow": "flow_m3_s", **PUMP_VALUE_COLUMN}
AXIS_TITLE = {"source-level": "source design level (m)",
              "required-head": "required energy level at the outlet (m)",
              "flow": "outlet flow of the first scenario (L/s)", **PUMP_AXIS}


def _display_value(variable: str, value_si: float) -> float:
    """Values as shown to the engineer: flows in L/s, levels in m."""
    return value_si * 1000.0 if is_flow(variable) else value_si


def value_column(variable: str) -> str:
    """The CSV column of the varied values (a branch's head or flow included)."""
    return branch_value_column(variable) or VALUE_COLUMN[variable]


def axis_title(variable: str) -> str:
    """The words for the varied quantity (a branch's head or flow included)."""
    return branch_axis_title(variable) or AXIS_TITLE[variable]


def tradeoff_table(result: TradeoffResult) -> pd.DataFrame:
    """The CSV table: the varied value under its own name with unit, then the columns,
    then the change in least cost per unit of the varied quantity between steps."""
    table = result.table.rename(columns={"value": value_column(result.variable)})
    values = np.array([_display_value(result.variable, v) for v in result.table["value"]])
    cost = result.table["cost"].astype(float).to_numpy()
    marginal = np.full(len(values), np.nan)
    if len(values) > 1:
        with np.errstate(invalid="ignore", divide="ignore"):
            marginal[1:] = np.diff(cost) / np.diff(values)
    unit = "l_s" if is_flow(result.variable) else \
        PUMP_VALUE_COLUMN.get(result.variable, "m")
    table[f"cost_change_per_{unit}"] = marginal
    return table


def _percent(gap: float) -> str:
    return f"{100 * gap:.2g} %"


def curve_gap_text(result: TradeoffResult) -> str:
    """The gap the curve's steps were solved to, and the study's point's, in words."""
    gaps = sorted({float(g) for g in result.table["target_gap"].dropna()})
    if not gaps:
        curve = "no step was solved"
    elif len(gaps) == 1:
        curve = f"each step is proven within {_percent(gaps[0])} of the least cost"
    else:
        curve = (f"steps are proven within {_percent(gaps[0])} to {_percent(gaps[-1])} "
                 "of the least cost")
    own_gap = result.own_row.get("target_gap")
    own = "" if own_gap is None else (f"; the study's own point is solved as design "
                                      f"solves it, within {_percent(float(own_gap))}")
    return f"Target gap: {curve}{own}."


TIME_LIMIT_NOTE = ("Steps marked 'stopped at the time limit' (status feasible) have a "
                   "design that meets every limit but is not proven within the target "
                   "gap; their cost may be above the least cost by up to their gap.")


def _time_limited(table: pd.DataFrame) -> pd.DataFrame:
    return table[table["status"] == Status.FEASIBLE]


def tradeoff_dict(result: TradeoffResult, study: Study) -> dict[str, Any]:
    own = result.own_row
    return {
        "command": "tradeoff", "tool_version": __version__, "title": study.title,
        "study": str(study.path) if study.path else None, "currency": study.currency,
        "variable": result.variable, "value_column": value_column(result.variable),
        "study_point": {"value": result.own_value, "status": own["status"],
                        "cost": own["cost"], "pieces": own["pieces"],
                        "lower_bound": own["lower_bound"], "gap": own["gap"],
                        "target_gap": own.get("target_gap"),
                        "time_limit_s": own.get("time_limit_s")},
        "steps": records(tradeoff_table(result)),
        "infeasible_steps": int((result.table["status"] == Status.INFEASIBLE).sum()),
        "failed_steps": int((result.table["status"] == Status.FAILED).sum()),
        "time_limit_steps": len(_time_limited(result.table)),
        "notes": [INFEASIBLE_NOTE, TIME_LIMIT_NOTE, curve_gap_text(result)],
        "assumptions": assumptions(study),
        "cautions": list(CAUTIONS),
    }


def tradeoff_chart(result: TradeoffResult, study: Study) -> go.Figure:
    table = result.table.copy()
    table["value"] = [_display_value(result.variable, v) for v in table["value"]]
    table["cost"] = table["cost"].astype(float)
    own_cost = result.own_row["cost"]
    figure = tradeoff_figure(table, axis_title(result.variable),
                             _display_value(result.variable, result.own_value),
                             None if own_cost is None or math.isnan(own_cost) else own_cost,
                             study.currency)
    stopped = _time_limited(table)
    if len(stopped):
        figure.add_trace(go.Scatter(
            x=stopped["value"], y=stopped["cost"], mode="markers",
            name="stopped at the time limit (not proven within the gap)",
            marker={"color": "#b8860b", "size": 15, "symbol": "circle-open",
                    "line": {"width": 2}},
            customdata=stopped["gap"].astype(float) * 100,
            hovertemplate="%{x:.3f}<br>cost %{y:,.0f}<br>stopped at the time limit, "
                          "gap %{customdata:.2f} %<extra></extra>"))
    tanked = table[table["new_tanks"].fillna(0).astype(float) > 0]
    if len(tanked):  # how many new break-pressure tanks each step's design has
        figure.add_trace(go.Scatter(
            x=tanked["value"], y=tanked["cost"], mode="text", name="new break-pressure tanks",
            text=[f"{int(n)} tank{'s' if n > 1 else ''}" for n in tanked["new_tanks"]],
            textposition="bottom center", textfont={"size": 10}, hoverinfo="skip"))
    figure.update_layout(title={"text": curve_gap_text(result), "font": {"size": 13}})
    return figure


def write_tradeoff_files(out_dir: Path, result: TradeoffResult, study: Study) -> list[Path]:
    """``tradeoff.csv``, ``tradeoff.json`` and ``tradeoff.html`` in ``out_dir``."""
    out_dir = Path(out_dir)
    paths = [out_dir / "tradeoff.csv", out_dir / "tradeoff.json", out_dir / "tradeoff.html"]
    figures = [("Least cost", tradeoff_chart(result, study))]
    if "life_cycle_cost" in result.table.columns:  # a pumped main: the economic diameter
        figures.insert(0, ("Life-cycle cost", life_cycle_figure(
            result.table, result.variable, result.own_value, study.currency)))
    page = figures_page(
        f"{short_title(study.title)}: least cost against {axis_title(result.variable)}",
        figures,
        [INFEASIBLE_NOTE, TIME_LIMIT_NOTE, curve_gap_text(result),
         "Each step is re-optimised on its own; the diamond (or dashed line) is the "
         "study as written."])
    write_csv(paths[0], tradeoff_table(result))
    write_json(paths[1], tradeoff_dict(result, study))
    atomic_write_text(paths[2], page)
    return paths


def print_tradeoff(console: Console, result: TradeoffResult, study: Study) -> None:
    variable = result.variable

    def text(value: float) -> str:
        if variable in PUMP_AXIS:
            return f"{value:g}"
        return flow(value) if is_flow(variable) else f"{value:.2f} m"

    console.print(f"[bold]{console_title(study.title)}[/bold]  (trade-off over {variable}, "
                  f"{len(result.table)} steps)")
    print_sweep(console, *sweep_terminal_table(
        "Least cost at each step", result.table, axis_title(variable).split(" (")[0], text,
        study.currency))
    own = result.own_row
    limiting = ""
    if own.get("binding_what"):
        limiting = (f"; limiting point: {own['binding_what']} at "
                    f"{chainage_label(own['binding_chainage_m'])}, {own['binding_scenario']} "
                    f"({own['binding_margin_m']:+.2f} m)")
    console.print(f"This study ({text(result.own_value)}): {own['status']}, least cost "
                  f"{money(own['cost'], study.currency)}{limiting}", markup=False,
                  highlight=False)
    print_life_cycle_steps(console, result.table, study.currency)
    console.print(curve_gap_text(result), markup=False, highlight=False)
    stopped = len(_time_limited(result.table))
    if stopped:
        console.print(f"[yellow]{stopped} step(s) stopped at the time limit[/yellow]: "
                      f"{TIME_LIMIT_NOTE}")
    infeasible = int((result.table["status"] == Status.INFEASIBLE).sum())
    if infeasible:
        console.print(f"[red]{infeasible} step(s) infeasible[/red]: {INFEASIBLE_NOTE}")
