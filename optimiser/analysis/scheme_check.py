"""The check walking a whole study: the trunk, then every branch of a scheme, linked at
their junctions (contract section 7).

A single route is a scheme of one line, so the check has one path. Per scenario, the
lines are evaluated parents first (:func:`optimiser.model.lines.study_lines`):

- the trunk from the source: E = source level - entrance_k V^2/2g of its first pipe;
- a branch from its junction: E = the parent's energy arriving at the junction node (its
  upstream side, before a fitting of the parent's there) - junction_k V^2/2g of the
  branch's first pipe;
- along every line, section 5 (:class:`.design_hydraulics.DesignHydraulics`), and at its
  end: energy - exit_k V^2/2g of its last pipe >= its required head.

Delivery points and their flow capacity: the uncontrolled flow of a delivery point is the
delivery flow at which its energy after the exit loss equals its required head, the rest
of the scenario unchanged (contract section 8, `outlets`). The extra flow also runs
through every line above it up to its junction and through no other pipe, so on a
scheme every delivery point is searched on that path alone, all at once
(:mod:`.delivery_flow`), and the trunk's capacity against every limit of the tree
re-runs only the trunk (:mod:`.tree_capacity`); the general search re-evaluates the
lines of the path (a single route, and the reference of the tests). Like the rest of the
check it reads only the study and the design.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from functools import partial

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from optimiser.analysis.delivery_flow import (
    PathStart,
    delivery_paths,
    path_starts,
    uncontrolled_flows_m3_s,
)
from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.analysis.flows import line_flows_m3_s
from optimiser.analysis.tree_capacity import tree_margins
from optimiser.model import Design, Scenario, Study
from optimiser.model.lines import Line, study_lines


@dataclass(frozen=True)
class DeliveryPoint:
    """The end of one line in one scenario (an object of the JSON's ``outlets``)."""

    branch: str
    chainage_m: float
    flow_m3_s: float
    energy_m: float
    """Energy after the exit loss [m]."""
    required_head_m: float
    uncontrolled_flow_m3_s: float | None = None
    """Delivery flow at which ``energy_m`` would equal ``required_head_m`` (None when not
    computed, or when even no delivery flow meets it; inf when no limit is in reach)."""

    @property
    def margin_m(self) -> float:
        return self.energy_m - self.required_head_m


def with_delivery(scenario: Scenario, line: Line, flow_m3_s: float) -> Scenario:
    """``scenario`` with ``line``'s delivery flow set to ``flow_m3_s``, all else unchanged."""
    if line.is_trunk:
        return dataclasses.replace(scenario, outlet_flow_m3_s=flow_m3_s)
    return dataclasses.replace(
        scenario, branch_flows_m3_s=((line.name, flow_m3_s), *scenario.branch_flows_m3_s))


class SchemeHydraulics:
    """One :class:`DesignHydraulics` per line of the study, evaluated parents first."""

    def __init__(self, study: Study, design: Design) -> None:
        self.study = study
        self.lines = study_lines(study)
        names = {line.name for line in self.lines}
        unknown = [name for name in design.branch_names if name not in names]
        if study.is_scheme and unknown:
            raise ValueError(f"the design has pieces on branches the study does not have: "
                             f"{', '.join(unknown)}")
        # A branch's static line starts at its parent's at the junction: the source's top
        # water level, or the water level of the last break-pressure tank above it.
        self.parts: dict[str, DesignHydraulics] = {}
        for line in self.lines:
            static = None if line.parent is None else \
                self.parts[line.parent].static_level_at_m(line.at_chainage_m)
            self.parts[line.name] = DesignHydraulics(study, design, line, static)
        self._by_name = {line.name: line for line in self.lines}
        self._inflows: dict[Scenario, dict[str, float]] = {}
        self._paths: dict[str, PathStart] | None = None

    @property
    def trunk(self) -> DesignHydraulics:
        return self.parts[self.lines[0].name]

    def path(self, name: str) -> set[str]:
        """Names of the lines from the trunk down to line ``name``, both included."""
        names = set()
        line: Line | None = self._by_name[name]
        while line is not None:
            names.add(line.name)
            line = None if line.parent is None else self._by_name[line.parent]
        return names

    def inflows_m3_s(self, scenario: Scenario, names: set[str] | None = None,
                     known: Mapping[str, float] | None = None) -> dict[str, float]:
        """Inflow [m^3/s] at the start of every line (or of the lines in ``names``, the
        others taken from ``known``), worked from the ends of the tree up, so that the
        flow rule (:func:`optimiser.analysis.flows.line_flows_m3_s`) never walks a
        subtree twice."""
        inflows = dict(known or {})
        for line in reversed(self.lines):
            if names is None or line.name in names:
                inflows[line.name] = float(line_flows_m3_s(
                    self.study, scenario, line, np.array([-1.0]), inflows_m3_s=inflows)[0])
        return inflows

    def evaluate(self, scenario: Scenario, only: set[str] | None = None,
                 inflows: Mapping[str, float] | None = None) -> dict[str, ScenarioArrays]:
        """Arrays of every line (or of the lines in ``only``, which must hold each one's
        parent), parents first; each branch starts from its parent's energy arriving at
        the junction. ``inflows`` (:meth:`inflows_m3_s`) when already known."""
        if inflows is None:
            inflows = self.inflows_m3_s(scenario)
        arrays: dict[str, ScenarioArrays] = {}
        for line in self.lines:
            if only is not None and line.name not in only:
                continue
            start = None
            if line.parent is not None:
                start = self.parts[line.parent].energy_arriving_m(arrays[line.parent],
                                                                  line.at_chainage_m)
            arrays[line.name] = self.parts[line.name].evaluate(
                scenario, start_energy_m=start, inflows_m3_s=inflows)
        return arrays

    def points(self, arrays: dict[str, ScenarioArrays]) -> pd.DataFrame:
        """Check points of every line, line after line (column ``branch``)."""
        return _joined([self.parts[name].point_columns(part) for name, part in arrays.items()])

    def segments(self, arrays: dict[str, ScenarioArrays]) -> pd.DataFrame:
        return _joined([self.parts[name].segment_columns(part)
                        for name, part in arrays.items()])

    def outlet_margin_m(self, name: str, arrays: dict[str, ScenarioArrays]) -> float:
        """Energy after the exit loss less the required head at the end of line ``name``."""
        return arrays[name].outlet_energy_m - self._by_name[name].required_head_m

    def delivery_points(self, scenario: Scenario, arrays: dict[str, ScenarioArrays],
                        capacity: bool) -> list[DeliveryPoint]:
        """The delivery point of every line; with ``capacity``, its uncontrolled flow."""
        flows = self.uncontrolled_flows_m3_s(scenario, arrays) if capacity \
            else [None] * len(self.lines)
        return [DeliveryPoint(
            line.name, line.route.total_chainage_m, line.delivery_flow_m3_s(scenario),
            arrays[line.name].outlet_energy_m, line.required_head_m, flow)
            for line, flow in zip(self.lines, flows, strict=True)]

    def uncontrolled_flows_m3_s(self, scenario: Scenario, arrays: dict[str, ScenarioArrays]
                                ) -> list[float | None]:
        """Every line's uncontrolled flow in ``scenario`` (its arrays ``arrays``): on a
        scheme all at once on the paths to the delivery points (:mod:`.delivery_flow`),
        by the general search on a single route or where that search did not converge."""
        if not self.study.is_scheme:
            return [self.capacity_m3_s(scenario, line.name, outlet_only=True)
                    for line in self.lines]
        if self._paths is None:
            self._paths = path_starts(self.parts, self.lines, self.study.tank_rules.outlet_k)
        flows = uncontrolled_flows_m3_s(self.study, delivery_paths(
            self.parts, self._by_name, self._paths, scenario, arrays))
        return [self.capacity_m3_s(scenario, line.name, outlet_only=True)
                if flow is not None and np.isnan(flow) else flow
                for line, flow in zip(self.lines, flows, strict=True)]

    def least_margin_m(self, scenario: Scenario, name: str, flow_m3_s: float,
                       outlet_only: bool) -> float:
        """With line ``name`` delivering ``flow_m3_s``: its outlet margin [m] if
        ``outlet_only``, else the smallest outlet and pressure margin of the whole tree."""
        moved = with_delivery(scenario, self._by_name[name], flow_m3_s)
        path = self.path(name)
        # Only the lines from the source to this delivery point carry the change.
        if scenario not in self._inflows:
            self._inflows[scenario] = self.inflows_m3_s(scenario)
        inflows = self.inflows_m3_s(moved, path, self._inflows[scenario])
        if outlet_only:
            return self.outlet_margin_m(name, self.evaluate(moved, path, inflows))
        arrays = self.evaluate(moved, inflows=inflows)
        margins = [self.outlet_margin_m(n, arrays) for n in arrays]
        margins += [self.parts[n].least_pressure_margin_m(part) for n, part in arrays.items()]
        return min(margins)

    def trunk_tree_margin(self, scenario: Scenario, arrays: dict[str, ScenarioArrays] | None
                          ) -> Callable[[float], float]:
        """The least margin of the whole tree as a function of the trunk's delivery
        flow, re-running only the trunk (:mod:`.tree_capacity`); ``arrays`` are the
        scenario's (evaluated here if not given)."""
        branches = tree_margins(self.parts, self.lines,
                                self.evaluate(scenario) if arrays is None else arrays)
        trunk, line = self.trunk, self.lines[0]
        if scenario not in self._inflows:
            self._inflows[scenario] = self.inflows_m3_s(scenario)
        inflows = self._inflows[scenario]

        def least(q: float) -> float:
            own = trunk.evaluate(scenario, outlet_flow_m3_s=q, inflows_m3_s=inflows)
            return min(own.outlet_energy_m - line.required_head_m,
                       trunk.least_pressure_margin_m(own), branches.least_m(own.energy_end_m))
        return least

    def capacity_m3_s(self, scenario: Scenario, name: str, outlet_only: bool,
                      arrays: dict[str, ScenarioArrays] | None = None) -> float | None:
        """Largest delivery flow of line ``name`` meeting its outlet head (and, unless
        ``outlet_only``, every outlet head and pressure minimum of the tree), by Brent's
        method on a margin that falls monotonically with that flow. None if even zero
        delivery fails; every other flow stays at the scenario's. ``arrays``: the
        scenario's, where already evaluated."""
        seen: dict[float, float] = {}  # Brent's method asks again for its bracket's ends
        least: Callable[[float], float] = partial(self.least_margin_m, scenario, name,
                                                  outlet_only=outlet_only)
        if self.study.is_scheme and not outlet_only and name == self.lines[0].name:
            least = self.trunk_tree_margin(scenario, arrays)

        def margin(q: float) -> float:
            if q not in seen:
                seen[q] = least(q)
            return seen[q]
        at_zero = margin(0.0)
        if at_zero < 0.0:
            return None
        low, high = 0.0, max(self._by_name[name].delivery_flow_m3_s(scenario), 1e-3)
        if self.study.is_scheme:
            # Each search costs evaluations of a whole path of the tree: bracket the root
            # from a head loss growing with the square of the flow (a first guess only;
            # the bracket is verified below).
            at_high = margin(high)
            if at_high >= 0.0:
                low = high
                if at_zero > at_high:
                    high = max(high * 1.2 * np.sqrt(at_zero / (at_zero - at_high)), 2 * high)
                else:
                    high *= 2.0
        for _ in range(60):
            if margin(high) < 0.0:
                break
            if self.study.is_scheme:
                low = high
            high *= 2.0
        else:
            return float("inf")
        return float(brentq(margin, low, high, xtol=1e-13, rtol=4 * np.finfo(float).eps))


def _joined(columns: list[dict[str, np.ndarray]]) -> pd.DataFrame:
    """One table of the lines' columns, line after line (one table, not one a line
    joined: the same rows, much faster on a scheme of many lines)."""
    if len(columns) == 1:
        return pd.DataFrame(columns[0])
    return pd.DataFrame({key: np.concatenate([part[key] for part in columns])
                         for key in columns[0]})
