"""Brute force on small routes with the rules on: the optimiser's cost is no more than the
best design found by enumeration, and no less than its own LP bound.

The enumeration is independent of the optimiser: every design with at most two changes
whose boundaries lie on the survey points (a coarse grid), judged by the check and by
the rules read literally from the contract (section 1 [rules], [costs]). A finer grid
can only lower the enumerated best, so "MILP <= enumerated best" is a necessary
condition of optimality (common practice, no source: exhaustive search as a reference
for small combinatorial problems).
"""

from __future__ import annotations

import itertools

import pytest
from test_milp_support import write_study

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design, rule_problems
from optimiser.model import Design, Piece

# A route over a ridge (pressure can bind at 600 m) then down to the outlet.
PROFILE = [(0.0, 99.0), (150.0, 96.0), (300.0, 95.0), (450.0, 95.5), (600.0, 95.8),
           (750.0, 80.0), (900.0, 70.0)]


def enumerate_best(study, max_changes: int) -> float | None:
    nodes = [float(c) for c in study.route.chainage_m]
    options = list(study.catalogue)
    best = None
    for changes in range(max_changes + 1):
        for cuts in itertools.combinations(nodes[1:-1], changes):
            edges = [nodes[0], *cuts, nodes[-1]]
            for sequence in itertools.product(options, repeat=changes + 1):
                if any(a == b for a, b in itertools.pairwise(sequence)):
                    continue
                design = Design(tuple(Piece(a, b, o) for a, b, o in
                                      zip(edges, edges[1:], sequence, strict=False)))
                if rule_problems(study, design):
                    continue
                result = check_design(study, design, capacity=False)
                if result.ok and (best is None or result.total_cost < best):
                    best = result.total_cost
    return best


@pytest.mark.parametrize("rules, costs", [
    ({"max_changes": 1, "min_piece_length_m": 200.0}, None),
    ({"max_changes": 2, "min_piece_length_m": 250.0}, {"change_cost": 800.0}),
    ({"max_changes": 2, "sizes_downstream": "non-increasing"}, None),
])
def test_milp_no_worse_than_enumeration(tmp_path, rules, costs):
    path = write_study(tmp_path, profile=PROFILE, source_level_m=101.0,
                       required_head_m=74.0, route={"min_pressure_m": 2.0},
                       scenarios=[{"name": "peak", "flow": "28 L/s"},
                                  {"name": "future", "flow": "34 L/s"}],
                       rules=rules, costs=costs)
    study = load_study(path)
    outcome = optimise_design(study, time_limit_s=60)
    best = enumerate_best(study, rules["max_changes"])
    assert best is not None, "the test case must have an enumerated design"
    assert outcome.status == "optimal"
    assert outcome.verified
    assert outcome.total_cost <= best * (1 + 1e-6)
    assert outcome.total_cost >= outcome.lp_bound * (1 - 1e-9)
    assert outcome.lower_bound <= outcome.total_cost * (1 + 1e-9)
    assert not rule_problems(study, outcome.design)
