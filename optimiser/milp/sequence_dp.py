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

from dataclasses import dataclass

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


BLOCK_NODES = 256
"""Nodes whose new pieces are priced together (bounds the memory of one step)."""


@dataclass
class _Table:
    """The programme's states: ``value[i, l, j]`` the cheapest complete piece of option j
    ending at node i after l changes; ``pending[i]`` the cheapest new piece first complete
    at node i, its start node and the option before it (-1: none)."""

    value: np.ndarray
    pending: np.ndarray
    pending_start: np.ndarray
    pending_before: np.ndarray

    @classmethod
    def empty(cls, n: int, layers: int, m: int) -> _Table:
        # Every value past node 0 is written before it is read, and a pending start and
        # option are read only where a pending piece was written (left unfilled: the
        # tables are large on long routes).
        value = np.empty((n + 1, layers, m))
        value[0] = np.inf
        return cls(value, np.full((n + 2, layers, m), np.inf),
                   np.empty((n + 2, layers, m), dtype=np.int32),
                   np.empty((n + 2, layers, m), dtype=np.int32))


def cheapest_sequence(rate: np.ndarray, chainage_length_m: np.ndarray, *,
                      max_changes: int | None, min_length_m: float, change_cost: float,
                      diameter_mm: np.ndarray | None = None) -> np.ndarray | None:
    """Option index per section of the cheapest rule-abiding whole-section design, or
    None when there is none. ``diameter_mm`` (m,) switches on "non-increasing".

    Nodes go in blocks: a piece starting at node a is first complete at ``complete[a]``,
    which never falls as a grows, so no new piece starting in [a, complete[a]) completes
    inside that range. The states of a block are final once those before it are done:
    they are grown section by section, then the new pieces starting in it are priced at
    once."""
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
    table = _Table.empty(n, layers, m)
    first = 0
    while first <= n:
        stop = min(int(complete[first]), first + BLOCK_NODES, n + 1)
        for node in range(max(first, 1), stop):
            # grow the piece ending at the node before, or take the new piece, if cheaper
            grown = table.value[node - 1] + rate[node - 1][None, :]
            np.minimum(table.pending[node], grown, out=table.value[node])
        nodes = np.arange(first, stop)
        nodes = nodes[(nodes < n) & (complete[nodes] <= n)]
        if len(nodes):
            _new_pieces(table, nodes, complete[nodes], total, blocked, previous_ok,
                        diameter_mm is None, counted, change_cost)
        first = stop
    return _trace_back(table, rate, counted)


def _new_pieces(table: _Table, nodes: np.ndarray, ends: np.ndarray, total: np.ndarray,
                blocked: np.ndarray, previous_ok: np.ndarray, any_order: bool,
                counted: bool, change_cost: float) -> None:
    """Price the new pieces starting at ``nodes`` (complete at ``ends``, non-decreasing)
    and keep each where it beats the pending piece at its end (the first one on ties)."""
    inf = np.inf
    cost = np.where(blocked[ends] == blocked[nodes], total[ends] - total[nodes], inf)
    best, pick = _best_before(table.value[nodes], previous_ok, any_order)
    candidate = np.full(best.shape, inf)
    came_from = np.full(best.shape, -1, dtype=np.int32)
    if counted:  # a change moves to the next layer
        candidate[:, 1:] = best[:, :-1] + change_cost + cost[:, None, :]
        came_from[:, 1:] = pick[:, :-1]
    else:
        candidate[:] = best + change_cost + cost[:, None, :]
        came_from[:] = pick
    if nodes[0] == 0:  # the first piece: nothing before it, no change
        candidate[0] = inf
        candidate[0, 0] = cost[0]
        came_from[0] = -1
    groups = np.flatnonzero(np.concatenate([[True], ends[1:] != ends[:-1]]))
    lowest = np.minimum.reduceat(candidate, groups, axis=0)
    group_of = np.repeat(np.arange(len(groups)), np.diff(np.append(groups, len(nodes))))
    position = np.where(candidate == lowest[group_of],
                        np.arange(len(nodes))[:, None, None], len(nodes))
    winner = np.minimum.reduceat(position, groups, axis=0)  # first of the cheapest
    end = ends[groups]
    better = lowest < table.pending[end]
    table.pending[end] = np.where(better, lowest, table.pending[end])
    table.pending_start[end] = np.where(better, nodes[winner], table.pending_start[end])
    table.pending_before[end] = np.where(better, np.take_along_axis(came_from, winner, axis=0),
                                         table.pending_before[end])


def _best_before(source: np.ndarray, previous_ok: np.ndarray, any_order: bool
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Per (node, layer, new option): the cheapest complete piece that may come before it
    at that node (``source``: (B, L, m) values) and its option."""
    m = source.shape[-1]
    inf = np.inf
    if not any_order:
        masked = np.where(previous_ok, source[:, :, None, :], inf)  # (B, L, m, m)
        pick = np.argmin(masked, axis=3)  # (B, L, m)
        return np.take_along_axis(masked, pick[..., None], axis=3)[..., 0], pick
    if m == 1:
        return np.full(source.shape, inf), np.full(source.shape, -1, dtype=np.int64)
    # any other option may come before: the best, or the second best where the best is
    # the new option itself
    top = np.argpartition(source, 1, axis=2)[:, :, :2]
    first = np.take_along_axis(source, top, axis=2)
    swap = first[:, :, 1] < first[:, :, 0]
    top[swap] = top[swap][:, ::-1]
    pick = np.broadcast_to(top[:, :, :1], source.shape).copy()
    np.put_along_axis(pick, top[:, :, :1], top[:, :, 1:], axis=2)
    return np.take_along_axis(source, pick, axis=2), pick


def _trace_back(table: _Table, rate: np.ndarray, counted: bool) -> np.ndarray | None:
    """The option per section of the cheapest complete state at the last node."""
    value = table.value
    n = value.shape[0] - 1
    final = value[n]
    if not np.isfinite(final).any():
        return None
    layer, option = np.unravel_index(int(np.argmin(final)), final.shape)
    choice = np.full(n, -1, dtype=np.int64)
    node = n
    while node > 0:
        # the state came from the new piece exactly where that was cheaper than growing
        grown = value[node - 1, layer, option] + rate[node - 1, option]
        if not table.pending[node, layer, option] < grown:
            choice[node - 1] = option
            node -= 1
            continue
        origin = int(table.pending_start[node, layer, option])
        choice[origin:node] = option
        previous = int(table.pending_before[node, layer, option])
        node = origin
        if counted:
            layer -= 1
        option = previous
    return choice
