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

import dataclasses
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.flows import (
    flow_below_m3_s,
    friction_gradient,
    line_flows_m3_s,
    node_point_k,
)
from optimiser.analysis.limits import node_min_pressure_m, within_velocity_window
from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.hydraulics.gradeline import section_loss_m, static_head_m
from optimiser.hydraulics.local_losses import velocity_head_m, velocity_m_s
from optimiser.milp.tank_data import TankData, has_tanks, tank_data
from optimiser.milp.tree.line_study import line_study
from optimiser.milp.wave_classes import carry_mask, wave_conflicts
from optimiser.milp.wave_classes import class_ok as wave_class_ok
from optimiser.model import Study, SurgeMethod
from optimiser.model.lines import Line

SCREEN_TOLERANCE_M = 1e-3
"""A check point is screened out only if it clears its minimum by this much more than
the worst velocity head could take away (guards against rounding)."""


@dataclass(frozen=True)
class ProblemData:
    """Section, node and option arrays of one study, for the formulation and diagnosis.

    Immutable: a step that changes the problem (options set aside by dominance, merged
    reaches, check points left out) makes a new one with :func:`dataclasses.replace`."""

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
    class_ok: np.ndarray  # (n, m) pressure class can take the static head (and surge)
    velocity_ok: np.ndarray  # (n, m) velocity window met in every limited scenario
    admissible: np.ndarray  # (n, m)
    order: np.ndarray  # (m,) option indices by descending internal diameter
    rank: np.ndarray  # (m,) position of each option in ``order``
    screened_up: np.ndarray  # (n+1,) upstream side of node i cannot bind
    screened_down: np.ndarray  # (n+1,) downstream side of node i cannot bind
    screened_interior: np.ndarray  # (n,) no point inside section s can bind
    free_order: np.ndarray | None = None
    """(n,) sections whose pieces may be laid in any order (merged reaches of a reduced
    model, :mod:`optimiser.milp.reaches`); None: none."""
    chainage_per_share_m: np.ndarray | None = None
    """(n,) largest chainage a whole section's worth of one option can cover (merged
    reaches: slopes differ along a reach); None: the chainage length."""
    surge_m: np.ndarray | None = None
    """(n, m) surge head of option j in section s for the down-surge rows, at least the
    check's for any piece of j laid there (its largest velocity over the run of sections
    where j is admissible); None: the study sets no ``min_transient_pressure_m``."""
    surge_own_m: np.ndarray | None = None
    """(n, m) surge head of option j at section s's own largest velocity: at most the
    check's for a piece of j there (for the any-order relaxation)."""
    tanks: TankData | None = None
    """Break-pressure tanks that stand or may stand on the route (None: none); the
    static line and class admissibility below them (:mod:`optimiser.milp.tank_data`)."""
    wave_conflicts: np.ndarray | None = None
    """(C, 3) rows (f, c, j): no piece of option j may run from section f into section c
    (surge by wave speed, :mod:`optimiser.milp.wave_classes`); None or empty: none."""
    surge_carry: np.ndarray | None = None
    """(n, m) a piece of j may bring into s a velocity above j's own there (down-surge
    rows by wave speed, :mod:`optimiser.milp.carried_surge`); None: no such rows."""
    surge_slope: np.ndarray | None = None
    """(n, m) surge head per m/s of velocity of option j in section s [m s/m]."""

    @property
    def n_scenarios(self) -> int:
        return len(self.study.scenarios)

    def section_order(self, s: int, allowed: np.ndarray | None = None) -> list[int]:
        """Admissible (and allowed) options of section s, in the order pieces are laid
        inside a section: descending internal diameter (ascending velocity head)."""
        mask = self.admissible[s] if allowed is None else self.admissible[s] & allowed[s]
        return self.order[mask[self.order]].tolist()


