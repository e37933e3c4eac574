"""A first design of a scheme with the rules, line by line, without a solver.

The LP relaxation of the tree says how much energy each junction should get. Lines are
then designed one at a time, parents before children: each from the energy its parent's
design actually delivers at its junction, to at least the LP's energy at every junction
on it (so its branches start from at least what the LP gave them), its own delivery
head and the pressure at every node. A line's design is the cheapest rule-abiding
sequence of whole-section options (:func:`optimiser.milp.sequence_dp.cheapest_sequence`,
exact for its rate) at the rate cost + lambda x head lost; lambda is raised (by doubling,
then bisection) until the design meets every need of the line, so head is bought where
it is cheapest. A heuristic: the check judges the design like any other.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import MARGIN_M
from optimiser.milp.data import ProblemData
from optimiser.milp.extract import design_from_choice
from optimiser.milp.priced import rule_abiding_choice
from optimiser.milp.tree.line_study import on_line
from optimiser.milp.tree.model import TreeFormulation, junction_nodes
from optimiser.milp.tree.problem import TreeProblem
from optimiser.model import Design

ROUNDS = 14
"""Bisection steps on lambda after the doubling."""


def energies_m(data: ProblemData, choice: np.ndarray, start_m: np.ndarray
               ) -> tuple[np.ndarray, np.ndarray]:
    """(K, n+1) upstream-side energy at every node of a whole-section design fed at
    ``start_m`` (K,), and (K,) the least margin of its pressures and delivery."""
    n = data.n_sections
    rows = np.arange(n)
    head = data.velocity_head_m[:, rows, choice]  # (K, n)
    loss = data.section_loss_m[:, rows, choice]
    point = data.node_point_k[:-1][None, :] * head
    point[:, 0] += data.study.source.entrance_k * head[:, 0]
    down = start_m[:, None] - np.concatenate([np.zeros((len(start_m), 1)),
                                              np.cumsum(point + loss, axis=1)[:, :-1]],
                                             axis=1) - point  # (K, n) after point losses
    up = np.concatenate([start_m[:, None], down - loss], axis=1)  # (K, n+1)
    pipe, least = data.node_pipe_level_m, data.node_min_pressure_m
    margin = np.minimum((down - head - pipe[:-1] - least[:-1]).min(axis=1),
                        (up[:, 1:] - head - pipe[1:] - least[1:]).min(axis=1))
    study = data.study
    delivery = up[:, -1] - (study.outlet.exit_k + data.node_point_k[n]) * head[:, -1] \
        - study.outlet.required_head_m
    return up, np.minimum(margin, delivery)


def _meets(data: ProblemData, choice: np.ndarray | None, start_m: np.ndarray,
           needs: list[tuple[int, np.ndarray]]) -> bool:
    if choice is None:
        return False
    up, margin = energies_m(data, choice, start_m)
    if (margin < MARGIN_M).any():
        return False
    return all((up[:, node] >= target + MARGIN_M).all() for node, target in needs)


def line_choice(data: ProblemData, start_m: np.ndarray, needs: list[tuple[int, np.ndarray]]
                ) -> np.ndarray | None:
    """The cheapest rule-abiding whole-section design of one line at cost + lambda x
    head lost, with the least lambda found that meets ``needs`` ((node, (K,) energy)
    pairs, each lowered to what the line's least-loss design gives) and the line's own
    pressures and delivery; None if even its least-loss design fails them."""
    weight = data.section_loss_m.sum(axis=0) + (
        data.node_point_k[:-1, None] * data.velocity_head_m).sum(axis=0)
    cost = np.where(data.admissible, data.section_cost, np.inf)
    scale = float(np.nanmax(np.where(np.isfinite(cost), cost, np.nan))) / max(
        float(weight[data.admissible].min(initial=np.inf)), 1e-9)

    def choose(lam: float) -> np.ndarray | None:
        return rule_abiding_choice(data, cost + lam * weight)

    # The rules may keep a line from giving its junctions what the LP gave them (the
    # LP mixes sizes freely): ask at most what its least-loss design gives.
    strongest = rule_abiding_choice(data, weight + 1e-9 * np.where(
        np.isfinite(cost), cost, 0.0) + np.where(data.admissible, 0.0, np.inf))
    if strongest is None:
        return None
    up, _ = energies_m(data, strongest, start_m)
    needs = [(node, np.minimum(target, up[:, node] - 2 * MARGIN_M)) for node, target in needs]
    if not _meets(data, strongest, start_m, needs):
        return None
    low, high = 0.0, 1e-6 * scale
    best = choose(low)
    if _meets(data, best, start_m, needs):
        return best
    for _ in range(40):
        candidate = choose(high)
        if _meets(data, candidate, start_m, needs):
            best = candidate
            break
        low, high = high, 4.0 * high
    else:
        return strongest
    for _ in range(ROUNDS):
        middle = 0.5 * (low + high)
        candidate = choose(middle)
        if _meets(data, candidate, start_m, needs):
            best, high = candidate, middle
        else:
            low = middle
    return best


def lines_design(problem: TreeProblem, lp: TreeFormulation) -> Design | None:
    """The line-by-line design (None if a line cannot meet what the LP asks of it)."""
    starts = {problem.lines[0].name: problem.datas[0].source_level_m}
    pieces = []
    for index, (line, data) in enumerate(zip(problem.lines, problem.datas, strict=True)):
        children = junction_nodes(problem.lines, problem.datas, index)
        needs = [(node, lp.junction_energy_m(child)) for child, node in children]
        choice = line_choice(data, starts[line.name], needs)
        if choice is None:
            return None
        up, _ = energies_m(data, choice, starts[line.name])
        for child, node in children:
            starts[child] = up[:, node]
        pieces.extend(on_line(design_from_choice(data, choice), line.name).pieces)
    return Design(tuple(pieces))
