"""The search for a pumped main: pipes and station heads for the least life-cycle cost.

The stages of :mod:`optimiser.milp.search` price designs by their pipes alone (the
cheapest uniform design, the priced dynamic programme, the reach heuristics, the
any-order model); with a pump a cheap small pipe can be the dearest design of all, so
they are left out (recorded as skipped). The plan here, after Alperovits & Shamir
(1977), who chose pipes and pump heads in one linear programme:

1. the route split at every class limit of the static line held by the non-return
   valve (the higher of the top water level and the outlet's required head), as for
   gravity (:mod:`optimiser.milp.class_limits`);
2. the LP relaxation of the full model with the station heads as columns
   (:mod:`optimiser.milp.pump_columns`): the first lower bound;
3. a first design: the LP's fractions laid as pieces (with the rules, repaired to their
   piece structure, :mod:`optimiser.milp.repair`), classes raised where the pumping
   pressure breaks them, checked;
4. the mixed-integer programme without the rules (the full model when the study has
   none; else a relaxation, so its bound counts), warm-started; with rules, its design
   repaired, then the model with the rules on the options that design uses nearby
   (designs only, like the restricted models of the gravity search);
5. with rules, the full mixed-integer programme, warm-started from the best design: a
   design and a bound. Every design is judged by the check (:func:`optimiser.analysis.check_design`)
   and priced at its life-cycle cost there, with the least station head per scenario.

``total_cost`` stays the capital of the pipes and changes (contract section 9);
``lower_bound``, ``lp_bound`` and ``gap`` are those of the life-cycle cost, the objective.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np

from optimiser.analysis import CheckResult, check_design
from optimiser.analysis.static_line import static_line_m
from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.data import prepare
from optimiser.milp.extract import design_from_fractions, rule_problems, section_use
from optimiser.milp.formulation import build, rules_active
from optimiser.milp.outcome import (
    DesignOutcome,
    Stage,
    VerificationError,
)
from optimiser.milp.pump_columns import head_caps_m
from optimiser.milp.repair import design_mask, repair
from optimiser.milp.search.finish import finish, no_design_error
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Candidate, Clock, SearchState, Settings
from optimiser.model import Design, Study
from optimiser.model.status import Status

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
    state.stages.append(Stage(StageKind.ANY_ORDER, SKIPPED_STAGES, Status.SKIPPED, None,
                              None, 0.0, 0, 0, 0, "pumped main"))
    begun = time.perf_counter()
    relaxed = build(data, with_rules=False, relaxed=True)
    report = state.run_solver(StageKind.LP_RELAXATION,
                              "LP relaxation, rules relaxed (pipes and station heads)",
                              relaxed, None, 0.4, time.perf_counter() - begun)
    if report.status == Status.INFEASIBLE:
        return state.infeasible(_why_infeasible(study))
    if report.bound is not None:
        state.lp_bound = report.bound
        state.raise_bound(report.bound)
    warm = None
    if relaxed.values is not None:
        warm = _first_design(state, design_from_fractions(data, relaxed.fractions()))
    if not state.proven() and not state.clock.nearly_out():
        start = _without_rules(state, warm)  # without rules, this is the full model
        if state.with_rules and start is not None and not state.proven():
            _near(state, start)
        if state.with_rules and not state.proven() and not state.clock.nearly_out():
            _full_model(state)
    return _finish(state)


def _without_rules(state: SearchState, start: Design | None) -> Design | None:
    """The mixed-integer programme without the rules (the full model when the study has
    none): a relaxation, so its bound counts; its design, repaired to the rules' piece
    structure when there are rules, is offered. Returns its design (before repair)."""
    begun = time.perf_counter()
    form = build(state.data, with_rules=False)
    start = start or (state.best.design if state.best is not None else None)
    warm = section_use(state.data, start) if start is not None else None
    name = "MILP, rules relaxed (pipes and station heads)" if state.with_rules else \
        "MILP, full model (pipes and station heads)"
    report = state.run_solver(StageKind.FULL_MODEL, name, form, warm,
                              0.3 if state.with_rules else 1.0, time.perf_counter() - begun)
    if not state.with_rules:
        state.full_report = report
    state.raise_bound(report.bound)
    if not report.has_solution or form.values is None:
        return None
    design = design_from_fractions(state.data, form.fractions())
    if state.with_rules:
        repaired = repair(state.data, design)
        if repaired is not None:
            _consider(state, repaired, "rules-relaxed MILP, repaired", must_pass=False)
    else:
        _consider(state, design, name, must_pass=True)
    return design


def _near(state: SearchState, design: Design) -> None:
    """The model with the rules on the options ``design`` uses nearby (designs only)."""
    begun = time.perf_counter()
    mask = design_mask(state.data, design, state.reach_m)
    form = build(state.data, allowed=mask, with_rules=True)
    warm = section_use(state.data, state.best.design) if state.best is not None else None
    report = state.run_solver(StageKind.REPAIRED_NEARBY, "MILP with the rules, options of "
                              "the rules-relaxed design nearby", form, warm, 0.4,
                              time.perf_counter() - begun, min(state.settings.mip_gap, 1e-4))
    if report.has_solution and form.values is not None:
        _consider(state, design_from_fractions(state.data, form.fractions()),
                  "MILP with the rules, nearby", must_pass=True)


def _consider(state: SearchState, design: Design, source: str, must_pass: bool) -> None:
    """Check ``design``; keep it if it passes and the rules hold and its life-cycle
    cost is the least so far."""
    result = check_design(state.study, design, capacity=False)
    problems = rule_problems(state.study, design)
    if not result.ok or problems:
        if must_pass:
            details = [v.message or v.kind for v in result.violations[:5]] + problems[:5]
            raise VerificationError(f"the design from '{source}' fails the check (a bug "
                                    f"in the formulation): {'; '.join(details)}")
        return
    cost = result.life_cycle_cost
    assert cost is not None
    best = state.best
    if best is None or cost < best.cost - 1e-9 * abs(best.cost):
        state.best = Candidate(design, result, cost, source)


def _first_design(state: SearchState, design: Design) -> Design | None:
    """The LP's design with the class of every piece the pumping pressure breaks raised
    within its size; with rules, that design repaired to their piece structure (and its
    classes raised again) is offered. Returns the design before the repair (a start for
    the model without the rules), or None."""
    design = _with_classes_raised(state.study, design)
    if design is None:
        return None
    if not state.with_rules:
        _consider(state, design, "LP relaxation, classes raised", must_pass=False)
        return design
    repaired = repair(state.data, design)
    if repaired is not None:
        repaired = _with_classes_raised(state.study, repaired)
    if repaired is not None:
        _consider(state, repaired, "LP relaxation, repaired, classes raised",
                  must_pass=False)
    return design


def _with_classes_raised(study: Study, design: Design) -> Design | None:
    """``design`` with classes raised until the check passes (None if it cannot)."""
    for _ in range(4):
        result = check_design(study, design, capacity=False)
        if result.ok:
            return design
        raised = _raise_classes(study, design, result)
        if raised is None:
            return None
        design = raised
    return None


def _raise_classes(study: Study, design: Design, result: CheckResult) -> Design | None:
    """Every piece with a class violation in the next class of its material and size
    (None if one has no higher class)."""
    failing = {v.chainage_m for v in result.violations if v.kind == "max_pressure"}
    if not failing:
        return None  # something else fails: not a matter of classes
    pieces = []
    for index, piece in enumerate(design.pieces):
        row = result.pieces.iloc[index]
        option = piece.option
        if row["lowest_chainage_m"] in failing:
            higher = [o for o in study.catalogue if o.material == option.material
                      and o.dn_mm == option.dn_mm
                      and o.allowable_head_m > option.allowable_head_m]
            if not higher:
                return None
            option = min(higher, key=lambda o: o.allowable_head_m)
        pieces.append(dataclasses.replace(piece, option=option))
    return Design(tuple(pieces))


def _full_model(state: SearchState) -> None:
    """The full mixed-integer programme, warm-started from the best design."""
    begun = time.perf_counter()
    caps = None if state.best is None else head_caps_m(state.data, state.best.cost)
    form = build(state.data, with_rules=state.with_rules, pump_head_cap_m=caps)
    warm = section_use(state.data, state.best.design) if state.best is not None else None
    report = state.run_solver(StageKind.FULL_MODEL, "MILP, full model (pipes and station "
                              "heads)", form, warm, 1.0, time.perf_counter() - begun)
    state.full_report = report
    if report.has_solution and form.values is not None:
        _consider(state, design_from_fractions(state.data, form.fractions()),
                  "MILP, full model", must_pass=True)
    state.raise_bound(report.bound)


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
               "water level and the outlet's required head) or the pumping pressure "
               "needed, or the velocity window, rules out every option somewhere"]
    if pump.max_head_m is not None:
        reasons.append(f"or max_head_m ({pump.max_head_m:g} m) is too little head for the "
                       "largest pipes of the catalogue")
    return reasons


def life_cycle_of(outcome: DesignOutcome) -> float | None:
    """The life-cycle cost of a design outcome (None without a pump or a design)."""
    if outcome.check is None:
        return None
    value = outcome.check.life_cycle_cost
    return None if value is None or not np.isfinite(value) else float(value)
