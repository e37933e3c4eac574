"""The station of a pumped scheme in the tree's model (contract sections 7 and 9).

The station head of every scenario is a column of the trunk's model
(:func:`add_station_columns`: as :func:`optimiser.milp.pump_columns.add_pump_columns`,
the energy objective and the installed power, priced with the whole scheme's inflow),
added before its energy rows, so the trunk's energy starts at the
source level + H (:mod:`optimiser.milp.pressure_rows`) and every branch, which starts from
its parent's energy at the junction (:mod:`optimiser.milp.tree.model`), carries H too:
one head lifts the whole tree, as in the check (:mod:`optimiser.analysis.pumping`).
After Alperovits, E. & Shamir, U. (1977), Design of optimal water distribution systems,
*Water Resources Research* 13(6), 885-900 (pipes and pump heads in one linear programme).

Classes under pumping: every section's class must take the pumping pressure at its
start (the energy there, no point loss, less its lowest pipe level), in the staircase
form of :func:`optimiser.milp.pumps.class_rows.section_class_rows`. On the trunk these
are the rows of a pumped route (:func:`optimiser.milp.pumps.class_rows.add_class_rows`);
on a branch the energy starts at its junction's energy before the junction loss (at
least the energy anywhere below it, so conservative). The staircase needs the most
energy each section's start can have: the station heads at their upper bounds less the
least friction down the path from the source (:func:`top_energy_m`).
On a model of merged reaches (:mod:`optimiser.milp.tree.pumped_reaches`) the rows of a
reach of several sections are written relaxed, as on a pumped route
(:mod:`optimiser.milp.pumps.class_rows`): the energy at the reach's end and the highest
of its sections' lowest pipe levels, so every design of the fine model meets them.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import MARGIN_M, Formulation
from optimiser.milp.matrix import Affine
from optimiser.milp.pump_columns import head_bounds_m, pump_costs, working_limits_m
from optimiser.milp.pumps.class_rows import (
    ReachLevels,
    add_class_rows,
    fine_levels,
    section_class_rows,
)
from optimiser.model import Study

__all__ = ["add_line_class_rows", "add_station_columns", "top_energy_m"]


def add_station_columns(form: Formulation, study: Study) -> None:
    """The station head of every scenario on the trunk's model ``form`` (0 <= H <= its
    bound, :func:`optimiser.milp.pump_columns.head_bounds_m`), at the present value of
    its energy per metre, PWF x price x hours x rho g Q / (1000 eff) with Q the whole
    scheme's inflow (``study``: the scheme, not the trunk's own view); with
    ``station_cost_per_kw`` a column of installed power P >= rho g Q H / (1000 eff) in
    every scenario, at that cost per kW (contract section 9; exact, power is linear in
    H). ``form.pump_heads`` holds the head columns."""
    costs = pump_costs(study)
    upper = head_bounds_m(form)
    model = form.model
    form.pump_heads = [model.add_column(0.0, float(upper[k]),
                                        float(costs.energy_value_per_m[k]))
                       for k in range(form.data.n_scenarios)]
    if costs.station_cost_per_kw > 0:
        power = model.add_column(0.0, np.inf, costs.station_cost_per_kw)
        for k, head in enumerate(form.pump_heads):
            model.add_row([(power, 1.0), (head, -float(costs.kw_per_m[k]))], lower=0.0)


def top_energy_m(form: Formulation, start_top_m: np.ndarray | None) -> np.ndarray:
    """(K, n + 1) the most energy each node of the line can have per scenario: the
    trunk from the source level + the head bounds, a branch from its parent's most at
    the junction (``start_top_m``, (K,)), less the least friction of any option."""
    data = form.data
    if start_top_m is None:
        start_top_m = data.source_level_m + head_bounds_m(form)
    least = np.where(data.admissible[None], data.section_loss_m, np.inf).min(axis=2)
    least = np.where(np.isfinite(least), least, 0.0)
    return start_top_m[:, None] - np.concatenate(
        [np.zeros((data.n_scenarios, 1)), np.cumsum(least, axis=1)], axis=1)


def add_line_class_rows(form: Formulation, start_m: list[Affine] | None,
                        start_top_m: np.ndarray | None,
                        levels: ReachLevels | None = None) -> np.ndarray:
    """The class rows under pumping of one line of the tree (``start_m``: a branch's
    junction energy per scenario, None for the trunk; ``start_top_m`` its most, see
    :func:`top_energy_m`; ``levels``: the rows of each merged reach,
    :func:`optimiser.milp.pumps.class_rows.reach_levels`, None on the fine sections).
    Returns the line's most energy per node, for its branches."""
    data = form.data
    if levels is None:
        if data.free_order is not None:
            raise ValueError("a tree model of merged reaches needs the levels of its reaches")
        levels = fine_levels(data)
    tops = top_energy_m(form, start_top_m)
    if start_m is None:
        add_class_rows(form, levels)
        return tops
    limits = working_limits_m(form)
    top = tops[:, :-1].max(axis=0)
    need = [s for s in range(data.n_sections)
            if np.any(form.allowed[s] & (limits + levels.level_m[s] + MARGIN_M < top[s]))]
    if not need:
        return tops
    before = len(form.pump_indicators)
    energy = [Affine(list(e.terms), e.constant) for e in start_m]
    for s in range(max(need) + 1):
        after = _all_after(form, s, energy) if levels.at_end[s] else None
        if s in need:  # a merged reach: the energy at its end (relaxed)
            section_class_rows(form, s, energy if after is None else after, limits,
                               float(levels.level_m[s]), float(top[s]))
        energy = _all_after(form, s, energy) if after is None else after
    if not form.relaxed:
        form.n_binaries += len(form.pump_indicators) - before
    return tops


def _all_after(form: Formulation, s: int, energy: list[Affine]) -> list[Affine]:
    return [_after(form, k, s, energy[k]) for k in range(form.data.n_scenarios)]


def _after(form: Formulation, k: int, s: int, energy: Affine) -> Affine:
    """The energy at the end of section s in scenario k (friction and the per-km
    allowance of the options laid in it, no point loss), as a column of its own."""
    data = form.data
    terms = [(form.x[s, j], -float(data.section_loss_m[k, s, j]))
             for j in range(data.n_options) if (s, j) in form.x]
    column = form.model.add_column(-np.inf, np.inf)
    form.model.equal(Affine([(column, 1.0)]) - (energy + Affine(terms)), 0.0)
    return Affine([(column, 1.0)])
