"""``optimise_pumped_scheme``: the design of least life-cycle cost of a pumped scheme.

A station at the source whose head reaches branches (a branch leaves the trunk above
its first break-pressure tank, or the scheme has no tank) lifts every line by the same
head (contract sections 7 and 9). The tree's model (:mod:`optimiser.milp.tree.model`)
takes one station-head column per scenario on the trunk, carried into every branch
through the junction energies, the energy and station costs in the objective, and the
classes under pumping on every line (:mod:`optimiser.milp.tree.pump_rows`), after
Alperovits & Shamir (1977). The plan:

1. every line split at the class limits of the static line held by the non-return valve
   (the higher of the top water level and the highest level the scheme delivers to,
   :func:`optimiser.analysis.static_line.static_line_m`);
2. the LP relaxation of the whole tree on its fine sections, rules relaxed: the LP bound
   (a relaxation); its design judged by the check;
3. with the rules, first designs: the LP's design repaired to them line by line, and
   every line's covering design (:mod:`optimiser.milp.tree.pump_stages`);
4. the model with the rules restricted to the options near the LP's and the best
   design's (designs only, solved to 1e-4);
5. with the rules, rounds of the reach model (:mod:`optimiser.milp.tree.pumped_reaches`:
   merged reaches, the pressure points designs came close to, classes under pumping
   relaxed on merged reaches; a relaxation, its bound counts), starting from the points
   the best design came close to; if a round stops on its time limit, the model of the
   fine sections around the best design while it improves (designs only), and no full
   model (as large and as hard, with less time);
6. else, unless proven, the full model of the tree with the rules: its bound raises the
   lower bound, its design is judged by the check.

Every design is judged by :func:`optimiser.analysis.check_design` at its least station
heads and priced at its life-cycle cost (:func:`optimiser.milp.pumps.designs.consider`);
``total_cost`` stays the capital, the bounds and the gap are those of the life-cycle
cost. The bounds are over the designs of the model, which judges each section's class
at the energy at its start and a branch's junction loss with its first section's
smallest pipe (conservative, as for a gravity scheme and a pumped route).

With break-pressure tanks of the study's own, :func:`optimiser.milp.optimise_design`
cuts the scheme at them first (:mod:`optimiser.milp.cut_at_tanks`): the part above the
first tanks, which the station fills (each a delivery point at its water level), is the
pumped scheme designed here; the parts below are gravity schemes; the sum of the parts'
bounds bounds the life-cycle cost. Tanks chosen by ``design`` are refused here (the
station's part gets none).
"""

from __future__ import annotations

import dataclasses

from optimiser.analysis.static_line import pump_reaches_branches
from optimiser.io.errors import InputError
from optimiser.milp.formulation import rules_active
from optimiser.milp.outcome import DesignOutcome, SolverError, VerificationError
from optimiser.milp.pump_columns import pumping_limits_exact
from optimiser.milp.pump_search import static_study
from optimiser.milp.search.finish import finish, no_design_error
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, SearchState, Settings
from optimiser.milp.tree.problem import TreeProblem, prepare_tree
from optimiser.milp.tree.pump_stages import (
    first_designs,
    near_design,
    near_lp,
    run_pumped_model,
)
from optimiser.milp.tree.pumped_reaches import TreeRefinement, run_pumped_reach_rounds
from optimiser.model import Study
from optimiser.model.status import Status

__all__ = ["is_pumped_scheme", "optimise_pumped_scheme"]

LP_SHARE = 0.3
"""Share of the time left the LP may take."""
NEARBY_SHARE = 0.4
"""Share of the time left the model near the LP's options may take (designs only)."""
REACH_SHARE = 0.6
"""Share of the time left each round of the reach model may take."""
REACH_SECTIONS = 0
"""Trees of more sections than this (all lines) get the reach model before the full one:
every tree, as measured (an invented 60-section tree: the reach model proved the optimum
in 0.2 s, the full model took 25 s)."""
POLISH_ROUNDS = 4


def is_pumped_scheme(study: Study) -> bool:
    """A pumped study whose station's head reaches a branch."""
    return pump_reaches_branches(study)


