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
    """Mean velocity in a full circular pipe [m/s] (continuity).

    Parameters
    ----------
    flow_m3_s : array_like
        Flow Q [m^3/s]; the sign is kept.
    diameter_m : array_like
        Internal diameter d [m].

    Returns
    -------
    numpy.ndarray
        V = Q / (pi d^2 / 4) [m/s], broadcast over the arguments.

    Examples
    --------
    50 L/s in a 200 mm bore: 0.05 / 0.031416 = 1.592 m/s (worked by hand, common
    practice, no source):

    >>> print(f"{float(velocity_m_s(0.05, 0.2)):.4f}")
    1.5915
    """
    d = np.asarray(diameter_m, dtype=float)
    return np.asarray(flow_m3_s, dtype=float) / (np.pi * d**2 / 4.0)


def velocity_head_m(velocity: ArrayLike) -> np.ndarray:
    """Velocity head [m]: the kinetic energy per unit weight of the flow.

    Parameters
    ----------
    velocity : array_like
        Mean velocity V [m/s].

    Returns
    -------
    numpy.ndarray
        h_v = V^2 / (2 g) [m], g = 9.80665 m/s^2.

    Examples
    --------
    At 1.5915 m/s (50 L/s in a 200 mm bore): 2.5330 / 19.6133 = 0.1291 m (worked by
    hand, common practice, no source):

    >>> print(f"{float(velocity_head_m(1.5915494)):.4f}")
    0.1291
    """
    v = np.asarray(velocity, dtype=float)
    return v**2 / (2.0 * G_M_S2)


def local_loss_m(k: ArrayLike, velocity: ArrayLike) -> np.ndarray:
    """Local head loss of a fitting, entrance or exit [m].

    Parameters
    ----------
    k : array_like
        Loss coefficient K [-] (e.g. Idelchik 1986).
    velocity : array_like
        Mean velocity V [m/s] of the pipe the coefficient refers to.

    Returns
    -------
    numpy.ndarray
        h = K V^2 / (2 g) [m].

    Examples
    --------
    A sharp-edged entrance (K = 0.5) at 1.5915 m/s loses half a velocity head, 0.0646 m
    (worked by hand, common practice, no source):

    >>> print(f"{float(local_loss_m(0.5, 1.5915494)):.4f}")
    0.0646
    """
    return np.asarray(k, dtype=float) * velocity_head_m(velocity)
