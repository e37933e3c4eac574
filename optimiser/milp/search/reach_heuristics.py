"""Stage: designs from small reach models, before the whole reach model with the rules.

Takes the search state, the reaches of the first round and the options reduced-cost
fixing leaves them; solves the reach model's LP relaxation (a relaxation of the full
model: its value raises the bound), then the reach model restricted to the options
that relaxation or the best design uses and the sizes next to them
(relaxation-induced neighbourhood search, Danna, E., Rothberg, E. & Le Pape, C. (2005),
Exploring relaxation induced neighborhoods to improve MIP solutions, Math. Program.
102(1)), once more around a better design, then with the sizes within two places. Each
design is polished (:mod:`optimiser.milp.search.polish`). Run when the best design is
far above the bound: the whole reach model then spends its root node on cuts before it
finds designs.
"""

from __future__ import annotations

import time

import numpy as np

from optimiser.milp.formulation import build
from optimiser.milp.reaches import Reaches, design_from_reaches, reach_use
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import widened
from optimiser.milp.search.polish import polish_design
from optimiser.milp.search.state import SearchState


def run_reach_heuristics(state: SearchState, reaches: Reaches,
                         allowed: np.ndarray | None) -> None:
    """Raise the bound by the reach model's LP and offer designs of small reach models."""
    chosen = _relaxed_choice(state, reaches, allowed)
    if chosen is None or state.proven():
        return
    tried: list[np.ndarray] = []
    for radius in (1, 1, 2):
        if state.proven() or state.clock.nearly_out():
            return
        near = chosen.copy()
        if state.best is not None:
            for (kind, r, j), value in reach_use(state.data, reaches,
                                                 state.best.design).items():
                if kind == "x" and value > 1e-9:
                    near[r, j] = True
        mask = widened(reaches.data, near, radius)
        if any(np.array_equal(mask, old) for old in tried):
            continue  # the same model again: nothing new to find
        tried.append(mask)
        _small_model(state, reaches, mask, radius)


def _relaxed_choice(state: SearchState, reaches: Reaches,
                    allowed: np.ndarray | None) -> np.ndarray | None:
    """Solve the reach model's LP relaxation, take its value as a bound; return the
    (reach, option) pairs it uses, None if it has no solution."""
    kind = StageKind.REACH_RELAXED
    begun = time.perf_counter()
    relaxed = build(reaches.data, with_rules=True, allowed=allowed, relaxed=True)
    report = state.run_solver(kind, kind.label, relaxed, None, 1.0,
                              time.perf_counter() - begun)
    if not report.has_solution or relaxed.values is None:
        return None
    state.raise_bound(report.objective)
    chosen = np.zeros_like(reaches.data.admissible)
    for (r, j), column in relaxed.y.items():
        chosen[r, j] = relaxed.values[column] > 1e-6
    return chosen


def _small_model(state: SearchState, reaches: Reaches, mask: np.ndarray,
                 radius: int) -> None:
    """Solve the reach model on ``mask`` and polish its design."""
    kind = StageKind.REACH_NEARBY
    begun = time.perf_counter()
    small = build(reaches.data, with_rules=True, allowed=mask)
    warm = reach_use(state.data, reaches, state.best.design) if state.best else None
    report = state.run_solver(kind, f"{kind.label} (size radius {radius})", small, warm,
                              0.15, time.perf_counter() - begun)
    if report.has_solution:
        polish_design(state, design_from_reaches(state.data, reaches, small), kind.label)
