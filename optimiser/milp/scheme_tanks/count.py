"""The fewest new tanks any design of a scheme needs (a proof, by dynamic programme).

Over every section, the static head at its lowest pipe level must be within what some
class of the catalogue takes (contract section 5: allowable head less the surge
allowance; by wave speed, section 10: the allowable head, and the surge limit less the
surge, :mod:`~.wave_surge`), and the static line over a section is the water level of
the last tank above it on its path from the source (section 8), or the source's top
water level. By wave speed the surge depends on the tanks too (a tank shortens the
slow-closure length L below it): the count takes each section's smallest surge any
choice of tanks allows (L from the nearest site above it, the section's own velocity),
a relaxation, so the count stays a lower bound. Which sites must
hold a tank for every section to have some class is a covering problem on the tree,
solved exactly by a dynamic programme whose state is the static line arriving at a
node (the source's level or a site's: finitely many values): ``g(node, L)`` is the
fewest tanks at or below the node, its line and every branch leaving below it, with
the static line ``L`` arriving. Every design has at least ``g(source, top)`` new tanks
(energy is ignored: a relaxation), so the bound of every set with fewer is infinite
and each new tank's cost counts at least that many times.
"""

from __future__ import annotations

import math

import numpy as np

from optimiser.milp.scheme_tanks.sites import Site, new_tanks
from optimiser.milp.scheme_tanks.wave_surge import (
    admitted,
    by_wave_speed,
    least_lengths_m,
    lengths_m,
    static_heads_m,
)
from optimiser.model import BreakPressureTank, Study
from optimiser.model.lines import Line, study_lines


def fewest_tanks(study: Study, sites: list[Site]) -> float:
    """The fewest new tanks any design of ``study`` needs (``inf``: no choice of sites
    gives every section a class)."""
    top = study.source.top_water_level_m
    values = np.unique([top, *(s.water_level_m for s in sites)])  # every static level
    index = {float(v): k for k, v in enumerate(values.tolist())}
    lines = study_lines(study)
    starts: dict[str, np.ndarray] = {}  # g(first node of a branch, every level)
    for line in reversed(lines):  # children before parents
        hanging: dict[int, np.ndarray] = {}
        for child in lines:
            if child.parent == line.name:
                node = _node(line, child.at_chainage_m)
                hanging[node] = hanging.get(node, 0.0) + starts[child.name]
        own = {_node(line, s.chainage_m): index[s.water_level_m] for s in sites
               if s.line == line.name}
        head_m = static_heads_m(study, line, least_lengths_m(study, sites, line)
                                if by_wave_speed(study) else None)
        starts[line.name] = _along(line, values, head_m, hanging, own)
    return float(starts[lines[0].name][index[top]])


def _along(line: Line, values: np.ndarray, head_m: np.ndarray | float,
           hanging: dict[int, np.ndarray], own: dict[int, int]) -> np.ndarray:
    """(K,) fewest tanks from the first node of ``line`` down, for each static level of
    ``values`` arriving there (``head_m``: the largest static head some class takes,
    per section or for all; ``hanging``: the branches leaving at each node, ``own``:
    the level index of the site at each node)."""
    pipe = line.route.pipe_level_m
    heads = np.broadcast_to(np.asarray(head_m, dtype=float), (line.route.n_sections,))
    after = np.zeros(len(values))
    for i in range(line.route.n_sections - 1, -1, -1):
        fits = admitted(values - min(pipe[i], pipe[i + 1]), heads[i])
        here = np.where(fits, after + hanging.get(i, 0.0), math.inf)
        if i in own and i > 0:
            here = np.minimum(here, 1.0 + here[own[i]])
        after = here
    return after


def _node(line: Line, chainage_m: float) -> int:
    return int(abs(line.route.chainage_m - chainage_m).argmin())


def covers(study: Study, chosen: list[Site]) -> bool:
    """Every section has some class under the static line of exactly the tanks at
    ``chosen`` (else no design with those tanks exists); by wave speed with the surge
    of exactly these tanks at each section's own largest velocity."""
    tanks = new_tanks(chosen)
    arriving: dict[str, float] = {}
    # lines parents first: each branch finds its junction's static line filled
    return all(_covered(study, line, chosen, tanks, arriving) for line in study_lines(study))


def _covered(study: Study, line: Line, chosen: list[Site],
             tanks: tuple[BreakPressureTank, ...], arriving: dict[str, float]) -> bool:
    """:func:`covers` on ``line`` (``arriving``: the static line at each junction,
    filled for the branches leaving it)."""
    head_m = static_heads_m(study, line, lengths_m(study, tanks, line)
                            if by_wave_speed(study) else None)
    heads = np.broadcast_to(np.asarray(head_m, dtype=float), (line.route.n_sections,))
    level = study.source.top_water_level_m if line.parent is None else arriving[line.name]
    levels = {_node(line, s.chainage_m): s.water_level_m for s in chosen
              if s.line == line.name}
    leaving: dict[int, list[str]] = {}  # several branches may leave one node
    for branch in study_lines(study):
        if branch.parent == line.name:
            leaving.setdefault(_node(line, branch.at_chainage_m), []).append(branch.name)
    pipe = line.route.pipe_level_m
    for i in range(line.route.n_sections):
        for name in leaving.get(i, ()):
            arriving[name] = level
        level = levels.get(i, level)
        if not admitted(level - min(pipe[i], pipe[i + 1]), heads[i]):
            return False
    return True
