"""Water hammer: pressure wave speed and the head rise of a valve closure.

Three textbook results, each vectorised over numpy arrays:

- the Joukowsky head rise of an instantaneous change of velocity,
  Delta H = a Delta V / g;
- the slow-closure head rise of a closure slower than the pipe's reflection time,
  Delta H = 2 L V / (g T) for T > 2 L / a (Michaud 1878);
- the pressure wave speed of a liquid in an elastic pipe anchored against axial movement
  (Korteweg 1878), a = sqrt( (K/rho) / (1 + (1 - nu^2) (K/E) (D/e)) ).

They are the first estimates of a transient study, not a substitute for one: friction,
line packing, column separation, air and the real closure law of the valve change the
answer, and only a transient analysis of the real system settles it.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.constants import G_M_S2

WATER_BULK_MODULUS_PA: float = 2.19e9
"""Bulk modulus of water K [Pa] used for the wave speed (about 2.19 GPa near 20 C; the
value of the study format, contract section 10)."""


def joukowsky_head_rise_m(wave_speed_m_s: ArrayLike, velocity_change_m_s: ArrayLike
                          ) -> np.ndarray:
    """Head rise [m] of an instantaneous velocity change (Joukowsky).

        Delta H = a Delta V / g

    Parameters
    ----------
    wave_speed_m_s : pressure wave speed a [m/s].
    velocity_change_m_s : change of velocity Delta V [m/s] (a full stop: the velocity).

    References
    ----------
    Joukowsky, N. (1898), Über den hydraulischen Stoss in Wasserleitungsröhren (On the
    hydraulic hammer in water supply pipes; English translation by Simin, O., Proc. AWWA
    1904). Wylie, E.B. & Streeter, V.L. (1993), Fluid Transients in Systems, Prentice Hall,
    chapter 1.

    Examples
    --------
    A stop of 1 m/s in a pipe with a = 1000 m/s:

    >>> round(float(joukowsky_head_rise_m(1000.0, 1.0)), 2)
    101.97
    """
    a = np.asarray(wave_speed_m_s, dtype=float)
    dv = np.abs(np.asarray(velocity_change_m_s, dtype=float))
    return a * dv / G_M_S2


def slow_closure_head_rise_m(pipe_length_m: ArrayLike, velocity_m_s: ArrayLike,
                             closure_time_s: ArrayLike) -> np.ndarray:
    """Head rise [m] of a closure slower than the reflection time 2 L / a (Michaud).

        Delta H = 2 L V / (g T)

    Valid for T > 2 L / a; at T = 2 L / a it equals the Joukowsky rise a V / g, and for
    faster closures the Joukowsky rise applies (see :func:`closure_head_rise_m`).

    Parameters
    ----------
    pipe_length_m : length L [m] of the pipe between the closing valve and the free
        surface that reflects the wave.
    velocity_m_s : velocity V [m/s] stopped by the closure.
    closure_time_s : closure time T [s], > 0.

    References
    ----------
    Michaud, J. (1878), Coups de bélier dans les conduites, Bulletin de la Société Vaudoise
    des Ingénieurs et des Architectes; as given in transients texts, e.g. Wylie, E.B. &
    Streeter, V.L. (1993), Fluid Transients in Systems.

    Examples
    --------
    2 km of pipe, 1.5 m/s stopped in 20 s:

    >>> round(float(slow_closure_head_rise_m(2000.0, 1.5, 20.0)), 2)
    30.59
    """
    length = np.asarray(pipe_length_m, dtype=float)
    v = np.abs(np.asarray(velocity_m_s, dtype=float))
    t = np.asarray(closure_time_s, dtype=float)
    return 2.0 * length * v / (G_M_S2 * t)


def closure_head_rise_m(wave_speed_m_s: ArrayLike, velocity_m_s: ArrayLike,
                        pipe_length_m: ArrayLike, closure_time_s: ArrayLike) -> np.ndarray:
    """Head rise [m] of a closure in time T: Joukowsky when T <= 2 L / a, else Michaud.

        Delta H = a V / g            for T <= 2 L / a
        Delta H = 2 L V / (g T)      for T >  2 L / a

    The two agree at T = 2 L / a, so the head rise is continuous and never above a V / g.

    Parameters
    ----------
    wave_speed_m_s : wave speed a [m/s].
    velocity_m_s : velocity V [m/s] stopped by the closure.
    pipe_length_m : pipe length L [m] to the reflecting free surface.
    closure_time_s : closure time T [s]; 0 is a sudden closure.

    References
    ----------
    Joukowsky (1898) and Michaud (1878), see :func:`joukowsky_head_rise_m` and
    :func:`slow_closure_head_rise_m`.

    Examples
    --------
    a = 350 m/s, 2 km of pipe: 2 L / a = 11.4 s, so a 20 s closure is slow.

    >>> round(float(closure_head_rise_m(350.0, 1.5, 2000.0, 0.0)), 2)
    53.54
    >>> round(float(closure_head_rise_m(350.0, 1.5, 2000.0, 20.0)), 2)
    30.59
    """
    a, v, length, t = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (
        wave_speed_m_s, velocity_m_s, pipe_length_m, closure_time_s)))
    sudden = joukowsky_head_rise_m(a, v)
    slow = t * a > 2.0 * length
    safe_t = np.where(slow, t, 1.0)
    return np.where(slow, slow_closure_head_rise_m(length, v, safe_t), sudden)


def korteweg_wave_speed_m_s(internal_diameter_m: ArrayLike, wall_thickness_m: ArrayLike,
                            elastic_modulus_pa: ArrayLike, density_kg_m3: ArrayLike,
                            poisson_ratio: ArrayLike = 0.3,
                            bulk_modulus_pa: float = WATER_BULK_MODULUS_PA) -> np.ndarray:
    """Pressure wave speed [m/s] of water in a thin-walled elastic pipe (Korteweg).

        a = sqrt( (K / rho) / (1 + (1 - nu^2) (K / E) (D / e)) )

    with K the bulk modulus of water [Pa], rho its density [kg/m^3], E the elastic
    modulus of the wall [Pa], nu its Poisson ratio [-], D the internal diameter [m] and
    e the wall thickness [m]. The factor 1 - nu^2 is that of a pipe anchored against
    axial movement along its length (buried pipe), as the study format defines it.

    References
    ----------
    Korteweg, D.J. (1878), Über die Fortpflanzungsgeschwindigkeit des Schalles in
    elastischen Röhren, Annalen der Physik 241(12). The anchored-pipe factor as in
    Wylie, E.B. & Streeter, V.L. (1993), Fluid Transients in Systems, chapter 2.

    Examples
    --------
    A rigid pipe (E very large) gives the speed of sound in water, sqrt(K / rho):

    >>> round(float(korteweg_wave_speed_m_s(0.2, 0.01, 1e30, 1000.0)), 1)
    1479.9

    PE100 OD 110 SDR 11 (bore 90 mm, wall 10 mm), E = 1.0 GPa, nu = 0.3, rho = 1000:

    >>> round(float(korteweg_wave_speed_m_s(0.090, 0.010, 1.0e9, 1000.0)), 1)
    340.1
    """
    d = np.asarray(internal_diameter_m, dtype=float)
    e = np.asarray(wall_thickness_m, dtype=float)
    modulus = np.asarray(elastic_modulus_pa, dtype=float)
    nu = np.asarray(poisson_ratio, dtype=float)
    rho = np.asarray(density_kg_m3, dtype=float)
    stiffness = 1.0 + (1.0 - nu**2) * (bulk_modulus_pa / modulus) * (d / e)
    return np.sqrt(bulk_modulus_pa / rho / stiffness)
