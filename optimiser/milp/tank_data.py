"""Break-pressure tanks in the optimiser's data (contract section 8).

Where tanks stand or may stand, at which water level, and what they do to the class
admissibility of every section. A tank at node i restarts the static line at its water
level, so the static line over a section is the level of the last tank at or above the
section's start (the source's top water level above the first). With the study's own
tanks only it is known (``static_max_m == static_min_m``); with new tanks allowed it lies
between ``static_min_m`` (the lowest level any choice of tanks can give: a tank at the
lowest site between the last fixed tank and the section) and ``static_max_m`` (no new
tank). An option admissible at the lowest static level but not at the highest is
*conditional*: the model may use it only while its static-line variable is at most
``threshold_m`` (:mod:`optimiser.milp.tank_rows`).

Surge by wave speed (contract section 10): the slow-closure length L of a pipe runs from
the last free surface above it (the source or a tank) to the route's end, so a tank
lowers the surge below it as well as the static line. ``reflection_max_m`` is L with no
new tank, ``reflection_min_m`` the least L any choice of tanks gives (a tank at the last
site at or above the section); the admissibility at (``static_min_m``,
``reflection_min_m``) is the union over every choice (both only lower the class
demand), a relaxation. With the study's own tanks only both are exact. The conditional
options' ``threshold_m`` is then taken at the least L, so the model with new tanks is a
relaxation, exact only when the surge does not depend on L (``exact_classes``).

Sites (contract section 8): every node of the loader's route (profile points, offtake
and fitting nodes) except the first and the last and the offtakes; or with
``sites = "marked"`` the profile rows marked in column ``tank_site``. A site whose water
level is above every scenario's source level cannot fill and is left out.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.flows import flow_below_m3_s
from optimiser.analysis.surge import reflection_length_m, surge_head_m, wave_speeds_m_s
from optimiser.analysis.tanks import SAME_POINT_M
from optimiser.milp.class_limits import MIN_SPACING_M, crossing_chainages_m, limit_levels_m
from optimiser.model import TRUNK, Study, SurgeMethod, TankSites


def has_tanks(study: Study) -> bool:
    """True when the study has tanks of its own or lets ``design`` add them."""
    return bool(study.tanks) or study.tank_rules.cost is not None


@dataclass(frozen=True)
class TankData:
    """Tanks on the nodes of the optimiser's route (n + 1 nodes, n sections)."""

    fixed: np.ndarray
    """(n+1,) the study's own tank stands at node i."""
    candidate: np.ndarray
    """(n+1,) ``design`` may add a tank at node i."""
    level_m: np.ndarray
    """(n+1,) water level of the tank at node i [m] (nan where none may stand)."""
    static_max_m: np.ndarray
    """(n,) static line over section s with no new tank [m]."""
    static_min_m: np.ndarray
    """(n,) lowest static line over section s any choice of new tanks gives [m]."""
    conditional: np.ndarray
    """(n, m) option j is admissible in s only below a new tank."""
    threshold_m: np.ndarray
    """(n, m) highest static line at which option j is admissible in section s [m]."""
    cost: float
    max_count: int | None
    inlet_k: float
    outlet_k: float
    reflection_max_m: np.ndarray | None = None
    """(n,) slow-closure length L over section s with no new tank [m] (None: the surge
    does not depend on where the tanks stand)."""
    reflection_min_m: np.ndarray | None = None
    """(n,) least L over section s any choice of new tanks gives [m]."""
    node_reflection_m: np.ndarray | None = None
    """(n+1,) L below a free surface (the source or a tank) at node i [m]."""
    exact_classes: bool = True
    """The conditional options' thresholds are exact (else a relaxation: a design of
    the model with new tanks must still pass the check)."""

    @property
    def at_node(self) -> np.ndarray:
        """(n+1,) a tank stands or may stand at node i."""
        return self.fixed | self.candidate

    @property
    def any_candidate(self) -> bool:
        return bool(self.candidate.any())


