"""Stage: designs that obey the rules, from the LP's design (rules on only).

Takes the search state after the LP relaxation; offers the greedy rules repair of the
LP design (:func:`optimiser.milp.repair.repair`) and the covering design (a dynamic
programme over options no worse hydraulically than the LP's mix,
:func:`optimiser.milp.repair.covering_choice`) as designs. Gives the restricted models
to try around them: the options of the repaired design nearby or, when there is none,
the sizes near the covering design.
"""

from __future__ import annotations

from optimiser.milp.extract import design_from_choice, design_from_fractions
from optimiser.milp.repair import covering_choice, design_mask, repair
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import neighbour_mask
from optimiser.milp.search.plan_step import Step
from optimiser.milp.search.state import SearchState

COVERING = "rules-abiding design covering the LP's head losses"
"""Where the covering design came from (in messages)."""


def run_repair_starts(state: SearchState) -> list[Step]:
    """Offer the repaired and the covering design; return restricted models around them."""
    assert state.lp is not None
    data = state.data
    steps: list[Step] = []
    repaired = repair(data, design_from_fractions(data, state.lp.fractions))
    if repaired is not None:
        state.consider(repaired, "rules repair", must_pass=False)
        steps.append(Step(StageKind.REPAIRED_NEARBY,
                          design_mask(data, repaired, state.reach_m), 0.3))
    covering = covering_choice(data, state.lp.fractions)
    if covering is not None:
        design = design_from_choice(data, covering)
        state.consider(design, COVERING, must_pass=False)
        if repaired is None:
            steps.append(Step(StageKind.COVERING_NEARBY,
                              neighbour_mask(data, design, state.reach_m, 1), 0.3))
    return steps
