"""Physical constants and pressure-head conversions.

Pressure head h [m] of a pressure p [Pa] in water of density rho [kg/m^3]:

    h = p / (rho * g)

with standard gravity g = 9.80665 m/s^2 (CGPM 1901, the conventional value).
The trade quotes pipe pressure classes in bar (PN16 = 16 bar) against a reference
density of 1000 kg/m^3, so 1 bar = 10.197 m of water.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

G_M_S2: float = 9.80665
"""Standard acceleration of gravity [m/s^2]."""

REFERENCE_DENSITY_KG_M3: float = 1000.0
"""Density used by the trade to turn bar into metres of water [kg/m^3]."""

PA_PER_BAR: float = 1.0e5


def bar_to_head_m(pressure_bar: ArrayLike,
                  density_kg_m3: float = REFERENCE_DENSITY_KG_M3) -> np.ndarray:
    """Pressure head [m] of a gauge pressure given in bar.

    Parameters
    ----------
    pressure_bar : array_like
        Gauge pressure p [bar] (1 bar = 1e5 Pa).
    density_kg_m3 : float, optional
        Water density rho [kg/m^3]; the trade's 1000 by default.

    Returns
    -------
    numpy.ndarray
        h = p / (rho g) [m of water], with g = 9.80665 m/s^2 (CGPM 1901).

    Examples
    --------
    1 bar is 1e5 / (1000 x 9.80665) = 10.197 m of water, so a PN16 class allows
    163.2 m (definitions of the bar and of standard gravity):

    >>> print(f"{float(bar_to_head_m(1.0)):.3f} {float(bar_to_head_m(16.0)):.1f}")
    10.197 163.2
    """
    return np.asarray(pressure_bar, dtype=float) * PA_PER_BAR / (density_kg_m3 * G_M_S2)


def head_m_to_bar(head_m: ArrayLike,
                  density_kg_m3: float = REFERENCE_DENSITY_KG_M3) -> np.ndarray:
    """Gauge pressure [bar] of a pressure head [m].

    Parameters
    ----------
    head_m : array_like
        Pressure head h [m of water].
    density_kg_m3 : float, optional
        Water density rho [kg/m^3]; the trade's 1000 by default.

    Returns
    -------
    numpy.ndarray
        p = rho g h [bar], with g = 9.80665 m/s^2 (CGPM 1901).

    Examples
    --------
    10 m of water is 0.981 bar (definitions of the bar and of standard gravity):

    >>> print(f"{float(head_m_to_bar(10.0)):.4f}")
    0.9807
    """
    return np.asarray(head_m, dtype=float) * density_kg_m3 * G_M_S2 / PA_PER_BAR
