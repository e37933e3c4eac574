"""Surge by wave speed in the search for new tanks on a scheme (contract section 10).

With ``[surge] method = "joukowsky"`` a piece's class must take its static head (<=
``allowable_head_m``) and its static head plus its surge (<= the option's surge limit):
a V / g (Joukowsky) for a sudden closure, 2 L V / (g T) when the closure time T exceeds
2 L / a (Michaud), V the largest velocity in the piece in any scenario, L the pipe
length from the free surface upstream of the piece (the source, or the last tank above
it) to the end of the piece's branch. The rule has one home,
:mod:`optimiser.analysis.surge`; this module only feeds it the velocities and lengths of
the sets of tanks the search reasons about.

A new tank changes the surge below it as well as the static line: it shortens L (only a
slow closure feels it). Where the search must hold for tanks not yet chosen (the
relaxation, the fewest tanks, the lines apart), it takes the smallest surge any choice
allows: L from the nearest site above the section on its path from the source (a tank
at every site; L is the pipe length from the free surface to the branch's end, so the
nearest surface gives the least L, and the surge never grows as L shrinks), and V the
section's own largest velocity of the option (a piece's V is the largest over every
section it covers, never less). So every class a design with any set of tanks may use
on a section is admitted there: a relaxation. For a set of tanks fixed, L is exact
(:func:`lengths_m`).

With the allowance method, a class takes a static head up to its allowable head less
the catalogue's surge allowance (contract section 5), whatever the tanks.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np

from optimiser.analysis.flows import line_flows_m3_s
from optimiser.analysis.limits import CHECK_TOLERANCE
from optimiser.analysis.surge import (
    segment_reflection_lengths_m,
    start_length_m,
    surface_above_line_m,
)
from optimiser.milp.scheme_tanks.sites import Site, new_tanks
from optimiser.milp.tank_data import wave_margins_m
from optimiser.model import BreakPressureTank, Route, Study, SurgeMethod
from optimiser.model.lines import Line


def by_wave_speed(study: Study) -> bool:
    """The study's surge is Joukowsky's from each pipe's wave speed (contract section 10)."""
    return study.surge.method is SurgeMethod.JOUKOWSKY


def fastest_m_s(study: Study, line: Line, route: Route | None = None) -> np.ndarray:
    """(n, m) largest velocity [m/s] of each option in each section of ``route`` (the
    route of ``line``, split or not; default its own) over the scenarios, its flows
    from the whole scheme (contract section 7)."""
    starts = (line.route if route is None else route).chainage_m[:-1]
    flows = np.max([line_flows_m3_s(study, scenario, line, starts)
                    for scenario in study.scenarios], axis=0)
    area = np.pi * study.catalogue.internal_diameter_m ** 2 / 4.0
    return flows[:, None] / area[None, :]


def lengths_m(study: Study, tanks: Sequence[BreakPressureTank], line: Line,
              route: Route | None = None) -> np.ndarray:
    """(n,) slow-closure length L [m] over each section of ``route`` (of ``line``,
    default its own) with exactly ``tanks`` standing (the check's rule)."""
    route = line.route if route is None else route
    return segment_reflection_lengths_m(study, tanks, line, route.chainage_m[:-1],
                                        route.length_m)


def least_lengths_m(study: Study, sites: Iterable[Site], line: Line,
                    route: Route | None = None) -> np.ndarray:
    """(n,) the least L any choice of tanks at ``sites`` gives each section: a tank at
    every site (module docstring)."""
    return lengths_m(study, new_tanks(sites), line, route)


def margins_m(study: Study, fastest: np.ndarray, length: np.ndarray) -> np.ndarray:
    """(n, m) the largest static head [m] option j's class takes in section s with its
    surge at velocity ``fastest`` (n, m) and L ``length`` (n,): the allowable head, and
    the surge limit less the surge (by wave speed); -inf where the catalogue gives no
    wave speed (the loader refuses such an option for the study)."""
    found = wave_margins_m(study, fastest, length)
    return np.where(np.isnan(found), -np.inf, found)


def static_heads_m(study: Study, line: Line, length: np.ndarray | None = None
                   ) -> np.ndarray | float:
    """The largest static head [m] some class takes over each section of ``line``: (n,)
    by wave speed, L ``length`` per section and each section's own largest velocity;
    a number with the allowance method (module docstring)."""
    catalogue = study.catalogue
    if not by_wave_speed(study):
        return float(max(catalogue.allowable_head_m)) - study.surge_allowance_m
    assert length is not None
    return margins_m(study, fastest_m_s(study, line), length).max(axis=1)


def admitted(static_head_m: np.ndarray, margin_m: np.ndarray | float) -> np.ndarray:
    """True where the static head is within the margin: the check's tolerance and a
    hair more (a relaxation may admit a little more than the check, never less)."""
    return np.asarray(static_head_m) <= np.asarray(margin_m) + CHECK_TOLERANCE + 1e-9


def upstream_length_m(study: Study, sites: Iterable[Site], line: Line) -> float:
    """The least pipe length [m] from a free surface to the start of ``line`` any choice
    of tanks at ``sites`` gives (the nearest site above the junction on the line's path,
    else the source): what a view of the line alone as a route puts before its start
    for the slow-closure length (its own sites then restart L as in the scheme)."""
    above = new_tanks(s for s in sites if s.line != line.name)
    return start_length_m(study, line) - (0.0 if line.is_trunk else
                                          surface_above_line_m(study, above, line))