def tank_nodes(study: Study, chainage_m: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                               np.ndarray]:
    """(fixed, candidate, level) over the nodes at ``chainage_m`` (the optimiser's
    route, split at class limits: its extra nodes are never sites)."""
    n_nodes = len(chainage_m)
    fixed = np.zeros(n_nodes, dtype=bool)
    candidate = np.zeros(n_nodes, dtype=bool)
    level = np.full(n_nodes, np.nan)
    for tank in study.tanks:
        if tank.branch == TRUNK:
            i = _node(chainage_m, tank.chainage_m)
            fixed[i], level[i] = True, tank.water_level_m
    rules = study.tank_rules
    if rules.cost is None:
        return fixed, candidate, level
    route = study.route
    sites = route.chainage_m[1:-1]
    if rules.sites is TankSites.MARKED:
        marked = np.asarray(rules.marked_chainages_m, dtype=float)
        sites = sites[np.any(np.abs(sites[:, None] - marked[None, :]) <= SAME_POINT_M,
                             axis=1)] if len(marked) else sites[:0]
    offtakes = np.array([o.chainage_m for o in study.offtakes], dtype=float)
    if len(offtakes):
        sites = sites[~np.any(np.abs(sites[:, None] - offtakes[None, :]) <= SAME_POINT_M,
                              axis=1)]
    highest_source = max(s.source_level_m for s in study.scenarios)
    for chainage in sites.tolist():
        i = _node(chainage_m, chainage)
        water = float(route.ground_at(chainage)) + rules.height_m
        if fixed[i] or water >= highest_source:
            continue
        candidate[i], level[i] = True, water
    return fixed, candidate, level


def _node(chainage_m: np.ndarray, chainage: float) -> int:
    i = int(np.argmin(np.abs(chainage_m - chainage)))
    if abs(chainage_m[i] - chainage) > SAME_POINT_M:
        raise ValueError(f"no node of the route at the tank at {chainage:g} m")
    return i


