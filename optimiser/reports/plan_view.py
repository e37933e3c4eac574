"""The plan view of a design: the route in plan, coloured by pipe size, with the points
of ``design.geojson`` and chainage ticks, drawn offline (no map tiles, no server).

Chainage ticks: a small mark every kilometre (every 10 km on routes over 200 km), and a
km+m label at the same chainages as the long section's axis ticks, so the two figures
can be read together. Sizes: a sequential colour scale (Cividis: Nuñez, Anderton &
Renslow 2018, optimised for colour-vision deficiency), darker for larger DN; each option
is one legend entry. The notes of the survey clean-up are listed under the figure.
"""

from __future__ import annotations

import html

import numpy as np
import plotly.graph_objects as go

from optimiser.analysis.appurtenances import Appurtenance
from optimiser.analysis.check import CheckResult
from optimiser.reports.charts import chainage_ticks
from optimiser.reports.colours import MARKERS, size_colours
from optimiser.reports.geojson import point_items
from optimiser.reports.terminal import chainage_label


def _piece_traces(fig: go.Figure, result: CheckResult) -> None:
    coordinates = result.study.route.coordinates
    assert coordinates is not None
    pieces = result.pieces
    colours = size_colours(list(pieces["dn_mm"]))
    for label, group in pieces.groupby(
            pieces.apply(lambda r: f"DN{r.dn_mm:g} {r.material} {r.pressure_class}", axis=1),
            sort=False):
        xs: list[float | None] = []
        ys: list[float | None] = []
        text: list[str] = []
        for row in group.itertuples():
            inside = coordinates.chainage_m[(coordinates.chainage_m > row.from_m)
                                            & (coordinates.chainage_m < row.to_m)]
            chainage = np.concatenate([[row.from_m], inside, [row.to_m]])
            x, y = coordinates.xy_at(chainage)
            xs += [*x.tolist(), None]
            ys += [*y.tolist(), None]
            text += [*(chainage_label(c) for c in chainage), ""]
        fig.add_trace(go.Scatter(
            x=xs, y=ys, mode="lines", name=str(label), connectgaps=False,
            line={"color": colours[float(group["dn_mm"].iloc[0])], "width": 4},
            customdata=text,
            hovertemplate=f"{html.escape(str(label))}<br>%{{customdata}}<extra></extra>"))


def _tick_traces(fig: go.Figure, result: CheckResult) -> None:
    coordinates = result.study.route.coordinates
    assert coordinates is not None
    end = result.study.route.total_chainage_m
    step = 1000.0 if end <= 200_000 else 10_000.0
    marks = np.arange(0.0, end + 1e-9, step)
    x, y = coordinates.xy_at(marks)
    fig.add_trace(go.Scatter(
        x=x, y=y, mode="markers", name=f"chainage every {step / 1000:g} km",
        marker={"symbol": "line-ew-open", "size": 7, "color": "#555555"},
        customdata=[chainage_label(c) for c in marks],
        hovertemplate="%{customdata}<extra></extra>"))
    labelled, text = chainage_ticks(end)
    x, y = coordinates.xy_at(np.array(labelled))
    fig.add_trace(go.Scatter(
        x=x, y=y, mode="text", text=text, textposition="top right", showlegend=False,
        textfont={"size": 10, "color": "#333333"}, hoverinfo="skip"))


def _point_traces(fig: go.Figure, result: CheckResult,
                  appurtenances: list[Appurtenance]) -> None:
    coordinates = result.study.route.coordinates
    assert coordinates is not None
    items = point_items(result, appurtenances)
    for kind, (symbol, colour, size) in MARKERS.items():
        chosen = [i for i in items if i["kind"] == kind]
        if not chosen:
            continue
        x, y = coordinates.xy_at(np.array([i["chainage_m"] for i in chosen]))
        fig.add_trace(go.Scatter(
            x=x, y=y, mode="markers", name=kind,
            marker={"symbol": symbol, "color": colour, "size": size,
                    "line": {"width": 1.5, "color": colour}},
            customdata=[f"{chainage_label(i['chainage_m'])} {i['label']}".strip()
                        for i in chosen],
            hovertemplate=f"{kind}<br>%{{customdata}}<extra></extra>"))


def plan_figure(result: CheckResult, appurtenances: list[Appurtenance]) -> go.Figure:
    """The route in plan (easting, northing in its projected CRS or local grid)."""
    coordinates = result.study.route.coordinates
    if coordinates is None:
        raise ValueError("the route has no coordinates")
    fig = go.Figure()
    _piece_traces(fig, result)
    _tick_traces(fig, result)
    _point_traces(fig, result, appurtenances)
    grid = coordinates.crs or "local grid"
    fig.update_xaxes(title_text=f"easting (m, {grid})", gridcolor="#E5E5E5",
                     tickformat=",.0f")
    fig.update_yaxes(title_text="northing (m)", gridcolor="#E5E5E5", tickformat=",.0f",
                     scaleanchor="x", scaleratio=1)
    fig.update_layout(template="plotly_white", height=640, hovermode="closest",
                      legend={"orientation": "h", "y": -0.12},
                      margin={"l": 70, "r": 20, "t": 30, "b": 40})
    return fig


def plan_notes(result: CheckResult) -> tuple[str, ...]:
    """The notes of the survey clean-up (empty without coordinates)."""
    coordinates = result.study.route.coordinates
    return () if coordinates is None else tuple(coordinates.notes)
