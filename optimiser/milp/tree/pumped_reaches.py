"""Stage: the pumped tree on merged reaches with the rules, by rounds (a relaxation).

As the reach model of a gravity tree (:func:`optimiser.milp.tree.stages.run_tree_reach_model`)
and of a pumped route (:mod:`optimiser.milp.pumps.reach_rounds`): every line's quiet
sections merged into reaches (:func:`optimiser.milp.reaches.merge`), only the pressure
points designs came close to in the model, the rules in the free order of a reach, the
station heads on the trunk carried into every branch (:mod:`optimiser.milp.tree.pump_rows`)
and the classes under pumping written relaxed on every reach of several sections (the
energy at its end and the highest lowest pipe level of its sections,
:mod:`optimiser.milp.pumps.class_rows`). Each of those admits every design of the fine
model, so every round is a relaxation of it and its bound is valid.

Each round's design is judged by the check at its least station heads and priced at its
life-cycle cost (:func:`optimiser.milp.pumps.designs.consider`). The next round splits
every reach whose solution used a class that the energy at the reach's start (the
station's, or the branch's junction energy, before any loss of the reach) breaks, at a
few nodes, and adds on every line the pressure points the design came close to
(:func:`optimiser.milp.tree.rows.grown_points`); the rounds end when neither grows, the
design is proven, or the time is out.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from optimiser.analysis import CheckResult
from optimiser.milp.built_model import MARGIN_M, Formulation
from optimiser.milp.pump_columns import working_limits_m
from optimiser.milp.pumps.class_rows import ReachLevels, reach_levels
from optimiser.milp.pumps.designs import consider, with_stretch_raised
from optimiser.milp.pumps.reach_rounds import PARTS, Refinement
from optimiser.milp.reaches import Reaches, points_near
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.milp.tree.model import TreeFormulation, build_tree
from optimiser.milp.tree.problem import (
    TreeProblem,
    design_from_tree_reaches,
    reach_warm_start,
)
from optimiser.milp.tree.rows import line_result
from optimiser.model import Design
from optimiser.model.status import Status

__all__ = ["TreeRefinement", "run_pumped_reach_rounds"]

MAX_ROUNDS = 12


@dataclass
class TreeRefinement:
    """Every line's pressure points and split nodes of the rounds so far."""

    lines: list[Refinement]

    @classmethod
    def start(cls, problem: TreeProblem, result: CheckResult | None = None
              ) -> TreeRefinement:
        """No split; the pressure points a checked design (``result``) came close to."""
        refinement = cls([Refinement.start(data) for data in problem.datas])
        if result is not None:
            for line, data, own in zip(problem.lines, problem.datas, refinement.lines,
                                       strict=True):
                own.active = points_near(data, line_result(result, line.name))
        return refinement

    def reaches(self, problem: TreeProblem) -> list[Reaches]:
        """Every line's reaches (junction nodes stay nodes: the flow changes there)."""
        return [own.reaches(data) for own, data in zip(self.lines, problem.datas, strict=True)]


@dataclass
class PumpedRound:
    """The last round's report (None before any round)."""

    report: SolveReport | None = None


