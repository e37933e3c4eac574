"""Numbers the optimiser needs, computed once from a study (no solver here).

Everything is indexed by survey section ``s`` (route sections after the loader put nodes
at offtakes and fittings), node ``i`` (``n + 1`` of them) and catalogue option ``j``;
scenario arrays carry a leading axis ``k``. The hydraulics come from
:mod:`optimiser.analysis.flows` and :mod:`optimiser.hydraulics`, the same functions the
check uses, so the optimiser and the check cannot disagree on a formula.

Two facts make a split-pipe linear programme exact here (Karmeli, D., Gadish, Y. &
Meyers, S. (1968), Design of optimal water distribution networks, J. Pipeline Div. ASCE
94(PL1)): the flow of every section is known in every scenario (a gravity main is a
chain; flow = outlet flow + offtakes downstream), so the friction gradient of each
option in each section is a constant, and the head lost over a section is linear in the
lengths of the options laid in it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from optimiser.analysis.flows import flow_below_m3_s, friction_gradient, node_point_k
from optimiser.analysis.limits import class_holds, node_min_pressure_m, within_velocity_window
from optimiser.hydraulics.gradeline import section_loss_m, static_head_m
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.model import Study

SCREEN_TOLERANCE_M = 1e-3
"""A check point is screened out only if it clears its minimum by this much more than
the worst velocity head could take away (guards against rounding)."""


@dataclass
class ProblemData:
    """Section, node and option arrays of one study, for the formulation and diagnosis."""

    study: Study
    n_sections: int
    n_options: int
    node_chainage_m: np.ndarray  # (n+1,)
    node_pipe_level_m: np.ndarray  # (n+1,)
    node_min_pressure_m: np.ndarray  # (n+1,)
    node_point_k: np.ndarray  # (n+1,) fitting K at each node (entrance K not included)
    chainage_length_m: np.ndarray  # (n,)
    length_m: np.ndarray  # (n,) pipe length of each section
    zone_factor: np.ndarray  # (n,)
    section_cost: np.ndarray  # (n, m) cost of laying the whole section in option j
    flow_m3_s: np.ndarray  # (K, n)
    velocity_m_s: np.ndarray  # (K, n, m)
    velocity_head_m: np.ndarray  # (K, n, m)
    gradient: np.ndarray  # (K, n, m) friction gradient J [m/m]
    section_loss_m: np.ndarray  # (K, n, m) friction + per-km allowance over the section
    source_level_m: np.ndarray  # (K,)
    static_demand_m: np.ndarray  # (n,) top water - lowest pipe level + surge allowance
    class_ok: np.ndarray  # (n, m) pressure class can take the static head
    velocity_ok: np.ndarray  # (n, m) velocity window met in every limited scenario
    admissible: np.ndarray  # (n, m)
    order: np.ndarray  # (m,) option indices by descending internal diameter
    rank: np.ndarray  # (m,) position of each option in ``order``
    screened_up: np.ndarray  # (n+1,) upstream side of node i cannot bind
    screened_down: np.ndarray  # (n+1,) downstream side of node i cannot bind
    screened_interior: np.ndarray  # (n,) no point inside section s can bind
    free_order: np.ndarray | None = None
    """(n,) sections whose pieces may be laid in any order (merged reaches of a reduced
    model, :mod:`optimiser.milp.reduce`); None: none."""
    chainage_per_share_m: np.ndarray | None = None
    """(n,) largest chainage a whole section's worth of one option can cover (merged
    reaches: slopes differ along a reach); None: the chainage length."""

    @property
    def n_scenarios(self) -> int:
        return len(self.study.scenarios)

    def section_order(self, s: int, allowed: np.ndarray | None = None) -> list[int]:
        """Admissible (and allowed) options of section s, in the order pieces are laid
        inside a section: descending internal diameter (ascending velocity head)."""
        mask = self.admissible[s] if allowed is None else self.admissible[s] & allowed[s]
        return [int(j) for j in self.order if mask[j]]


def prepare(study: Study) -> ProblemData:
    """Compute the optimiser's arrays for ``study``."""
    route = study.route
    catalogue = study.catalogue
    n = route.n_sections
    m = len(catalogue)
    chainage = route.chainage_m
    pipe = route.pipe_level_m
    diameter = catalogue.internal_diameter_m
    roughness = catalogue.roughness_mm
    c_value = catalogue.hazen_williams_c

    node_k = node_point_k(study, chainage)
    node_min = node_min_pressure_m(study, chainage)

    length = route.length_m
    factor = np.array([study.costs.factor(z) for z in route.zones])
    section_cost = catalogue.cost_per_m[None, :] * (factor * length)[:, None]

    flows, velocities, heads, gradients, losses, levels = [], [], [], [], [], []
    for scenario in study.scenarios:
        q = flow_below_m3_s(study, scenario, chainage[:-1])
        v = velocity_m_s(q[:, None], diameter[None, :])
        h = velocity_head_m(v)
        j = friction_gradient(study, scenario, q[:, None], diameter[None, :],
                              roughness[None, :], c_value[None, :])
        flows.append(q)
        velocities.append(v)
        heads.append(h)
        gradients.append(j)
        losses.append(section_loss_m(length[:, None], j, study.local_k_per_km, h))
        levels.append(scenario.source_level_m)

    lowest = np.minimum(pipe[:-1], pipe[1:])
    static_demand = static_head_m(study.source.top_water_level_m, lowest,
                                  study.surge_allowance_m)
    class_ok = class_holds(static_demand[:, None], catalogue.allowable_head_m[None, :])
    velocity_ok = np.ones((n, m), dtype=bool)
    rules = study.rules
    for scenario, v in zip(study.scenarios, velocities, strict=True):
        if scenario.velocity_limits:
            velocity_ok &= within_velocity_window(v, rules)
    admissible = class_ok & velocity_ok

    # Descending internal diameter; ties by ascending cost then catalogue position, so
    # the order is total and the same in every section and scenario.
    order = np.array(sorted(range(m), key=lambda j: (-diameter[j], catalogue[j].cost_per_m, j)),
                     dtype=int)
    rank = np.empty(m, dtype=int)
    rank[order] = np.arange(m)

    head = np.array(heads)
    data = ProblemData(
        study=study, n_sections=n, n_options=m, node_chainage_m=chainage.copy(),
        node_pipe_level_m=pipe, node_min_pressure_m=node_min, node_point_k=node_k,
        chainage_length_m=route.chainage_length_m, length_m=length, zone_factor=factor,
        section_cost=section_cost, flow_m3_s=np.array(flows),
        velocity_m_s=np.array(velocities), velocity_head_m=head,
        gradient=np.array(gradients), section_loss_m=np.array(losses),
        source_level_m=np.array(levels), static_demand_m=static_demand,
        class_ok=class_ok, velocity_ok=velocity_ok, admissible=admissible, order=order,
        rank=rank, screened_up=np.zeros(n + 1, dtype=bool),
        screened_down=np.zeros(n + 1, dtype=bool),
        screened_interior=np.zeros(n, dtype=bool))
    _screen(data)
    return data


