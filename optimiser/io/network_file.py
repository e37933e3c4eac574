"""The compact form of a scheme (extension): ``[network]`` with a nodes CSV and a links CSV.

For networks of many short links, where a profile per branch is a burden::

    [network]
    nodes = "nodes.csv"    # name, ground_m, demand, min_pressure_m, required_head_m, x_m,
                           # y_m, tank_site
    links = "links.csv"    # from, to, length_m, profile, zone
    source = "reservoir"   # the node at the source's outlet (chainage 0 of the trunk)

This module reads and validates the two files and the tree they form (links point
downstream, from the source; every node but the source is reached by exactly one link);
:mod:`optimiser.io.network_paths` turns the tree into the trunk and branches of a
scheme, the same records as the ``[[branch]]`` form (docs/file-formats.md states the
rule).

With ``[break_pressure_tanks] sites = "marked"`` the sites for new tanks are the nodes
whose optional column ``tank_site`` is yes/true/1 and the inner rows of a link's own
profile marked in the same column (contract section 8, as a profile's; where a marked
node may not hold a tank is judged per path, :func:`optimiser.io.network_paths.tank_marks`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.limits import MIN_SECTION_M
from optimiser.io.profile_file import load_profile
from optimiser.io.schema import StudyFile
from optimiser.io.tables import Row, number, read_rows
from optimiser.io.units import parse_flow_m3_s

NODE_COLUMNS = ["name", "ground_m"]
NODE_OPTIONAL = ["demand", "min_pressure_m", "required_head_m", "x_m", "y_m", "tank_site"]
LINK_COLUMNS = ["from", "to"]
LINK_OPTIONAL = ["length_m", "profile", "zone"]
END_GROUND_TOLERANCE_M = 0.5
"""A link profile's ground at its ends must agree with its nodes' within this [m]."""
LENGTH_TOLERANCE_M = 0.5
"""A link's length_m must agree with the last chainage of its profile within this [m]."""
SITE_COLUMN = "tank_site"
MARK_YES = frozenset({"yes", "true", "1", "y"})
MARK_NO = frozenset({"", "no", "false", "0", "n"})
"""Cells of a ``tank_site`` column (as the profile's, contract section 8)."""


def site_mark(cell: str) -> bool | None:
    """A ``tank_site`` cell: True (yes/true/1), False (no/false/0/empty), None (neither)."""
    text = cell.strip().lower()
    return True if text in MARK_YES else False if text in MARK_NO else None


@dataclass
class Node:
    """A row of the nodes file."""

    line: int
    name: str
    ground_m: float
    demand_m3_s: float = 0.0
    min_pressure_m: float | None = None
    required_head_m: float | None = None
    x_m: float | None = None
    y_m: float | None = None
    tank_site: bool = False
    """Marked yes/true/1 in column ``tank_site``: a site for a new tank."""


@dataclass(eq=False)  # links are compared by identity
class Link:
    """A row of the links file; ``chainage_m``/``ground_m`` include both end nodes."""

    line: int
    start: str
    end: str
    chainage_m: np.ndarray = field(default_factory=lambda: np.zeros(0))
    ground_m: np.ndarray = field(default_factory=lambda: np.zeros(0))
    zone: str = ""
    profile_name: str = ""
    """The file of its own profile, or "" when the link is straight between its nodes."""
    marked_m: tuple[float, ...] = ()
    """Chainages (from its ``from`` node) of its profile's inner rows marked in column
    ``tank_site`` (read only with ``sites = "marked"``)."""

    @property
    def length_m(self) -> float:
        return float(self.chainage_m[-1])


@dataclass
class NetworkTree:
    """The validated network: nodes by name, and each node's links leaving it downstream
    in the order of the links file."""

    nodes_path: Path
    links_path: Path
    source: str
    nodes: dict[str, Node]
    leaving: dict[str, list[Link]]


def read_network(study_path: Path, spec: StudyFile) -> NetworkTree:
    """Read ``[network]``'s files into a validated tree, or raise InputError with every
    problem found."""
    assert spec.network is not None
    nodes_path = (study_path.parent / spec.network.nodes).resolve()
    links_path = (study_path.parent / spec.network.links).resolve()
    problems = ProblemList()
    nodes = links = None
    try:
        nodes = _read_nodes(nodes_path, problems)
    except InputError as error:
        problems.items.extend(error.problems)
    try:
        links = _read_links(links_path, spec, problems)
    except InputError as error:
        problems.items.extend(error.problems)
    if nodes is None or links is None:
        problems.raise_if_any()
    assert nodes is not None and links is not None
    source = spec.network.source
    if source not in nodes:
        problems.add(f"{study_path}: [network] source: {source!r} is not a node of "
                     f"{nodes_path.name}")
    _link_problems(links_path, nodes, links, problems)
    problems.raise_if_any()
    leaving: dict[str, list[Link]] = {name: [] for name in nodes}
    for link in links:
        leaving[link.start].append(link)
    tree = NetworkTree(nodes_path, links_path, source, nodes, leaving)
    _tree_problems(tree, links, problems)
    _end_ground_problems(tree, links, problems)
    problems.raise_if_any()
    return tree


