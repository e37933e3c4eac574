"""The cheapest sequence of whole-section pieces that obeys the rules, by dynamic programming.

Given a cost ``rate[s, j]`` for laying all of survey section ``s`` in option ``j``
(``inf`` where the option is not admissible), find one option per section minimising

    sum_s rate[s, j_s] + change_cost * changes

subject to the rules of contract section 1: at most ``max_changes`` changes of option
along the route, every merged piece at least ``min_length_m`` of chainage long (the
route's length if it is shorter), and, with ``non_increasing``, no growth of internal
diameter downstream. This is a shortest path in a layered graph (Bellman, R. (1957),
Dynamic Programming, Princeton University Press): state = (node, option of the piece
that ends there, changes so far), every state a *complete* piece (already at least the
minimum length). A piece either grows by one section or a new piece starts at the node
and is first complete at the first node at least ``min_length_m`` further on.

It is exact over designs whose changes sit on survey nodes. The optimiser uses it as a
primal heuristic with pressure prices in the rate (:mod:`optimiser.milp.priced`); the
check and the rules judge whatever it returns.
"""

from __future__ import annotations

import numpy as np

MAX_LAYERS = 61
"""At most this many change counts are tracked (60 changes); a larger ``max_changes``
is searched over designs with at most 60 changes, which all obey it."""


def piece_cost_table(rate: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Prefix sums of ``rate`` over sections (inf replaced by 0) and of its inf count:
    the cost of sections [a, b) in option j is ``total[b, j] - total[a, j]`` when
    ``blocked[b, j] == blocked[a, j]``, else inf."""
    finite = np.isfinite(rate)
    total = np.vstack([np.zeros((1, rate.shape[1])), np.cumsum(np.where(finite, rate, 0.0),
                                                                axis=0)])
    blocked = np.vstack([np.zeros((1, rate.shape[1]), dtype=np.int64),
                         np.cumsum(~finite, axis=0)])
    return total, blocked


def cheapest_sequence(rate: np.ndarray, chainage_length_m: np.ndarray, *,
                      max_changes: int | None, min_length_m: float, change_cost: float,
                      diameter_mm: np.ndarray | None = None) -> np.ndarray | None:
    """Option index per section of the cheapest rule-abiding whole-section design, or
    None when there is none. ``diameter_mm`` (m,) switches on "non-increasing"."""
    n, m = rate.shape
    chainage = np.concatenate([[0.0], np.cumsum(chainage_length_m)])
    shortest = min(float(min_length_m), float(chainage[-1]))
    # First node at which a piece starting at node a is complete.
    complete = np.searchsorted(chainage, chainage + shortest - 1e-9, side="left")
    complete = np.maximum(complete, np.arange(n + 1) + 1)
    counted = max_changes is not None
    layers = min(max_changes, MAX_LAYERS - 1) + 1 if counted else 1
    total, blocked = piece_cost_table(rate)
    previous_ok = ~np.eye(m, dtype=bool)  # previous[j, j']: j' may come before j
    if diameter_mm is not None:
        previous_ok &= diameter_mm[None, :] >= diameter_mm[:, None] - 1e-9

    inf = np.inf
    value = np.full((n + 1, layers, m), inf)
    start_node = np.full((n + 1, layers, m), -2, dtype=np.int32)  # -1: grown from b-1
    before = np.full((n + 1, layers, m), -1, dtype=np.int32)  # option of the piece before
    pending = np.full((n + 2, layers, m), inf)
    pending_start = np.full((n + 2, layers, m), -1, dtype=np.int32)
    pending_before = np.full((n + 2, layers, m), -1, dtype=np.int32)
    for node in range(n + 1):
        if node > 0:
            grown = value[node - 1] + rate[node - 1][None, :]
            take = pending[node] < grown
            value[node] = np.where(take, pending[node], grown)
            start_node[node] = np.where(take, pending_start[node], -1)
            before[node] = np.where(take, pending_before[node], -1)
        end = complete[node]
        if node == n or end > n:
            continue
        cost = np.where(blocked[end] == blocked[node], total[end] - total[node], inf)
        if node == 0:
            candidate = np.full((layers, m), inf)
            candidate[0] = cost
            came_from = np.full((layers, m), -1, dtype=np.int32)
        else:
            # best piece before, per (layer, new option): previous layer if counted
            best, pick = _best_before(value[node], previous_ok, diameter_mm is None)
            candidate = np.full((layers, m), inf)
            came_from = np.full((layers, m), -1, dtype=np.int32)
            if counted:
                candidate[1:] = best[:-1] + change_cost + cost[None, :]
                came_from[1:] = pick[:-1]
            else:
                candidate[:] = best + change_cost + cost[None, :]
                came_from[:] = pick
        better = candidate < pending[end]
        pending[end] = np.where(better, candidate, pending[end])
        pending_start[end] = np.where(better, node, pending_start[end])
        pending_before[end] = np.where(better, came_from, pending_before[end])
    return _trace_back(value, start_node, before, counted)


def _best_before(source: np.ndarray, previous_ok: np.ndarray, any_order: bool
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Per (layer, new option): the cheapest complete piece that may come before it at
    this node (``source``: (L, m) values) and its option."""
    layers, m = source.shape
    inf = np.inf
    if not any_order:
        masked = np.where(previous_ok[None, :, :], source[:, None, :], inf)
        pick = np.argmin(masked, axis=2)  # (L, m)
        return np.take_along_axis(masked, pick[:, :, None], axis=2)[:, :, 0], pick
    # any other option may come before: the best, or the second best where the best is
    # the new option itself
    top = np.argpartition(source, 1, axis=1)[:, :2] if m > 1 else \
        np.zeros((layers, 2), dtype=np.int64)
    first = np.take_along_axis(source, top, axis=1)
    swap = first[:, 1] < first[:, 0]
    top[swap] = top[swap][:, ::-1]
    pick = np.broadcast_to(top[:, :1], (layers, m)).copy()
    pick[np.arange(layers), top[:, 0]] = top[:, 1] if m > 1 else -1
    best = np.take_along_axis(source, np.maximum(pick, 0), axis=1)
    if m == 1:
        best = np.full((layers, m), inf)
    return best, pick


def _trace_back(value: np.ndarray, start_node: np.ndarray, before: np.ndarray,
                counted: bool) -> np.ndarray | None:
    """The option per section of the cheapest complete state at the last node."""
    n = value.shape[0] - 1
    final = value[n]
    if not np.isfinite(final).any():
        return None
    layer, option = np.unravel_index(int(np.argmin(final)), final.shape)
    choice = np.full(n, -1, dtype=np.int64)
    node = n
    while node > 0:
        origin = int(start_node[node, layer, option])
        if origin == -1:
            choice[node - 1] = option
            node -= 1
            continue
        choice[origin:node] = option
        previous = int(before[node, layer, option])
        node = origin
        if counted:
            layer -= 1
        option = previous
    return choice
