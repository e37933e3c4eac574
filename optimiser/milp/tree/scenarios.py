"""Scenarios a scheme's models can leave out, exactly: those another one dominates.

Every row of a line's models in scenario k (:mod:`optimiser.milp.pressure_rows`: the
pressure at a node or inside a section, the down-surge rows, the delivery, the junction
energies handed to the branches) reads

    source level_k - sum of (section loss_k + point K x velocity head_k) x fractions
        - (velocity head_k [+ surge head]) x fractions  >=  level + limit,

with the same right-hand side, the same fractions and scenario-free surge heads in
every scenario. If, on every line, a scenario d has a source level no higher than any
other's and, for every admissible (section, option) pair, a section loss and a velocity
head no smaller, then every energy of every design is no higher in d, every deduction no
smaller, and each row of d implies the same row of every other scenario. So the models
with d alone have exactly the feasible designs of the models with every scenario (the
junction energies of the branches, equal in d, included): the same optimum and the same
bounds, with fewer rows. Velocity windows and pressure classes are already in the
admissible pairs, which do not change. The check still judges every design in every
scenario, as always.

Typical case: a fire flow on aged pipe (more flow in every section, rougher pipe) with
the same source level dominates the peak and the night.
"""

from __future__ import annotations

import dataclasses
import time

import numpy as np

from optimiser.milp.data import ProblemData
from optimiser.milp.outcome import Stage
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.search.state import SearchState
from optimiser.milp.tree.problem import TreeProblem
from optimiser.model.status import Status

TOLERANCE_M = 1e-12
"""Head [m] by which a dominating scenario may fall short of another (rounding only)."""


def dominates(data: ProblemData, d: int) -> bool:
    """Scenario ``d`` of ``data`` dominates every other scenario on this line."""
    admissible = data.admissible[None, :, :]
    for values in (data.section_loss_m, data.velocity_head_m):
        short = np.where(admissible, values - values[d][None, :, :], 0.0)
        if short.size and float(short.max()) > TOLERANCE_M:
            return False
    return bool((data.source_level_m[d] <= data.source_level_m + TOLERANCE_M).all())


def dominant_scenario(datas: list[ProblemData]) -> int | None:
    """A scenario dominating every other on every line (the first such), or None (also
    when there is only one scenario: nothing to leave out)."""
    count = datas[0].n_scenarios
    if count < 2:
        return None
    for d in range(count):
        if all(dominates(data, d) for data in datas):
            return d
    return None


def on_scenario(data: ProblemData, d: int) -> ProblemData:
    """``data`` with scenario ``d`` alone (its line study too, so the models and the
    diagnosis read one scenario)."""
    keep = slice(d, d + 1)
    study = dataclasses.replace(data.study, scenarios=(data.study.scenarios[d],))
    return dataclasses.replace(
        data, study=study, flow_m3_s=data.flow_m3_s[keep],
        velocity_m_s=data.velocity_m_s[keep], velocity_head_m=data.velocity_head_m[keep],
        gradient=data.gradient[keep], section_loss_m=data.section_loss_m[keep],
        source_level_m=data.source_level_m[keep])


def run_scenario_reduction(state: SearchState, problem: TreeProblem) -> None:
    """Keep only a dominating scenario in every line's data, if there is one (recorded
    as a step of the run)."""
    if any(data.tanks is not None for data in problem.datas):
        return  # tanks restart the energy line: not covered by the argument above
    begun = time.perf_counter()
    d = dominant_scenario(problem.datas)
    if d is None:
        return
    problem.datas[:] = [on_scenario(data, d) for data in problem.datas]
    state.data = problem.datas[0]
    name = problem.study.scenarios[d].name
    state.stages.append(Stage(
        StageKind.DOMINANCE, f"scenarios dominated by {name!r} on every line",
        Status.DONE, None, None, time.perf_counter() - begun, 0, 0, 0,
        f"the models keep {name!r} alone: on every line its source level is no higher "
        "and its head losses and velocity heads no smaller in every admissible pair, "
        "so its rows imply the others' (the check still judges every scenario)"))
