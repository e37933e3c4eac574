"""The problem data of a scheme, line by line, and designs to and from the tree's model.

Every line (the trunk, then the branches, parents before children) is split at its
class limits (:func:`optimiser.milp.class_limits.split_line_at_class_limits`) and gets
its own :class:`~optimiser.milp.data.ProblemData` (:func:`optimiser.milp.data.prepare`
with the line: its own route, points and delivery, its flows from the whole scheme).
Designs are pieces by chainage on each line, so a design of the split scheme is a
design of the scheme as given.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from optimiser.milp.built_model import WarmStart
from optimiser.milp.class_limits import split_line_at_class_limits
from optimiser.milp.data import ProblemData, prepare
from optimiser.milp.extract import design_from_fractions, section_use
from optimiser.milp.tree.line_study import line_design, on_line
from optimiser.milp.tree.model import TreeFormulation
from optimiser.model import Design, Study
from optimiser.model.lines import Line, study_lines


@dataclass
class TreeProblem:
    """A scheme as the optimiser sees it: the study as given (the check judges it), its
    lines on routes split at the class limits, and each line's data (replaced, never
    changed, by presolve)."""

    study: Study
    lines: list[Line]
    datas: list[ProblemData]

    @property
    def names(self) -> list[str]:
        return [line.name for line in self.lines]

    @property
    def offsets(self) -> list[int]:
        """Global index of each line's first section."""
        sizes = [data.n_sections for data in self.datas]
        return np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(int).tolist()

    def parent_index(self, index: int) -> int | None:
        parent = self.lines[index].parent
        return None if parent is None else self.names.index(parent)


def split_scheme(study: Study) -> Study:
    """``study`` with every line's route split at the class limits (junctions, offtakes
    and fittings keep their chainages, so every child still meets a node)."""
    lines = study_lines(study)
    trunk = split_line_at_class_limits(study, lines[0])
    branches = tuple(dataclasses.replace(branch, route=split_line_at_class_limits(study, line))
                     for branch, line in zip(study.branches, lines[1:], strict=True))
    return dataclasses.replace(study, route=trunk, branches=branches)


def prepare_tree(study: Study) -> TreeProblem:
    """The per-line data of ``study`` (a scheme)."""
    split = split_scheme(study)
    lines = list(study_lines(split))
    return TreeProblem(study, lines, [prepare(split, line) for line in lines])


def design_from_tree(problem: TreeProblem, form: TreeFormulation) -> Design:
    """The design of a solved tree model: each line's fractions laid in section order."""
    form.share_values()
    pieces = []
    for line, data, part in zip(problem.lines, problem.datas, form.parts, strict=True):
        pieces.extend(on_line(design_from_fractions(data, part.fractions()), line.name).pieces)
    return Design(tuple(pieces))


def tree_warm_start(problem: TreeProblem, design: Design) -> WarmStart:
    """Values of ``x`` and ``y`` of ``design`` by (kind, global section, option)."""
    warm: WarmStart = {}
    for line, data, offset in zip(problem.lines, problem.datas, problem.offsets, strict=True):
        for (kind, s, j), value in section_use(data, line_design(design, line.name)).items():
            warm[kind, offset + s, j] = value
    return warm
