"""Branched schemes (contract section 7): ``[[branch]]`` tables into :class:`Branch` records.

Both ways of writing a scheme end here: the ``[[branch]]`` tables of the study file
(:func:`branch_drafts`) and the nodes and links of ``[network]``
(:mod:`optimiser.io.network_file`) give :class:`BranchDraft` records, and
:func:`resolve_branches` turns them into the study's branches the same way: parents
before children, junctions strictly inside their parent with the ground agreeing, a node
on the parent at every junction, at every fitting and offtake of each branch.
:func:`scenario_branch_flows` reads each scenario's ``branch_factor`` and ``branch_flow``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.geometry import load_coordinate_profile, profile_kind
from optimiser.io.profile_file import load_profile
from optimiser.io.schema import BranchTable, StudyFile
from optimiser.io.units import parse_flow_m3_s
from optimiser.model import Fitting, Offtake, Route, Scenario
from optimiser.model.scheme import TRUNK, Branch

JUNCTION_GROUND_TOLERANCE_M = 0.5
"""Largest difference [m] between a branch's ground at its chainage 0 and its parent's
ground at the junction (contract section 7)."""


@dataclass
class BranchDraft:
    """A branch as written, before it is placed in the tree."""

    name: str
    parent: str
    at_chainage_m: float
    route: Route
    flow_m3_s: float | None
    """None: not given (each scenario must then give it in ``branch_flow``)."""
    required_head_m: float
    where: str
    """Where it is written, for messages: ``study.toml: [[branch]] #2 ('north')``."""
    profile_label: str
    exit_k: float = 1.0
    junction_k: float = 0.0
    min_pressure_m: float = 0.0
    local_k_per_km: float = 0.0
    fittings: list[Fitting] = field(default_factory=list)
    offtakes: list[Offtake] = field(default_factory=list)
    flow_given: bool = True
    """False when ``flow`` is not written (a bad flow is written, and reported once)."""

    def branch(self, route: Route) -> Branch:
        return Branch(self.name, self.parent, self.at_chainage_m, route,
                      self.flow_m3_s or 0.0, self.required_head_m, self.exit_k,
                      self.junction_k, self.min_pressure_m, self.local_k_per_km,
                      tuple(self.fittings), tuple(self.offtakes), self.profile_label)


def form_problems(path: Path, spec: StudyFile) -> None:
    """Keys required by one form of the study and refused by the other: a route study
    needs ``[route] profile``, ``[outlet]`` and every scenario's ``flow``; with
    ``[network]`` the nodes and links give the route, the offtakes and the delivery
    points, so those keys may not be written as well."""
    problems = ProblemList()
    if spec.network is None:
        if spec.route.profile is None:
            problems.add(f"{path}: [route] profile: required key is missing")
        if spec.outlet is None:
            problems.add(f"{path}: key outlet: required key is missing")
        for index, item in enumerate(spec.scenario, start=1):
            if item.flow is None:
                problems.add(f"{path}: [[scenario]] #{index} flow: required key is missing")
    else:
        given = [what for what, present in (
            ("[route] profile", spec.route.profile is not None),
            ("[outlet]", spec.outlet is not None), ("[[branch]]", bool(spec.branch)),
            ("[[offtake]]", bool(spec.offtake)), ("[[route.fitting]]", bool(spec.route.fitting)),
            ("[route] crs", spec.route.crs is not None),
            ("[route] ground_raster", spec.route.ground_raster is not None)) if present]
        for what in given:
            problems.add(f"{path}: {what}: not used with [network] (the nodes and links "
                         "files give the route, its offtakes and delivery points); remove it")
    problems.raise_if_any()


def branch_drafts(path: Path, spec: StudyFile, problems: ProblemList) -> list[BranchDraft]:
    """The ``[[branch]]`` tables with their profiles, fittings and offtakes."""
    drafts: list[BranchDraft] = []
    names: set[str] = set()
    for index, table in enumerate(spec.branch, start=1):
        where = f"{path}: [[branch]] #{index} ({table.name!r})"
        if table.name == TRUNK:
            problems.add(f"{where} name: {TRUNK!r} is the trunk's name; choose another")
            continue
        if table.name in names:
            problems.add(f"{where} name: another branch already has this name")
            continue
        names.add(table.name)
        draft = _draft(path, spec, table, where, problems)
        if draft is not None:
            drafts.append(draft)
    _branch_offtakes(path, spec, drafts, problems)
    return drafts


