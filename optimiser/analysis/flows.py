"""Study-level hydraulic quantities shared by the check and the optimiser.

These functions apply the pure hydraulics of :mod:`optimiser.hydraulics` to the model:
section flows from scenario and offtakes, fittings placed on nodes, and friction
gradients with the scenario's roughness. They are the single place where a study's
friction method is dispatched and where the flow rule of contract section 5 is written:

    Q_section = Q_outlet + offtake_factor * sum(offtakes downstream of the section start)

An offtake at chainage c is upstream of every section starting at c or later.

On a branched scheme (contract section 7) the same rule holds on every line (the trunk
or a branch), with the line's delivery flow for the outlet's and one more term:

    Q_section = Q_delivery + offtake_factor * sum(offtakes of the line downstream)
                + sum(inflow of every branch leaving the line downstream)

where a branch leaving at chainage c is downstream of every section starting before c,
and a branch's inflow is the flow of its first section.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from optimiser.hydraulics.friction import darcy_weisbach_gradient, hazen_williams_gradient
from optimiser.model import TRUNK, Friction, Scenario, Study
from optimiser.model.lines import Line, branch_line, children_of, line_of

_OFFTAKE_TOLERANCE_M = 1e-6


def nearest_node(node_chainage_m: np.ndarray, chainage_m: float) -> int:
    """Index of the node nearest to ``chainage_m`` (the loader puts a node at every
    offtake and fitting, so this is the node at that chainage)."""
    return int(np.argmin(np.abs(np.asarray(node_chainage_m, dtype=float) - chainage_m)))


def node_point_k(study: Study, node_chainage_m: np.ndarray,
                 line: Line | None = None) -> np.ndarray:
    """Fitting loss coefficient K [-] at each node of the trunk (or of ``line``); fittings
    at one node add up; the entrance, junction and exit are not included."""
    node_k = np.zeros(len(node_chainage_m))
    for fitting in (study.fittings if line is None else line.fittings):
        node_k[nearest_node(node_chainage_m, fitting.chainage_m)] += fitting.k
    return node_k


def downstream_of(start_chainage_m: np.ndarray, point_chainage_m: np.ndarray) -> np.ndarray:
    """(n, p) True where a point (an offtake, a junction) lies strictly downstream of a
    pipe starting at each chainage, i.e. where that pipe carries the point's flow: a
    point at c is upstream of every pipe starting at c or later."""
    start = np.asarray(start_chainage_m, dtype=float).reshape(-1)
    points = np.asarray(point_chainage_m, dtype=float).reshape(-1)
    return points[None, :] > start[:, None] + _OFFTAKE_TOLERANCE_M


def offtakes_downstream(study: Study, start_chainage_m: np.ndarray) -> np.ndarray:
    """(n, n_offtakes) True where a trunk offtake lies strictly downstream of a pipe
    starting at each chainage (:func:`downstream_of`)."""
    return downstream_of(start_chainage_m, [o.chainage_m for o in study.offtakes])


def carried_flow_m3_s(outlet_flow_m3_s: float | np.ndarray, offtake_factor: float,
                      carried: np.ndarray, offtake_flow_m3_s: np.ndarray) -> np.ndarray:
    """Flow [m^3/s] of pipes carrying the marked offtakes: outlet flow plus the scenario's
    share of each carried offtake, added offtake by offtake.

    ``carried`` is (n, n_offtakes); ``outlet_flow_m3_s`` broadcasts against (n,) (e.g. a
    column of S sample flows gives (S, n))."""
    flows = np.asarray(outlet_flow_m3_s, dtype=float) + np.zeros(carried.shape[0])
    for column, flow in enumerate(np.asarray(offtake_flow_m3_s, dtype=float)):
        flows = flows + np.where(carried[:, column], offtake_factor * flow, 0.0)
    return flows


def flow_below_m3_s(study: Study, scenario: Scenario, start_chainage_m: np.ndarray,
                    outlet_flow_m3_s: float | None = None) -> np.ndarray:
    """Flow [m^3/s] in the trunk's pipe starting at each chainage: outlet flow plus the
    scenario's share of every offtake strictly downstream of that start (contract
    section 5), plus the inflow of every branch leaving downstream (section 7)."""
    return line_flows_m3_s(study, scenario, TRUNK, start_chainage_m, outlet_flow_m3_s)


def line_flows_m3_s(study: Study, scenario: Scenario, line: str | Line,
                    start_chainage_m: np.ndarray,
                    delivery_flow_m3_s: float | None = None,
                    inflows_m3_s: Mapping[str, float] | None = None) -> np.ndarray:
    """Flow [m^3/s] in the pipe of line ``line`` (the trunk ``"main"`` or a branch)
    starting at each chainage of that line: its delivery flow (``delivery_flow_m3_s``
    replaces it, e.g. to search a capacity), the scenario's share of each of its
    offtakes strictly downstream, and the inflow of each branch leaving it strictly
    downstream (contract sections 5 and 7). ``inflows_m3_s`` may give the inflow of
    branches already worked out (a walk of the tree from its ends), by name; the others
    are found by :func:`branch_inflow_m3_s`."""
    line = line if isinstance(line, Line) else line_of(study, line)
    start = np.asarray(start_chainage_m, dtype=float)
    delivery = line.delivery_flow_m3_s(scenario) if delivery_flow_m3_s is None \
        else delivery_flow_m3_s
    carried = downstream_of(start, [o.chainage_m for o in line.offtakes])
    flows = carried_flow_m3_s(delivery, scenario.offtake_factor, carried,
                              np.array([o.flow_m3_s for o in line.offtakes], dtype=float))
    children = [child for child in study.branches if child.parent == line.name]
    if children:
        known = inflows_m3_s or {}
        inflow = np.array([known[c.name] if c.name in known else
                           branch_inflow_m3_s(study, scenario, branch_line(c))
                           for c in children])
        below = downstream_of(start, [c.at_chainage_m for c in children])
        flows = flows + below.astype(float) @ inflow
    return flows.reshape(start.shape)


def branch_inflow_m3_s(study: Study, scenario: Scenario, line: str | Line) -> float:
    """Flow [m^3/s] entering line ``line`` at its start (a branch at its junction, the
    trunk at the source): its delivery, its offtakes' share and every branch below it."""
    line = line if isinstance(line, Line) else line_of(study, line)
    return float(line_flows_m3_s(study, scenario, line, np.array([-1.0]))[0])


