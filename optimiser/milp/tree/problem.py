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
from optimiser.milp.reaches import (
    ActivePoints,
    Reaches,
    design_from_reaches,
    merge,
    reach_use,
    refine,
    with_active,
)
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


def tree_reaches(problem: TreeProblem, actives: list[ActivePoints] | None) -> list[Reaches]:
    """Each line's quiet sections merged (:func:`optimiser.milp.reaches.merge`), with
    only the check points of ``actives`` in the model (None: every point not screened
    out, which makes the merge exact). Junction nodes always stay nodes: the flow
    changes there in every scenario where the branch draws water."""
    if actives is None:
        return [merge(data) for data in problem.datas]
    return [merge(with_active(data, active))
            for data, active in zip(problem.datas, actives, strict=True)]


def design_from_tree_reaches(problem: TreeProblem, reaches: list[Reaches],
                             form: TreeFormulation) -> Design:
    """The design of a solved model of merged reaches: each reach's options in the order
    the solution lays them (:func:`optimiser.milp.reaches.design_from_reaches`)."""
    form.share_values()
    pieces = []
    for line, data, own, part in zip(problem.lines, problem.datas, reaches, form.parts,
                                     strict=True):
        pieces.extend(on_line(design_from_reaches(data, own, part), line.name).pieces)
    return Design(tuple(pieces))


def refined_design(problem: TreeProblem, reaches: list[Reaches],
                   form: TreeFormulation) -> tuple[Design, list[np.ndarray]]:
    """The design of a solved LP on merged reaches, each reach's options laid in the
    section order over its fine sections (:func:`optimiser.milp.reaches.refine`), and
    the fine fractions of every line."""
    form.share_values()
    pieces = []
    fractions = []
    for line, data, own, part in zip(problem.lines, problem.datas, reaches, form.parts,
                                     strict=True):
        fine = refine(data, own, part.fractions())
        fractions.append(fine)
        pieces.extend(on_line(design_from_fractions(data, fine), line.name).pieces)
    return Design(tuple(pieces)), fractions


def reach_warm_start(problem: TreeProblem, reaches: list[Reaches] | None,
                     form: TreeFormulation, design: Design) -> WarmStart:
    """A warm start of ``form`` (built on ``reaches``, or on the fine sections when
    None) from ``design``, by global section (reach) index."""
    warm: WarmStart = {}
    for index, (line, data) in enumerate(zip(problem.lines, problem.datas, strict=True)):
        own = line_design(design, line.name)
        values = section_use(data, own) if reaches is None \
            else reach_use(data, reaches[index], own)
        offset = form.offsets[index]
        for (kind, s, j), value in values.items():
            warm[kind, offset + s, j] = value
    return warm