def _draft(path: Path, spec: StudyFile, table: BranchTable, where: str,
           problems: ProblemList) -> BranchDraft | None:
    flow = None
    flow_given = table.flow is not None
    if flow_given:
        try:
            flow = parse_flow_m3_s(table.flow)
        except ValueError as error:
            problems.add(f"{where} flow: {error}")
    profile_path = (path.parent / table.profile).resolve()
    cover = spec.route.cover_m if table.cover_m is None else table.cover_m
    try:
        route = _branch_profile(path, spec, profile_path, cover)
    except InputError as error:
        problems.items.extend(error.problems)
        return None
    end = route.total_chainage_m
    fittings = []
    for number, item in enumerate(table.fitting, start=1):
        if not 0.0 <= item.chainage_m <= end:
            problems.add(f"{where} [[fitting]] #{number} chainage_m {item.chainage_m:g} is "
                         f"outside the branch (0 to {end:g} m in {profile_path.name})")
        fittings.append(Fitting(item.chainage_m, item.k, item.label))
    return BranchDraft(
        table.name, table.from_, table.at_chainage_m, route, flow, table.required_head_m,
        where, profile_path.name, table.exit_k, table.junction_k,
        spec.route.min_pressure_m if table.min_pressure_m is None else table.min_pressure_m,
        spec.route.local_k_per_km if table.local_k_per_km is None else table.local_k_per_km,
        fittings, flow_given=flow_given)


def _branch_profile(path: Path, spec: StudyFile, profile_path: Path, cover_m: float) -> Route:
    """A branch's profile: a chainage CSV (section 2), or coordinates (section 11) read with
    the ``[route]`` table's coordinate settings."""
    slope = spec.route.length == "slope"
    if profile_kind(profile_path) == "chainage":
        return load_profile(profile_path, cover_m, slope)
    route = load_coordinate_profile(profile_path, spec.route, path, cover_m, slope)
    assert route is not None
    return route


def _branch_offtakes(path: Path, spec: StudyFile, drafts: list[BranchDraft],
                     problems: ProblemList) -> None:
    """``[[offtake]]`` tables naming a branch, onto that branch's draft."""
    by_name = {draft.name: draft for draft in drafts}
    known = {table.name for table in spec.branch}
    for index, item in enumerate(spec.offtake, start=1):
        if item.branch == TRUNK:
            continue
        where = f"{path}: [[offtake]] #{index}"
        if item.branch not in known:
            problems.add(f"{where} branch: no branch is named {item.branch!r} "
                         f"(branches: {_names(known)})")
            continue
        draft = by_name.get(item.branch)
        if draft is None:
            continue  # its profile could not be read; already reported
        end = draft.route.total_chainage_m
        if not 0.0 <= item.chainage_m <= end:
            problems.add(f"{where} chainage_m {item.chainage_m:g} is outside branch "
                         f"{item.branch!r} (0 to {end:g} m in {draft.profile_label})")
        try:
            flow = parse_flow_m3_s(item.flow)
        except ValueError as error:
            problems.add(f"{where} flow: {error}")
            continue
        draft.offtakes.append(Offtake(item.chainage_m, flow, item.min_pressure_m, item.label))


def _names(names: set[str] | list[str]) -> str:
    return ", ".join(repr(name) for name in sorted(names)) or "none"


def resolve_branches(drafts: list[BranchDraft], trunk: Route, trunk_label: str,
                     problems: ProblemList) -> tuple[tuple[Branch, ...], list[float]]:
    """Branches parents before children (each with a node at its fittings, offtakes and
    children's junctions), and the junction chainages on the trunk.

    Problems: an unknown parent, a cycle, a junction not strictly inside its parent, a
    branch's ground at chainage 0 more than :data:`JUNCTION_GROUND_TOLERANCE_M` from its
    parent's at the junction.
    """
    by_name = {draft.name: draft for draft in drafts}
    ordered = _tree_order(drafts, by_name, problems)
    routes = {TRUNK: (trunk, trunk_label)} | {d.name: (d.route, d.profile_label)
                                              for d in drafts}
    for draft in ordered:
        parent_route, parent_label = routes[draft.parent]
        _junction_problems(draft, parent_route, parent_label, problems)
    junctions: dict[str, list[float]] = {}
    for draft in ordered:
        junctions.setdefault(draft.parent, []).append(draft.at_chainage_m)
    branches = []
    for draft in ordered:
        end = draft.route.total_chainage_m
        points = [f.chainage_m for f in draft.fittings] + \
            [o.chainage_m for o in draft.offtakes] + junctions.get(draft.name, [])
        # chainages off the branch are reported elsewhere; the rest become nodes
        route = draft.route.with_nodes([c for c in points if 0.0 <= c <= end])
        branches.append(draft.branch(route))
    return tuple(branches), junctions.get(TRUNK, [])


