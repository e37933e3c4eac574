"""Stage: the pumped main on merged reaches, refined where classes under pumping bind.

Each round merges the quiet sections into reaches (:mod:`optimiser.milp.reaches`),
builds the model with the station heads, writes the classes under pumping relaxed on
every reach of several sections (:mod:`optimiser.milp.pumps.class_rows`) and solves it.
Every round is a relaxation of the full model (pressure rows only at the points designs
came close to, relaxed class rows, with the rules the free order of a reach), so its
bound is valid. Its design is judged by the check (with the stretches whose class the
pumping pressure breaks raised, :func:`~optimiser.milp.pumps.designs.with_stretch_raised`).
The next round splits every reach whose solution used a class its start's pressure
breaks (:func:`~optimiser.milp.pumps.class_rows.loose_reaches`) at a few nodes, and adds
the pressure points the design came close to; the rounds end when neither grows, the
design is proven or the time is out.
"""

from __future__ import annotations

import dataclasses
import time
from dataclasses import dataclass

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.formulation import Formulation, build
from optimiser.milp.pumps.class_rows import add_class_rows, loose_reaches, reach_levels
from optimiser.milp.pumps.designs import consider, with_stretch_raised
from optimiser.milp.reaches import (
    ActivePoints,
    Reaches,
    design_from_reaches,
    merge,
    points_near,
    reach_use,
    with_active,
)
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.model.status import Status

PARTS = 8
"""A loose reach is split into at most this many parts a round."""
MAX_ROUNDS = 12


@dataclass
class Refinement:
    """The pressure points and the split nodes of the rounds so far."""

    active: ActivePoints
    splits: np.ndarray  # (n+1,) nodes where reaches must break

    @classmethod
    def start(cls, data: ProblemData) -> Refinement:
        return cls(ActivePoints.none(data), np.zeros(data.n_sections + 1, dtype=bool))

    def reaches(self, data: ProblemData) -> Reaches:
        """The reaches of ``data`` with these points and splits (a split node gets its
        pressure rows, which every design meets anyway)."""
        opened = dataclasses.replace(data, screened_up=data.screened_up & ~self.splits,
                                     screened_down=data.screened_down & ~self.splits)
        points = ActivePoints(self.active.up | self.splits, self.active.down | self.splits,
                              self.active.interior)
        return merge(with_active(opened, points))


def run_reach_rounds(state: SearchState, refinement: Refinement, *, lp: bool,
                     share: float, rounds: int = MAX_ROUNDS) -> SolveReport | None:
    """Up to ``rounds`` rounds of the reach model (the LP relaxation with ``lp``, else the
    mixed-integer programme with the rules if the study has any); returns the last
    round's report."""
    report = None
    kind = StageKind.LP_RELAXATION if lp else StageKind.REACH_MODEL
    for number in range(1, rounds + 1):
        if state.clock.nearly_out() or (not lp and state.proven()):
            break
        begun = time.perf_counter()
        reaches = refinement.reaches(state.data)
        form = build(reaches.data, with_rules=state.with_rules and not lp, relaxed=lp)
        levels = reach_levels(state.data, reaches.first, reaches.last)
        add_class_rows(form, levels)
        warm = None if lp or state.best is None else \
            reach_use(state.data, reaches, state.best.design)
        name = (f"{kind.label} (pipes and station heads), round {number}: "
                f"{reaches.n_reaches} reaches")
        report = state.run_solver(kind, name, form, warm, share,
                                  time.perf_counter() - begun)
        if report.status == Status.INFEASIBLE or not report.has_solution:
            break
        state.raise_bound(report.bound)
        if lp:
            state.lp_bound = max(state.lp_bound or -np.inf, report.bound or -np.inf)
        if not _grow(state, refinement, reaches, form, levels):
            break
    return report


def _grow(state: SearchState, refinement: Refinement, reaches: Reaches,
          form: Formulation, levels) -> bool:
    """Offer the round's design; split its loose reaches and add the pressure points
    it came close to. False when nothing was added."""
    design = design_from_reaches(state.data, reaches, form)
    result = consider(state, design, "reach model", must_pass=False)
    if not result.ok:
        raised = with_stretch_raised(state.study, design)
        if raised is not None:
            consider(state, raised, "reach model, classes raised", must_pass=False)
    grown = False
    for r in np.flatnonzero(loose_reaches(form, levels)).tolist():
        a, b = int(reaches.first[r]), int(reaches.last[r])
        nodes = np.unique(np.linspace(a, b + 1, PARTS + 1).round().astype(int))[1:-1]
        grown |= bool((~refinement.splits[nodes]).any())
        refinement.splits[nodes] = True
    wanted = refinement.active.union(points_near(state.data, result))
    if wanted.count() > refinement.active.count():
        refinement.active = wanted
        grown = True
    return grown
