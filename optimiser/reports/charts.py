"""Plotly figures for reports: longitudinal profile, pressure and velocity, costs.

Colours: a colour-blind-safe qualitative palette (Okabe & Ito 2008, Color Universal
Design) for scenarios; earth and grey tones for the ground and the pipe; every line also
differs by dash so the charts survive black-and-white printing.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.reports.colours import MARKERS, OPTION_PALETTE
from optimiser.reports.tank_charts import add_tank_static
from optimiser.reports.terminal import chainage_label

SCENARIO_COLOURS = ["#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9"]
SCENARIO_DASHES = ["solid", "dash", "dot", "dashdot", "longdash", "longdashdot"]
GROUND_COLOUR = "#8B6B43"
PIPE_COLOUR = "#3A3A3A"
STATIC_COLOUR = "#4C8DB5"
MIN_PRESSURE_COLOUR = "#B2182B"
CLASS_COLOUR = "#7B3294"
PIECE_COLOURS = ["#C6DBEF", "#FDD0A2", "#C7E9C0", "#DADAEB", "#FCBBA1", "#D9D9D9"]


def chainage_ticks(end_m: float) -> tuple[list[float], list[str]]:
    """Tick positions and km+m labels: about ten ticks on a round kilometre step."""
    steps = [100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000]
    step = next((s for s in steps if end_m / s <= 12), steps[-1])
    values = list(np.arange(0.0, end_m + 1e-9, step))
    return values, [chainage_label(v).split(".")[0] for v in values]


def _axis(fig: go.Figure, end_m: float, rows: int) -> None:
    values, text = chainage_ticks(end_m)
    for row in range(1, rows + 1):
        fig.update_xaxes(tickvals=values, ticktext=text, row=row, col=1, showgrid=True,
                         gridcolor="#E5E5E5", range=[0, end_m])
    fig.update_xaxes(title_text="chainage (km+m)", row=rows, col=1)


def _scenario_style(index: int) -> dict:
    return {"color": SCENARIO_COLOURS[index % len(SCENARIO_COLOURS)],
            "dash": SCENARIO_DASHES[index % len(SCENARIO_DASHES)]}


def _piece_label(row: pd.Series) -> str:
    return f"DN{row['dn_mm']:g} {row['material']} {row['pressure_class']}"


def _add_class_envelope(fig: go.Figure, result: CheckResult) -> float:
    """Draw the class envelope; return its highest level [m]."""
    study = result.study
    route = study.route
    # Class envelope: pipe level + allowable head of the piece's class, minus the surge
    # allowance, i.e. the highest static line each piece could take.
    envelope_x: list[float] = []
    envelope_y: list[float] = []
    for piece in result.pieces.itertuples():
        x = np.linspace(piece.from_m, piece.to_m, 2)
        inside = route.chainage_m[(route.chainage_m > piece.from_m)
                                  & (route.chainage_m < piece.to_m)]
        x = np.sort(np.concatenate([x, inside]))
        envelope_x += [*x.tolist(), None]
        envelope_y += [*(route.pipe_level_at(x) + piece.static_head_limit_m).tolist(), None]
    fig.add_trace(go.Scatter(
        x=envelope_x, y=envelope_y, name="class envelope (allowable − surge)", mode="lines",
        line={"color": CLASS_COLOUR, "width": 1, "dash": "dashdot"}, hoverinfo="skip",
        connectgaps=False), row=1, col=1)
    return max((y for y in envelope_y if y is not None), default=-np.inf)


def _add_scenario_lines(fig: go.Figure, result: CheckResult) -> None:
    """HGL (shown) and energy line (in the legend only) of each scenario."""
    for index, scenario in enumerate(result.scenarios):
        points = scenario.points
        style = _scenario_style(index)
        custom = np.column_stack([
            [chainage_label(c) for c in points["chainage_m"]], points["pressure_m"],
            points["velocity_m_s"], points["pipe_level_m"], points["energy_m"]])
        fig.add_trace(go.Scatter(
            x=points["chainage_m"], y=points["hgl_m"], name=f"HGL, {scenario.name}",
            mode="lines", line={"color": style["color"], "width": 2, "dash": style["dash"]},
            customdata=custom, legendgroup=scenario.name,
            hovertemplate=(f"<b>{scenario.name}</b><br>%{{customdata[0]}}<br>HGL %{{y:.2f}} m"
                           "<br>energy %{customdata[4]:.2f} m<br>pipe %{customdata[3]:.2f} m"
                           "<br>pressure %{customdata[1]:.2f} m"
                           "<br>velocity %{customdata[2]:.2f} m/s<extra></extra>")),
            row=1, col=1)
        fig.add_trace(go.Scatter(
            x=points["chainage_m"], y=points["energy_m"], name=f"energy line, {scenario.name}",
            mode="lines", line={"color": style["color"], "width": 1, "dash": "dot"},
            legendgroup=scenario.name, hoverinfo="skip", visible="legendonly"), row=1, col=1)


def _add_piece_bars(fig: go.Figure, result: CheckResult) -> None:
    """One bar per piece under the profile, labelled with its option."""
    for index, piece in enumerate(result.pieces.itertuples()):
        row = result.pieces.iloc[index]
        fig.add_trace(go.Bar(
            x=[piece.to_m - piece.from_m], base=[piece.from_m], y=["pieces"],
            orientation="h", marker={"color": PIECE_COLOURS[index % len(PIECE_COLOURS)],
                                     "line": {"color": PIPE_COLOUR, "width": 0.5}},
            text=[_piece_label(row)], textposition="inside", insidetextanchor="middle",
            showlegend=False, name=_piece_label(row),
            hovertemplate=(f"{_piece_label(row)}<br>{chainage_label(piece.from_m)} to "
                           f"{chainage_label(piece.to_m)}<br>ID {piece.internal_diameter_mm:g}"
                           f" mm, {piece.length_m:.0f} m<extra></extra>")), row=2, col=1)


def _point_rows(result: CheckResult, appurtenances: list[Appurtenance]
                ) -> dict[str, list[tuple[float, str]]]:
    """Chainage and label of each offtake, fitting, air valve and washout."""
    study = result.study
    points: dict[str, list[tuple[float, str]]] = {
        "offtake": [(o.chainage_m, o.label or "offtake") for o in study.offtakes],
        "fitting": [(f.chainage_m, f.label or f"K {f.k:g}") for f in study.fittings],
        "air valve": [], "washout": []}
    for number, item in enumerate(appurtenances, start=1):
        short = "AV" if item.kind == "air valve" else "WO"
        if item.kind in points:
            points[item.kind].append((item.chainage_m, f"{short}{number}"))
    return points


def _add_points(fig: go.Figure, result: CheckResult,
                appurtenances: list[Appurtenance]) -> None:
    """Markers at pipe level for every point along the route, and a label on a short
    leader above each; labels of close points are stacked so that none overlap."""
    route = result.study.route
    labels: list[tuple[float, str, str]] = []
    for kind, rows in _point_rows(result, appurtenances).items():
        if not rows:
            continue
        symbol, colour, size = MARKERS[kind]
        x = np.array([c for c, _ in rows])
        fig.add_trace(go.Scatter(
            x=x, y=route.pipe_level_at(x), mode="markers", name=kind,
            text=[label for _, label in rows],
            marker={"symbol": symbol, "color": colour, "size": size * 0.8,
                    "line": {"width": 1.5, "color": colour}},
            customdata=[chainage_label(c) for c in x],
            hovertemplate=f"{kind}<br>%{{text}}<br>%{{customdata}}<extra></extra>"),
            row=1, col=1)
        labels += [(c, label, colour) for c, label in rows]
    _add_labels(fig, result, sorted(labels))


def _add_labels(fig: go.Figure, result: CheckResult,
                labels: list[tuple[float, str, str]]) -> None:
    """Each label on a leader above its point; labels of points close along the route
    form a cluster and are stacked above the cluster's highest point, so none overlap."""
    route = result.study.route
    near_m = 0.06 * route.total_chainage_m
    step_m = 0.045 * float(route.ground_m.max() - route.pipe_level_m.min())
    clusters: list[list[tuple[float, str, str]]] = []
    for item in labels:
        if clusters and item[0] - clusters[-1][-1][0] < near_m:
            clusters[-1].append(item)
        else:
            clusters.append([item])
    for cluster in clusters:
        levels = route.pipe_level_at(np.array([c for c, _, _ in cluster]))
        top = float(levels.max())
        for tier, ((chainage, text, colour), level) in enumerate(
                zip(cluster, levels, strict=True)):
            fig.add_annotation(
                x=chainage, y=float(level), ax=chainage, ay=top + step_m * (1.3 + tier),
                axref="x", ayref="y", xref="x", yref="y", text=text, showarrow=True,
                arrowhead=0, arrowwidth=0.8, arrowcolor=colour,
                font={"size": 9, "color": colour}, bgcolor="rgba(255,255,255,0.8)")


