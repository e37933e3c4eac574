"""A scheme's models keep only a dominating scenario (``milp/tree/scenarios``).

Check values: the reference is the full MILP of the whole tree with EVERY scenario
(``build_tree`` on the fine sections, with the rules, solved by HiGHS to a gap of 1e-9)
on small seeded schemes (``random_trees.py``, invented); the design the reduced models
give is judged by the independent check (``optimiser.analysis.check_design``) in every
scenario; and the fact the reduction rests on, that more flow through the same pipe
loses more head (Darcy-Weisbach with Colebrook-White: the friction gradient grows with
the flow; a rougher pipe loses more), is common practice, no source.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from independent_tree import tree_lower_bound
from random_trees import random_tree

from optimiser.analysis import check_design
from optimiser.milp import optimise_design
from optimiser.milp.solvers import solve
from optimiser.milp.tree.model import build_tree
from optimiser.milp.tree.problem import design_from_tree, prepare_tree
from optimiser.milp.tree.scenarios import dominant_scenario, on_scenario
from optimiser.model.status import Status

RULES = "[rules]\nmax_changes = 2\nmin_piece_length_m = 60.0\n[costs]\nchange_cost = 150.0"


def _scheme(folder, seed):
    return random_tree(folder, seed, lines=3, sections=(3, 6), rules=RULES, exact=False,
                       scenarios=3, ridge=0.2, spacing_m=(60.0, 200.0), walk_m=2.0)


def test_the_fire_flow_on_aged_pipe_dominates(tmp_path) -> None:
    # more flow on every line and a rougher pipe, same source level (random_trees.py)
    problem = prepare_tree(_scheme(tmp_path / "a", 1))
    names = [s.name for s in problem.study.scenarios]
    assert dominant_scenario(problem.datas) == names.index("fire")


def test_no_scenario_dominates_when_each_loses_more_somewhere(tmp_path) -> None:
    problem = prepare_tree(_scheme(tmp_path / "b", 2))
    fire = [s.name for s in problem.study.scenarios].index("fire")
    data = problem.datas[1]
    loss = data.section_loss_m.copy()
    j = int(np.flatnonzero(data.admissible[0])[0])
    loss[0, 0, j] = loss[fire, 0, j] + 1.0  # the peak now loses more in one pair
    problem.datas[1] = dataclasses.replace(data, section_loss_m=loss)
    assert dominant_scenario(problem.datas) is None
    higher = dataclasses.replace(problem.datas[2], source_level_m=np.array([470.0, 470.0,
                                                                            471.0]))
    assert dominant_scenario([problem.datas[0], higher]) is None


def _full_optimum(study) -> float:
    """The reference: the full MILP of the tree with every scenario."""
    problem = prepare_tree(study)
    form = build_tree(problem.lines, problem.datas, with_rules=True)
    report = solve(form, "highs", time_limit_s=120.0, mip_gap=1e-9)
    assert report.status == Status.OPTIMAL
    assert check_design(study, design_from_tree(problem, form)).ok
    return float(report.objective)


@pytest.mark.parametrize("seed", range(4))
def test_the_reduced_models_have_the_full_models_optimum(tmp_path, seed) -> None:
    study = _scheme(tmp_path / f"s{seed}", seed)
    problem = prepare_tree(study)
    d = dominant_scenario(problem.datas)
    assert d is not None
    reduced = [on_scenario(data, d) for data in problem.datas]
    assert all(r.n_scenarios == 1 for r in reduced)
    form = build_tree(problem.lines, reduced, with_rules=True)
    report = solve(form, "highs", time_limit_s=120.0, mip_gap=1e-9)
    full = _full_optimum(study)
    assert report.status == Status.OPTIMAL
    assert report.objective == pytest.approx(full, rel=1e-6)
    # the reduced model's design passes the check in every scenario
    result = check_design(study, design_from_tree(problem, form))
    assert result.ok and len(result.scenarios) == 3


@pytest.mark.parametrize("seed", range(3))
def test_scheme_design_with_the_reduction_is_the_full_optimum(tmp_path, seed) -> None:
    study = _scheme(tmp_path / f"d{seed}", seed)
    outcome = optimise_design(study, mip_gap=1e-6, time_limit_s=60.0)
    full = _full_optimum(study)
    assert outcome.verified and outcome.design is not None
    assert check_design(study, outcome.design).ok
    assert any("dominated by 'fire'" in stage.name for stage in outcome.stages)
    # the fine model is conservative in places (formulation docstring), so a verified
    # design may be cheaper than its optimum, never dearer when proven optimal
    assert outcome.lower_bound <= min(full, outcome.total_cost) * (1 + 1e-9)
    assert outcome.total_cost >= tree_lower_bound(study) * (1 - 1e-6)
    if outcome.status == Status.OPTIMAL:
        assert outcome.total_cost <= full * (1 + 1e-6)
