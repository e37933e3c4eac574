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
through every line above it up to its junction, so the search re-evaluates that path of
the tree. Like the rest of the check it reads only the study and the design.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
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

    def evaluate(self, scenario: Scenario, only: set[str] | None = None
                 ) -> dict[str, ScenarioArrays]:
        """Arrays of every line (or of the lines in ``only``, which must hold each one's
        parent), parents first; each branch starts from its parent's energy arriving at
        the junction."""
        arrays: dict[str, ScenarioArrays] = {}
        for line in self.lines:
            if only is not None and line.name not in only:
                continue
            start = None
            if line.parent is not None:
                start = self.parts[line.parent].energy_arriving_m(arrays[line.parent],
                                                                  line.at_chainage_m)
            arrays[line.name] = self.parts[line.name].evaluate(scenario, start_energy_m=start)
        return arrays

    def points(self, arrays: dict[str, ScenarioArrays]) -> pd.DataFrame:
        """Check points of every line, line after line (column ``branch``)."""
        tables = [self.parts[name].points(part) for name, part in arrays.items()]
        return tables[0] if len(tables) == 1 else pd.concat(tables, ignore_index=True)

    def segments(self, arrays: dict[str, ScenarioArrays]) -> pd.DataFrame:
        tables = [self.parts[name].segments(part) for name, part in arrays.items()]
        return tables[0] if len(tables) == 1 else pd.concat(tables, ignore_index=True)

    def outlet_margin_m(self, name: str, arrays: dict[str, ScenarioArrays]) -> float:
        """Energy after the exit loss less the required head at the end of line ``name``."""
        return arrays[name].outlet_energy_m - self._by_name[name].required_head_m

    def delivery_points(self, scenario: Scenario, arrays: dict[str, ScenarioArrays],
                        capacity: bool) -> list[DeliveryPoint]:
        """The delivery point of every line; with ``capacity``, its uncontrolled flow."""
        return [DeliveryPoint(
            line.name, line.route.total_chainage_m, line.delivery_flow_m3_s(scenario),
            arrays[line.name].outlet_energy_m, line.required_head_m,
            self.capacity_m3_s(scenario, line.name, outlet_only=True) if capacity else None)
            for line in self.lines]

    def least_margin_m(self, scenario: Scenario, name: str, flow_m3_s: float,
                       outlet_only: bool) -> float:
        """With line ``name`` delivering ``flow_m3_s``: its outlet margin [m] if
        ``outlet_only``, else the smallest outlet and pressure margin of the whole tree."""
        moved = with_delivery(scenario, self._by_name[name], flow_m3_s)
        if outlet_only:
            return self.outlet_margin_m(name, self.evaluate(moved, self.path(name)))
        arrays = self.evaluate(moved)
        margins = [self.outlet_margin_m(n, arrays) for n in arrays]
        margins += [self.parts[n].least_pressure_margin_m(part) for n, part in arrays.items()]
        return min(margins)

    def capacity_m3_s(self, scenario: Scenario, name: str, outlet_only: bool
                      ) -> float | None:
        """Largest delivery flow of line ``name`` meeting its outlet head (and, unless
        ``outlet_only``, every outlet head and pressure minimum of the tree), by Brent's
        method on a margin that falls monotonically with that flow. None if even zero
        delivery fails; every other flow stays at the scenario's."""
        def margin(q: float) -> float:
            return self.least_margin_m(scenario, name, q, outlet_only)
        if margin(0.0) < 0.0:
            return None
        high = max(self._by_name[name].delivery_flow_m3_s(scenario), 1e-3)
        for _ in range(60):
            if margin(high) < 0.0:
                break
            high *= 2.0
        else:
            return float("inf")
        return float(brentq(margin, 0.0, high, xtol=1e-13, rtol=4 * np.finfo(float).eps))
