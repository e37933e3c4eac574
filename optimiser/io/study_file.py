"""The study TOML (contract section 1) with its profile and catalogue, into a Study.

Every problem found is reported with the file and the row (line) or key it concerns,
all at once where they are independent, as one :class:`InputError`. The profile and
catalogue CSVs are read by :mod:`optimiser.io.profile_file`, designs by
:mod:`optimiser.io.design_file`.
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from pathlib import Path

from pydantic import ValidationError

from optimiser.hydraulics.water import kinematic_viscosity_m2_s
from optimiser.io.branches import (
    branch_drafts,
    form_problems,
    resolve_branches,
    scenario_branch_flows,
)
from optimiser.io.design_file import load_design
from optimiser.io.errors import InputError, ProblemList
from optimiser.io.geometry import load_coordinate_profile
from optimiser.io.limits import out_of_range
from optimiser.io.network_paths import NetworkScheme, load_network
from optimiser.io.profile_file import load_catalogue, load_profile
from optimiser.io.schema import StudyFile, describe_location
from optimiser.io.scheme_tank_sites import scheme_tank_sites
from optimiser.io.surge_inputs import surge_problems, surge_settings
from optimiser.io.tables import decode_text
from optimiser.io.tank_inputs import study_tanks, tank_lines, tank_rules
from optimiser.io.units import parse_flow_m3_s
from optimiser.model import (
    Catalogue,
    CostRules,
    DesignRules,
    Fitting,
    Friction,
    Offtake,
    Outlet,
    PumpStation,
    QuantityRules,
    Route,
    Scenario,
    SolverSettings,
    Source,
    Study,
)
from optimiser.model.scheme import TRUNK

__all__ = ["load_catalogue", "load_design", "load_profile", "load_study"]


def load_study(path: str | Path) -> Study:
    """Read and validate a study TOML with its profile and catalogue (and, for a scheme,
    its branches or its network files)."""
    path = Path(path)
    raw = _read_toml(path)
    spec = _validate(path, raw)
    form_problems(path, spec)
    problems = ProblemList()
    problems.items.extend(_range_problems(path, raw))
    top_water = _top_water_level(path, spec, problems)
    friction = Friction(spec.catalogue.friction)
    offtakes = _offtakes(path, spec, problems)
    scenarios = _scenarios(path, spec, friction, problems)
    rules = spec.rules
    if rules.velocity_min_m_s >= rules.velocity_max_m_s:
        problems.add(f"{path}: [rules] velocity_min_m_s ({rules.velocity_min_m_s:g}) must "
                     f"be below velocity_max_m_s ({rules.velocity_max_m_s:g})")
    route, catalogue, network = _route_and_catalogue(path, spec, friction, problems)
    if network is not None:
        offtakes = list(network.offtakes)
    drafts = network.drafts if network is not None else branch_drafts(path, spec, problems)
    fittings = tuple(Fitting(f.chainage_m, f.k, f.label) for f in spec.route.fitting)
    _placement_problems(path, spec, route, fittings, problems,
                        {zone for draft in drafts for zone in draft.route.zones})
    chosen = _chosen_catalogue(path, spec, catalogue, problems)
    branches, junctions = resolve_branches(drafts, route, _trunk_label(spec), problems)
    scenarios = scenario_branch_flows(path, spec, scenarios, drafts, branches, problems)
    if network is not None:
        scenarios = network.with_trunk_flow(scenarios)
    # A tank may stand neither at an offtake nor at a junction (contract section 8).
    tanks = study_tanks(path, spec, tank_lines(route, offtakes, branches), problems)
    branches = tuple(dataclasses.replace(b, route=b.route.with_nodes(
        [t.chainage_m for t in tanks if t.branch == b.name])) for b in branches)
    rules_of_tanks = tank_rules(path, spec, (path.parent / _trunk_file(spec)).resolve(),
                                problems)
    rules_of_tanks = scheme_tank_sites(path, spec, rules_of_tanks, route, offtakes, branches,
                                       problems, network)
    _combination_problems(path, spec, rules_of_tanks.cost is not None, problems)
    problems.raise_if_any()
    route = route.with_nodes([o.chainage_m for o in offtakes] +
                             [f.chainage_m for f in fittings] + junctions +
                             [t.chainage_m for t in tanks if t.branch == TRUNK])
    outlet = network.outlet if network is not None else \
        Outlet(spec.outlet.required_head_m, spec.outlet.exit_k)
    viscosity, temperature = _water(spec)
    return Study(
        title=spec.title, currency=spec.currency,
        kinematic_viscosity_m2_s=viscosity, temperature_c=temperature,
        source=Source(spec.source.level_m, top_water, spec.source.entrance_k),
        outlet=outlet,
        route=route, min_pressure_m=spec.route.min_pressure_m,
        local_k_per_km=spec.route.local_k_per_km, fittings=fittings,
        offtakes=tuple(offtakes), scenarios=tuple(scenarios), catalogue=chosen,
        surge_allowance_m=spec.catalogue.surge_allowance_m, friction=friction,
        rules=DesignRules(rules.min_piece_length_m, rules.max_changes,
                          rules.sizes_downstream == "non-increasing",
                          rules.velocity_min_m_s, rules.velocity_max_m_s),
        costs=CostRules(spec.costs.change_cost, dict(spec.costs.zone_factor)),
        solver=SolverSettings(spec.solver.name, spec.solver.time_limit_s, spec.solver.mip_gap),
        full_catalogue=catalogue, path=path,
        catalogue_path=(path.parent / spec.catalogue.file).resolve(),
        profile_path=(path.parent / _trunk_file(spec)).resolve(),
        surge=surge_settings(spec),
        hazen_williams_coefficient=spec.catalogue.hazen_williams_coefficient,
        quantities=QuantityRules(**spec.quantities.model_dump()),
        branches=branches, tanks=tanks, tank_rules=rules_of_tanks,
        pump=None if spec.pump is None else PumpStation(**spec.pump.model_dump()),
    )


def _combination_problems(path: Path, spec: StudyFile, new_tanks: bool,
                          problems: ProblemList) -> None:
    """Additions not yet available together: a pump with tanks chosen by ``design`` but
    no tank of the study's own. With the study's own tanks a pump is a rising main (or a
    pumped scheme, its head reaching branches) to the first tank of each line it
    reaches, gravity below it, where new tanks may go (section 9)."""
    if spec.pump is not None and new_tanks and not spec.break_pressure_tank:
        problems.add(f"{path}: [pump] with [break_pressure_tanks] cost (new tanks chosen by "
                     "design) needs the tank the rising main fills: give it as a "
                     "[[break_pressure_tank]] of the study (new tanks then go below it)")


def _trunk_file(spec: StudyFile) -> str:
    """The file the trunk's profile comes from: the profile, or the network's links."""
    return spec.network.links if spec.network is not None else str(spec.route.profile)


def _trunk_label(spec: StudyFile) -> str:
    return Path(_trunk_file(spec)).name


def _top_water_level(path: Path, spec: StudyFile, problems: ProblemList) -> float:
    """[source] top_water_level_m, by default the design level; never below it."""
    level, top = spec.source.level_m, spec.source.top_water_level_m
    if top is None:
        return level
    if top < level:
        problems.add(f"{path}: [source] top_water_level_m ({top:g}) is below "
                     f"level_m ({level:g})")
    return top


def _water(spec: StudyFile) -> tuple[float, float | None]:
    """Kinematic viscosity [m^2/s] (given, or IAPWS 2008 at the temperature) and the
    temperature [degC] it came from (None when given directly)."""
    if spec.water.kinematic_viscosity_m2_s is not None:
        return spec.water.kinematic_viscosity_m2_s, None
    temperature = spec.water.temperature_c
    return float(kinematic_viscosity_m2_s(temperature)), temperature


def _offtakes(path: Path, spec: StudyFile, problems: ProblemList) -> list[Offtake]:
    offtakes: list[Offtake] = []
    for index, item in enumerate(spec.offtake, start=1):
        if item.branch != TRUNK:
            continue  # an offtake of a branch (io/branches.py)
        try:
            flow = parse_flow_m3_s(item.flow)
        except ValueError as error:
            problems.add(f"{path}: [[offtake]] #{index} flow: {error}")
            continue
        offtakes.append(Offtake(item.chainage_m, flow, item.min_pressure_m, item.label))
    return offtakes


def _scenarios(path: Path, spec: StudyFile, friction: Friction,
               problems: ProblemList) -> list[Scenario]:
    scenarios: list[Scenario] = []
    names: set[str] = set()
    for index, item in enumerate(spec.scenario, start=1):
        where = f"{path}: [[scenario]] #{index} ({item.name!r})"
        if item.name in names:
            problems.add(f"{where} name: another scenario already has this name")
        names.add(item.name)
        if item.roughness_mm is not None and item.roughness_factor is not None:
            problems.add(f"{where}: give roughness_mm or roughness_factor, not both")
        if friction is Friction.HAZEN_WILLIAMS and (
                item.roughness_mm is not None or item.roughness_factor is not None):
            problems.add(f"{where}: roughness_mm and roughness_factor apply to "
                         "colebrook-white friction only; with hazen-williams give aged C "
                         "values in a separate catalogue")
        try:  # no flow with [network]: the trunk's end node gives it (network_file.py)
            flow = math.nan if item.flow is None else parse_flow_m3_s(item.flow)
        except ValueError as error:
            problems.add(f"{where} flow: {error}")
            continue
        level = item.source_level_m if item.source_level_m is not None \
            else spec.source.level_m
        scenarios.append(Scenario(item.name, flow, level, item.offtake_factor,
                                  item.roughness_mm, item.roughness_factor,
                                  item.velocity_limits, hours_per_year=item.hours_per_year))
    return scenarios


def _route_and_catalogue(path: Path, spec: StudyFile, friction: Friction, problems: ProblemList
                         ) -> tuple[Route, Catalogue, NetworkScheme | None]:
    """The profile (or the network) and the catalogue, read even when the study has
    problems of its own so that independent problems in all files are reported together."""
    catalogue_path = (path.parent / spec.catalogue.file).resolve()
    slope = spec.route.length == "slope"
    route = catalogue = network = None
    try:
        if spec.network is not None:
            network = load_network(path, spec)
            route = network.route
        else:
            profile_path = (path.parent / str(spec.route.profile)).resolve()
            route = load_coordinate_profile(profile_path, spec.route, path,
                                            spec.route.cover_m, slope)  # None: chainage CSV
            if route is None:
                route = load_profile(profile_path, spec.route.cover_m, slope)
    except InputError as error:
        problems.items.extend(error.problems)
    try:
        catalogue = load_catalogue(catalogue_path, friction)
    except InputError as error:
        problems.items.extend(error.problems)
    if route is None or catalogue is None:
        problems.raise_if_any()
    assert route is not None and catalogue is not None
    return route, catalogue, network


def _placement_problems(path: Path, spec: StudyFile, route: Route,
                        fittings: tuple[Fitting, ...], problems: ProblemList,
                        branch_zones: set[str]) -> None:
    """Offtakes and fittings on the route; zone factors naming zones of the profile (or of
    a branch's)."""
    end = route.total_chainage_m
    profile = _trunk_label(spec)
    for index, item in enumerate(spec.offtake, start=1):  # numbered as in the file
        if item.branch == TRUNK and not 0.0 <= item.chainage_m <= end:
            problems.add(f"{path}: [[offtake]] #{index} chainage_m {item.chainage_m:g} "
                         f"is outside the route (0 to {end:g} m in {profile})")
    for index, fitting in enumerate(fittings, start=1):
        if not 0.0 <= fitting.chainage_m <= end:
            problems.add(f"{path}: [[route.fitting]] #{index} chainage_m "
                         f"{fitting.chainage_m:g} is outside the route (0 to {end:g} m)")
    for zone, factor in spec.costs.zone_factor.items():
        if zone not in set(route.zones) | branch_zones:
            problems.add(f"{path}: [costs.zone_factor] {zone}: no section of "
                         f"{profile} has this zone")
        if factor <= 0:
            problems.add(f"{path}: [costs.zone_factor] {zone}: must be > 0, got {factor:g}")


def _chosen_catalogue(path: Path, spec: StudyFile, catalogue: Catalogue,
                      problems: ProblemList) -> Catalogue:
    """The options of the materials named by [catalogue] materials (all by default)."""
    catalogue_path = (path.parent / spec.catalogue.file).resolve()
    materials = spec.catalogue.materials
    chosen = catalogue
    if materials is not None:
        known = set(catalogue.materials)
        for material in materials:
            if material not in known:
                problems.add(f"{path}: [catalogue] materials: {material!r} is not in "
                             f"{catalogue_path.name} (it has {', '.join(sorted(known))})")
        chosen = Catalogue(tuple(o for o in catalogue if o.material in set(materials)))
    if materials == []:
        problems.add(f"{path}: [catalogue] materials: the list is empty; name at least one "
                     f"material of {catalogue_path.name}, or leave the key out to use them all")
    if len(chosen) == 0 and materials:
        problems.add(f"{path}: [catalogue] materials: no option of the catalogue is left")
    problems.items.extend(surge_problems(path, catalogue_path, spec, chosen))
    # Like a zone factor's zone, a material of the bill must exist: a misspelt name
    # would otherwise silently take the default pipe length.
    for material in spec.quantities.pipe_length_by_material_m:
        if material not in set(catalogue.materials):
            problems.add(f"{path}: [quantities.pipe_length_by_material_m] {material}: no "
                         f"material of {catalogue_path.name} has this name (it has "
                         f"{', '.join(sorted(set(catalogue.materials)))})")
    return chosen


def _read_toml(path: Path) -> dict:
    if not path.is_file():
        raise InputError(f"{path}: study file not found")
    try:
        data = path.read_bytes()
    except OSError as error:
        raise InputError(f"{path}: cannot read ({error})") from None
    text = decode_text(path, data, "study file", "UTF-8")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise InputError(f"{path}: not valid TOML: {error}") from None


def _validate(path: Path, raw: dict) -> StudyFile:
    if not raw:
        raise InputError(f"{path}: the study file is empty (it needs at least title, "
                         "[source], [outlet], [route], [[scenario]] and [catalogue])")
    try:
        return StudyFile.model_validate(raw)
    except ValidationError as error:
        problems = []
        for item in error.errors():
            where = describe_location(tuple(item["loc"]))
            if tuple(item["loc"]) == ("scenario",) and item["type"] in ("missing",
                                                                        "too_short"):
                problems.append(f"{path}: [[scenario]]: at least one scenario is required "
                                "(none is given)")
            elif item["type"] == "extra_forbidden":
                problems.append(f"{path}: {where}: unknown key (check its spelling)")
            elif item["type"] == "missing":
                problems.append(f"{path}: {where}: required key is missing")
            else:
                problems.append(f"{path}: {where}: {item['msg']} (got {item['input']!r})")
        flagged = {tuple(item["loc"]) for item in error.errors()}
        problems.extend(_range_problems(path, raw, skip=flagged))
        raise InputError(problems) from None


def _range_problems(path: Path, raw: dict, skip: set[tuple] | None = None) -> list[str]:
    """Numbers of the study file outside their accepted range (io/limits.py), except at
    locations the schema has already complained about."""
    return [f"{path}: {describe_location(location)}: {complaint}"
            for location, complaint in out_of_range(raw) if location not in (skip or set())]
