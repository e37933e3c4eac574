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
with the velocity of the pipe on that side of the node, and the pressure head is
HGL - z. With no flow the energy line is the static line at the top water level, so the
static head a pipe must stand is top water level - z (plus any surge allowance).

This module is the one home of these rules: the independent check, its linear form and
the optimiser's data all build their energy lines from these functions. Every function
takes segments along the first axis; further axes (options, groups) broadcast.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from optimiser.hydraulics.local_losses import velocity_head_m


def start_point_loss_m(node_point_k: ArrayLike, entrance_k: float,
                       velocity_head: ArrayLike) -> np.ndarray:
    """Point loss [m] at the upstream end of every segment: fitting and entrance.

    Parameters
    ----------
    node_point_k : array_like, shape (n + 1,)
        Loss coefficient K [-] of the fittings at each node (entrance not included).
    entrance_k : float
        Entrance loss coefficient [-] at the source, acting on the first segment.
    velocity_head : array_like, shape (n, ...)
        Velocity head V^2/(2g) [m] of each segment (further axes broadcast).

    Returns
    -------
    numpy.ndarray, shape (n, ...)
        h_i = K_node[i] V_i^2/(2g), plus K_entrance V_0^2/(2g) at i = 0 [m]: each point
        loss takes the velocity of the pipe just downstream of it.

    Examples
    --------
    An entrance (K = 0.5) and a valve (K = 2) at the second node, velocity heads 0.1 m
    and 0.2 m (worked by hand, common practice, no source):

    >>> start_point_loss_m([0.0, 2.0, 0.0], 0.5, [0.1, 0.2]).round(6).tolist()
    [0.05, 0.4]
    """
    head = np.asarray(velocity_head, dtype=float)
    node_k = np.asarray(node_point_k, dtype=float)
    loss = node_k[:-1].reshape((-1,) + (1,) * (head.ndim - 1)) * head
    loss[0] = loss[0] + entrance_k * head[0]
    return loss


def section_loss_m(length_m: ArrayLike, friction_gradient: ArrayLike, local_k_per_km: float,
                   velocity_head: ArrayLike) -> np.ndarray:
    """Head lost along a pipe [m]: friction and the per-km local-loss allowance.

    Parameters
    ----------
    length_m : array_like
        Pipe (slope) length L [m].
    friction_gradient : array_like
        Friction gradient J [m/m] (Darcy--Weisbach or Hazen--Williams).
    local_k_per_km : float
        Allowance K' [1/km] for bends and valves not listed as fittings.
    velocity_head : array_like
        Velocity head V^2/(2g) [m].

    Returns
    -------
    numpy.ndarray
        h = L (J + K'/1000 V^2/(2g)) [m], broadcast over the arguments.

    Examples
    --------
    1,000 m at J = 5 m/km with K' = 0.8/km and a velocity head of 0.129 m (worked by
    hand, common practice, no source):

    >>> print(f"{float(section_loss_m(1000.0, 0.005, 0.8, 0.129)):.4f}")
    5.1032
    """
    length = np.asarray(length_m, dtype=float)
    return length * (np.asarray(friction_gradient, dtype=float)
                     + local_k_per_km / 1000.0 * np.asarray(velocity_head, dtype=float))


