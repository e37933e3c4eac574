"""Hydraulics of one design along the analysis grid, for the check (contract section 5).

The check's working part: the design's data gathered per grid segment once, the energy
line of a scenario (:mod:`optimiser.hydraulics.gradeline`), its check points on both
sides of every node, and the gravity capacity by a root search on the least margin.
One :class:`DesignHydraulics` covers one line of the study (the trunk, or a branch of a
scheme, contract section 7; :mod:`.scheme_check` links the lines at their junctions).
Like the check, it reads only the study and the design, never the optimiser's
structures.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from optimiser.analysis.flows import friction_gradient, line_flows_m3_s, node_point_k
from optimiser.analysis.grid import Grid, build_grid
from optimiser.analysis.limits import node_min_pressure_m
from optimiser.analysis.static_line import static_line_m
from optimiser.analysis.tanks import (
    energy_with_tanks,
    inflow_energy_m,
    static_levels_m,
    tank_nodes,
    tanks_of,
)
from optimiser.hydraulics.gradeline import (
    energy_along_chain,
    hydraulic_grade_m,
    outlet_energy_m,
    static_head_m,
)
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Design, Scenario, Study
from optimiser.model.lines import Line, children_of, trunk_line

_SAME = 1e-12
_ONE, _UPSTREAM, _DOWNSTREAM = 0, 1, 2
_SIDE_NAMES = np.array(["", "upstream", "downstream"], dtype=object)


@dataclass(frozen=True)
class ScenarioArrays:
    flow_m3_s: np.ndarray
    velocity_m_s: np.ndarray
    gradient: np.ndarray
    energy_start_m: np.ndarray
    energy_end_m: np.ndarray
    after_final_fitting_m: float
    outlet_energy_m: float
    tank_inflow_energy_m: np.ndarray | None = None
    """Energy left to fill each tank (arriving energy - inlet loss) [m]; None: no tank."""


@dataclass(frozen=True)
class PointArrays:
    """Check points in route order: node index, side (index of ``_SIDE_NAMES``), energy,
    velocity, pipe segment."""

    node: np.ndarray
    side: np.ndarray
    energy_m: np.ndarray
    velocity_m_s: np.ndarray
    segment: np.ndarray


def line_piece_indices(study: Study, design: Design, line: Line) -> np.ndarray:
    """Indices in ``design.pieces`` of the pieces of ``line`` (every piece on a single
    route, whatever its label)."""
    if not study.is_scheme:
        return np.arange(len(design.pieces))
    return np.array([i for i, piece in enumerate(design.pieces) if piece.branch == line.name],
                    dtype=int)


class DesignHydraulics:
    """Design data of one line (the trunk unless ``line`` is given) gathered per segment
    once; scenarios evaluated on demand.

    The grid has a node at every junction of a branch leaving this line (the loader puts
    one there; inserted here if not), so that flows change and points are checked there.
    ``piece_index`` maps the line's own pieces to their index in ``design.pieces``.
    """

    def __init__(self, study: Study, design: Design, line: Line | None = None,
                 start_static_level_m: float | None = None) -> None:
        self.study = study
        self.design = design
        self.line = trunk_line(study) if line is None else line
        self.piece_index = line_piece_indices(study, design, self.line)
        if not len(self.piece_index):
            raise ValueError(f"the design has no pieces on branch '{self.line.name}'")
        own = Design(tuple(design.pieces[i] for i in self.piece_index))
        tanks = tanks_of(study, design, self.line.name)
        # Every junction and tank stands at a node of the grid (a tank of a --tanks file
        # may not be a survey point).
        nodes = [child.at_chainage_m for child in children_of(study, self.line.name)]
        nodes += [t.chainage_m for t in tanks]
        self.grid: Grid = build_grid(self.line.route.with_nodes(nodes), own.boundaries_m)
        self.tanks = tank_nodes(tanks, self.grid.node_chainage_m)
        top = static_line_m(study) if start_static_level_m is None else start_static_level_m
        self.static_level_m = static_levels_m(top, len(self.grid.segment_length_m),
                                              self.tanks)
        options = [own.pieces[p].option for p in self.grid.segment_piece]
        self.diameter_m = np.array([o.internal_diameter_m for o in options])
        self.roughness_mm = np.array([o.roughness_mm for o in options])
        self.hazen_williams_c = np.array(
            [np.nan if o.hazen_williams_c is None else o.hazen_williams_c for o in options])
        self.node_point_k = node_point_k(study, self.grid.node_chainage_m, self.line)
        self.node_min_pressure_m = node_min_pressure_m(study, self.grid.node_chainage_m,
                                                       self.line)

    def evaluate(self, scenario: Scenario, outlet_flow_m3_s: float | None = None,
                 start_energy_m: float | None = None,
                 inflows_m3_s: Mapping[str, float] | None = None) -> ScenarioArrays:
        """Flows, velocities and the energy line of the line in ``scenario``.

        ``outlet_flow_m3_s`` replaces the line's delivery flow; ``start_energy_m`` is the
        energy arriving at its start (the source level for the trunk; for a branch the
        parent's energy arriving at the junction), before ``start_k`` x V^2/2g;
        ``inflows_m3_s`` the inflows of branches below, where known."""
        study, line = self.study, self.line
        flow = line_flows_m3_s(study, scenario, line, self.grid.start_m, outlet_flow_m3_s,
                               inflows_m3_s)
        velocity = velocity_m_s(flow, self.diameter_m)
        gradient = friction_gradient(study, scenario, flow, self.diameter_m,
                                     self.roughness_mm, self.hazen_williams_c)
        start_level = scenario.source_level_m if start_energy_m is None else start_energy_m
        inflow = None
        if self.tanks.any:
            rules = study.tank_rules
            start, end = energy_with_tanks(
                start_level, line.start_k, rules.outlet_k, self.grid.segment_length_m,
                gradient, line.local_k_per_km, velocity, self.node_point_k, self.tanks)
            inflow = inflow_energy_m(end, velocity, rules.inlet_k, self.tanks)
        else:
            start, end = energy_along_chain(
                start_level, line.start_k, self.grid.segment_length_m,
                gradient, line.local_k_per_km, velocity, self.node_point_k)
        after_fitting, outlet = outlet_energy_m(end[-1], velocity_head_m(velocity[-1]),
                                                self.node_point_k[-1], line.exit_k)
        return ScenarioArrays(flow, velocity, gradient, start, end, float(after_fitting),
                               float(outlet), inflow)

    def energy_arriving_m(self, arrays: ScenarioArrays, chainage_m: float) -> float:
        """Energy [m] arriving at the node at ``chainage_m`` (its upstream side, before a
        fitting there): the end of the segment that ends at that node."""
        node = int(np.argmin(np.abs(self.grid.node_chainage_m - chainage_m)))
        if node == 0:
            raise ValueError(f"a junction at {chainage_m} m is not inside line "
                             f"'{self.line.name}'")
        return float(arrays.energy_end_m[node - 1])

    def point_arrays(self, arrays: ScenarioArrays) -> PointArrays:
        """Check points: both sides of every node where they differ (contract section 5).

        Side "upstream" of node i is the end of segment i - 1, "downstream" its start
        after the node's point loss (past the last node's fitting at the outlet). Where
        the two agree in energy and velocity the node is one point (side ""), taken from
        the downstream pipe, or from the last pipe at the outlet node."""
        n = len(self.grid.segment_length_m)
        node = np.arange(n + 1)
        up_segment = np.maximum(node - 1, 0)
        down_segment = np.minimum(node, n - 1)
        up_energy = arrays.energy_end_m[up_segment]
        down_energy = np.append(arrays.energy_start_m, arrays.after_final_fitting_m)
        up_velocity = arrays.velocity_m_s[up_segment]
        down_velocity = arrays.velocity_m_s[down_segment]
        one = (np.abs(up_energy - down_energy) <= _SAME) & \
            (np.abs(up_velocity - down_velocity) <= _SAME)
        one[0] = True  # nothing upstream of the source
        keep_up = one.copy()
        keep_up[:-1] = False  # a single point is the downstream side, but at the outlet
        # Two slots per node, upstream then downstream; a single point takes the second.
        energy = np.column_stack([up_energy, np.where(keep_up, up_energy, down_energy)])
        velocity = np.column_stack([up_velocity,
                                    np.where(keep_up, up_velocity, down_velocity)])
        segment = np.column_stack([up_segment, np.where(keep_up, up_segment, down_segment)])
        side = np.column_stack([np.full(n + 1, _UPSTREAM), np.where(one, _ONE, _DOWNSTREAM)])
        used = np.column_stack([~one, np.ones(n + 1, dtype=bool)])
        return PointArrays(np.repeat(node, 2)[used.ravel()], side[used], energy[used],
                            velocity[used], segment[used])

    def pressure_m(self, points: PointArrays) -> np.ndarray:
        """Pressure head [m] at each check point: HGL - pipe level."""
        hgl = hydraulic_grade_m(points.energy_m, points.velocity_m_s)
        return hgl - self.grid.node_pipe_level_m[points.node]

    def points(self, arrays: ScenarioArrays) -> pd.DataFrame:
        """The check points of :meth:`point_arrays` as a table."""
        return pd.DataFrame(self.point_columns(arrays))

    def point_columns(self, arrays: ScenarioArrays) -> dict[str, np.ndarray]:
        """The columns of :meth:`points` (a scheme joins every line's before making one
        table)."""
        grid = self.grid
        at = self.point_arrays(arrays)
        node = at.node
        hgl = hydraulic_grade_m(at.energy_m, at.velocity_m_s)
        pipe = grid.node_pipe_level_m[node]
        top_water = self.static_level_m[at.segment]
        return {
            "chainage_m": grid.node_chainage_m[node],
            "side": _SIDE_NAMES[at.side],
            "label": np.asarray(grid.node_label, dtype=object)[node],
            "ground_m": grid.node_ground_m[node],
            "pipe_level_m": pipe,
            "energy_m": at.energy_m,
            "hgl_m": hgl,
            "pressure_m": hgl - pipe,
            "static_pressure_m": static_head_m(top_water, pipe),
            "min_pressure_m": self.node_min_pressure_m[node],
            "velocity_m_s": at.velocity_m_s,
            "flow_m3_s": arrays.flow_m3_s[at.segment],
            "piece": self.piece_index[grid.segment_piece[at.segment]],
            "branch": np.full(len(node), self.line.name, dtype=object),
        }

    def segments(self, arrays: ScenarioArrays) -> pd.DataFrame:
        return pd.DataFrame(self.segment_columns(arrays))

    def segment_columns(self, arrays: ScenarioArrays) -> dict[str, np.ndarray]:
        """The columns of :meth:`segments`."""
        grid = self.grid
        return {
            "from_m": grid.start_m, "to_m": grid.end_m, "length_m": grid.segment_length_m,
            "piece": self.piece_index[grid.segment_piece], "flow_m3_s": arrays.flow_m3_s,
            "velocity_m_s": arrays.velocity_m_s, "gradient_m_per_km": arrays.gradient * 1000,
            "friction_loss_m": arrays.gradient * grid.segment_length_m,
            "branch": np.full(len(grid.start_m), self.line.name, dtype=object),
        }

    def least_pressure_margin_m(self, arrays: ScenarioArrays) -> float:
        """Smallest pressure head less its minimum [m] over the line's check points."""
        points = self.point_arrays(arrays)
        margin = float((self.pressure_m(points) - self.node_min_pressure_m[points.node]).min())
        if arrays.tank_inflow_energy_m is not None:  # every tank must still fill
            margin = min(margin, float((arrays.tank_inflow_energy_m
                                        - self.tanks.level_m).min()))
        return margin

    def static_level_at_m(self, chainage_m: float) -> float:
        """Static line [m] at a node of the line (a junction: no tank stands there)."""
        node = int(np.argmin(np.abs(self.grid.node_chainage_m - chainage_m)))
        return float(self.static_level_m[min(node, len(self.static_level_m) - 1)])