def _read_nodes(path: Path, problems: ProblemList) -> dict[str, Node]:
    rows, _ = read_rows(path, NODE_COLUMNS, NODE_OPTIONAL, what="nodes file")
    nodes: dict[str, Node] = {}
    for row in rows:
        name = row.cells["name"]
        ground = number(path, row, "ground_m", problems)
        demand = _demand(path, row, problems)
        minimum = number(path, row, "min_pressure_m", problems, allow_empty=True)
        required = number(path, row, "required_head_m", problems, allow_empty=True)
        x = number(path, row, "x_m", problems, allow_empty=True)
        y = number(path, row, "y_m", problems, allow_empty=True)
        if bool(row.cells.get("x_m")) != bool(row.cells.get("y_m")):
            problems.add(f"{path}: line {row.line}: give both x_m and y_m, or neither")
        marked = site_mark(row.cells.get(SITE_COLUMN, ""))
        if marked is None:
            problems.add(f"{path}: line {row.line}: column {SITE_COLUMN}: "
                         f"'{row.cells[SITE_COLUMN]}' is not yes/true/1 or no/false/0/empty")
        if not name:
            problems.add(f"{path}: line {row.line}: column name is empty")
            continue
        if name in nodes:
            problems.add(f"{path}: line {row.line}: node {name!r} is already given on line "
                         f"{nodes[name].line}")
            continue
        # A node with a bad cell is kept (its problem is reported) so that its links
        # are not also reported as naming an unknown node.
        nodes[name] = Node(row.line, name, math.nan if ground is None else ground,
                           demand or 0.0, minimum, required, x, y, bool(marked))
    return nodes


def _demand(path: Path, row: Row, problems: ProblemList) -> float | None:
    """The node's demand [m^3/s]: empty or 0 for none, else a flow with its unit."""
    text = row.cells.get("demand", "")
    if text == "" or _is_zero(text):
        return 0.0
    try:
        return parse_flow_m3_s(text)
    except ValueError as error:
        problems.add(f"{path}: line {row.line}: column demand: {error}")
        return None


def _is_zero(text: str) -> bool:
    try:
        return float(text) == 0.0
    except ValueError:
        return False


def _read_links(path: Path, spec: StudyFile, problems: ProblemList) -> list[Link]:
    rows, _ = read_rows(path, LINK_COLUMNS, LINK_OPTIONAL, what="links file")
    links: list[Link] = []
    for row in rows:
        link = Link(row.line, row.cells["from"], row.cells["to"], zone=row.cells.get("zone", ""))
        for column in ("from", "to"):
            if not row.cells[column]:
                problems.add(f"{path}: line {row.line}: column {column} is empty")
        profile = row.cells.get("profile", "")
        length = number(path, row, "length_m", problems, positive=True,
                        allow_empty=bool(profile))
        if length is not None and length < MIN_SECTION_M:
            problems.add(f"{path}: line {row.line}: column length_m must be at least "
                         f"{MIN_SECTION_M:g} m (1 mm), got {length:g}")
            length = None
        if profile:
            _link_profile(path, row, link, spec, length, problems)
        elif length is not None:
            link.chainage_m, link.ground_m = np.array([0.0, length]), np.full(2, math.nan)
        links.append(link)
    return links


def _link_profile(path: Path, row: Row, link: Link, spec: StudyFile, length: float | None,
                  problems: ProblemList) -> None:
    """A link's own profile (section 2 columns; chainage 0 at its ``from`` node)."""
    profile_path = (path.parent / row.cells["profile"]).resolve()
    try:
        route = load_profile(profile_path, spec.route.cover_m, True)
    except InputError as error:
        problems.items.extend(error.problems)
        return
    end = route.total_chainage_m
    if length is not None and abs(length - end) > LENGTH_TOLERANCE_M:
        problems.add(f"{path}: line {row.line}: length_m {length:g} differs from the last "
                     f"chainage of {profile_path.name} ({end:g} m); give one or make them "
                     "agree")
    link.chainage_m, link.ground_m = route.chainage_m, route.ground_m
    link.profile_name = profile_path.name
    if spec.break_pressure_tanks.sites == "marked":
        link.marked_m = _inner_marks(profile_path, end, problems)


