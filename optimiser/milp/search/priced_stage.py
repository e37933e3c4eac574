"""Stage: designs that obey the rules by construction, at pressure prices.

Takes the search state (after the reach model has failed to prove); runs a dynamic
programme over whole sections at pressure prices, moved by subgradient steps from the
LP's row duals (:mod:`optimiser.milp.priced`; CBC gives no duals, so HiGHS solves the
same LP once more for them), with a share of the time left, and offers its cheapest
designs. Gives the options its rounds laid (for a restricted model around them), or
None if it could not run. It proves nothing.
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.extract import design_from_choice
from optimiser.milp.outcome import Stage
from optimiser.milp.priced import priced_search, prices_from_lp
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import solve
from optimiser.model.status import Status

PRICED_SHARE = 0.1
"""Share of the time left that the priced dynamic programme may take."""
PRICED_OFFERS = 3
"""Cheapest designs of the priced search that go through the check."""


def run_priced(state: SearchState) -> np.ndarray | None:
    """Offer the priced search's designs; return the options it laid, None if it could
    not run."""
    kind = StageKind.PRICED
    lp = state.lp
    assert lp is not None
    begun = time.perf_counter()
    deadline = state.clock.deadline
    if lp.form.row_duals is None:
        solve(lp.form, "highs", time_limit_s=max(deadline - begun, 0.5),
              mip_gap=state.settings.mip_gap)
    prices = prices_from_lp(state.data, lp.first, lp.form)
    if prices is None:
        return None
    budget = min(deadline, begun + PRICED_SHARE * (deadline - begun))
    found, record = priced_search(state.data, prices, deadline=budget,
                                  upper_bound=state.best.cost if state.best else None)
    for _, choice in found[:PRICED_OFFERS]:
        state.consider(design_from_choice(state.data, choice), kind.label, must_pass=False)
    state.stages.append(Stage(
        kind, kind.label, Status.FEASIBLE if found else Status.NO_SOLUTION,
        found[0][0] if found else None, None, time.perf_counter() - begun, 0, 0, 0,
        f"{record.rounds} price rounds, {record.offered} designs clear every node"))
    return record.used
