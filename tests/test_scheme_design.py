"""``design`` on a branched scheme (contract section 7): one optimisation over the tree.

Check values: a two-line tree worked by hand (the split-pipe linear programme of
Karmeli, Gadish & Meyers 1968 with the Hazen-Williams formula of contract section 5,
Williams & Hazen 1905), an independent linear programme written from the contract
(``independent_tree.py``: continuity for the flows, ``fluids`` for Colebrook,
``scipy.optimize.linprog``), and the optimiser's own single-route path (on a study with
no branch the tree's path must give what it gives). Schemes are invented.
"""

from __future__ import annotations

import dataclasses
import math
import time

import numpy as np
import pytest
from independent_tree import (
    design_line_energies,
    line_lower_bound,
    subtree_margin_m,
    tree_lower_bound,
)
from random_trees import random_tree

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import StageKind, optimise_design, prepare, rule_problems
from optimiser.milp.search.state import Settings
from optimiser.milp.tree.optimise import optimise_scheme
from optimiser.model import Branch, Route
from optimiser.model.lines import trunk_line

HW = 10.67  # SI Hazen-Williams constant, contract sections 5 and 12


def _flat(length_m: float, ground_m: float = 100.0, nodes: int = 2) -> Route:
    chainage = np.linspace(0.0, length_m, nodes)
    return Route(chainage_m=chainage, ground_m=np.full(nodes, ground_m), cover_m=1.0,
                 labels=[""] * nodes, zones=[""] * (nodes - 1))


def _hw_gradient(flow_m3_s: float, diameter_m: float, c: float = 140.0) -> float:
    """Williams & Hazen (1905), SI form of contract section 5 [m/m]."""
    return HW * flow_m3_s ** 1.852 / (c ** 1.852 * diameter_m ** 4.8704)


@pytest.fixture
def two_lines(make_study):
    """A flat trunk of 1,000 m (node at 500 m) and a branch of 400 m leaving at 500 m;
    two pipe sizes; no local losses; the branch's delivery binds, the trunk's not."""
    catalogue = [("PE", 110, 100.0, "PN10", 102.0, 0.02, 140, 10.0, "invented"),
                 ("PE", 160, 150.0, "PN10", 102.0, 0.02, 140, 25.0, "invented")]
    files = make_study(
        study={"source": {"level_m": 110.0, "top_water_level_m": 110.0, "entrance_k": 0.0},
               "outlet": {"required_head_m": 100.0, "exit_k": 0.0},
               "route": {"min_pressure_m": 0.0, "fitting": []}, "offtake": [],
               "scenario": [{"name": "peak", "flow": "5 L/s"}],
               "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"}},
        profile=[(0.0, 100.0), (500.0, 100.0), (1000.0, 100.0)], catalogue=catalogue)
    study = load_study(files.study)
    branch = Branch(name="school", parent="main", at_chainage_m=500.0, route=_flat(400.0),
                    flow_m3_s=0.004, required_head_m=104.0, exit_k=0.0)
    return dataclasses.replace(study, branches=(branch,))


def test_two_line_tree_matches_the_hand_calculation(two_lines):
    # Head to find on the path source -> branch end: 110 - 104 = 6 m. All small pipe:
    # trunk first half at 9 L/s, branch at 4 L/s. Each metre of head bought by upsizing
    # costs (25 - 10) / (J_small - J_large) per metre of pipe swapped: the cheaper per
    # metre of head goes first (a fractional knapsack; the LP is exact here).
    small, large = 0.100, 0.150
    trunk_q, branch_q = 0.009, 0.004
    saving_trunk = _hw_gradient(trunk_q, small) - _hw_gradient(trunk_q, large)
    saving_branch = _hw_gradient(branch_q, small) - _hw_gradient(branch_q, large)
    deficit = (500.0 * _hw_gradient(trunk_q, small) + 400.0 * _hw_gradient(branch_q, small)
               - 6.0)
    assert 0.0 < deficit < 500.0 * saving_trunk  # the trunk alone can cover it
    assert saving_trunk > saving_branch  # so the trunk's first half is upsized first
    swapped = deficit / saving_trunk  # metres of large pipe on the trunk
    expected = 10.0 * 1400.0 + 15.0 * swapped
    # the trunk's outlet does not bind: its second half stays small
    second = 110.0 - 500.0 * _hw_gradient(trunk_q, small) + swapped * saving_trunk \
        - 500.0 * _hw_gradient(0.005, small)
    assert second > 100.0
    outcome = optimise_design(two_lines)
    assert outcome.status == "optimal"
    assert outcome.total_cost == pytest.approx(expected, rel=1e-6)
    trunk = outcome.design.on("main").merged().pieces
    assert trunk[0].option.dn_mm == 160
    assert trunk[0].to_m == pytest.approx(swapped, abs=1e-3)
    assert [p.option.dn_mm for p in outcome.design.on("school").merged().pieces] == [110]


def test_rules_are_per_branch(two_lines):
    # max_changes = 0 on every line: each line one option, not one for the whole tree
    study = dataclasses.replace(two_lines, rules=dataclasses.replace(
        two_lines.rules, max_changes=0))
    outcome = optimise_design(study)
    assert outcome.status == "optimal"
    assert rule_problems(study, outcome.design) == []
    for name in ("main", "school"):
        assert len(outcome.design.on(name).merged().pieces) == 1
    # the cheapest one-option-per-line design, by hand: the trunk all large (9 L/s over
    # 500 m, then 5 L/s) leaves enough for the branch all small, which is cheaper than
    # the reverse (the branch all large cannot make up the trunk's loss)
    assert outcome.total_cost == pytest.approx(25.0 * 1000.0 + 10.0 * 400.0, rel=1e-9)


