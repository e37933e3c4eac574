"""Stages on the fine sections of a pumped main (the split route, no merged reaches):
the integer programme without the rules, the model with the rules around a design, and
the full model. Small mains are proven here; on long ones they are what is left once
the reach rounds (:mod:`optimiser.milp.pumps.reach_rounds`) stop short of a proof."""

from __future__ import annotations

import time

from optimiser.milp.extract import design_from_fractions, section_use
from optimiser.milp.formulation import build
from optimiser.milp.pump_columns import head_caps_m
from optimiser.milp.pumps.designs import consider
from optimiser.milp.repair import design_mask, repair
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.model import Design

__all__ = ["run_fine_models"]


def run_fine_models(state: SearchState) -> None:
    """Without rules: the full model. With rules: the model without them (a relaxation,
    its design repaired), the model with them around that design, the full model."""
    start = _without_rules(state)
    if state.with_rules and start is not None and not state.proven() \
            and not state.clock.nearly_out():
        _near(state, start)
    if state.with_rules and not state.proven() and not state.clock.nearly_out():
        _full_model(state)


def _warm(state: SearchState):
    return section_use(state.data, state.best.design) if state.best is not None else None


def _without_rules(state: SearchState) -> Design | None:
    """The mixed-integer programme without the rules (the full model when the study has
    none): a relaxation, so its bound counts; its design (repaired to the rules' piece
    structure when there are rules) is offered. Returns its design before repair."""
    begun = time.perf_counter()
    form = build(state.data, with_rules=False)
    name = "MILP, rules relaxed (pipes and station heads)" if state.with_rules else \
        "MILP, full model (pipes and station heads)"
    report = state.run_solver(StageKind.FULL_MODEL, name, form, _warm(state),
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
            consider(state, repaired, "rules-relaxed MILP, repaired", must_pass=False)
    else:
        consider(state, design, name, must_pass=True)
    return design


def _near(state: SearchState, design: Design) -> None:
    """The model with the rules on the options ``design`` uses nearby (designs only)."""
    begun = time.perf_counter()
    mask = design_mask(state.data, design, state.reach_m)
    form = build(state.data, allowed=mask, with_rules=True)
    report = state.run_solver(StageKind.REPAIRED_NEARBY, "MILP with the rules, options of "
                              "the rules-relaxed design nearby", form, _warm(state), 0.4,
                              time.perf_counter() - begun, min(state.settings.mip_gap, 1e-4))
    if report.has_solution and form.values is not None:
        consider(state, design_from_fractions(state.data, form.fractions()),
                 "MILP with the rules, nearby", must_pass=True)


def _full_model(state: SearchState) -> None:
    """The full mixed-integer programme, warm-started from the best design."""
    begun = time.perf_counter()
    caps = None if state.best is None else head_caps_m(state.data, state.best.cost)
    form = build(state.data, with_rules=state.with_rules, pump_head_cap_m=caps)
    report = state.run_solver(StageKind.FULL_MODEL, "MILP, full model (pipes and station "
                              "heads)", form, _warm(state), 1.0, time.perf_counter() - begun)
    state.full_report = report
    if report.has_solution and form.values is not None:
        consider(state, design_from_fractions(state.data, form.fractions()),
                 "MILP, full model", must_pass=True)
    state.raise_bound(report.bound)
