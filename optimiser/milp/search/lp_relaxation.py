"""Stage: the LP relaxation (rules relaxed), by row generation on the reach model.

Takes the search state (after presolve); gives it the LP's results
(:class:`~optimiser.milp.search.state.LpRelaxation`), the LP bound, the first lower bound
and the check points the LP's design came close to; or ends the run (infeasible, or
:class:`~optimiser.milp.outcome.SolverError` if the LP does not solve).

Pressure rows are only at the deepest point of each run of points a previous round's
design violated and, once one violates nothing, at the points it came within
``NEAR_M`` of violating (:func:`optimiser.milp.reaches.points_near`); quiet sections are
merged. Every round is a relaxation, so its value (less the largest value of the
tie-break term) is a valid ``lp_bound``. The LP is highly degenerate (many arrangements
of the same lengths cost the same), so its objective carries a tie-break of relative
size about 1e-7 that prefers larger diameters upstream.
"""

from __future__ import annotations

import math
import time

import numpy as np

from optimiser.analysis import check_design
from optimiser.milp.data import ProblemData
from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.extract import design_from_fractions
from optimiser.milp.formulation import build
from optimiser.milp.outcome import DesignOutcome, SolverError
from optimiser.milp.reaches import (
    MAX_ROW_ROUNDS,
    ActivePoints,
    merge,
    points_near,
    refine,
    with_active,
)
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import LpRelaxation, SearchState
from optimiser.milp.uniform import uniform_feasible
from optimiser.model.status import Status

TIEBREAK_RELATIVE = 1e-7


def tiebreak_scale(data: ProblemData) -> float:
    """Weight of the tie-break term: about TIEBREAK_RELATIVE of the cheapest cost."""
    n = data.n_sections
    span = max(n - 1, 1)
    weight = float((data.chainage_length_m * (1.0 - np.arange(n) / span)).sum()
                   * max(data.n_options - 1, 1))
    cheapest = float(np.where(data.admissible, data.section_cost, np.inf).min(axis=1).sum())
    if not math.isfinite(cheapest) or cheapest <= 0 or weight <= 0:
        return 0.0
    return TIEBREAK_RELATIVE * cheapest / weight


def run_lp_relaxation(state: SearchState) -> DesignOutcome | None:
    """Solve the LP relaxation; returns the outcome if it proves no design exists."""
    lp = _rounds(state)
    report = lp.report
    if report.status == Status.INFEASIBLE:
        return state.infeasible(diagnose_after(state.data, rules_relaxed_feasible=False))
    if not report.has_solution or report.objective is None:
        raise SolverError(f"the LP relaxation did not solve ({report.status}: "
                          f"{report.message})")
    state.lp = lp
    state.lp_bound = report.objective - lp.form.tiebreak_max
    state.bound = state.lp_bound
    study = state.study
    if state.with_rules and study.costs.change_cost > 0 \
            and not uniform_feasible(state.data).any():
        state.bound += study.costs.change_cost  # every feasible design has a change
    return None


def _rounds(state: SearchState) -> LpRelaxation:
    """Rounds of the LP, each with the points the last one's design came close to."""
    data = state.data
    active = ActivePoints.none(data)
    first = np.arange(data.n_sections)  # first fine section of each reach of the LP
    fractions = np.zeros((data.n_sections, data.n_options))
    for number in range(1, MAX_ROW_ROUNDS + 1):
        begun = time.perf_counter()
        reaches = merge(with_active(data, active))
        form = build(reaches.data, with_rules=False, relaxed=True,
                     tiebreak=tiebreak_scale(reaches.data))
        seconds = time.perf_counter() - begun
        state.note_build_rate(False, seconds, int(reaches.data.admissible.sum()))
        report = state.run_solver(
            StageKind.LP_RELAXATION, f"{StageKind.LP_RELAXATION.label}, round {number}: "
            f"{reaches.n_reaches} reaches, {active.count()} pressure points",
            form, None, 1.0, seconds)
        first = reaches.first
        if not report.has_solution:
            break
        fractions = refine(data, reaches, form.fractions())
        wanted = points_near(data, check_design(
            state.study, design_from_fractions(data, fractions), capacity=False))
        grown = active.union(wanted)
        if grown.count() == active.count() or state.clock.nearly_out():
            break
        active = grown
    state.active = active
    return LpRelaxation(form, report, first, fractions)