def test_prepare_of_the_trunk_line_is_prepare_of_the_route(study_files):
    study = load_study(study_files.study)
    plain, by_line = prepare(study), prepare(study, trunk_line(study))
    for field in dataclasses.fields(plain):
        a, b = getattr(plain, field.name), getattr(by_line, field.name)
        if isinstance(a, np.ndarray):
            assert np.array_equal(a, b), field.name
    assert by_line.study.route is study.route


@pytest.mark.parametrize("rules", [False, True])
def test_a_single_route_through_the_tree_path_gives_todays_cost(study_files, rules):
    study = load_study(study_files.study)
    if rules:
        study = dataclasses.replace(study, rules=dataclasses.replace(
            study.rules, max_changes=1, min_piece_length_m=200.0))
    today = optimise_design(study, mip_gap=1e-6)
    tree = optimise_scheme(study, Settings("highs", 60.0, 1e-6), time.perf_counter())
    assert tree.status == today.status == "optimal"
    # Today's run ends with designs outside the section order (pieces in any order,
    # docs/method.md), which the tree's path does not search: compare with today's
    # best section-ordered design.
    ordered = min(stage.objective for stage in today.stages
                  if stage.objective is not None and stage.kind is not StageKind.ANY_ORDER
                  and stage.kind is not StageKind.LP_RELAXATION)
    assert tree.total_cost == pytest.approx(ordered, rel=2e-6)
    assert tree.total_cost >= today.total_cost * (1 - 1e-9)


def test_diagnosis_names_the_branch_that_is_short_itself(two_lines):
    # the branch needs more than the source's own level: no trunk can help
    branch = dataclasses.replace(two_lines.branches[0], required_head_m=111.0)
    outcome = optimise_design(dataclasses.replace(two_lines, branches=(branch,)))
    assert outcome.status == "infeasible"
    text = " ".join(outcome.diagnosis)
    assert "branch 'school'" in text and "the branch itself is short" in text
    assert "'peak'" in text


def test_diagnosis_blames_the_trunk_upstream(two_lines):
    # fed at the source level the branch could be met (109.9 m needs 0.1 m over 400 m
    # of 150 mm at 4 L/s: J = 0.4 m/km), but 500 m of trunk at 9 L/s loses more than
    # that even in the largest size
    branch = dataclasses.replace(two_lines.branches[0], required_head_m=109.7)
    loss_trunk = 500.0 * _hw_gradient(0.009, 0.150)
    loss_branch = 400.0 * _hw_gradient(0.004, 0.150)
    assert loss_branch < 0.3 < loss_trunk + loss_branch
    outcome = optimise_design(dataclasses.replace(two_lines, branches=(branch,)))
    assert outcome.status == "infeasible"
    text = " ".join(outcome.diagnosis)
    assert "branch 'school'" in text and "the lines upstream are short" in text
    shortfall = loss_trunk + loss_branch - 0.3
    assert f"{shortfall:.2f} m short" in text


SEEDS = range(100)


def _judge(tmp_path, seed: int) -> None:
    study = random_tree(tmp_path / f"t{seed}", seed)
    outcome = optimise_design(study)
    bound = tree_lower_bound(study)
    assert bound is not None and outcome.status == "optimal", outcome.diagnosis
    assert check_design(study, outcome.design, capacity=False).ok
    assert outcome.total_cost <= bound * (1 + 1e-4)
    assert outcome.lower_bound <= bound * (1 + 1e-6)
    # each line alone, everything else fixed at the tree's design, is no cheaper
    energies = design_line_energies(study, outcome.design)
    parents = {b.name: (b.parent, b.at_chainage_m) for b in study.branches}
    for name in ["main", *parents]:
        if name == "main":
            start = [s.source_level_m for s in study.scenarios]
        else:
            parent, at = parents[name]
            chainage = (study.route if parent == "main" else study.branch(parent).route
                        ).chainage_m
            start = energies[parent][:, int(np.argmin(np.abs(chainage - at)))].tolist()
        route = study.route if name == "main" else study.branch(name).route
        needs = {}
        for child, (parent, at) in parents.items():
            if parent == name:
                node = int(np.argmin(np.abs(route.chainage_m - at)))
                needs[child] = (energies[name][:, node]
                                - subtree_margin_m(study, energies, child)).tolist()
        alone = line_lower_bound(study, name, start, needs)
        cost = sum(p.option.cost_per_m * _slope_m(route, p.from_m, p.to_m)
                   for p in outcome.design.pieces if p.branch == name)
        assert alone is not None and cost <= alone * (1 + 1e-4) + 1e-6, name


def _slope_m(route: Route, start_m: float, stop_m: float) -> float:
    """Pipe length of a piece (slope length, contract section 5)."""
    a, b = route.chainage_m[:-1], route.chainage_m[1:]
    share = np.clip(np.minimum(b, stop_m) - np.maximum(a, start_m), 0.0, None) / (b - a)
    return float((share * route.length_m).sum())


@pytest.mark.slow
@pytest.mark.parametrize("block", range(10))
def test_random_trees_cost_no_more_than_an_independent_bound(tmp_path, block):
    for seed in SEEDS[block::10]:
        _judge(tmp_path, seed)


def test_random_tree_quick(tmp_path):
    _judge(tmp_path, 3)
    assert math.isfinite(tree_lower_bound(random_tree(tmp_path / "x", 4)))
