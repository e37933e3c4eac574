"""The search for a pumped main: pipes and station heads for the least life-cycle cost.

The stages of :mod:`optimiser.milp.search` price designs by their pipes alone (the
cheapest uniform design, the priced dynamic programme, the reach heuristics, the
any-order model); with a pump a cheap small pipe can be the dearest design of all, so
they are left out (recorded as skipped). The plan here, after Alperovits & Shamir
(1977), who chose pipes and pump heads in one linear programme:

1. the route split at every class limit of the static line held by the non-return
   valve (the higher of the top water level and the outlet's required head), as for
   gravity (:mod:`optimiser.milp.class_limits`);
2. the LP relaxation on merged reaches, by rounds (:mod:`optimiser.milp.pumps.reach_rounds`):
   classes under pumping written relaxed on every reach of several sections
   (:mod:`optimiser.milp.pumps.class_rows`), reaches split where the LP used a class
   the pressure at their start breaks, pressure points added where its design came
   close: the LP bound;
3. when the rules allow at most one change, every pair of options and place of change
   bounded in closed form (:mod:`optimiser.milp.pumps.two_pieces`, a relaxation: its
   bound counts), its cheapest node changes checked as designs; on a long route (more
   than ``FINE_SECTIONS`` sections) with two changes or more and pieces longer than any
   section, a dynamic programme over pieces from the outlet
   (:mod:`optimiser.milp.pumps.piece_stage`, a relaxation: its bound counts when it
   runs to the end), its cheapest chains checked as designs (on short routes the models
   of the fine sections do better: they also place a change inside a section);
4. if not proven, first designs that obey every rule: each option over the whole route,
   and the weakest class of each size with the stretches whose class the pressure
   breaks raised (:mod:`optimiser.milp.pumps.designs`);
5. on a long route (more than ``FINE_SECTIONS`` sections), rounds of the reach model
   with the rules (each a relaxation: its bound counts), warm-started from the best
   design; each round's design judged by the check, and again with its stretches
   raised;
6. if not yet proven, the models of the fine sections (:mod:`optimiser.milp.pumps.fine_models`):
   without the rules, with them around that design, the full model.

Every design is judged by the check (:func:`optimiser.analysis.check_design`) and
priced at its life-cycle cost there, with the least station head per scenario.
``total_cost`` stays the capital of the pipes and changes (contract section 9);
``lower_bound``, ``lp_bound`` and ``gap`` are those of the life-cycle cost, the objective.
The bounds are over the designs of the model, which judges a section's classes at the
energy at its start; a design with its stretches raised may change class inside a
section, outside the model, and cost less than them: the bounds are then capped at its
cost (as for the any-order model of a gravity main, docs/method.md).
"""

from __future__ import annotations

import dataclasses

from optimiser.analysis.static_line import static_line_m
from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.data import prepare
from optimiser.milp.diagnose import admissibility_findings
from optimiser.milp.formulation import rules_active
from optimiser.milp.outcome import DesignOutcome, Stage
from optimiser.milp.pump_columns import pumping_limits_exact
from optimiser.milp.pumps.designs import uniform_designs
from optimiser.milp.pumps.fine_models import run_fine_models
from optimiser.milp.pumps.piece_stage import run_piece_programme
from optimiser.milp.pumps.reach_rounds import Refinement, run_reach_rounds
from optimiser.milp.pumps.two_pieces import run_two_pieces
from optimiser.milp.search.finish import finish, no_design_error
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, SearchState, Settings
from optimiser.model import Study
from optimiser.model.status import Status

FINE_SECTIONS = 200
"""Up to this many sections the models of the fine sections run at once: the reach
rounds and the programme over pieces only pay where those models are too large to
solve in the time."""
SKIPPED_STAGES = ("cheapest uniform design, priced dynamic programme, reach and any-order "
                  "models: they price pipes only, not the energy of a pump")


def static_study(study: Study) -> Study:
    """The study with the static line of the class check as its top water level (the
    optimiser's data take static heads from there)."""
    source = dataclasses.replace(study.source, top_water_level_m=static_line_m(study))
    return dataclasses.replace(study, source=source)


def optimise_pumped(study: Study, settings: Settings, started: float) -> DesignOutcome:
    """The design of least life-cycle cost of a pumped study (see the module docstring)."""
    data = prepare(split_at_class_limits(static_study(study)))
    state = SearchState(study, data, settings, Clock(started, started + settings.time_limit_s),
                        with_rules=rules_active(data))
    state.proofs = pumping_limits_exact(data)
    state.stages.append(Stage(StageKind.ANY_ORDER, SKIPPED_STAGES, Status.SKIPPED, None,
                              None, 0.0, 0, 0, 0, "pumped main"))
    findings = admissibility_findings(data)  # the station's head cannot mend these
    if findings:
        return state.infeasible(findings)
    report = run_reach_rounds(state, Refinement.start(data), lp=True, share=0.3, rounds=2)
    if report is not None and report.status == Status.INFEASIBLE:
        return state.infeasible(_why_infeasible(study))
    run_two_pieces(state)  # a proof when the rules allow at most one change
    if data.n_sections > FINE_SECTIONS and not state.proven():
        run_piece_programme(state)  # a proof with two changes or more (long pieces)
    if not state.proven():
        uniform_designs(state)
    if data.n_sections > FINE_SECTIONS and not state.proven() \
            and not state.clock.nearly_out():
        run_reach_rounds(state, Refinement.start(data), lp=False, share=0.6)
    if not state.proven() and not state.clock.nearly_out():
        run_fine_models(state)
    return _finish(state)


def _finish(state: SearchState) -> DesignOutcome:
    """Check the best design once more (with capacity); gap and status on the
    life-cycle cost, the capital reported as the check's."""
    if state.best is None:
        last = state.stages[-1] if state.stages else None
        if last is not None and last.status == Status.INFEASIBLE:
            return state.infeasible(_why_infeasible(state.study))
        raise no_design_error(state)
    return finish(state, capital_from_check=True)


def _why_infeasible(study: Study) -> list[str]:
    """What can make a pumped main infeasible (the station head itself is free)."""
    pump = study.pump
    assert pump is not None
    reasons = ["no design meets every limit even with the pump: a pressure class that "
               "takes the static line held by the non-return valve (the higher of the top "
               "water level and the level the main delivers to) or the pumping pressure "
               "needed, or the velocity window, rules out every option somewhere"]
    if pump.max_head_m is not None:
        reasons.append(f"or max_head_m ({pump.max_head_m:g} m) is too little head for the "
                       "largest pipes of the catalogue")
    return reasons