def run_pumped_reach_rounds(state: SearchState, problem: TreeProblem,
                            refinement: TreeRefinement, share: float,
                            rounds: int = MAX_ROUNDS) -> PumpedRound:
    """Up to ``rounds`` rounds of the pumped tree's reach model with the rules (see the
    module docstring), each with ``share`` of the time left; every bound raises the lower
    bound. Warm-started from the best design's pipes (HiGHS completes the station heads
    and class indicators): on the branched demo with its source lowered, the round with
    split reaches found no solution in 22 s without it and proved 0.19 % in 18 s with it."""
    last = PumpedRound()
    kind = StageKind.REACH_MODEL
    for number in range(1, rounds + 1):
        if state.clock.nearly_out() or state.proven():
            break
        begun = time.perf_counter()
        reaches = refinement.reaches(problem)
        levels = [reach_levels(data, own.first, own.last)
                  for data, own in zip(problem.datas, reaches, strict=True)]
        form = build_tree(problem.lines, [own.data for own in reaches],
                          with_rules=state.with_rules, pumped=problem.study,
                          pump_levels=levels)
        points = sum(own.active.count() for own in refinement.lines)
        name = (f"{kind.label}, pumped tree, round {number}: {len(problem.lines)} lines, "
                f"{sum(own.n_reaches for own in reaches)} reaches, {points} pressure points")
        warm = None if state.best is None else \
            reach_warm_start(problem, reaches, form, state.best.design)
        last.report = state.run_solver(kind, name, form, warm, share,
                                       time.perf_counter() - begun)
        if last.report.status == Status.INFEASIBLE or not last.report.has_solution:
            break
        state.raise_bound(last.report.bound)
        design = design_from_tree_reaches(problem, reaches, form)
        if not _grow(state, problem, refinement, reaches, form, levels, design):
            break
    return last


def _grow(state: SearchState, problem: TreeProblem, refinement: TreeRefinement,
          reaches: list[Reaches], form: TreeFormulation, levels: list[ReachLevels],
          design: Design) -> bool:
    """Judge the round's design; split every loose reach and add the pressure points it
    came close to. False when nothing was added."""
    result = consider(state, design, StageKind.REACH_MODEL.label, must_pass=False)
    if not result.ok:  # a class under pumping broken inside a merged reach: raise it
        raised = with_stretch_raised(state.study, design)
        if raised is not None:
            consider(state, raised, f"{StageKind.REACH_MODEL.label}, classes raised",
                     must_pass=False)
    grown = False
    for line, data, own, split, part, level, start in zip(
            problem.lines, problem.datas, refinement.lines, reaches, form.parts, levels,
            _start_energies_m(problem, form), strict=True):
        for r in np.flatnonzero(_loose(part, level, start)).tolist():
            a, b = int(split.first[r]), int(split.last[r])
            nodes = np.unique(np.linspace(a, b + 1, PARTS + 1).round().astype(int))[1:-1]
            grown |= bool((~own.splits[nodes]).any())
            own.splits[nodes] = True
        wanted = own.active.union(points_near(data, line_result(result, line.name)))
        if wanted.count() > own.active.count():
            own.active = wanted
            grown = True
    return grown


def _start_energies_m(problem: TreeProblem, form: TreeFormulation) -> list[np.ndarray]:
    """(K,) per line the energy its class rows start from in the solution: the source
    level + the station head on the trunk, a branch's junction energy (before its
    junction loss) on a branch."""
    assert form.values is not None
    heads = np.array([form.values[c] for c in form.pump_heads])
    return [problem.datas[0].source_level_m + heads if line.is_trunk
            else form.junction_energy_m(line.name) for line in problem.lines]


def _loose(part: Formulation, levels: ReachLevels, start_m: np.ndarray) -> np.ndarray:
    """(R,) merged reaches of one line whose solution breaks a fine row: the energy at the
    reach's start (``start_m`` at the line's start, less the losses above the reach, no
    point loss) less its lowest pipe level is above the working limit of an option the
    solution lays in it (as :func:`optimiser.milp.pumps.class_rows.loose_reaches`)."""
    data = part.data
    fractions = part.fractions()
    losses = np.einsum("ksj,sj->ks", data.section_loss_m, fractions)
    start = start_m[:, None] - np.concatenate(
        [np.zeros((data.n_scenarios, 1)), np.cumsum(losses, axis=1)[:, :-1]], axis=1)
    limits = working_limits_m(part) - MARGIN_M
    weakest = np.where(fractions > 1e-9, limits[None, :], np.inf).min(axis=1)
    pressure = start.max(axis=0) - levels.lowest_m
    return levels.at_end & (pressure > weakest + 1e-6)
