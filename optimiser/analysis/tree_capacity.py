"""The least margin of a whole scheme as the trunk's delivery flow changes, for the
gravity capacity of the design (contract sections 5, 7 and 8).

Raising the trunk's delivery flow from q0 to q changes the flow of every trunk pipe and
of no branch pipe. A branch starts from its parent's energy arriving at the junction
less its junction loss, and loses along its pipes what their unchanged flows lose
(Bernoulli's equation with losses, Streeter, V.L. & Wylie, E.B. (1985), Fluid
Mechanics, ch. 3), so its whole energy and hydraulic grade line move by the change of
the energy arriving at the trunk junction it descends from, down to its first
break-pressure tank, where the energy restarts at the tank's water level (contract
section 8) and nothing below moves. Every margin of the branches (pressure head less its
minimum at each check point, energy after the exit loss less the required head, energy
left to fill a tank less its level) is therefore, with E_j the trunk's energy arriving
at junction node j:

    margin(q) = min( trunk margins at q,
                     min_j [ M_j + E_j(q) - E_j(q0) ],   M_j: margins that move with j
                     M_fixed )                           margins below a tank

so a trial flow re-runs the trunk alone. Like the rest of the check it reads only the
study and the design.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.model.lines import Line

_ONE = 0
"""Side of a check point that stands for both sides of its node (as in
:mod:`.design_hydraulics`)."""


def _first_tank_node(part: DesignHydraulics) -> int:
    """Grid node of the line's first tank (its segment count when it has none)."""
    return int(part.tanks.node[0]) if part.tanks.any else len(part.grid.segment_length_m)


def line_margins_m(part: DesignHydraulics, arrays: ScenarioArrays, required_head_m: float
                   ) -> tuple[float, float]:
    """Least margin [m] of one line above its first tank (moving with its start energy)
    and below it (not moving): pressure head less its minimum at every check point,
    energy left to fill each tank less its level, energy at the delivery point less the
    required head; inf where there is none.

    A check point standing for both sides of its node (equal energy and velocity there)
    counts with either side it stands for."""
    first = _first_tank_node(part)
    points = part.point_arrays(arrays)
    margin = part.pressure_m(points) - part.node_min_pressure_m[points.node]
    upstream = np.where(points.side == _ONE, points.node - 1, points.segment)
    moving = (points.segment < first) | ((points.node >= 1) & (upstream < first))
    fixed = points.segment >= first
    above, below = [margin[moving]], [margin[fixed]]
    if arrays.tank_inflow_energy_m is not None:  # only the first tank's inflow moves
        fill = arrays.tank_inflow_energy_m - part.tanks.level_m
        above.append(fill[:1])
        below.append(fill[1:])
    outlet = np.array([arrays.outlet_energy_m - required_head_m])
    (above if len(part.grid.segment_length_m) - 1 < first else below).append(outlet)
    return _least(above), _least(below)


def _least(values: list[np.ndarray]) -> float:
    joined = np.concatenate(values)
    return float(joined.min()) if len(joined) else float("inf")


@dataclass(frozen=True)
class TreeMargins:
    """The branches' margins of one scenario gathered by the trunk junction they move
    with (:func:`tree_margins`)."""

    junction_node: np.ndarray
    """Trunk grid node of each junction some branch moves with."""
    moving_m: np.ndarray
    """M_j: least margin moving with each junction [m]."""
    fixed_m: float
    """M_fixed: least margin that no trunk flow moves [m] (inf if none)."""
    base_energy_m: np.ndarray
    """E_j(q0): the trunk's energy arriving at each junction at the scenario's flows [m]."""

    def least_m(self, trunk_energy_end_m: np.ndarray) -> float:
        """Least margin of every branch [m] with the trunk's energy at the ends of its
        segments ``trunk_energy_end_m``."""
        if not len(self.junction_node):
            return self.fixed_m
        moved = trunk_energy_end_m[self.junction_node - 1] - self.base_energy_m
        return min(float((self.moving_m + moved).min()), self.fixed_m)


def tree_margins(parts: Mapping[str, DesignHydraulics], lines: Sequence[Line],
                 arrays: Mapping[str, ScenarioArrays]) -> TreeMargins:
    """The margins of every branch (``lines`` parents first, the trunk first) at the
    scenario's flows, ``arrays``, gathered by the trunk junction each moves with."""
    moves_with: dict[str, int | None] = {}  # trunk junction node of each line, or None
    moving: dict[int, float] = {}
    fixed = float("inf")
    for line in lines[1:]:
        parent = parts[line.parent]
        node = int(np.argmin(np.abs(parent.grid.node_chainage_m - line.at_chainage_m)))
        if line.parent == lines[0].name:
            moves_with[line.name] = node
        else:  # the parent's energy at the junction moves unless a tank stands above
            above = node - 1 < _first_tank_node(parent)
            moves_with[line.name] = moves_with[line.parent] if above else None
        above_m, below_m = line_margins_m(parts[line.name], arrays[line.name],
                                          line.required_head_m)
        fixed = min(fixed, below_m)
        junction = moves_with[line.name]
        if junction is None:
            fixed = min(fixed, above_m)
        else:
            moving[junction] = min(moving.get(junction, float("inf")), above_m)
    nodes = np.array(sorted(moving), dtype=int)
    energy = arrays[lines[0].name].energy_end_m
    return TreeMargins(nodes, np.array([moving[n] for n in nodes.tolist()], dtype=float),
                       fixed, energy[nodes - 1] if len(nodes) else np.empty(0))
