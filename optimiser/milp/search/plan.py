"""The driver: the plan of stages after the first designs, run until proof, time limit
or infeasibility.

The plan (:func:`initial_plan`): a model restricted to the options the LP used nearby;
with the rules, the restricted models around the repaired or covering design that are
small beside the reach model, the reach model with the rules, the larger ones, the
options the LP used anywhere; then the full model. While it runs the driver puts steps
in front: after the reach model (not proven), its last unfinished design polished on
the full model and the priced dynamic programme; after the priced search, a model
around its designs; after the reach model, the priced models and each neighbourhood,
the next neighbourhood of the best design (:mod:`optimiser.milp.search.neighbourhood`).
"""

from __future__ import annotations

from optimiser.milp.outcome import DesignOutcome
from optimiser.milp.repair import design_mask
from optimiser.milp.search.full_model import run_full_model
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import global_mask, window_mask
from optimiser.milp.search.neighbourhood import Neighbourhood
from optimiser.milp.search.plan_step import Step
from optimiser.milp.search.priced_stage import run_priced
from optimiser.milp.search.reach_model import run_reach_model
from optimiser.milp.search.repair_starts import run_repair_starts
from optimiser.milp.search.restricted import run_restricted
from optimiser.milp.search.state import SearchState

FINE_FIRST = 2.0
"""A restricted model of the fine sections runs before the reach model with the rules
only if it has at most this many times the reach model's (reach, option) pairs."""


def initial_plan(state: SearchState) -> list[Step]:
    """The steps to run, in order (with the rules, this runs the repair starts)."""
    assert state.lp is not None
    data = state.data
    used = state.lp.used
    steps = [Step(StageKind.LP_NEARBY, window_mask(data, used, state.width_m), 0.3)]
    if state.with_rules:
        steps += run_repair_starts(state)
        # Restricted models of the fine sections go before the reach model only while
        # they are small beside it (on long routes they cost more than the reach model,
        # which finds their designs and proves them as well).
        reach_pairs = int(state.lp.form.data.admissible.sum())
        small = [step for step in steps
                 if int((data.admissible & step.mask).sum()) <= FINE_FIRST * reach_pairs]
        large = [step for step in steps if not any(step is kept for kept in small)]
        steps = [*small, Step(StageKind.REACH_MODEL, None, 0.8), *large,
                 Step(StageKind.LP_ANYWHERE, global_mask(data, used), 0.4)]
    steps.append(Step(StageKind.FULL_MODEL, None, 0.85))  # leave time to verify
    return steps


def run_plan(state: SearchState, steps: list[Step]) -> DesignOutcome | None:
    """Run ``steps`` (and those put in front as they run) until the best design is
    proven, the time is nearly out or the queue is empty; returns the outcome only if
    a stage proved that no design exists."""
    search = Neighbourhood.for_state(state)
    while steps:
        step = steps.pop(0)
        if state.clock.nearly_out() and state.best is not None:
            break
        if step.kind is StageKind.REACH_MODEL:
            finished = run_reach_model(state, step.share)
            if finished is not None:
                return finished
            if state.proven():
                break
            steps[0:0] = _after_reach_model(state)
            continue
        if step.kind is StageKind.PRICED:
            used = run_priced(state)
            steps[0:0] = search.next_steps(state, StageKind.REACH_MODEL) if used is None \
                else [Step(StageKind.PRICED_NEARBY, window_mask(state.data, used,
                                                                state.width_m), 0.3)]
            continue
        run = (run_full_model if step.kind is StageKind.FULL_MODEL else run_restricted)(
            state, step)
        if run.finished is not None:
            return run.finished
        if not run.ran:
            continue
        if state.proven():
            break
        steps[0:0] = search.next_steps(state, step.kind)
    return None


def _after_reach_model(state: SearchState) -> list[Step]:
    """Not proven: a reach design that misses the rules or a pressure by a little (the
    reach model relaxes them) is re-optimised around it on the full model; then the
    priced dynamic programme, a different route to designs; then (after it) the
    neighbourhood search around the best."""
    front: list[Step] = []
    if state.unfinished:
        front.append(Step(StageKind.POLISH,
                          design_mask(state.data, state.unfinished[-1], state.reach_m), 0.3))
    front.append(Step(StageKind.PRICED))
    return front
