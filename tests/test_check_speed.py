"""The scheme check's fast capacities equal the general search and outside references.

- On seeded invented schemes (trunk, branches, sub-branches, fittings, offtakes,
  break-pressure tanks, scenarios with roughness and flow changes, a pump), every
  delivery point's uncontrolled flow and the trunk's capacity from ``check_design`` equal
  the root of the general computation written here: the check's whole path of the tree
  re-run at every trial flow (``SchemeHydraulics.least_margin_m``) and solved by
  ``scipy.optimize.brentq``, to 1e-9 relative.
- On a small scheme, each delivery point's uncontrolled flow equals an independent root
  on its path: Bernoulli's equation with losses (Streeter, V.L. & Wylie, E.B. (1985),
  Fluid Mechanics, ch. 3) with the Darcy factor from ``fluids.friction.Colebrook``
  (Colebrook, C.F. 1939; a reference library used only in tests), to 1e-9.
- On one Hazen-Williams pipe, the uncontrolled flow equals the closed form
  Q = (h / (k L / (C^1.852 D^4.8704)))^(1/1.852) (Williams, G.S. & Hazen, A. (1905),
  Hydraulic Tables, SI form, k = 10.67 of contract section 12), to 1e-9.

Every scheme here is invented test data; no value of it is a check value in itself.
"""

from __future__ import annotations

import dataclasses
import math
from types import SimpleNamespace

import numpy as np
import pytest
from fluids.friction import Colebrook
from scheme_api_builders import two_branch_scheme
from scipy.optimize import brentq, elementwise

import optimiser
from optimiser import check_design
from optimiser.analysis import delivery_flow
from optimiser.analysis.delivery_flow import (
    delivery_paths,
    path_starts,
    uncontrolled_flows_m3_s,
)
from optimiser.analysis.pumping import pumped_scenario
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.model import (
    Branch,
    BreakPressureTank,
    Catalogue,
    CostRules,
    Design,
    DesignRules,
    Fitting,
    Friction,
    Offtake,
    Outlet,
    Piece,
    PipeOption,
    PumpStation,
    Route,
    Scenario,
    SolverSettings,
    Source,
    Study,
)

G = 9.80665  # standard gravity [m/s^2], contract section 5
REL = 1e-9

OPTIONS = (  # invented catalogue rows
    PipeOption("DI", 300, 312.0, "K9", 250.0, 0.10, 140.0, 140.0),
    PipeOption("PE", 250, 220.4, "PN10", 102.0, 0.02, 150.0, 65.0),
    PipeOption("PE", 200, 176.2, "PN10", 102.0, 0.02, 150.0, 45.0),
    PipeOption("PE", 160, 141.0, "PN10", 102.0, 0.02, 150.0, 30.0),
    PipeOption("PE", 110, 96.8, "PN10", 102.0, 0.02, 150.0, 15.0),
)


def _route(rng: np.random.Generator, start_ground_m: float, length_m: float,
           points: int) -> Route:
    chainage = np.concatenate([[0.0], np.sort(rng.uniform(0.05, 0.95, points - 2)), [1.0]])
    chainage = np.round(chainage * length_m, 1)
    ground = start_ground_m - 0.008 * chainage + np.concatenate(
        [[0.0], rng.normal(0.0, 1.5, points - 1)])
    return Route(chainage_m=chainage, ground_m=ground, cover_m=1.0, labels=[""] * points,
                 zones=[""] * (points - 1))


def _extras(rng: np.random.Generator, route: Route) -> dict:
    """A fitting and an offtake at random survey points of a line (or none)."""
    inner = route.chainage_m[1:-1]
    fittings = (Fitting(float(rng.choice(inner)), float(rng.uniform(0.5, 3.0))),) \
        if rng.random() < 0.6 else ()
    offtakes = (Offtake(float(rng.choice(inner)), float(rng.uniform(0.3e-3, 1.5e-3))),) \
        if rng.random() < 0.6 else ()
    return {"fittings": fittings, "offtakes": offtakes}


def _branches(rng: np.random.Generator, trunk: Route, count: int) -> tuple[Branch, ...]:
    lines: dict[str, Route] = {"main": trunk}
    branches = []
    for index in range(count):
        parent = str(rng.choice(list(lines)))
        on = lines[parent]
        at = float(rng.choice(on.chainage_m[1:-1]))
        ground = float(np.interp(at, on.chainage_m, on.ground_m))
        route = _route(rng, ground, float(rng.uniform(400.0, 1500.0)), int(rng.integers(3, 6)))
        name = f"b{index + 1}"
        lines[name] = route
        branches.append(Branch(
            name=name, parent=parent, at_chainage_m=at, route=route,
            flow_m3_s=float(rng.uniform(1e-3, 4e-3)),
            required_head_m=float(route.ground_m[-1] + rng.uniform(2.0, 12.0)),
            exit_k=float(rng.uniform(0.0, 1.0)), junction_k=float(rng.uniform(0.0, 1.0)),
            local_k_per_km=float(rng.uniform(0.0, 1.0)), **_extras(rng, route)))
    return tuple(branches)


