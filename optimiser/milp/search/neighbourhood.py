"""Stage planner: the large-neighbourhood search around the best design (rules on).

After the reach model, the priced designs or a previous neighbourhood, the driver asks
:meth:`Neighbourhood.next_steps` for a small model around the best design so far,
widened in size (radius 1, 2, 3 places in each section's size order) while the best
stops improving, 25 models at most. Each is a restriction of the full model, so its
designs are valid incumbents.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import neighbour_mask
from optimiser.milp.search.plan_step import Step
from optimiser.milp.search.state import SearchState

STARTS_SEARCH = frozenset({StageKind.REACH_MODEL, StageKind.PRICED_NEARBY,
                           StageKind.NEIGHBOURHOOD})
"""Kinds of step after which the search around the best design goes on."""
MAX_RADIUS = 3
NEIGHBOURHOODS = 25


@dataclass
class Neighbourhood:
    """Where the search around the best design stands."""

    left: int
    radius: int = 1
    cost: float = math.inf

    @classmethod
    def for_state(cls, state: SearchState) -> Neighbourhood:
        """No search without rules (the full model is small enough then)."""
        return cls(left=NEIGHBOURHOODS if state.with_rules else 0)

    def next_steps(self, state: SearchState, after: StageKind) -> list[Step]:
        """The next neighbourhood to solve after a step of kind ``after``, if any."""
        best = state.best
        if after not in STARTS_SEARCH or best is None or self.left <= 0:
            return []
        if best.cost >= self.cost - 1e-9 * abs(best.cost):
            self.radius += 1  # no gain: look further in size
        self.cost = best.cost
        if self.radius > MAX_RADIUS:
            return []
        self.left -= 1
        mask = neighbour_mask(state.data, best.design, state.reach_m, self.radius)
        return [Step(StageKind.NEIGHBOURHOOD, mask, 0.15, f" (size radius {self.radius})")]
