"""Stage: tanks by shortest path over bounds on every reach, each chosen set designed.

The route falls apart at the tanks into gravity mains, so the cheapest design is the
cheapest path through the tank nodes with every reach priced at its cheapest pipes
(:mod:`optimiser.milp.tank_paths`). Pricing a reach exactly is a MILP, so each reach is
priced by a lower bound instead (:mod:`optimiser.milp.tank_bounds`: a Lagrangian of the
reach's relaxation at a price profile): the shortest path is then a lower bound on every
design (a relaxation: it counts as the run's bound). Rounds:

1. the shortest path at the bounds found so far (the first round: no price on head, so
   only the classes and the costs of the pipes count); its value is the run's bound;
2. the LP of each reach of the path not priced yet (:mod:`optimiser.milp.tank_reach_lp`)
   gives a profile that prices that reach at its LP value and bounds every other reach;
3. once the path repeats, its tanks designed reach by reach by the plan without tanks
   (:func:`optimiser.milp.tank_reaches.design_by_reaches`): a design, checked, and the
   bound each reach's own search proves, which raises that arc;

until the best design is proven within the gap, a designed path repeats (nothing left to
price or design: the bound is as good as these bounds make it), or the time is out.
"""

from __future__ import annotations

import itertools
import time
from collections.abc import Callable

import numpy as np

from optimiser.milp.diagnose import diagnose_after
from optimiser.milp.extract import rule_problems
from optimiser.milp.outcome import DesignOutcome, Stage
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.tank_bounds import PairFrame, pair_bounds, pair_frame, relaxation
from optimiser.milp.tank_paths import TankPath, shortest_path
from optimiser.milp.tank_reach_lp import reach_profile
from optimiser.milp.tank_reaches import design_by_reaches
from optimiser.milp.tank_single import single_option_costs, with_one_change
from optimiser.model.status import Status

REACH_GAP_SHARE = 0.1
"""Each reach of a chosen set is designed within this share of the run's gap."""
REACH_TIME_SHARE = 0.8
"""Share of the time left the reaches of a chosen set may take together (each its share
by length; a reach stops as soon as it is proven)."""
MAX_ROUNDS = 50


def run_tank_paths(state: SearchState, plain: Callable[..., DesignOutcome]
                   ) -> DesignOutcome | None:
    """Run the rounds above; returns the outcome if no choice of tanks can be built."""
    begun = time.perf_counter()
    data = state.data
    tanks = data.tanks
    assert tanks is not None
    relax = relaxation(data)
    frame = pair_frame(relax)
    lagrangian = pair_bounds(relax, frame, np.zeros((data.n_scenarios, data.n_sections)))
    single = single_option_costs(relax, frame, state.clock.deadline)
    change_cost = float(state.study.costs.change_cost)
    exact: dict[tuple[int, int], float] = {}
    priced: set[tuple[int, int]] = set()
    designed: set[tuple[int, ...]] = set()
    path: TankPath | None = None
    rounds = 0
    for rounds in range(1, MAX_ROUNDS + 1):
        bounds = _arc_bounds(frame, with_one_change(lagrangian, single, change_cost), exact)
        path = shortest_path(frame, bounds, relax.new, tanks.cost, tanks.max_count,
                             data.n_sections + 1)
        if path is None:
            _record(state, begun, None, rounds, "no choice of tanks can be built")
            return state.infeasible(diagnose_after(data, rules_relaxed_feasible=False))
        state.raise_bound(path.value)
        state.lp_bound = max(state.lp_bound or -np.inf, path.value)
        if state.proven() or state.clock.nearly_out():
            break
        fresh = [reach for reach in itertools.pairwise(path.nodes) if reach not in priced]
        for first, last in fresh:
            if state.clock.out():
                break  # the reaches not priced yet stay at their bounds
            priced.add((first, last))
            found = reach_profile(relax, first, last)
            if found is not None:
                lagrangian = np.maximum(lagrangian, pair_bounds(relax, frame, found[0]))
        sites = tuple(node for node in path.nodes[1:-1] if relax.new[node])
        if fresh or sites in designed:
            if not fresh:
                break  # the path repeats: nothing left to price or design
            continue
        if state.clock.out():
            break
        designed.add(sites)
        exact.update(_design(state, list(sites), plain))
    _record(state, begun, path, rounds, f"{len(priced)} reaches priced, "
                                        f"{len(designed)} choices of tanks designed")
    return None


def _arc_bounds(frame: PairFrame, bounds: np.ndarray,
                exact: dict[tuple[int, int], float]) -> np.ndarray:
    """``bounds`` raised to the proven bounds of the reaches designed so far."""
    bounds = bounds.copy()
    for (first, last), value in exact.items():
        row = int(np.searchsorted(frame.first, first))
        if last - first <= bounds.shape[1]:
            bounds[row, last - first - 1] = max(bounds[row, last - first - 1], value)
    return bounds


def _design(state: SearchState, sites: list[int], plain: Callable[..., DesignOutcome]
            ) -> dict[tuple[int, int], float]:
    """The design of tanks at ``sites``, each reach by the plan without tanks (each may
    change option freely first; with too many changes, the changes shared out). Returns
    the proven bound of each reach designed with every change allowed."""
    settings = state.settings
    rules = state.study.rules
    reach_bounds: dict[tuple[int, int], float] = {}
    for share in (False, True) if rules.max_changes is not None else (False,):
        design = design_by_reaches(state.data, sites, state.clock.limit(REACH_TIME_SHARE), plain,
                                   settings.solver_name,
                                   REACH_GAP_SHARE * settings.mip_gap, share,
                                   None if share else reach_bounds)
        if design is None:
            break
        if not rule_problems(state.study, design):
            state.consider(design, StageKind.TANK_PATHS.label, must_pass=False)
            break
    return reach_bounds


def _record(state: SearchState, begun: float, path: TankPath | None, rounds: int,
            note: str) -> None:
    status = Status.INFEASIBLE if path is None else (
        Status.FEASIBLE if state.best is not None else Status.NO_SOLUTION)
    cost = None if state.best is None else state.best.cost
    state.stages.append(Stage(StageKind.TANK_PATHS, StageKind.TANK_PATHS.label, status, cost,
                              None if path is None else path.value,
                              time.perf_counter() - begun, 0, 0, 0,
                              f"{rounds} rounds, {note}"))
