"""The plan of a design run with break-pressure tanks (contract section 8).

The stages of :mod:`optimiser.milp.search` assume the energy and static lines run from
the source to the outlet (reaches merge sections across nodes, the priced dynamic
programme and the uniform design follow one energy line), so a study with tanks runs its
own, shorter plan on the full model of :mod:`optimiser.milp.tank_rows`:

1. the data of the route split at the class limits under every possible static line
   (:func:`~optimiser.milp.tank_data.with_sites_named`), and the diagnosis without a
   solver (the lowest static line any choice of tanks gives; tanks
   only lower the energy line, so its energy findings stand);
2. with the study's own tanks only (no site): the LP relaxation of the model, a bound;
3. with new tanks allowed and no tank of the study's own, the best design without new
   tanks from the plan without tanks (the whole search of :func:`optimise_design` on the
   study with new tanks not allowed): a first design, the warm start of the next stage,
   and the figure the saving is stated against;
4. with sites: the shortest path over Lagrangian bounds on every reach between two tank
   nodes (:mod:`optimiser.milp.tank_path_stage`): a bound, and each set of tanks it
   chooses designed reach by reach by the plan without tanks; on the long routes this
   proves the design;
5. without a design yet: tanks placed by rule, each reach between tanks designed by the
   plan without tanks (:mod:`optimiser.milp.tank_reaches`): a first design, and the
   warm start of the next stages;
6. with the rules: the model with tanks and the rules relaxed (a relaxation: its bound
   counts; its design is offered, and kept if it happens to meet the rules); its tanks
   fixed, each reach designed the same way; then its tanks fixed and the rules on,
   restricted to the options near its design: designs with the rules (HiGHS alone
   seldom finds one on the full model);
7. the full model with the tanks chosen with the pipes (binaries at the sites), warm-
   started from the best design so far, for the rest of the time: its bound is the
   run's bound, its design is checked with its tanks.

Every design passes :func:`optimiser.analysis.check_design` with its tanks and the rules
(:meth:`SearchState.consider`); a model design that fails is a bug.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable

import numpy as np

from optimiser.milp.built_model import Formulation, WarmStart
from optimiser.milp.data import prepare
from optimiser.milp.diagnose import diagnose, diagnose_after
from optimiser.milp.extract import design_from_fractions, rule_problems, section_use
from optimiser.milp.formulation import build, rules_active
from optimiser.milp.outcome import DesignOutcome, Stage
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.masks import widened, window_mask
from optimiser.milp.search.state import Clock, SearchState, Settings
from optimiser.milp.solvers import SolveReport
from optimiser.milp.tank_data import with_sites_named
from optimiser.milp.tank_path_stage import run_tank_paths
from optimiser.milp.tank_reaches import design_by_reaches, greedy_sites
from optimiser.milp.tank_rows import chosen_nodes
from optimiser.model import TRUNK, BreakPressureTank, Design, Study, TankRules
from optimiser.model.status import Status

PLAIN_SHARE = 0.3
REACH_SHARE = 0.5
"""Shares of the time left the plan without tanks may take (whole route; by reaches)."""
NEW_TANK_LABEL = "new break-pressure tank"


@dataclasses.dataclass
class TankRun:
    """What the plan with tanks leaves for the run's end."""

    state: SearchState
    finished: DesignOutcome | None = None
    no_new_tank_cost: float | None = None
    no_new_tank_status: Status | None = None


def search_with_tanks(study: Study, settings: Settings, clock: Clock,
                      plain: Callable[..., DesignOutcome]) -> TankRun:
    """Run the plan above; ``plain`` is :func:`optimise_design` (the plan without
    tanks, passed in to keep the modules free of an import circle)."""
    data = prepare(with_sites_named(study))
    state = SearchState(study, data, settings, clock, with_rules=rules_active(data))
    run = TankRun(state)
    findings = diagnose(data)
    if findings:
        run.finished = state.infeasible(findings)
        return run
    candidates = data.tanks is not None and data.tanks.any_candidate
    if not candidates and _tank_lp(run):
        return run
    if candidates and not study.tanks:
        _without_new_tanks(run, plain)
    if candidates:
        run.finished = run_tank_paths(state, plain)
        if run.finished is not None:
            return run
    if data.tanks is not None and state.best is None:
        _greedy_reaches(run, plain)
    if state.with_rules and not _proven(state):
        _rules_relaxed(run, plain)
    if not _proven(state):
        _full_model(run)
    return run


