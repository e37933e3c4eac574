"""The end of a run designed in parts: the joined design checked as one study.

Where a break-pressure tank cuts a study into parts that do not see each other's pipes
(:mod:`optimiser.milp.pumped_to_tank`, :mod:`optimiser.milp.cut_at_tanks`), each part is
designed on its own and the designs are joined. This is the one home of what such a run
returns: the joined design passes the check of the whole study and its rules (else it
is a bug), its objective (the life-cycle cost with a pump, else the capital), the sum of
the parts' bounds capped at it, the gap and the status.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Sequence

from optimiser.analysis import check_design
from optimiser.io.errors import InputError
from optimiser.milp.extract import rule_problems
from optimiser.milp.outcome import DesignOutcome, Stage, VerificationError, binding_points
from optimiser.milp.search.state import Settings
from optimiser.milp.solvers import relative_gap
from optimiser.model import Design, Study, SurgeMethod
from optimiser.model.status import Status


def bound_sum(outcomes: Sequence[DesignOutcome], lp: bool = False) -> float:
    """Sum of the parts' bounds on their objectives; -inf when one is unknown."""
    values = [o.lp_bound if lp else o.lower_bound for o in outcomes]
    return -math.inf if any(v is None for v in values) else float(sum(values))


def objective_of(study: Study, design: Design) -> float | None:
    """What a run minimises: the life-cycle cost with a pump, else the capital."""
    result = check_design(study, design, capacity=False)
    if not result.ok or rule_problems(study, design):
        return None
    return result.life_cycle_cost if study.pump is not None else result.total_cost


def named_stages(label: str, outcome: DesignOutcome) -> list[Stage]:
    """The stages of a part's run, their names prefixed with the part's."""
    return [dataclasses.replace(s, name=f"{label}: {s.name}") for s in outcome.stages]


def joined_outcome(study: Study, settings: Settings, started: float, stages: list[Stage],
                   design: Design, bound: float, lp_bound: float,
                   rules_on: bool) -> DesignOutcome:
    """The joined ``design`` checked as a whole: its objective, bound, gap, status."""
    final = check_design(study, design)
    if not final.ok or rule_problems(study, design):
        raise VerificationError("the design joined from its parts fails the check of the "
                                "whole study (a bug)")
    cost = final.life_cycle_cost if study.pump is not None else final.total_cost
    assert cost is not None
    bound = min(bound, cost)
    lp = min(lp_bound, cost) if math.isfinite(lp_bound) else None
    gap = relative_gap(cost, bound)
    status = Status.OPTIMAL if gap is not None and gap <= settings.gap_target \
        else Status.FEASIBLE
    return DesignOutcome(status, design, final, final.total_cost, bound, gap, lp,
                         time.perf_counter() - started, settings.solver_name,
                         settings.mip_gap, settings.time_limit_s, binding=binding_points(final),
                         stages=stages, rules_on=rules_on)


def infeasible_outcome(settings: Settings, started: float, stages: list[Stage], where: str,
                       outcome: DesignOutcome) -> DesignOutcome:
    """No design: the part ``where`` has none, and why."""
    return DesignOutcome(Status.INFEASIBLE, None, None, None, None, None, None,
                         time.perf_counter() - started, settings.solver_name,
                         settings.mip_gap, settings.time_limit_s,
                         diagnosis=[f"{where}: {line}" for line in outcome.diagnosis],
                         stages=stages, rules_on=outcome.rules_on)


def slow_closure_refusal(study: Study, what: str) -> InputError | None:
    """A study cut at a tank cannot be designed in parts under a slow closure: its surge
    (2 L V / g T, L the pipe length from the source through the tank, as the check takes
    it) would differ in the parts. Sudden closure and the allowance are the same in both."""
    surge = study.surge
    if surge.method is not SurgeMethod.JOUKOWSKY or surge.closure_time_s <= 0:
        return None
    where = study.path or "the study file"
    return InputError(f"{where}: {what} with [surge] method = \"joukowsky\" and "
                      f"closure_time_s = {surge.closure_time_s:g} s is not available in this "
                      "version: design with closure_time_s = 0 (sudden, the larger surge) "
                      "and check the design with the slow closure")
