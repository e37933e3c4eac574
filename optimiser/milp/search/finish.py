"""The end of every run: the best design checked once more, its bound, gap and status.

One home for what the single-route, scheme and pumped plans share: a design is returned
only if it passes :func:`optimiser.analysis.check_design` (else it is a bug); a bound is
capped at the cost of the design returned (a solver's dual bound may exceed it within
its tolerances, and an any-order design may lie below section-ordered bounds, see
docs/method.md); the status is ``optimal`` when the gap meets the target or the
solver's own proof of the full model covers the design.
"""

from __future__ import annotations

import math

from optimiser.analysis import check_design
from optimiser.milp.outcome import DesignOutcome, SolverError, VerificationError, binding_points
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import relative_gap
from optimiser.model.status import Status


def no_design_error(state: SearchState, what: str = "design") -> SolverError:
    """The error when the time limit ends a run with no design in hand."""
    last = state.stages[-1] if state.stages else None
    return SolverError(f"no {what} found within the time limit "
                       f"({state.settings.time_limit_s:g} s; last solver status: "
                       f"{last.status if last else 'none'})")


def finish(state: SearchState, *, capital_from_check: bool = False,
           **fields: object) -> DesignOutcome:
    """The outcome of ``state``'s best design (which must exist): checked, the bounds
    capped at its cost, gap and status. With ``capital_from_check`` the reported
    ``total_cost`` is the check's capital, not the objective (a pumped main's objective
    is its life-cycle cost); ``fields`` go to the outcome as they are (e.g.
    ``uniform``)."""
    best = state.best
    assert best is not None
    final = check_design(state.study, best.design)
    if not final.ok:
        raise VerificationError("the returned design fails the final check (a bug)")
    bound = min(state.bound, best.cost)
    lp_bound = None if state.lp_bound is None or not state.proofs \
        else min(state.lp_bound, best.cost)
    gap = relative_gap(best.cost, bound)
    status = Status.OPTIMAL if gap is not None and gap <= state.settings.gap_target \
        else Status.FEASIBLE
    full = state.full_report
    if state.proofs and full is not None and full.status == Status.OPTIMAL and \
            best.cost <= (full.objective or math.inf) + 1e-9 * abs(best.cost):
        status = Status.OPTIMAL  # the solver's own proof (its gap is measured as it defines it)
    fields.setdefault("uniform", None)
    return state.outcome(status, design=best.design, check=final,
                         total_cost=final.total_cost if capital_from_check else best.cost,
                         lower_bound=bound if math.isfinite(bound) else None, gap=gap,
                         lp_bound=lp_bound,
                         binding=binding_points(final), **fields)
