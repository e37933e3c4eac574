"""Loaders: study TOML, profile CSV, catalogue CSV and design CSV into the model.

Every problem found is reported with the file and the row (line) or key it concerns,
all at once where they are independent, as one :class:`InputError`.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
from pydantic import ValidationError

from optimiser.hydraulics.water import kinematic_viscosity_m2_s
from optimiser.io.errors import InputError, ProblemList
from optimiser.io.geometry import load_coordinate_profile
from optimiser.io.limits import out_of_range
from optimiser.io.schema import StudyFile, describe_location
from optimiser.io.surge_inputs import (
    SURGE_COLUMNS,
    has_wave_speed,
    surge_columns,
    surge_problems,
    surge_settings,
)
from optimiser.io.tables import decode_text, number, read_rows
from optimiser.io.units import parse_flow_m3_s
from optimiser.model import (
    Catalogue,
    CostRules,
    Design,
    DesignRules,
    Fitting,
    Friction,
    Offtake,
    Outlet,
    Piece,
    PipeOption,
    Route,
    Scenario,
    SolverSettings,
    Source,
    Study,
)

PROFILE_COLUMNS = ["chainage_m", "ground_m"]
PROFILE_OPTIONAL = ["label", "zone"]
CATALOGUE_COLUMNS = [
    "material", "dn_mm", "internal_diameter_mm", "pressure_class", "allowable_head_m",
    "roughness_mm", "hazen_williams_c", "cost_per_m", "note",
]
DESIGN_COLUMNS = ["from_m", "to_m", "material", "dn_mm", "pressure_class"]
CHAINAGE_TOLERANCE_M = 1e-3


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


def load_profile(path: Path, cover_m: float, slope_length: bool) -> Route:
    """Read a profile CSV (contract section 2) into a :class:`Route`."""
    rows, _header = read_rows(path, PROFILE_COLUMNS, PROFILE_OPTIONAL, what="profile")
    problems = ProblemList()
    chainages: list[float] = []
    grounds: list[float] = []
    for index, row in enumerate(rows):
        chainage = number(path, row, "chainage_m", problems)
        ground = number(path, row, "ground_m", problems)
        if chainage is None or ground is None:
            continue
        if index == 0 and chainage != 0.0:
            problems.add(f"{path}: line {row.line}: the first chainage_m must be 0 "
                         f"(the source), got {chainage:g}")
        if chainages and chainage <= chainages[-1]:
            problems.add(f"{path}: line {row.line}: chainage_m {chainage:g} does not "
                         f"increase (previous row has {chainages[-1]:g})")
        chainages.append(chainage)
        grounds.append(ground)
    problems.raise_if_any()
    if len(chainages) < 2:
        raise InputError(f"{path}: the profile needs at least two points")
    labels = [row.cells.get("label", "") for row in rows]
    zones = [row.cells.get("zone", "") for row in rows][:-1]
    return Route(np.array(chainages), np.array(grounds), cover_m, labels, zones, slope_length)


def _insert_nodes(route: Route, chainages: list[float]) -> Route:
    """A route with a node at each given chainage (ground linear between survey points)."""
    new = sorted({c for c in chainages if not np.any(np.isclose(route.chainage_m, c,
                                                                   rtol=0, atol=1e-6))})
    if not new:
        return route
    chainage = list(route.chainage_m)
    ground = list(route.ground_m)
    labels = list(route.labels)
    zones = list(route.zones)
    for c in new:
        index = int(np.searchsorted(chainage, c))
        ground_here = float(np.interp(c, chainage, ground))
        chainage.insert(index, c)
        ground.insert(index, ground_here)
        labels.insert(index, "")
        zones.insert(index, zones[index - 1])  # the split section keeps its zone
    return Route(np.array(chainage), np.array(ground), route.cover_m, labels, zones,
                 route.slope_length, coordinates=route.coordinates)


def load_catalogue(path: Path, friction: Friction) -> Catalogue:
    """Read a catalogue CSV (contract section 3)."""
    rows, _ = read_rows(path, CATALOGUE_COLUMNS, SURGE_COLUMNS, what="catalogue")
    problems = ProblemList()
    options: list[PipeOption] = []
    seen: dict[tuple, int] = {}
    for row in rows:
        material = row.cells["material"]
        pressure_class = row.cells["pressure_class"]
        if not material:
            problems.add(f"{path}: line {row.line}: column material is empty")
        if not pressure_class:
            problems.add(f"{path}: line {row.line}: column pressure_class is empty")
        dn = number(path, row, "dn_mm", problems, positive=True)
        diameter = number(path, row, "internal_diameter_mm", problems, positive=True)
        allowable = number(path, row, "allowable_head_m", problems, positive=True)
        roughness = number(path, row, "roughness_mm", problems, non_negative=True)
        c_value = number(path, row, "hazen_williams_c", problems, positive=True,
                         allow_empty=friction is not Friction.HAZEN_WILLIAMS)
        cost = number(path, row, "cost_per_m", problems, non_negative=True)
        surge = surge_columns(path, row, problems, diameter, allowable)
        if None in (dn, diameter, allowable, roughness, cost) or not material \
                or not pressure_class:
            continue
        if friction is Friction.HAZEN_WILLIAMS and c_value is None:
            continue
        key = (material, dn, pressure_class)
        if key in seen:
            problems.add(f"{path}: line {row.line}: duplicate option {material} DN{dn:g} "
                         f"{pressure_class} (first given on line {seen[key]})")
            continue
        seen[key] = row.line
        options.append(PipeOption(material, dn, diameter, pressure_class, allowable,
                                  roughness, c_value, cost, row.cells["note"], **surge))
    problems.raise_if_any()
    return Catalogue(tuple(options))


def load_study(path: str | Path) -> Study:
    """Read and validate a study TOML with its profile and catalogue."""
    path = Path(path)
    raw = _read_toml(path)
    spec = _validate(path, raw)
    base = path.parent
    problems = ProblemList()
    problems.items.extend(_range_problems(path, raw))

    source_level = spec.source.level_m
    top_water = spec.source.top_water_level_m
    if top_water is None:
        top_water = source_level
    elif top_water < source_level:
        problems.add(f"{path}: [source] top_water_level_m ({top_water:g}) is below "
                     f"level_m ({source_level:g})")

    friction = Friction(spec.catalogue.friction)
    if spec.water.kinematic_viscosity_m2_s is not None:
        viscosity = spec.water.kinematic_viscosity_m2_s
        temperature = None
    else:
        temperature = spec.water.temperature_c
        viscosity = float(kinematic_viscosity_m2_s(temperature))

    offtakes: list[Offtake] = []
    for index, item in enumerate(spec.offtake, start=1):
        try:
            flow = parse_flow_m3_s(item.flow)
        except ValueError as error:
            problems.add(f"{path}: [[offtake]] #{index} flow: {error}")
            continue
        offtakes.append(Offtake(item.chainage_m, flow, item.min_pressure_m, item.label))

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
        try:
            flow = parse_flow_m3_s(item.flow)
        except ValueError as error:
            problems.add(f"{where} flow: {error}")
            continue
        level = item.source_level_m if item.source_level_m is not None else source_level
        scenarios.append(Scenario(item.name, flow, level, item.offtake_factor,
                                  item.roughness_mm, item.roughness_factor,
                                  item.velocity_limits))

    rules = spec.rules
    if rules.velocity_min_m_s >= rules.velocity_max_m_s:
        problems.add(f"{path}: [rules] velocity_min_m_s ({rules.velocity_min_m_s:g}) must "
                     f"be below velocity_max_m_s ({rules.velocity_max_m_s:g})")

    # The profile and catalogue are read even when the study has problems of its own, so
    # that independent problems in all three files are reported together.
    profile_path = (base / spec.route.profile).resolve()
    catalogue_path = (base / spec.catalogue.file).resolve()
    route = catalogue = None
    try:
        route = load_coordinate_profile(profile_path, spec.route, path, spec.route.cover_m,
                                        spec.route.length == "slope")  # None: chainage CSV
        if route is None:
            route = load_profile(profile_path, spec.route.cover_m,
                                 spec.route.length == "slope")
    except InputError as error:
        problems.items.extend(error.problems)
    try:
        catalogue = load_catalogue(catalogue_path, friction)
    except InputError as error:
        problems.items.extend(error.problems)
    if route is None or catalogue is None:
        problems.raise_if_any()
    assert route is not None and catalogue is not None

    end = route.total_chainage_m
    for index, offtake in enumerate(offtakes, start=1):
        if not 0.0 <= offtake.chainage_m <= end:
            problems.add(f"{path}: [[offtake]] #{index} chainage_m {offtake.chainage_m:g} "
                         f"is outside the route (0 to {end:g} m in {profile_path.name})")
    fittings = tuple(Fitting(f.chainage_m, f.k, f.label) for f in spec.route.fitting)
    for index, fitting in enumerate(fittings, start=1):
        if not 0.0 <= fitting.chainage_m <= end:
            problems.add(f"{path}: [[route.fitting]] #{index} chainage_m "
                         f"{fitting.chainage_m:g} is outside the route (0 to {end:g} m)")
    for zone in spec.costs.zone_factor:
        if zone not in set(route.zones):
            problems.add(f"{path}: [costs.zone_factor] {zone}: no section of "
                         f"{profile_path.name} has this zone")
    for zone, factor in spec.costs.zone_factor.items():
        if factor <= 0:
            problems.add(f"{path}: [costs.zone_factor] {zone}: must be > 0, got {factor:g}")

    if spec.catalogue.materials is not None:
        known = set(catalogue.materials)
        for material in spec.catalogue.materials:
            if material not in known:
                problems.add(f"{path}: [catalogue] materials: {material!r} is not in "
                             f"{catalogue_path.name} (it has {', '.join(sorted(known))})")
        chosen = Catalogue(tuple(o for o in catalogue if o.material in
                                 set(spec.catalogue.materials)))
    else:
        chosen = catalogue
    if spec.catalogue.materials == []:
        problems.add(f"{path}: [catalogue] materials: the list is empty; name at least one "
                     f"material of {catalogue_path.name}, or leave the key out to use them all")
    if len(chosen) == 0 and spec.catalogue.materials:
        problems.add(f"{path}: [catalogue] materials: no option of the catalogue is left")
    problems.items.extend(surge_problems(path, catalogue_path, spec, chosen))
    problems.raise_if_any()

    route = _insert_nodes(route, [o.chainage_m for o in offtakes] +
                          [f.chainage_m for f in fittings])
    study = Study(
        title=spec.title,
        currency=spec.currency,
        kinematic_viscosity_m2_s=viscosity,
        temperature_c=temperature,
        source=Source(source_level, top_water, spec.source.entrance_k),
        outlet=Outlet(spec.outlet.required_head_m, spec.outlet.exit_k),
        route=route,
        min_pressure_m=spec.route.min_pressure_m,
        local_k_per_km=spec.route.local_k_per_km,
        fittings=fittings,
        offtakes=tuple(offtakes),
        scenarios=tuple(scenarios),
        catalogue=chosen,
        surge_allowance_m=spec.catalogue.surge_allowance_m,
        friction=friction,
        rules=DesignRules(rules.min_piece_length_m, rules.max_changes,
                          rules.sizes_downstream == "non-increasing",
                          rules.velocity_min_m_s, rules.velocity_max_m_s),
        costs=CostRules(spec.costs.change_cost, dict(spec.costs.zone_factor)),
        solver=SolverSettings(spec.solver.name, spec.solver.time_limit_s, spec.solver.mip_gap),
        full_catalogue=catalogue,
        path=path,
        catalogue_path=catalogue_path,
        profile_path=profile_path,
        surge=surge_settings(spec),
        hazen_williams_coefficient=spec.catalogue.hazen_williams_coefficient,
    )
    return study


def load_design(path: str | Path, study: Study) -> Design:
    """Read a design CSV (contract section 4) against a study's route and catalogue.

    Options are looked up in the whole catalogue file, so a design may be checked even
    when it uses a material that ``[catalogue] materials`` leaves out of optimisation.
    """
    path = Path(path)
    rows, _ = read_rows(path, DESIGN_COLUMNS, what="design")
    problems = ProblemList()
    catalogue = study.full_catalogue or study.catalogue
    pieces: list[Piece] = []
    previous_end: float | None = None
    end = study.route.total_chainage_m
    for index, row in enumerate(rows):
        start = number(path, row, "from_m", problems)
        stop = number(path, row, "to_m", problems)
        dn = number(path, row, "dn_mm", problems, positive=True)
        material = row.cells["material"]
        pressure_class = row.cells["pressure_class"]
        for column in ("material", "pressure_class"):
            if not row.cells[column]:
                problems.add(f"{path}: line {row.line}: column {column} is empty")
        if index == 0 and start is not None and abs(start) > CHAINAGE_TOLERANCE_M:
            problems.add(f"{path}: line {row.line}: the first piece must start at chainage "
                         f"0, not {start:g}")
        if start is not None and previous_end is not None:
            if start > previous_end + CHAINAGE_TOLERANCE_M:
                problems.add(f"{path}: line {row.line}: gap from {previous_end:g} to "
                             f"{start:g} m before this piece")
            elif start < previous_end - CHAINAGE_TOLERANCE_M:
                problems.add(f"{path}: line {row.line}: overlaps the previous piece "
                             f"(starts at {start:g}, previous ends at {previous_end:g} m)")
        if start is not None and stop is not None and stop <= start:
            problems.add(f"{path}: line {row.line}: the piece from {start:g} to {stop:g} m "
                         "has zero or negative length")
        # A piece of no length leaves no end to continue from: do not also report a gap.
        previous_end = stop if start is None or stop is None or stop > start else None
        if start is None or stop is None or dn is None or not material \
                or not pressure_class:
            continue
        option = catalogue.find(material, dn, pressure_class)
        if option is None:
            problems.add(f"{path}: line {row.line}: {material} DN{dn:g} {pressure_class} is "
                         f"not in the catalogue {study.catalogue_path}")
            continue
        if study.surge.method == "joukowsky" and not has_wave_speed(option):
            problems.add(f"{path}: line {row.line}: {option.label} has no wave_speed_m_s "
                         f"(nor wall_thickness_mm with elastic_modulus_gpa) in "
                         f"{study.catalogue_path}; [surge] method \"joukowsky\" needs it")
        pieces.append(Piece(start, stop, option))
    if previous_end is not None and abs(previous_end - end) > CHAINAGE_TOLERANCE_M:
        problems.add(f"{path}: line {rows[-1].line}: the last piece ends at {previous_end:g} "
                     f"m but the route ends at {end:g} m")
    problems.raise_if_any()
    # Snap to the route's exact ends and make pieces exactly contiguous.
    snapped = []
    for index, piece in enumerate(pieces):
        start = 0.0 if index == 0 else snapped[-1].to_m
        stop = end if index == len(pieces) - 1 else piece.to_m
        snapped.append(Piece(start, stop, piece.option))
    return Design(tuple(snapped))