def _tanks(rng: np.random.Generator, study: Study, first: bool = False
           ) -> tuple[BreakPressureTank, ...]:
    """A tank at a survey point of the trunk and of one branch, 3 m above the ground; with
    ``first``, on the branch with most branches of its own, at its first survey point
    inside (so that those branches leave below it, or at it)."""
    branch = study.branches[0]
    if first:
        branch = max(study.branches,
                     key=lambda b: sum(c.parent == b.name for c in study.branches))
    tanks = []
    for name, route in (("main", study.route), (branch.name, branch.route)):
        inside = route.chainage_m[1:-1]
        at = float(inside[0] if first and name != "main" else rng.choice(inside))
        level = float(np.interp(at, route.chainage_m, route.ground_m)) + 3.0
        tanks.append(BreakPressureTank(at, level, branch=name))
    return tuple(tanks)


def random_scheme(seed: int, friction: Friction = Friction.COLEBROOK_WHITE,
                  tanks: bool | str = False, pump: bool = False) -> tuple[Study, Design]:
    """A seeded invented scheme with a design of random options (1-2 pieces per line);
    ``tanks`` True or ``"first"`` (:func:`_tanks`)."""
    rng = np.random.default_rng(seed)
    trunk = _route(rng, 200.0, float(rng.uniform(2000.0, 5000.0)), int(rng.integers(5, 10)))
    branches = _branches(rng, trunk, int(rng.integers(3, 7)))
    head = 202.0 if pump else 206.0
    scenarios = (
        Scenario("average", 0.008, head),
        Scenario("peak", 0.012, head - 1.0, offtake_factor=1.3, roughness_factor=2.0,
                 branch_factor=1.2, branch_flows_m3_s=((branches[0].name, 0.004),)),
        Scenario("night", 0.003, head + 0.5, roughness_mm=0.5, branch_factor=0.5))
    study = Study(
        title="Invented test scheme", currency="", kinematic_viscosity_m2_s=1.14e-6,
        temperature_c=None, source=Source(head, head + 1.0),
        outlet=Outlet(float(trunk.ground_m[-1] + 8.0)), route=trunk, min_pressure_m=0.0,
        local_k_per_km=0.5, scenarios=scenarios,
        catalogue=Catalogue(OPTIONS), surge_allowance_m=0.0, friction=friction,
        rules=DesignRules(), costs=CostRules(), solver=SolverSettings(),
        branches=branches, **_extras(rng, trunk))
    if tanks:
        study = dataclasses.replace(study, tanks=_tanks(rng, study, tanks == "first"))
    if pump:
        study = dataclasses.replace(study, pump=PumpStation(efficiency=0.7, energy_price=0.1))
    pieces = []
    for name, route in (("main", trunk), *((b.name, b.route) for b in branches)):
        end = float(route.chainage_m[-1])
        first = OPTIONS[int(rng.integers(0, 2))] if name == "main" else \
            OPTIONS[int(rng.integers(1, 4))]
        second = OPTIONS[min(OPTIONS.index(first) + 1, len(OPTIONS) - 1)]
        cut = round(float(rng.uniform(0.3, 0.7)) * end, 1)
        pieces += [Piece(0.0, cut, first, name), Piece(cut, end, second, name)]
    return study, Design(tuple(pieces))


def general_root(margin) -> float | None:
    """The general search's answer, written here: None when zero flow already fails, else
    the root of a margin that falls with the flow, by doubling then Brent's method."""
    if margin(0.0) < 0.0:
        return None
    low, high = 0.0, 1e-3
    while margin(high) >= 0.0:
        low, high = high, 2.0 * high
        assert high < 1e3, "no root in reach"
    return brentq(margin, low, high, xtol=1e-18, rtol=1e-15, maxiter=500)


def _scenarios_checked(study: Study, result) -> list[Scenario]:
    """The scenarios as the check ran them (with the station's head when pumped)."""
    if result.station is None:
        return list(study.scenarios)
    return [pumped_scenario(s, result.station.head_m[s.name]) for s in study.scenarios]


def _assert_close(fast: float | None, general: float | None) -> None:
    if general is None:
        assert fast is None
    else:
        assert fast == pytest.approx(general, rel=REL)


