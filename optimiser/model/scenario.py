"""Demand scenarios: flows, source level and pipe condition that a design must satisfy."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from optimiser.model.validation import at_least, finite, refuse


@dataclass(frozen=True)
class Scenario:
    """One operating case. ``source_level_m`` is resolved (scenario value or the source's)."""

    name: str
    outlet_flow_m3_s: float
    source_level_m: float
    offtake_factor: float = 1.0
    roughness_mm: float | None = None
    roughness_factor: float | None = None
    velocity_limits: bool = True
    branch_factor: float = 1.0
    """Multiplies every branch's flow (contract section 7) ..."""
    branch_flows_m3_s: tuple[tuple[str, float], ...] = ()
    """... unless a branch's flow is given here, by branch name."""
    hours_per_year: float = 0.0
    """Hours a year the scenario runs, for the pump's energy cost (section 9)."""

    def __post_init__(self) -> None:
        refuse(f"Scenario {self.name!r}", scenario_problems(self))

    def branch_flow_m3_s(self, branch: str, design_flow_m3_s: float) -> float:
        """Flow delivered at the end of ``branch`` in this scenario [m^3/s]."""
        for name, flow in self.branch_flows_m3_s:
            if name == branch:
                return flow
        return self.branch_factor * design_flow_m3_s

    def effective_roughness_mm(self, catalogue_roughness_mm: np.ndarray) -> np.ndarray:
        """Roughness [mm] used in this scenario: replaced, scaled, or as catalogued."""
        roughness = np.asarray(catalogue_roughness_mm, dtype=float)
        if self.roughness_mm is not None:
            return np.full_like(roughness, self.roughness_mm)
        if self.roughness_factor is not None:
            return roughness * self.roughness_factor
        return roughness


def scenario_problems(scenario: Scenario) -> list[str]:
    """Factors, hours and roughness that would give nan or negative flows and losses. A
    nan outlet flow is allowed here (the compact form fills it in later); the study
    refuses it (:func:`optimiser.model.study.study_problems`)."""
    flow = scenario.outlet_flow_m3_s
    problems = [] if math.isnan(flow) else at_least("outlet_flow_m3_s", flow, 0.0)
    problems += finite("source_level_m", scenario.source_level_m)
    problems += at_least("offtake_factor", scenario.offtake_factor, 0.0)
    problems += at_least("branch_factor", scenario.branch_factor, 0.0)
    problems += at_least("hours_per_year", scenario.hours_per_year, 0.0)
    problems += at_least("roughness_mm", scenario.roughness_mm, 0.0)
    problems += at_least("roughness_factor", scenario.roughness_factor, 0.0, strict=True)
    for name, branch_flow in scenario.branch_flows_m3_s:
        problems += at_least(f"branch_flows_m3_s[{name!r}]", branch_flow, 0.0)
    return problems
