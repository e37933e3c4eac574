"""Stage: the bound over every design the check accepts (pieces in any order).

The models of the search lay the pieces of a section in descending internal diameter
and take the velocity head at a section's start from its smallest pipe (see
:mod:`optimiser.milp.formulation`): their bounds hold for the designs they admit, not
for every design the check accepts. The check also accepts a size increase inside a
section (a larger pipe after a smaller one, which saves exit loss or velocity head at
the section's end) and a short piece of a larger pipe after a fitting (which lowers the
fitting's loss).

This stage solves the relaxation of all of them: the reach model of the check points in
the search (fewer rows: a relaxation), with the first and the last piece of every
section or reach picked freely among the options used, the start of a section taking
its first piece's velocity head, and no row inside a section (``build(any_order=True)``).
Every accepted design maps to it at the same cost: its lengths per option, its actual
first and last pieces, and every row of the model is a pressure the check judges at a
node, or the outlet head, with the same energy. So its bound is a lower bound for every
accepted design, and the run reports the smaller of it and the search's bound. Its
design, laid as its picks say (first, the others by descending internal diameter, last),
is offered to the check like any other.
"""

from __future__ import annotations

import math
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
from optimiser.milp.solvers import relative_gap

SHARE = 0.5
"""Share of the time left this stage may take."""
LEAST_PIECE_M = 1.0
"""Shortest end piece the any-order design model lays [m] (or the minimum piece
length, if longer)."""


def run_any_order(state: SearchState) -> None:
    """Solve the any-order relaxation; set ``state.any_order_bound`` and offer its design
    (the bound stays None if the model does not solve: the run then cannot claim more
    than the search's own bound, see :meth:`SearchState.valid_bound`)."""
    assert state.active is not None
    active = state.active
    kind = StageKind.ANY_ORDER
    for number in range(1, MAX_ROW_ROUNDS + 1):
        if state.clock.nearly_out():
            break
        begun = time.perf_counter()
        reaches = merge(with_active(state.data, active))
        form = build(reaches.data, with_rules=state.with_rules, any_order=True)
        warm = reach_use(state.data, reaches, state.best.design) if state.best else None
        report = state.run_solver(kind, f"{kind.label}, round {number}: "
                                  f"{reaches.n_reaches} reaches, {active.count()} pressure "
                                  "points", form, warm, SHARE, time.perf_counter() - begun)
        if report.bound is not None:  # every round is a relaxation: keep the largest
            state.any_order_bound = max(state.any_order_bound or -math.inf, report.bound)
        if not report.has_solution or state.best is None:
            break
        result = state.consider(design_from_reaches(state.data, reaches, form), kind.label,
                                must_pass=False)
        gap = relative_gap(state.best.cost, state.any_order_bound)
        grown = active.union(points_near(state.data, result))
        if (gap is not None and gap <= state.settings.gap_target) \
                or grown.count() == active.count():
            break
        active = grown
    if state.any_order_bound is not None:
        _designs_in_any_order(state, active)
        return
    # No bound from the integer programme (time): its linear relaxation, a relaxation
    # still, solves in a fraction of the time.
    reaches = merge(with_active(state.data, active))
    name = f"{kind.label}: {reaches.n_reaches} reaches"
    begun = time.perf_counter()
    form = build(reaches.data, with_rules=state.with_rules, relaxed=True, any_order=True)
    report = state.run_solver(kind, f"{name}, binaries relaxed", form, None, 1.0,
                              time.perf_counter() - begun)
    if report.bound is not None:
        state.any_order_bound = report.bound


def _designs_in_any_order(state: SearchState, active) -> None:
    """Not proven: the any-order model with every picked end piece of a length (the
    relaxation lets it shrink to nothing, the short piece after a fitting or before
    the outlet), for designs the section order excludes, e.g. a size increase before
    the outlet that saves exit loss. Rounds add the check points its designs miss."""
    kind = StageKind.ANY_ORDER
    least = max(state.study.rules.min_piece_length_m, LEAST_PIECE_M)
    for number in range(1, MAX_ROW_ROUNDS + 1):
        gap = relative_gap(state.best.cost, state.valid_bound()) if state.best else None
        if state.clock.nearly_out() or (gap is not None
                                        and gap <= state.settings.gap_target):
            return
        begun = time.perf_counter()
        reaches = merge(with_active(state.data, active))
        form = build(reaches.data, with_rules=state.with_rules, any_order=True,
                     least_piece_m=least)
        warm = reach_use(state.data, reaches, state.best.design) if state.best else None
        report = state.run_solver(kind, f"{kind.label}, designs, round {number}", form,
                                  warm, SHARE, time.perf_counter() - begun)
        if not report.has_solution:
            return
        result = state.consider(design_from_reaches(state.data, reaches, form), kind.label,
                                must_pass=False)
        grown = active.union(points_near(state.data, result))
        if grown.count() == active.count():
            return
        active = grown
