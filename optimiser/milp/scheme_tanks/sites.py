"""Where ``design`` may add break-pressure tanks in a branched scheme (contract section 8).

Sites: every node of every line's route (the trunk's and each branch's profile points,
with the offtake, fitting and junction nodes the loader added) except a line's first and
last point, its offtakes and the junctions of the branches leaving it; with
``sites = "marked"`` only the nodes of profile rows marked in column ``tank_site`` (the
trunk's in ``TankRules.marked_chainages_m``, the branches' in
``TankRules.marked_on_branches``). A site whose water level (ground + ``height_m``) is
at or above every scenario's source level could never fill and is left out; so is a
site whose level is below the energy some point at or below it needs
(:func:`energy_needed_below_m`): no design can have a tank there.

With a set of sites chosen, the scheme is one with those tanks as its own
(:func:`with_new_tanks`): the cut at its tanks (:mod:`optimiser.milp.cut_at_tanks`)
designs it.

The lowest static line any choice of tanks can give (:func:`lowest_static_m`): a tank
restarts the static line at its water level, down to the next tank on every path below
it; so over a section the static line is the level of the last tank above it on its
path from the source, and the least such level over every choice is the least level of
a site above the section on that path (or the source's top water level). Sites are
nodes, so it is constant over each section.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from optimiser.analysis.tanks import SAME_POINT_M
from optimiser.model import BreakPressureTank, Route, Study, TankSites
from optimiser.model.lines import Line, children_of, study_lines

NEW_TANK_LABEL = "new break-pressure tank"


@dataclass(frozen=True, order=True)
class Site:
    """A node where ``design`` may add a tank: its line, chainage and water level [m]."""

    line: str
    chainage_m: float
    water_level_m: float


def scheme_sites(study: Study) -> list[Site]:
    """Every site of ``study`` (lines in the study's order, each by chainage)."""
    rules = study.tank_rules
    highest_source = max(s.source_level_m for s in study.scenarios)
    needs = energy_needed_below_m(study)
    found: list[Site] = []
    for line in study_lines(study):
        blocked = np.array([*(o.chainage_m for o in line.offtakes),
                            *(c.at_chainage_m for c in children_of(study, line.name)),
                            *(t.chainage_m for t in study.tanks if t.branch == line.name)])
        for chainage in line.route.chainage_m[1:-1].tolist():
            if len(blocked) and np.any(np.abs(blocked - chainage) <= SAME_POINT_M):
                continue
            if rules.sites is TankSites.MARKED and not _near(chainage, marked_on(study, line)):
                continue
            level = float(line.route.ground_at(chainage)) + rules.height_m
            node = int(np.argmin(np.abs(line.route.chainage_m - chainage)))
            if level < highest_source and level >= needs[line.name][node] - 1e-6:
                found.append(Site(line.name, float(chainage), level))
    return found


def energy_needed_below_m(study: Study) -> dict[str, np.ndarray]:
    """(n+1,) per line: the most energy any point at or below each node needs, on the
    line and on every branch leaving it further down: a pipe's level plus its minimum
    pressure head, a delivery point's required head. The energy at and below a tank is
    at most its water level (the energy leaving it is its level less the outlet loss,
    friction and further tanks only lower it), so a site whose level is below this can
    hold no tank in any design (it is left out)."""
    needs: dict[str, np.ndarray] = {}
    lines = study_lines(study)
    for line in reversed(lines):  # children before parents
        lowest_minimum = min([line.min_pressure_m, *(o.min_pressure_m for o in line.offtakes
                                                   if o.min_pressure_m is not None)])
        need = line.route.pipe_level_m + lowest_minimum
        need[-1] = max(need[-1], line.required_head_m)
        for child in children_of(study, line.name):
            node = int(np.argmin(np.abs(line.route.chainage_m - child.at_chainage_m)))
            need[node] = max(need[node], float(needs[child.name].max()))
        needs[line.name] = np.maximum.accumulate(need[::-1])[::-1]
    return needs


def marked_on(study: Study, line: Line) -> tuple[float, ...]:
    """Chainages of the marked profile rows of ``line``."""
    rules = study.tank_rules
    if line.is_trunk:
        return rules.marked_chainages_m
    return tuple(c for name, c in rules.marked_on_branches if name == line.name)


def _near(chainage: float, marked: Iterable[float]) -> bool:
    return any(abs(chainage - c) <= SAME_POINT_M for c in marked)


def new_tanks(sites: Iterable[Site]) -> tuple[BreakPressureTank, ...]:
    """The tanks ``design`` adds at ``sites``."""
    return tuple(BreakPressureTank(s.chainage_m, s.water_level_m, s.line, NEW_TANK_LABEL, True)
                 for s in sorted(sites))


def with_new_tanks(study: Study, sites: Iterable[Site]) -> Study:
    """``study`` with tanks at ``sites`` as its own (marked new, so the check prices
    them once the cost is put back) and no further tank to add: a new tank costs
    nothing here, the caller adds the count x cost."""
    return dataclasses.replace(study, tanks=(*study.tanks, *new_tanks(sites)),
                               tank_rules=dataclasses.replace(study.tank_rules, cost=None))


def start_levels_m(study: Study, sites: list[Site]) -> dict[str, float]:
    """The lowest static line any choice of tanks gives where each line starts: the
    source's top water level on the trunk; at a junction, the least of the parent's
    start and the levels of the parent's sites above the junction."""
    starts: dict[str, float] = {}
    for line in study_lines(study):
        if line.parent is None:
            starts[line.name] = study.source.top_water_level_m
            continue
        above = [s.water_level_m for s in sites
                 if s.line == line.parent and s.chainage_m < line.at_chainage_m]
        starts[line.name] = min([starts[line.parent], *above])
    return starts


def lowest_static_m(route: Route, line: str, start_m: float, sites: list[Site]) -> np.ndarray:
    """(n,) the lowest static line over each section of ``route`` (the route of
    ``line``, split or not): the least of ``start_m`` and the levels of the line's sites
    at or above the section's start."""
    own = sorted((s.chainage_m, s.water_level_m) for s in sites if s.line == line)
    starts = route.chainage_m[:-1]
    level = np.full(len(starts), float(start_m))
    for chainage, water in own:
        below = starts >= chainage - SAME_POINT_M
        level[below] = np.minimum(level[below], water)
    return level
