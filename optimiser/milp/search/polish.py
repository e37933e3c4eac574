"""Stage: a design of a relaxation made a design of the full model.

Takes the search state and a design (of the reach model with the rules, which relaxes
the rules and the pressures between its check points); checks it and, if it misses a
pressure or a rule, re-optimises the full model restricted to the options it uses
nearby and offers that design (which must pass).
"""

from __future__ import annotations

import time

from optimiser.milp.extract import design_from_fractions, rule_problems, section_use
from optimiser.milp.formulation import build
from optimiser.milp.repair import design_mask
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import RESTRICTED_GAP, SearchState
from optimiser.model import Design


def polish_design(state: SearchState, design: Design, source: str) -> None:
    """Offer ``design``; if it fails, offer the best design near it instead."""
    result = state.consider(design, source, must_pass=False)
    if result.ok and not rule_problems(state.study, design):
        return
    begun = time.perf_counter()
    data = state.data
    form = build(data, allowed=design_mask(data, design, state.reach_m), with_rules=True)
    kind = StageKind.POLISH
    report = state.run_solver(kind, kind.label, form,
                              section_use(data, state.best.design) if state.best else None,
                              0.3, time.perf_counter() - begun,
                              min(state.settings.mip_gap, RESTRICTED_GAP))
    if report.has_solution:
        state.consider(design_from_fractions(data, form.fractions()), kind.label,
                       must_pass=True)
