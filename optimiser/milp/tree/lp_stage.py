"""Stage: the LP relaxation of the whole tree (rules relaxed), by row generation on
merged reaches.

As for a single route (:mod:`optimiser.milp.search.lp_relaxation`): the first round
holds only the deliveries' rows, each later one the points the last round's design came
close to on every line (:mod:`optimiser.milp.tree.rows`); quiet sections are merged
line by line. Every round is a relaxation of the tree's model (fewer rows), so its
value is a valid ``lp_bound``.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.outcome import DesignOutcome, SolverError
from optimiser.milp.reaches import MAX_ROW_ROUNDS, ActivePoints, Reaches
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.milp.tree.model import TreeFormulation, build_tree
from optimiser.milp.tree.problem import TreeProblem, refined_design, tree_reaches
from optimiser.milp.tree.rows import grown_points
from optimiser.model import Design
from optimiser.model.status import Status


@dataclass
class TreeLp:
    """The last round of the tree's LP: its model, report, design and fine fractions."""

    form: TreeFormulation
    report: SolveReport
    reaches: list[Reaches]
    design: Design
    fractions: list[np.ndarray]


def sizes(form: TreeFormulation) -> str:
    return (f"{len(form.parts)} lines, "
            f"{sum(part.data.n_sections for part in form.parts)} sections or reaches")


def run_tree_lp(state: SearchState, problem: TreeProblem, actives: list[ActivePoints]
                ) -> tuple[TreeLp | None, list[ActivePoints], DesignOutcome | None]:
    """Rounds of the LP; returns its last round, the active points, and the outcome
    only if the LP proves that no design exists."""
    last: TreeLp | None = None
    for number in range(1, MAX_ROW_ROUNDS + 1):
        begun = time.perf_counter()
        reaches = tree_reaches(problem, actives)
        form = build_tree(problem.lines, [r.data for r in reaches], with_rules=False,
                          relaxed=True)
        report = state.run_solver(
            StageKind.LP_RELAXATION,
            f"{StageKind.LP_RELAXATION.label}, whole tree, round {number}: {sizes(form)}, "
            f"{sum(a.count() for a in actives)} pressure points",
            form, None, 1.0, time.perf_counter() - begun)
        if report.status == Status.INFEASIBLE:
            return None, actives, state.infeasible(
                diagnose_after(state.data, rules_relaxed_feasible=False))
        if not report.has_solution or report.objective is None:
            raise SolverError(f"the LP relaxation of the scheme did not solve "
                              f"({report.status}: {report.message})")
        design, fractions = refined_design(problem, reaches, form)
        last = TreeLp(form, report, reaches, design, fractions)
        state.lp_bound = report.objective
        state.raise_bound(report.objective)
        result = state.consider(design, StageKind.LP_RELAXATION.label, must_pass=False)
        if state.proven() or state.clock.nearly_out():
            break
        actives, added = grown_points(problem, actives, result)
        if not added:
            break
    return last, actives, None