def prepare(study: Study, line: Line | None = None) -> ProblemData:
    """Compute the optimiser's arrays for ``study``, or for one ``line`` of a scheme: the
    line seen as a single route (``data.study`` is :func:`line_study`), its flows from the
    whole scheme (contract section 7); screening stays exact (:func:`screened`)."""
    scheme, study = study, (study if line is None else line_study(study, line))
    route = study.route
    catalogue = study.catalogue
    n = route.n_sections
    m = len(catalogue)
    chainage = route.chainage_m
    pipe = route.pipe_level_m

    node_k = node_point_k(study, chainage)
    node_min = node_min_pressure_m(study, chainage)

    length = route.length_m
    factor = np.array([study.costs.factor(z) for z in route.zones])
    section_cost = catalogue.cost_per_m[None, :] * (factor * length)[:, None]

    flows, velocities, heads, gradients, losses, levels = _scenario_arrays(
        scheme, study, line, chainage, length)
    velocity_ok = _velocity_ok(study, velocities)
    lowest = np.minimum(pipe[:-1], pipe[1:])
    static_head = static_head_m(study.source.top_water_level_m, lowest, 0.0)
    tanks = _tank_data_of(study, lowest, np.array(velocities))
    reflection = None if tanks is None else tanks.reflection_min_m  # L restarts at tanks
    if tanks is not None:  # the lowest static line any choice of tanks gives (section 8)
        static_head = tanks.static_min_m - lowest
    static_demand = static_head + study.surge_allowance_m
    # Own velocity: a relaxation of the check's piece rule; the pairs of sections a piece
    # may not span make it exact in the models (milp/wave_classes.py).
    class_ok = wave_class_ok(study, static_head, np.array(velocities), reflection)
    admissible = class_ok & velocity_ok

    order, rank = _option_order(study)
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
        screened_interior=np.zeros(n, dtype=bool), tanks=tanks,
        **_surge_data(study, static_head, np.array(velocities), admissible, reflection))
    return screened(data)


def _scenario_arrays(scheme: Study, study: Study, line: Line | None, chainage_m: np.ndarray,
                     length_m: np.ndarray) -> tuple[list[np.ndarray], ...]:
    """Per scenario: section flows (n,), velocities, velocity heads, friction gradients
    and section losses (n, m), and the source level; ``scheme`` gives a line's flows."""
    catalogue = study.catalogue
    diameter = catalogue.internal_diameter_m
    flows, velocities, heads, gradients, losses, levels = [], [], [], [], [], []
    for scenario in study.scenarios:
        q = flow_below_m3_s(study, scenario, chainage_m[:-1]) if line is None \
            else line_flows_m3_s(scheme, scenario, line, chainage_m[:-1])
        v = velocity_m_s(q[:, None], diameter[None, :])
        h = velocity_head_m(v)
        # A chain carries few distinct flows (the outlet's plus the offtakes downstream):
        # friction once per distinct flow and option, then spread over the sections.
        distinct, which = np.unique(q, return_inverse=True)
        j = friction_gradient(study, scenario, distinct[:, None], diameter[None, :],
                              catalogue.roughness_mm[None, :],
                              catalogue.hazen_williams_c[None, :])[which]
        flows.append(q)
        velocities.append(v)
        heads.append(h)
        gradients.append(j)
        losses.append(section_loss_m(length_m[:, None], j, study.local_k_per_km, h))
        levels.append(scenario.source_level_m)
    return flows, velocities, heads, gradients, losses, levels


def _velocity_ok(study: Study, velocities: list[np.ndarray]) -> np.ndarray:
    """(n, m) the velocity window met in every scenario that limits velocities."""
    velocity_ok = np.ones(velocities[0].shape, dtype=bool)
    for scenario, v in zip(study.scenarios, velocities, strict=True):
        if scenario.velocity_limits:
            velocity_ok &= within_velocity_window(v, study.rules)
    return velocity_ok