def _legend_rows(fig: go.Figure, width_px: int = 680) -> int:
    """Rows a horizontal legend takes at ``width_px`` (about 7 px a character)."""
    names = [t.name for t in fig.data if t.showlegend is not False and t.name]
    rows, used = 1, 0
    for name in names:
        item = 45 + 6 * len(name)
        if used + item > width_px:
            rows, used = rows + 1, 0
        used += item
    return rows


def profile_figure(result: CheckResult, title: str = "Longitudinal profile",
                   colour: str = OPTION_PALETTE[0],
                   appurtenances: list[Appurtenance] | None = None) -> go.Figure:
    """Ground, pipe (in the option's colour), HGL per scenario, static line, envelopes,
    labelled points along the route and the pieces."""
    study = result.study
    route = study.route
    end = route.total_chainage_m
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, row_heights=[0.86, 0.14],
                        vertical_spacing=0.03)
    ground_text = [chainage_label(c) for c in route.chainage_m]
    fig.add_trace(go.Scatter(
        x=route.chainage_m, y=route.ground_m, name="ground", mode="lines",
        line={"color": GROUND_COLOUR, "width": 1.5}, customdata=ground_text,
        hovertemplate="%{customdata}<br>ground %{y:.2f} m<extra></extra>"), row=1, col=1)
    fig.add_trace(go.Scatter(
        x=route.chainage_m, y=route.pipe_level_m, name="pipe", mode="lines",
        line={"color": colour, "width": 2}, customdata=ground_text,
        hovertemplate="%{customdata}<br>pipe %{y:.2f} m<extra></extra>"), row=1, col=1)
    if result.tanks:  # the static line restarts at each tank (contract section 8)
        add_tank_static(fig, result)
    else:
        fig.add_trace(go.Scatter(
            x=[0, end], y=[study.source.top_water_level_m] * 2, name="static line (top water)",
            mode="lines", line={"color": STATIC_COLOUR, "width": 1, "dash": "dot"},
            hoverinfo="skip"), row=1, col=1)
    first = result.scenarios[0].points
    fig.add_trace(go.Scatter(
        x=first["chainage_m"], y=first["pipe_level_m"] + first["min_pressure_m"],
        name="minimum-pressure envelope", mode="lines",
        line={"color": MIN_PRESSURE_COLOUR, "width": 1, "dash": "dot"},
        hoverinfo="skip"), row=1, col=1)
    envelope_top = _add_class_envelope(fig, result)
    _add_scenario_lines(fig, result)
    _add_points(fig, result, appurtenances or [])
    _add_piece_bars(fig, result)
    # The whole class envelope stays inside the chart, and so does the whole route.
    low = float(route.pipe_level_m.min())
    high = max(study.source.top_water_level_m, float(route.ground_m.max()), envelope_top)
    pad = 0.05 * (high - low)
    fig.update_yaxes(title_text="level (m)", row=1, col=1, gridcolor="#E5E5E5",
                     range=[low - 2 * pad, high + pad], tickformat=",.0f")
    fig.update_yaxes(showticklabels=False, row=2, col=1)
    _axis(fig, end, 2)
    legend_rows = _legend_rows(fig)
    fig.update_layout(title=title or None, template="plotly_white",
                      height=600 + 22 * legend_rows, barmode="overlay",
                      hovermode="closest", legend={"orientation": "h", "x": 0, "y": -0.1,
                                                   "yanchor": "top", "font": {"size": 10}},
                      margin={"l": 60, "r": 15, "t": 40 if title else 15,
                              "b": 60 + 22 * legend_rows})
    return fig


