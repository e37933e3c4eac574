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

Sites (contract section 8): every node of the loader's route (profile points, offtake
and fitting nodes) except the first and the last and the offtakes; or with
``sites = "marked"`` the profile rows marked in column ``tank_site``. A site whose water
level is above every scenario's source level cannot fill and is left out.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.tanks import SAME_POINT_M
from optimiser.model import TRUNK, Study, TankSites


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


def with_sites_named(study: Study) -> Study:
    """``study`` with its sites named as marked chainages, so that nodes a later step
    inserts are never sites. The route is not split at class limits here: below a tank
    the limits move with its level, so the class of an option in a section is judged at
    the section's lowest pipe level (conservative, exact at the survey's resolution)."""
    route = study.route
    _, candidate, _ = tank_nodes(study, route.chainage_m)
    rules = dataclasses.replace(study.tank_rules, sites=TankSites.MARKED,
                                marked_chainages_m=tuple(route.chainage_m[candidate].tolist()))
    return dataclasses.replace(study, tank_rules=rules)


def tank_data(study: Study, lowest_m: np.ndarray, class_ok_at) -> TankData:
    """The tanks of ``study`` on its (split) route. ``lowest_m``: (n,) lowest pipe level
    of each section; ``class_ok_at(static_head)``: (n, m) admissibility of the classes
    at a static head per section (the data's own rule)."""
    fixed, candidate, level = tank_nodes(study, study.route.chainage_m)
    high, low = static_lines_m(study.source.top_water_level_m, fixed, candidate, level)
    ok_high = class_ok_at(high - lowest_m)
    ok_low = class_ok_at(low - lowest_m)
    catalogue = study.catalogue
    # With the allowance method a class holds while static + allowance <= allowable
    # (new tanks are refused by the loader with surge by wave speed, so only the study's
    # own tanks, with no conditional option, meet the other method).
    margin = catalogue.allowable_head_m[None, :] - study.surge_allowance_m
    rules = study.tank_rules
    return TankData(fixed, candidate, level, high, low, ok_low & ~ok_high,
                    lowest_m[:, None] + margin, float(rules.cost or 0.0), rules.max_count,
                    rules.inlet_k, rules.outlet_k)