def _option_order(study: Study) -> tuple[np.ndarray, np.ndarray]:
    """Options by descending internal diameter, ties by ascending cost then catalogue
    position (a total order, the same in every section and scenario), and each option's
    rank in it."""
    catalogue = study.catalogue
    diameter = catalogue.internal_diameter_m
    m = len(catalogue)
    order = np.array(sorted(range(m), key=lambda j: (-diameter[j], catalogue[j].cost_per_m, j)),
                     dtype=int)
    rank = np.empty(m, dtype=int)
    rank[order] = np.arange(m)
    return order, rank


def _surge_data(study: Study, static_head_m: np.ndarray, velocity_m_s: np.ndarray,
                admissible: np.ndarray, length_m: np.ndarray | None) -> dict:
    """The surge fields of :class:`ProblemData`: the down-surge heads, the pairs a piece
    may not span and the surge a piece may carry (surge by wave speed)."""
    surge, surge_own = _transient_surges(study, velocity_m_s, admissible, length_m)
    fastest = velocity_m_s.max(axis=0)
    return {"surge_m": surge, "surge_own_m": surge_own,
            "wave_conflicts": wave_conflicts(study, static_head_m, fastest, admissible,
                                             length_m),
            **_carried(study, fastest, admissible, length_m)}


def _tank_data_of(study: Study, lowest_m: np.ndarray, velocity_m_s: np.ndarray
                  ) -> TankData | None:
    """The tanks of ``study`` on its route with the data's own class rule (None: the
    study has no tank and lets ``design`` add none)."""
    if not has_tanks(study):
        return None
    tanks = tank_data(study, lowest_m, lambda head, length=None: wave_class_ok(
        study, head, velocity_m_s, length), velocity_m_s.max(axis=0))
    fastest = velocity_m_s.max(axis=0)
    if tanks.any_candidate and study.surge.method is SurgeMethod.JOUKOWSKY \
            and (fastest != fastest[:1]).any():
        # The pairs a piece may not span and the surge it carries are judged under the
        # lowest static line and the least L any choice of new tanks gives: a
        # relaxation, so the designs of the model with new tanks must pass the check.
        tanks = dataclasses.replace(tanks, exact_classes=False)
    return tanks


