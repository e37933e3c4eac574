"""Energy line and hydraulic grade line along a chain of pipe segments (Bernoulli with losses).

Steady incompressible flow between two points of a pipe (Bernoulli's equation extended
with head losses, e.g. Streeter, V.L. & Wylie, E.B. (1985), Fluid Mechanics, ch. 3):

    E = z + p/(rho g) + V^2/(2g),     E_downstream = E_upstream - h_friction - h_local

Along a chain of segments i = 0..n-1 between nodes i and i+1:

    E_start[0]   = H_source - K_entrance V_0^2/(2g)
    E_end[i]     = E_start[i] - J_i L_i - K'_i (L_i / 1000) V_i^2/(2g)
    E_start[i+1] = E_end[i]   - K_node[i+1] V_{i+1}^2/(2g)

A point loss at node j uses the velocity of the pipe just downstream of it (the last
segment's velocity at the final node). The hydraulic grade line is HGL = E - V^2/(2g)
with the velocity of the pipe on that side of the node.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.local_losses import velocity_head_m


def energy_along_chain(
    source_level_m: float,
    entrance_k: float,
    segment_length_m: ArrayLike,
    friction_gradient: ArrayLike,
    local_k_per_km: float,
    segment_velocity_m_s: ArrayLike,
    node_point_k: ArrayLike,
) -> tuple[np.ndarray, np.ndarray]:
    """Energy level [m] at the start and end of every segment of a chain.

    ``node_point_k`` has one K per node (n + 1 values); its first value is added to the
    entrance loss. Returns ``(energy_start_m, energy_end_m)``, each of length n.
    """
    length = np.asarray(segment_length_m, dtype=float)
    gradient = np.asarray(friction_gradient, dtype=float)
    head = velocity_head_m(segment_velocity_m_s)
    node_k = np.asarray(node_point_k, dtype=float)
    segment_loss = gradient * length + local_k_per_km * length / 1000.0 * head
    # Point loss applied at the start of each segment (node i, velocity of segment i).
    start_loss = node_k[:-1] * head
    start_loss[0] += entrance_k * head[0]
    drops = np.empty(2 * len(length))
    drops[0::2] = start_loss
    drops[1::2] = segment_loss
    cumulative = np.cumsum(drops)
    energy_start = source_level_m - cumulative[0::2]
    energy_end = source_level_m - cumulative[1::2]
    return energy_start, energy_end


def final_point_loss_m(node_point_k: ArrayLike, segment_velocity_m_s: ArrayLike) -> float:
    """Loss [m] of a point fitting at the last node, with the last segment's velocity."""
    return float(np.asarray(node_point_k, dtype=float)[-1] * velocity_head_m(
        np.asarray(segment_velocity_m_s, dtype=float)[-1]))
