"""Pipe friction: the Darcy friction factor and the friction gradient J [m/m].

Darcy--Weisbach (Weisbach 1845, Darcy 1857):

    J = h_f / L = (f / d) * V^2 / (2 g)

Friction factor by regime of the Reynolds number Re = V d / nu:

- laminar, Re < 2000: f = 64 / Re (Hagen--Poiseuille law);
- turbulent, Re >= 4000: the Colebrook--White equation, solved to machine precision,

      1 / sqrt(f) = -2 log10( (eps/d) / 3.7 + 2.51 / (Re sqrt(f)) )

  (Colebrook, C.F. (1939), Turbulent flow in pipes, with particular reference to the
  transition region between the smooth and rough pipe laws, J. Inst. Civil Eng. 11);
- transition, 2000 <= Re < 4000: linear interpolation in Re between the laminar value
  at Re = 2000 and the Colebrook--White value at Re = 4000. It is continuous at both ends
  and monotone in Re (the turbulent value at 4000 always exceeds 64/2000 = 0.032), so the
  head loss grows with flow everywhere -- the property the root solves and the optimiser
  rely on. Flow in this band is physically unstable; designs seldom operate there.

Swamee--Jain explicit approximation (Swamee, P.K. & Jain, A.K. (1976), Explicit equations
for pipe-flow problems, J. Hydraulics Div. ASCE 102(5)):

    f = 0.25 / [ log10( (eps/d) / 3.7 + 5.74 / Re^0.9 ) ]^2

Hazen--Williams in SI units (Williams, G.S. & Hazen, A. (1905), Hydraulic Tables):

    J = k Q^1.852 / (C^1.852 d^4.8704),   k = 10.67 by default

with Q in m^3/s and d in m (the constant k is a study setting: published values range
from 10.5088 to 10.9031, and results are only comparable with the same k). It is an
empirical formula for water near room temperature in turbulent flow; it ignores viscosity.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.constants import G_M_S2

LAMINAR_LIMIT_RE = 2000.0
TURBULENT_LIMIT_RE = 4000.0
_LN10 = np.log(10.0)


def reynolds_number(
    velocity_m_s: ArrayLike, diameter_m: ArrayLike, kinematic_viscosity_m2_s: ArrayLike
) -> np.ndarray:
    """Reynolds number of pipe flow [-].

    Parameters
    ----------
    velocity_m_s : array_like
        Mean velocity V [m/s] (its magnitude is used).
    diameter_m : array_like
        Internal diameter d [m].
    kinematic_viscosity_m2_s : array_like
        Kinematic viscosity nu [m^2/s].

    Returns
    -------
    numpy.ndarray
        Re = |V| d / nu [-] (Reynolds, O. (1883), An experimental investigation of the
        circumstances which determine whether the motion of water shall be direct or
        sinuous, Phil. Trans. R. Soc. 174).

    Examples
    --------
    1.5915 m/s (50 L/s) in a 200 mm bore, nu = 1.0e-6 m^2/s (worked by hand, common
    practice, no source):

    >>> print(f"{float(reynolds_number(1.5915494, 0.2, 1.0e-6)):.0f}")
    318310
    """
    return np.abs(np.asarray(velocity_m_s, dtype=float)) * np.asarray(
        diameter_m, dtype=float
    ) / np.asarray(kinematic_viscosity_m2_s, dtype=float)


def laminar_friction_factor(reynolds: ArrayLike) -> np.ndarray:
    """Darcy friction factor of laminar flow [-].

    Parameters
    ----------
    reynolds : array_like
        Reynolds number Re [-], below 2000.

    Returns
    -------
    numpy.ndarray
        f = 64 / Re (Hagen--Poiseuille law; e.g. White, F.M. (2011), Fluid Mechanics,
        7th ed., sec. 6.4).

    Examples
    --------
    >>> print(f"{float(laminar_friction_factor(1000.0)):.3f}")
    0.064
    """
    return 64.0 / np.asarray(reynolds, dtype=float)


def swamee_jain(reynolds: ArrayLike, relative_roughness: ArrayLike) -> np.ndarray:
    """Swamee--Jain (1976) explicit Darcy friction factor [-].

    Parameters
    ----------
    reynolds : array_like
        Reynolds number Re [-], turbulent.
    relative_roughness : array_like
        Relative roughness eps/d [-].

    Returns
    -------
    numpy.ndarray
        f = 0.25 / [log10((eps/d)/3.7 + 5.74/Re^0.9)]^2 (Swamee & Jain 1976).

    Notes
    -----
    Within 1.5 % of Colebrook--White for Re >= 5e4 or eps/d <= 1e-4, and within 3 % over
    5e3 <= Re <= 1e8, 1e-6 <= eps/d <= 1e-2 (largest near Re = 5e3, eps/d = 1e-2; measured
    against ``fluids`` in the tests). Used only as the Newton start of
    :func:`colebrook_white` and as the documented explicit alternative.

    Examples
    --------
    At Re = 1e5, eps/d = 1e-4 it gives 0.0185, as the Moody chart reads there (Moody,
    L.F. (1944), Friction factors for pipe flow, Trans. ASME 66; chart value from
    memory):

    >>> print(f"{float(swamee_jain(1e5, 1e-4)):.4f}")
    0.0185
    """
    re = np.asarray(reynolds, dtype=float)
    rr = np.asarray(relative_roughness, dtype=float)
    return 0.25 / np.log10(rr / 3.7 + 5.74 / re**0.9) ** 2


def colebrook_white(
    reynolds: ArrayLike, relative_roughness: ArrayLike, *, rtol: float = 1e-15
) -> np.ndarray:
    """Darcy friction factor from the Colebrook--White equation [-], to full precision.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number Re [-], turbulent (>= 4000).
    relative_roughness : array_like
        Relative roughness eps/d [-]; broadcasts against ``reynolds``.
    rtol : float, optional
        Relative tolerance on x = 1/sqrt(f) at which Newton's method stops.

    Returns
    -------
    numpy.ndarray
        f solving 1/sqrt(f) = -2 log10((eps/d)/3.7 + 2.51/(Re sqrt(f))) (Colebrook 1939).

    Notes
    -----
    Newton's method on x = 1/sqrt(f) for F(x) = x + 2 log10(a + b x) = 0, with
    a = (eps/d)/3.7 and b = 2.51/Re, started from Swamee--Jain. F is increasing and
    concave in x, so Newton converges monotonically; 3-5 steps reach machine precision.

    Examples
    --------
    Points of the Moody chart (Moody, L.F. (1944), Friction factors for pipe flow, Trans.
    ASME 66; chart readings from memory: about 0.0185, 0.018 for a smooth pipe and 0.020):

    >>> for re, rr in [(1e5, 1e-4), (1e5, 0.0), (1e6, 1e-3)]:
    ...     print(f"{float(colebrook_white(re, rr)):.4f}")
    0.0185
    0.0180
    0.0199
    """
    re = np.asarray(reynolds, dtype=float)
    rr = np.asarray(relative_roughness, dtype=float)
    re, rr = np.broadcast_arrays(re, rr)
    a = rr / 3.7
    b = 2.51 / re
    x = 1.0 / np.sqrt(swamee_jain(re, rr))
    for _ in range(50):
        inner = a + b * x
        residual = x + 2.0 * np.log10(inner)
        slope = 1.0 + 2.0 * b / (_LN10 * inner)
        step = residual / slope
        x = x - step
        if np.all(np.abs(step) <= rtol * np.abs(x)):
            break
    return 1.0 / x**2


def darcy_friction_factor(reynolds: ArrayLike, relative_roughness: ArrayLike) -> np.ndarray:
    """Darcy friction factor for any Re > 0 [-]: laminar, transition blend, Colebrook--White.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number Re [-], positive.
    relative_roughness : array_like
        Relative roughness eps/d [-]; broadcasts against ``reynolds``.

    Returns
    -------
    numpy.ndarray
        64/Re below Re = 2000, Colebrook--White from 4000, and between them the linear
        blend in Re of the module docstring (continuous and rising with Re).

    Examples
    --------
    Laminar at Re = 1000; in the blend at Re = 3000, halfway between 64/2000 = 0.032 and
    Colebrook--White at 4000 (worked by hand from the module's equations, common
    practice, no source):

    >>> print(f"{float(darcy_friction_factor(1000.0, 1e-4)):.3f}")
    0.064
    >>> f_4000 = float(colebrook_white(4000.0, 1e-4))
    >>> bool(abs(float(darcy_friction_factor(3000.0, 1e-4)) - (0.032 + f_4000) / 2) < 1e-12)
    True
    """
    re = np.asarray(reynolds, dtype=float)
    rr = np.asarray(relative_roughness, dtype=float)
    re, rr = np.broadcast_arrays(re, rr)
    turbulent = colebrook_white(np.maximum(re, TURBULENT_LIMIT_RE), rr)
    laminar = laminar_friction_factor(np.maximum(re, np.finfo(float).tiny))
    f_laminar_end = 64.0 / LAMINAR_LIMIT_RE
    weight = (re - LAMINAR_LIMIT_RE) / (TURBULENT_LIMIT_RE - LAMINAR_LIMIT_RE)
    # The blend's end point costs a second Colebrook solve: only where Re needs it.
    in_blend = (re >= LAMINAR_LIMIT_RE) & (re < TURBULENT_LIMIT_RE)
    f_turbulent_start = np.full_like(re, f_laminar_end)
    if np.any(in_blend):
        f_turbulent_start[in_blend] = colebrook_white(TURBULENT_LIMIT_RE, rr[in_blend])
    transition = f_laminar_end + weight * (f_turbulent_start - f_laminar_end)
    return np.where(
        re < LAMINAR_LIMIT_RE, laminar, np.where(re < TURBULENT_LIMIT_RE, transition, turbulent)
    )


def darcy_weisbach_gradient(
    flow_m3_s: ArrayLike,
    diameter_m: ArrayLike,
    roughness_m: ArrayLike,
    kinematic_viscosity_m2_s: ArrayLike,
) -> np.ndarray:
    """Darcy--Weisbach friction gradient [m of head per m of pipe]; zero at zero flow.

    Parameters
    ----------
    flow_m3_s : array_like
        Flow Q [m^3/s] (its magnitude is used).
    diameter_m : array_like
        Internal diameter d [m].
    roughness_m : array_like
        Absolute roughness eps [m].
    kinematic_viscosity_m2_s : array_like
        Kinematic viscosity nu [m^2/s].

    Returns
    -------
    numpy.ndarray
        J = (f/d) V^2/(2g) [m/m] (Weisbach 1845, Darcy 1857), with f from
        :func:`darcy_friction_factor` at Re = V d / nu and eps/d.

    Examples
    --------
    50 L/s in a 200 mm bore, eps = 0.1 mm, water at 20 C (nu = 1.0034e-6 m^2/s):
    V = 1.5915 m/s, Re = 3.17e5, f = 0.0181, J = 0.0181 / 0.2 x 0.1291 = 11.7 m/km
    (worked by hand, common practice, no source):

    >>> print(f"{float(darcy_weisbach_gradient(0.05, 0.2, 1e-4, 1.0034e-6)) * 1000:.2f}")
    11.71
    """
    q = np.abs(np.asarray(flow_m3_s, dtype=float))
    d = np.asarray(diameter_m, dtype=float)
    velocity = q / (np.pi * d**2 / 4.0)
    re = reynolds_number(velocity, d, kinematic_viscosity_m2_s)
    safe_re = np.where(re > 0.0, re, 1.0)
    f = darcy_friction_factor(safe_re, np.asarray(roughness_m, dtype=float) / d)
    return np.where(re > 0.0, f / d * velocity**2 / (2.0 * G_M_S2), 0.0)


HAZEN_WILLIAMS_SI_COEFFICIENT: float = 10.67
"""The constant k of the SI Hazen--Williams formula (the study format's default; the
literature uses values from 10.5088 to 10.9031)."""


def hazen_williams_gradient(
    flow_m3_s: ArrayLike, diameter_m: ArrayLike, hazen_williams_c: ArrayLike,
    coefficient: float = HAZEN_WILLIAMS_SI_COEFFICIENT,
) -> np.ndarray:
    """Hazen--Williams friction gradient, SI form [m/m].

    Parameters
    ----------
    flow_m3_s : array_like
        Flow Q [m^3/s] (its magnitude is used).
    diameter_m : array_like
        Internal diameter d [m].
    hazen_williams_c : array_like
        Hazen--Williams coefficient C [-].
    coefficient : float
        The constant k of the SI form (default 10.67; the literature uses 10.5088 to
        10.9031, so published results compare only with the same constant).

    Returns
    -------
    numpy.ndarray
        J = k Q^1.852 / (C^1.852 d^4.8704) [m/m] (Williams & Hazen 1905, SI form).

    Examples
    --------
    50 L/s in a 200 mm bore with C = 130: 12.8 m/km (worked by hand from the formula,
    common practice, no source):

    >>> print(f"{float(hazen_williams_gradient(0.05, 0.2, 130.0)) * 1000:.2f}")
    12.82
    """
    q = np.abs(np.asarray(flow_m3_s, dtype=float))
    c = np.asarray(hazen_williams_c, dtype=float)
    d = np.asarray(diameter_m, dtype=float)
    return coefficient * q**1.852 / (c**1.852 * d**4.8704)
