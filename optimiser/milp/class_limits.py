"""Survey sections split where a pressure class stops being admissible.

The check (contract section 5) judges a piece's class at its lowest point: static head
(top water level − pipe level) plus surge ≤ allowable head. The optimiser decides
admissibility per section, at the section's lowest pipe level. A falling section whose
upper part lies above an option's limit and lower part below it could then never take
that option, though the check accepts it on the upper part, and the optimiser's "optimal"
and its bound would be about a smaller set of designs than the check accepts.

Splitting every section at each chainage where the pipe level crosses an option's
limit level makes per-section admissibility exact: the pipe level is linear between
survey points, so on each part an option is admissible at every metre or at none. The
new nodes carry no label, the zone of the section they split and the interpolated
ground; offtakes and fittings keep their chainages. They change no hydraulics: slope
lengths add up (the pipe is straight between survey points) and pressure along one pipe
inside a section is linear in chainage, so a point there can only bind at a boundary
the model already checks.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from optimiser.analysis.flows import flow_below_m3_s, line_flows_m3_s
from optimiser.analysis.surge import surge_head_m, wave_speeds_m_s
from optimiser.milp.tree.line_study import line_study
from optimiser.model import Route, Study, SurgeMethod
from optimiser.model.lines import Line

MIN_SPACING_M = 1e-3
"""A crossing closer than this to a survey point is not split off [m]."""


def limit_levels_m(study: Study, line: Line | None = None) -> np.ndarray:
    """Pipe levels [m] below which some option's class stops being admissible, per section.

    A class is admissible where static head ≤ allowable head and static head + surge ≤
    the surge limit (contract sections 5 and 10), the static head being top water level
    − pipe level: so down to the pipe levels TWL − allowable and TWL + surge − limit (for
    example 100 m of allowable head under a top water level of 500 m with a 10 m surge
    allowance: down to 410 m). With the allowance method the surge is the study's
    allowance and the limit the allowable head; by wave speed, the option's surge at its
    largest velocity in the section over the scenarios, and its allowable surge head.
    Returns (sections, levels): both levels of every option. With ``line``, those of
    that line of a scheme (its flows from the whole scheme, contract section 7).
    """
    scheme = study
    study = study if line is None else line_study(scheme, line)
    catalogue = study.catalogue
    top = study.source.top_water_level_m
    n = study.route.n_sections
    operating = np.broadcast_to(top - catalogue.allowable_head_m[None, :], (n, len(catalogue)))
    if study.surge.method is SurgeMethod.ALLOWANCE:
        surge = np.full((n, len(catalogue)), study.surge_allowance_m)
        limit = catalogue.allowable_head_m
    else:
        surge = surge_head_m(study, wave_speeds_m_s(study, catalogue)[None, :],
                             _fastest_m_s(scheme, line))
        limit = catalogue.surge_limit_head_m
    return np.hstack([operating, top + surge - limit[None, :]])


def _fastest_m_s(study: Study, line: Line | None = None) -> np.ndarray:
    """(sections, options) largest velocity [m/s] over the scenarios (of ``line``)."""
    starts = (study.route if line is None else line.route).chainage_m[:-1]
    area = np.pi * study.catalogue.internal_diameter_m[None, :] ** 2 / 4.0
    flows = np.array([flow_below_m3_s(study, scenario, starts) if line is None
                      else line_flows_m3_s(study, scenario, line, starts)
                      for scenario in study.scenarios])
    return (flows.max(axis=0)[:, None]) / area


def crossing_chainages_m(route: Route, levels_m: np.ndarray) -> np.ndarray:
    """Chainages strictly inside sections where the pipe level equals one of the
    section's ``levels_m`` (sections × levels), sorted and unique."""
    pipe = route.pipe_level_m
    start, end = pipe[:-1, None], pipe[1:, None]
    low, high = np.minimum(start, end), np.maximum(start, end)
    inside = (levels_m > low) & (levels_m < high)
    fraction = np.divide(levels_m - start, end - start, out=np.zeros_like(levels_m),
                         where=inside)
    c0 = route.chainage_m[:-1, None]
    chainage = c0 + fraction * route.chainage_length_m[:, None]
    found = np.unique(chainage[inside])
    nodes = route.chainage_m
    index = np.clip(np.searchsorted(nodes, found), 1, len(nodes) - 1)
    apart = (found - nodes[index - 1] > MIN_SPACING_M) & (nodes[index] - found > MIN_SPACING_M)
    found = found[apart]
    if len(found) > 1:  # two options' limits within a millimetre: one node
        found = found[np.concatenate([[True], np.diff(found) > MIN_SPACING_M])]
    return found


def upstream_crossings_m(study: Study, line: Line | None = None) -> np.ndarray:
    """Surge by wave speed: chainages where the pipe crosses the surge limit of an
    option at a velocity a piece can bring from upstream on its line (the flow of a
    section above it; flows never grow downstream), so that the class of every piece
    reaching a part holds at every metre of it or at none
    (:mod:`optimiser.milp.wave_classes`). Empty with the allowance method."""
    scheme = study
    study = study if line is None else line_study(scheme, line)
    if study.surge.method is not SurgeMethod.JOUKOWSKY:
        return np.zeros(0)
    route = study.route if line is None else line.route
    catalogue = study.catalogue
    area = np.pi * catalogue.internal_diameter_m ** 2 / 4.0
    flow = _fastest_m_s(scheme, line)[:, 0] * area[0]  # (n,) largest flow over scenarios
    wave = wave_speeds_m_s(study, catalogue)
    found = [np.zeros(0)]
    for q in np.unique(flow)[:-1].tolist():  # the largest flow is the first section's own
        surge = surge_head_m(study, wave[None, :], np.full((1, len(area)), q) / area)
        levels = study.source.top_water_level_m + surge - catalogue.surge_limit_head_m
        below = flow[:, None] < q  # only where a piece from above can bring q
        found.append(crossing_chainages_m(route, np.where(below, levels, np.nan)))
    return np.unique(np.concatenate(found))


def _with_crossings(route: Route, found: np.ndarray, more: np.ndarray) -> np.ndarray:
    """Crossings ``found`` and ``more`` together, apart from the survey points and from
    each other by the least spacing."""
    if not len(more):
        return found
    both = np.unique(np.concatenate([found, more]))
    nodes = route.chainage_m
    index = np.clip(np.searchsorted(nodes, both), 1, len(nodes) - 1)
    both = both[(both - nodes[index - 1] > MIN_SPACING_M)
                & (nodes[index] - both > MIN_SPACING_M)]
    if len(both) > 1:
        both = both[np.concatenate([[True], np.diff(both) > MIN_SPACING_M])]
    return both


def split_at_class_limits(study: Study) -> Study:
    """``study`` with its route split wherever an option's class limit is crossed."""
    found = _with_crossings(study.route, crossing_chainages_m(study.route,
                                                               limit_levels_m(study)),
                            upstream_crossings_m(study))
    if len(found) == 0:
        return study
    return dataclasses.replace(study, route=study.route.with_nodes(found, tolerance_m=0.0))


def split_line_at_class_limits(study: Study, line: Line) -> Route:
    """The route of ``line`` (of the scheme ``study``) split wherever an option's class
    limit is crossed."""
    found = _with_crossings(line.route, crossing_chainages_m(line.route,
                                                              limit_levels_m(study, line)),
                            upstream_crossings_m(study, line))
    return line.route if len(found) == 0 else line.route.with_nodes(found, tolerance_m=0.0)
