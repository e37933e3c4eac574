"""The limits of contract section 5, written once for the check and the optimiser.

- Minimum pressure head at a node: the route's ``min_pressure_m``, replaced at an
  offtake's node by that offtake's own minimum (the strictest, if several share a node).
- Pressure class: static head at a piece's lowest point plus the surge head must not
  exceed the class's allowable head (static head from
  :func:`optimiser.hydraulics.gradeline.static_head_m`).
- Velocity window: ``velocity_min_m_s <= V <= velocity_max_m_s`` in every scenario with
  velocity limits.

The independent check applies them with :data:`CHECK_TOLERANCE` (it accepts round-off
in the values it recomputes); the optimiser's data applies them exactly (tolerance 0),
so it never admits what the check would refuse.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.analysis.flows import nearest_node
from optimiser.model import DesignRules, Study
from optimiser.model.lines import Line

CHECK_TOLERANCE = 1e-9
"""Round-off the check accepts on every limit [m or m/s]."""


def node_min_pressure_m(study: Study, node_chainage_m: np.ndarray,
                        line: Line | None = None) -> np.ndarray:
    """Minimum pressure head [m] at each node of the trunk (or of ``line``): the route's
    (the line's), overridden at an offtake's node by that offtake's own minimum (the
    strictest, if several share a node)."""
    own = study.min_pressure_m if line is None else line.min_pressure_m
    limits = np.full(len(node_chainage_m), own)
    overrides: dict[int, float] = {}
    for offtake in (study.offtakes if line is None else line.offtakes):
        if offtake.min_pressure_m is not None:
            index = nearest_node(node_chainage_m, offtake.chainage_m)
            overrides[index] = max(overrides.get(index, -np.inf), offtake.min_pressure_m)
    for index, limit in overrides.items():
        limits[index] = limit
    return limits


def class_holds(demand_head_m: ArrayLike, allowable_head_m: ArrayLike,
                tolerance_m: float = 0.0) -> np.ndarray:
    """True where a pressure class can take the head: static head + surge <= allowable
    head (+ tolerance) [m]. Arguments broadcast (sections x options)."""
    return np.asarray(demand_head_m, dtype=float) <= (
        np.asarray(allowable_head_m, dtype=float) + tolerance_m)


def above_velocity_max(velocity_m_s: ArrayLike, rules: DesignRules,
                       tolerance_m_s: float = 0.0) -> np.ndarray:
    """True where a velocity [m/s] exceeds the rules' maximum (+ tolerance)."""
    return np.asarray(velocity_m_s, dtype=float) > rules.velocity_max_m_s + tolerance_m_s


def below_velocity_min(velocity_m_s: ArrayLike, rules: DesignRules,
                       tolerance_m_s: float = 0.0) -> np.ndarray:
    """True where a velocity [m/s] is under the rules' minimum (- tolerance): settling
    and water age."""
    return np.asarray(velocity_m_s, dtype=float) < rules.velocity_min_m_s - tolerance_m_s


def within_velocity_window(velocity_m_s: ArrayLike, rules: DesignRules,
                           tolerance_m_s: float = 0.0) -> np.ndarray:
    """True where ``velocity_min_m_s <= V <= velocity_max_m_s`` (widened by tolerance)."""
    return ~above_velocity_max(velocity_m_s, rules, tolerance_m_s) & \
        ~below_velocity_min(velocity_m_s, rules, tolerance_m_s)
