"""The compact form's tree (:mod:`optimiser.io.network_file`) as a trunk and branches.

The rule (documented in docs/file-formats.md):

- The downstream demand of a node is its own demand plus that of every node below it
  (nominal demands of the nodes file, before any scenario factor).
- A path starts at a node and, at each node, follows the link leaving it whose end
  node has the largest downstream demand (ties: the link given first in the links
  file), until a node with no link leaving it.
- The trunk ``"main"`` is the path from the source. Every other link leaving a node of a
  path starts a branch: the path from that link's end node, with the junction node as
  its chainage 0. The branch is named after the node it ends at. Branches of branches
  follow the same rule.
- Chainage along a path is the sum of link lengths (horizontal, as a profile's); the
  nodes are its profile points (labelled with their names), with a link profile's
  interior points between them. A link's zone applies to all of its sections.
- Demand at a node inside a path is an offtake there (with the node's
  ``min_pressure_m``, if given; a node with a minimum pressure and no demand becomes an
  offtake of zero flow, so its minimum still applies). Demand at the node a path ends
  at is that path's delivery flow (the trunk's: every scenario's outlet flow times its
  ``branch_factor``, unless the scenario gives ``flow``).
- The energy that must remain at a path's end is the node's ``required_head_m`` or, by
  default, its ground level plus its minimum pressure (the node's, else
  ``[route] min_pressure_m``), with exit_k = 1: the hydraulic grade line at the end
  node stands at least that minimum pressure above the ground (residual pressure at a
  tap or a tank inlet at ground level).
- Sites for new tanks with ``sites = "marked"`` (contract section 8): the marked nodes
  and the marked inner rows of link profiles, each on the path it lies inside. A marked
  node where a tank may not stand (the source or a path's last node, a junction, an
  offtake) is a problem naming the node.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from optimiser.io.branches import BranchDraft
from optimiser.io.errors import InputError
from optimiser.io.network_file import Link, NetworkTree, Node, read_network
from optimiser.io.schema import StudyFile
from optimiser.model import Offtake, Outlet, Route, Scenario
from optimiser.model.route import RouteCoordinates
from optimiser.model.scheme import TRUNK

EXIT_K = 1.0
"""Exit loss coefficient at every end node of the compact form (see the module text)."""


@dataclass
class NetworkPath:
    """A path of the tree: the node it starts at and the links it follows."""

    start: str
    links: list[Link]
    parent: str = TRUNK
    at_chainage_m: float = 0.0

    @property
    def end(self) -> str:
        return self.links[-1].end

    def node_chainages(self) -> list[tuple[str, float]]:
        """Its nodes with their chainage along it."""
        chainage = 0.0
        found = [(self.start, 0.0)]
        for link in self.links:
            chainage += link.length_m
            found.append((link.end, chainage))
        return found


def downstream_demand(tree: NetworkTree) -> dict[str, float]:
    """Each node's own demand plus every node's below it [m^3/s]."""
    order: list[str] = []
    stack = [tree.source]
    while stack:  # depth first, parents before children
        name = stack.pop()
        order.append(name)
        stack.extend(link.end for link in tree.leaving[name])
    total = {name: tree.nodes[name].demand_m3_s for name in order}
    for name in reversed(order):
        total[name] += sum(total[link.end] for link in tree.leaving[name])
    return total


def paths(tree: NetworkTree) -> list[NetworkPath]:
    """The trunk, then every branch, parents before children (rule of the module text)."""
    demand = downstream_demand(tree)

    def follow(start: str, first: Link | None) -> list[Link]:
        links = [first] if first is not None else []
        node = first.end if first is not None else start
        while tree.leaving[node]:
            best = max(tree.leaving[node], key=lambda link: demand[link.end])  # first wins
            links.append(best)
            node = best.end
        return links

    found = [NetworkPath(tree.source, follow(tree.source, None))]
    index = 0
    while index < len(found):
        path = found[index]
        name = TRUNK if index == 0 else path.end
        first = 0 if index == 0 else 1  # a branch's first node is its parent's
        for node, chainage in path.node_chainages()[first:-1]:
            for link in tree.leaving[node]:
                if all(link is not own for own in path.links):
                    found.append(NetworkPath(node, follow(node, link), name, chainage))
        index += 1
    return found


def path_route(tree: NetworkTree, path: NetworkPath, cover_m: float,
               slope_length: bool) -> Route:
    """The path as a route: nodes and link-profile points, labels, zones, plan."""
    chainage, ground, labels, zones = [0.0], [tree.nodes[path.start].ground_m], \
        [path.start], []
    for link in path.links:
        offset = chainage[-1]
        chainage.extend(offset + link.chainage_m[1:])
        ground.extend(link.ground_m[1:])
        labels.extend([""] * (len(link.chainage_m) - 2) + [link.end])
        zones.extend([link.zone] * (len(link.chainage_m) - 1))
    route = Route(np.array(chainage), np.array(ground), cover_m, labels, zones, slope_length)
    nodes = [tree.nodes[name] for name, _ in path.node_chainages()]
    if all(node.x_m is not None for node in nodes):
        route.coordinates = RouteCoordinates(
            None, np.array([c for _, c in path.node_chainages()]),
            np.array([node.x_m for node in nodes]), np.array([node.y_m for node in nodes]),
            (f"plan: x_m, y_m of the nodes in {tree.nodes_path.name} (a local grid)",))
    return route


def node_offtakes(tree: NetworkTree, path: NetworkPath) -> list[Offtake]:
    """Demands (and minimum pressures) of the nodes inside a path, as offtakes."""
    offtakes = []
    for name, chainage in path.node_chainages()[1:-1]:
        node = tree.nodes[name]
        if node.demand_m3_s > 0.0 or node.min_pressure_m is not None:
            offtakes.append(Offtake(chainage, node.demand_m3_s, node.min_pressure_m, name))
    return offtakes


def end_head_m(node: Node, route_min_pressure_m: float) -> float:
    """Energy that must remain at an end node: its own, or ground + minimum pressure."""
    if node.required_head_m is not None:
        return node.required_head_m
    minimum = route_min_pressure_m if node.min_pressure_m is None else node.min_pressure_m
    return node.ground_m + minimum


def end_problems(tree: NetworkTree, found: list[NetworkPath]) -> list[str]:
    """A source with a demand, a required head where no path ends, and a branch ending
    at a node named like the trunk."""
    problems = []
    source = tree.nodes[tree.source]
    if source.demand_m3_s > 0.0:
        problems.append(f"{tree.nodes_path}: line {source.line}: the source node "
                        f"{tree.source!r} has a demand; it is drawn before the pipe, so "
                        "give it at a node below the source")
    ends = {path.end for path in found}
    for node in tree.nodes.values():
        # Only a path's end has a delivery head (module rule 7): elsewhere the column
        # was silently ignored.
        if node.required_head_m is not None and node.name not in ends:
            problems.append(f"{tree.nodes_path}: line {node.line}: column required_head_m: "
                            f"node {node.name!r} is not the end of a path (a delivery "
                            "point), where alone a required head applies; leave it empty")
    for path in found[1:]:
        if path.end == TRUNK:
            problems.append(f"{tree.nodes_path}: line {tree.nodes[path.end].line}: node "
                            f"{TRUNK!r} ends a branch, which is named after it; {TRUNK!r} "
                            "is the trunk's name, so rename the node")
    leaving = tree.leaving[tree.source]
    if not leaving:
        problems.append(f"{tree.links_path}: no link leaves the source node "
                        f"{tree.source!r}")
    elif len(leaving) > 1:
        lines = ", ".join(str(link.line) for link in leaving)
        problems.append(f"{tree.links_path}: lines {lines}: {len(leaving)} links leave the "
                        f"source node {tree.source!r}; a scheme has one pipe leaving its "
                        "source and branches leave strictly inside a pipe, so add a node "
                        "just below the source where they divide")
    return problems


def tank_marks(tree: NetworkTree, found: list[NetworkPath]
               ) -> tuple[tuple[tuple[str, float], ...], tuple[str, ...]]:
    """The marked sites as (line, chainage), and a problem for every marked node that
    cannot hold a tank (module text). Each node is judged on the path it lies inside (a
    branch's first node is its parent's junction)."""
    sites: list[tuple[str, float]] = []
    problems: list[str] = []
    for index, path in enumerate(found):
        line = TRUNK if index == 0 else path.end
        nodes = path.node_chainages()
        for position, (name, chainage) in enumerate(nodes):
            node = tree.nodes[name]
            if (position == 0 and index > 0) or not node.tank_site:
                continue
            why = _no_tank_because(tree, node, position == 0, position == len(nodes) - 1)
            if why:
                problems.append(f"{tree.nodes_path}: line {node.line}: column tank_site: "
                                f"node {name!r} is {why}; a tank may not stand there "
                                "(unmark it)")
            else:
                sites.append((line, chainage))
        offset = 0.0
        for link in path.links:
            sites.extend((line, offset + c) for c in link.marked_m)
            offset += link.length_m
    return tuple(sites), tuple(problems)


def _no_tank_because(tree: NetworkTree, node: Node, first: bool, last: bool) -> str:
    """Why a tank may not stand at a node of a path ("" when it may)."""
    if first:
        return "the source"
    if last:
        return "the end of a path (a delivery point)"
    if len(tree.leaving[node.name]) > 1:
        return "a junction (a branch leaves it)"
    if node.demand_m3_s > 0.0 or node.min_pressure_m is not None:
        return "an offtake (it has a demand or a minimum pressure of its own)"
    return ""


@dataclass
class NetworkScheme:
    """The compact form resolved: the trunk with its offtakes and outlet, the branches
    as drafts for :func:`optimiser.io.branches.resolve_branches`, and the sites marked
    for new tanks with the problems of marked nodes (:func:`tank_marks`; reported only
    when the study uses marked sites)."""

    route: Route
    offtakes: tuple[Offtake, ...]
    outlet: Outlet
    trunk_flow_m3_s: float
    drafts: list[BranchDraft]
    marked_sites: tuple[tuple[str, float], ...] = ()
    mark_problems: tuple[str, ...] = ()

    def with_trunk_flow(self, scenarios: list[Scenario]) -> list[Scenario]:
        """Scenarios without a ``flow`` of their own deliver the trunk's end demand times
        their branch_factor."""
        return [dataclasses.replace(s, outlet_flow_m3_s=s.branch_factor * self.trunk_flow_m3_s)
                if math.isnan(s.outlet_flow_m3_s) else s for s in scenarios]


def network_scheme(tree: NetworkTree, cover_m: float, slope_length: bool,
                   min_pressure_m: float, local_k_per_km: float) -> NetworkScheme:
    """The trunk and branches of a validated tree."""
    found = paths(tree)
    problems = end_problems(tree, found)
    if problems:
        raise InputError(problems)
    routes = [path_route(tree, path, cover_m, slope_length) for path in found]
    trunk = found[0]
    drafts = []
    for path, route in zip(found[1:], routes[1:], strict=True):
        end = tree.nodes[path.end]
        drafts.append(BranchDraft(
            path.end, path.parent, path.at_chainage_m, route, end.demand_m3_s,
            end_head_m(end, min_pressure_m),
            f"{tree.links_path}: branch {path.end!r} (from node {path.start!r} to node "
            f"{path.end!r}, line {path.links[0].line} on)", tree.links_path.name, EXIT_K,
            0.0, min_pressure_m, local_k_per_km, [], node_offtakes(tree, path)))
    end = tree.nodes[trunk.end]
    return NetworkScheme(routes[0], tuple(node_offtakes(tree, trunk)),
                         Outlet(end_head_m(end, min_pressure_m), EXIT_K), end.demand_m3_s,
                         drafts, *tank_marks(tree, found))


def load_network(study_path: Path, spec: StudyFile) -> NetworkScheme:
    """``[network]``'s files as the trunk and branches of a scheme (InputError if bad)."""
    tree = read_network(study_path, spec)
    route = spec.route
    return network_scheme(tree, route.cover_m, route.length == "slope", route.min_pressure_m,
                          route.local_k_per_km)