def energy_line_m(source_level_m: ArrayLike, start_loss_m: ArrayLike,
                  segment_loss_m: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Energy level [m] at the start and end of every segment from its losses.

    Parameters
    ----------
    source_level_m : array_like
        Energy at the source H [m] (the source's water level); broadcasts against the
        trailing axes of the losses.
    start_loss_m : array_like, shape (n, ...)
        Point loss at the upstream end of each segment [m] (:func:`start_point_loss_m`).
    segment_loss_m : array_like, shape (n, ...)
        Loss along each segment [m] (:func:`section_loss_m`).

    Returns
    -------
    energy_start_m, energy_end_m : numpy.ndarray, shape (n, ...)
        E_start[i] = H - sum_{l<i} (P_l + S_l) - P_i and E_end[i] = E_start[i] - S_i [m]
        (Bernoulli's equation with losses; Streeter & Wylie 1985, ch. 3).

    Examples
    --------
    Source at 100 m, point losses 0.05 m and 0.4 m, pipe losses 5 m and 3 m (worked by
    hand, common practice, no source):

    >>> start, end = energy_line_m(100.0, [0.05, 0.4], [5.0, 3.0])
    >>> start.round(6).tolist(), end.round(6).tolist()
    ([99.95, 94.55], [94.95, 91.55])
    """
    start, segment = np.broadcast_arrays(np.asarray(start_loss_m, dtype=float),
                                         np.asarray(segment_loss_m, dtype=float))
    drops = np.empty((2 * len(segment), *segment.shape[1:]))
    drops[0::2] = start
    drops[1::2] = segment
    cumulative = np.cumsum(drops, axis=0)
    return source_level_m - cumulative[0::2], source_level_m - cumulative[1::2]


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

    Parameters
    ----------
    source_level_m : float
        Energy at the source [m].
    entrance_k : float
        Entrance loss coefficient [-].
    segment_length_m : array_like, shape (n,)
        Pipe length of each segment [m].
    friction_gradient : array_like, shape (n,)
        Friction gradient J of each segment [m/m].
    local_k_per_km : float
        Per-km local-loss allowance K' [1/km].
    segment_velocity_m_s : array_like, shape (n,)
        Mean velocity of each segment [m/s].
    node_point_k : array_like, shape (n + 1,)
        Fitting K [-] at each node; its first value is added to the entrance loss.

    Returns
    -------
    energy_start_m, energy_end_m : numpy.ndarray, shape (n,)
        Energy [m] at the start (after its point loss) and the end of each segment (see
        the module docstring for the equations).

    Examples
    --------
    One 1,000 m pipe at 1.5915 m/s (50 L/s in a 200 mm bore), J = 0.01 m/m, entrance
    K = 0.5, no allowance, from a source at 100 m (worked by hand, common practice, no
    source): entrance loss 0.5 x 0.1291 m, then 10 m of friction.

    >>> start, end = energy_along_chain(100.0, 0.5, [1000.0], [0.01], 0.0, [1.5915], [0, 0])
    >>> print(f"{start[0]:.4f} {end[0]:.4f}")
    99.9354 89.9354
    """
    length = np.asarray(segment_length_m, dtype=float)
    head = velocity_head_m(segment_velocity_m_s)
    point = start_point_loss_m(node_point_k, entrance_k, head)
    segment = section_loss_m(length, friction_gradient, local_k_per_km, head)
    return energy_line_m(source_level_m, point, segment)


def outlet_energy_m(energy_end_m: ArrayLike, last_velocity_head_m: ArrayLike,
                    final_point_k: float, exit_k: float) -> tuple[np.ndarray, np.ndarray]:
    """Energy [m] just past the fitting at the last node, and at the outlet after the exit.

    Parameters
    ----------
    energy_end_m : array_like
        Energy at the end of the last segment [m].
    last_velocity_head_m : array_like
        Velocity head of the last segment [m].
    final_point_k : float
        Fitting K [-] at the last node (it takes the last segment's velocity).
    exit_k : float
        Exit loss coefficient [-] into the receiving tank.

    Returns
    -------
    after_fitting_m, outlet_m : numpy.ndarray
        E_end - K_final h and E_end - K_final h - K_exit h [m], with h the last segment's
        velocity head; the outlet value is the one held to the required head.

    Examples
    --------
    An exit (K = 1) at a velocity head of 0.1291 m, no final fitting (worked by hand,
    common practice, no source):

    >>> after, outlet = outlet_energy_m(89.9354, 0.1291, 0.0, 1.0)
    >>> print(f"{float(after):.4f} {float(outlet):.4f}")
    89.9354 89.8063
    """
    end = np.asarray(energy_end_m, dtype=float)
    head = np.asarray(last_velocity_head_m, dtype=float)
    after_fitting = end - final_point_k * head
    return after_fitting, after_fitting - exit_k * head


def hydraulic_grade_m(energy_m: ArrayLike, velocity_m_s: ArrayLike) -> np.ndarray:
    """Hydraulic grade line [m]: HGL = E - V^2/(2g), with V of the pipe at that place.

    Examples
    --------
    Energy 89.9354 m at 1.5915 m/s (worked by hand, common practice, no source):

    >>> print(f"{float(hydraulic_grade_m(89.9354, 1.5915)):.4f}")
    89.8063
    """
    return np.asarray(energy_m, dtype=float) - velocity_head_m(velocity_m_s)


def static_head_m(top_water_level_m: ArrayLike, pipe_level_m: ArrayLike,
                  surge_head_m: ArrayLike = 0.0) -> np.ndarray:
    """Head a pipe must stand with the line shut [m]: static head plus surge allowance.

    Parameters
    ----------
    top_water_level_m : array_like
        Top water level of the source [m]: the static line at no flow.
    pipe_level_m : array_like
        Pipe level z [m] (usually a piece's lowest point).
    surge_head_m : array_like, optional
        Surge head added to the static head [m]; broadcasts (e.g. one value per option).

    Returns
    -------
    numpy.ndarray
        (top water level - z) + surge [m], compared with a class's allowable head.

    Examples
    --------
    Top water at 154 m, a low point at 40 m, 20 m of surge allowance: 134 m, within a
    PN16 class (16 bar = 163.2 m) but not PN10 (102 m) (worked by hand, common practice,
    no source):

    >>> print(f"{float(static_head_m(154.0, 40.0, 20.0)):.1f}")
    134.0
    """
    static = np.asarray(top_water_level_m, dtype=float) - np.asarray(pipe_level_m, dtype=float)
    return static + np.asarray(surge_head_m, dtype=float)
