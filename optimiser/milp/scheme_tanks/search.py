"""``design`` on a branched scheme that may add break-pressure tanks (contract section 8).

The plan, top to bottom:

1. The sites (:mod:`~.sites`) and the relaxation (:mod:`~.relaxation`): the scheme with
   the energy line of no tank and the classes against the lowest static line any choice
   of tanks gives, new tanks free. Its bound holds for every choice of tanks; when it
   has no design, no choice has one (``infeasible``, with its diagnosis). The fewest
   tanks any design needs for its classes (:mod:`~.count`): each costs at least that
   many tanks, and more than ``max_count`` is ``infeasible``. The bound of the lines
   apart (:mod:`~.lines_bound`: each line a route with its own tanks, fed at the
   source's level under the lowest static line), which sees each tank take head away.
   With surge by wave speed (contract section 10) each of the three takes the smallest
   surge any choice of tanks allows (:mod:`~.wave_surge`: the slow-closure length from
   the nearest site above, each section's own velocity), so each stays a relaxation;
   a set of tanks priced is designed with its exact surge.
2. The scheme without new tanks, designed as usual (the reports compare with it).
3. If every set of at most ``max_count`` sites is few (at most ``ENUMERATE_MAX``
   sets): each set is priced (:mod:`~.pricing`: the scheme designed with those tanks
   fixed), fewest tanks first, skipping a set whose relaxation bound (relaxation + its
   count x cost) already reaches the best design. When every set is priced or skipped,
   the bound is exact: the least of the sets' own bounds.
4. Else: sets placed by rule (one per class of the catalogue, :mod:`~.placement`),
   then moves around the best set (drop, shift, add), each priced, while the time
   lasts. The bound is the relaxation's (plus the least count any unpriced set has x
   cost).
5. The best design checked once more with its new tanks on the study as given; its
   bound capped at its cost, the gap and the status (``optimal`` only when the gap
   closes).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import time

from optimiser.analysis import check_design
from optimiser.milp.extract import rule_problems
from optimiser.milp.outcome import (
    DesignOutcome,
    SolverError,
    Stage,
    VerificationError,
    binding_points,
)
from optimiser.milp.scheme_tanks.count import fewest_tanks
from optimiser.milp.scheme_tanks.lines_bound import lines_bound
from optimiser.milp.scheme_tanks.memo import PartMemo, within
from optimiser.milp.scheme_tanks.placement import class_heads_m, moves, placed_by_head
from optimiser.milp.scheme_tanks.pricing import Plain, Prices
from optimiser.milp.scheme_tanks.relaxation import relaxed_bound
from optimiser.milp.scheme_tanks.sites import scheme_sites
from optimiser.milp.scheme_tanks.wave_surge import by_wave_speed
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import Clock, Settings
from optimiser.milp.solvers import relative_gap
from optimiser.model import Study
from optimiser.model.status import Status

ENUMERATE_MAX = 64
"""Every set of sites is priced when there are at most this many."""
RELAXATION_SHARE = 0.3
"""Share of the run's time the relaxation may take."""
LINES_SHARE = 0.25
"""Share of the time left the bound of the lines apart may take."""
NO_TANK_SHARE = 0.3
"""Share of the time left the scheme without new tanks may take."""
RELAXATION_LABEL = "relaxation for any new tanks (no tank's energy, lowest static line)"


def optimise_scheme_new_tanks(study: Study, settings: Settings, started: float,
                              plain: Plain) -> DesignOutcome:
    """The cheapest design of the scheme ``study`` with the new tanks ``design`` may
    add (``plain`` is :func:`optimiser.milp.optimise_design`, used with the tanks
    fixed). ``study`` has no tank of its own (those cut the scheme first)."""
    clock = Clock(started, started + settings.time_limit_s)
    sites = scheme_sites(study)
    if not sites:
        return _without_sites(study, settings, started, plain)
    relaxed = relaxed_bound(study, sites, settings, clock.within(RELAXATION_SHARE, 0.0))
    stages = [dataclasses.replace(s, name=f"{RELAXATION_LABEL}: {s.name}")
              for s in relaxed.state.stages]
    if relaxed.diagnosis:
        return _infeasible(settings, started, stages, relaxed.state.with_rules, [
            f"even with a new tank at every allowed site ({len(sites)} sites) and no "
            f"energy lost at any: {line}" for line in relaxed.diagnosis])
    fewest = fewest_tanks(study, sites)
    prices = Prices(study, settings, clock, plain, sites, relaxed.bound, fewest,
                    memo=PartMemo(plain, clock))  # no set priced past the deadline
    if fewest > prices.most:
        surge_words = " (with each pipe's least surge by wave speed)" \
            if by_wave_speed(study) else ""
        return _infeasible(settings, started, stages, relaxed.state.with_rules, [
            f"the static head{surge_words} needs at least {fewest:g} new break-pressure "
            "tanks at the "
            f"allowed sites for every section to have a pressure class, and at most "
            f"{prices.most} may be added ([break_pressure_tanks] max_count, or the sites)"])
    no_tank = prices.price(frozenset(), NO_TANK_SHARE) if fewest < 1 else \
        prices.proven_none(frozenset(), f"needs at least {fewest:g} new tanks")
    lines_clock = clock.within(LINES_SHARE, 0.0)
    prices.lines_m, line_stages = lines_bound(study, sites, settings, lines_clock,
                                              within(plain, lines_clock))
    stages += line_stages
    if _set_count(len(sites), prices.most) <= ENUMERATE_MAX:
        _enumerate(prices)
    else:
        _placed_and_moved(prices)
    return _outcome(prices, relaxed.lp_bound, stages, relaxed.state.with_rules,
                    no_tank.cost, no_tank.status, started)


