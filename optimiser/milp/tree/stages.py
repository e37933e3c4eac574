"""The stages of a scheme's run, each reading and updating the search state.

- :func:`run_tree_dominance`: options dominated wherever they are admissible on a line
  leave that line (exact on a tree: putting the dominating option in place of every
  piece keeps the line's energy as high or higher everywhere, junctions included, so
  every branch below keeps what it had).
- :func:`run_tree_lp`: the LP relaxation of the whole tree with the rules relaxed and
  the binaries continuous (a relaxation: its value is the LP bound).
- :func:`run_first_designs`: the LP's design, if it passes the check and the rules; else
  each line repaired to the rules (:func:`optimiser.milp.repair.repair`), as a first
  design and as the warm start of the full model.
- :func:`run_tree_model`: the full model of the tree with the rules, warm-started from
  the best design; its bound raises the lower bound, its design must pass the check.
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.outcome import DesignOutcome, SolverError, Stage, VerificationError
from optimiser.milp.presolve import dominated_options, without_options
from optimiser.milp.repair import repair
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.tree.line_study import line_design, on_line
from optimiser.milp.tree.model import TreeFormulation, build_tree
from optimiser.milp.tree.problem import TreeProblem, design_from_tree, tree_warm_start
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


def _sizes(form: TreeFormulation) -> str:
    return f"{len(form.parts)} lines, {sum(p.data.n_sections for p in form.parts)} sections"


def run_tree_lp(state: SearchState, problem: TreeProblem
                ) -> tuple[TreeFormulation | None, DesignOutcome | None]:
    """The LP relaxation (rules relaxed): the LP bound, or the outcome if infeasible."""
    begun = time.perf_counter()
    form = build_tree(problem.lines, problem.datas, with_rules=False, relaxed=True)
    seconds = time.perf_counter() - begun
    report = state.run_solver(StageKind.LP_RELAXATION,
                              f"{StageKind.LP_RELAXATION.label}, whole tree: {_sizes(form)}",
                              form, None, 1.0, seconds)
    if report.status == Status.INFEASIBLE:
        return None, state.infeasible(diagnose_after(state.data, rules_relaxed_feasible=False))
    if not report.has_solution or report.objective is None:
        raise SolverError(f"the LP relaxation of the scheme did not solve ({report.status}: "
                          f"{report.message})")
    state.lp_bound = report.objective
    state.raise_bound(report.objective)
    return form, None


def run_first_designs(state: SearchState, problem: TreeProblem,
                      lp: TreeFormulation) -> Design:
    """Offer the LP's design; with the rules, each line repaired; return the design to
    warm-start the full model from (the best so far, or the repaired one)."""
    design = design_from_tree(problem, lp)
    state.consider(design, "LP relaxation", must_pass=False)
    if not state.with_rules or state.proven():
        return design if state.best is None else state.best.design
    pieces = []
    for line, data in zip(problem.lines, problem.datas, strict=True):
        own = line_design(design, line.name)
        fixed = repair(data, own)
        pieces.extend(on_line(fixed if fixed is not None else own, line.name).pieces)
    repaired = Design(tuple(pieces))
    state.consider(repaired, "LP design repaired to the rules, line by line", must_pass=False)
    return repaired if state.best is None else state.best.design


def run_tree_model(state: SearchState, problem: TreeProblem, warm: Design,
                   share: float = 0.85) -> DesignOutcome | None:
    """The full model of the tree (with the rules if any), warm-started from ``warm``;
    returns the outcome only if it proves that no design exists."""
    begun = time.perf_counter()
    form = build_tree(problem.lines, problem.datas, with_rules=state.with_rules)
    seconds = time.perf_counter() - begun
    report = state.run_solver(StageKind.FULL_MODEL,
                              f"{StageKind.FULL_MODEL.label}, whole tree: {_sizes(form)}",
                              form, tree_warm_start(problem, warm), share, seconds)
    state.full_report = report
    if report.status == Status.INFEASIBLE:
        if state.best is not None:
            raise VerificationError("the tree model is reported infeasible although a "
                                    f"verified design from '{state.best.source}' exists (a bug)")
        return state.infeasible(diagnose_after(state.data, rules_relaxed_feasible=True))
    state.raise_bound(report.bound)
    if report.has_solution:
        state.consider(design_from_tree(problem, form), StageKind.FULL_MODEL.label,
                       must_pass=True)
    return None


def admissible_pairs(problem: TreeProblem) -> int:
    """(section, option) pairs left in the tree's model."""
    return int(sum(np.count_nonzero(data.admissible) for data in problem.datas))