CASES = [(seed, friction, tanks, pump) for seed, friction, tanks, pump in (
    (1, Friction.COLEBROOK_WHITE, False, False), (2, Friction.COLEBROOK_WHITE, True, False),
    (3, Friction.HAZEN_WILLIAMS, False, False), (4, Friction.HAZEN_WILLIAMS, True, False),
    (5, Friction.COLEBROOK_WHITE, False, True), (6, Friction.COLEBROOK_WHITE, True, True),
    (7, Friction.COLEBROOK_WHITE, True, False), (8, Friction.COLEBROOK_WHITE, False, False),
    (4, Friction.COLEBROOK_WHITE, "first", False), (9, Friction.HAZEN_WILLIAMS, "first", True),
    (11, Friction.COLEBROOK_WHITE, "first", False))]


@pytest.mark.parametrize(("seed", "friction", "tanks", "pump"), CASES)
def test_fast_capacities_equal_the_general_search(seed, friction, tanks, pump):
    study, design = random_scheme(seed, friction, tanks, pump)
    result = check_design(study, design)
    general = SchemeHydraulics(study, design)
    found = 0
    for scenario, checked in zip(_scenarios_checked(study, result), result.scenarios,
                                 strict=True):
        for point in checked.outlets:
            expected = general_root(lambda q, name=point.branch, s=scenario:
                                    general.least_margin_m(s, name, q, outlet_only=True))
            _assert_close(point.uncontrolled_flow_m3_s, expected)
            found += expected is not None
        whole = general_root(lambda q, s=scenario:
                             general.least_margin_m(s, "main", q, outlet_only=False))
        if whole is not None and checked.capacity_outlet_only_m3_s is not None:
            whole = min(whole, checked.capacity_outlet_only_m3_s)
        _assert_close(checked.capacity_m3_s, whole)
    assert found >= 3  # the case means something: delivery points with a capacity


@pytest.mark.parametrize(("seed", "friction", "tanks", "pump"), CASES)
def test_tree_margin_of_the_trunk_flow_equals_the_whole_tree_re_run(seed, friction, tanks,
                                                                     pump):
    study, design = random_scheme(seed, friction, tanks, pump)
    result = check_design(study, design, capacity=False)
    general = SchemeHydraulics(study, design)
    for scenario in _scenarios_checked(study, result):
        fast = SchemeHydraulics(study, design).trunk_tree_margin(scenario, None)
        for q in np.linspace(0.0, 0.06, 13):
            whole = general.least_margin_m(scenario, "main", float(q), outlet_only=False)
            assert fast(float(q)) == pytest.approx(whole, rel=REL, abs=1e-9)


def test_a_delivery_point_short_at_no_flow_has_no_uncontrolled_flow():
    study, design = random_scheme(1)
    high = dataclasses.replace(study.branches[1], required_head_m=260.0)  # above the source
    study = dataclasses.replace(study, branches=(study.branches[0], high,
                                                 *study.branches[2:]))
    result = check_design(study, design)
    for scenario in result.scenarios:
        point = next(p for p in scenario.outlets if p.branch == high.name)
        assert point.uncontrolled_flow_m3_s is None


def _head(velocity_m_s: float) -> float:
    return velocity_m_s ** 2 / (2 * G)


def _friction_m(flow_m3_s: float, bore_m: float, length_m: float, nu: float) -> float:
    """Darcy-Weisbach loss with the Colebrook factor of ``fluids``."""
    velocity = flow_m3_s / (math.pi * bore_m ** 2 / 4)
    f = Colebrook(velocity * bore_m / nu, 0.02e-3 / bore_m)  # PE rows: eps 0.02 mm
    return f * length_m / bore_m * _head(velocity)


def _independent_roots(nu: float) -> dict[str, float]:
    """Uncontrolled flows of the scheme of ``two_branch_scheme`` worked on each path:
    trunk PE250 (bore 0.2204 m) falling 10 m a km from 201 m (entrance K 0.5, a valve
    K 2 at 1000 m, exit K 1, 170 m required, 10 L/s); 'north' PE160 (bore 0.141 m) at
    1000 m (junction K 0.8, exit K 1, 180 m required, 5 L/s), ground 190, 185, 180 at 0,
    500, 800 m; 'south' PE160 at 2300 m (junction K 0, exit K 1, 160 m required, 4 L/s),
    ground 177, 165 at 0, 600 m."""
    trunk, branch = 0.2204, 0.141
    km = math.hypot(1000.0, 10.0)

    def v(q: float, bore: float) -> float:
        return q / (math.pi * bore ** 2 / 4)

    def arriving_1000(q_above: float) -> float:
        return 201.0 - 0.5 * _head(v(q_above, trunk)) - _friction_m(q_above, trunk, km, nu)

    def north(q: float) -> float:
        energy = arriving_1000(0.010 + q + 0.004) - 0.8 * _head(v(q, branch))
        energy -= _friction_m(q, branch, math.hypot(500.0, 5.0), nu)
        energy -= _friction_m(q, branch, math.hypot(300.0, 5.0), nu)
        return energy - _head(v(q, branch)) - 180.0

    def arriving_2300(q_above: float, q_below: float) -> float:
        return arriving_1000(q_above) - 2.0 * _head(v(q_below, trunk)) \
            - _friction_m(q_below, trunk, 1.3 * km, nu)

    def south(q: float) -> float:
        energy = arriving_2300(0.015 + q, 0.010 + q)
        energy -= _friction_m(q, branch, math.hypot(600.0, 12.0), nu)
        return energy - _head(v(q, branch)) - 160.0

    def main(q: float) -> float:
        energy = arriving_2300(q + 0.009, q + 0.004) - _friction_m(q, trunk, 0.7 * km, nu)
        return energy - _head(v(q, trunk)) - 170.0

    return {name: brentq(f, 2e-3, 0.2, xtol=1e-18, rtol=1e-15)
            for name, f in (("north", north), ("south", south), ("main", main))}


