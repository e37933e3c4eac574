"""A pumped main that fills a break-pressure tank and goes on by gravity below it, as
one study (contract sections 8 and 9).

A tank restarts the energy line and the static line at its water level (section 8), so
nothing below the first tank depends on the station's head or on the pipes above it, and
the pipes above it see the pipes below only through the flow they pass. The study is
two problems whose costs add:

1. the rising main from the station to the first tank: its outlet is the tank (the
   energy arriving less the inlet loss at least the water level), its flows are those
   the tank passes on; designed by the pumped plan for the least life-cycle cost
   (:mod:`optimiser.milp.pump_search`);
2. the gravity main from the tank on: its source is the tank's water level with the
   outlet loss; designed by the gravity plan (or the tank plan when more tanks stand
   below).

The two designs joined are a design of the study, which the check judges as a whole.
New tanks chosen by ``design`` (``[break_pressure_tanks] cost``) are placed in the
gravity part only, below the tank the station fills (the tank plan designs that part).
The rules stay those of the whole route: ``max_changes`` is shared out. Both parts are
first designed with the whole budget each (a relaxation: the sum of their bounds bounds
the study); if the joined design uses too many changes, every split of the budget
``(k, max_changes - k)`` is designed (a part needs a run only for budgets below what it
used with the whole budget), which covers every design of the study, so the least sum of
bounds over the splits is the bound. A change of option at the tank counts like any other.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable

import numpy as np

from optimiser.milp.cut_at_tanks import joined_design
from optimiser.milp.extract import rule_problems
from optimiser.milp.joined import (
    bound_sum,
    infeasible_outcome,
    joined_outcome,
    named_stages,
    objective_of,
)
from optimiser.milp.outcome import DesignOutcome, SolverError
from optimiser.milp.search.state import Settings
from optimiser.milp.tank_reaches import reach_study
from optimiser.model import BreakPressureTank, Design, Study
from optimiser.model.status import Status

Plain = Callable[..., DesignOutcome]
RISING, ONWARD = "rising main", "gravity main below the tank"


def split_at_first_tank(study: Study) -> tuple[Study, Study, BreakPressureTank]:
    """The rising main (to the first tank) and the gravity main below it as studies of
    their own, and that tank."""
    tanks = sorted(study.tanks, key=lambda t: t.chainage_m)
    first = tanks[0]
    route = study.route
    node = int(np.argmin(np.abs(route.chainage_m - first.chainage_m)))
    rising = reach_study(study, 0, node, study.rules.max_changes)
    onward = reach_study(study, node, route.n_sections, study.rules.max_changes)
    below = tuple(dataclasses.replace(t, chainage_m=t.chainage_m - first.chainage_m)
                  for t in tanks[1:])
    # New tanks (``[break_pressure_tanks] cost``) go below the tank the station fills.
    rules = study.tank_rules
    rules = dataclasses.replace(rules, marked_chainages_m=tuple(
        c - first.chainage_m for c in rules.marked_chainages_m if c > first.chainage_m + 1e-6))
    onward = dataclasses.replace(onward, pump=None, tanks=below, tank_rules=rules)
    return rising, onward, first


def optimise_pumped_to_tank(study: Study, settings: Settings, started: float,
                            plain: Plain) -> DesignOutcome:
    """The design of least life-cycle cost of a pumped study with break-pressure tanks
    of its own (``plain`` is :func:`optimiser.milp.optimise_design`)."""
    # The rising main's slow-closure length runs on past the tank (``reach_study``).
    rising, onward, tank = split_at_first_tank(study)
    offset = tank.chainage_m
    runs = _PartRuns(rising, onward, settings, started + settings.time_limit_s, plain)
    whole = study.rules.max_changes
    first = (runs.get(0, whole), runs.get(1, whole))
    for index, outcome in enumerate(first):
        if outcome.status == Status.INFEASIBLE:
            where = (f"the rising main to the tank at {offset:g} m" if index == 0 else
                     f"the gravity main below the tank at {offset:g} m (chainages from the "
                     "tank)")
            return infeasible_outcome(settings, started, runs.stages(), where, outcome)
    bound = bound_sum(first)
    best = _joined(study, first, tank)
    if best is None and whole is not None:
        best, bound = _shared_budget(study, runs, whole, tank, first)
    if best is None:
        raise SolverError("no design of the rising main and the gravity main below its tank "
                          f"together meets max_changes = {whole} within the time limit "
                          f"({settings.time_limit_s:g} s)")
    return joined_outcome(study, settings, started, runs.stages(), best, bound,
                          bound_sum(first, lp=True), first[0].rules_on or first[1].rules_on)


class _PartRuns:
    """Runs of each part by its budget of changes, each kept (a run with more budget
    than its design used stands for every larger budget)."""

    def __init__(self, rising: Study, onward: Study, settings: Settings, deadline: float,
                 plain: Plain) -> None:
        self.parts = (rising, onward)
        self.settings, self.deadline, self.plain = settings, deadline, plain
        self.done: dict[tuple[int, int | None], DesignOutcome] = {}

    def used(self, index: int, budget: int | None) -> int | None:
        outcome = self.done.get((index, budget))
        if outcome is None or outcome.design is None:
            return None
        return len(outcome.design.merged().pieces) - 1

    def get(self, index: int, budget: int | None) -> DesignOutcome:
        if (index, budget) not in self.done:
            # never past the run's deadline: no part is started without time left
            left = self.deadline - time.perf_counter()
            if left < 0.2:
                raise SolverError("no design of both parts found within the time limit")
            share = 0.6 if index == 0 and not self.done else 0.5
            part = self.parts[index]
            if budget is not None:
                part = dataclasses.replace(part, rules=dataclasses.replace(
                    part.rules, max_changes=budget))
            self.done[(index, budget)] = self.plain(
                part, solver_name=self.settings.solver_name, mip_gap=self.settings.mip_gap,
                time_limit_s=min(max(left * share, 1.0), left))
        return self.done[(index, budget)]

    def stages(self) -> list:
        """Every part run's stages, named by part (and budget when it was shared)."""
        found = []
        for (index, budget), outcome in self.done.items():
            label = RISING if index == 0 else ONWARD
            if budget is not None and len([k for k in self.done if k[0] == index]) > 1:
                label += f", at most {budget} changes"
            found += named_stages(label, outcome)
        return found


