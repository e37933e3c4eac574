"""Stage: designs with the pieces of a section in any order.

The models of the search lay the pieces of a section in descending internal diameter
(see :mod:`optimiser.milp.formulation`). The check also accepts a size increase inside
a section: a larger pipe before the outlet saves exit loss, a larger pipe before a
high point keeps its pressure, a short larger piece after a fitting lowers the fitting's
loss. This stage looks for such designs with the any-order model
(``build(any_order=True, least_piece_m=...)``): on the reach model of the check points
in the search, the first and the last piece of every section or reach are picked
freely among the options used, each at least ``LEAST_PIECE_M`` long (or the minimum
piece length), the start of a section takes its first piece's velocity head, and the
pressure where each option first starts and last ends is held in any arrangement. Its
designs, laid as its picks say, go to the check like any other; rounds add the check
points its designs miss. It supplies designs only, never a bound: with no rows inside a
section it is not a model of designs, and with its end pieces of a least length it is
not a relaxation of every design the check accepts either.
"""

from __future__ import annotations

import time

from optimiser.milp.formulation import build
from optimiser.milp.reaches import (
    MAX_ROW_ROUNDS,
    design_from_reaches,
    merge,
    points_near,
    reach_use,
    with_active,
)
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState

SHARE = 0.3
"""Share of the time left each round may take."""
LEAST_PIECE_M = 12.0
"""Shortest end piece the any-order model lays [m] (or the minimum piece length, if
longer): two standard 6 m pipe lengths. Shorter, the model lays slivers of a larger pipe
after the entrance or a fitting only to shave its point loss, which the check accepts
but nobody would build (common practice, no source)."""
LONG_WITH_RULES = 500
"""With the rules, routes of more survey sections than this skip the stage: there its
integer programme costs as much as the search (the 2,000-section benchmark: 7 s of
15), and on random routes with the rules the section order lost nothing."""
ROUNDS = 4
"""Rounds of row generation at most (each adds the points its design missed)."""


def run_any_order(state: SearchState) -> None:
    """Offer the designs of the any-order model, round by round."""
    assert state.active is not None and state.best is not None
    if state.with_rules and state.study.route.n_sections > LONG_WITH_RULES:
        return
    kind = StageKind.ANY_ORDER
    least = max(state.study.rules.min_piece_length_m, LEAST_PIECE_M)
    active = state.active
    for number in range(1, min(ROUNDS, MAX_ROW_ROUNDS) + 1):
        if state.clock.nearly_out():
            return
        begun = time.perf_counter()
        reaches = merge(with_active(state.data, active))
        form = build(reaches.data, with_rules=state.with_rules, any_order=True,
                     least_piece_m=least)
        report = state.run_solver(
            kind, f"{kind.label}, round {number}: {reaches.n_reaches} reaches, "
            f"{active.count()} pressure points", form,
            reach_use(state.data, reaches, state.best.design), SHARE,
            time.perf_counter() - begun)
        if not report.has_solution or report.objective is None \
                or report.objective >= state.best.cost * (1 - 1e-9):
            return  # nothing cheaper than the best design in this model
        result = state.consider(design_from_reaches(state.data, reaches, form), kind.label,
                                must_pass=False)
        grown = active.union(points_near(state.data, result))
        if result.ok or grown.count() == active.count():
            return
        active = grown
