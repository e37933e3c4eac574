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
from optimiser.analysis.surge import reflection_length_m
from optimiser.io.errors import InputError
from optimiser.milp.extract import rule_problems
from optimiser.milp.outcome import DesignOutcome, Stage, VerificationError, binding_points
from optimiser.milp.search.state import Settings
from optimiser.milp.solvers import relative_gap
from optimiser.milp.tree.line_study import line_study
from optimiser.model import TRUNK, BreakPressureTank, Design, Study, SurgeMethod
from optimiser.model.lines import line_of, study_lines
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


def with_whole_lengths(study: Study, above: Study, below: Study, tank: BreakPressureTank,
                       what: str) -> tuple[Study, Study]:
    """The parts of ``study`` cut at ``tank`` with the slow-closure length L the whole
    study gives their pipes (contract section 10: from the free surface upstream, the
    source or the last tank, to the end of the piece's branch): above, the cut line's L
    runs on past the tank to the line's end (:attr:`Study.pipe_length_beyond_m`); below,
    the tank is the free surface and the rest of the line keeps what the study carries
    beyond the line's end. Sudden closure and the allowance do not depend on L.

    A part that is a scheme is designed line by line on views of each line as a route,
    which carry the part's length beyond the trunk's end: a slow closure there with a
    line whose view would take another length is refused (``what`` names the study's
    kind)."""
    beyond = dict(study.pipe_length_beyond_m)
    line = line_of(study, tank.branch)
    route = line.route.with_nodes([tank.chainage_m])
    rest = float(route.length_m[route.chainage_m[:-1] >= tank.chainage_m - 1e-6].sum())
    upper = {**beyond, tank.branch: beyond.get(tank.branch, 0.0) + rest}
    names = {b.name for b in below.branches}
    lower = {name: v for name, v in beyond.items() if name in names}
    if beyond.get(tank.branch):
        lower[TRUNK] = beyond[tank.branch]
    parts = tuple(dataclasses.replace(part, pipe_length_beyond_m=tuple(sorted(given.items())))
                  for part, given in ((above, upper), (below, lower)))
    surge = study.surge
    if surge.method is SurgeMethod.JOUKOWSKY and surge.closure_time_s > 0 and any(
            _views_differ(part) for part in parts):
        raise InputError(f"{study.path or 'the study file'}: {what} with [surge] method = "
                         f"\"joukowsky\" and closure_time_s = {surge.closure_time_s:g} s is "
                         "not available in this version where a part above a tank still has "
                         "branches: design with closure_time_s = 0 (sudden, the larger "
                         "surge) and check the design with the slow closure")
    return parts[0], parts[1]


def _views_differ(part: Study) -> bool:
    """A scheme part some of whose lines, seen as routes of their own for the search
    (:func:`optimiser.milp.tree.line_study.line_study`), would take another slow-closure
    length than the part gives them."""
    return part.is_scheme and any(
        abs(reflection_length_m(line_study(part, line)) - reflection_length_m(part, line))
        > 1e-6 for line in study_lines(part))
