"""A first design with break-pressure tanks from the plan without tanks, reach by reach.

With the tanks fixed, the reaches between them are gravity mains of their own: each
starts at a tank's water level (its outlet loss as the entrance loss, its level as the
top water level) and ends at the next tank, whose water level is the required head after
its inlet loss (the exit loss). So the whole search of :func:`optimise_design`, which is
fast on long routes with the rules, designs each reach; the pieces joined are a design
of the study with those tanks, which the check judges like any other. The rules are
shared out: each reach may change option ``(max_changes - tanks) x its share of the
route`` times (or, first, as often as it likes, kept only if the joined design meets
``max_changes``). This supplies designs only (the reaches are optimised apart, the tanks
are placed by a rule), never a bound.

The tanks: walking down the route, a tank is placed at the last site before the first
section where no option the velocity window admits takes the static head (the latest
site keeps the fewest tanks), at most ``max_count``.
"""

from __future__ import annotations

import dataclasses
import itertools
import time
from collections.abc import Callable

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.outcome import DesignOutcome, SolverError
from optimiser.model import (
    TRUNK,
    BreakPressureTank,
    Design,
    Outlet,
    Piece,
    Source,
    Study,
    TankRules,
)

LEAST_REACH_S = 0.2
"""A reach is not started with less than this left of the time given [s]."""


def greedy_sites(data: ProblemData) -> list[int] | None:
    """Nodes for new tanks so that every section has an option for its static head
    (None: no such choice within ``max_count``)."""
    tanks = data.tanks
    assert tanks is not None
    possible = data.velocity_ok & (tanks.conditional | data.class_ok)
    highest = np.where(possible, tanks.threshold_m, -np.inf).max(axis=1)  # (n,)
    level = data.study.source.top_water_level_m
    chosen: list[int] = []
    last_site = None
    for s in range(data.n_sections):
        if tanks.fixed[s]:
            level, last_site = float(tanks.level_m[s]), None
        elif tanks.candidate[s] and s > 0:
            last_site = s
        if level <= highest[s] + 1e-9:
            continue
        if last_site is None or tanks.level_m[last_site] > highest[s]:
            return None
        chosen.append(last_site)
        level, last_site = float(tanks.level_m[last_site]), None
    if tanks.max_count is not None and len(chosen) > tanks.max_count:
        return None
    return chosen


def reach_study(study: Study, first: int, last: int, changes: int | None) -> Study:
    """The reach from node ``first`` to node ``last`` of ``study`` (with the tanks of
    ``study.tanks`` at its ends) as a study of its own, without tanks. Its slow-closure
    length L (contract section 10) is the whole study's: from its free surface (the
    source, or the tank at ``first``) on to the end of the route, past a tank at
    ``last`` (:func:`reach_lengths`)."""
    route = study.route
    start, end = float(route.chainage_m[first]), float(route.chainage_m[last])
    tanks = {round(t.chainage_m, 6): t for t in study.tanks}
    rules = study.tank_rules
    sub_route = route.between(first, last)
    scenarios = []
    for scenario in study.scenarios:
        beyond = sum(o.flow_m3_s for o in study.offtakes if o.chainage_m > end + 1e-9)
        flow = scenario.outlet_flow_m3_s + (scenario.offtake_factor * beyond
                                            if last < route.n_sections else 0.0)
        level = scenario.source_level_m if first == 0 else \
            tanks[round(start, 6)].water_level_m
        scenarios.append(dataclasses.replace(scenario, outlet_flow_m3_s=flow,
                                             source_level_m=level))
    if first == 0:
        source = study.source
    else:
        water = tanks[round(start, 6)].water_level_m
        source = Source(water, water, rules.outlet_k)
    outlet = study.outlet if last == route.n_sections else Outlet(
        tanks[round(end, 6)].water_level_m, rules.inlet_k)
    inside = end + 1e-9 if last == route.n_sections else end - 1e-9
    return dataclasses.replace(
        study, route=sub_route, source=source, outlet=outlet, scenarios=tuple(scenarios),
        offtakes=tuple(dataclasses.replace(o, chainage_m=o.chainage_m - start)
                       for o in study.offtakes if start - 1e-9 <= o.chainage_m <= inside),
        fittings=tuple(dataclasses.replace(f, chainage_m=f.chainage_m - start)
                       for f in study.fittings if start - 1e-9 <= f.chainage_m < inside),
        rules=dataclasses.replace(study.rules, max_changes=changes),
        tanks=(), tank_rules=TankRules(), branches=(), **reach_lengths(study, first, last))


