"""Reaches laid in one option: what a reach costs if it has no change of option.

A design of a reach between two tanks either lays one option from end to end, or changes
option at least once and so pays at least one ``change_cost``. The first kind is
priced exactly here, in the reach's relaxation (:mod:`optimiser.milp.tank_bounds`: the
same rows, the option's own velocity heads); the second costs at least the Lagrangian
bound plus one change. So the least of the two is a lower bound on the reach with the
change cost counted (:func:`with_one_change`): the LP prices a reach as if its pieces
could be mixed for free, which misses the change every mix of two sizes needs.
"""

from __future__ import annotations

import math
import time

import numpy as np

from optimiser.milp.tank_bounds import PairFrame, ReachRelaxation


def single_option_costs(relax: ReachRelaxation, frame: PairFrame,
                        deadline: float = math.inf) -> np.ndarray | None:
    """(A, W) the cheapest reach laid in one option from end to end that meets the
    relaxation's rows (inf where none does); None when ``deadline``
    (:func:`time.perf_counter`) passes before every option is priced (a partial table
    would overstate the bounds it raises)."""
    n, m = relax.cost.shape
    first, last = frame.first, np.minimum(frame.last, n)
    width = frame.section.shape[1]
    beyond = first[:, None] + np.arange(width)[None, :] >= n
    best = np.full(frame.section.shape, np.inf)
    for j in range(m):
        if time.perf_counter() > deadline:
            return None
        usable = relax.usable[frame.section, j, frame.band] & ~beyond
        ok = np.logical_and.accumulate(usable, axis=1) & frame.valid
        if not ok.any():
            continue
        for k in range(relax.need_m.shape[0]):
            ok &= _energy_holds(relax, k, j, first, last)
        cost = np.cumsum(np.where(beyond, 0.0, relax.cost[frame.section, j]), axis=1)
        best = np.where(ok, np.minimum(best, cost), best)
    return best


def _energy_holds(relax: ReachRelaxation, k: int, j: int, first: np.ndarray,
                  last: np.ndarray) -> np.ndarray:
    """(A, W) in scenario k, option j from a to b keeps every pressure and the end."""
    loss = relax.loss_m[k, :, j]
    head = relax.head_m[k, :, j]
    lost = np.concatenate([[0.0], np.cumsum(loss)])  # P(i): lost above node i
    node_need = lost[1:] + head + relax.need_m[k, 1:]  # (n,) at nodes 1..n
    top = relax.start_m[k, first] - relax.start_k[first] * head[first] + lost[first]
    inner = np.full(last.shape, -np.inf)  # interior nodes a+1 .. b-1
    inner[:, 1:] = np.maximum.accumulate(node_need[last[:, :-1] - 1], axis=1)
    end = lost[last] + relax.end_k[last] * head[last - 1] + relax.end_need_m[k, last]
    with np.errstate(invalid="ignore"):
        return (inner <= top[:, None]) & (np.nan_to_num(end, nan=np.inf) <= top[:, None])


def with_one_change(bounds: np.ndarray, single: np.ndarray | None, change_cost: float
                    ) -> np.ndarray:
    """Bounds raised by one change where the reach cannot be cheaper in one option
    (unchanged without the table of single options)."""
    if change_cost <= 0 or single is None:
        return bounds
    return np.maximum(bounds, np.minimum(single, bounds + change_cost))
