"""The rules dynamic programme and the priced heuristic built on it.

Sources of the checks:

* exhaustive enumeration of every option per section (brute force, the independent
  answer a dynamic programme must reproduce; Bellman, R. (1957), Dynamic Programming:
  a shortest path through stages is optimal over all paths);
* the node pressures of a whole-section design from the priced heuristic's own
  arithmetic against ``check_design`` (the code of ``optimiser check``, itself checked
  against published friction values and hand calculations elsewhere): two
  implementations of contract section 5 must agree;
* a Lagrangian price on a constraint makes designs that take more of it dearer, so
  raising every price can only keep or raise the head a priced design leaves
  (Everett, H. (1963), Operations Research 11(3): the optimum of the priced problem
  moves monotonically in the resource as its price grows).

All data are invented.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from test_milp_reaches import undulating_profile
from test_milp_support import write_study

from optimiser import load_study
from optimiser.analysis import check_design
from optimiser.milp import optimise_design, prepare
from optimiser.milp.extract import design_from_choice, rule_problems
from optimiser.milp.priced import Prices, margins, priced_search, rates
from optimiser.milp.sequence_dp import cheapest_sequence


def pieces_of(choice, lengths):
    pieces: list[list] = []
    for j, length in zip(choice, lengths, strict=True):
        if pieces and pieces[-1][0] == j:
            pieces[-1][1] += length
        else:
            pieces.append([j, length])
    return pieces


def brute_force(rate, lengths, max_changes, min_length, change_cost, diameter):
    """Cheapest rule-abiding choice by enumerating every option per section."""
    n, m = rate.shape
    shortest = min(min_length, float(lengths.sum()))
    best = np.inf
    for combo in itertools.product(range(m), repeat=n):
        cost = sum(rate[s, j] for s, j in enumerate(combo))
        if not np.isfinite(cost):
            continue
        pieces = pieces_of(combo, lengths)
        changes = len(pieces) - 1
        if max_changes is not None and changes > max_changes:
            continue
        if any(length < shortest - 1e-9 for _, length in pieces):
            continue
        if diameter is not None and any(diameter[b[0]] > diameter[a[0]]
                                        for a, b in itertools.pairwise(pieces)):
            continue
        best = min(best, cost + change_cost * changes)
    return best


def cost_of(choice, rate, lengths, change_cost):
    return float(sum(rate[s, j] for s, j in enumerate(choice))) \
        + change_cost * (len(pieces_of(choice, lengths)) - 1)


@pytest.mark.parametrize("seed", range(6))
def test_dynamic_programme_matches_enumeration(seed):
    rng = np.random.default_rng(seed)
    for _ in range(40):
        n, m = int(rng.integers(1, 7)), int(rng.integers(1, 4))
        rate = rng.uniform(1.0, 10.0, (n, m))
        rate[rng.random((n, m)) < 0.15] = np.inf  # inadmissible options
        lengths = rng.choice([50.0, 100.0, 150.0], n)
        max_changes = [None, 0, 1, 2][int(rng.integers(4))]
        min_length = float(rng.choice([0.0, 100.0, 200.0, 320.0]))
        change_cost = float(rng.choice([0.0, 2.0]))
        diameter = rng.choice([100.0, 150.0, 200.0], m) if rng.random() < 0.4 else None
        expected = brute_force(rate, lengths, max_changes, min_length, change_cost, diameter)
        choice = cheapest_sequence(rate, lengths, max_changes=max_changes,
                                   min_length_m=min_length, change_cost=change_cost,
                                   diameter_mm=diameter)
        if not np.isfinite(expected):
            assert choice is None
            continue
        assert choice is not None
        assert cost_of(choice, rate, lengths, change_cost) == pytest.approx(expected,
                                                                             rel=1e-12)


def undulating_rules_study(folder):
    """An invented 4 km route with a bump, two scenarios, an offtake and the rules on
    (also used by the fixing and dominance tests)."""
    return load_study(write_study(
        folder, profile=undulating_profile(),
        source_level_m=106.0, required_head_m=58.0, friction="colebrook-white",
        route={"min_pressure_m": 2.0, "local_k_per_km": 0.3},
        scenarios=[{"name": "today", "flow": "25 L/s"},
                   {"name": "horizon", "flow": "32 L/s", "roughness_factor": 2.0}],
        offtakes=[{"chainage_m": 2500.0, "flow": "3 L/s", "min_pressure_m": 8.0}],
        rules={"min_piece_length_m": 300.0, "max_changes": 2},
        costs={"change_cost": 500.0}))


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    return undulating_rules_study(tmp_path_factory.mktemp("priced"))


def test_node_margins_agree_with_the_check(study):
    data = prepare(study)
    rng = np.random.default_rng(7)
    for _ in range(5):
        choice = np.array([rng.choice(np.flatnonzero(row)) for row in data.admissible])
        result = check_design(study, design_from_choice(data, choice), capacity=False)
        ours = margins(data, choice)
        for k, scenario in enumerate(result.scenarios):
            points = scenario.points
            margin = (points["pressure_m"] - points["min_pressure_m"]).to_numpy()
            # the least margin along the route and the outlet margin
            least = min(np.nanmin(ours.down[k]), np.nanmin(ours.up[k]))
            assert least == pytest.approx(margin.min(), abs=1e-6)
            assert ours.outlet[k] == pytest.approx(scenario.outlet_margin_m, abs=1e-6)


def test_higher_prices_leave_more_head(study):
    data = prepare(study)
    shape = (data.n_scenarios, data.n_sections + 1)
    base = Prices(np.zeros(shape), np.zeros(shape), np.full(data.n_scenarios, 50.0))
    rules = study.rules
    heads = []
    for factor in (0.0, 1.0, 4.0, 16.0, 64.0):
        priced = Prices(base.down * factor, base.up * factor, base.outlet * factor)
        choice = cheapest_sequence(rates(data, priced), data.chainage_length_m,
                                   max_changes=rules.max_changes,
                                   min_length_m=rules.min_piece_length_m,
                                   change_cost=study.costs.change_cost)
        heads.append(float(margins(data, choice).outlet.min()))
    assert all(b >= a - 1e-9 for a, b in itertools.pairwise(heads))
    assert heads[-1] > heads[0]


def test_priced_designs_obey_the_rules_and_pass_the_check(study):
    data = prepare(study)
    shape = (data.n_scenarios, data.n_sections + 1)
    # a price on the outlet head only, high enough for the first design to deliver
    prices = Prices(np.zeros(shape), np.zeros(shape), np.full(data.n_scenarios, 2000.0))
    found, record = priced_search(data, prices, upper_bound=None, deadline=np.inf)
    assert record.rounds >= 1 and found
    assert record.used.any(axis=1).all()  # every section was laid in some round
    for _, choice in found:
        design = design_from_choice(data, choice)
        assert check_design(study, design, capacity=False).ok
        assert rule_problems(study, design) == []
    # the optimiser's proven design is never dearer than a priced one
    outcome = optimise_design(study, time_limit_s=60.0, mip_gap=1e-6)
    assert outcome.status == "optimal"
    for cost, _ in found:
        assert outcome.total_cost <= cost + 1e-6 * cost
