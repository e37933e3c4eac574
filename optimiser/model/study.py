"""A whole study: water, source, outlet, route, offtakes, scenarios, catalogue, rules."""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, field
from enum import StrEnum
from pathlib import Path

from optimiser.model.catalogue import Catalogue, PipeOption
from optimiser.model.pump import PumpStation
from optimiser.model.route import Fitting, Offtake, Route
from optimiser.model.scenario import Scenario
from optimiser.model.scheme import TRUNK, Branch
from optimiser.model.tanks import BreakPressureTank, TankRules
from optimiser.model.validation import at_least, refuse


class Friction(StrEnum):
    COLEBROOK_WHITE = "colebrook-white"
    HAZEN_WILLIAMS = "hazen-williams"


@dataclass(frozen=True)
class Source:
    level_m: float
    top_water_level_m: float
    entrance_k: float = 0.5


@dataclass(frozen=True)
class Outlet:
    required_head_m: float
    exit_k: float = 1.0


@dataclass(frozen=True)
class DesignRules:
    min_piece_length_m: float = 0.0
    max_changes: int | None = None
    sizes_non_increasing: bool = False
    velocity_min_m_s: float = 0.0
    velocity_max_m_s: float = 3.0


@dataclass(frozen=True)
class CostRules:
    change_cost: float = 0.0
    zone_factor: dict[str, float] = field(default_factory=dict)

    def factor(self, zone: str) -> float:
        return self.zone_factor.get(zone, 1.0) if zone else 1.0


class SurgeMethod(StrEnum):
    ALLOWANCE = "allowance"
    JOUKOWSKY = "joukowsky"


@dataclass(frozen=True)
class SurgeSettings:
    """How the surge head of a piece is found (contract section 10).

    ``allowance``: ``[catalogue] surge_allowance_m`` for every piece (section 5).
    ``joukowsky``: a V / g of each piece from its own wave speed, or 2 L V / (g T) when
    the closure time T exceeds 2 L / a.
    """

    method: SurgeMethod = SurgeMethod.ALLOWANCE
    closure_time_s: float = 0.0
    min_transient_pressure_m: float | None = None


@dataclass(frozen=True)
class QuantityRules:
    """How the bill of quantities counts: pipes come in whole standard lengths [m]
    (``pipe_length_m``, or the material's own), and the rates of air valves, washouts
    and fittings (None: not priced in the study)."""

    pipe_length_m: float = 6.0
    pipe_length_by_material_m: dict[str, float] = field(default_factory=dict)
    air_valve_each: float | None = None
    washout_each: float | None = None
    fitting_each: float | None = None

    def standard_length_m(self, material: str) -> float:
        return self.pipe_length_by_material_m.get(material, self.pipe_length_m)


@dataclass(frozen=True)
class SolverSettings:
    name: str = "highs"
    time_limit_s: float = 120.0
    mip_gap: float = 1e-4


