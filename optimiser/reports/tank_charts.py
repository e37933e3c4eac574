"""Break-pressure tanks in the report (contract section 8): the static line restarting
at each tank on the long section, the tanks in the schedule and in the cost breakdown."""

from __future__ import annotations

import plotly.graph_objects as go

from optimiser.analysis.check import CheckResult
from optimiser.analysis.tanks import tank_cost
from optimiser.reports import numbers as fmt
from optimiser.reports.terminal import chainage_label

TANK_COLOUR = "#1B7837"
"""Tanks and the static line below them: a solid, darker line than the source's dotted
static line, so that each restart is seen."""


def static_steps(result: CheckResult) -> tuple[list[float], list[float]]:
    """(x, y) of the static line: the source's top water level down to the first tank,
    a vertical drop to the tank's water level, and so on to the outlet."""
    study = result.study
    x: list[float] = [0.0]
    y: list[float] = [study.source.top_water_level_m]
    for tank in result.tanks:
        x += [tank.chainage_m, tank.chainage_m]
        y += [y[-1], tank.water_level_m]
    x.append(study.route.total_chainage_m)
    y.append(y[-1])
    return x, y


def add_tank_static(fig: go.Figure, result: CheckResult) -> None:
    """The static line as steps, and a marker with its level at every tank."""
    x, y = static_steps(result)
    fig.add_trace(go.Scatter(
        x=x, y=y, name="static line (restarts at each break-pressure tank)", mode="lines",
        line={"color": TANK_COLOUR, "width": 1.5, "dash": "dash"}, hoverinfo="skip"),
        row=1, col=1)
    fig.add_trace(go.Scatter(
        x=[t.chainage_m for t in result.tanks], y=[t.water_level_m for t in result.tanks],
        name="break-pressure tank", mode="markers+text",
        marker={"symbol": "triangle-down", "size": 12, "color": TANK_COLOUR,
                "line": {"color": "white", "width": 1}},
        text=[("new tank" if t.new else "tank") for t in result.tanks],
        textposition="top center", textfont={"size": 10, "color": TANK_COLOUR},
        customdata=[f"{chainage_label(t.chainage_m)} {t.label}".strip() for t in result.tanks],
        hovertemplate="%{customdata}<br>water level %{y:.2f} m<extra></extra>"), row=1, col=1)


def tank_rows(result: CheckResult) -> list[tuple[str, ...]]:
    """Rows of the report's table of tanks: chainage, water level, new or the study's
    own, cost, least margin to fill over the scenarios, label."""
    rows = []
    currency = result.study.currency
    for index, tank in enumerate(result.tanks):
        margins = [float(s.tank_inflow_energy_m[index]) - tank.water_level_m
                   for s in result.scenarios if s.tank_inflow_energy_m is not None]
        rows.append((chainage_label(tank.chainage_m), fmt.head(tank.water_level_m),
                     "new" if tank.new else "the study's own",
                     fmt.money(tank_cost(result.study, tank), currency),
                     fmt.head(min(margins)) if margins else "", tank.label))
    return rows


TANK_GRID_COLUMNS = ("chainage", "water level (m)", "tank", "cost",
                     "least margin to fill (m)", "label")
