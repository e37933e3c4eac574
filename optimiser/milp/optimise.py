"""``optimise_design``: the cheapest verified design, and why it is cheapest.

The run, top to bottom (each stage is one module of :mod:`optimiser.milp.search` with
one entry point; each keeps what the last one proved in the
:class:`~optimiser.milp.search.state.SearchState`):

0. The problem data of the route split wherever an option's pressure class stops being
   admissible (:mod:`optimiser.milp.class_limits`); designs are pieces by chainage, so
   they are designs of the study as given, and the check judges that study.
1. Diagnosis without a solver (:mod:`optimiser.milp.diagnose`); a finding ends the run
   as ``infeasible``.
2. Presolve: options dominated wherever they are admissible set aside
   (:mod:`~optimiser.milp.search.dominance`; exact).
3. The LP relaxation with the rules relaxed, by row generation on the reach model
   (:mod:`~optimiser.milp.search.lp_relaxation`): the LP bound and the first bound.
4. The first designs (:mod:`~optimiser.milp.search.first_designs`): the LP's solution
   as a design (optimal if it passes the check and the rules within the gap) and the
   cheapest uniform design.
5. If not proven, the plan of mixed-integer programmes
   (:mod:`~optimiser.milp.search.plan`), each warm-started from the best design so far:
   models restricted to options near the LP's, the repaired or the covering design;
   with the rules, the reach model with the rules (a relaxation: its bound raises the
   lower bound), its designs polished on the full model, the priced dynamic programme,
   a large-neighbourhood search around the best design; the full model. A stage too
   large to build and solve in the time left is skipped (recorded in ``stages``).
   Designs of restricted models are designs of the full model, so they are valid
   incumbents; only bounds of relaxations (the LP, the reach model, the full model)
   are reported as bounds.
6. The final check of the best design, the gap and the status.

Every design returned has passed :func:`optimiser.analysis.check_design` (the code of
``optimiser check``) and the rules; a design from an integer programme that fails them
is a bug and raises :class:`VerificationError`.
"""

from __future__ import annotations

import dataclasses
import time

from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.cut_at_tanks import optimise_scheme_with_tanks
from optimiser.milp.data import prepare
from optimiser.milp.diagnose import diagnose
from optimiser.milp.formulation import rules_active
from optimiser.milp.outcome import (
    BindingPoint,
    DesignOutcome,
    SolverError,
    Stage,
    VerificationError,
)
from optimiser.milp.pump_search import optimise_pumped
from optimiser.milp.pumped_to_tank import optimise_pumped_to_tank
from optimiser.milp.scheme_tanks import optimise_scheme_new_tanks
from optimiser.milp.search.any_order import run_any_order
from optimiser.milp.search.dominance import run_dominance
from optimiser.milp.search.finish import finish, no_design_error
from optimiser.milp.search.first_designs import run_first_designs
from optimiser.milp.search.lp_relaxation import run_lp_relaxation
from optimiser.milp.search.plan import initial_plan, run_plan
from optimiser.milp.search.state import Clock, SearchState, Settings
from optimiser.milp.solvers import SOLVERS
from optimiser.milp.tank_data import has_tanks
from optimiser.milp.tank_search import search_with_tanks
from optimiser.milp.tree.optimise import optimise_scheme
from optimiser.milp.tree.pumped import is_pumped_scheme, optimise_pumped_scheme
from optimiser.milp.uniform import UniformDesign
from optimiser.model import Study

__all__ = ["BindingPoint", "DesignOutcome", "SolverError", "Stage", "VerificationError",
           "optimise_design"]


def optimise_design(study: Study, *, solver_name: str | None = None,
                    time_limit_s: float | None = None, mip_gap: float | None = None,
                    msg: bool = False) -> DesignOutcome:
    """The cheapest design of ``study`` that passes the check and the rules.

    ``solver_name`` ("highs" or "cbc"), ``time_limit_s`` (whole run) and ``mip_gap``
    (relative) default to the study's [solver] table. Raises :class:`SolverError` when
    the solver fails or stops without a design, :class:`VerificationError` on a bug.
    """
    started = time.perf_counter()
    solver_name = (solver_name or study.solver.name).lower()
    if solver_name not in SOLVERS:
        raise ValueError(f"unknown solver {solver_name!r}; use one of {', '.join(SOLVERS)}")
    time_limit_s = float(study.solver.time_limit_s if time_limit_s is None else time_limit_s)
    settings = Settings(solver_name, time_limit_s,
                        float(study.solver.mip_gap if mip_gap is None else mip_gap), msg)
    if is_pumped_scheme(study) and not study.tanks:  # the head reaches branches (tree/pumped.py)
        return optimise_pumped_scheme(study, settings, started)
    if study.is_scheme and study.tanks:  # cut at a tank: the parts do not see each other
        return optimise_scheme_with_tanks(study, settings, started, optimise_design)
    if study.is_scheme and study.tank_rules.cost is not None:  # new tanks on a tree
        return optimise_scheme_new_tanks(study, settings, started, optimise_design)
    if study.is_scheme:  # one model for the whole tree (contract section 7)
        return optimise_scheme(study, settings, started)
    if study.pump is not None and study.tanks:  # a rising main to a tank, gravity below
        return optimise_pumped_to_tank(study, settings, started, optimise_design)
    if has_tanks(study):  # break-pressure tanks: their own plan (milp/tank_search.py)
        return _with_tanks(study, settings, Clock(started, started + time_limit_s))
    if study.pump is not None:  # least life-cycle cost, pipes and station heads together
        return optimise_pumped(study, settings, started)
    # The model works on the route split at every class limit (exact class admissibility,
    # :mod:`optimiser.milp.class_limits`); every check judges the study as given.
    data = prepare(split_at_class_limits(study))
    state = SearchState(study, data, settings, Clock(started, started + time_limit_s),
                        with_rules=rules_active(data))
    findings = diagnose(data)
    if findings:
        return state.infeasible(findings)
    run_dominance(state)
    finished = run_lp_relaxation(state)
    if finished is not None:
        return finished
    uniform = run_first_designs(state)
    if not state.proven():
        finished = run_plan(state, initial_plan(state))
        if finished is not None:
            return finished
    if state.best is not None:
        run_any_order(state)
    return _finish(state, uniform)


def _with_tanks(study: Study, settings: Settings, clock: Clock) -> DesignOutcome:
    """The plan with break-pressure tanks, and its end like every run's."""
    run = search_with_tanks(study, settings, clock, optimise_design)
    if run.finished is not None:
        return run.finished
    outcome = _finish(run.state, None)
    return dataclasses.replace(outcome, no_new_tank_cost=run.no_new_tank_cost,
                               no_new_tank_status=run.no_new_tank_status)


def _finish(state: SearchState, uniform: UniformDesign | None) -> DesignOutcome:
    """Check the best design once more (with capacity) and state the gap and status."""
    if state.best is None:
        raise no_design_error(state)
    return finish(state, uniform=uniform)
