"""Reduced-cost fixing: options that no design cheaper than the incumbent can use.

For a linear programme min c.x over a polyhedron, solved to optimality with value
``z_LP`` and reduced costs ``d``, every feasible x satisfies

    c.x >= z_LP + sum_j d_j * x_j        over the columns at their lower bound 0

(the remaining terms of the Lagrangian identity are products of a dual of the right
sign and a slack, or of a reduced cost and a move away from an upper bound, all >= 0;
e.g. Nemhauser & Wolsey (1988), Integer and Combinatorial Optimization, Wiley, section
II.5.1, "reduced cost fixing"). The LP relaxation (rules relaxed) is a relaxation of
every model the optimiser solves, so any design costing at most the incumbent ``U``
has ``sum d x <= U - z_LP`` (plus the largest tie-break term).

With a minimum piece length ``L``, a design that uses option j anywhere in a section
lays a merged piece of j at least ``L`` of chainage long that overlaps the section; on
that piece it pays at least the least reduced cost of any window of chainage ``L``
overlapping the section. Where even that window costs more than ``U - z_LP``, option j
cannot appear in the section in any design cheaper than the incumbent: the models that
follow may leave it out, and their bounds, capped at ``U``, stay valid.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.formulation import Formulation

RELATIVE_SLACK = 1e-6
"""Extra room on the allowed excess (relative to the incumbent's cost) for solver
tolerances in the duals."""


def window_minimum(density: np.ndarray, node_chainage_m: np.ndarray,
                   window_m: float) -> np.ndarray:
    """(n, m): for each section and column, the least integral of ``density`` (n, m)
    [per metre of chainage, constant within a section, >= 0] over a window of chainage
    ``window_m`` inside the route that overlaps the section."""
    n, m = density.shape
    chainage = node_chainage_m - node_chainage_m[0]
    total = float(chainage[-1])
    integral = np.vstack([np.zeros((1, m)),
                          np.cumsum(density * np.diff(chainage)[:, None], axis=0)])
    if window_m >= total:
        return np.broadcast_to(integral[-1], (n, m)).copy()
    # the window's cost is piecewise linear in its start a: its minimum over an interval
    # of starts is at a start or a stop of a section, shifted by 0 or by the window
    starts = np.unique(np.clip(np.concatenate([chainage, chainage - window_m]),
                               0.0, total - window_m))
    cost = np.empty((len(starts), m))
    for j in range(m):
        cost[:, j] = (np.interp(starts + window_m, chainage, integral[:, j])
                      - np.interp(starts, chainage, integral[:, j]))
    low = np.searchsorted(starts, np.clip(chainage[:-1] - window_m, 0.0, None), side="left")
    high = np.searchsorted(starts, np.minimum(chainage[1:], total - window_m), side="right")
    out = np.empty((n, m))
    for s in range(n):
        out[s] = cost[low[s]:max(high[s], low[s] + 1)].min(axis=0)
    return out


def allowed_below(fine: ProblemData, first_sections: np.ndarray, lp: Formulation,
                  lp_objective: float, upper_bound: float) -> np.ndarray | None:
    """(n, m) options a design costing at most ``upper_bound`` may use in each fine
    section, from the solved LP relaxation ``lp`` over reaches starting at
    ``first_sections``; None when nothing can be fixed (no duals, no minimum piece
    length)."""
    length = min(float(fine.study.rules.min_piece_length_m),
                 float(fine.node_chainage_m[-1] - fine.node_chainage_m[0]))
    if lp.column_duals is None or lp.values is None or length <= 0:
        return None
    reach_count = len(first_sections)
    reduced = np.zeros((reach_count, fine.n_options))
    for (r, j), column in lp.x.items():
        if lp.values[column] <= 1e-9:
            reduced[r, j] = max(float(lp.column_duals[column]), 0.0)
    sizes = np.diff(np.concatenate([first_sections, [fine.n_sections]]))
    reach_of = np.repeat(np.arange(reach_count), sizes)
    slope = np.add.reduceat(fine.length_m, first_sections)
    # a reach's share is of its pipe (slope) length: per metre of chainage in section s
    per_metre = (fine.length_m / fine.chainage_length_m / slope[reach_of])[:, None] \
        * reduced[reach_of]
    least = window_minimum(per_metre, fine.node_chainage_m, length)
    room = upper_bound - lp_objective + lp.tiebreak_max + RELATIVE_SLACK * abs(upper_bound)
    return fine.admissible & (least <= room)
