"""A design of the tree with every line's piece structure repaired to the rules.

The reach model relaxes the rules inside a merged reach (its pieces may be laid in any
order and an end piece has no length of its own there), so its design, laid out on the
fine sections, can pass the check yet leave a line with a piece shorter than the
minimum or a change too many. :func:`repaired_lines` hands each line to the greedy
repair of a single route (:func:`optimiser.milp.repair.repair`: a short or surplus
piece takes its neighbour's option, the larger bore first, so the head the design met
stays met); lines already within the rules come back merged and otherwise unchanged.
Where the greedy repair gets stuck (a neighbour's option not admissible over the short
piece), the line takes its covering design instead
(:func:`optimiser.milp.repair.covering_choice`: in every section an option at least as
good hydraulically as what the design laid there, the cheapest rule-abiding sequence of
them), which keeps every node's energy, its junctions' included. A heuristic: the check
judges the result like any other design.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.extract import design_from_choice, section_use
from optimiser.milp.repair import covering_choice, repair
from optimiser.milp.tree.line_study import line_design, on_line
from optimiser.milp.tree.problem import TreeProblem
from optimiser.model import Design


def repaired_lines(problem: TreeProblem, design: Design) -> Design:
    """``design`` with each line repaired to the rules (a line neither way can repair
    is kept as it is)."""
    pieces = []
    for line, data in zip(problem.lines, problem.datas, strict=True):
        own = line_design(design, line.name)
        # each useful step joins two pieces: more steps only cycle
        fixed = repair(data, own, max_steps=2 * len(own.pieces) + 2)
        if fixed is None:
            fixed = covered(data, own)
        pieces.extend(on_line(fixed if fixed is not None else own, line.name).pieces)
    return Design(tuple(pieces))


def covered(data: ProblemData, own: Design) -> Design | None:
    """The covering design of one line's design ``own`` (None if the rules leave none)."""
    fractions = np.zeros((data.n_sections, data.n_options))
    for (kind, s, j), value in section_use(data, own).items():
        if kind == "x":
            fractions[s, j] += value
    choice = covering_choice(data, fractions)
    return None if choice is None else design_from_choice(data, choice)
