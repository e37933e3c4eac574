"""Marked sites for new break-pressure tanks in a branched scheme (contract section 8).

With ``[break_pressure_tanks] sites = "marked"`` the sites are the profile rows whose
column ``tank_site`` is yes/true/1, on the trunk's profile (read with the other tank
keys, :mod:`optimiser.io.tank_inputs`) and on each ``[[branch]]``'s own profile (read
here; a branch profile without the column has no site). A marked row at an offtake or
at a junction (where a branch leaves) is refused: a tank may not stand there. The first
and last rows of a line are never sites, marked or not. In the compact form
(``[network]``) the marks are the nodes file's ``tank_site`` column and the inner rows
of link profiles (read by :mod:`optimiser.io.network_file`, placed on their lines by
:func:`optimiser.io.network_paths.tank_marks`).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.network_paths import NetworkScheme
from optimiser.io.schema import StudyFile
from optimiser.io.tables import read_rows
from optimiser.io.tank_inputs import SITE_COLUMN, tank_lines
from optimiser.model import TRUNK, Branch, Offtake, Route, TankRules, TankSites

_YES = {"yes", "true", "1", "y"}
_NO = {"", "no", "false", "0", "n"}
SAME_POINT_M = 1e-6


def scheme_tank_sites(path: Path, spec: StudyFile, rules: TankRules, route: Route,
                      offtakes: list[Offtake], branches: tuple[Branch, ...],
                      problems: ProblemList, network: NetworkScheme | None = None
                      ) -> TankRules:
    """``rules`` with the branches' marked sites (module docstring); every marked row at
    an offtake or a junction is a problem naming its file and line."""
    if rules.cost is None or rules.sites is not TankSites.MARKED:
        return rules
    if network is not None:
        return _network_sites(path, spec, rules, network, problems)
    if not branches:
        return rules
    lines = tank_lines(route, offtakes, branches)
    profiles = {TRUNK: path.parent / str(spec.route.profile)} | {
        item.name: path.parent / item.profile for item in spec.branch}
    found: list[tuple[str, float]] = []
    for name, profile in profiles.items():
        if name not in lines:
            continue  # a branch the loader refused already
        found += [(name, c) for c in _marked_rows(profile, lines[name], problems)]
    if not found and not problems:
        problems.add(f"{path}: [break_pressure_tanks] sites = \"marked\": no row of the "
                     f"trunk's or any branch's profile is marked yes/true/1 in column "
                     f"{SITE_COLUMN}")
    return dataclasses.replace(rules, marked_on_branches=tuple(
        (name, c) for name, c in found if name != TRUNK))


def _network_sites(path: Path, spec: StudyFile, rules: TankRules, network: NetworkScheme,
                   problems: ProblemList) -> TankRules:
    """The compact form's marked nodes and link-profile rows as the sites of every line."""
    problems.items.extend(network.mark_problems)
    sites = network.marked_sites
    if not sites and not network.mark_problems:
        assert spec.network is not None
        problems.add(f"{path}: [break_pressure_tanks] sites = \"marked\" with [network]: no "
                     f"node of {spec.network.nodes} is marked yes/true/1 in column "
                     f"{SITE_COLUMN}, nor any inner row of a link's profile")
    return dataclasses.replace(
        rules, marked_chainages_m=tuple(c for name, c in sites if name == TRUNK),
        marked_on_branches=tuple((name, c) for name, c in sites if name != TRUNK))


def _marked_rows(profile: Path, line: tuple[Route, list[Offtake]],
                 problems: ProblemList) -> list[float]:
    """Chainages of the rows of ``profile`` marked as sites (none without the column)."""
    try:
        rows, header = read_rows(profile, [], what="profile")
    except InputError:
        return []  # the profile loader reports the same problem
    if SITE_COLUMN not in header:
        return []
    route, blocked = line
    marked: list[float] = []
    for row in rows:
        cell = row.cells.get(SITE_COLUMN, "").strip().lower()
        if cell in _NO:
            continue
        where = f"{profile}: line {row.line}: column {SITE_COLUMN}"
        if cell not in _YES:
            problems.add(f"{where}: '{row.cells[SITE_COLUMN]}' is not yes/true/1 or "
                         "no/false/0/empty")
            continue
        try:
            chainage = float(row.cells.get("chainage_m", ""))
        except ValueError:
            continue  # the profile loader names the bad chainage
        for offtake in blocked:
            if abs(offtake.chainage_m - chainage) <= SAME_POINT_M and \
                    0.0 < chainage < route.total_chainage_m:
                what = offtake.label if offtake.label == "a junction" else \
                    f"an offtake{f' ({offtake.label})' if offtake.label else ''}"
                problems.add(f"{where}: marks chainage {chainage:g} m, at {what}; a "
                             "tank may not stand at an offtake or a junction (unmark the row)")
                break
        else:
            marked.append(chainage)
    return marked
