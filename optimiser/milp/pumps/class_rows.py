"""Pressure classes under pumping, as rows of the split-pipe model, on sections or on
merged reaches.

The rows of one section ``s`` (the *fine* rows, :mod:`optimiser.milp.pump_columns`):
``w[s]`` is at least the energy at the start of s in every scenario, counting friction
and the per-km allowance and no point loss (so at least the energy anywhere in s), and
``w[s]`` less the lowest pipe level of s is held to the working limit of every option
laid in s, in the incremental (staircase) form of
:func:`optimiser.milp.pump_columns.section_class_rows`.

On a reach that merges several sections (:mod:`optimiser.milp.reaches`) the model does
not know where in the reach an option lies, so the rows are written *relaxed*: with the
energy at the end of the reach and the highest of the lowest pipe levels of its
sections. If a design of the fine model lays option j in some section s of the reach,
the fine row gives ``E(start of s) - lowest(s) <= limit(j)``, and ``E(end of reach) <=
E(start of s)``, ``lowest(s) <= max over the reach``: the relaxed row holds too. So a
reach model with relaxed rows admits every design of the fine model (a relaxation, its
bound valid), and a reach of one section carries exactly the fine rows.
:func:`loose_reaches` says which reaches a solution used beyond the fine rows (the
energy at their start and their lowest level break a class laid there): those are split
by the search, until none is left.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.milp.built_model import MARGIN_M, Formulation
from optimiser.milp.data import ProblemData
from optimiser.milp.matrix import Affine
from optimiser.milp.pump_columns import head_bounds_m, working_limits_m

__all__ = ["ReachLevels", "add_class_rows", "add_pumping_class_rows", "fine_levels",
           "loose_reaches", "reach_levels", "section_class_rows"]


@dataclass(frozen=True)
class ReachLevels:
    """Per section (or reach) of a model: the pipe level its class rows use and whether
    they take the energy at its end (a merged reach, relaxed) or at its start."""

    level_m: np.ndarray
    at_end: np.ndarray
    lowest_m: np.ndarray
    """The lowest pipe level anywhere in it (the fine row's level for a whole reach)."""


def fine_levels(data: ProblemData) -> ReachLevels:
    """The rows of every section of the fine model: start energy, lowest pipe level."""
    pipe = data.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    return ReachLevels(lowest, np.zeros(data.n_sections, dtype=bool), lowest)


def reach_levels(fine: ProblemData, first: np.ndarray, last: np.ndarray) -> ReachLevels:
    """The rows of reaches ``first[r]..last[r]`` of ``fine``: a one-section reach has the
    fine rows, a longer one the relaxed rows (module docstring)."""
    pipe = fine.node_pipe_level_m
    lowest = np.minimum(pipe[:-1], pipe[1:])
    high = np.maximum.reduceat(lowest, first)
    low = np.minimum.reduceat(lowest, first)
    merged = last > first
    return ReachLevels(np.where(merged, high, low), merged, low)


def add_class_rows(form: Formulation, levels: ReachLevels) -> None:
    """The class rows of ``form`` (on sections or reaches, see :class:`ReachLevels`);
    nothing without a pump or where no class can be exceeded. Adds the indicators to
    ``form.n_binaries`` when the model is not relaxed."""
    data = form.data
    if data.study.pump is None or not form.pump_heads:
        return
    limits = working_limits_m(form)
    top = _top_energy_m(form)
    need = [s for s in range(data.n_sections)
            if np.any(form.allowed[s] & (limits + levels.level_m[s] + MARGIN_M < top[s]))]
    if not need:
        return
    model = form.model
    before = len(form.pump_indicators)
    energy = [Affine([(form.pump_heads[k], 1.0)], float(data.source_level_m[k]))
              for k in range(data.n_scenarios)]
    wanted = set(need)
    earlier: dict[float, int] = {}
    for s in range(max(need) + 1):
        after = []
        for k in range(data.n_scenarios):
            terms = [(form.x[s, j], -float(data.section_loss_m[k, s, j]))
                     for j in range(data.n_options) if (s, j) in form.x]
            column = model.add_column(-np.inf, np.inf)
            model.equal(Affine([(column, 1.0)]) - (energy[k] + Affine(terms)), 0.0)
            after.append(Affine([(column, 1.0)]))
        current: dict[float, int] = {}
        if s in wanted:
            current = section_class_rows(form, s, after if levels.at_end[s] else energy,
                                         limits, float(levels.level_m[s]), float(top[s]))
        if s > 0 and levels.level_m[s - 1] <= levels.level_m[s]:
            _ordered(form, earlier, current)
        earlier = current
        energy = after
    if not form.relaxed:
        form.n_binaries += len(form.pump_indicators) - before


def _ordered(form: Formulation, upstream: dict[float, int],
             downstream: dict[float, int]) -> None:
    """A class level exceeded downstream is exceeded upstream too: the energy falls along
    the route and, here, the level the rows use does not, so the least energy each row
    must take falls as well (the indicators a design needs are ordered)."""
    for level, column in downstream.items():
        if level in upstream:
            form.model.add_row([(upstream[level], 1.0), (column, -1.0)], lower=0.0)


def _top_energy_m(form: Formulation) -> np.ndarray:
    """(n,) the highest energy the start of each section can have in any scenario (the
    station heads at their upper bounds, friction at its least)."""
    data = form.data
    least = np.where(data.admissible[None], data.section_loss_m, np.inf).min(axis=2)
    upper = head_bounds_m(form)
    top = (data.source_level_m + upper)[:, None] - np.concatenate(
        [np.zeros((data.n_scenarios, 1)), np.cumsum(least, axis=1)[:, :-1]], axis=1)
    return top.max(axis=0)


def loose_reaches(form: Formulation, levels: ReachLevels) -> np.ndarray:
    """(R,) merged reaches whose solution breaks a fine row: the energy at the reach's
    start (no point loss) less its lowest pipe level is above the working limit of an
    option the solution lays in it."""
    data = form.data
    values = form.values
    assert values is not None
    fractions = form.fractions()
    heads = np.array([values[c] for c in form.pump_heads])
    losses = np.einsum("ksj,sj->ks", data.section_loss_m, fractions)
    start = (data.source_level_m + heads)[:, None] - np.concatenate(
        [np.zeros((data.n_scenarios, 1)), np.cumsum(losses, axis=1)[:, :-1]], axis=1)
    limits = working_limits_m(form) - MARGIN_M
    weakest = np.where(fractions > 1e-9, limits[None, :], np.inf).min(axis=1)
    pressure = start.max(axis=0) - levels.lowest_m
    return levels.at_end & (pressure > weakest + 1e-6)


def add_pumping_class_rows(form: Formulation) -> None:
    """The fine rows of every section (called by :func:`optimiser.milp.formulation.build`);
    nothing on a model of merged reaches, whose caller writes the rows of its reaches
    (:func:`add_class_rows` with :func:`reach_levels`)."""
    if form.data.free_order is None:
        add_class_rows(form, fine_levels(form.data))


def section_class_rows(form: Formulation, s: int, energy: list[Affine],
                       limits: np.ndarray, lowest_m: float, w_top: float
                       ) -> dict[float, int]:
    """``w >= energy[k]`` for every scenario, and the incremental (staircase) form of
    the classes: with the working limits L1 < L2 < ... of the options of section s
    that ``w`` could exceed and indicators d1 >= d2 >= ... (binary unless relaxed),
    ``w - lowest level <= L1 + (L2 - L1) d1 + (L3 - L2) d2 + ...`` (the last step up to
    the most ``w`` can be), and the options of limit <= Lt laid on at most ``1 - dt``
    of the section. The convex hull of the choice of a class level for one section,
    tighter than a big-M row per level. Returns the indicator of each level."""
    model = form.model
    options = [j for j in range(form.data.n_options) if (s, j) in form.x]
    top = w_top - lowest_m
    levels = sorted({float(limits[j]) - MARGIN_M for j in options})
    below = [level for level in levels if level < top]
    w = model.add_column(-np.inf, np.inf)
    for expr in energy:
        model.at_least(Affine([(w, 1.0)]) - expr, 0.0)
    ceiling = min(levels[-1], top)  # no option takes more than the largest limit
    steps = [*below[1:], ceiling] if below and below[-1] < ceiling else below[1:]
    indicators: dict[float, int] = {}
    if not below:
        return indicators
    terms: list[tuple[int, float]] = [(w, 1.0)]
    previous = None
    for level, upper in zip(below, [*steps, ceiling][:len(below)], strict=True):
        if upper <= level:
            break
        over = model.add_column(0.0, 1.0, integer=not form.relaxed)
        form.pump_indicators.append(over)
        indicators[level] = over
        terms.append((over, -(upper - level)))
        weak = [(form.x[s, j], 1.0) for j in options if limits[j] - MARGIN_M <= level]
        model.at_most(Affine([*weak, (over, 1.0)]), 1.0)
        if previous is not None:  # a higher limit exceeded only if the lower one is
            model.add_row([(previous, 1.0), (over, -1.0)], lower=0.0)
        previous = over
    # w - lowest <= L1 + sum (next - this) d
    model.at_most(Affine(terms), below[0] + lowest_m)
    return indicators
