"""Charts of sweeps: cost against head or flow, behaviour across roughness, Monte Carlo."""

from __future__ import annotations

import html

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.offline import get_plotlyjs
from plotly.subplots import make_subplots

from optimiser.reports.cautions import CAUTIONS
from optimiser.reports.charts import MIN_PRESSURE_COLOUR, SCENARIO_COLOURS, SCENARIO_DASHES

INFEASIBLE_FILL = "rgba(178, 24, 43, 0.12)"


def tradeoff_figure(table: pd.DataFrame, axis_title: str, own_value: float,
                    own_cost: float | None, currency: str) -> go.Figure:
    """Least cost against the varied quantity; infeasible steps shaded; the study's point."""
    fig = go.Figure()
    feasible = table[table["cost"].notna()]
    fig.add_trace(go.Scatter(
        x=feasible["value"], y=feasible["cost"], mode="lines+markers", name="least cost",
        line={"color": SCENARIO_COLOURS[0], "width": 2},
        customdata=feasible["status"],
        hovertemplate="%{x:.3f}<br>cost %{y:,.0f}<br>%{customdata}<extra></extra>"))
    values = table["value"].to_numpy()
    spacing = float(np.median(np.diff(np.sort(values)))) if len(values) > 1 else 1.0
    for value in table.loc[table["cost"].isna(), "value"]:
        fig.add_vrect(x0=value - spacing / 2, x1=value + spacing / 2, fillcolor=INFEASIBLE_FILL,
                      line_width=0, layer="below")
    if table["cost"].isna().any():
        fig.add_trace(go.Scatter(x=[None], y=[None], mode="markers", name="no feasible design",
                                 marker={"color": INFEASIBLE_FILL, "size": 14,
                                         "symbol": "square"}))
    if own_cost is not None:
        fig.add_trace(go.Scatter(
            x=[own_value], y=[own_cost], mode="markers", name="this study",
            marker={"color": SCENARIO_COLOURS[1], "size": 12, "symbol": "diamond"}))
    else:
        fig.add_vline(x=own_value, line={"color": SCENARIO_COLOURS[1], "dash": "dash"},
                      annotation_text="this study")
    fig.update_layout(template="plotly_white", height=480, xaxis_title=axis_title,
                      yaxis_title=f"least capital cost ({currency})".replace(" ()", ""),
                      legend={"orientation": "h", "y": -0.2})
    return fig


def roughness_figure(sweep: pd.DataFrame, design_flows_m3_s: dict[str, float],
                     reoptimised: pd.DataFrame | None = None, currency: str = "") -> go.Figure:
    """Capacity and least pressure margin of a fixed design across roughness, per
    scenario; with the re-optimised cost if given."""
    rows = 3 if reoptimised is not None else 2
    titles = ["capacity of the fixed design (L/s)", "least pressure margin (m)"]
    if reoptimised is not None:
        titles.append(f"re-optimised least cost ({currency})".replace(" ()", ""))
    fig = make_subplots(rows=rows, cols=1, shared_xaxes=True, vertical_spacing=0.08,
                        subplot_titles=titles)
    for index, (name, part) in enumerate(sweep.groupby("scenario", sort=False)):
        style = {"color": SCENARIO_COLOURS[index % 6], "dash": SCENARIO_DASHES[index % 6]}
        fig.add_trace(go.Scatter(x=part["roughness_mm"], y=part["capacity_m3_s"] * 1000,
                                 name=f"capacity, {name}", line=style, legendgroup=name),
                      row=1, col=1)
        flow = design_flows_m3_s.get(name)
        if flow is not None:
            fig.add_trace(go.Scatter(
                x=[part["roughness_mm"].min(), part["roughness_mm"].max()],
                y=[flow * 1000] * 2, name=f"design flow, {name}", legendgroup=name,
                line={"color": style["color"], "dash": "dot", "width": 1}), row=1, col=1)
        fig.add_trace(go.Scatter(x=part["roughness_mm"], y=part["least_pressure_margin_m"],
                                 name=f"margin, {name}", line=style, legendgroup=name,
                                 showlegend=False), row=2, col=1)
    fig.add_hline(y=0.0, line={"color": MIN_PRESSURE_COLOUR, "dash": "dot"}, row=2, col=1)
    if reoptimised is not None:
        feasible = reoptimised[reoptimised["cost"].notna()]
        fig.add_trace(go.Scatter(x=feasible["roughness_mm"], y=feasible["cost"],
                                 mode="lines+markers", name="re-optimised cost",
                                 line={"color": "#444444"}), row=3, col=1)
    fig.update_xaxes(title_text="absolute roughness (mm)", row=rows, col=1)
    fig.update_layout(template="plotly_white", height=300 * rows,
                      legend={"orientation": "h", "y": -0.12})
    return fig


def histogram_figure(samples: pd.DataFrame, design_flows_m3_s: dict[str, float],
                     years: float) -> go.Figure:
    """Histogram of the fixed design's capacity per scenario, with the design flow."""
    fig = go.Figure()
    for index, (name, part) in enumerate(samples.groupby("scenario", sort=False)):
        colour = SCENARIO_COLOURS[index % 6]
        fig.add_trace(go.Histogram(x=part["capacity_m3_s"] * 1000, name=name, opacity=0.6,
                                   marker={"color": colour}, nbinsx=40))
        flow = design_flows_m3_s.get(name)
        if flow is not None:
            fig.add_vline(x=flow * 1000, line={"color": colour, "dash": "dash"},
                          annotation_text=f"design flow, {name}")
    fig.update_layout(template="plotly_white", barmode="overlay", height=460,
                      xaxis_title=f"capacity at year {years:g} (L/s)", yaxis_title="samples",
                      legend={"orientation": "h", "y": -0.2})
    return fig


def figures_page(title: str, figures: list[tuple[str, go.Figure]], notes: list[str]) -> str:
    """A small offline HTML page holding figures (plotly.js embedded once)."""
    parts = [f"<h2>{html.escape(h)}</h2>" + f.to_html(full_html=False, include_plotlyjs=False,
                                                      div_id=f"plot-{i}")
             for i, (h, f) in enumerate(figures)]
    note_items = "".join(f"<li>{html.escape(n)}</li>" for n in notes)
    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS)
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            f"<title>{html.escape(title)}</title><script>{get_plotlyjs()}</script>"
            "<style>body{font-family:Helvetica,Arial,sans-serif;max-width:1100px;"
            "margin:2em auto;padding:0 1em}.cautions{border:2px solid #b8860b;"
            "background:#fff8e1;padding:.5em 1em}</style></head><body>"
            f"<h1>{html.escape(title)}</h1><div class='cautions'><strong>Cautions."
            f"</strong><ul>{cautions}</ul></div><ul>{note_items}</ul>{''.join(parts)}"
            "</body></html>")
