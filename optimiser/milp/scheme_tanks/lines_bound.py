"""A second bound for every choice of tanks: each line of the scheme apart, as a route.

The cost of a design is the sum over its lines (the trunk and each branch) of that
line's pipes, changes and new tanks, and the rules count per line (contract section 7).
Take one line L and one scenario k. In any design, L's pipes and tanks meet the rows of
the single route made of L with:

- its flows of scenario k (its delivery, its offtakes at scenario k's factor, and every
  branch leaving it as an offtake of that branch's inflow at the junction): the same
  flows as in the scheme (a branch leaving at c is downstream of every section starting
  before c, as an offtake at c is);
- the highest energy L can start with: the source's level in scenario k (energy only
  falls along the path from the source, and a tank only lowers it);
- the lowest static line L can start under: the least level of a site above its junction
  on its path, or the top water level (:func:`~.sites.start_levels_m`);
- its own sites, the rules, the price of a tank and ``max_count``;
- with surge by wave speed, the surge no larger than in any design: one scenario's
  velocities (a piece's V in the scheme is the largest over every scenario), and for a
  slow closure the least slow-closure length L any choice of tanks gives the line's
  start (from the nearest site above its junction, else the source), with what the
  study carries past the line's end; below a tank of the line's own, L is the scheme's
  (contract section 10; :func:`~.wave_surge.upstream_length_m`).

So the cheapest design of that route (with new tanks chosen by the route's own plan,
:mod:`optimiser.milp.tank_search`, whose bound is valid) is at most L's cost in any
design, and the sum over the lines of the largest such bound over the scenarios bounds
the scheme. Unlike the relaxation of :mod:`~.relaxation`, it sees each tank take the
head away below it; it loses what a line hands to the lines below it (each branch is fed
at the source's level). A line whose route gives no bound counts 0 (costs are never
negative).
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable

import numpy as np

from optimiser.analysis.flows import line_flows_m3_s
from optimiser.milp.outcome import DesignOutcome, SolverError, Stage
from optimiser.milp.scheme_tanks.sites import Site, marked_on, start_levels_m
from optimiser.milp.scheme_tanks.wave_surge import upstream_length_m
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, Settings
from optimiser.model import TRUNK, Offtake, Outlet, Scenario, Source, Study
from optimiser.model.lines import Line, children_of, study_lines
from optimiser.model.status import Status

LINE_GAP = 1e-2
"""Gap at which a line's route may stop: only its bound is used, so a loose proof is
enough and quicker."""


def line_route(study: Study, line: Line, scenario: Scenario, static_start_m: float,
               upstream_m: float = 0.0) -> Study:
    """Line ``line`` of ``study`` as a single route in ``scenario`` alone (module
    docstring); ``upstream_m``: the pipe length put before its start for the
    slow-closure length L."""
    offtakes = [dataclasses.replace(o, flow_m3_s=o.flow_m3_s * scenario.offtake_factor)
                for o in line.offtakes]
    for child in children_of(study, line.name):
        chainage = child.route.chainage_m
        inflow = line_flows_m3_s(study, scenario, child,
                                 np.array([0.5 * (chainage[0] + chainage[1])]))[0]
        offtakes.append(Offtake(child.at_chainage_m, float(inflow),
                                label=f"junction of {child.name!r}"))
    level = scenario.source_level_m
    alone = dataclasses.replace(
        scenario, outlet_flow_m3_s=line.delivery_flow_m3_s(scenario), offtake_factor=1.0,
        branch_factor=1.0, branch_flows_m3_s=())
    rules = dataclasses.replace(study.tank_rules, marked_chainages_m=marked_on(study, line),
                                marked_on_branches=())
    return dataclasses.replace(
        study, route=line.route, source=Source(level, static_start_m, line.start_k),
        outlet=Outlet(line.required_head_m, line.exit_k), min_pressure_m=line.min_pressure_m,
        local_k_per_km=line.local_k_per_km, fittings=line.fittings,
        offtakes=tuple(sorted(offtakes, key=lambda o: o.chainage_m)), scenarios=(alone,),
        branches=(), tanks=(), tank_rules=rules, pump=None, upstream_pipe_length_m=upstream_m,
        pipe_length_beyond_m=_beyond(study, line))


def _beyond(study: Study, line: Line) -> tuple[tuple[str, float], ...]:
    """What ``study`` carries past the end of ``line`` (a part cut at a tank), as the
    route's own (its trunk)."""
    beyond = dict(study.pipe_length_beyond_m).get(line.name, 0.0)
    return ((TRUNK, beyond),) if beyond > 0 else ()


def lines_bound(study: Study, sites: list[Site], settings: Settings, clock: Clock,
                plain: Callable[..., DesignOutcome]) -> tuple[float, list[Stage]]:
    """The sum over the lines of the largest route bound over the scenarios tried
    within ``clock`` (module docstring; every line, shortest first, in the scenario of
    most flow, then the others while time is left), and the stages."""
    starts = start_levels_m(study, sites)
    lines = study_lines(study)
    scenarios = sorted(study.scenarios, key=lambda s: -s.outlet_flow_m3_s)
    best = dict.fromkeys((line.name for line in lines), 0.0)
    stages: list[Stage] = []
    # shorter lines first: each finishes quickly and counts, a long one may not
    by_size = sorted(lines, key=lambda line: line.route.n_sections)
    runs = [(scenario, line) for scenario in scenarios for line in by_size]
    for done, (scenario, line) in enumerate(runs):
        if clock.left() < 1.0:
            break
        begun = time.perf_counter()
        route = line_route(study, line, scenario, starts[line.name],
                           upstream_length_m(study, sites, line))
        try:
            outcome = plain(route, solver_name=settings.solver_name,
                            mip_gap=max(settings.mip_gap, LINE_GAP),
                            time_limit_s=max(clock.left() / (len(runs) - done), 1.0))
        except SolverError:
            continue
        bound = outcome.lower_bound if outcome.status != Status.INFEASIBLE else None
        if bound is not None and math.isfinite(bound):
            best[line.name] = max(best[line.name], bound)
        stages.append(Stage(StageKind.SCHEME_TANK_LINES,
                            f"line {line.name!r} alone as a route, scenario "
                            f"{scenario.name!r}: a bound on its cost with any tanks",
                            outcome.status, outcome.total_cost, bound,
                            time.perf_counter() - begun, 0, 0, 0,
                            f"{len(outcome.stages)} stages"))
    return float(sum(best.values())), stages
