"""Stages of the pumped scheme's plan (:mod:`optimiser.milp.tree.pumped`).

Every model here is the tree's model with the station (:func:`build_tree` with
``pumped``), on the fine sections of every line. Its objective is the life-cycle cost,
so every design is judged and priced by :func:`optimiser.milp.pumps.designs.consider`
(the check at the least station heads). Only the LP and the full model raise the bound
(relaxations of the model); a model restricted to the options near a design gives
designs only.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from optimiser.milp.extract import design_from_choice
from optimiser.milp.pumps.designs import consider, with_stretch_raised
from optimiser.milp.repair import covering_choice, design_mask
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import widened, window_mask
from optimiser.milp.search.state import SearchState
from optimiser.milp.solvers import SolveReport
from optimiser.milp.tree.line_repair import repaired_lines
from optimiser.milp.tree.line_study import line_design, on_line
from optimiser.milp.tree.model import TreeFormulation, build_tree
from optimiser.milp.tree.problem import TreeProblem, design_from_tree
from optimiser.model import Design

__all__ = ["PumpedModel", "first_designs", "near_design", "near_lp", "run_pumped_model"]


NEARBY_GAP = 1e-4
"""Relative gap a model restricted to some options is solved to (designs only)."""


@dataclass
class PumpedModel:
    """A solved model of the pumped tree: its form, report and fine fractions."""

    form: TreeFormulation
    report: SolveReport
    fractions: list[np.ndarray]


def run_pumped_model(state: SearchState, problem: TreeProblem, kind: StageKind,
                     share: float, *, relaxed: bool = False,
                     allowed: list[np.ndarray] | None = None) -> PumpedModel:
    """Build and solve a model of the pumped tree (``relaxed``: the LP, rules relaxed;
    ``allowed``: options kept per line, None: all); its design judged. The caller
    decides what its bound is worth. No warm start: a start of the pipes alone leaves
    HiGHS to complete the station heads and class indicators, which on the branched
    demo with a pump took 25 s past a 15 s limit and found nothing."""
    begun = time.perf_counter()
    form = build_tree(problem.lines, problem.datas, allowed=allowed,
                      with_rules=state.with_rules and not relaxed, relaxed=relaxed,
                      pumped=problem.study)
    kept = "" if allowed is None else f", {_pairs(problem, allowed)} pairs kept"
    name = (f"{kind.label}, pumped tree: {len(problem.lines)} lines, "
            f"{sum(d.n_sections for d in problem.datas)} sections{kept}")
    # A restricted model gives designs only: no need to prove it finer than 1e-4.
    gap = None if allowed is None else max(state.settings.mip_gap, NEARBY_GAP)
    report = state.run_solver(kind, name, form, None, share, time.perf_counter() - begun,
                              stage_gap=gap)
    fractions: list[np.ndarray] = []
    if report.has_solution:
        consider(state, design_from_tree(problem, form), kind.label, must_pass=False)
        fractions = [part.fractions() for part in form.parts]
    return PumpedModel(form, report, fractions)


def _pairs(problem: TreeProblem, allowed: list[np.ndarray]) -> int:
    return int(sum((a & d.admissible).sum()
                   for a, d in zip(allowed, problem.datas, strict=True)))


def first_designs(state: SearchState, problem: TreeProblem, lp: PumpedModel) -> None:
    """The LP's design with every line repaired to the rules, and every line's covering
    design (in each section an option at least as good hydraulically as the LP's mix),
    judged at their least station heads (heuristics: designs only)."""
    if not state.with_rules or not lp.fractions:
        return
    design = _design_of(problem, lp)
    repaired = repaired_lines(problem, design)
    _with_classes_raised(state, repaired, "LP design repaired to the rules")
    covering = []
    for line, data, fractions in zip(problem.lines, problem.datas, lp.fractions, strict=True):
        choice = covering_choice(data, fractions)
        own = design_from_choice(data, choice) if choice is not None \
            else line_design(repaired, line.name)
        covering.extend(on_line(own, line.name).pieces)
    _with_classes_raised(state, Design(tuple(covering)), "covering design, line by line")


def _with_classes_raised(state: SearchState, design: Design, source: str) -> None:
    """Judge ``design``; if it fails, with the stretches whose class the pressure breaks
    laid in the next class (:func:`optimiser.milp.pumps.designs.with_stretch_raised`)."""
    if consider(state, design, source, must_pass=False).ok:
        return
    raised = with_stretch_raised(state.study, design)
    if raised is not None:
        consider(state, raised, f"{source}, classes raised", must_pass=False)


def _design_of(problem: TreeProblem, model: PumpedModel) -> Design:
    model.form.share_values()
    return design_from_tree(problem, model.form)


def near_lp(problem: TreeProblem, lp: PumpedModel) -> list[np.ndarray]:
    """Options the LP uses near each section of every line, and their neighbours in the
    size order."""
    return [widened(data, window_mask(data, fractions > 1e-6, _width_m(data)), 1)
            for data, fractions in zip(problem.datas, lp.fractions, strict=True)]


def near_design(problem: TreeProblem, design: Design, radius: int = 0) -> list[np.ndarray]:
    """Options ``design`` uses near each section of every line, and those within
    ``radius`` places of them in the size order."""
    return [widened(data, design_mask(data, line_design(design, line.name), _width_m(data)),
                    radius) for line, data in zip(problem.lines, problem.datas, strict=True)]


def _width_m(data) -> float:
    """Chainage around a piece whose option a restricted model keeps (as the gravity
    tree's restricted models)."""
    return max(2.0 * data.study.rules.min_piece_length_m,
               3.0 * float(data.chainage_length_m.mean()))
