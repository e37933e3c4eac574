"""The economic-diameter chart of a pumped main: life-cycle cost of the best design at
each value of an economic parameter, capital and energy stacked, and the steps where the
chosen pipes change (``tradeoff --vary energy-price|discount-rate|hours``)."""

from __future__ import annotations

import pandas as pd
import plotly.graph_objects as go
from rich.console import Console
from rich.table import Table

from optimiser.reports.charts import SCENARIO_COLOURS

PUMP_AXIS = {"energy-price": "energy price (per kWh)",
             "discount-rate": "discount rate (per year)",
             "hours": "hours pumped a year (all scenarios)"}
PUMP_VALUE_COLUMN = {"energy-price": "energy_price", "discount-rate": "discount_rate",
                     "hours": "hours_per_year"}


def size_changes(table: pd.DataFrame) -> list[float]:
    """Values at which the chosen pipes differ from the previous step's."""
    changes = []
    previous = None
    for row in table.itertuples():
        if not isinstance(row.pieces, str) or not row.pieces:
            continue
        if previous is not None and row.pieces != previous:
            changes.append(float(row.value))
        previous = row.pieces
    return changes


def life_cycle_figure(table: pd.DataFrame, variable: str, own_value: float,
                      currency: str) -> go.Figure:
    """Stacked bars (pipes, station, energy present value) with the life-cycle cost as a
    line, dotted lines where the chosen pipes change, the study's value marked."""
    rows = table[table["life_cycle_cost"].notna()]
    fig = go.Figure()
    parts = (("pipes and changes (capital)", rows["cost"], SCENARIO_COLOURS[0]),
             ("pump station (capital)", rows["station_cost"], SCENARIO_COLOURS[2]),
             ("energy, present value", rows["energy_present_value"], SCENARIO_COLOURS[1]))
    for name, values, colour in parts:
        fig.add_trace(go.Bar(x=rows["value"], y=values, name=name, marker_color=colour,
                             customdata=rows["pieces"],
                             hovertemplate="%{x}<br>%{y:,.0f}<br>%{customdata}"
                                           "<extra></extra>"))
    fig.add_trace(go.Scatter(x=rows["value"], y=rows["life_cycle_cost"], mode="lines+markers",
                             name="life-cycle cost", line={"color": "#333333", "width": 2}))
    for value in size_changes(table):
        fig.add_vline(x=value, line={"color": "#888888", "dash": "dot"},
                      annotation_text="pipes change", annotation_position="top")
    fig.add_vline(x=own_value, line={"color": SCENARIO_COLOURS[1], "dash": "dash"},
                  annotation_text="this study", annotation_position="bottom")
    fig.update_layout(template="plotly_white", height=520, barmode="stack",
                      xaxis_title=PUMP_AXIS.get(variable, variable),
                      yaxis_title=f"life-cycle cost ({currency})".replace(" ()", ""),
                      legend={"orientation": "h", "y": -0.2})
    return fig


def print_life_cycle_steps(console: Console, table: pd.DataFrame, currency: str) -> None:
    """Life-cycle cost per step (nothing for a gravity study's table)."""
    if "life_cycle_cost" not in table.columns:
        return
    view = Table(title="Life-cycle cost at each step", title_justify="left")
    for column in ("value", "pipes", "station", "energy (present value)", "life-cycle cost"):
        view.add_column(column, justify="right")
    for row in table.itertuples():
        if pd.isna(row.life_cycle_cost):
            continue
        view.add_row(f"{row.value:g}", f"{row.cost:,.0f}", f"{row.station_cost:,.0f}",
                     f"{row.energy_present_value:,.0f}", f"{row.life_cycle_cost:,.0f}")
    console.print(view)
    changes = size_changes(table)
    if changes:
        console.print("The chosen pipes change at: " + ", ".join(f"{v:g}" for v in changes)
                      + f" (costs in {currency})".replace(" ()", ""), markup=False,
                      highlight=False)


def life_cycle_bars(priced: pd.DataFrame, names: list[str], currency: str) -> go.Figure:
    """Options of a comparison as horizontal stacked bars: pipes, station, energy."""
    fig = go.Figure()
    parts = (("pipes and changes (capital)", "total_cost", SCENARIO_COLOURS[0]),
             ("pump station (capital)", "station_cost", SCENARIO_COLOURS[2]),
             ("energy, present value", "energy_present_value", SCENARIO_COLOURS[1]))
    for name, column, colour in parts:
        fig.add_trace(go.Bar(x=priced[column].fillna(0.0), y=names, orientation="h",
                             name=name, marker_color=colour,
                             hovertemplate="%{y}<br>%{x:,.0f}<extra></extra>"))
    fig.update_layout(template="plotly_white", height=160 + 34 * len(names), barmode="stack",
                      xaxis={"title": f"life-cycle cost ({currency})".replace(" ()", ""),
                             "tickformat": ",.0f"},
                      yaxis={"autorange": "reversed"}, legend={"orientation": "h", "y": -0.3},
                      margin={"l": 140, "r": 20, "t": 15, "b": 45})
    return fig
