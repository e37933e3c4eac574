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


def bar_to_head_m(pressure_bar: ArrayLike, density_kg_m3: float = REFERENCE_DENSITY_KG_M3):
    """Pressure head [m] of a gauge pressure given in bar: h = p / (rho g)."""
    return np.asarray(pressure_bar, dtype=float) * PA_PER_BAR / (density_kg_m3 * G_M_S2)


def head_m_to_bar(head_m: ArrayLike, density_kg_m3: float = REFERENCE_DENSITY_KG_M3):
    """Gauge pressure [bar] of a pressure head [m]: p = rho g h."""
    return np.asarray(head_m, dtype=float) * density_kg_m3 * G_M_S2 / PA_PER_BAR
