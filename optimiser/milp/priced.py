"""A primal heuristic for the rules: pressure prices, a dynamic programme, and their update.

The integer programme with the rules is slow to find good designs on its own when
``max_changes`` binds (its relaxation mixes designs with few changes into one with none).
This heuristic finds them from the other side, by Lagrangian relaxation of the pressure
rows (Everett, H. (1963), Generalized Lagrange multiplier method for solving problems of
optimum allocation of resources, Operations Research 11(3); Fisher, M.L. (1981), The
Lagrangian relaxation method for solving integer programming problems, Management
Science 27(1)):

* every pressure row (a side of a survey node in a scenario) and the outlet row gets a
  price ``lambda >= 0`` [money / m of head], first the duals of the LP relaxation;
* laying option ``j`` over section ``s`` then costs its price plus the priced head it
  takes from every point downstream (friction and allowance, and the velocity heads at
  the section's own ends, its entrance or fitting, the exit):
  ``rate[s, j] = cost[s, j] + sum_k (loss[k, s, j] * P[k, s] + h[k, s, j] * Q[k, s])``,
  with ``P[k, s]`` the prices of all points after section ``s``;
* :func:`optimiser.milp.sequence_dp.cheapest_sequence` gives the cheapest rule-abiding
  whole-section design at those rates (exact for the rules);
* the prices move along the subgradient, the pressure shortfalls of that design, with
  Polyak's step (Polyak, B.T. (1969), Minimization of unsmooth functionals, USSR
  Computational Mathematics and Mathematical Physics 9(3)).

Designs whose node pressures all clear their minimum are offered to the optimiser, which
checks them with the full check and the rules like any other design. Nothing here is a
bound: the dynamic programme only lays whole sections.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.formulation import Formulation
from optimiser.milp.sequence_dp import cheapest_sequence

TARGET_GAIN = 1e-3
"""Polyak's step aims at a Lagrangian value this much (relative) above the best so far
(the LP's duals start it close to its maximum)."""
CLEARANCE_M = 1e-4
"""A whole-section design is offered when every node pressure clears its minimum by
this much (the check then judges it exactly)."""


@dataclass
class Prices:
    """Prices [money / m] of the downstream (``down``) and upstream (``up``) side of
    every node per scenario, (K, n+1), and of the outlet head, (K,)."""

    down: np.ndarray
    up: np.ndarray
    outlet: np.ndarray

    def flat(self) -> np.ndarray:
        return np.concatenate([self.down.ravel(), self.up.ravel(), self.outlet])

    @classmethod
    def from_flat(cls, values: np.ndarray, shape: tuple[int, int]) -> Prices:
        size = shape[0] * shape[1]
        return cls(values[:size].reshape(shape), values[size:2 * size].reshape(shape),
                   values[2 * size:].copy())


def prices_from_lp(fine: ProblemData, first_sections: np.ndarray, form: Formulation
                   ) -> Prices | None:
    """Prices on the fine sections from the row duals of a solved LP relaxation built on
    merged reaches (``first_sections``: first fine section of each reach). A row inside a
    reach is priced at the reach's downstream node."""
    if form.row_duals is None:
        return None
    k_count, n = fine.n_scenarios, fine.n_sections
    nodes = np.concatenate([np.asarray(first_sections, dtype=int), [n]])
    prices = Prices(np.zeros((k_count, n + 1)), np.zeros((k_count, n + 1)),
                    np.zeros(k_count))
    for row, side, k, index in form.pressure_rows:
        # ">=" rows of a minimisation: the dual is >= 0 (HiGHS's sign); clip noise.
        price = max(float(form.row_duals[row]), 0.0)
        if price <= 0:
            continue
        if side == "outlet":
            prices.outlet[k] += price
        elif side == "down":
            prices.down[k, nodes[index]] += price
        elif side == "up":
            prices.up[k, nodes[index]] += price
        else:  # inside a reach: at its downstream end
            prices.up[k, nodes[index + 1]] += price
    return prices


def _start_k(data: ProblemData) -> np.ndarray:
    """(n,) loss coefficient at the start of each section (fitting, entrance)."""
    k_start = data.node_point_k[:-1].copy()
    k_start[0] += data.study.source.entrance_k
    return k_start


def rule_abiding_choice(data: ProblemData, rate: np.ndarray) -> np.ndarray | None:
    """The cheapest whole-section option per section at ``rate`` (n, m) that obeys the
    study's rules (:func:`optimiser.milp.sequence_dp.cheapest_sequence`), or None."""
    study = data.study
    rules = study.rules
    return cheapest_sequence(
        rate, data.chainage_length_m, max_changes=rules.max_changes,
        min_length_m=rules.min_piece_length_m, change_cost=float(study.costs.change_cost),
        diameter_mm=study.catalogue.internal_diameter_mm if rules.sizes_non_increasing
        else None)


def rates(data: ProblemData, prices: Prices) -> np.ndarray:
    """(n, m) priced cost of laying each whole section in each option; inf where the
    option is not admissible."""
    n = data.n_sections
    node = prices.down + prices.up  # (K, n+1)
    after = np.cumsum(node[:, ::-1], axis=1)[:, ::-1]  # sum over nodes >= i
    downstream = after[:, 1:] + prices.outlet[:, None]  # (K, n): points after section s
    k_start = _start_k(data)
    ends = k_start[None, :] * (prices.down[:, :n] + downstream) + prices.down[:, :n] \
        + prices.up[:, 1:]  # (K, n): weight of the section's own velocity head
    k_out = data.study.outlet.exit_k + data.node_point_k[n]
    ends[:, n - 1] += k_out * prices.outlet + data.node_point_k[n] * prices.down[:, n]
    rate = data.section_cost + np.einsum("ksj,ks->sj", data.section_loss_m, downstream) \
        + np.einsum("ksj,ks->sj", data.velocity_head_m, ends)
    return np.where(data.admissible, rate, np.inf)


def margins(data: ProblemData, choice: np.ndarray) -> Prices:
    """Pressure margins [m] of a whole-section design (option per section) at every node
    side and of the outlet head, in the shape of :class:`Prices` (inf: no such point)."""
    study = data.study
    n = data.n_sections
    sections = np.arange(n)
    loss = data.section_loss_m[:, sections, choice]  # (K, n)
    head = data.velocity_head_m[:, sections, choice]
    drop = _start_k(data)[None, :] * head
    end = data.source_level_m[:, None] - np.cumsum(drop + loss, axis=1)
    start = end + loss
    pipe, limit = data.node_pipe_level_m, data.node_min_pressure_m
    k_count = data.n_scenarios
    down = np.full((k_count, n + 1), np.inf)
    up = np.full((k_count, n + 1), np.inf)
    down[:, :n] = start - head - pipe[:n] - limit[:n]
    up[:, 1:] = end - head - pipe[1:] - limit[1:]
    k_last = data.node_point_k[n]
    if k_last > 0:
        down[:, n] = end[:, -1] - (k_last + 1.0) * head[:, -1] - pipe[n] - limit[n]
    outlet = end[:, -1] - (study.outlet.exit_k + k_last) * head[:, -1] \
        - study.outlet.required_head_m
    return Prices(down, up, outlet)


def changes(choice: np.ndarray) -> int:
    return int(np.count_nonzero(choice[1:] != choice[:-1]))


@dataclass
class SearchRecord:
    rounds: int
    offered: int
    best_cost: float | None
    seconds: float
    used: np.ndarray
    """(n, m) options laid in each section by the design of some round (feasible or
    not): the neighbourhood a restricted integer programme searches next."""


@dataclass
class _Polyak:
    """Projected subgradient steps on the prices with Polyak's step length (Polyak, B. T.
    (1969), Minimization of unsmooth functionals, USSR Comput. Math. Math. Phys. 9(3)),
    aimed TARGET_GAIN above the best Lagrangian value so far (capped at the best design's
    cost), halved after three rounds without a better value."""

    best_lagrangian: float = -np.inf
    step_factor: float = 1.0
    stalled: int = 0

    def step(self, values: np.ndarray, margin: np.ndarray, lagrangian: float,
             upper_bound: float | None) -> np.ndarray | None:
        """The next prices (None: stop, the step vanished)."""
        if lagrangian > self.best_lagrangian + 1e-9 * abs(lagrangian):
            self.best_lagrangian = lagrangian
            self.stalled = 0
        else:
            self.stalled += 1
            if self.stalled >= 3:
                self.step_factor /= 2.0
                self.stalled = 0
        direction = -margin
        direction[(values <= 0) & (direction < 0)] = 0.0  # projected on lambda >= 0
        norm = float(direction @ direction)
        if norm <= 0 or self.step_factor < 1e-3:
            return None
        target = self.best_lagrangian + TARGET_GAIN * abs(self.best_lagrangian)
        if upper_bound is not None:
            target = min(target, upper_bound)
        step = self.step_factor * max(target - lagrangian, 1e-6 * abs(lagrangian)) / norm
        return np.maximum(values + step * direction, 0.0)


def priced_search(data: ProblemData, prices: Prices, *, upper_bound: float | None,
                  deadline: float, max_rounds: int = 20, patience: int = 5
                  ) -> tuple[list[tuple[float, np.ndarray]], SearchRecord]:
    """Whole-section designs of the subgradient rounds whose node pressures all clear
    their minimum, as (cost with change cost, option per section), cheapest first.

    Stops after ``max_rounds``, at ``deadline``, or when ``patience`` rounds in a row
    bring no design not seen before (the subgradient then cycles)."""
    begun = time.perf_counter()
    study = data.study
    change_cost = float(study.costs.change_cost)
    sections = np.arange(data.n_sections)
    shape = prices.down.shape
    values = prices.flat()
    found: dict[bytes, tuple[float, np.ndarray]] = {}
    used = np.zeros((data.n_sections, data.n_options), dtype=bool)
    polyak = _Polyak()
    rounds = 0
    seen: set[bytes] = set()
    unchanged = 0  # rounds since a design not seen before
    for rounds in range(1, max_rounds + 1):  # noqa: B007 (reported after the loop)
        if time.perf_counter() > deadline:
            break
        current = Prices.from_flat(values, shape)
        choice = rule_abiding_choice(data, rates(data, current))
        if choice is None:
            break
        used[sections, choice] = True
        key = choice.tobytes()
        unchanged = 0 if key not in seen else unchanged + 1
        seen.add(key)
        if unchanged >= patience:
            break  # the prices cycle among designs already seen
        margin = margins(data, choice).flat()
        margin = np.where(np.isfinite(margin), margin, 1e6)
        cost = float(data.section_cost[sections, choice].sum()) + change_cost * changes(choice)
        if margin.min() >= CLEARANCE_M:
            found.setdefault(key, (cost, choice))
            upper_bound = cost if upper_bound is None else min(upper_bound, cost)
        values = polyak.step(values, margin, cost - float(values @ margin), upper_bound)
        if values is None:
            break
    designs = sorted(found.values(), key=lambda item: item[0])
    record = SearchRecord(rounds, len(designs), designs[0][0] if designs else None,
                          time.perf_counter() - begun, used)
    return designs, record
