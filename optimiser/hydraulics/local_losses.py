"""Mean velocity, velocity head and local (minor) losses.

    V = Q / A,  A = pi d^2 / 4        (continuity)
    h_v = V^2 / (2 g)                 (velocity head)
    h_local = K V^2 / (2 g)           (local loss of a fitting, entrance or exit)

K values are the user's: typical ones are 0.5 for a sharp-edged entrance and 1.0 for an
exit into a reservoir (common practice; e.g. Idelchik, I.E. (1986), Handbook of
Hydraulic Resistance). A per-km allowance K' [1/km] for bends and valves adds
K' L / 1000 velocity heads over a pipe of length L [m].
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.constants import G_M_S2


def velocity_m_s(flow_m3_s: ArrayLike, diameter_m: ArrayLike) -> np.ndarray:
    """Mean velocity V = Q / (pi d^2 / 4) [m/s]."""
    d = np.asarray(diameter_m, dtype=float)
    return np.asarray(flow_m3_s, dtype=float) / (np.pi * d**2 / 4.0)


def velocity_head_m(velocity: ArrayLike) -> np.ndarray:
    """Velocity head V^2 / (2 g) [m]."""
    v = np.asarray(velocity, dtype=float)
    return v**2 / (2.0 * G_M_S2)


def local_loss_m(k: ArrayLike, velocity: ArrayLike) -> np.ndarray:
    """Local head loss K V^2 / (2 g) [m]."""
    return np.asarray(k, dtype=float) * velocity_head_m(velocity)