def pressure_velocity_figure(result: CheckResult) -> go.Figure:
    """Pressure head and velocity along the route per scenario, with their limits."""
    study = result.study
    end = study.route.total_chainage_m
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, vertical_spacing=0.08,
                        subplot_titles=("pressure head (m)", "velocity (m/s)"))
    first = result.scenarios[0].points
    fig.add_trace(go.Scatter(
        x=first["chainage_m"], y=first["min_pressure_m"], name="minimum pressure",
        mode="lines", line={"color": MIN_PRESSURE_COLOUR, "dash": "dot", "width": 1}),
        row=1, col=1)
    fig.add_trace(go.Scatter(
        x=first["chainage_m"], y=first["static_pressure_m"] + first["surge_head_m"],
        name="static head + surge", mode="lines",
        line={"color": STATIC_COLOUR, "dash": "dot", "width": 1}), row=1, col=1)
    allowable_x: list[float | None] = []
    allowable_y: list[float | None] = []
    for piece in result.pieces.itertuples():
        allowable_x += [piece.from_m, piece.to_m, None]
        allowable_y += [piece.allowable_surge_head_m, piece.allowable_surge_head_m, None]
    fig.add_trace(go.Scatter(
        x=allowable_x, y=allowable_y, name="allowable head of class", mode="lines",
        line={"color": CLASS_COLOUR, "dash": "dashdot", "width": 1}), row=1, col=1)
    for index, scenario in enumerate(result.scenarios):
        style = _scenario_style(index)
        points = scenario.points
        fig.add_trace(go.Scatter(
            x=points["chainage_m"], y=points["pressure_m"], name=f"pressure, {scenario.name}",
            mode="lines", line={"color": style["color"], "dash": style["dash"], "width": 2},
            legendgroup=scenario.name,
            customdata=[chainage_label(c) for c in points["chainage_m"]],
            hovertemplate="%{customdata}<br>%{y:.2f} m<extra>" + scenario.name + "</extra>"),
            row=1, col=1)
        segments = scenario.segments
        x = np.column_stack([segments["from_m"], segments["to_m"]]).ravel()
        y = np.repeat(segments["velocity_m_s"].to_numpy(), 2)
        fig.add_trace(go.Scatter(
            x=x, y=y, name=f"velocity, {scenario.name}", mode="lines",
            line={"color": style["color"], "dash": style["dash"], "width": 2},
            legendgroup=scenario.name, showlegend=False,
            hovertemplate="%{y:.2f} m/s<extra>" + scenario.name + "</extra>"), row=2, col=1)
    for value, name in ((study.rules.velocity_min_m_s, "velocity minimum"),
                        (study.rules.velocity_max_m_s, "velocity maximum")):
        fig.add_trace(go.Scatter(
            x=[0, end], y=[value, value], name=name, mode="lines",
            line={"color": MIN_PRESSURE_COLOUR, "dash": "dot", "width": 1}), row=2, col=1)
    _axis(fig, end, 2)
    fig.update_layout(template="plotly_white", height=560, hovermode="closest",
                      legend={"orientation": "h", "y": -0.15},
                      margin={"l": 60, "r": 20, "t": 40, "b": 40})
    return fig


def cost_figure(result: CheckResult, colour: str = OPTION_PALETTE[0]) -> go.Figure:
    """Cost by option (material, DN, class) as horizontal bars."""
    pieces = result.pieces.copy()
    pieces["option"] = pieces.apply(_piece_label, axis=1)
    table = pieces.groupby("option", sort=False).agg(cost=("cost", "sum"),
                                                     length_m=("length_m", "sum"))
    if result.tank_cost_total:  # new break-pressure tanks, a bar of their own
        new = sum(1 for t in result.tanks if t.new)
        table.loc[f"break-pressure tanks ({new} new)"] = [result.tank_cost_total, 0.0]
    fig = go.Figure(go.Bar(
        x=table["cost"], y=table.index, orientation="h", marker={"color": colour},
        customdata=table["length_m"],
        hovertemplate="%{y}<br>cost %{x:,.0f}<br>length %{customdata:,.0f} m<extra></extra>"))
    currency = result.study.currency
    fig.update_layout(template="plotly_white", height=120 + 28 * len(table),
                      xaxis_title=f"cost ({currency})" if currency else "cost",
                      xaxis_tickformat=",.0f",
                      margin={"l": 200, "r": 20, "t": 20, "b": 40})
    return fig