def _tree_order(drafts: list[BranchDraft], by_name: dict[str, BranchDraft],
                problems: ProblemList) -> list[BranchDraft]:
    """Drafts whose parents chain up to the trunk, parents before children (file order
    among siblings); unknown parents and cycles reported."""
    ordered: list[BranchDraft] = []
    placed = {TRUNK}
    for draft in drafts:
        if draft.parent != TRUNK and draft.parent not in by_name:
            problems.add(f"{draft.where} from: no branch is named {draft.parent!r} (it must "
                         f"be {TRUNK!r} or a branch of this file: {_names(list(by_name))})")
    reported: set[str] = set()
    for draft in drafts:
        chain = [draft.name]
        current = draft
        while current.parent not in placed and current.parent in by_name:
            current = by_name[current.parent]
            if current.name in chain:
                cycle = [*chain[chain.index(current.name):], current.name]
                if not reported & set(cycle):
                    problems.add(f"{current.where} from: the branches form a cycle "
                                 f"({' -> '.join(repr(n) for n in cycle)}); every branch "
                                 f"must lead back to {TRUNK!r}")
                reported.update(cycle)
                break
            chain.append(current.name)
    while True:
        ready = [d for d in drafts if d.name not in placed and d.parent in placed]
        if not ready:
            return ordered
        for draft in ready:
            if draft.name not in placed:
                ordered.append(draft)
                placed.add(draft.name)


def _junction_problems(draft: BranchDraft, parent: Route, parent_label: str,
                       problems: ProblemList) -> None:
    at = draft.at_chainage_m
    end = parent.total_chainage_m
    if not 0.0 < at < end:
        problems.add(f"{draft.where} at_chainage_m {at:g} is not strictly inside "
                     f"{draft.parent!r} (0 to {end:g} m in {parent_label})")
        return
    parent_ground = float(parent.ground_at(at))
    own_ground = float(draft.route.ground_m[0])
    if abs(own_ground - parent_ground) > JUNCTION_GROUND_TOLERANCE_M:
        problems.add(
            f"{draft.where}: the ground at chainage 0 of {draft.profile_label} "
            f"({own_ground:.2f} m) differs from the ground of {parent_label} at the "
            f"junction, chainage {at:g} of {draft.parent!r} ({parent_ground:.2f} m), by "
            f"{abs(own_ground - parent_ground):.2f} m; they must agree within "
            f"{JUNCTION_GROUND_TOLERANCE_M:g} m")


def scenario_branch_flows(path: Path, spec: StudyFile, scenarios: list[Scenario],
                          drafts: list[BranchDraft], branches: tuple[Branch, ...],
                          problems: ProblemList) -> list[Scenario]:
    """Each scenario with its ``branch_factor`` and ``branch_flow`` (by branch name).

    Problems: ``branch_flow`` naming no branch or with a bad flow; a branch whose
    ``flow`` is not given and some scenario does not give it; a branch that carries no
    flow in any scenario (nothing delivered at its end, on it or below it)."""
    names = [draft.name for draft in drafts]
    tables = {item.name: (index, item) for index, item in enumerate(spec.scenario, start=1)}
    resolved = []
    for scenario in scenarios:
        index, table = tables[scenario.name]
        flows = []
        for name, text in table.branch_flow.items():
            where = f"{path}: [[scenario]] #{index} ({scenario.name!r}) branch_flow.{name}"
            if name not in names:
                problems.add(f"{where}: no branch is named {name!r} (branches: "
                             f"{_names(names)})")
                continue
            try:
                flows.append((name, parse_flow_m3_s(text)))
            except ValueError as error:
                problems.add(f"{where}: {error}")
        resolved.append(dataclasses.replace(scenario, branch_factor=table.branch_factor,
                                            branch_flows_m3_s=tuple(flows)))
    _flow_problems(drafts, branches, resolved, problems)
    return resolved


def _flow_problems(drafts: list[BranchDraft], branches: tuple[Branch, ...],
                   scenarios: list[Scenario], problems: ProblemList) -> None:
    unknown_flow = {d.name for d in drafts if d.flow_m3_s is None}
    for draft in drafts:
        given_in_all = all(any(n == draft.name for n, _ in s.branch_flows_m3_s)
                           for s in scenarios)
        if not draft.flow_given and not given_in_all:
            problems.add(f"{draft.where} flow: required key is missing (give it, or "
                         "branch_flow for this branch in every scenario)")
    if not scenarios:
        return
    for branch in branches:
        if branch.name in unknown_flow and not all(
                any(n == branch.name for n, _ in s.branch_flows_m3_s) for s in scenarios):
            continue  # its flow is missing or unreadable: reported once, above or earlier
        carried = [_throughput_m3_s(branch.name, branches, s) for s in scenarios]
        if max(carried) <= 0.0:
            where = next(d.where for d in drafts if d.name == branch.name)
            problems.add(f"{where}: the branch carries no flow in any scenario (its "
                         "delivery flow, its offtakes and the branches below it are all "
                         "zero); give it a flow or leave it out")


def _throughput_m3_s(name: str, branches: tuple[Branch, ...], scenario: Scenario) -> float:
    """Flow entering a branch at its junction in one scenario [m^3/s]."""
    branch = next(b for b in branches if b.name == name)
    own = scenario.branch_flow_m3_s(name, branch.flow_m3_s)
    own += scenario.offtake_factor * sum(o.flow_m3_s for o in branch.offtakes)
    return own + sum(_throughput_m3_s(b.name, branches, scenario)
                     for b in branches if b.parent == name)