def rescreen(data: ProblemData) -> None:
    """Screen the check points again after options left ``data.admissible`` (fewer
    options, smaller largest velocity head: more points that cannot bind)."""
    _screen(data)


def _screen(data: ProblemData) -> None:
    """Mark check points that no feasible design can bring down to their minimum.

    Energy falls monotonically downstream and every feasible design keeps the energy at
    node i at least at ``pipe_i + min_i`` (its pressure limit, velocity head >= 0) and
    at the outlet at least at ``required_head_m``. So every point of section s (its end
    included) has energy >= ``floor_s = max(required, max over nodes i > s of
    pipe_i + min_i)``. A point whose pipe level and limit leave ``floor_s`` above them by
    more than the largest velocity head any admissible option can have there is met by
    every feasible design: its constraint is redundant and is left out of the model.
    This is exact (it removes no design), and it is what keeps the model small.
    """
    study = data.study
    n = data.n_sections
    pipe = data.node_pipe_level_m
    need = pipe + data.node_min_pressure_m
    suffix = np.maximum.accumulate(need[::-1])[::-1]  # max over nodes >= i
    floor_end = np.maximum(study.outlet.required_head_m, suffix[1:])  # (n,) end of s
    heads = np.where(data.admissible[None, :, :], data.velocity_head_m, 0.0)
    head_max = heads.max(axis=(0, 2)) if heads.size else np.zeros(n)  # (n,)
    tol = SCREEN_TOLERANCE_M
    up = np.zeros(n + 1, dtype=bool)
    down = np.zeros(n + 1, dtype=bool)
    up[0] = True  # no upstream side at the source
    up[1:] = floor_end - head_max - pipe[1:] - data.node_min_pressure_m[1:] >= tol
    down[:-1] = floor_end - head_max - pipe[:-1] - data.node_min_pressure_m[:-1] >= tol
    down[-1] = (study.outlet.required_head_m - head_max[-1] - pipe[-1]
                - data.node_min_pressure_m[-1] >= tol)
    interior = (floor_end - head_max - np.maximum(pipe[:-1], pipe[1:])
                - study.min_pressure_m >= tol)
    data.screened_up[:] = up
    data.screened_down[:] = down
    data.screened_interior[:] = interior