def static_lines_m(top_water_level_m: float, fixed: np.ndarray, candidate: np.ndarray,
                   level_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(n,) static line over each section with no new tank, and the lowest any choice
    of new tanks gives (the least level of a site since the last fixed tank, or that
    tank's level)."""
    n = len(fixed) - 1
    high = np.empty(n)
    low = np.empty(n)
    current = lowest = float(top_water_level_m)
    for s in range(n):
        if fixed[s]:
            current = lowest = float(level_m[s])
        elif candidate[s]:
            lowest = min(lowest, float(level_m[s]))
        high[s], low[s] = current, lowest
    return high, low


SPLIT_CAP = 3
"""The route is split at the class limits under every tank level only while that adds
at most this many nodes per section (else the classes below a new tank are judged at a
section's lowest pipe level, which is conservative)."""
WAVE_SPLIT_NODES = 2000
"""With surge by wave speed the limits differ with every section's velocity and every
start's slow-closure length, so they are many more: the split under every site is made
while it adds at most ``SPLIT_CAP`` nodes per section or this many in all."""


def with_sites_named(study: Study) -> Study:
    """``study`` with its sites named as marked chainages (so the nodes added here are
    never sites) and its route split where an option's class limit is crossed under the
    static line of the study's own tanks, and under the level of every site above (the
    static line a new tank there would set): on each part an option's class then holds
    at every metre or at none, whichever tanks are chosen. Over ``SPLIT_CAP`` new nodes
    per section, only the first split is made. With surge by wave speed the limits
    also depend on the slow-closure length L of each start (:func:`_wave_crossings`)."""
    route = study.route
    fixed, candidate, level = tank_nodes(study, route.chainage_m)
    cap = SPLIT_CAP * route.n_sections
    if study.surge.method is SurgeMethod.JOUKOWSKY:
        cap = max(cap, WAVE_SPLIT_NODES)
        found = _wave_crossings(study, fixed, fixed, level, np.inf)
        extra = _wave_crossings(study, fixed, candidate, level, cap)
    else:
        high, _ = static_lines_m(study.source.top_water_level_m, fixed, candidate, level)
        # Every limit level is a static level minus a constant (per option and section).
        drop = study.source.top_water_level_m - limit_levels_m(study)  # (n, 2m)
        found = crossing_chainages_m(route, high[:, None] - drop)
        extra = _site_crossings(route, fixed, candidate, level, np.unique(drop))
    if len(extra) <= cap:
        found = crossing_filter(route, np.union1d(found, extra))
    rules = dataclasses.replace(study.tank_rules, sites=TankSites.MARKED,
                                marked_chainages_m=tuple(route.chainage_m[candidate].tolist()))
    new_route = route.with_nodes(found, tolerance_m=0.0) if len(found) else route
    return dataclasses.replace(study, route=new_route, tank_rules=rules)


def _wave_crossings(study: Study, fixed: np.ndarray, starts: np.ndarray, level: np.ndarray,
                    most: float) -> np.ndarray:
    """Surge by wave speed: chainages where the pipe crosses a class limit of an option
    below a free surface (the source, or a tank at a node of ``starts``) down to the
    next tank of the study's own: its static line less the allowable head, and its
    static line plus the option's surge (largest velocity in the section, L from that
    surface, contract section 10) less its surge limit. The search stops once it has
    found more than ``most``."""
    route = study.route
    n = route.n_sections
    catalogue = study.catalogue
    wave = wave_speeds_m_s(study, catalogue)
    _, _, below = reflection_lengths_m(study, fixed, starts)
    area = np.pi * catalogue.internal_diameter_m ** 2 / 4.0
    flows = np.max([flow_below_m3_s(study, s, route.chainage_m[:-1]) for s in study.scenarios],
                   axis=0)
    fastest = flows[:, None] / area[None, :]
    pipe = route.pipe_level_m
    low, high = np.minimum(pipe[:-1], pipe[1:]), np.maximum(pipe[:-1], pipe[1:])
    deepest = float(catalogue.allowable_head_m.max()) + 1.0
    next_fixed = np.minimum.accumulate(np.where(fixed, np.arange(n + 1), n)[::-1])[::-1]
    found: list[np.ndarray] = [np.zeros(0)]
    count = 0
    for a in np.flatnonzero(starts[:n] | (np.arange(n) == 0)).tolist():
        static = study.source.top_water_level_m if a == 0 else float(level[a])
        stop = int(next_fixed[a + 1])
        deep = np.flatnonzero(static - low[a:stop] > deepest)  # no class reaches past
        reach = slice(a, a + int(deep[0]) + 1 if len(deep) else stop)
        surge = surge_head_m(study, wave[None, :], fastest[reach], length_m=below[a])
        levels = np.hstack([np.broadcast_to(static - catalogue.allowable_head_m, surge.shape),
                            static + surge - catalogue.surge_limit_head_m[None, :],
                            _upstream_levels_m(study, static, flows, reach, below[a])])
        inside = (levels > low[reach, None]) & (levels < high[reach, None])
        section, _ = np.nonzero(inside)
        fraction = (levels[inside] - pipe[a + section]) / (pipe[a + section + 1]
                                                             - pipe[a + section])
        found.append(route.chainage_m[a + section]
                     + fraction * route.chainage_length_m[a + section])
        count += len(section)
        if count > 2 * most:  # the filter below may merge a few; well past the cap
            break
    return crossing_filter(route, np.concatenate(found))


def _upstream_levels_m(study: Study, static_m: float, flows: np.ndarray, reach: slice,
                       length_m: float) -> np.ndarray:
    """(sections of ``reach``, options x flows) the surge limit levels of every option at
    each larger flow a piece can bring from upstream (through a tank the flow is
    unchanged), NaN where the flow is not larger (:mod:`optimiser.milp.wave_classes`)."""
    catalogue = study.catalogue
    area = np.pi * catalogue.internal_diameter_m ** 2 / 4.0
    wave = wave_speeds_m_s(study, catalogue)
    own = flows[reach][:, None]
    found = [np.zeros((len(own), 0))]
    for q in np.unique(flows).tolist():
        if not (own < q).any():
            continue
        surge = surge_head_m(study, wave, q / area, length_m=length_m)
        found.append(np.where(own < q, (static_m + surge - catalogue.surge_limit_head_m)[None, :],
                              np.nan))
    return np.hstack(found)


def _site_crossings(route, fixed: np.ndarray, candidate: np.ndarray, level: np.ndarray,
                    drops: np.ndarray) -> np.ndarray:
    """Chainages where the pipe crosses a class limit under the level of a site above
    (after the last fixed tank): the site's level minus each option's limit drop."""
    pipe = route.pipe_level_m
    sites = np.flatnonzero(candidate)
    if not len(sites) or not len(drops):
        return np.zeros(0)
    values = (level[sites][:, None] - drops[None, :]).ravel()
    owner = np.repeat(sites, len(drops))
    order = np.argsort(values)
    values, owner = values[order], owner[order]
    last_fixed = np.maximum.accumulate(np.where(fixed, np.arange(len(fixed)), 0))
    found: list[float] = []
    for s in range(route.n_sections):
        low, top = sorted((float(pipe[s]), float(pipe[s + 1])))
        a, b = np.searchsorted(values, low, "right"), np.searchsorted(values, top, "left")
        mine = (owner[a:b] <= s) & (owner[a:b] > last_fixed[s])
        for value in values[a:b][mine].tolist():
            fraction = (value - pipe[s]) / (pipe[s + 1] - pipe[s])
            found.append(float(route.chainage_m[s] + fraction * route.chainage_length_m[s]))
    return crossing_filter(route, np.array(found))


def crossing_filter(route, found: np.ndarray) -> np.ndarray:
    """Crossings apart from the survey points and from each other by the class split's
    least spacing, sorted."""
    nodes = route.chainage_m
    found = np.unique(found)
    if not len(found):
        return found
    index = np.clip(np.searchsorted(nodes, found), 1, len(nodes) - 1)
    apart = (found - nodes[index - 1] > MIN_SPACING_M) & (nodes[index] - found > MIN_SPACING_M)
    found = found[apart]
    if len(found) > 1:
        found = found[np.concatenate([[True], np.diff(found) > MIN_SPACING_M])]
    return found


def reflection_lengths_m(study: Study, fixed: np.ndarray, candidate: np.ndarray
                         ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(n,) L over each section with no new tank, (n,) the least any choice of tanks
    gives, (n+1,) L below a free surface at each node [m] (contract section 10: from
    the free surface to the route's end)."""
    node_length = study.upstream_pipe_length_m + np.concatenate(
        [[0.0], np.cumsum(study.route.length_m)])
    below = reflection_length_m(study) - node_length  # (n+1,)
    below[0] = reflection_length_m(study)
    index = np.arange(len(fixed) - 1)
    last_fixed = np.maximum.accumulate(np.where(fixed[:-1] | (index == 0), index, 0))
    last_any = np.maximum.accumulate(np.where((fixed | candidate)[:-1] | (index == 0),
                                              index, 0))
    return below[last_fixed], below[last_any], below


def tank_data(study: Study, lowest_m: np.ndarray, class_ok_at,
              fastest_m_s: np.ndarray | None = None) -> TankData:
    """The tanks of ``study`` on its (split) route. ``lowest_m``: (n,) lowest pipe level
    of each section; ``class_ok_at(static_head, length_m=None)``: (n, m) admissibility
    of the classes at a static head per section, and with surge by wave speed a
    slow-closure length L per section (the data's own rule); ``fastest_m_s``: (n, m)
    largest velocity of each option in each section over the scenarios."""
    fixed, candidate, level = tank_nodes(study, study.route.chainage_m)
    high, low = static_lines_m(study.source.top_water_level_m, fixed, candidate, level)
    catalogue = study.catalogue
    rules = study.tank_rules
    if study.surge.method is not SurgeMethod.JOUKOWSKY:
        # With the allowance method a class holds while static + allowance <= allowable.
        margin = catalogue.allowable_head_m[None, :] - study.surge_allowance_m
        return TankData(fixed, candidate, level, high, low,
                        class_ok_at(low - lowest_m) & ~class_ok_at(high - lowest_m),
                        lowest_m[:, None] + margin, float(rules.cost or 0.0),
                        rules.max_count, rules.inlet_k, rules.outlet_k)
    long, short, below = reflection_lengths_m(study, fixed, candidate)
    assert fastest_m_s is not None
    ok_low = class_ok_at(low - lowest_m, short[:, None])
    threshold = lowest_m[:, None] + wave_margins_m(study, fastest_m_s, short)
    sudden = study.surge.closure_time_s <= 0
    return TankData(fixed, candidate, level, high, low,
                    ok_low & ~class_ok_at(high - lowest_m, long[:, None]), threshold,
                    float(rules.cost or 0.0), rules.max_count, rules.inlet_k, rules.outlet_k,
                    long, short, below, sudden or not candidate.any())


def wave_margins_m(study: Study, fastest_m_s: np.ndarray, length_m: np.ndarray
                   ) -> np.ndarray:
    """(n, m) the largest static head option j takes in section s by wave speed: its
    allowable head, and its surge limit less its surge at the section's own largest
    velocity ``fastest_m_s`` (n, m) with L ``length_m`` (n,) (contract section 10)."""
    catalogue = study.catalogue
    surge = surge_head_m(study, wave_speeds_m_s(study, catalogue)[None, :], fastest_m_s,
                         length_m=length_m[:, None])
    return np.minimum(catalogue.allowable_head_m[None, :],
                      catalogue.surge_limit_head_m[None, :] - surge)
