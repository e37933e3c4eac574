"""Demand scenarios: flows, source level and pipe condition that a design must satisfy."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


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
