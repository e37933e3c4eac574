"""The scheme diagram: the trunk and every branch of a scheme in one figure, coloured by
pipe size, with branch names, junctions, offtakes and delivery points.

Two drawings, chosen by what the study gives:

- **By chainage** (always possible): the horizontal axis is distance from the source
  along the pipes, to scale; each line (the trunk, each branch) is a horizontal bar on a
  row of its own, starting at its junction's distance from the source, joined to its
  parent's row by a vertical tick at the junction. Rows are given in depth-first order,
  a line's branches in order of decreasing junction chainage, so a junction's tick only
  crosses rows of lines that start at or beyond it: no bar and no tick overlap. The
  vertical axis is schematic (one row per line); only the horizontal one is to scale.
- **In plan**, when the trunk and every branch have coordinates (``Route.coordinates``):
  each line drawn at its easting and northing, equal axes.

Sizes take the colour scale of the plan view (:func:`~optimiser.reports.colours.size_colours`)
and the points take the report's marker shapes (:data:`~optimiser.reports.colours.MARKERS`).
"""

from __future__ import annotations

import html
from dataclasses import dataclass

import numpy as np
import plotly.graph_objects as go

from optimiser.model import Design, Study
from optimiser.model.lines import Line, study_lines
from optimiser.reports.charts import _legend_rows, chainage_ticks
from optimiser.reports.colours import MARKERS, size_colours
from optimiser.reports.terminal import chainage_label

PATH_COLOUR = "#B5B5B5"
"""The thin line under the pieces and the junction ticks: lighter than any size colour."""


@dataclass(frozen=True)
class Placement:
    """Where a line sits in the diagram by chainage: its row (0 the trunk, at the top),
    the distance from the source of its chainage 0 [m] and its parent's row."""

    line: Line
    row: int
    start_m: float
    parent_row: int | None

    @property
    def end_m(self) -> float:
        return self.start_m + self.line.route.total_chainage_m


def scheme_layout(study: Study) -> tuple[Placement, ...]:
    """Every line of ``study`` placed by chainage, in row order (see the module's
    docstring for why no bar or junction tick overlaps another)."""
    lines = study_lines(study)
    children: dict[str | None, list[Line]] = {}
    for line in lines:
        children.setdefault(line.parent, []).append(line)
    placed: list[Placement] = []
    stack: list[tuple[Line, float, int | None]] = [(lines[0], 0.0, None)]
    while stack:
        line, start_m, parent_row = stack.pop()
        row = len(placed)
        placed.append(Placement(line, row, start_m, parent_row))
        # Pushed nearest-first so that the farthest junction is visited first.
        for child in sorted(children.get(line.name, []), key=lambda c: c.at_chainage_m):
            stack.append((child, start_m + child.at_chainage_m, row))
    return tuple(placed)


def in_plan(study: Study) -> bool:
    """True when the trunk and every branch have plan coordinates."""
    return all(line.route.coordinates is not None for line in study_lines(study))


