"""Study-level hydraulic quantities shared by the check and the optimiser.

These functions apply the pure hydraulics of :mod:`optimiser.hydraulics` to the model:
section flows from scenario and offtakes, and friction gradients with the scenario's
roughness. They are the single place where a study's friction method is dispatched.
"""

from __future__ import annotations

import numpy as np

from optimiser.hydraulics.friction import darcy_weisbach_gradient, hazen_williams_gradient
from optimiser.model import Friction, Scenario, Study

_OFFTAKE_TOLERANCE_M = 1e-6


def flow_below_m3_s(study: Study, scenario: Scenario, start_chainage_m: np.ndarray,
                    outlet_flow_m3_s: float | None = None) -> np.ndarray:
    """Flow [m^3/s] in pipe starting at each chainage: outlet flow plus the scenario's
    share of every offtake strictly downstream of that start (contract section 5)."""
    start = np.asarray(start_chainage_m, dtype=float)
    outlet = scenario.outlet_flow_m3_s if outlet_flow_m3_s is None else outlet_flow_m3_s
    flows = np.full(start.shape, outlet, dtype=float)
    for offtake in study.offtakes:
        carried = offtake.chainage_m > start + _OFFTAKE_TOLERANCE_M
        flows = flows + np.where(carried, scenario.offtake_factor * offtake.flow_m3_s, 0.0)
    return flows


def inflow_m3_s(study: Study, scenario: Scenario, outlet_flow_m3_s: float | None = None) -> float:
    """Flow [m^3/s] drawn from the source: outlet flow plus every offtake."""
    outlet = scenario.outlet_flow_m3_s if outlet_flow_m3_s is None else outlet_flow_m3_s
    return outlet + scenario.offtake_factor * sum(o.flow_m3_s for o in study.offtakes)


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