@dataclass
class Study:
    """Everything a check or a design needs, resolved and validated by the loader."""

    title: str
    currency: str
    kinematic_viscosity_m2_s: float
    temperature_c: float | None
    source: Source
    outlet: Outlet
    route: Route
    min_pressure_m: float
    local_k_per_km: float
    fittings: tuple[Fitting, ...]
    offtakes: tuple[Offtake, ...]
    scenarios: tuple[Scenario, ...]
    catalogue: Catalogue
    surge_allowance_m: float
    friction: Friction
    rules: DesignRules
    costs: CostRules
    solver: SolverSettings
    full_catalogue: Catalogue | None = None
    """The whole catalogue file (``catalogue`` is after the materials filter)."""
    path: Path | None = None
    catalogue_path: Path | None = None
    profile_path: Path | None = None
    surge: SurgeSettings = field(default_factory=SurgeSettings)
    hazen_williams_coefficient: float = 10.67
    """The constant of the SI Hazen--Williams formula (contract section 12)."""
    quantities: QuantityRules = field(default_factory=QuantityRules)
    branches: tuple[Branch, ...] = ()
    """Branches of a scheme (contract section 7), parents before children; empty for a
    single route."""
    tanks: tuple[BreakPressureTank, ...] = ()
    """Break-pressure tanks the study always has (section 8)."""
    tank_rules: TankRules = field(default_factory=TankRules)
    pump: PumpStation | None = None
    """A pump station at the source (section 9); None: gravity."""
    upstream_pipe_length_m: float = 0.0
    """Pipe length [m] between the free surface upstream and the route's chainage 0: 0
    for a study's own trunk; a branch seen as a route of its own (the optimiser's view of
    a scheme's line) has its path from the source through the junctions above it, which
    the slow-closure surge formula needs."""
    pipe_length_beyond_m: tuple[tuple[str, float], ...] = ()
    """Pipe length [m] beyond the end of a named line (``"main"``: the route) on to the end
    of that line in the whole study this one was cut from (a part above a
    break-pressure tank designed on its own); the slow-closure surge formula runs its
    length L on to there (contract section 10). Empty for a whole study."""

    def __post_init__(self) -> None:
        # A study built in code skips the loader: refuse what would give nan or a wrong
        # answer (:func:`study_problems`; optimiser/model/validation.py says why).
        refuse(f"Study {self.title!r}", study_problems(self))

    @property
    def is_scheme(self) -> bool:
        """True when the study has branches besides the trunk."""
        return bool(self.branches)

    @property
    def branch_names(self) -> tuple[str, ...]:
        """The trunk's name, then every branch's, parents before children."""
        return (TRUNK, *(b.name for b in self.branches))

    def branch(self, name: str) -> Branch:
        for branch in self.branches:
            if branch.name == name:
                return branch
        raise KeyError(name)

    def scenario(self, name: str) -> Scenario:
        for scenario in self.scenarios:
            if scenario.name == name:
                return scenario
        raise KeyError(name)


MAX_LISTED = 5
"""Options named in one message at most (then a count of the rest)."""


def _named(options: Iterable[PipeOption]) -> str:
    labels = [o.label for o in options]
    more = f" and {len(labels) - MAX_LISTED} more" if len(labels) > MAX_LISTED else ""
    return ", ".join(labels[:MAX_LISTED]) + more


def study_problems(study: Study) -> list[str]:
    """Combinations the loader refuses that would otherwise give nan or a wrong answer:
    no scenario or no option, a scenario without a flow, a viscosity that is not
    positive, surge by wave speed or Hazen-Williams friction on options without the
    catalogue columns they need, and points off their line (:func:`_placement_problems`)."""
    problems = _placement_problems(study)
    if not study.scenarios:
        problems.append("scenarios: at least one scenario is required")
    if len(study.catalogue) == 0:
        problems.append("catalogue: it has no pipe option")
    problems += at_least("kinematic_viscosity_m2_s", study.kinematic_viscosity_m2_s, 0.0,
                         strict=True)
    for scenario in study.scenarios:
        if math.isnan(scenario.outlet_flow_m3_s):
            problems.append(f"scenario {scenario.name!r}: outlet_flow_m3_s is nan (give "
                            "the flow delivered at the outlet)")
    catalogue = f" of {study.catalogue_path.name}" if study.catalogue_path else ""
    if study.surge.method == SurgeMethod.JOUKOWSKY:
        missing = [o for o in study.catalogue if not o.has_wave_speed]
        if missing:
            problems.append(
                f"surge method 'joukowsky' needs the catalogue columns wave_speed_m_s, or "
                f"wall_thickness_mm with elastic_modulus_gpa, for every option; the "
                f"options{catalogue} {_named(missing)} have neither (give them, or use "
                "SurgeSettings(SurgeMethod.ALLOWANCE) with surge_allowance_m)")
    if study.friction == Friction.HAZEN_WILLIAMS:
        missing = [o for o in study.catalogue if o.hazen_williams_c is None]
        if missing:
            problems.append(f"friction 'hazen-williams' needs the catalogue column "
                            f"hazen_williams_c for every option; the options{catalogue} "
                            f"{_named(missing)} have none")
    return problems