def test_uncontrolled_flows_equal_an_independent_solve_on_each_path(tmp_path):
    study, design = two_branch_scheme(tmp_path)
    expected = _independent_roots(study.kinematic_viscosity_m2_s)
    outlets = check_design(study, design).scenarios[0].outlets
    assert {p.branch for p in outlets} == set(expected)
    for point in outlets:
        assert point.uncontrolled_flow_m3_s == pytest.approx(expected[point.branch], rel=REL)
        assert point.uncontrolled_flow_m3_s > point.flow_m3_s  # head to spare: it means


@pytest.fixture
def hazen_williams_pipe(make_study):
    # One straight pipe, no point loss: 2,000 m falling 40 m (invented).
    files = make_study(
        profile=[(0.0, 141.0, "intake", ""), (2000.0, 101.0, "tank", "")],
        design=[(0.0, 2000.0, "PE", 200, "PN10")],
        study={"offtake": [], "route": {"fitting": [], "min_pressure_m": 0.0},
               "source": {"level_m": 143.0, "top_water_level_m": 143.0, "entrance_k": 0.0},
               "outlet": {"required_head_m": 110.0, "exit_k": 0.0},
               "catalogue": {"file": "catalogue.csv", "friction": "hazen-williams"},
               "scenario": [{"name": "design", "flow": "20 L/s"}]})
    study = optimiser.load_study(files.study)
    return study, optimiser.load_design(files.design, study)


def test_uncontrolled_flow_of_a_hazen_williams_pipe_by_the_closed_form(hazen_williams_pipe):
    study, design = hazen_williams_pipe
    assert study.friction is Friction.HAZEN_WILLIAMS and study.local_k_per_km == 0.0
    h = 143.0 - 110.0
    length = math.hypot(2000.0, 40.0)  # slope length of the pipe
    c, bore = 150.0, 0.1762  # the catalogue row PE 200 PN10 of the builders
    closed = (h / (10.67 * length / (c ** 1.852 * bore ** 4.8704))) ** (1 / 1.852)
    scenario = check_design(study, design).scenarios[0]
    assert scenario.capacity_outlet_only_m3_s == pytest.approx(closed, rel=REL)
    # The all-at-once path search on the same line gives the same flow.
    hydraulics = SchemeHydraulics(study, design)
    arrays = hydraulics.evaluate(study.scenarios[0])
    paths = delivery_paths(hydraulics.parts, {line.name: line for line in hydraulics.lines},
                           path_starts(hydraulics.parts, hydraulics.lines, 0.5),
                           study.scenarios[0], arrays)
    assert uncontrolled_flows_m3_s(study, paths) == [pytest.approx(closed, rel=REL)]
    assert closed > 0.020  # head to spare at the scenario's 20 L/s


def test_a_root_search_that_does_not_converge_falls_back_to_the_general_search(monkeypatch):
    study, design = random_scheme(2, tanks=True)
    fast = check_design(study, design).scenarios

    def no_convergence(*args, **kwargs):
        found = elementwise.find_root(*args, **kwargs)
        found.status[:] = -2  # as if out of iterations
        found.x[:] = 0.5
        return found
    monkeypatch.setattr(delivery_flow, "elementwise", SimpleNamespace(find_root=no_convergence))
    slow = check_design(study, design).scenarios
    for first, second in zip(fast, slow, strict=True):
        for a, b in zip(first.outlets, second.outlets, strict=True):
            _assert_close(b.uncontrolled_flow_m3_s, a.uncontrolled_flow_m3_s)
            assert b.uncontrolled_flow_m3_s != 0.5
