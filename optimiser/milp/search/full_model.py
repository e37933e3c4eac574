"""Stage: the full model of the fine sections (with the rules if any).

Takes the search state; solves the full model like a restricted one
(:func:`optimiser.milp.search.restricted.solve_fine_model`: skipped if too large for the
time left) and, being the model itself, raises the bound with its bound, keeps its
report (its own proof of optimality counts), and ends the run as infeasible when it is
infeasible and no design is known (with a design known, that is a bug).
"""

from __future__ import annotations

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.outcome import VerificationError
from optimiser.milp.search.plan_step import Step
from optimiser.milp.search.restricted import ModelRun, solve_fine_model
from optimiser.milp.search.state import SearchState
from optimiser.model.status import Status


def run_full_model(state: SearchState, step: Step) -> ModelRun:
    """Solve the full model; take its bound; end the run if it is infeasible."""
    report = solve_fine_model(state, step)
    if report is None:
        return ModelRun(False)
    state.full_report = report
    if report.status == Status.INFEASIBLE:
        if state.best is not None:
            raise VerificationError(
                "the full model is reported infeasible although a verified "
                f"design from '{state.best.source}' exists (a bug)")
        return ModelRun(True, state.infeasible(
            diagnose_after(state.data, rules_relaxed_feasible=True)))
    state.raise_bound(report.bound)
    return ModelRun(True)
