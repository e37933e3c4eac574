"""Hydraulics of one design along the analysis grid, for the check (contract section 5).

The check's working part: the design's data gathered per grid segment once, the energy
line of a scenario (:mod:`optimiser.hydraulics.gradeline`), its check points on both
sides of every node, and the gravity capacity by a root search on the least margin.
Like the check, it reads only the study and the design, never the optimiser's
structures.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from optimiser.analysis.flows import flow_below_m3_s, friction_gradient, node_point_k
from optimiser.analysis.grid import Grid, design_grid
from optimiser.analysis.limits import node_min_pressure_m
from optimiser.analysis.static_line import static_line_m
from optimiser.hydraulics.gradeline import (
    energy_along_chain,
    hydraulic_grade_m,
    outlet_energy_m,
    static_head_m,
)
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Design, Scenario, Study

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


@dataclass(frozen=True)
class PointArrays:
    """Check points in route order: node index, side (index of ``_SIDE_NAMES``), energy,
    velocity, pipe segment."""

    node: np.ndarray
    side: np.ndarray
    energy_m: np.ndarray
    velocity_m_s: np.ndarray
    segment: np.ndarray


class DesignHydraulics:
    """Design data gathered per segment once; scenarios evaluated on demand."""

    def __init__(self, study: Study, design: Design) -> None:
        self.study = study
        self.design = design
        self.grid: Grid = design_grid(study, design)
        options = [design.pieces[p].option for p in self.grid.segment_piece]
        self.diameter_m = np.array([o.internal_diameter_m for o in options])
        self.roughness_mm = np.array([o.roughness_mm for o in options])
        self.hazen_williams_c = np.array(
            [np.nan if o.hazen_williams_c is None else o.hazen_williams_c for o in options])
        self.node_point_k = node_point_k(study, self.grid.node_chainage_m)
        self.node_min_pressure_m = node_min_pressure_m(study, self.grid.node_chainage_m)

    def evaluate(self, scenario: Scenario, outlet_flow_m3_s: float | None = None
                 ) -> ScenarioArrays:
        study = self.study
        flow = flow_below_m3_s(study, scenario, self.grid.start_m, outlet_flow_m3_s)
        velocity = velocity_m_s(flow, self.diameter_m)
        gradient = friction_gradient(study, scenario, flow, self.diameter_m,
                                     self.roughness_mm, self.hazen_williams_c)
        start, end = energy_along_chain(
            scenario.source_level_m, study.source.entrance_k, self.grid.segment_length_m,
            gradient, study.local_k_per_km, velocity, self.node_point_k)
        after_fitting, outlet = outlet_energy_m(end[-1], velocity_head_m(velocity[-1]),
                                                self.node_point_k[-1], study.outlet.exit_k)
        return ScenarioArrays(flow, velocity, gradient, start, end, float(after_fitting),
                               float(outlet))

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
        grid = self.grid
        at = self.point_arrays(arrays)
        node = at.node
        hgl = hydraulic_grade_m(at.energy_m, at.velocity_m_s)
        pipe = grid.node_pipe_level_m[node]
        top_water = static_line_m(self.study)
        return pd.DataFrame({
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
            "piece": grid.segment_piece[at.segment],
        })

    def segments(self, arrays: ScenarioArrays) -> pd.DataFrame:
        grid = self.grid
        return pd.DataFrame({
            "from_m": grid.start_m, "to_m": grid.end_m, "length_m": grid.segment_length_m,
            "piece": grid.segment_piece, "flow_m3_s": arrays.flow_m3_s,
            "velocity_m_s": arrays.velocity_m_s, "gradient_m_per_km": arrays.gradient * 1000,
            "friction_loss_m": arrays.gradient * grid.segment_length_m,
        })

    def least_margin_m(self, scenario: Scenario, outlet_flow_m3_s: float,
                       outlet_only: bool) -> float:
        """Smallest of outlet margin and (unless outlet_only) pressure margins [m]."""
        arrays = self.evaluate(scenario, outlet_flow_m3_s)
        margin = arrays.outlet_energy_m - self.study.outlet.required_head_m
        if outlet_only:
            return margin
        points = self.point_arrays(arrays)
        pressure_margin = self.pressure_m(points) - self.node_min_pressure_m[points.node]
        return min(margin, float(pressure_margin.min()))

    def capacity_m3_s(self, scenario: Scenario, outlet_only: bool) -> float | None:
        """Largest outlet flow meeting the outlet head (and pressure minima), by Brent's
        method on a margin that falls monotonically with flow. None if even zero outlet
        flow fails; offtakes stay at their scenario flows."""
        def margin(q: float) -> float:
            return self.least_margin_m(scenario, q, outlet_only)
        if margin(0.0) < 0.0:
            return None
        high = max(scenario.outlet_flow_m3_s, 1e-3)
        for _ in range(60):
            if margin(high) < 0.0:
                break
            high *= 2.0
        else:
            return float("inf")
        return float(brentq(margin, 0.0, high, xtol=1e-13, rtol=4 * np.finfo(float).eps))
