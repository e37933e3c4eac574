"""The stages of a scheme's run after the LP, each reading and updating the search state.

- :func:`run_tree_dominance`: options dominated wherever they are admissible on a line
  leave that line (exact on a tree: putting the dominating option in place of every
  piece keeps the line's energy as high or higher everywhere, its junctions included,
  so every branch below keeps what it had).
- :func:`run_first_designs`: with the rules, each line of the LP's design repaired to
  them (:func:`optimiser.milp.repair.repair`).
- :func:`run_tree_reach_model`: the tree's model on merged reaches with the rules, by
  row generation: a relaxation of the full model (its bound is valid), whose designs
  are checked like any other.
- :func:`run_tree_fine_model`: the model of the fine sections, restricted to the options
  a design uses nearby on every line (designs only), or whole (its bound counts).
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.extract import design_from_choice
from optimiser.milp.outcome import DesignOutcome, Stage, VerificationError
from optimiser.milp.presolve import dominated_options, without_options
from optimiser.milp.reaches import MAX_ROW_ROUNDS, ActivePoints
from optimiser.milp.repair import covering_choice, design_mask
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import widened, window_mask
from optimiser.milp.search.state import SearchState
from optimiser.milp.tree.fixing import on_reaches, tree_allowed
from optimiser.milp.tree.line_heuristic import lines_design
from optimiser.milp.tree.line_repair import repaired_lines
from optimiser.milp.tree.line_study import line_design, on_line
from optimiser.milp.tree.lp_stage import TreeLp, sizes
from optimiser.milp.tree.model import build_tree
from optimiser.milp.tree.problem import (
    TreeProblem,
    design_from_tree,
    design_from_tree_reaches,
    reach_warm_start,
    tree_reaches,
)
from optimiser.milp.tree.rows import grown_points
from optimiser.model import Design
from optimiser.model.status import Status


def run_tree_dominance(state: SearchState, problem: TreeProblem) -> None:
    """Set aside, line by line, the options dominated wherever they are admissible."""
    begun = time.perf_counter()
    count = 0
    for index, data in enumerate(problem.datas):
        gone = dominated_options(data)
        count += int(gone.sum())
        problem.datas[index] = without_options(data, gone)
    state.data = problem.datas[0]
    state.stages.append(Stage(StageKind.DOMINANCE, StageKind.DOMINANCE.label, Status.DONE,
                              None, None, time.perf_counter() - begun, 0, 0, 0,
                              f"{count} (line, option) pairs set aside on "
                              f"{len(problem.lines)} lines"))


def run_first_designs(state: SearchState, problem: TreeProblem, lp: TreeLp) -> None:
    """With the rules, offer the LP's design with every line repaired to them, and the
    covering design of every line (:func:`optimiser.milp.repair.covering_choice`: in
    each section an option at least as good hydraulically as the LP's mix there, so
    every junction keeps at least the LP design's energy); only if neither passes, the
    line-by-line design at the LP's junction energies
    (:mod:`optimiser.milp.tree.line_heuristic`)."""
    if not state.with_rules or state.proven():
        return
    repaired = repaired_lines(problem, lp.design)
    covering = []
    for line, data, fractions in zip(problem.lines, problem.datas, lp.fractions, strict=True):
        choice = covering_choice(data, fractions)
        covered = design_from_choice(data, choice) if choice is not None \
            else line_design(repaired, line.name)
        covering.extend(on_line(covered, line.name).pieces)
    state.consider(repaired, "LP design repaired to the rules, line by line", must_pass=False)
    state.consider(Design(tuple(covering)), "covering design, line by line", must_pass=False)
    if state.best is not None:
        return  # the line-by-line design below costs seconds on a large tree
    priced = lines_design(problem, lp.form)
    if priced is not None:
        state.consider(priced, "line by line at the LP's junction energies", must_pass=False)


def run_tree_reach_model(state: SearchState, problem: TreeProblem,
                         actives: list[ActivePoints], lp: TreeLp | None, share: float = 0.6
                         ) -> DesignOutcome | None:
    """Rounds of the reach model with the rules (options fixed by the LP's reduced costs
    left out); returns the outcome only if it proves that no design exists."""
    kind = StageKind.REACH_MODEL
    for number in range(1, MAX_ROW_ROUNDS + 1):
        if state.clock.nearly_out():
            return None
        begun = time.perf_counter()
        reaches = tree_reaches(problem, actives)
        allowed = on_reaches(tree_allowed(problem, lp, _best_cost(state)), reaches)
        form = build_tree(problem.lines, [r.data for r in reaches], allowed=allowed,
                          with_rules=True)
        warm = None if state.best is None else \
            reach_warm_start(problem, reaches, form, state.best.design)
        report = state.run_solver(kind, f"{kind.label}, whole tree, round {number}: "
                                  f"{sizes(form)}, {sum(a.count() for a in actives)} "
                                  "pressure points", form, warm, share,
                                  time.perf_counter() - begun)
        if report.status == Status.INFEASIBLE:
            return _infeasible(state, "reach model")
        state.raise_bound(report.bound)
        if not report.has_solution:
            return None
        design = design_from_tree_reaches(problem, reaches, form)
        result = state.consider(design, kind.label, must_pass=False)
        if result.ok and (state.best is None or state.best.design is not design):
            # it passes the check but not the rules on some line: repair those lines
            design = repaired_lines(problem, design)
            state.consider(design, f"{kind.label}, lines repaired to the rules",
                           must_pass=False)
        if state.best is None or state.best.design is not design:
            state.unfinished.append(design)
        if state.proven():
            return None
        actives, added = grown_points(problem, actives, result)
        if not added:
            return None
    return None


def run_tree_fine_model(state: SearchState, problem: TreeProblem,
                        near: list[np.ndarray] | None, lp: TreeLp | None, share: float,
                        kind: StageKind = StageKind.FULL_MODEL) -> DesignOutcome | None:
    """The model of the fine sections with the rules: restricted to the options of
    ``near`` on each line (a source of designs), or whole when ``near`` is None (its
    bound counts, and its infeasibility proves no design exists); options fixed by the
    LP's reduced costs left out."""
    begun = time.perf_counter()
    allowed = tree_allowed(problem, lp, _best_cost(state))
    if near is not None:
        allowed = near if allowed is None else [a & b for a, b in zip(allowed, near,
                                                                       strict=True)]
    form = build_tree(problem.lines, problem.datas, allowed=allowed,
                      with_rules=state.with_rules)
    warm = None if state.best is None else \
        reach_warm_start(problem, None, form, state.best.design)
    report = state.run_solver(kind, f"{kind.label}, whole tree: {sizes(form)}", form, warm,
                              share, time.perf_counter() - begun,
                              stage_gap=None if near is None else 1e-4)
    if near is None:
        state.full_report = report
        if report.status == Status.INFEASIBLE:
            return _infeasible(state, "full model")
        state.raise_bound(report.bound)
    if report.has_solution:
        state.consider(design_from_tree(problem, form), kind.label, must_pass=True)
    return None


def around_design(problem: TreeProblem, design: Design) -> list[np.ndarray]:
    """Options ``design`` uses near each section of every line."""
    return [design_mask(data, line_design(design, line.name), _width_m(data))
            for line, data in zip(problem.lines, problem.datas, strict=True)]


def around_lp(problem: TreeProblem, lp: TreeLp, radius: int) -> list[np.ndarray]:
    """Options the LP uses near each section of every line, and those within ``radius``
    places of them in the size order (:mod:`optimiser.milp.search.masks`)."""
    return [widened(data, window_mask(data, fractions > 1e-6, _width_m(data)), radius)
            for data, fractions in zip(problem.datas, lp.fractions, strict=True)]


def _best_cost(state: SearchState) -> float | None:
    return None if state.best is None else state.best.cost


def _width_m(data) -> float:
    """Chainage around a piece whose option a restricted model keeps."""
    return max(2.0 * data.study.rules.min_piece_length_m,
               3.0 * float(data.chainage_length_m.mean()))


def _infeasible(state: SearchState, what: str) -> DesignOutcome:
    if state.best is not None:
        raise VerificationError(f"the tree's {what} is reported infeasible although a "
                                f"verified design from '{state.best.source}' exists (a bug)")
    return state.infeasible(diagnose_after(state.data, rules_relaxed_feasible=True))
