"""The LP of one reach's relaxation (:mod:`optimiser.milp.tank_bounds`), for its duals.

The duals of the energy rows of the reach from a to b are the prices lambda_s of a metre
of head lost in section s; extended over the whole route (constant above a and below
b) they are a *profile*: non-increasing and non-negative, so it bounds every reach
(weak duality), and the reach from a to b exactly at its LP value (strong duality).
Solved by HiGHS through :func:`scipy.optimize.linprog`.
"""

from __future__ import annotations

import numpy as np
from scipy import sparse
from scipy.optimize import linprog

from optimiser.milp.tank_bounds import ReachRelaxation, reach_bands


def reach_profile(relax: ReachRelaxation, first: int, last: int
                  ) -> tuple[np.ndarray, float] | None:
    """The profile from the LP of the reach from node ``first`` to node ``last``, and
    the LP's value (None: the LP has no solution, so the reach cannot be built)."""
    n_k = relax.need_m.shape[0]
    n = len(relax.lowest_m)
    sections = np.arange(first, last)
    band = reach_bands(relax, first, sections)
    s_of, j_of = np.nonzero(relax.usable[sections, :, band])
    span, n_x = len(sections), len(s_of)
    on = sections[s_of]
    eq: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    ub: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    b_eq = np.zeros(n_k * span + span)
    b_ub = np.zeros(n_k * span)
    for k in range(n_k):
        row = k * span
        energy = n_x + row + np.arange(span)  # E[k, first+1 .. last]
        loss = relax.loss_m[k, on, j_of] + np.where(s_of == 0, relax.start_k[first], 0.0) \
            * relax.head_m[k, on, j_of]
        eq += [(row + s_of, np.arange(n_x), loss), (row + np.arange(span), energy,
                                                     np.ones(span)),
               (row + np.arange(1, span), energy[:-1], -np.ones(span - 1))]
        b_eq[row] = relax.start_m[k, first]
        k_end = np.where(s_of == span - 1, relax.end_k[last], 1.0)
        ub += [(row + np.arange(span), energy, -np.ones(span)),
               (row + s_of, np.arange(n_x), k_end * relax.head_m[k, on, j_of])]
        b_ub[row:row + span] = -relax.need_m[k, first + 1:last + 1]
        b_ub[row + span - 1] = -relax.end_need_m[k, last]
    convex = n_k * span
    eq.append((convex + s_of, np.arange(n_x), np.ones(n_x)))
    b_eq[convex:] = 1.0
    shape = n_x + n_k * span
    bounds = [(0.0, 1.0)] * n_x + [(None, None)] * (n_k * span)
    cost = np.concatenate([relax.cost[on, j_of], np.zeros(n_k * span)])
    result = linprog(cost, A_ub=_matrix(ub, len(b_ub), shape), b_ub=b_ub,
                     A_eq=_matrix(eq, len(b_eq), shape), b_eq=b_eq, bounds=bounds,
                     method="highs")
    if result.status != 0:
        return None
    prices = -np.asarray(result.eqlin.marginals)[:convex].reshape(n_k, span)
    profile = np.empty((n_k, n))
    profile[:, :first] = prices[:, :1]
    profile[:, first:last] = prices
    profile[:, last:] = prices[:, -1:]
    profile = np.minimum.accumulate(np.maximum(profile, 0.0), axis=1)
    return profile, float(result.fun)


def _matrix(parts: list[tuple[np.ndarray, np.ndarray, np.ndarray]], rows: int,
            columns: int) -> sparse.csr_array:
    row = np.concatenate([p[0] for p in parts])
    column = np.concatenate([p[1] for p in parts])
    value = np.concatenate([p[2] for p in parts])
    return sparse.csr_array((value, (row, column)), shape=(rows, columns))
