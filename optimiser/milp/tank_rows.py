"""Rows of the model at break-pressure tanks (contract section 8).

Part of :mod:`optimiser.milp.formulation`. At a node i where the study's own tank
stands, in every scenario k:

- inflow: E_up - K_in h_in >= WL;
- restart: the energy leaving is WL - K_out h_out;

with h_in and h_out the largest velocity heads of the options the model may lay in the
sections arriving and leaving (conservative: the check takes the pipes laid, and a
model with a site at every point would otherwise need a last-piece indicator in every
section; the overstatement is K V^2/2g of the fastest admissible pipe less that of the
pipe laid, a few decimetres at most under the velocity limit).

Where ``design`` may add a tank, a binary ``t[i]`` (cost: the price of a tank) chooses
it, and the rows become, with a free column ``e`` for the energy leaving:

- e <= E_up (always valid: a tank never raises the energy, since it only fills when
  E_up - K_in h_in >= WL);
- e <= WL - K_out h_out + M_e (1 - t), M_e = highest source level - WL + 1;
- E_up - K_in h_in >= WL - M_in (1 - t), M_in = WL - required head + 1
  (every energy of a feasible design is at least the outlet's required head).

Only lower bounds on energy appear elsewhere in the model (pressures, the outlet, the
inflow rows), so the solver takes ``e`` at its largest value: these upper bounds are the
energy restart exactly. The static line (:func:`add_static_rows`): an option admissible
only below a new tank (``TankData.conditional``) may be laid in a section only if some
tank above it has a water level low enough for its class. At most ``max_count`` new
tanks.
"""

from __future__ import annotations

import numpy as np

from optimiser.milp.built_model import MARGIN_M, Formulation
from optimiser.milp.matrix import Affine, var


def tank_column(form: Formulation, node: int) -> int:
    """The binary t[node] (created on first use, priced at the cost of a new tank)."""
    column = form.tank_columns.get(node)
    if column is None:
        tanks = form.data.tanks
        assert tanks is not None
        column = form.model.add_column(0.0, 1.0, tanks.cost, integer=not form.relaxed)
        form.tank_columns[node] = column
    return column


def largest_head_m(form: Formulation, k: int, s: int) -> float:
    """Largest velocity head [m] of an option the model may lay in section s, scenario k
    (the conservative velocity head of a tank's inlet and outlet losses)."""
    heads = np.where(form.allowed[s], form.data.velocity_head_m[k, s], 0.0)
    return float(heads.max())


def restart_at_tank(form: Formulation, k: int, node: int, arriving: Affine) -> Affine:
    """Inflow row at ``node`` in scenario k and the energy leaving it (before the
    node's own fitting loss, which the section's rows add)."""
    data = form.data
    tanks = data.tanks
    assert tanks is not None
    level = float(tanks.level_m[node])
    head_in = Affine([], largest_head_m(form, k, node - 1))
    head_out = Affine([], largest_head_m(form, k, node))
    filled = arriving - head_in.scaled(tanks.inlet_k)
    if tanks.fixed[node]:
        form.model.at_least(filled, level + MARGIN_M)
        return Affine([], level) - head_out.scaled(tanks.outlet_k)
    t = tank_column(form, node)
    study = data.study
    big_in = level - study.outlet.required_head_m + 1.0
    form.model.at_least(filled - var(t, big_in), level - big_in + MARGIN_M)
    big_e = max(float(data.source_level_m.max()) - level, 0.0) + 1.0
    leaving = form.model.add_column(-np.inf, np.inf)
    form.model.at_most(var(leaving) - arriving, 0.0)
    form.model.at_most(var(leaving) + head_out.scaled(tanks.outlet_k) + var(t, big_e),
                       level + big_e)
    return var(leaving)


def add_static_rows(form: Formulation) -> None:
    """Options admissible only below a new tank, and ``max_count``.

    x[s, j] <= sum of t[i] over the sites i above section s (since the last fixed tank)
    whose water level is at most ``threshold[s, j]``. Exact: the levels of the tanks of
    a feasible design fall strictly downstream (a tank fills only from energy above its
    level, and the energy leaving a tank is below its level), so the static line over s
    is the level of the lowest tank above it, and it is at most the threshold if and
    only if some tank above s has a level at most the threshold.

    Written short: the sites that qualify are nearly a run ending at s (levels fall
    along a falling route), so the sum is a difference of two running sums of the tank
    binaries (:func:`_running_sums`) less the few sites of that run that do not qualify.
    The same rows, with a few nonzeros each instead of one per site above (tens of
    millions on a 2,000-section route).
    """
    tanks = form.data.tanks
    if tanks is None or not tanks.any_candidate:
        return
    model = form.model
    sites = np.flatnonzero(tanks.candidate)
    fixed = np.flatnonzero(tanks.fixed)
    running = _running_sums(form, sites) if tanks.conditional.any() else []
    for (s, j), column in form.x.items():
        if not tanks.conditional[s, j]:
            continue
        above_fixed = fixed[fixed <= s]
        after = int(above_fixed[-1]) if len(above_fixed) else 0
        first, last = np.searchsorted(sites, [after, s], side="right")
        low = tanks.level_m[sites[first:last]] <= tanks.threshold_m[s, j]
        model.at_most(Affine([(column, 1.0), *_sum_of_low(form, running, sites, first, low)]),
                      0.0)
    if tanks.max_count is not None:
        columns = [tank_column(form, int(i)) for i in sites]
        model.at_most(Affine([(c, 1.0) for c in columns]), float(tanks.max_count))


_SHORT_RUN = 4
"""Runs of at most this many sites are written term by term."""


def _running_sums(form: Formulation, sites: np.ndarray) -> list[int]:
    """Columns r[k] = t[sites[0]] + ... + t[sites[k]] (one equality row each)."""
    model = form.model
    columns: list[int] = []
    for k, site in enumerate(sites.tolist()):
        column = model.add_column(0.0, float(k + 1))
        terms = [(column, 1.0), (tank_column(form, site), -1.0)]
        if columns:
            terms.append((columns[-1], -1.0))
        model.equal(Affine(terms), 0.0)
        columns.append(column)
    return columns


def _sum_of_low(form: Formulation, running: list[int], sites: np.ndarray, first: int,
                low: np.ndarray) -> list[tuple[int, float]]:
    """Terms of minus the sum of t over the sites ``sites[first:][low]``."""
    if not low.any():
        return []
    begin = first + int(np.argmax(low))  # the first site that qualifies
    end = first + len(low)  # one past the last site above s
    if end - begin <= _SHORT_RUN:
        return [(tank_column(form, int(sites[k])), -1.0)
                for k in range(begin, end) if low[k - first]]
    terms = [(running[end - 1], -1.0)]
    if begin > 0:
        terms.append((running[begin - 1], 1.0))
    terms += [(tank_column(form, int(sites[k])), 1.0)
              for k in range(begin, end) if not low[k - first]]
    return terms


def chosen_nodes(form: Formulation) -> list[int]:
    """Nodes whose tank binary is 1 in the solution."""
    if form.values is None:
        return []
    return sorted(node for node, column in form.tank_columns.items()
                  if form.values[column] > 0.5)
