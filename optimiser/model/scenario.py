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

    def effective_roughness_mm(self, catalogue_roughness_mm: np.ndarray) -> np.ndarray:
        """Roughness [mm] used in this scenario: replaced, scaled, or as catalogued."""
        roughness = np.asarray(catalogue_roughness_mm, dtype=float)
        if self.roughness_mm is not None:
            return np.full_like(roughness, self.roughness_mm)
        if self.roughness_factor is not None:
            return roughness * self.roughness_factor
        return roughness