def _without_sites(study: Study, settings: Settings, started: float,
                   plain: Plain) -> DesignOutcome:
    """No site can hold a tank (each is above every source level, or below the energy
    some point under it needs): the scheme designed as it is."""
    outcome = plain(dataclasses.replace(study, tank_rules=dataclasses.replace(
        study.tank_rules, cost=None)), solver_name=settings.solver_name,
        mip_gap=settings.mip_gap,
        time_limit_s=Clock(started, started + settings.time_limit_s).limit())
    kind = StageKind.SCHEME_TANK_SETS
    note = Stage(kind, f"{kind.label}: no new tank", Status.DONE, None, None, 0.0, 0, 0, 0,
                 "no site can hold a tank: each is above every source level or below the "
                 "energy some point under it needs")
    return dataclasses.replace(outcome, stages=[note, *outcome.stages],
                               solve_time_s=time.perf_counter() - started,
                               no_new_tank_cost=outcome.total_cost,
                               no_new_tank_status=outcome.status)


def _set_count(sites: int, most: int) -> int:
    return sum(math.comb(sites, k) for k in range(most + 1))


def _enumerate(prices: Prices) -> None:
    """Every set of sites, fewest tanks first, while the time lasts."""
    left = _set_count(len(prices.sites), prices.most) - _set_count(
        len(prices.sites), max(0, math.ceil(prices.fewest) - 1))
    for count in range(max(1, math.ceil(prices.fewest)), prices.most + 1):
        for chosen in itertools.combinations(prices.sites, count):
            left -= 1
            if prices.clock.left() < 1.0:
                return
            choice = frozenset(chosen)
            if prices.worth(choice):
                prices.price(choice, 1.0 / max(left, 1))


def _placed_and_moved(prices: Prices) -> None:
    """Sets placed by rule, then moves around the best set while they improve it."""
    study = prices.study
    for head in class_heads_m(study):
        choice = placed_by_head(study, prices.sites, head)
        if len(choice) <= prices.most and prices.clock.left() >= 1.0:
            prices.price(choice, 0.25)
    improved = True
    while improved and prices.clock.left() >= 1.0:
        improved = False
        best = prices.best
        if best is None or best.cost is None:
            return
        for choice in moves(study, prices.sites, best.choice, study.tank_rules.max_count):
            if choice in prices.priced or not prices.worth(choice):
                continue
            if prices.clock.left() < 1.0:
                return
            priced = prices.price(choice, 0.25)
            if priced.cost is not None and priced.cost < best.cost * (1.0 - 1e-9):
                improved = True
                break


def _outcome(prices: Prices, lp_bound: float | None, stages: list[Stage], rules_on: bool,
             no_tank_cost: float | None, no_tank_status: Status,
             started: float) -> DesignOutcome:
    """The best design checked on the study as given: cost, bound, gap, status."""
    settings, study = prices.settings, prices.study
    stages = stages + prices.stages
    best = prices.best
    bound = prices.bound()
    if best is None or best.design is None:
        if bound == math.inf:
            return _infeasible(settings, started, stages, rules_on, [
                "no set of new tanks at the allowed sites gives a design: each was "
                "designed with its tanks fixed and proven to have none"])
        raise SolverError(f"no design of the scheme with new break-pressure tanks found "
                          f"within the time limit ({settings.time_limit_s:g} s)")
    final = check_design(study, best.design)
    if not final.ok or rule_problems(study, best.design):
        raise VerificationError("the design with new tanks fails the check of the whole "
                                "scheme (a bug)")
    cost = final.total_cost
    bound = min(bound, cost)
    gap = relative_gap(cost, bound)
    status = Status.OPTIMAL if gap is not None and gap <= settings.gap_target \
        else Status.FEASIBLE
    lp = None if lp_bound is None else min(lp_bound, cost)
    return DesignOutcome(status, best.design, final, cost,
                         bound if math.isfinite(bound) else None, gap, lp,
                         time.perf_counter() - started, settings.solver_name,
                         settings.mip_gap, settings.time_limit_s,
                         binding=binding_points(final), stages=stages, rules_on=rules_on,
                         no_new_tank_cost=no_tank_cost, no_new_tank_status=no_tank_status)


def _infeasible(settings: Settings, started: float, stages: list[Stage], rules_on: bool,
                diagnosis: list[str]) -> DesignOutcome:
    return DesignOutcome(Status.INFEASIBLE, None, None, None, None, None, None,
                         time.perf_counter() - started, settings.solver_name,
                         settings.mip_gap, settings.time_limit_s, diagnosis=diagnosis,
                         stages=stages, rules_on=rules_on)