class _Drawing:
    """Positions of chainages of each line: by chainage (schematic rows) or in plan."""

    def __init__(self, study: Study) -> None:
        self.plan = in_plan(study)
        self.placements = {p.line.name: p for p in scheme_layout(study)}

    def xy(self, name: str, chainage_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        placement = self.placements[name]
        chainage_m = np.asarray(chainage_m, dtype=float)
        if self.plan:
            coordinates = placement.line.route.coordinates
            assert coordinates is not None
            return coordinates.xy_at(chainage_m)
        return placement.start_m + chainage_m, np.full(chainage_m.shape, -placement.row,
                                                       dtype=float)

    def path(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """The line from its junction to its end (the junction tick first, by chainage)."""
        placement = self.placements[name]
        route = placement.line.route
        if self.plan:
            coordinates = route.coordinates
            assert coordinates is not None
            inside = coordinates.chainage_m[(coordinates.chainage_m > 0)
                                            & (coordinates.chainage_m < route.total_chainage_m)]
            return self.xy(name, np.concatenate([[0.0], inside, [route.total_chainage_m]]))
        x, y = self.xy(name, np.array([0.0, route.total_chainage_m]))
        if placement.parent_row is None:
            return x, y
        return np.concatenate([[x[0]], x]), np.concatenate([[-placement.parent_row], y])


def _branch_traces(fig: go.Figure, drawing: _Drawing) -> None:
    """One trace per line: its path (with the junction tick), named after the line."""
    for name, placement in drawing.placements.items():
        line = placement.line
        x, y = drawing.path(name)
        where = ("source" if line.parent is None else
                 f"leaves {line.parent} at {chainage_label(line.at_chainage_m)}")
        text = f"{html.escape(name)}<br>{where}<br>{line.route.total_chainage_m:,.1f} m long"
        fig.add_trace(go.Scatter(
            x=x, y=y, mode="lines", name=name, showlegend=False,
            line={"color": PATH_COLOUR, "width": 1.5}, meta={"role": "branch", "branch": name},
            hovertemplate=f"{text}<extra></extra>"))


def _piece_traces(fig: go.Figure, drawing: _Drawing, design: Design) -> None:
    """The pieces, one trace per option (material, DN, class), coloured by DN."""
    colours = size_colours([p.option.dn_mm for p in design.pieces])
    groups: dict[str, list] = {}
    for piece in design.pieces:
        groups.setdefault(piece.option.label, []).append(piece)
    for label, pieces in groups.items():
        xs: list[float | None] = []
        ys: list[float | None] = []
        text: list[str] = []
        for piece in pieces:
            chainage = _piece_chainages(drawing, piece.branch, piece.from_m, piece.to_m)
            x, y = drawing.xy(piece.branch, chainage)
            xs += [*x.tolist(), None]
            ys += [*y.tolist(), None]
            text += [*(f"{piece.branch}, {chainage_label(c)}" for c in chainage), ""]
        fig.add_trace(go.Scatter(
            x=xs, y=ys, mode="lines", name=label, connectgaps=False, customdata=text,
            line={"color": colours[pieces[0].option.dn_mm], "width": 8},
            meta={"role": "pieces"},
            hovertemplate=f"{html.escape(label)}<br>%{{customdata}}<extra></extra>"))


def _piece_chainages(drawing: _Drawing, name: str, from_m: float, to_m: float) -> np.ndarray:
    """The ends of a piece and, in plan, the bends of its line between them."""
    coordinates = drawing.placements[name].line.route.coordinates
    if not drawing.plan or coordinates is None:
        return np.array([from_m, to_m])
    inside = coordinates.chainage_m[(coordinates.chainage_m > from_m)
                                    & (coordinates.chainage_m < to_m)]
    return np.concatenate([[from_m], inside, [to_m]])


def delivery_label(line: Line, plan: bool = False) -> str:
    """The name shown at a line's delivery point: its last survey label, else its name;
    in plan (no row names beside the lines) the line's name and the label."""
    label = line.route.labels[-1] if line.route.labels else ""
    if plan and label and label != line.name:
        return f"{line.name}: {label}"
    return label or line.name


def _point_traces(fig: go.Figure, drawing: _Drawing) -> None:
    """The source, the delivery point of every line (labelled) and the offtakes."""
    placements = list(drawing.placements.values())
    ends = [drawing.xy(p.line.name, np.array([p.line.route.total_chainage_m]))
            for p in placements]
    symbol, colour, size = MARKERS["outlet"]
    fig.add_trace(go.Scatter(
        x=[x[0] for x, _ in ends], y=[y[0] for _, y in ends], mode="markers+text",
        name="delivery point", text=[delivery_label(p.line, drawing.plan) for p in placements],
        textposition="middle right", textfont={"size": 10, "color": "#222222"},
        marker={"symbol": symbol, "color": colour, "size": size * 0.8},
        customdata=[f"{p.line.name}: required head {p.line.required_head_m:,.2f} m"
                    for p in placements], meta={"role": "delivery"},
        hovertemplate="%{text}<br>%{customdata}<extra></extra>"))
    offtakes = [(p.line.name, o) for p in placements for o in p.line.offtakes]
    if offtakes:
        symbol, colour, size = MARKERS["offtake"]
        xy = [drawing.xy(name, np.array([o.chainage_m])) for name, o in offtakes]
        fig.add_trace(go.Scatter(
            x=[x[0] for x, _ in xy], y=[y[0] for _, y in xy], mode="markers", name="offtake",
            marker={"symbol": symbol, "color": colour, "size": size * 0.8},
            text=[f"{o.label or 'offtake'}, {name} {chainage_label(o.chainage_m)}"
                  for name, o in offtakes], meta={"role": "offtake"},
            hovertemplate="%{text}<extra></extra>"))
    symbol, colour, size = MARKERS["source"]
    x, y = drawing.xy(placements[0].line.name, np.array([0.0]))
    fig.add_trace(go.Scatter(
        x=x, y=y, mode="markers", name="source", hoverinfo="name", meta={"role": "source"},
        marker={"symbol": symbol, "color": colour, "size": size * 0.8}))


def _axes_by_chainage(fig: go.Figure, drawing: _Drawing) -> int:
    """Axes of the drawing by chainage; returns its height [px]."""
    placements = list(drawing.placements.values())
    far_m = max(p.end_m for p in placements)
    values, text = chainage_ticks(far_m)
    fig.update_xaxes(title_text="distance from the source along the pipes (km+m, to scale)",
                     tickvals=values, ticktext=text, gridcolor="#E5E5E5",
                     range=[-0.02 * far_m, 1.22 * far_m], zeroline=False)
    fig.update_yaxes(tickvals=[-p.row for p in placements],
                     ticktext=[p.line.name for p in placements], showgrid=False,
                     range=[-len(placements) + 0.4, 0.6], zeroline=False, automargin=True)
    return 170 + 30 * len(placements)


def _axes_in_plan(fig: go.Figure, study: Study) -> int:
    coordinates = study.route.coordinates
    grid = (coordinates.crs if coordinates is not None else None) or "local grid"
    fig.update_xaxes(title_text=f"easting (m, {grid})", gridcolor="#E5E5E5", tickformat=",.0f")
    fig.update_yaxes(title_text="northing (m)", gridcolor="#E5E5E5", tickformat=",.0f",
                     scaleanchor="x", scaleratio=1)
    return 640


def scheme_figure(study: Study, design: Design) -> go.Figure:
    """The scheme diagram of ``design`` (in plan when every line has coordinates)."""
    drawing = _Drawing(study)
    fig = go.Figure()
    _branch_traces(fig, drawing)
    _piece_traces(fig, drawing, design)
    _point_traces(fig, drawing)
    height = _axes_in_plan(fig, study) if drawing.plan else _axes_by_chainage(fig, drawing)
    legend_px = 22 * _legend_rows(fig, 900)
    fig.update_layout(template="plotly_white", height=height + legend_px, hovermode="closest",
                      legend={"orientation": "h", "x": 0, "y": 1.0, "yanchor": "bottom",
                              "font": {"size": 10}},
                      margin={"l": 40, "r": 15, "t": 20 + legend_px, "b": 50})
    return fig


def diagram_note(study: Study) -> str:
    """One sentence under the diagram saying how it is drawn."""
    if in_plan(study):
        return ("Drawn in plan from each line's own coordinates (no background map); "
                "pipes coloured by nominal size, darker for larger.")
    return ("Drawn by chainage: the horizontal distance from the source is to scale, each "
            "line on a row of its own below the line it leaves (the vertical spacing is "
            "schematic); pipes coloured by nominal size, darker for larger.")