def _tank_lp(run: TankRun) -> bool:
    """The LP relaxation of the model with the study's own tanks (rules relaxed): a
    bound; True when it proves that no design exists (the run is then finished)."""
    state = run.state
    begun = time.perf_counter()
    relaxed = build(state.data, with_rules=False, relaxed=True)
    state.note_build_rate(False, time.perf_counter() - begun, int(state.data.admissible.sum()))
    report = state.run_solver(StageKind.TANK_LP, StageKind.TANK_LP.label, relaxed, None,
                              0.4, time.perf_counter() - begun)
    if report.status == Status.INFEASIBLE:
        run.finished = state.infeasible(diagnose_after(state.data,
                                                       rules_relaxed_feasible=False))
        return True
    if report.objective is not None:
        state.lp_bound = report.objective
        state.raise_bound(report.bound)
    return False


def _proven(state: SearchState) -> bool:
    """The best design is proven within the gap by a finite bound."""
    return math.isfinite(state.bound) and state.proven()


def _without_new_tanks(run: TankRun, plain: Callable[..., DesignOutcome]) -> None:
    """The best design without new tanks, by the plan without tanks."""
    state = run.state
    begun = time.perf_counter()
    outcome = plain(dataclasses.replace(state.study, tank_rules=TankRules()),
                    solver_name=state.settings.solver_name,
                    time_limit_s=state.clock.limit(PLAIN_SHARE, 1.0),
                    mip_gap=state.settings.mip_gap)
    seconds = time.perf_counter() - begun
    state.stages.append(Stage(StageKind.NO_NEW_TANKS, StageKind.NO_NEW_TANKS.label,
                              outcome.status, outcome.total_cost, outcome.lower_bound,
                              seconds, 0, 0, 0, f"{len(outcome.stages)} stages"))
    run.no_new_tank_status = outcome.status
    if outcome.design is not None:
        run.no_new_tank_cost = outcome.total_cost
        state.consider(outcome.design, StageKind.NO_NEW_TANKS.label, must_pass=True)


def _greedy_reaches(run: TankRun, plain: Callable[..., DesignOutcome],
                    sites: list[int] | None = None) -> None:
    """A design with tanks at ``sites`` (default: placed by rule), each reach by the
    plan without tanks."""
    state = run.state
    begun = time.perf_counter()
    by_rule = sites is None
    kind = StageKind.TANK_REACHES if by_rule else StageKind.TANK_MODEL_REACHES
    if state.clock.out():
        _skipped(state, kind)
        return
    if sites is None:
        sites = greedy_sites(state.data)
    design = None
    for share_changes in (False, True) if state.study.rules.max_changes is not None \
            else (False,):
        design = None if sites is None else design_by_reaches(
            state.data, sites, state.clock.limit(REACH_SHARE), plain,
            state.settings.solver_name, state.settings.mip_gap, share_changes)
        if design is not None and not rule_problems(state.study, design):
            break
    seconds = time.perf_counter() - begun
    if design is None:
        state.stages.append(Stage(kind, kind.label, Status.NO_SOLUTION, None, None, seconds,
                                  0, 0, 0, "no design this way"))
        return
    result = state.consider(design, kind.label, must_pass=False)
    status = Status.FEASIBLE if result.ok else Status.NO_SOLUTION
    state.stages.append(Stage(kind, kind.label, status, result.total_cost, None, seconds,
                              0, 0, 0, f"{len(design.tanks)} new tanks"))


