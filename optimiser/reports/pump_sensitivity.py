"""The station of a pumped main across a roughness range, for ``sensitivity``: the
terminal table and the chart (the table itself: :mod:`optimiser.sweeps.pump_roughness`)."""

from __future__ import annotations

import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots
from rich.console import Console
from rich.table import Table

from optimiser.reports.sweep_tables import money


def _yes(value: bool) -> str:
    return "[green]yes[/green]" if value else "[red]no[/red]"


def print_station_sweep(console: Console, table: pd.DataFrame, title: str,
                        currency: str) -> None:
    """Per scenario and roughness: the least station head, what it adds to the head
    needed at the study's own roughness, whether the pump's maximum covers it, power,
    energy cost a year, the life-cycle cost, and whether every limit and class holds."""
    view = Table(title=title, title_justify="left")
    for column in ("scenario", "roughness mm", "station head m", "extra head m",
                   "within max head", "power kW", "energy a year", "life-cycle cost",
                   "meets", "classes hold"):
        view.add_column(column, justify="left" if column == "scenario" else "right")
    for row in table.itertuples():
        view.add_row(row.scenario, f"{row.roughness_mm:g}", f"{row.station_head_m:.2f}",
                     f"{row.extra_head_m:+.2f}", _yes(row.within_max_head),
                     f"{row.power_kw:.1f}", money(row.energy_cost_per_year, currency),
                     money(row.life_cycle_cost, currency), _yes(row.meets),
                     _yes(row.classes_hold))
    console.print(view)


def station_figure(table: pd.DataFrame, currency: str) -> go.Figure:
    """Station head against roughness per scenario (with the pump's maximum), and the
    life-cycle cost of the fixed design at each roughness."""
    figure = make_subplots(rows=2, cols=1, shared_xaxes=True, vertical_spacing=0.08,
                           subplot_titles=("least station head per scenario",
                                           "life-cycle cost of the fixed design"))
    for name, part in table.groupby("scenario", sort=False):
        figure.add_trace(go.Scatter(x=part["roughness_mm"], y=part["station_head_m"],
                                    mode="lines+markers", name=str(name)), row=1, col=1)
    limit = table["max_head_m"].dropna()
    if len(limit):
        figure.add_hline(y=float(limit.iloc[0]), row=1, col=1,
                         line={"color": "#b2182b", "dash": "dash"},
                         annotation_text="max_head_m")
    costs = table.drop_duplicates("roughness_mm")
    figure.add_trace(go.Scatter(x=costs["roughness_mm"], y=costs["life_cycle_cost"],
                                mode="lines+markers", name="life-cycle cost",
                                line={"color": "#333333"}), row=2, col=1)
    figure.update_yaxes(title_text="head (m)", row=1, col=1)
    figure.update_yaxes(title_text=f"cost ({currency})", row=2, col=1)
    figure.update_xaxes(title_text="absolute roughness (mm)", row=2, col=1)
    figure.update_layout(template="plotly_white", height=620)
    return figure


def print_station_monte_carlo(console: Console, summary: pd.DataFrame, title: str,
                              currency: str) -> None:
    """The pumped main's Monte Carlo per scenario: how often the station can give the
    head needed, how often the classes hold, the head's percentiles, the life-cycle
    cost's median."""
    view = Table(title=title, title_justify="left")
    for column in ("scenario", "P(within max head)", "P(classes hold)", "head p05 m",
                   "p50 m", "p95 m", "life-cycle cost p50"):
        view.add_column(column, justify="left" if column == "scenario" else "right")
    for row in summary.itertuples():
        view.add_row(row.scenario, f"{row.probability_meets:.3f}",
                     f"{row.probability_classes_hold:.3f}", f"{row.station_head_p05_m:.2f}",
                     f"{row.station_head_p50_m:.2f}", f"{row.station_head_p95_m:.2f}",
                     money(row.life_cycle_cost_p50, currency))
    console.print(view)


def station_probability_figure(summary: pd.DataFrame, currency: str) -> go.Figure:
    """The pumped main's Monte Carlo summary as a table."""
    header = ["scenario", "probability the station can do it", "probability classes hold",
              "station head p05 / p50 / p95 (m)", "max_head_m", "samples",
              f"life-cycle cost p05 / p50 / p95 ({currency})"]
    cells = [summary["scenario"].tolist(),
             [f"{100 * float(p):.1f} %" for p in summary["probability_meets"]],
             [f"{100 * float(p):.1f} %" for p in summary["probability_classes_hold"]],
             [f"{a:.2f} / {b:.2f} / {c:.2f}" for a, b, c in
              zip(summary["station_head_p05_m"], summary["station_head_p50_m"],
                  summary["station_head_p95_m"], strict=True)],
             ["none" if pd.isna(v) else f"{float(v):g}" for v in summary["max_head_m"]],
             [f"{int(n):,}" for n in summary["samples"]],
             [f"{a:,.0f} / {b:,.0f} / {c:,.0f}" for a, b, c in
              zip(summary["life_cycle_cost_p05"], summary["life_cycle_cost_p50"],
                  summary["life_cycle_cost_p95"], strict=True)]]
    figure = go.Figure(go.Table(header={"values": header, "align": "left"},
                                cells={"values": cells, "align": "left"}))
    figure.update_layout(height=80 + 30 * len(summary), margin={"t": 10, "b": 10})
    return figure


def station_head_histogram(samples: pd.DataFrame, max_head_m: float | None) -> go.Figure:
    """The least station head drawn per scenario, with the pump's maximum."""
    figure = go.Figure()
    for name, part in samples.groupby("scenario", sort=False):
        figure.add_trace(go.Histogram(x=part["station_head_m"], name=str(name),
                                      opacity=0.6))
    if max_head_m is not None:
        figure.add_vline(x=max_head_m, line={"color": "#b2182b", "dash": "dash"},
                         annotation_text="max_head_m")
    figure.update_layout(template="plotly_white", barmode="overlay",
                         xaxis_title="least station head (m)", yaxis_title="samples")
    return figure
