"""Density and viscosity of liquid water at atmospheric pressure.

Viscosity follows the IAPWS 2008 formulation (industrial form, without the critical
enhancement, which is negligible far from the critical point):

    mu = mu_star * mu0(T_bar) * mu1(T_bar, rho_bar)
    mu0 = 100 sqrt(T_bar) / sum_{i=0..3} H_i / T_bar^i
    mu1 = exp( rho_bar * sum_{i,j} H_ij (1/T_bar - 1)^i (rho_bar - 1)^j )

with T_bar = T / 647.096 K, rho_bar = rho / 322 kg/m^3 and mu_star = 1e-6 Pa s.
Reference: IAPWS (2008), Release on the IAPWS Formulation 2008 for the Viscosity of
Ordinary Water Substance (Huber et al. 2009, J. Phys. Chem. Ref. Data 38(2)).

The density that the formulation needs is taken at 1 atm from Kell's correlation:

    rho = (999.83952 + 16.945176 t - 7.9870401e-3 t^2 - 46.170461e-6 t^3
           + 105.56302e-9 t^4 - 280.54253e-12 t^5) / (1 + 16.879850e-3 t)

with t in degrees Celsius. Reference: Kell, G.S. (1975), Density, thermal expansivity
and compressibility of liquid water from 0 to 150 C, J. Chem. Eng. Data 20(1).
Within 0-100 C it agrees with IAPWS-95 to better than 0.01 % (tested against the
``iapws`` package), far inside what pipe hydraulics needs.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

CRITICAL_TEMPERATURE_K = 647.096
CRITICAL_DENSITY_KG_M3 = 322.0
VISCOSITY_REFERENCE_PA_S = 1.0e-6
KELVIN_OFFSET = 273.15

_H0 = np.array([1.67752, 2.20462, 0.6366564, -0.241605])
# IAPWS 2008 Table 2: H_ij indexed [i, j], i = 0..5, j = 0..6.
_H1 = np.zeros((6, 7))
for _i, _j, _h in [
    (0, 0, 5.20094e-1), (1, 0, 8.50895e-2), (2, 0, -1.08374), (3, 0, -2.89555e-1),
    (0, 1, 2.22531e-1), (1, 1, 9.99115e-1), (2, 1, 1.88797), (3, 1, 1.26613),
    (5, 1, 1.20573e-1), (0, 2, -2.81378e-1), (1, 2, -9.06851e-1), (2, 2, -7.72479e-1),
    (3, 2, -4.89837e-1), (4, 2, -2.57040e-1), (0, 3, 1.61913e-1), (1, 3, 2.57399e-1),
    (0, 4, -3.25372e-2), (3, 4, 6.98452e-2), (4, 5, 8.72102e-3), (3, 6, -4.35673e-3),
    (5, 6, -5.93264e-4),
]:
    _H1[_i, _j] = _h

VALID_RANGE_C = (0.0, 100.0)


def density_kg_m3(temperature_c: ArrayLike) -> np.ndarray:
    """Density of air-free water at 1 atm [kg/m^3], Kell (1975), 0-100 C.

    Parameters
    ----------
    temperature_c : array_like
        Water temperature t [degrees C], 0 to 100.

    Returns
    -------
    numpy.ndarray
        rho [kg/m^3] from Kell's rational polynomial in t (see the module docstring).

    Examples
    --------
    Handbook values 999.97 kg/m^3 at 4 C (the density maximum) and 998.2 kg/m^3 at
    20 C (e.g. Kell 1975, Table I; values from memory):

    >>> print(f"{float(density_kg_m3(4.0)):.2f} {float(density_kg_m3(20.0)):.1f}")
    999.97 998.2
    """
    t = np.asarray(temperature_c, dtype=float)
    numerator = (
        999.83952
        + 16.945176 * t
        - 7.9870401e-3 * t**2
        - 46.170461e-6 * t**3
        + 105.56302e-9 * t**4
        - 280.54253e-12 * t**5
    )
    return numerator / (1.0 + 16.879850e-3 * t)


def dynamic_viscosity_pa_s(temperature_c: ArrayLike) -> np.ndarray:
    """Dynamic viscosity of water at 1 atm [Pa s], IAPWS 2008 (see module docstring).

    Parameters
    ----------
    temperature_c : array_like
        Water temperature t [degrees C], 0 to 100.

    Returns
    -------
    numpy.ndarray
        mu = mu_star mu0(T_bar) mu1(T_bar, rho_bar) [Pa s] (IAPWS 2008, without the
        critical enhancement).

    Examples
    --------
    1.0016 mPa s at 20 C and 0.8900 mPa s at 25 C, as the IAPWS 2008 release tabulates
    near 0.1 MPa (values from memory):

    >>> print(f"{float(dynamic_viscosity_pa_s(20.0)) * 1e3:.4f}")
    1.0016
    >>> print(f"{float(dynamic_viscosity_pa_s(25.0)) * 1e3:.4f}")
    0.8900
    """
    t = np.asarray(temperature_c, dtype=float)
    t_bar = (t + KELVIN_OFFSET) / CRITICAL_TEMPERATURE_K
    rho_bar = density_kg_m3(t) / CRITICAL_DENSITY_KG_M3
    mu0 = 100.0 * np.sqrt(t_bar) / sum(h / t_bar**i for i, h in enumerate(_H0))
    x = 1.0 / t_bar - 1.0
    y = rho_bar - 1.0
    series = sum(
        _H1[i, j] * x**i * y**j for i in range(6) for j in range(7) if _H1[i, j] != 0.0
    )
    mu1 = np.exp(rho_bar * series)
    return VISCOSITY_REFERENCE_PA_S * mu0 * mu1


def kinematic_viscosity_m2_s(temperature_c: ArrayLike) -> np.ndarray:
    """Kinematic viscosity of water at 1 atm [m^2/s].

    Parameters
    ----------
    temperature_c : array_like
        Water temperature t [degrees C], 0 to 100.

    Returns
    -------
    numpy.ndarray
        nu = mu / rho [m^2/s]: IAPWS 2008 viscosity over Kell (1975) density.

    Examples
    --------
    About 1.139e-6 m^2/s at 15 C and 1.003e-6 m^2/s at 20 C (handbook values, e.g.
    White, F.M. (2011), Fluid Mechanics, Table A.1; from memory):

    >>> print(f"{float(kinematic_viscosity_m2_s(15.0)):.4g}")
    1.139e-06
    >>> print(f"{float(kinematic_viscosity_m2_s(20.0)):.4g}")
    1.003e-06
    """
    return dynamic_viscosity_pa_s(temperature_c) / density_kg_m3(temperature_c)