def inflow_m3_s(study: Study, scenario: Scenario, outlet_flow_m3_s: float | None = None) -> float:
    """Flow [m^3/s] drawn from the source: outlet flow plus every offtake (and, on a
    scheme, every branch's inflow)."""
    outlet = scenario.outlet_flow_m3_s if outlet_flow_m3_s is None else outlet_flow_m3_s
    total = outlet + scenario.offtake_factor * sum(o.flow_m3_s for o in study.offtakes)
    for child in children_of(study, TRUNK):
        total += branch_inflow_m3_s(study, scenario, child)
    return total


def friction_gradient(study: Study, scenario: Scenario, flow_m3_s: np.ndarray,
                      diameter_m: np.ndarray, roughness_mm: np.ndarray,
                      hazen_williams_c: np.ndarray) -> np.ndarray:
    """Friction gradient J [m/m] by the study's method, with the scenario's roughness.

    Arguments broadcast: e.g. flows of shape (n, 1) against options of shape (m,) give
    the (n, m) matrix the optimiser uses.
    """
    if study.friction is Friction.HAZEN_WILLIAMS:
        return hazen_williams_gradient(flow_m3_s, diameter_m, hazen_williams_c,
                                       study.hazen_williams_coefficient)
    return gradient_with_roughness(study, flow_m3_s, diameter_m,
                                   scenario.effective_roughness_mm(roughness_mm),
                                   hazen_williams_c)


def gradient_with_roughness(study: Study, flow_m3_s: np.ndarray, diameter_m: np.ndarray,
                            roughness_mm: np.ndarray, hazen_williams_c: np.ndarray
                            ) -> np.ndarray:
    """Friction gradient J [m/m] by the study's method with roughness given directly
    (sensitivity studies replace the catalogue's roughness). Arguments broadcast."""
    if study.friction is Friction.HAZEN_WILLIAMS:
        return hazen_williams_gradient(flow_m3_s, diameter_m, hazen_williams_c,
                                       study.hazen_williams_coefficient)
    return darcy_weisbach_gradient(flow_m3_s, diameter_m,
                                   np.asarray(roughness_mm, dtype=float) / 1000.0,
                                   study.kinematic_viscosity_m2_s)
