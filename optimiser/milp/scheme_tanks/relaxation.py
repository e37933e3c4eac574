"""A lower bound for a scheme whatever new tanks ``design`` adds: one relaxation for all.

Every design with new tanks at some sites S, with the same pipes, also meets the rows of
this relaxation:

- the energy line of NO tank. A tank only ever lowers the energy below it: its water
  level is at most the energy arriving less the inlet loss (else it cannot fill,
  ``tank_inflow``), and the energy leaving is that level less the outlet loss; so with
  the tanks taken away every energy below them is at least as high, and every pressure
  and delivery row that held still holds (the rows of the tanks themselves are dropped);
- the class rows (static head + surge allowance <= allowable head, contract section 5)
  against the LOWEST static line any choice of sites gives (a tank at the site of least
  level above each section on its path, :func:`~.sites.lowest_static_m`): every choice's
  static line is at least as high, so every class it admits is admitted here. Each line
  is split where the pipe crosses an option's class limit under that line, so classes
  are exact per metre on every part (as :mod:`optimiser.milp.class_limits` does for the
  source's line);
- with surge by wave speed (contract section 10: static head <= allowable head, static
  head + surge <= surge limit), the surge is the SMALLEST any choice of tanks allows
  (:mod:`~.wave_surge`): the slow-closure length L from the nearest site above each
  section on its path (a tank there shortens L most; the surge never grows as L
  shrinks) and each option's own largest velocity in the section (a piece's V is the
  largest over all it covers). The lowest static line and the least L may come from
  different sites; each alone only lowers the class demand, so together they still
  admit every class any choice admits. The down-surge rows (``min_transient_pressure_m``)
  take the same smallest surge, under the energy line of no tank, the highest;
- the rules as they are (the rules count per line and are not changed by a tank) and
  the new tanks' cost taken as 0 (a cost is never negative).

So the optimum of the scheme's model on these data is at most the pipe cost of every
design with tanks, and at most its total cost. It is solved by the scheme's own stages
(:mod:`optimiser.milp.tree`): the LP by row generation (rules relaxed), then the reach
model with the rules (a relaxation of the model, its bound valid). Its designs are
checked against the scheme with no tank: one that passes is a design without new tanks.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.limits import CHECK_TOLERANCE, class_holds
from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.milp.class_limits import crossing_chainages_m, limit_levels_m
from optimiser.milp.data import ProblemData, prepare
from optimiser.milp.formulation import rules_active
from optimiser.milp.outcome import SolverError
from optimiser.milp.reaches import ActivePoints
from optimiser.milp.scheme_tanks.sites import Site, lowest_static_m, start_levels_m
from optimiser.milp.scheme_tanks.wave_surge import (
    admitted,
    by_wave_speed,
    fastest_m_s,
    least_lengths_m,
    margins_m,
)
from optimiser.milp.search.state import Candidate, Clock, SearchState, Settings
from optimiser.milp.tree.diagnosis import diagnose_scheme
from optimiser.milp.tree.lp_stage import run_tree_lp
from optimiser.milp.tree.problem import TreeProblem
from optimiser.milp.tree.stages import run_tree_dominance, run_tree_reach_model
from optimiser.model import Study, TankRules
from optimiser.model.lines import Line, study_lines

REACH_SHARE = 0.6
"""Share of the relaxation's time the reach model with the rules may take."""


@dataclass
class RelaxedBound:
    """What the relaxation proved: its bound (``-inf``: none), its LP's, the diagnosis
    when it has no solution (then no design with any tanks exists), the stages, and the
    best design without new tanks it met (checked against the scheme with no tank)."""

    bound: float
    lp_bound: float | None
    diagnosis: list[str]
    state: SearchState

    @property
    def no_tank_design(self) -> Candidate | None:
        return self.state.best


def without_tanks(study: Study) -> Study:
    """``study`` with no tank and none to add."""
    return dataclasses.replace(study, tanks=(), tank_rules=TankRules())


def relaxed_problem(study: Study, sites: list[Site]) -> TreeProblem:
    """The scheme's per-line data with no tank's energy and the classes against the
    lowest static line (module docstring). ``study`` has no tank of its own."""
    bare = without_tanks(study)
    starts = start_levels_m(study, sites)
    routes = {}
    for line in study_lines(bare):
        low = lowest_static_m(line.route, line.name, starts[line.name], sites)
        found = crossing_chainages_m(line.route, _limit_levels_m(bare, line, low, sites))
        routes[line.name] = line.route if len(found) == 0 else \
            line.route.with_nodes(found, tolerance_m=0.0)
    split = dataclasses.replace(
        bare, route=routes[study_lines(bare)[0].name],
        branches=tuple(dataclasses.replace(b, route=routes[b.name]) for b in bare.branches))
    lines = list(study_lines(split))
    datas = [_relaxed_classes(prepare(split, line), lowest_static_m(
        line.route, line.name, starts[line.name], sites), split, line, sites)
        for line in lines]
    return TreeProblem(bare, lines, datas)