def _transient_surges(study: Study, velocity_m_s: np.ndarray, admissible: np.ndarray,
                      length_m: np.ndarray | None = None
                      ) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Surge heads of the down-surge rows (contract section 10), or (None, None) when
    the study sets no ``min_transient_pressure_m``: (n, m) at least the check's for any
    piece of j in s (the largest velocity of j over its run of admissible sections; for
    screening and dominance only) and (n, m) the section's own (the models' rows, with
    the surge a piece carries from above added, :mod:`optimiser.milp.carried_surge`).
    ``length_m``: (n,) L per section where break-pressure tanks restart it (the least
    any choice gives)."""
    if study.surge.min_transient_pressure_m is None:
        return None, None
    fastest = velocity_m_s.max(axis=0)  # (n, m) over scenarios
    wave_speed = wave_speeds_m_s(study, study.catalogue)
    run = np.column_stack([_run_max(fastest[:, j], admissible[:, j])
                           for j in range(fastest.shape[1])]) if fastest.size else fastest
    length = None if length_m is None else length_m[:, None]
    return (surge_head_m(study, wave_speed[None, :], run, length_m=length),
            surge_head_m(study, wave_speed[None, :], fastest, length_m=length))


def _carried(study: Study, fastest_m_s: np.ndarray, admissible: np.ndarray,
             length_m: np.ndarray | None) -> dict[str, np.ndarray | None]:
    """``surge_carry`` and ``surge_slope`` of the down-surge rows by wave speed (both
    None without such rows or with the allowance method, whose surge is one number)."""
    if study.surge.min_transient_pressure_m is None \
            or study.surge.method is not SurgeMethod.JOUKOWSKY:
        return {"surge_carry": None, "surge_slope": None}
    wave = wave_speeds_m_s(study, study.catalogue)
    slope = surge_head_m(study, wave[None, :], np.ones_like(fastest_m_s),
                         length_m=None if length_m is None else length_m[:, None])
    return {"surge_carry": carry_mask(fastest_m_s, admissible), "surge_slope": slope}


def _run_max(values: np.ndarray, mask: np.ndarray) -> np.ndarray:
    """Largest value over each run of consecutive True in ``mask`` (the value itself where
    ``mask`` is False)."""
    starts = np.flatnonzero(np.concatenate([[True], mask[1:] != mask[:-1]]))
    run = np.cumsum(np.isin(np.arange(len(values)), starts)) - 1
    return np.where(mask, np.maximum.reduceat(values, starts)[run], values)


def screened(data: ProblemData) -> ProblemData:
    """Mark check points that no feasible design can bring down to their minimum.

    Energy falls monotonically downstream and every feasible design keeps the energy at
    node i at least at ``pipe_i + min_i`` (its pressure limit, velocity head >= 0) and
    at the outlet at least at ``required_head_m``. So every point of section s (its end
    included) has energy >= ``floor_s = max(required, max over nodes i > s of
    pipe_i + min_i)``. A point whose pipe level and limit leave ``floor_s`` above them by
    more than the largest velocity head any admissible option can have there is met by
    every feasible design: its constraint is redundant and is left out of the model.
    This is exact (it removes no design), and it is what keeps the model small. On one
    line of a scheme (:func:`prepare` with a line) only that line's own points downstream
    enter the floor: the branches below only raise the true floor, so the floor used is
    still one every feasible design keeps, and screening stays exact. Returns
    ``data`` with the screened points marked; call it again whenever options leave
    ``admissible`` (fewer options, smaller largest velocity head: more points that
    cannot bind).
    """
    study = data.study
    n = data.n_sections
    pipe = data.node_pipe_level_m
    node_min, route_min = _screening_minimum(data)
    need = pipe + data.node_min_pressure_m
    suffix = np.maximum.accumulate(need[::-1])[::-1]  # max over nodes >= i
    floor_end = np.maximum(study.outlet.required_head_m, suffix[1:])  # (n,) end of s
    heads = np.where(data.admissible[None, :, :], data.velocity_head_m, 0.0)
    head_max = heads.max(axis=(0, 2)) if heads.size else np.zeros(n)  # (n,)
    tol = SCREEN_TOLERANCE_M
    up = np.zeros(n + 1, dtype=bool)
    down = np.zeros(n + 1, dtype=bool)
    up[0] = True  # no upstream side at the source
    up[1:] = floor_end - head_max - pipe[1:] - node_min[1:] >= tol
    down[:-1] = floor_end - head_max - pipe[:-1] - node_min[:-1] >= tol
    down[-1] = (study.outlet.required_head_m - head_max[-1] - pipe[-1]
                - node_min[-1] >= tol)
    interior = (floor_end - head_max - np.maximum(pipe[:-1], pipe[1:])
                - route_min >= tol)
    return dataclasses.replace(data, screened_up=up, screened_down=down,
                               screened_interior=interior)


def _screening_minimum(data: ProblemData) -> tuple[np.ndarray, np.ndarray | float]:
    """Least pressure head a point must keep above its pipe besides the velocity head:
    its minimum, or with the down-surge limit the larger of it and the limit plus the
    largest surge head of an admissible option there (node sides take both sections).
    Returns (n+1,) at the nodes and (n,) (or the route's scalar) inside sections."""
    study = data.study
    limit = study.surge.min_transient_pressure_m
    if limit is None or data.surge_m is None:
        return data.node_min_pressure_m, study.min_pressure_m
    surge = np.where(data.admissible, data.surge_m, 0.0).max(axis=1)  # (n,)
    around = np.zeros(data.n_sections + 1)
    around[:-1] = surge
    around[1:] = np.maximum(around[1:], surge)
    return (np.maximum(data.node_min_pressure_m, limit + around),
            np.maximum(study.min_pressure_m, limit + surge))