def dominated_options(data: ProblemData) -> np.ndarray:
    """Options no cheapest design needs: (m,) mask of options ``a`` such that another
    option ``b`` is admissible in every section where ``a`` is and there costs no more,
    loses no more head and has no larger velocity head in any scenario (so no smaller
    internal diameter), and no other remaining option has an internal diameter between
    theirs (inclusive).

    Replacing every piece of ``a`` by ``b`` in place then keeps each piece where it was
    and its place in the section order (descending internal diameter): pieces of the
    same option that become adjacent merge, so changes only fall and pieces only grow;
    energy nowhere falls and velocity heads nowhere rise, so every pressure and the
    outlet head stay met; sizes stay non-increasing where they were (nothing remains
    between ``a`` and ``b`` in size). So the options left hold a design at least as
    cheap as any design that uses ``a``. This is the exact, rules-safe form of "drop
    options off the lower hull of cost against head loss" (with rules on, an option off
    that hull in one stretch may still be worth carrying on to save a change, so only
    options dominated wherever they are admissible go). Removal is greedy and
    repeated until nothing more goes.
    """
    m = data.n_options
    admissible = data.admissible
    diameter = data.study.catalogue.internal_diameter_mm
    tolerance = 1e-12
    pairs: list[tuple[int, int]] = []
    for a in range(m):
        where = admissible[:, a]
        if not where.any():
            continue
        for b in range(m):
            if b == a or diameter[b] < diameter[a] or not admissible[where, b].all():
                continue
            if (data.section_cost[where, b] <= data.section_cost[where, a] + tolerance).all() \
                    and (data.section_loss_m[:, where, b]
                         <= data.section_loss_m[:, where, a] + tolerance).all() \
                    and (data.velocity_head_m[:, where, b]
                         <= data.velocity_head_m[:, where, a] + tolerance).all():
                pairs.append((a, b))
    remaining = admissible.any(axis=0)
    gone = np.zeros(m, dtype=bool)
    changed = True
    while changed:
        changed = False
        for a, b in pairs:
            if gone[a] or not remaining[b]:
                continue
            low, high = diameter[a], diameter[b]
            between = remaining & (diameter >= low) & (diameter <= high)
            between[[a, b]] = False
            if not between.any():
                gone[a] = True
                remaining[a] = False
                changed = True
    return gone
