"""Stage: the first designs, without an integer programme.

Takes the search state after the LP relaxation; offers the LP's solution as a design
(optimal if it passes the check and the rules and costs within the gap of the bound)
and the cheapest uniform design (reported anyway; a design of every model with the
rules, so a first incumbent when the LP's design breaks them). Gives the uniform design
(None if no single option serves the route).
"""

from __future__ import annotations

from optimiser.milp.extract import design_from_fractions
from optimiser.milp.search.state import SearchState
from optimiser.milp.uniform import UniformDesign, cheapest_uniform
from optimiser.model import Design, Piece


def run_first_designs(state: SearchState) -> UniformDesign | None:
    """Offer the LP's design and the cheapest uniform design; return the latter."""
    assert state.lp is not None
    state.consider(design_from_fractions(state.data, state.lp.fractions), "LP relaxation",
                   must_pass=False)
    uniform = cheapest_uniform(state.data, state.study)
    if uniform is not None:
        end = state.study.route.total_chainage_m
        state.consider(Design((Piece(0.0, end, uniform.option),)), "cheapest uniform design",
                       must_pass=False)
    return uniform
