"""Arrays of the dynamic programme over pieces of a rising main
(:mod:`optimiser.milp.pumps.piece_programme`), computed once per study (no solver).

The programme runs backwards from the outlet. A label stands for the part of a design
from some node ``x`` to the outlet whose most upstream piece is option ``j``; it is
kept in coordinates *relative to that option* (Bellman, R. (1957), Dynamic
Programming, Princeton University Press, for the recursion):

    relative loss  = D(x) - T[x, j],   relative value = V(x) - W[x, j]

with ``D(x)`` [m] the friction and per-km allowance downstream of x in the class
scenario, ``V(x)`` the value downstream of x (pipes, changes, and the energy and
station of those losses at the weights below), and ``T``, ``W`` the same sums for the
option laid from x to the outlet. Growing the piece by a section leaves both relative
numbers unchanged, so a label is touched only where a piece changes.

The class rule under pumping (:mod:`optimiser.milp.pumps.class_rows`), relaxed to the
class scenario k*: an option j in section s needs ``D(start of s) <= theta[s, j] =
limit(j) - margin + lowest pipe level(s) - required head``; in relative terms
``relative loss <= room[s, j] = theta[s, j] - T[s, j]`` (also the station head's upper
bound, ``D <= cap - need``). ``-inf`` where j is not admissible in s.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.milp.built_model import LENGTH_MARGIN_M, MARGIN_M
from optimiser.milp.data import ProblemData
from optimiser.milp.pump_columns import option_limits_m, pump_costs

__all__ = ["PieceTables", "piece_tables", "scenario_weights"]


@dataclass(frozen=True)
class PieceTables:
    """Everything the programme reads (module docstring for the notation)."""

    loss: np.ndarray  # (n, m) class-scenario loss of j over s; inf where inadmissible
    value: np.ndarray  # (n, m) value of j over s; inf where inadmissible
    tail_loss: np.ndarray  # (n+1, m) T
    tail_value: np.ndarray  # (n+1, m) W
    room: np.ndarray  # (n+1, m) largest relative loss j may carry over s (row n: inf)
    head_room: np.ndarray  # (n+1, m) least room over the sections upstream of each node
    window: np.ndarray  # (n+1, m) least room over the sections a new piece first covers
    complete_at: np.ndarray  # (n+1,) node where a piece begun at e is long enough, -1 none
    free_theta: np.ndarray  # (n, m) per section, admissible thetas in descending order
    free_value: np.ndarray  # (n, m) least value among the first t+1 of that order
    free_loss: np.ndarray  # (n, m) least loss among the first t+1 of that order
    rest: np.ndarray  # (G, r+1, n+1) least value upstream of each node (see _rest)
    rest_levels: np.ndarray  # (G,) excess losses of its rows, ascending from 0
    least_loss: np.ndarray  # (n+1,) least loss any pipes have from a node to the outlet
    diameter: np.ndarray  # (m,) internal diameter, for sizes_non_increasing
    constant: float  # weighted value of the need of every scenario
    change_cost: float
    max_changes: int
    non_increasing: bool


def scenario_weights(data: ProblemData, station_scenario: int) -> np.ndarray:
    """(K,) money per metre of station head of each scenario: the present value of its
    energy, plus the station's cost per kW times its kW per metre for the scenario taken
    to set the installed power (``station * max_k kw_k H_k >= station * kw_k* H_k*``,
    so the weighted sum is at most the life-cycle cost)."""
    costs = pump_costs(data.study)
    weights = costs.energy_value_per_m.copy()
    weights[station_scenario] += costs.station_cost_per_kw * costs.kw_per_m[station_scenario]
    return weights


def piece_tables(data: ProblemData, head_upper_m: np.ndarray, weights: np.ndarray,
                 class_scenario: int, shortest_m: float) -> PieceTables:
    """The tables of ``data`` (the fine sections) for the given weights and scenario."""
    study = data.study
    admissible = data.admissible
    n, m = admissible.shape
    loss = np.where(admissible, data.section_loss_m[class_scenario], np.inf)
    value = data.section_cost + np.einsum("k,ksj->sj", weights, data.section_loss_m)
    value = np.where(admissible, value, np.inf)
    tail_loss = _tail(np.where(admissible, loss, 0.0))
    tail_value = _tail(np.where(admissible, value, 0.0))
    need = study.outlet.required_head_m - data.source_level_m
    pipe = data.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    theta = option_limits_m(data)[None, :] - MARGIN_M + lowest[:, None] \
        - study.outlet.required_head_m
    cap = float(head_upper_m[class_scenario] - need[class_scenario])
    theta = np.where(admissible, np.minimum(theta, cap), -np.inf)
    room = np.vstack([theta - tail_loss[:-1], np.full((1, m), np.inf)])
    complete_at = _complete_at(data.node_chainage_m, shortest_m)
    order = np.argsort(-theta, axis=1, kind="stable")
    rules = study.rules
    changes = int(rules.max_changes if rules.max_changes is not None else n)
    levels, rest, least_loss = _rest(value, loss, theta, cap, float(study.costs.change_cost),
                                     changes)
    return PieceTables(
        loss=loss, value=value, tail_loss=tail_loss, tail_value=tail_value, room=room,
        window=_window(room, complete_at), complete_at=complete_at,
        head_room=np.vstack([np.full((1, m), np.inf),
                             np.minimum.accumulate(room[:-1], axis=0)]),
        free_theta=np.take_along_axis(theta, order, axis=1),
        free_value=np.minimum.accumulate(np.take_along_axis(value, order, axis=1), axis=1),
        free_loss=np.minimum.accumulate(np.take_along_axis(loss, order, axis=1), axis=1),
        rest=rest, rest_levels=levels, least_loss=least_loss,
        diameter=study.catalogue.internal_diameter_m,
        constant=float(weights @ need), change_cost=float(study.costs.change_cost),
        max_changes=changes,
        non_increasing=bool(rules.sizes_non_increasing))


REST_LEVELS = 48
"""Excess losses at which the least value of the upstream sections is tabulated."""


def _rest(value: np.ndarray, loss: np.ndarray, theta: np.ndarray, cap: float,
          change_cost: float, changes: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A lower bound of the value of the sections upstream of each node x, by changes
    left r and by *excess* h: the loss at x less the least loss any pipes could have
    from x to the outlet, ``L(x)``. The loss at the start of an upstream section s is
    then at least ``h + L(s)``, so options whose theta is below it cannot lie there. By
    a forward recursion over sections (Bellman 1957) with at most r changes, each at its
    cost, the minimum piece length and the size rule left out, and the section just
    upstream of x at the least value any option allowed there has (it may be shared with
    the piece below). Returns (levels of h, the table (G, r+1, n+1), L)."""
    n, m = value.shape
    least_loss = np.concatenate([np.cumsum(np.min(loss, axis=1)[::-1])[::-1], [0.0]])
    levels = np.linspace(0.0, max(cap, 0.0), REST_LEVELS)
    allowed = theta[None, :, :] >= levels[:, None, None] + least_loss[None, :-1, None]
    priced = np.where(allowed, value[None], np.inf)  # (G, n, m)
    free = priced.min(axis=2)  # (G, n)
    table = np.zeros((REST_LEVELS, changes + 1, n + 1))
    ending = np.zeros((REST_LEVELS, changes + 1, m))  # best upstream part ending in j
    for x in range(1, n + 1):
        table[:, :, x] = ending.min(axis=2) + free[:, None, x - 1]
        switched = np.full(ending.shape, np.inf)
        switched[:, 1:] = ending[:, :-1].min(axis=2, keepdims=True) + change_cost
        ending = np.minimum(ending, switched) + priced[:, None, x - 1, :]
    return levels, table, least_loss