def reach_lengths(study: Study, first: int, last: int) -> dict:
    """The pipe lengths before and beyond the reach from node ``first`` to node ``last``
    that keep its slow-closure length L the whole route's: none before a tank (the
    study's own before the source), the rest of the route and what the study carries
    beyond its end after it."""
    beyond = float(study.route.length_m[last:].sum()) + dict(
        study.pipe_length_beyond_m).get(TRUNK, 0.0)
    return {"upstream_pipe_length_m": study.upstream_pipe_length_m if first == 0 else 0.0,
            "pipe_length_beyond_m": ((TRUNK, beyond),) if beyond > 0 else ()}


def design_by_reaches(data: ProblemData, sites: list[int], time_limit_s: float,
                      plain: Callable[..., DesignOutcome], solver_name: str,
                      mip_gap: float, share_changes: bool = True,
                      bounds: dict[tuple[int, int], float] | None = None) -> Design | None:
    """The reaches between the study's own tanks and new tanks at ``sites`` designed
    one by one by ``plain`` (:func:`optimise_design`); None when one has no design.
    ``share_changes=False``: each reach may use every change (the joined design may then
    have too many; the caller's check of the rules decides), and ``bounds`` receives
    each reach's proven lower bound by (first node, last node): a bound on its pipes
    with its tanks fixed, since only ``max_changes`` (a rule over the whole route) is
    left out."""
    study = data.study
    tanks = data.tanks
    assert tanks is not None
    route = study.route
    new = tuple(BreakPressureTank(float(route.chainage_m[i]), float(tanks.level_m[i]), TRUNK,
                                  "new break-pressure tank", True) for i in sites)
    with_tanks = dataclasses.replace(study, tanks=(*study.tanks, *new))
    ends = sorted({0, *sites, *np.flatnonzero(tanks.fixed).tolist(), route.n_sections})
    budget = study.rules.max_changes if share_changes else None
    pieces: list[Piece] = []
    deadline = time.perf_counter() + time_limit_s
    for first, last in itertools.pairwise(ends):
        share = (route.chainage_m[last] - route.chainage_m[first]) / route.total_chainage_m
        changes = None if budget is None else int((budget - len(ends) + 2) * share)
        if changes is not None and changes < 0:
            return None
        # each reach its share by length, at least a second while that much is left,
        # never past the time given: a reach left without time ends the design here
        left = deadline - time.perf_counter()
        if left <= LEAST_REACH_S:
            return None
        try:
            outcome = plain(reach_study(with_tanks, first, last, changes),
                            solver_name=solver_name, mip_gap=mip_gap,
                            time_limit_s=min(max(time_limit_s * share, 1.0), left))
        except SolverError:  # no design of this reach within its time
            return None
        if bounds is not None and changes is None and outcome.lower_bound is not None:
            bounds[first, last] = float(outcome.lower_bound)
        if outcome.design is None:
            return None
        start, end = float(route.chainage_m[first]), float(route.chainage_m[last])
        laid = outcome.design.pieces
        pieces += [Piece(p.from_m + start, end if index == len(laid) - 1 else p.to_m + start,
                         p.option) for index, p in enumerate(laid)]
    return Design(tuple(pieces), new).merged()