def _limit_levels_m(study: Study, line: Line, static_level_m: np.ndarray,
                    sites: list[Site]) -> np.ndarray:
    """(n, levels) pipe levels below which an option's class stops being admitted in
    each section of ``line`` under ``static_level_m`` (n,): by wave speed, the static
    line less the option's margin at its smallest surge (module docstring); else the
    source line's limits moved down to that static line."""
    if by_wave_speed(study):
        margins = margins_m(study, fastest_m_s(study, line),
                            least_lengths_m(study, sites, line))
        return static_level_m[:, None] - np.where(np.isfinite(margins), margins, np.nan)
    top = study.source.top_water_level_m
    return limit_levels_m(study, line) - (top - static_level_m)[:, None]


def _relaxed_classes(data: ProblemData, static_level_m: np.ndarray, study: Study,
                     line: Line, sites: list[Site]) -> ProblemData:
    """``data`` (of ``line`` of the split scheme ``study``) with every class judged
    against ``static_level_m`` (n,) at each section's lowest pipe level: with the
    allowance method static + allowance <= allowable head, as ``prepare`` does; by wave
    speed at the smallest surge any choice of tanks allows (module docstring)."""
    pipe = data.node_pipe_level_m
    static = static_level_m - np.minimum(pipe[:-1], pipe[1:])
    allowance = data.study.surge_allowance_m
    allowable = data.study.catalogue.allowable_head_m[None, :]
    surge = None
    if by_wave_speed(study):
        surge = _least_surges_m(data, study, line, sites)
        limit = data.study.catalogue.surge_limit_head_m[None, :]
        class_ok = admitted(static[:, None], np.minimum(allowable, limit - surge))
    else:
        class_ok = class_holds(static[:, None], allowable, CHECK_TOLERANCE) & class_holds(
            static[:, None] + allowance, allowable + CHECK_TOLERANCE)
    # never fewer options than the no-tank data (a lower static line admits more)
    class_ok |= data.class_ok
    # Under a lower static line and a shorter L the pairs a piece may not span and the
    # surge it carries are those of no tank: left out, the model stays a relaxation.
    relaxed = dataclasses.replace(data, class_ok=class_ok,
                                  admissible=class_ok & data.velocity_ok,
                                  static_demand_m=static + allowance, wave_conflicts=None,
                                  surge_carry=None, surge_slope=None)
    if surge is not None and data.surge_m is not None:  # the down-surge rows
        relaxed = dataclasses.replace(relaxed, surge_m=surge, surge_own_m=surge)
    return relaxed


def _least_surges_m(data: ProblemData, study: Study, line: Line, sites: list[Site]
                    ) -> np.ndarray:
    """(n, m) the smallest surge head [m] any choice of tanks gives option j in section
    s of ``data`` (the route of ``line``, its sections), NaN where the option has no
    wave speed."""
    fastest = data.velocity_m_s.max(axis=0)
    length = least_lengths_m(study, sites, line)
    wave = wave_speeds_m_s(study, study.catalogue)
    return surge_head_m(study, wave[None, :], fastest, length_m=length[:, None])


def relaxed_bound(study: Study, sites: list[Site], settings: Settings,
                  clock: Clock) -> RelaxedBound:
    """The relaxation's bound (module docstring), within ``clock``."""
    problem = relaxed_problem(study, sites)
    state = SearchState(problem.study, problem.datas[0], settings, clock,
                        with_rules=rules_active(problem.datas[0]))
    findings = diagnose_scheme(problem)
    if findings:
        return RelaxedBound(math.inf, None, findings, state)
    run_tree_dominance(state, problem)
    try:
        lp, actives, finished = run_tree_lp(state, problem,
                                            [ActivePoints.none(d) for d in problem.datas])
    except SolverError:  # no bound from it; the sets priced still give designs
        return RelaxedBound(-math.inf, None, [], state)
    if finished is not None:
        return RelaxedBound(math.inf, None, finished.diagnosis, state)
    if lp is not None and state.with_rules and not state.clock.nearly_out():
        finished = run_tree_reach_model(state, problem, actives, lp, REACH_SHARE)
        if finished is not None:
            return RelaxedBound(math.inf, state.lp_bound, finished.diagnosis, state)
    return RelaxedBound(state.bound, state.lp_bound, [], state)
