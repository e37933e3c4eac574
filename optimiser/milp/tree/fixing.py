"""Reduced-cost fixing on the tree's LP: options no design cheaper than the best can use.

The argument of :mod:`optimiser.milp.fixing` holds on the tree as a whole: the LP
relaxation (rules relaxed) relaxes every model of the tree, so a design costing at most
the incumbent ``U`` has ``sum of d x <= U - z_LP`` over ALL its columns (every line's),
each term at least 0. A piece of option j on one line pays at least the least reduced
cost of a window of the minimum piece length there; where that alone exceeds
``U - z_LP``, j cannot appear there. So :func:`optimiser.milp.fixing.allowed_below`
applies line by line with the tree's ``z_LP`` and ``U``.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.fixing import allowed_below
from optimiser.milp.reaches import Reaches
from optimiser.milp.tree.lp_stage import TreeLp
from optimiser.milp.tree.problem import TreeProblem


def tree_allowed(problem: TreeProblem, lp: TreeLp | None, upper: float | None
                 ) -> list[np.ndarray] | None:
    """(n, m) options each line's fine sections may use in a design costing at most
    ``upper`` (None: nothing can be fixed)."""
    if lp is None or upper is None or lp.report.objective is None:
        return None
    lp.form.share_values()
    out = []
    for data, reaches, part in zip(problem.datas, lp.reaches, lp.form.parts, strict=True):
        ok = allowed_below(data, reaches.first, part, lp.report.objective, upper)
        if ok is None:
            return None
        out.append(ok)
    return out


def on_reaches(allowed: list[np.ndarray] | None, reaches: list[Reaches]
               ) -> list[np.ndarray] | None:
    """Fine-section masks as masks of merged reaches (a reach keeps an option if any of
    its sections does); None if a reach would keep no admissible option (only by solver
    noise: keep the model whole)."""
    if allowed is None:
        return None
    out = []
    for mask, own in zip(allowed, reaches, strict=True):
        merged = np.logical_or.reduceat(mask, own.first, axis=0)
        if not (merged & own.data.admissible).any(axis=1).all():
            return None
        out.append(merged)
    return out
