"""Stage: a model of the fine sections restricted to some options (designs only).

Takes the search state and a step with a mask of options; builds the model of the fine
sections with the rules (if any) on those options only, warm-started from the best
design, solves it tightly and offers its design, which must pass the check (a design of
a restricted model is a design of the full model; if it fails, that is a bug). Gives
whether it ran: a mask that keeps every option is left to the full model, and a model
too large to build and solve in the time left is skipped (recorded). Its bound is not a
bound of the full model and is never used.
"""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.milp.extract import design_from_fractions, section_use
from optimiser.milp.outcome import DesignOutcome, Stage
from optimiser.milp.search.plan_step import Step
from optimiser.milp.search.state import RESTRICTED_GAP, SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.model.status import Status


@dataclass(frozen=True)
class ModelRun:
    """How a model step ended: whether it ran, and the run's outcome if it ended it."""

    ran: bool
    finished: DesignOutcome | None = None


def run_restricted(state: SearchState, step: Step) -> ModelRun:
    """Solve the restricted model of ``step`` and offer its design."""
    return ModelRun(solve_fine_model(state, step) is not None)


def solve_fine_model(state: SearchState, step: Step) -> SolveReport | None:
    """Build, solve and record the model of ``step`` on the fine sections, and offer
    its design; None if it did not run (see the module docstring)."""
    data = state.data
    mask = step.mask
    if mask is not None and (data.admissible & ~mask).sum() == 0:
        return None  # the reduced model would be the full model
    pairs = int((data.admissible if mask is None else data.admissible & mask).sum())
    if state.best is not None and state.expected_build_s(pairs) > 0.5 * state.clock.left():
        state.stages.append(Stage(step.kind, step.name, Status.SKIPPED, None, None, 0.0, 0, 0,
                                  0, "too large to build and solve in the time left"))
        return None
    form, seconds = state.timed_build(mask)
    warm = section_use(data, state.best.design) if state.best is not None else None
    # A restricted model only supplies designs: solve it tightly (it is small), or a
    # loose target gap would stop it at designs worse than its start.
    report = state.run_solver(step.kind, step.name, form, warm, step.share, seconds,
                              None if mask is None else min(state.settings.mip_gap,
                                                            RESTRICTED_GAP))
    if report.has_solution:
        state.consider(design_from_fractions(data, form.fractions()), step.name,
                       must_pass=True)
    return report
