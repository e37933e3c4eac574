"""The fewest new tanks any design of a scheme needs (a proof, by dynamic programme).

Over every section, the static head at its lowest pipe level plus the surge allowance
must be within the allowable head of some class of the catalogue (contract section 5),
and the static line over a section is the water level of the last tank above it on its
path from the source (section 8), or the source's top water level. Which sites must
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

from optimiser.milp.scheme_tanks.sites import Site
from optimiser.model import Study
from optimiser.model.lines import Line, study_lines


def fewest_tanks(study: Study, sites: list[Site]) -> float:
    """The fewest new tanks any design of ``study`` needs (``inf``: no choice of sites
    gives every section a class)."""
    head_m = float(max(study.catalogue.allowable_head_m)) - study.surge_allowance_m
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
        starts[line.name] = _along(line, values, head_m, hanging, own)
    return float(starts[lines[0].name][index[top]])


def _along(line: Line, values: np.ndarray, head_m: float, hanging: dict[int, np.ndarray],
           own: dict[int, int]) -> np.ndarray:
    """(K,) fewest tanks from the first node of ``line`` down, for each static level of
    ``values`` arriving there (``hanging``: the branches leaving at each node, ``own``:
    the level index of the site at each node)."""
    pipe = line.route.pipe_level_m
    after = np.zeros(len(values))
    for i in range(line.route.n_sections - 1, -1, -1):
        fits = values - min(pipe[i], pipe[i + 1]) <= head_m + 1e-9
        here = np.where(fits, after + hanging.get(i, 0.0), math.inf)
        if i in own and i > 0:
            here = np.minimum(here, 1.0 + here[own[i]])
        after = here
    return after


def _node(line: Line, chainage_m: float) -> int:
    return int(abs(line.route.chainage_m - chainage_m).argmin())


def covers(study: Study, chosen: list[Site]) -> bool:
    """Every section has some class under the static line of exactly the tanks at
    ``chosen`` (else no design with those tanks exists)."""
    head_m = float(max(study.catalogue.allowable_head_m)) - study.surge_allowance_m
    arriving: dict[str, float] = {}
    for line in study_lines(study):
        level = study.source.top_water_level_m if line.parent is None else arriving[line.name]
        tanks = {_node(line, s.chainage_m): s.water_level_m for s in chosen
                 if s.line == line.name}
        junctions = {_node(line, b.at_chainage_m): b.name for b in study_lines(study)
                     if b.parent == line.name}
        pipe = line.route.pipe_level_m
        for i in range(line.route.n_sections):
            if i in junctions:
                arriving[junctions[i]] = level
            level = tanks.get(i, level)
            if level - min(pipe[i], pipe[i + 1]) > head_m + 1e-9:
                return False
    return True
