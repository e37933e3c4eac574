"""Stage: the reach model with the rules, by row generation.

Takes the search state (after the LP relaxation, whose check points it starts from);
gives a raised bound, designs, the reach designs still to be made designs of the full
model (``state.unfinished``), or the end of the run when the model proves that no
design exists.

The reach model is a relaxation of the full model (pressure rows only where designs
came close, reaches laid in any order, the chainage of a share rounded up), so its
bound is a valid bound; its design, once the check has passed it at every point and the
rules hold, is a design of the full model. Each round adds the check points the last
design came close to (:func:`optimiser.milp.reaches.points_near`), with the options no
design cheaper than the best so far can use left out (reduced-cost fixing on the LP,
:mod:`optimiser.milp.fixing`). In the first round, when the best design is still far
above the bound, small reach models look for designs first
(:mod:`optimiser.milp.search.reach_heuristics`).
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.fixing import allowed_below
from optimiser.milp.formulation import Formulation, build
from optimiser.milp.outcome import DesignOutcome, VerificationError
from optimiser.milp.reaches import (
    MAX_ROW_ROUNDS,
    Reaches,
    design_from_reaches,
    merge,
    points_near,
    reach_use,
    with_active,
)
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.reach_heuristics import run_reach_heuristics
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.model.status import Status

HEURISTIC_GAP = 0.005
"""Small reach models look for designs first when the best design is further than this
(relative) above the bound: the whole reach model then spends its root node on cuts
before it finds designs."""


def run_reach_model(state: SearchState, share: float) -> DesignOutcome | None:
    """Rounds of the reach model, each with ``share`` of the time left; returns the
    outcome only if the model proves that no design exists."""
    assert state.active is not None
    for number in range(1, MAX_ROW_ROUNDS + 1):
        if state.clock.nearly_out():
            return None
        begun = time.perf_counter()
        reaches = merge(with_active(state.data, state.active))
        if number == 1 and state.best_gap() > max(2.0 * state.settings.mip_gap,
                                                   HEURISTIC_GAP):
            run_reach_heuristics(state, reaches, _fixed(state, reaches))
            if state.proven():
                return None
            begun = time.perf_counter()
        form, report = _solve_round(state, number, reaches, share, begun)
        if report.status == Status.INFEASIBLE:
            return _infeasible(state)
        state.raise_bound(report.bound)
        if not report.has_solution:
            return None
        design = design_from_reaches(state.data, reaches, form)
        result = state.consider(design, StageKind.REACH_MODEL.label, must_pass=False)
        if state.best is None or state.best.design is not design:
            state.unfinished.append(design)  # polished on the full model later
        grown = state.active.union(points_near(state.data, result))
        if state.proven() or grown.count() == state.active.count():
            return None
        state.active = grown
    return None


def _fixed(state: SearchState, reaches: Reaches) -> np.ndarray | None:
    """Options of each reach that a design cheaper than the best so far may use
    (reduced-cost fixing on the LP; a reach keeps an option if any of its sections
    does); None: no fixing."""
    lp = state.lp
    if state.best is None or lp is None:
        return None
    fine_ok = allowed_below(state.data, lp.first, lp.form, lp.report.objective,
                            state.best.cost)
    if fine_ok is None:
        return None
    allowed = np.logical_or.reduceat(fine_ok, reaches.first, axis=0)
    if not (allowed & reaches.data.admissible).any(axis=1).all():
        return None  # only by solver noise: keep the model whole
    return allowed


def _solve_round(state: SearchState, number: int, reaches: Reaches, share: float,
                 begun: float) -> tuple[Formulation, SolveReport]:
    """Build and solve one round (with fixing; again without if fixing made it
    infeasible, which can only be solver noise)."""
    kind = StageKind.REACH_MODEL
    allowed = _fixed(state, reaches)
    best = state.best
    warm = reach_use(state.data, reaches, best.design) if best is not None else None
    form = build(reaches.data, with_rules=True, allowed=allowed)
    name = (f"{kind.label}, round {number}: {reaches.n_reaches} reaches, "
            f"{state.active.count()} pressure points")
    report = state.run_solver(kind, name, form, warm, share, time.perf_counter() - begun)
    if report.status == Status.INFEASIBLE and allowed is not None:
        # Fixing can only leave out options of designs dearer than the best, so this is
        # solver noise: solve the whole reach model instead.
        begun = time.perf_counter()
        form = build(reaches.data, with_rules=True)
        report = state.run_solver(kind, f"{kind.label}, round {number} without fixing",
                                  form, warm, share, time.perf_counter() - begun)
    return form, report


def _infeasible(state: SearchState) -> DesignOutcome:
    """The reach model (a relaxation) is infeasible: no design exists."""
    if state.best is not None:
        raise VerificationError(
            "the reach model is reported infeasible although a verified "
            f"design from '{state.best.source}' exists (a bug)")
    return state.infeasible(diagnose_after(state.data, rules_relaxed_feasible=True))