def _joined(study: Study, outcomes: tuple[DesignOutcome, DesignOutcome],
            tank: BreakPressureTank) -> Design | None:
    """The two parts' designs as one design of ``study`` if it meets the rules."""
    above, below = (o.design for o in outcomes)
    if above is None or below is None:
        return None
    design = joined_design(study, above, below, tank)
    return None if rule_problems(study, design) else design


def _shared_budget(study: Study, runs: _PartRuns, whole: int, tank: BreakPressureTank,
                   first: tuple[DesignOutcome, DesignOutcome]) -> tuple[Design | None, float]:
    """Every split of ``max_changes`` between the parts: the cheapest joined design that
    meets the rules, and the least sum of the parts' bounds over the splits."""
    used = [runs.used(0, whole), runs.used(1, whole)]
    best: tuple[float, Design] | None = None
    bound = math.inf
    for k in range(whole + 1):
        budgets = (k if used[0] is None or k < used[0] else whole,
                   whole - k if used[1] is None or whole - k < used[1] else whole)
        try:
            pair = (runs.get(0, budgets[0]), runs.get(1, budgets[1]))
        except SolverError:
            return (None if best is None else best[1]), bound_sum(first)
        if any(o.status == Status.INFEASIBLE for o in pair):
            continue
        bound = min(bound, bound_sum(pair))
        design = _joined(study, pair, tank)
        if design is not None:
            cost = objective_of(study, design)
            if cost is not None and (best is None or cost < best[0]):
                best = (cost, design)
    return (None if best is None else best[1]), max(bound, bound_sum(first))