def _tail(per_section: np.ndarray) -> np.ndarray:
    """(n+1, m) sums over the sections from each node to the outlet."""
    reversed_sum = np.cumsum(per_section[::-1], axis=0)[::-1]
    return np.vstack([reversed_sum, np.zeros((1, per_section.shape[1]))])


def _complete_at(chainage: np.ndarray, shortest_m: float) -> np.ndarray:
    """(n+1,) for a piece whose downstream end is node e or inside section e-1: the node
    from which it may end (upstream) at a change, ``q + 1`` with q the last node at least
    ``shortest_m`` (less the length margin) upstream of e; -1 if there is none. Its real
    length is at most ``chainage[e] - chainage[q]`` when it ends inside section q."""
    reach = chainage - shortest_m + LENGTH_MARGIN_M
    last = np.searchsorted(chainage, reach, side="right") - 1
    return np.where(last >= 0, last + 1, -1)


def _window(room: np.ndarray, complete_at: np.ndarray) -> np.ndarray:
    """(n+1, m) least room over sections [complete_at[e], e) (-inf where no piece can
    begin at e): the class rule over the sections a new piece covers before it may
    change again."""
    n = room.shape[0] - 1
    window = np.full(room.shape, -np.inf)
    ends = np.arange(n + 1)
    valid = (complete_at >= 0) & (complete_at < ends)
    if not valid.any():
        return window
    pairs = np.column_stack([complete_at[valid], ends[valid]]).ravel()
    window[valid] = np.minimum.reduceat(room, pairs, axis=0)[::2]
    return window