def _inner_marks(profile_path: Path, end_m: float, problems: ProblemList
                 ) -> tuple[float, ...]:
    """Chainages of a link profile's rows marked in column ``tank_site``; a mark on its
    first or last row (a node: marked in the nodes file) or a bad cell is a problem."""
    rows, header = read_rows(profile_path, [], what="profile")
    if SITE_COLUMN not in header:
        return ()
    marked: list[float] = []
    for row in rows:
        where = f"{profile_path}: line {row.line}: column {SITE_COLUMN}"
        mark = site_mark(row.cells[SITE_COLUMN])
        if mark is None:
            problems.add(f"{where}: '{row.cells[SITE_COLUMN]}' is not yes/true/1 or "
                         "no/false/0/empty")
        if not mark:
            continue
        chainage = float(row.cells["chainage_m"])  # the profile loader read it already
        if chainage <= 0.0 or chainage >= end_m:
            problems.add(f"{where}: marks an end of the link (a node); mark nodes in the "
                         "nodes file's tank_site column")
        else:
            marked.append(chainage)
    return tuple(marked)


def _link_problems(path: Path, nodes: dict[str, Node], links: list[Link],
                   problems: ProblemList) -> None:
    """Links naming unknown nodes, joining a node to itself, or arriving twice at a node."""
    arriving: dict[str, int] = {}
    for link in links:
        for column, name in (("from", link.start), ("to", link.end)):
            if name and name not in nodes:
                problems.add(f"{path}: line {link.line}: column {column}: no node is named "
                             f"{name!r} in the nodes file")
        if link.start and link.start == link.end:
            problems.add(f"{path}: line {link.line}: the link joins node {link.start!r} to "
                         "itself")
            continue
        if link.end in arriving:
            problems.add(f"{path}: line {link.line}: node {link.end!r} is reached twice "
                         f"(also by the link on line {arriving[link.end]}): a loop or a "
                         "second supply; a scheme is a tree, each node fed by one link")
        elif link.end:
            arriving[link.end] = link.line


def _tree_problems(tree: NetworkTree, links: list[Link], problems: ProblemList) -> None:
    """A link into the source, second sources, nodes on no link, loops away from the
    source."""
    path = tree.links_path
    arriving = {link.end for link in links}
    for link in links:
        if link.end == tree.source:
            problems.add(f"{path}: line {link.line}: the link arrives at the source node "
                         f"{tree.source!r}; links point downstream, away from the source")
    reached = _below(tree, [tree.source])
    unreached = [name for name in tree.nodes if name not in reached]
    isolated = [n for n in unreached if n not in arriving and not tree.leaving[n]]
    sources = [n for n in unreached if n not in arriving and tree.leaving[n]]
    nodes_path = tree.nodes_path
    for name in isolated:
        problems.add(f"{nodes_path}: line {tree.nodes[name].line}: node {name!r} is on no "
                     "link (disconnected)")
    for name in sources:
        problems.add(f"{nodes_path}: line {tree.nodes[name].line}: node {name!r} has links "
                     "leaving it and none arriving: a second source (the network has one, "
                     f"[network] source = {tree.source!r})")
    in_loops = [n for n in unreached if n not in _below(tree, sources) and n not in isolated]
    if in_loops:
        listed = ", ".join(repr(n) for n in in_loops[:10])
        problems.add(f"{path}: nodes {listed}{' ...' if len(in_loops) > 10 else ''} are not "
                     f"connected to the source {tree.source!r} (their links form a loop)")


def _below(tree: NetworkTree, starts: list[str]) -> set[str]:
    """Nodes reached from ``starts`` following links downstream (``starts`` included)."""
    seen = set(starts)
    stack = list(starts)
    while stack:
        for link in tree.leaving[stack.pop()]:
            if link.end not in seen:
                seen.add(link.end)
                stack.append(link.end)
    return seen


def _end_ground_problems(tree: NetworkTree, links: list[Link], problems: ProblemList) -> None:
    """Node levels at both ends of every link; a link profile's ends must agree with them."""
    for link in links:
        ends = (tree.nodes[link.start].ground_m, tree.nodes[link.end].ground_m)
        if np.isnan(link.ground_m).all():
            link.ground_m = np.array(ends)
            continue
        name = link.profile_name
        for side, node_name, ground, own in (("start", link.start, ends[0], link.ground_m[0]),
                                             ("end", link.end, ends[1], link.ground_m[-1])):
            if abs(own - ground) > END_GROUND_TOLERANCE_M:
                problems.add(f"{tree.links_path}: line {link.line}: the ground at the "
                             f"{side} of {name} ({own:.2f} m) differs from node "
                             f"{node_name!r} in {tree.nodes_path.name} ({ground:.2f} m) by "
                             f"{abs(own - ground):.2f} m; they must agree within "
                             f"{END_GROUND_TOLERANCE_M:g} m")
        link.ground_m = np.concatenate([[ends[0]], link.ground_m[1:-1], [ends[1]]])