def optimise_pumped_scheme(study: Study, settings: Settings, started: float
                           ) -> DesignOutcome:
    """The design of least life-cycle cost of the pumped scheme ``study`` that passes
    the check and the rules (see the module docstring)."""
    _refuse_tanks(study)
    problem = prepare_tree(static_study(study))
    problem = dataclasses.replace(problem, study=study)  # the check judges the study as given
    state = SearchState(study, problem.datas[0], settings,
                        Clock(started, started + settings.time_limit_s),
                        with_rules=rules_active(problem.datas[0]))
    state.proofs = all(pumping_limits_exact(data) for data in problem.datas)
    lp = run_pumped_model(state, problem, StageKind.LP_RELAXATION, LP_SHARE, relaxed=True)
    if lp.report.status == Status.INFEASIBLE:
        return state.infeasible(_why_infeasible(study, rules=False))
    if not lp.report.has_solution or lp.report.objective is None:
        raise SolverError(f"the LP relaxation of the pumped scheme did not solve "
                          f"({lp.report.status}: {lp.report.message})")
    state.lp_bound = lp.report.objective
    state.raise_bound(lp.report.objective)
    first_designs(state, problem, lp)
    if not state.proven() and state.with_rules and not state.clock.nearly_out():
        near = near_lp(problem, lp)
        if state.best is not None:
            near = [a | b for a, b in zip(near, near_design(problem, state.best.design),
                                          strict=True)]
        run_pumped_model(state, problem, StageKind.LP_NEARBY, NEARBY_SHARE, allowed=near)
    stopped = False  # the reach model stopped on its time limit
    if _reach_rounds_pay(state, problem):
        seen = None if state.best is None else state.best.check
        last = run_pumped_reach_rounds(state, problem, TreeRefinement.start(problem, seen),
                                       REACH_SHARE)
        if last.report is not None and last.report.status == Status.INFEASIBLE:
            if state.best is not None:
                raise VerificationError("the pumped tree's reach model, a relaxation, is "
                                        "reported infeasible although a verified design "
                                        f"from '{state.best.source}' exists (a bug)")
            return state.infeasible(_why_infeasible(study, rules=True))
        stopped = last.report is not None and last.report.status != Status.OPTIMAL
        if stopped:  # the full model, larger and as hard, would not do better in the time
            _polish(state, problem)
    if not stopped and not state.proven() and not state.clock.nearly_out():
        full = run_pumped_model(state, problem, StageKind.FULL_MODEL, 0.9)
        if full.report.status == Status.INFEASIBLE:
            return state.infeasible(_why_infeasible(study, rules=True))
        state.full_report = full.report
        state.raise_bound(full.report.bound)
    if state.best is None:
        raise no_design_error(state, "design of the pumped scheme")
    return finish(state, capital_from_check=True)


def _reach_rounds_pay(state: SearchState, problem: TreeProblem) -> bool:
    """The reach model runs on trees of more than ``REACH_SECTIONS`` sections with the
    rules, unless already proven: smaller ones are solved whole at once."""
    return (state.with_rules and not state.proven() and not state.clock.nearly_out()
            and sum(data.n_sections for data in problem.datas) > REACH_SECTIONS)


def _polish(state: SearchState, problem: TreeProblem) -> None:
    """The fine model around the best design, while it finds a cheaper one (designs
    only; the bound stays the reach model's)."""
    for _ in range(POLISH_ROUNDS):
        if state.proven() or state.clock.nearly_out() or state.best is None:
            return
        before = state.best.cost
        # one size either way: a size change moves the station head, and so the energy
        run_pumped_model(state, problem, StageKind.POLISH, 0.5,
                         allowed=near_design(problem, state.best.design, radius=1))
        if state.best.cost >= before - 1e-9 * abs(before):
            return


def _why_infeasible(study: Study, rules: bool) -> list[str]:
    """What can make a pumped scheme infeasible (the station head itself is free)."""
    pump = study.pump
    assert pump is not None
    reasons = ["no design meets every limit of every line even with the pump: a pressure "
               "class that takes the static line held by the non-return valve (the higher "
               "of the top water level and the highest level the scheme delivers to) or "
               "the pumping pressure needed, or the velocity window, rules out every "
               "option somewhere"]
    if pump.max_head_m is not None:
        reasons.append(f"or max_head_m ({pump.max_head_m:g} m) is too little head for the "
                       "largest pipes of the catalogue")
    if rules:
        reasons.append("or the design rules (min_piece_length_m, max_changes, "
                       "sizes_downstream) leave no design that the relaxed model had")
    return reasons


def _refuse_tanks(study: Study) -> None:
    """Raise :class:`InputError` for a pumped scheme with new break-pressure tanks
    (its own tanks are cut off before, :mod:`optimiser.milp.cut_at_tanks`)."""
    if study.tanks:
        raise ValueError("a pumped scheme with tanks of its own is designed in parts "
                         "(optimiser.milp.cut_at_tanks), not here")
    if study.tank_rules.cost is None:
        return
    where = study.path or "the study file"
    raise InputError(
        f"{where}: [pump] with branches its head reaches and [break_pressure_tanks] cost "
        "(new tanks chosen by design): design of such a pumped scheme is not available in "
        "this version; give the tanks as [[break_pressure_tank]] of the study, or check a "
        "design of it with `optimiser check`")