ON_LINE_M = 1e-6
"""A point this close [m] beyond a line's end is on it (as ``Route.with_nodes``)."""


def _placement_problems(study: Study) -> list[str]:
    """Offtakes and fittings on their line and no negative flow (contract sections 1 and
    7: the loader refuses them; here they gave a check of points off the route)."""
    problems = _points_problems("the route", study.offtakes, study.fittings,
                                study.route.total_chainage_m)
    for branch in study.branches:
        where = f"branch {branch.name!r}"
        problems += at_least(f"{where}: flow_m3_s", branch.flow_m3_s, 0.0)
        problems += _points_problems(where, branch.offtakes, branch.fittings,
                                     branch.route.total_chainage_m)
    return problems


def whole_study_problems(study: Study) -> list[str]:
    """Branches hanging strictly inside a line given before them, tanks strictly inside
    a line of the study (contract sections 7 and 8; from the API such a study gave an
    IndexError or a KeyError deep in the check), and a pump choosing new tanks with no
    tank of the study's own for it to fill (the loader refuses it; the optimiser then
    designed it by gravity, the station ignored). Not run when a study is made: the
    optimiser builds parts of a study in steps that pass through such states (a route
    cut at a tank before its tanks and branches follow, a branch's line with the pump
    and the rules of tanks but not the tanks), so the public entry points run it
    (:mod:`optimiser.api`)."""
    ends = {TRUNK: study.route.total_chainage_m}
    problems = []
    if study.pump is not None and study.tank_rules.cost is not None and not study.tanks:
        problems.append("a pump with new break-pressure tanks (tank_rules.cost) needs the "
                        "tank the rising main fills among the study's own tanks (new tanks "
                        "then go below it); give it in tanks, or set tank_rules.cost to None")
    for branch in study.branches:
        where = f"branch {branch.name!r}"
        parent_end = ends.get(branch.parent)
        if parent_end is None:
            problems.append(f"{where}: its parent {branch.parent!r} is neither the trunk nor "
                            "a branch given before it (parents come first)")
        elif not 0.0 < branch.at_chainage_m < parent_end:
            problems.append(f"{where}: at_chainage_m {branch.at_chainage_m:g} is not "
                            f"strictly inside {branch.parent!r} (0 to {parent_end:g} m)")
        ends[branch.name] = branch.route.total_chainage_m
    for tank in study.tanks:
        end = ends.get(tank.branch)
        if end is None:
            problems.append(f"tank at {tank.chainage_m:g} m: the study has no line named "
                            f"{tank.branch!r}")
        elif not 0.0 < tank.chainage_m < end:
            problems.append(f"tank at {tank.chainage_m:g} m of {tank.branch!r}: not strictly "
                            f"inside its line (0 to {end:g} m)")
    return problems


def _points_problems(where: str, offtakes: tuple[Offtake, ...],
                     fittings: tuple[Fitting, ...], end_m: float) -> list[str]:
    """Offtakes (flow not negative) and fittings at a chainage of their line."""
    problems = []
    for point in (*offtakes, *fittings):
        if not -ON_LINE_M <= point.chainage_m <= end_m + ON_LINE_M:
            kind = "offtake" if isinstance(point, Offtake) else "fitting"
            problems.append(f"{where}: {kind} at {point.chainage_m:g} m is outside its line "
                            f"(0 to {end_m:g} m)")
    for offtake in offtakes:
        problems += at_least(f"{where}: offtake at {offtake.chainage_m:g} m: flow_m3_s",
                             offtake.flow_m3_s, 0.0)
    return problems
