"""The cheapest uniform design: one option along the whole route.

This is what a hand calculation usually lands on; the saving of the optimised design
is reported against it. Each candidate is screened with the section arrays (the same
energy-line recurrence as contract section 5, vectorised over options) and the winner
is confirmed by the full check.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.analysis import check_design
from optimiser.milp.data import ProblemData
from optimiser.model import Design, Piece, PipeOption, Study

_TOLERANCE_M = 1e-9


@dataclass(frozen=True)
class UniformDesign:
    option: PipeOption
    cost: float


def uniform_feasible(data: ProblemData) -> np.ndarray:
    """(m,) True where one option laid along the whole route meets every limit."""
    study = data.study
    n, m = data.n_sections, data.n_options
    ok = data.admissible.all(axis=0)
    pipe = data.node_pipe_level_m
    limit = data.node_min_pressure_m
    k_node = data.node_point_k
    for k in range(data.n_scenarios):
        head = data.velocity_head_m[k]  # (n, m)
        loss = data.section_loss_m[k]
        point = k_node[:-1, None] * head
        point[0] += study.source.entrance_k * head[0]
        drops = np.empty((2 * n, m))
        drops[0::2] = point
        drops[1::2] = loss
        cumulative = np.cumsum(drops, axis=0)
        start = data.source_level_m[k] - cumulative[0::2]
        end = data.source_level_m[k] - cumulative[1::2]
        ok &= (start - head - pipe[:-1, None] >= limit[:-1, None] - _TOLERANCE_M).all(axis=0)
        ok &= (end - head - pipe[1:, None] >= limit[1:, None] - _TOLERANCE_M).all(axis=0)
        final = end[-1] - k_node[n] * head[-1]
        ok &= final - head[-1] - pipe[n] >= limit[n] - _TOLERANCE_M
        ok &= (final - study.outlet.exit_k * head[-1]
               >= study.outlet.required_head_m - _TOLERANCE_M)
    return ok


def cheapest_uniform(data: ProblemData, study: Study | None = None) -> UniformDesign | None:
    """Cheapest single option that passes the check along the whole route, or None.

    ``study``: the study the check judges (default ``data.study``; the optimiser passes
    the study as given when ``data`` is of its route split at the class limits)."""
    study = data.study if study is None else study
    total = data.section_cost.sum(axis=0)
    feasible = uniform_feasible(data)
    end = study.route.total_chainage_m
    for j in sorted(np.flatnonzero(feasible), key=lambda j: total[j]):
        option = study.catalogue[int(j)]
        result = check_design(study, Design((Piece(0.0, end, option),)), capacity=False)
        if result.ok:
            return UniformDesign(option, result.total_cost)
    return None
