"""The cheapest choice of tanks over bounds on every reach: a shortest path.

Nodes are the source, the sites and the study's own tanks in route order, and the
outlet; an arc a -> b is the reach between tanks at a and b, priced by a lower bound on
its pipes (:mod:`optimiser.milp.tank_bounds`) plus the price of a new tank at b. The
path must pass every tank of the study's own (no arc jumps one) and hold at most
``max_count`` new tanks (a dynamic programme with the count as its resource: Bellman
1957, *Dynamic Programming*, Princeton). Every choice of tanks is a path, and its cost
is at most the cheapest design with those tanks, so the shortest path is a lower bound
on every design; its tanks are a choice to design.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.milp.tank_bounds import PairFrame


@dataclass(frozen=True)
class TankPath:
    """The shortest path: its value (a lower bound) and its nodes, source to outlet."""

    value: float
    nodes: tuple[int, ...]

    @property
    def sites(self) -> list[int]:
        """The tank nodes of the path (without the source and the outlet)."""
        return list(self.nodes[1:-1])


def shortest_path(frame: PairFrame, bounds: np.ndarray, new: np.ndarray, tank_cost: float,
                  max_count: int | None, n_nodes: int) -> TankPath | None:
    """The cheapest path from node 0 to the outlet (node ``n_nodes - 1``) with at most
    ``max_count`` new tanks (``new``: node i is a site); None when no path is finite."""
    most = int(new.sum()) if max_count is None else min(int(max_count), int(new.sum()))
    width = bounds.shape[1]
    row_of = np.full(n_nodes, -1)
    row_of[frame.first] = np.arange(len(frame.first))
    best = np.full((most + 1, n_nodes), np.inf)
    best[0, 0] = 0.0
    came = np.full((most + 1, n_nodes), -1)
    for b in range(1, n_nodes):
        lo = max(0, b - width)
        heads = np.arange(lo, b)
        heads = heads[row_of[heads] >= 0]
        if not len(heads):
            continue
        arc = bounds[row_of[heads], b - heads - 1]  # (h,)
        if not np.isfinite(arc).any():
            continue
        total = best[:, heads] + arc[None, :]  # (count, h)
        pick = np.argmin(total, axis=1)
        value = total[np.arange(most + 1), pick]
        if new[b]:
            value = np.concatenate([[np.inf], value[:-1] + tank_cost])
            pick = np.concatenate([[0], pick[:-1]])
        better = value < best[:, b]
        best[better, b] = value[better]
        came[better, b] = heads[pick[better]]
    return _backtrack(best, came, new, n_nodes)


def _backtrack(best: np.ndarray, came: np.ndarray, new: np.ndarray,
               n_nodes: int) -> TankPath | None:
    count = int(np.argmin(best[:, n_nodes - 1]))
    value = float(best[count, n_nodes - 1])
    if not np.isfinite(value):
        return None
    nodes = [n_nodes - 1]
    while nodes[-1] != 0:
        b = nodes[-1]
        a = int(came[count, b])
        if new[b]:
            count -= 1
        nodes.append(a)
    return TankPath(value, tuple(reversed(nodes)))
