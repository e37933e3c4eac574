"""Slow-closure surge on a branch: the optimiser's single-route view of a branch uses the
same pipe length as the check, from the source through the junctions to the branch's end.

Michaud's slow-closure rise 2 L V / (g T) takes L from the free surface upstream
(Wylie, E.B. & Streeter, V.L. (1993), Fluid Transients in Systems, ch. 1, from memory);
on an invented two-branch scheme the length is summed by hand from the route lengths.
"""

from __future__ import annotations

import dataclasses

from scheme_api_builders import two_branch_scheme

from optimiser.analysis.surge import reflection_length_m
from optimiser.milp.tree.line_study import line_study
from optimiser.model.lines import line_of


def test_branch_view_keeps_the_path_from_the_source(tmp_path):
    study, _ = two_branch_scheme(tmp_path)
    for branch in study.branches:
        line = line_of(study, branch.name)
        parent = line_of(study, branch.parent).route
        # by hand: the parent's pipe above the junction (a node of the parent), then the
        # branch's own pipe
        above = float(parent.length_m[parent.chainage_m[1:] <= branch.at_chainage_m + 1e-6]
                      .sum())
        expected = above + float(branch.route.length_m.sum())
        assert reflection_length_m(study, line) == expected
        view = line_study(study, line)
        assert reflection_length_m(view) == expected
    trunk_view = line_study(study, line_of(study, "main"))
    assert reflection_length_m(trunk_view) == reflection_length_m(study)
    assert dataclasses.replace(study).upstream_pipe_length_m == 0.0
