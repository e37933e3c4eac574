"""Sets of new tanks to try on a scheme: placed by rule, and the moves around a set.

Placed by rule (:func:`placed_by_head`): walking down every line from the source
(parents first, each branch starting under the static line its junction sees), a tank
goes at the last site above the first node where the static head would pass a given
head (a class's allowable head less the surge allowance); one set per class of the
catalogue (by wave speed, with a typical surge of the class, :func:`class_heads_m`), so
the search starts from the sets that let each class be laid everywhere it can carry the
flow. The moves (:func:`moves`): drop a tank, shift it to a
neighbouring site of its line, add one where the static head is largest. These only
propose sets; each is priced by designing the scheme with those tanks fixed.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from optimiser.milp.scheme_tanks.sites import Site
from optimiser.milp.scheme_tanks.wave_surge import (
    by_wave_speed,
    fastest_m_s,
    lengths_m,
    margins_m,
)
from optimiser.model import Study
from optimiser.model.lines import Line, study_lines

Choice = frozenset[Site]


def class_heads_m(study: Study) -> list[float]:
    """The static heads each class of the catalogue takes, highest first: its allowable
    head less the surge allowance; by wave speed (contract section 10), the most any
    option of the class takes with its surge at its velocity in the trunk's first
    section (the most flow) and the slow-closure length of no tank (a rule of thumb
    for placing tanks, never a bound)."""
    catalogue = study.catalogue
    if not by_wave_speed(study):
        heads = catalogue.allowable_head_m - study.surge_allowance_m
        return sorted({float(h) for h in heads if h > 0}, reverse=True)
    trunk = study_lines(study)[0]
    first = margins_m(study, fastest_m_s(study, trunk)[:1],
                      lengths_m(study, (), trunk)[:1])[0]
    allowable = catalogue.allowable_head_m
    heads = [float(first[allowable == a].max()) for a in np.unique(allowable)]
    return sorted({h for h in heads if h > 0}, reverse=True)


def placed_by_head(study: Study, sites: list[Site], head_m: float) -> Choice:
    """Tanks so that the static head stays within ``head_m`` wherever a site above
    allows it (module docstring)."""
    chosen: set[Site] = set()
    for line in study_lines(study):
        start = study.source.top_water_level_m if line.parent is None else \
            _level_at(study, chosen, line.parent, line.at_chainage_m)
        chosen |= _placed_on_line(line, [s for s in sites if s.line == line.name], start,
                                  head_m)
    return frozenset(chosen)


def _level_at(study: Study, chosen: set[Site], name: str, chainage_m: float) -> float:
    """The static line just above ``chainage_m`` of line ``name`` under ``chosen``."""
    above = [s for s in chosen if s.line == name and s.chainage_m < chainage_m]
    if above:
        return max(above, key=lambda s: s.chainage_m).water_level_m
    line = next(x for x in study_lines(study) if x.name == name)
    if line.parent is None:
        return study.source.top_water_level_m
    return _level_at(study, chosen, line.parent, line.at_chainage_m)


def _placed_on_line(line: Line, sites: list[Site], start_m: float, head_m: float
                    ) -> set[Site]:
    chosen: set[Site] = set()
    by_chainage = {round(s.chainage_m, 6): s for s in sites}
    level, last_site = start_m, None
    pipe = line.route.pipe_level_m
    for i, chainage in enumerate(line.route.chainage_m.tolist()):
        if level - pipe[i] > head_m and last_site is not None:
            chosen.add(last_site)
            level, last_site = last_site.water_level_m, None
        site = by_chainage.get(round(chainage, 6))
        if site is not None:
            last_site = site
    return chosen


def moves(study: Study, sites: list[Site], choice: Choice, max_count: int | None
          ) -> Iterator[Choice]:
    """Sets next to ``choice``: each tank dropped, each shifted one or two sites up or
    down its line, and a tank added at the site of largest static head below the last
    tank of each line (at most ``max_count`` tanks)."""
    for site in sorted(choice):
        yield choice - {site}
    on_line = {name: sorted(s for s in sites if s.line == name) for name in {s.line for s in sites}}
    for site in sorted(choice):
        own = on_line[site.line]
        i = own.index(site)
        for step in (-1, 1, -2, 2):
            if 0 <= i + step < len(own) and own[i + step] not in choice:
                yield (choice - {site}) | {own[i + step]}
    if max_count is not None and len(choice) >= max_count:
        return
    for added in _deepest_sites(study, on_line, choice):
        yield choice | {added}


def _deepest_sites(study: Study, on_line: dict[str, list[Site]], choice: Choice
                   ) -> list[Site]:
    """On each line, the free site under the largest static head (its level furthest
    below the static line there): where one more tank lowers the static line most."""
    found = []
    for line in study_lines(study):
        own = [s for s in on_line.get(line.name, []) if s not in choice]
        if not own:
            continue
        start = study.source.top_water_level_m if line.parent is None else \
            _level_at(study, set(choice), line.parent, line.at_chainage_m)
        tanks = sorted(s for s in choice if s.line == line.name)
        level = np.full(len(own), start)
        for tank in tanks:
            level[[s.chainage_m > tank.chainage_m for s in own]] = tank.water_level_m
        head = level - np.array([s.water_level_m for s in own])
        found.append(own[int(np.argmax(head))])
    return found
