"""``optimise_scheme``: the cheapest verified design of a branched scheme.

The plan, top to bottom (stages in :mod:`optimiser.milp.tree.stages`):

0. Each line (trunk and branches) split at its class limits and given its own problem
   data, flows from the whole scheme (:mod:`optimiser.milp.tree.problem`).
1. Diagnosis per branch without a solver (:mod:`optimiser.milp.tree.diagnosis`): which
   line, where, by how much, per scenario, and whether the branch itself or the lines
   upstream are short; a finding ends the run as ``infeasible``.
2. A scenario that dominates every other on every line kept alone in the models
   (:mod:`optimiser.milp.tree.scenarios`, exact: its rows imply the others'); then
   options dominated wherever they are admissible set aside, line by line (exact).
3. The LP relaxation of the whole tree, rules relaxed: the LP bound.
4. First designs: the LP's own (optimal if it passes the check and the rules within the
   gap), else every line repaired to the rules.
5. The reach model of the tree with the rules (a relaxation: its bound counts), its
   design repaired line by line where it breaks a rule, then the fine model around it.
6. If the reach model ran out of time, the fine model around the best design again
   while it improves; else the full model of the tree with the rules, warm-started
   from the best design: its bound raises the lower bound, its design must pass the
   check.
7. The final check, the gap and the status.

Every design returned has passed :func:`optimiser.analysis.check_design` and the rules
per line (:func:`optimiser.milp.extract.rule_problems`); bounds come only from
relaxations (the LP, the reach model, the full model's own bound), capped at the returned
cost.
"""

from __future__ import annotations

import numpy as np

from optimiser.io.errors import InputError
from optimiser.milp.formulation import rules_active
from optimiser.milp.outcome import DesignOutcome
from optimiser.milp.reaches import ActivePoints
from optimiser.milp.search.finish import finish, no_design_error
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, SearchState, Settings
from optimiser.milp.tank_data import has_tanks
from optimiser.milp.tree.diagnosis import diagnose_scheme
from optimiser.milp.tree.lp_stage import TreeLp, run_tree_lp
from optimiser.milp.tree.problem import TreeProblem, prepare_tree
from optimiser.milp.tree.scenarios import run_scenario_reduction
from optimiser.milp.tree.stages import (
    around_design,
    around_lp,
    run_first_designs,
    run_tree_dominance,
    run_tree_fine_model,
    run_tree_reach_model,
)
from optimiser.model import Study
from optimiser.model.status import Status

NEARBY_PAIRS = 5000
"""The fine model near the LP's options runs only up to this many (section, option)
pairs (beyond, building and presolving it takes longer than it helps)."""


REACH_SHARE = 0.6
"""Share of the time left that the reach model with the rules may take (its bound is
the one that closes the gap on a tree; the rest goes to designs)."""
POLISH_ROUNDS = 4
"""Most rounds of the fine model around the best design after the reach model."""


def reach_stopped(state: SearchState) -> bool:
    """The last reach model stopped on its time limit: the full model of the fine
    sections, a larger model of the same difficulty with less time, cannot do better
    (on the 60-branch benchmark it never finished its root), so the time left goes to
    designs around the best one instead."""
    rounds = [s for s in state.stages if s.kind == StageKind.REACH_MODEL]
    return bool(rounds) and rounds[-1].status != Status.OPTIMAL


def pairs(problem: TreeProblem, masks: list[np.ndarray]) -> int:
    return int(sum((m & d.admissible).sum() for m, d in zip(masks, problem.datas,
                                                            strict=True)))


def optimise_scheme(study: Study, settings: Settings, started: float) -> DesignOutcome:
    """The cheapest design of the scheme ``study`` that passes the check and the rules
    (``settings`` and ``started`` as :func:`optimiser.milp.optimise.optimise_design`
    resolved them)."""
    if has_tanks(study):
        where = study.path or "the study file"
        raise InputError(f"{where}: [[break_pressure_tank]] / [break_pressure_tanks] with "
                         "[[branch]]: design of a branched scheme with break-pressure tanks "
                         "is not available yet; check such a design with `optimiser check`, "
                         "or design the scheme without tanks")
    problem = prepare_tree(study)
    state = SearchState(study, problem.datas[0], settings,
                        Clock(started, started + settings.time_limit_s),
                        with_rules=rules_active(problem.datas[0]))
    findings = diagnose_scheme(problem)
    if findings:
        return state.infeasible(findings)
    run_scenario_reduction(state, problem)
    run_tree_dominance(state, problem)
    lp, actives, finished = run_tree_lp(state, problem,
                                        [ActivePoints.none(d) for d in problem.datas])
    if finished is not None:
        return finished
    assert lp is not None
    run_first_designs(state, problem, lp)
    near = around_lp(problem, lp, 1)
    if state.with_rules and state.best is None and pairs(problem, near) <= NEARBY_PAIRS:
        # no first design yet: the fine model near the LP's options, while it is small
        run_tree_fine_model(state, problem, near, lp, 0.3, StageKind.LP_NEARBY)
    if not state.proven() and state.with_rules:
        finished = run_tree_reach_model(state, problem, actives, lp, REACH_SHARE)
        if finished is not None:
            return finished
    if not state.proven() and state.unfinished and not state.clock.nearly_out():
        run_tree_fine_model(state, problem, around_design(problem, state.unfinished[-1]), lp,
                            0.5, StageKind.POLISH)
    if state.best is not None and reach_stopped(state):
        polish_rounds(state, problem, lp)
    elif not state.proven() and not state.clock.nearly_out():
        finished = run_tree_fine_model(state, problem, None, lp, 0.85)
        if finished is not None:
            return finished
    return _finish(state)


def polish_rounds(state: SearchState, problem: TreeProblem, lp: TreeLp) -> None:
    """The fine model around the best design again, while it keeps finding a cheaper
    one and time is left (designs only: the bound stays the reach model's)."""
    for _ in range(POLISH_ROUNDS):
        if state.proven() or state.clock.nearly_out() or state.best is None:
            return
        before = state.best.cost
        run_tree_fine_model(state, problem, around_design(problem, state.best.design), lp,
                            0.5, StageKind.POLISH)
        if state.best.cost >= before - 1e-9 * abs(before):
            return


def _finish(state: SearchState) -> DesignOutcome:
    """Check the best design once more and state the gap and status."""
    if state.best is None:
        raise no_design_error(state, "design of the scheme")
    return finish(state)
