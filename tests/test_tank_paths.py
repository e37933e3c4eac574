"""The bound of the tank stage: Lagrangian bounds on every reach and the shortest path.

References outside the stage: the plain optimiser of a reach with its tanks fixed (the
cheapest pipes between two tanks, proven by its own search), the LP of the reach's
relaxation (HiGHS through scipy, the same problem stated as rows), and enumeration of
every subset of sites (common practice, no source: the definition of the cheapest
choice). Routes and prices are invented test data (see ``test_tanks_design.py``).
"""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest
from test_tanks_design import TANK_COST, _study

from optimiser.milp import optimise_design
from optimiser.milp.data import prepare
from optimiser.milp.tank_bounds import pair_bounds, pair_frame, relaxation
from optimiser.milp.tank_data import with_sites_named
from optimiser.milp.tank_paths import shortest_path
from optimiser.milp.tank_reach_lp import reach_profile
from optimiser.milp.tank_reaches import reach_study
from optimiser.milp.tank_single import single_option_costs, with_one_change
from optimiser.model import TRUNK, BreakPressureTank, Status

RULES = {"cost": TANK_COST, "height_m": 3.0, "max_count": 3}


def _setup(make_study, seed: int, n: int, change_cost: float = 0.0):
    costs = {"costs": {"change_cost": change_cost}} if change_cost else {}
    study = _study(make_study, seed, n, break_pressure_tanks=RULES, **costs)
    data = prepare(with_sites_named(study))
    relax = relaxation(data)
    return data, relax, pair_frame(relax)


def _reach_cost(data, first: int, last: int) -> float | None:
    """The cheapest pipes of the reach between tanks at ``first`` and ``last`` by the
    plain optimiser (None: no design)."""
    level = data.tanks.level_m
    tanks = tuple(BreakPressureTank(float(data.node_chainage_m[i]), float(level[i]), TRUNK,
                                    "", True) for i in (first, last)
                  if 0 < i < data.n_sections)
    study = dataclasses.replace(data.study, tanks=tanks)
    outcome = optimise_design(reach_study(study, first, last, None), mip_gap=1e-9)
    return None if outcome.status == Status.INFEASIBLE else outcome.total_cost


def _all_bounds(relax, frame, data) -> np.ndarray:
    """The bound matrix at the zero profile and at the LP profile of every reach."""
    bounds = pair_bounds(relax, frame, np.zeros((data.n_scenarios, data.n_sections)))
    for row, first in enumerate(frame.first.tolist()):
        for o in np.flatnonzero(np.isfinite(bounds[row])).tolist():
            found = reach_profile(relax, first, first + o + 1)
            if found is not None:
                bounds = np.maximum(bounds, pair_bounds(relax, frame, found[0]))
    return bounds


@pytest.mark.slow
@pytest.mark.parametrize(("seed", "n", "change_cost"), [(3, 6, 0.0), (11, 6, 0.0),
                                                        (5, 8, 0.0), (5, 8, 800.0)])
def test_reach_bounds_never_above_the_reach_designed(make_study, seed, n, change_cost):
    """Every bound of a reach (at the zero profile and at the LP profile of every
    reach, raised by a change where one option cannot do) is at most the cost of that
    reach's cheapest pipes, tanks fixed at its ends, as the plain optimiser proves them
    (with its changes paid)."""
    data, relax, frame = _setup(make_study, seed, n, change_cost)
    bounds = with_one_change(_all_bounds(relax, frame, data),
                             single_option_costs(relax, frame), change_cost)
    checked = 0
    for row, first in enumerate(frame.first.tolist()):
        for last in range(first + 1, data.n_sections + 1):
            o = last - first - 1
            bound = bounds[row, o] if o < bounds.shape[1] else np.inf
            if not (data.tanks.at_node[last] or last == data.n_sections):
                continue
            cost = _reach_cost(data, first, last)
            if cost is not None:
                assert bound <= cost * (1 + 1e-9), (first, last)
                checked += 1
    assert checked >= 3


@pytest.mark.parametrize(("seed", "n"), [(3, 6), (5, 10)])
def test_profile_prices_its_own_reach_at_the_lp_value(make_study, seed, n):
    """Strong duality: the Lagrangian at a reach's own LP duals equals its LP value."""
    data, relax, frame = _setup(make_study, seed, n)
    zero = pair_bounds(relax, frame, np.zeros((data.n_scenarios, data.n_sections)))
    tried = 0
    for row, first in enumerate(frame.first.tolist()):
        for o in np.flatnonzero(np.isfinite(zero[row])).tolist():
            found = reach_profile(relax, first, first + o + 1)
            if found is None:
                continue
            profile, value = found
            own = pair_bounds(relax, frame, profile)[row, o]
            assert own == pytest.approx(value, rel=1e-6)
            tried += 1
    assert tried >= 3


@pytest.mark.parametrize(("seed", "n", "most"), [(3, 6, 3), (5, 10, 2), (11, 9, 1)])
def test_shortest_path_equals_enumeration_of_sites(make_study, seed, n, most):
    """The shortest path over a bound matrix is the least, over every subset of at most
    ``most`` sites, of the bounds of its reaches plus the price of its tanks."""
    data, relax, frame = _setup(make_study, seed, n)
    bounds = _all_bounds(relax, frame, data)
    path = shortest_path(frame, bounds, relax.new, TANK_COST, most, data.n_sections + 1)
    row_of = {first: row for row, first in enumerate(frame.first.tolist())}
    sites = np.flatnonzero(relax.new).tolist()
    best = np.inf
    for size in range(most + 1):
        for subset in itertools.combinations(sites, size):
            nodes = (0, *subset, data.n_sections)
            total = TANK_COST * size
            for first, last in itertools.pairwise(nodes):
                o = last - first - 1
                total += bounds[row_of[first], o] if o < bounds.shape[1] else np.inf
            best = min(best, total)
    if not np.isfinite(best):
        assert path is None
        return
    assert path is not None and path.value == pytest.approx(best, rel=1e-12)
    assert len(path.sites) <= most and set(path.sites) <= set(sites)


@pytest.mark.slow
def test_own_tank_and_sites_equal_enumeration(make_study):
    """With a tank of the study's own on the route and sites either side, the design
    costs the least, over every subset of the other sites, of the pipes optimised with
    those tanks and the study's own (common practice, no source: the definition)."""
    profile = _study(make_study, 5, 8).route.chainage_m
    own = [{"chainage_m": float(profile[4])}]
    rules = {**RULES, "max_count": 2}
    outcome = optimise_design(_study(make_study, 5, 8, break_pressure_tanks=rules,
                                     break_pressure_tank=own))
    assert outcome.status == Status.OPTIMAL and outcome.verified
    sites = [float(c) for i, c in enumerate(profile[1:-1], start=1) if i != 4]
    best = np.inf
    for size in range(3):
        for subset in itertools.combinations(sites, size):
            tanks = own + [{"chainage_m": c} for c in subset]
            fixed = _study(make_study, 5, 8, break_pressure_tank=tanks,
                           break_pressure_tanks={"height_m": 3.0})
            result = optimise_design(fixed)
            if result.status != Status.INFEASIBLE:
                best = min(best, result.total_cost + TANK_COST * size)
    assert outcome.total_cost == pytest.approx(best, rel=1e-7)
    new = [t.chainage_m for t in outcome.design.tanks if t.new]
    assert len(new) <= 2 and set(new) <= set(sites)
