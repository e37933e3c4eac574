"""Pumping power, energy and the present worth of a yearly cost.

Pure functions (numpy in, numpy out). The hydraulic power a pump gives the water is
rho g Q H; the power drawn from the supply divides it by the wire-to-water efficiency
(pump x motor x drive). The present worth factor turns a cost paid every year of a
life into one sum today.

References: the power equation is in every hydraulics text, e.g. Streeter, V.L.,
Wylie, E.B. & Bedford, K.W. (1998), *Fluid Mechanics*, 9th ed., McGraw-Hill, sec. 9.1;
the present worth factor (uniform series) in engineering economics texts, e.g. Newnan,
D.G., Eschenbach, T.G. & Lavelle, J.P. (2004), *Engineering Economic Analysis*, 9th
ed., Oxford University Press, ch. 4 (the factor written (P/A, i, n)).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.constants import G_M_S2


def pump_power_kw(density_kg_m3: ArrayLike, flow_m3_s: ArrayLike, head_m: ArrayLike,
                  efficiency: ArrayLike) -> np.ndarray:
    """Power drawn by a pump [kW].

    .. math:: P = \\frac{\\rho g Q H}{1000\\,\\eta}

    Parameters
    ----------
    density_kg_m3
        Water density rho [kg/m^3].
    flow_m3_s
        Flow pumped Q [m^3/s].
    head_m
        Head added H [m].
    efficiency
        Wire-to-water efficiency eta, 0 < eta <= 1 [-].

    Returns
    -------
    numpy.ndarray
        P [kW] (g = 9.80665 m/s^2).

    Examples
    --------
    50 L/s lifted 60 m at 70 % in water of 1000 kg/m^3: 0.05 x 60 x 9.80665 / 0.7 =
    42.03 kW.

    >>> round(float(pump_power_kw(1000.0, 0.05, 60.0, 0.7)), 4)
    42.0285
    """
    rho = np.asarray(density_kg_m3, dtype=float)
    return rho * G_M_S2 * np.asarray(flow_m3_s, dtype=float) * np.asarray(head_m, dtype=float) \
        / (1000.0 * np.asarray(efficiency, dtype=float))


def yearly_energy_kwh(power_kw: ArrayLike, hours_per_year: ArrayLike) -> np.ndarray:
    """Energy drawn in a year [kWh]: E = P t, t the hours run a year.

    >>> float(yearly_energy_kwh(42.0, 3000.0))
    126000.0
    """
    return np.asarray(power_kw, dtype=float) * np.asarray(hours_per_year, dtype=float)


def present_worth_factor(rate: ArrayLike, years: ArrayLike) -> np.ndarray:
    """Present worth of 1 paid at the end of each year for ``years`` years [-].

    .. math:: \\mathrm{PWF} = \\frac{1 - (1 + r)^{-n}}{r}, \\qquad
              \\mathrm{PWF} = n \\text{ when } r = 0

    Parameters
    ----------
    rate
        Discount rate r per year [-], r >= 0 (0.05 is 5 %).
    years
        Life n [years].

    Examples
    --------
    At 5 % over 30 years (compound-interest tables give 15.3725, from memory):

    >>> round(float(present_worth_factor(0.05, 30)), 4)
    15.3725
    >>> float(present_worth_factor(0.0, 30))
    30.0
    """
    r = np.asarray(rate, dtype=float)
    n = np.asarray(years, dtype=float)
    safe = np.where(r > 0.0, r, 1.0)
    return np.where(r > 0.0, (1.0 - (1.0 + safe) ** (-n)) / safe, n)
