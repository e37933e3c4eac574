"""Stage: a bound by enumeration when the rules allow at most one change.

With ``max_changes`` 0 or 1 every design of the model is one piece, or two pieces A then
B meeting at a survey node or inside a section. This stage takes every such pair and
every place of the change and computes a lower bound of the life-cycle cost of each
case from a relaxation of the model written here in closed form (whole arrays, no
solver):

- the station head of scenario k is at least the outlet's need, ``H_k >= required -
  source level + D_k(0)`` with ``D_k(c)`` the friction and per-km allowance downstream
  of c (point losses and the pressure rows left out, which only lowers the cost), at
  least 0 and at most its upper bound (:func:`~optimiser.milp.pump_columns.head_bounds_m`);
- classes under pumping: the model holds ``w[s] - lowest(s) <= limit(j)`` for every
  option j in section s with ``w[s]`` at least the energy at its start, which is at
  least ``required + max_k D_k(start of s)``; so ``max_k D_k(start of s) <= limit(j) +
  lowest(s) - required``, checked in every section;
- admissibility per section, the minimum piece length (chainage), sizes non-increasing
  and the change cost as the model has them.

A change at node i is computed exactly in these terms. A change inside section s at a
share t of it is relaxed further: the class rows take, per scenario, the smaller of
the two options' losses in s, and the cost is the least over t of its convex
piecewise-linear form (the station's capital is the largest power, so the least is at
t = 0, t = 1 or a breakpoint, all evaluated). The least over all cases is a valid bound
of the model (every design of it is one of the cases, and each case's value is at most
its cost). The cheapest node changes are offered as designs, judged by the check.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np

from optimiser.milp.built_model import LENGTH_MARGIN_M, MARGIN_M
from optimiser.milp.data import ProblemData
from optimiser.milp.outcome import Stage
from optimiser.milp.pump_columns import head_upper_m, option_limits_m, pump_costs
from optimiser.milp.pumps.designs import consider
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.model import Design, Piece
from optimiser.model.status import Status

__all__ = ["Enumeration", "PairBound", "enumeration", "pair_bounds", "run_two_pieces"]


@dataclass(frozen=True)
class Enumeration:
    """Cumulative arrays of the fine sections for the closed-form cases."""

    cost: np.ndarray  # (n+1, m) pipe cost of sections before node i
    loss: np.ndarray  # (K, n+1, m) loss before node i
    bad: np.ndarray  # (n+1, m) inadmissible sections before node i
    theta: np.ndarray  # (n, m) most downstream loss the class of j allows in s
    need: np.ndarray  # (K,) required head - source level
    cap: np.ndarray  # (K,) upper bound of the station heads
    energy: np.ndarray  # (K,) present value of energy per metre of head
    kw: np.ndarray  # (K,) kW per metre of head
    station: float  # station cost per kW
    chainage: np.ndarray  # (n+1,)
    diameter: np.ndarray  # (m,)
    data: ProblemData


@dataclass(frozen=True)
class PairBound:
    """The least bound over the cases (None: stopped by the clock before every case was
    bounded, so no bound), and the node changes cheapest in it."""

    bound: float | None
    designs: list[tuple[float, int, int, int]]  # (value, A, B, node)


def enumeration(data: ProblemData, head_upper_m: np.ndarray) -> Enumeration:
    """The cumulative arrays of ``data`` (the fine sections)."""
    study = data.study
    zero = np.zeros((1, data.n_options))
    pipe = data.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    limits = option_limits_m(data) - MARGIN_M
    costs = pump_costs(study)
    required = study.outlet.required_head_m
    return Enumeration(
        cost=np.concatenate([zero, np.cumsum(data.section_cost, axis=0)]),
        loss=np.concatenate([np.zeros((data.n_scenarios, 1, data.n_options)),
                             np.cumsum(data.section_loss_m, axis=1)], axis=1),
        bad=np.concatenate([zero, np.cumsum(~data.admissible, axis=0)]),
        theta=limits[None, :] + lowest[:, None] - required,
        need=required - data.source_level_m, cap=head_upper_m,
        energy=costs.energy_value_per_m, kw=costs.kw_per_m,
        station=costs.station_cost_per_kw, chainage=data.node_chainage_m,
        diameter=study.catalogue.internal_diameter_m, data=data)


def _life_cycle(e: Enumeration, pipes: np.ndarray, downstream: np.ndarray) -> np.ndarray:
    """Pipes plus energy and station for total losses ``downstream`` (K, ...); inf
    where a head would pass its upper bound."""
    shape = (-1,) + (1,) * (downstream.ndim - 1)
    head = e.need.reshape(shape) + downstream
    cap = e.cap.reshape(shape)
    ok = (head <= cap + 1e-9).all(axis=0)
    head = np.maximum(head, 0.0)
    value = pipes + (e.energy.reshape(shape) * head).sum(axis=0) \
        + e.station * (e.kw.reshape(shape) * head).max(axis=0)
    return np.where(ok, value, np.inf)


def pair_bounds(e: Enumeration, change_cost: float, shortest_m: float,
                non_increasing: bool, one_change: bool,
                deadline: float = math.inf) -> PairBound:
    """The least value over one piece and (with ``one_change``) every pair and change
    place (module docstring); the three cheapest node changes as designs. Past
    ``deadline`` (:func:`time.perf_counter`) before the last first option, the cases
    met so far give their designs and no bound."""
    n = e.data.n_sections
    tail = e.loss[:, -1:, :] - e.loss  # (K, n+1, m) loss from node i to the outlet
    broken = (tail[:, :-1, :].max(axis=0) > e.theta + 1e-9)  # (n, m)
    ok_from = np.concatenate([np.cumsum(broken[::-1], axis=0)[::-1] == 0,
                              np.ones((1, e.theta.shape[1]), dtype=bool)])  # (n+1, m)
    uniform = _life_cycle(e, e.cost[-1], e.loss[:, -1, :])
    uniform = np.where(ok_from[0] & (e.bad[-1] == 0), uniform, np.inf)
    bound = float(uniform.min())
    designs = [(float(uniform[a]), a, a, n) for a in np.argsort(uniform)[:3]
               if np.isfinite(uniform[a])]
    if not one_change:
        return PairBound(bound, designs)
    tol = LENGTH_MARGIN_M
    long_up = e.chainage - e.chainage[0] >= shortest_m - tol  # (n+1,)
    long_down = e.chainage[-1] - e.chainage >= shortest_m - tol
    for a in range(e.theta.shape[1]):
        if time.perf_counter() > deadline:
            designs.sort()
            return PairBound(None, designs[:3])
        value, node = _node_changes(e, a, tail, ok_from, long_up & long_down, change_cost,
                                    non_increasing)
        inside = _inside_changes(e, a, tail, ok_from, long_up[1:] & long_down[:-1],
                                 change_cost, non_increasing)
        bound = min(bound, float(value.min()), float(inside.min()))
        for b in np.argsort(value)[:3].tolist():
            if np.isfinite(value[b]):
                designs.append((float(value[b]), a, b, int(node[b])))
    designs.sort()
    return PairBound(bound, designs[:3])


def _prefix_min(e: Enumeration, a: int) -> np.ndarray:
    """(K, n+1) least over sections s < i of theta[s, a] + loss before s (inf at 0)."""
    values = e.theta[None, :, a] + e.loss[:, :-1, a]
    inner = np.minimum.accumulate(values, axis=1)
    return np.concatenate([np.full((values.shape[0], 1), np.inf), inner], axis=1)


def _pair_mask(e: Enumeration, a: int, non_increasing: bool) -> np.ndarray:
    """(m,) options B that may follow A (not A itself; sizes rule)."""
    mask = np.ones(e.theta.shape[1], dtype=bool)
    mask[a] = False
    if non_increasing:
        mask &= e.diameter <= e.diameter[a] + 1e-12
    return mask


def _node_changes(e: Enumeration, a: int, tail: np.ndarray, ok_from: np.ndarray,
                  long_enough: np.ndarray, change_cost: float, non_increasing: bool
                  ) -> tuple[np.ndarray, np.ndarray]:
    """(m,) the least value of A then B changing at a node, and that node."""
    up = e.loss[:, :, a:a + 1]  # (K, n+1, 1) loss of A before node i
    downstream = up + tail  # (K, n+1, m)
    classes_up = (downstream <= _prefix_min(e, a)[:, :, None] + 1e-9).all(axis=0)
    fits = (e.bad[:, a:a + 1] == 0) & (e.bad[-1:] - e.bad == 0) & ok_from & classes_up
    fits &= long_enough[:, None] & _pair_mask(e, a, non_increasing)[None, :]
    fits[0] = fits[-1] = False
    pipes = e.cost[:, a:a + 1] + e.cost[-1:] - e.cost + change_cost
    value = np.where(fits, _life_cycle(e, pipes, downstream), np.inf)
    node = value.argmin(axis=0)
    return value[node, np.arange(value.shape[1])], node


def _inside_changes(e: Enumeration, a: int, tail: np.ndarray, ok_from: np.ndarray,
                    long_enough: np.ndarray, change_cost: float, non_increasing: bool
                    ) -> np.ndarray:
    """(m,) the least value of A then B changing inside a section (relaxed)."""
    own = e.loss[:, 1:, :] - e.loss[:, :-1, :]  # (K, n, m) loss over section s
    least = np.minimum(own[:, :, a:a + 1], own) + tail[:, 1:, :]  # from the start of s
    classes = (least.max(axis=0) <= np.minimum(e.theta[:, a:a + 1], e.theta) + 1e-9)
    classes &= (e.loss[:, :-1, a:a + 1] + least
                <= _prefix_min(e, a)[:, :-1, None] + 1e-9).all(axis=0)
    fits = classes & (e.bad[1:, a:a + 1] == 0) & (e.bad[-1:] - e.bad[:-1] == 0)
    fits &= ok_from[1:] & long_enough[:, None] & _pair_mask(e, a, non_increasing)[None, :]
    section = e.cost[1:] - e.cost[:-1]
    base = e.cost[:-1, a:a + 1] + e.cost[-1:] - e.cost[1:] + change_cost  # (n, m)
    start = e.loss[:, :-1, a:a + 1] + tail[:, 1:, :]  # (K, n, m) without section s
    best = np.full(fits.shape, np.inf)
    for t in _breakpoints(e, start, own[:, :, a:a + 1], own):
        pipes = base + t * section[:, a:a + 1] + (1.0 - t) * section
        downstream = start + t * own[:, :, a:a + 1] + (1.0 - t) * own
        best = np.minimum(best, _life_cycle(e, pipes, downstream))
    return np.where(fits, best, np.inf).min(axis=0)


def _breakpoints(e: Enumeration, start: np.ndarray, own_a: np.ndarray,
                 own: np.ndarray) -> list[np.ndarray]:
    """Shares t of A in the changing section where the convex piecewise-linear cost may
    turn (ends, a head reaching 0 or its cap, two scenarios' powers equal), in [0, 1]."""
    # head_k(t) = need_k + start_k + own_k(B) + t (own_k(A) - own_k(B))
    shape = (-1, 1, 1)
    level = e.need.reshape(shape) + start + own
    slope = own_a - own
    points = [np.zeros(1), np.ones(1)]
    with np.errstate(divide="ignore", invalid="ignore"):
        for target in (0.0, e.cap.reshape(shape)):
            points.extend(list(-(level - target) / slope))
        power, rate = e.kw.reshape(shape) * level, e.kw.reshape(shape) * slope
        for k in range(len(e.need)):
            for j in range(k + 1, len(e.need)):
                points.append(-(power[k] - power[j]) / (rate[k] - rate[j]))
    return [np.clip(np.nan_to_num(p, nan=0.0, posinf=0.0, neginf=0.0), 0.0, 1.0)
            for p in points]


def run_two_pieces(state: SearchState) -> None:
    """The stage (module docstring); nothing unless the rules allow at most one change."""
    study = state.study
    rules = study.rules
    if rules.max_changes is None or rules.max_changes > 1:
        return
    begun = time.perf_counter()
    data = state.data
    found = pair_bounds(enumeration(data, head_upper_m(data)), study.costs.change_cost,
                        min(rules.min_piece_length_m, study.route.total_chainage_m),
                        rules.sizes_non_increasing, rules.max_changes == 1,
                        deadline=state.clock.deadline)
    state.raise_bound(found.bound)
    catalogue = study.catalogue
    end = float(data.node_chainage_m[-1])
    for _, a, b, node in found.designs:  # at most three checks: one even when out of time
        if state.clock.out() and state.best is not None:
            break
        at = float(data.node_chainage_m[node])
        pieces = (Piece(0.0, end, catalogue[a]),) if a == b else \
            (Piece(0.0, at, catalogue[a]), Piece(at, end, catalogue[b]))
        consider(state, Design(pieces), StageKind.PUMP_TWO_PIECES.label, must_pass=False)
    best = None if state.best is None else state.best.cost
    state.stages.append(Stage(StageKind.PUMP_TWO_PIECES, StageKind.PUMP_TWO_PIECES.label,
                              Status.NO_SOLUTION if found.bound is None else Status.OPTIMAL,
                              best, found.bound,
                              time.perf_counter() - begun, 0, 0, 0))
