"""One line of a checked scheme seen as a single route, so that every report of a route
(long section, pressure and velocity, air valves and washouts) draws a branch as it
draws a main.

The view is a re-reading of the check's own result, never a new calculation: the
study's route, fittings, offtakes, minimum pressure and delivery point become the line's,
and the pieces, points, segments and violations are those of the line (points and
segments carry their ``branch``, and their ``piece`` numbers the design's pieces, which
the view renumbers along the line). The static line stays the source's top water level,
as on the whole scheme.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

from optimiser.analysis.check import CheckResult, ScenarioResult
from optimiser.analysis.tanks import tank_cost as tank_cost_of
from optimiser.model import TRUNK, Outlet, Study
from optimiser.model.lines import line_of


def line_study(study: Study, name: str) -> Study:
    """``study`` with line ``name`` as its route (no branches)."""
    line = line_of(study, name)
    return dataclasses.replace(
        study, route=line.route, fittings=line.fittings, offtakes=line.offtakes,
        min_pressure_m=line.min_pressure_m, local_k_per_km=line.local_k_per_km,
        outlet=Outlet(required_head_m=line.required_head_m, exit_k=line.exit_k),
        branches=())


def _on(table: pd.DataFrame, name: str, renumber: dict[int, int]) -> pd.DataFrame:
    """Rows of ``table`` on line ``name``, pieces renumbered along the line."""
    part = table[table["branch"] == name].reset_index(drop=True)
    if "piece" in part:
        part = part.assign(piece=np.array([renumber[int(p)] for p in part["piece"]],
                                          dtype=int))
    return part


def _scenario_on(scenario: ScenarioResult, name: str, renumber: dict[int, int]
                 ) -> ScenarioResult:
    """The scenario on line ``name``; the capacity with every limit is the whole
    scheme's, kept on the trunk's view only."""
    outlet = next(o for o in scenario.outlets if o.branch == name)
    return dataclasses.replace(
        scenario, outlet_flow_m3_s=outlet.flow_m3_s, outlet_energy_m=outlet.energy_m,
        required_head_m=outlet.required_head_m,
        points=_on(scenario.points, name, renumber),
        segments=_on(scenario.segments, name, renumber),
        capacity_m3_s=scenario.capacity_m3_s if name == TRUNK else None,
        capacity_outlet_only_m3_s=outlet.uncontrolled_flow_m3_s,
        outlets=[outlet])


def _static_level_m(result: CheckResult, name: str) -> float:
    """The static line's level at the start of line ``name`` as the check found it (the
    source's top water level, or a break-pressure tank's upstream of the junction)."""
    points = result.scenarios[0].points
    first = points[points["branch"] == name].iloc[0]
    return float(first["pipe_level_m"] + first["static_pressure_m"])


def branch_view(result: CheckResult, name: str) -> CheckResult:
    """The part of ``result`` on line ``name`` (the trunk is ``"main"``), as the check
    result of a single route. Tanks stand on the trunk only; a branch's static line is
    level at its start's (the line it leaves, at the junction)."""
    indices = [i for i, piece in enumerate(result.design.pieces) if piece.branch == name]
    renumber = {index: position for position, index in enumerate(indices)}
    pieces = result.pieces.iloc[indices].reset_index(drop=True)
    change_total = result.study.costs.change_cost * result.design.on(name).n_changes
    study = line_study(result.study, name)
    if name != TRUNK:
        study = dataclasses.replace(study, source=dataclasses.replace(
            study.source, top_water_level_m=_static_level_m(result, name)))
    tanks = tuple(t for t in result.tanks if t.branch == name)
    tank_cost = float(sum(tank_cost_of(result.study, t) for t in tanks))
    return CheckResult(
        study, result.design.on(name),
        [_scenario_on(s, name, renumber) for s in result.scenarios],
        [v for v in result.violations if v.branch == name], pieces,
        float(pieces["cost"].sum()) + change_total + tank_cost, change_total,
        tanks=tanks, tank_cost_total=tank_cost)

