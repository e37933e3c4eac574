"""Break-pressure tanks of a study file (contract section 8): ``[[break_pressure_tank]]``
and ``[break_pressure_tanks]``, validated and turned into model records.

A tank stands strictly inside the route (not at the source or the outlet), never at an
offtake or a junction; its water level defaults to the ground at its chainage plus
``[break_pressure_tanks] height_m``. With ``sites = "marked"`` the sites where ``design``
may add tanks are the profile rows whose optional column ``tank_site`` is yes/true/1.
A tank is identified by (branch, chainage): on the trunk, ``"main"``, or on any branch
of a scheme (chainage along that branch).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.geometry.profile import profile_kind
from optimiser.io.schema import StudyFile
from optimiser.io.tables import number, read_rows
from optimiser.model import (
    TRUNK,
    Branch,
    BreakPressureTank,
    Offtake,
    Route,
    Study,
    TankRules,
    TankSites,
)

SITE_COLUMN = "tank_site"
_YES = {"yes", "true", "1", "y"}
_NO = {"", "no", "false", "0", "n"}
SAME_POINT_M = 1e-6
"""Two chainages closer than this are the same point [m] (as ``Route.with_nodes``)."""


def tank_rules(path: Path, spec: StudyFile, profile_path: Path,
               problems: ProblemList) -> TankRules:
    """``[break_pressure_tanks]`` as :class:`TankRules` (with the marked sites read)."""
    table = spec.break_pressure_tanks
    sites = TankSites(table.sites)
    marked: tuple[float, ...] = ()
    if sites is TankSites.MARKED:
        # In a scheme the branches' profiles may carry the marks instead (read by
        # :mod:`optimiser.io.scheme_tank_sites`, which wants one mark somewhere).
        required = not (spec.branch or spec.network)
        kind = profile_kind(profile_path) if spec.network is None else "chainage"
        if kind != "chainage":
            # A route from coordinates has no tank_site column: without this the marks
            # were silently none (the CSV reader cannot read a GPX or GeoJSON file).
            if required:
                problems.add(f"{path}: [break_pressure_tanks] sites = \"marked\" reads the "
                             f"column {SITE_COLUMN} of a profile CSV with chainage_m, but "
                             f"{profile_path.name} is a route from coordinates; give sites "
                             "= \"every point\", or a chainage profile with the column")
        else:
            marked = marked_sites(path, profile_path, problems, required=required)
    return TankRules(table.cost, sites, table.height_m, table.inlet_k, table.outlet_k,
                     table.max_count, marked)


def marked_sites(path: Path, profile_path: Path, problems: ProblemList,
                 required: bool = True) -> tuple[float, ...]:
    """Chainages of the profile rows marked yes/true/1 in column ``tank_site`` (unless
    ``required``, a profile without the column or without a mark has none)."""
    try:
        rows, header = read_rows(profile_path, [], what="profile")
    except InputError:
        return ()  # the profile loader reports the same problem
    if not required and SITE_COLUMN not in header:
        return ()
    if "chainage_m" not in header or SITE_COLUMN not in header:
        problems.add(f"{path}: [break_pressure_tanks] sites = \"marked\" needs a column "
                     f"{SITE_COLUMN} (yes/true/1 at each allowed site) beside chainage_m in "
                     f"{profile_path.name}")
        return ()
    marked: list[float] = []
    for row in rows:
        cell = row.cells.get(SITE_COLUMN, "").strip().lower()
        if cell in _YES:
            try:
                marked.append(float(row.cells["chainage_m"]))
            except ValueError:
                continue  # the profile loader names the bad chainage
        elif cell not in _NO:
            problems.add(f"{profile_path}: line {row.line}: column {SITE_COLUMN}: "
                         f"'{row.cells[SITE_COLUMN]}' is not yes/true/1 or no/false/0/empty")
    if not marked and not problems and required:
        problems.add(f"{profile_path}: column {SITE_COLUMN} marks no row, and "
                     f"{path} sets [break_pressure_tanks] sites = \"marked\"")
    return tuple(marked)


def tank_lines(route: Route, offtakes: Sequence[Offtake], branches: Sequence[Branch]
               ) -> dict[str, tuple[Route, list[Offtake]]]:
    """Each line's route and the points a tank may not stand at: its offtakes and the
    junctions of the branches leaving it (contract section 8)."""
    lines = {TRUNK: (route, list(offtakes))} | {b.name: (b.route, list(b.offtakes))
                                               for b in branches}
    for branch in branches:
        if branch.parent in lines:
            lines[branch.parent][1].append(Offtake(branch.at_chainage_m, 0.0,
                                                   label="a junction"))
    return lines


def study_tanks(path: Path, spec: StudyFile, lines: dict[str, tuple[Route, list[Offtake]]],
                problems: ProblemList) -> tuple[BreakPressureTank, ...]:
    """The study's own tanks (``[[break_pressure_tank]]``), validated against their
    lines (:func:`tank_lines`)."""
    tanks: list[BreakPressureTank] = []
    height = spec.break_pressure_tanks.height_m
    for index, item in enumerate(spec.break_pressure_tank, start=1):
        where = f"{path}: [[break_pressure_tank]] #{index}"
        found = placement_problems(where, item.branch, item.chainage_m, lines)
        problems.items.extend(found)
        if found:
            continue
        level = item.water_level_m
        if level is None:
            level = float(lines[item.branch][0].ground_at(item.chainage_m)) + height
        tanks.append(BreakPressureTank(item.chainage_m, level, item.branch, item.label))
    seen: dict[tuple[str, float], int] = {}
    for index, tank in enumerate(tanks, start=1):
        key = (tank.branch, round(tank.chainage_m, 6))
        if key in seen:
            problems.add(f"{path}: [[break_pressure_tank]] #{index}: another tank "
                         f"(#{seen[key]}) already stands at chainage {tank.chainage_m:g} m")
        seen.setdefault(key, index)
    return tuple(tanks)


def placement_problems(where: str, branch: str, chainage_m: float,
                       lines: dict[str, tuple[Route, list[Offtake]]]) -> list[str]:
    """Why a tank cannot stand at (branch, chainage): a branch the study does not have,
    outside or at an end of the line, or at an offtake or a junction. Empty when it can."""
    if branch not in lines:
        known = ", ".join(repr(name) for name in lines)
        return [f"{where}: branch {branch!r}: the study has no such line (its lines: "
                f"{known})"]
    route, offtakes = lines[branch]
    end = route.total_chainage_m
    # Within SAME_POINT_M of an end is at that end (the route has one node there).
    if not SAME_POINT_M < chainage_m < end - SAME_POINT_M:
        return [f"{where}: chainage_m {chainage_m:g} must lie strictly inside the route "
                f"(between 0 and {end:g} m; not at the source or the outlet)"]
    for offtake in offtakes:
        if abs(offtake.chainage_m - chainage_m) <= SAME_POINT_M:
            name = f" ({offtake.label})" if offtake.label else ""
            return [f"{where}: chainage_m {chainage_m:g} is at an offtake{name}; a tank may "
                    "not stand at an offtake (move it up or down the route)"]
    return []


TANK_FILE_COLUMNS = ["branch", "chainage_m", "water_level_m", "new", "cost", "label"]


def load_tank_file(path: Path, study: Study) -> tuple[BreakPressureTank, ...]:
    """Tanks of a ``break_pressure_tanks.csv`` (as ``design`` writes it), for
    ``check --tanks``: rows that repeat one of the study's own tanks are skipped, the
    others are checked as the design's tanks (``new`` as the file says; a new tank costs
    the study's ``[break_pressure_tanks] cost``, the file's ``cost`` column is
    informative)."""
    rows, _ = read_rows(path, ["chainage_m", "water_level_m"],
                        [c for c in TANK_FILE_COLUMNS if c not in ("chainage_m",
                                                                  "water_level_m")],
                        what="tank file")
    problems = ProblemList()
    own = {(t.branch, round(t.chainage_m, 6)) for t in study.tanks}
    tanks: list[BreakPressureTank] = []
    for row in rows:
        where = f"{path}: line {row.line}"
        chainage = number(path, row, "chainage_m", problems)
        level = number(path, row, "water_level_m", problems)
        branch = row.cells.get("branch", "") or TRUNK
        new = row.cells.get("new", "").strip().lower()
        if new not in _YES | _NO:
            problems.add(f"{where}: column new: '{row.cells['new']}' is not yes/true/1 or "
                         "no/false/0")
        if chainage is None or level is None:
            continue
        found = placement_problems(where, branch, chainage,
                                   tank_lines(study.route, study.offtakes, study.branches))
        problems.items.extend(found)
        if found or (branch, round(chainage, 6)) in own:
            continue
        tanks.append(BreakPressureTank(chainage, level, branch, row.cells.get("label", ""),
                                       new in _YES))
    places = [(t.branch, round(t.chainage_m, 6)) for t in tanks]  # a tank is (line, chainage)
    if len(set(places)) != len(places):
        problems.add(f"{path}: two rows give a tank at the same chainage of the same line")
    problems.raise_if_any()
    return tuple(tanks)