def _rules_relaxed(run: TankRun, plain: Callable[..., DesignOutcome]) -> None:
    """With the rules: the model with tanks, rules relaxed (a relaxation: its bound
    counts), then its tanks fixed and the rules on, options near its design: a first
    design with the rules (a restricted model: its design counts, its bound not)."""
    state = run.state
    data = state.data
    relaxed = _solve(run, StageKind.TANK_RULES_RELAXED, with_rules=False, share=0.3)
    if relaxed is None:
        return
    form, report = relaxed
    state.raise_bound(report.bound)
    chosen = chosen_nodes(form)
    if _proven(state):
        return
    _greedy_reaches(run, plain, chosen)  # its tanks, each reach with the rules
    if _proven(state):
        return
    used = form.fractions() > 1e-6
    mask = widened(data, window_mask(data, used, state.width_m), 1)
    _solve(run, StageKind.TANK_FIXED_NEARBY, with_rules=True, share=0.4, allowed=mask,
           fixed=set(chosen))


def _full_model(run: TankRun) -> None:
    """The full model with the tanks, warm-started from the best design so far."""
    solved = _solve(run, StageKind.TANK_MODEL, with_rules=run.state.with_rules, share=0.95)
    if solved is None:
        return
    run.state.full_report = solved[1]
    run.state.raise_bound(solved[1].bound)


def _solve(run: TankRun, kind: StageKind, *, with_rules: bool, share: float,
           allowed: np.ndarray | None = None, fixed: set[int] | None = None
           ) -> tuple[Formulation, SolveReport] | None:
    """Build and solve a model with tanks (``fixed``: the tank binaries fixed to these
    nodes), offer its design, return the model and its report (None: no solution)."""
    state = run.state
    data = state.data
    pairs = int((data.admissible if allowed is None else data.admissible & allowed).sum())
    if state.clock.nearly_out() or state.expected_build_s(pairs) > 0.5 * state.clock.left():
        _skipped(state, kind)
        return None
    begun = time.perf_counter()
    form = build(data, allowed=allowed, with_rules=with_rules)
    state.note_build_rate(with_rules, time.perf_counter() - begun, pairs)
    if fixed is not None:
        for node, column in form.tank_columns.items():
            form.model.lower[column] = form.model.upper[column] = float(node in fixed)
    report = state.run_solver(kind, kind.label, form, _warm(state, form), share,
                              time.perf_counter() - begun)
    if report.status == Status.INFEASIBLE and state.best is None and kind is StageKind.TANK_MODEL:
        run.finished = state.infeasible(diagnose_after(data, rules_relaxed_feasible=True))
        return None
    if not report.has_solution or form.values is None:
        return None
    design = design_from_fractions(data, form.fractions())
    tanks = data.tanks
    assert tanks is not None
    new = tuple(BreakPressureTank(float(data.node_chainage_m[i]), float(tanks.level_m[i]),
                                  TRUNK, NEW_TANK_LABEL, True) for i in chosen_nodes(form))
    # With surge by wave speed and new tanks the model's classes are a relaxation.
    state.consider(Design(design.pieces, new), kind.label,
                   must_pass=(with_rules or not state.with_rules) and tanks.exact_classes)
    return form, report


def _skipped(state: SearchState, kind: StageKind) -> None:
    """Record a stage left out because the time left cannot hold it."""
    state.stages.append(Stage(kind, kind.label, Status.SKIPPED, None, None, 0.0, 0, 0, 0,
                              "too large to build and solve in the time left"))


def _warm(state: SearchState, form: Formulation) -> WarmStart | None:
    """The best design so far as a warm start, with its tanks."""
    if state.best is None:
        return None
    data = state.data
    warm = section_use(data, state.best.design)
    warm.update({("tank", node, 0): 0.0 for node in form.tank_columns})
    for tank in state.best.design.tanks:
        node = int(abs(data.node_chainage_m - tank.chainage_m).argmin())
        warm["tank", node, 0] = 1.0
    return warm
