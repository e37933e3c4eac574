"""Check a design against a study: energy line, HGL, pressures, classes, velocities, outlet.

This is the independent check that every design goes through, whoever made it. It
follows contract section 5 literally on the analysis grid (survey points plus piece
boundaries), evaluating both sides of every node where the velocity or a point loss
makes them differ (energy line, points and capacity: :mod:`.design_hydraulics`), on
every line of a scheme linked at its junctions (contract section 7:
:mod:`.scheme_check`). Each
rule comes from its one home, shared with the optimiser's data: flows and fittings from
:mod:`optimiser.analysis.flows`, the energy line from
:mod:`optimiser.hydraulics.gradeline`, the limits from :mod:`optimiser.analysis.limits`.
It reads only the study and the design, never the optimiser's structures.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from optimiser.analysis import surge as surge_rule
from optimiser.analysis import violation_text as text
from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.limits import (
    CHECK_TOLERANCE,
    above_velocity_max,
    below_velocity_min,
    class_holds,
)
from optimiser.analysis.pumping import StationResult, pump_the_scheme, station_notes
from optimiser.analysis.scheme_check import DeliveryPoint, SchemeHydraulics
from optimiser.analysis.static_line import static_line_m
from optimiser.analysis.tanks import piece_static_heads, tank_cost, tanks_short
from optimiser.hydraulics.gradeline import static_head_m
from optimiser.model import (
    TRUNK,
    BreakPressureTank,
    Design,
    DesignRules,
    Scenario,
    Study,
    SurgeMethod,
)


@dataclass(frozen=True)
class Violation:
    """A broken limit. ``scenario`` is None for the static (pressure class) check;
    ``chainage_m`` is on ``branch`` (the trunk is ``"main"``)."""

    kind: str
    scenario: str | None
    chainage_m: float
    value: float
    limit: float
    message: str = ""
    branch: str = TRUNK

    def as_dict(self) -> dict:
        return {"kind": self.kind, "scenario": self.scenario, "branch": self.branch,
                "chainage_m": self.chainage_m, "value": self.value, "limit": self.limit,
                "message": self.message}


@dataclass
class ScenarioResult:
    """Hydraulics of one scenario: points (both sides of nodes) and segments."""

    name: str
    inflow_m3_s: float
    outlet_flow_m3_s: float
    outlet_energy_m: float
    required_head_m: float
    points: pd.DataFrame
    segments: pd.DataFrame
    capacity_m3_s: float | None = None
    capacity_outlet_only_m3_s: float | None = None
    outlets: list[DeliveryPoint] = field(default_factory=list)
    """One per delivery point: the trunk's, then every branch's (contract section 7)."""
    tank_inflow_energy_m: np.ndarray | None = None
    """Energy left to fill each tank of ``CheckResult.tanks`` [m]; None: no tank."""

    @property
    def outlet_margin_m(self) -> float:
        return self.outlet_energy_m - self.required_head_m

    @property
    def least_pressure_margin(self) -> pd.Series:
        margin = self.points["pressure_m"] - self.points["min_pressure_m"]
        return self.points.loc[margin.idxmin()]


@dataclass
class CheckResult:
    study: Study
    design: Design
    scenarios: list[ScenarioResult]
    violations: list[Violation]
    pieces: pd.DataFrame
    total_cost: float
    change_cost_total: float = 0.0
    notes: list[str] = field(default_factory=list)
    tanks: tuple[BreakPressureTank, ...] = ()
    """Every tank on the route (the study's and the design's new ones), by chainage."""
    tank_cost_total: float = 0.0
    station: StationResult | None = None
    """The pump station (contract section 9); None without ``[pump]``."""

    @property
    def ok(self) -> bool:
        return not self.violations

    @property
    def life_cycle_cost(self) -> float | None:
        """total_cost + station cost + energy present value (with a pump), else None."""
        if self.station is None:
            return None
        return self.total_cost + self.station.capital_and_energy


def _line_piece_rows(study: Study, part: DesignHydraulics, evaluated: list[ScenarioArrays],
                     segment_surges: dict[str, np.ndarray]) -> list[dict]:
    """Rows of the piece table for the pieces of one line (trunk or branch); with tanks
    and surge by wave speed, each segment's surge into ``segment_surges``."""
    grid = part.grid
    zone_factor = np.array([study.costs.factor(z) for z in grid.segment_zone])
    rows = []
    top_water = static_line_m(study)
    # Largest velocity of each grid segment in any scenario (contract section 10).
    fastest = np.max([arrays.velocity_m_s for arrays in evaluated], axis=0)
    pieces = [part.design.pieces[i] for i in part.piece_index]
    wave_speed = surge_rule.wave_speeds_m_s(study, [piece.option for piece in pieces])
    surges = surge_rule.segment_surges_m(study, (*study.tanks, *part.design.tanks),
                                         part.line, grid, wave_speed, fastest)
    for index, piece in enumerate(pieces):
        mask = grid.segment_piece == index
        nodes = np.flatnonzero(mask)
        levels = np.concatenate([grid.node_pipe_level_m[nodes], grid.node_pipe_level_m[nodes + 1]])
        lowest = int(np.argmin(levels))
        lowest_chainage = np.concatenate([grid.start_m[nodes], grid.end_m[nodes]])[lowest]
        option = piece.option
        length = float(grid.segment_length_m[mask].sum())
        cost = float((option.cost_per_m * zone_factor[mask] * grid.segment_length_m[mask]).sum())
        velocity = float(fastest[mask].max())
        rows.append({
            "piece": int(part.piece_index[index]),
            "from_m": piece.from_m, "to_m": piece.to_m, "material": option.material,
            "dn_mm": option.dn_mm, "pressure_class": option.pressure_class,
            "length_m": length, "internal_diameter_mm": option.internal_diameter_mm,
            "cost": cost, "lowest_pipe_level_m": float(levels[lowest]),
            "lowest_chainage_m": float(lowest_chainage),
            "static_head_m": float(static_head_m(top_water, levels[lowest])),
            "allowable_head_m": option.allowable_head_m,
            "max_velocity_m_s": velocity,
            "wave_speed_m_s": float(wave_speed[index]),
            "surge_head_m": float(surges[mask].max()),
            # With the allowance method section 5 holds: static + allowance against the
            # working limit; by wave speed the surge limit of the option where it has one.
            "allowable_surge_head_m": (option.allowable_head_m
                                       if study.surge.method is SurgeMethod.ALLOWANCE
                                       else option.surge_limit_head_m),
            "branch": part.line.name,
        })
    if part.tanks.any or np.any(part.static_level_m != top_water):
        # The static line restarts at every tank (section 8), also above this line.
        heads, levels, where = piece_static_heads(
            grid.segment_piece, len(pieces), part.static_level_m,
            grid.node_pipe_level_m[:-1], grid.node_pipe_level_m[1:], grid.start_m, grid.end_m)
        for row, head, level, at in zip(rows, heads, levels, where, strict=True):
            row["static_head_m"], row["lowest_pipe_level_m"] = float(head), float(level)
            row["lowest_chainage_m"] = float(at)
        if study.surge.method is SurgeMethod.JOUKOWSKY:  # each side its own L (section 10)
            segment_surges[part.line.name] = surges
            for row, surge in zip(rows, surge_rule.piece_surges_m(
                    grid.segment_piece, part.static_level_m, grid.node_pipe_level_m, surges,
                    heads), strict=True):
                row["surge_head_m"] = float(surge)
    return rows


def _piece_table(study: Study, scheme: SchemeHydraulics,
                 evaluated: list[dict[str, ScenarioArrays]],
                 segment_surges: dict[str, np.ndarray]) -> pd.DataFrame:
    """Every piece of the design, in the design's order, with its class and surge."""
    rows = []
    for name, part in scheme.parts.items():
        rows += _line_piece_rows(study, part, [arrays[name] for arrays in evaluated],
                                 segment_surges)
    table = pd.DataFrame(rows).sort_values("piece", kind="stable")
    table = table.drop(columns="piece").reset_index(drop=True)
    surge_margin = (table["allowable_surge_head_m"] - table["static_head_m"]
                    - table["surge_head_m"])
    static_margin = table["allowable_head_m"] - table["static_head_m"]
    table["class_governs"] = np.where(surge_margin < static_margin, "static + surge", "static")
    # The largest static head each piece may take: the class envelope of the charts.
    table["static_head_limit_m"] = np.minimum(
        table["allowable_head_m"], table["allowable_surge_head_m"] - table["surge_head_m"])
    return table


def _who(study: Study, scenario: str, branch: str) -> str:
    """Who a violation concerns: the scenario, and the branch on a scheme."""
    return text.scenario_on(scenario, branch if study.is_scheme else None)


def _class_violations(study: Study, pieces: pd.DataFrame) -> list[Violation]:
    """Pressure class of every piece (contract sections 5 and 10): static head within
    allowable_head_m and static + surge head within the surge limit; the worse of the
    two is reported. With the allowance method this is section 5's single test."""
    violations = []
    by_wave_speed = study.surge.method is SurgeMethod.JOUKOWSKY
    for row in pieces.itertuples():
        name = (f"{row.material} DN{row.dn_mm:g} {row.pressure_class} from {row.from_m:g} to "
                f"{row.to_m:g} m")
        if study.is_scheme:
            name = f"branch '{row.branch}', {name}"
        demand = row.static_head_m + row.surge_head_m
        surge_excess = demand - row.allowable_surge_head_m
        static_excess = row.static_head_m - row.allowable_head_m
        if class_holds(demand, row.allowable_surge_head_m, CHECK_TOLERANCE) and \
                class_holds(row.static_head_m, row.allowable_head_m, CHECK_TOLERANCE):
            continue
        head = getattr(row, "class_head", "static head")
        if surge_excess >= static_excess:
            what = (f"surge head {row.surge_head_m:.1f} m (wave speed "
                    f"{row.wave_speed_m_s:.0f} m/s, velocity {row.max_velocity_m_s:.2f} m/s)"
                    if by_wave_speed else f"surge allowance {row.surge_head_m:g} m")
            violations.append(Violation(
                "max_pressure", None, row.lowest_chainage_m, demand,
                row.allowable_surge_head_m,
                text.class_exceeded(name, demand, f"{head} {row.static_head_m:.1f} m + "
                                    f"{what}", row.allowable_surge_head_m,
                                    row.lowest_chainage_m), row.branch))
        else:
            violations.append(Violation(
                "max_pressure", None, row.lowest_chainage_m, row.static_head_m,
                row.allowable_head_m,
                text.class_exceeded(name, row.static_head_m, head,
                                    row.allowable_head_m, row.lowest_chainage_m), row.branch))
    return violations


def _pressure_violations(study: Study, scenario: Scenario, points: pd.DataFrame,
                         surge_by_piece: np.ndarray) -> list[Violation]:
    """Minimum pressure at every check point (section 5) and the down-surge limit
    (section 10): pressure head minus the surge head of the pipe at that point, at or
    above ``[surge] min_transient_pressure_m``."""
    short = points[points["pressure_m"] < points["min_pressure_m"] - CHECK_TOLERANCE]
    violations = [Violation(
        "min_pressure", scenario.name, float(row.chainage_m), float(row.pressure_m),
        float(row.min_pressure_m),
        text.pressure_short(_who(study, scenario.name, row.branch), row.pressure_m,
                            row.min_pressure_m, row.chainage_m), row.branch)
        for row in short.itertuples()]
    limit = study.surge.min_transient_pressure_m
    if limit is None:
        return violations
    low = points[points["transient_pressure_m"] < limit - 1e-9]
    return violations + [Violation(
        "transient_pressure", scenario.name, float(row.chainage_m),
        float(row.transient_pressure_m), limit,
        text.transient_short(_who(study, scenario.name, row.branch), row.pressure_m,
                             surge_by_piece[int(row.piece)], limit, row.chainage_m),
        row.branch) for row in low.itertuples()]


def _velocity_violations(study: Study, scenario_name: str, segments: pd.DataFrame,
                         n_pieces: int, rules: DesignRules) -> list[Violation]:
    """The fastest and slowest segment of each piece against the velocity window (the
    first such segment where several tie)."""
    piece = segments["piece"].to_numpy()
    velocity = segments["velocity_m_s"].to_numpy()
    start = segments["from_m"].to_numpy()
    branches = segments["branch"].to_numpy()
    order = np.argsort(piece, kind="stable")  # each piece's rows, in table order
    bounds = np.searchsorted(piece[order], np.arange(n_pieces + 1))
    violations = []
    for index in range(n_pieces):
        rows = order[bounds[index]:bounds[index + 1]]
        fastest = rows[np.nanargmax(velocity[rows])]
        slowest = rows[np.nanargmin(velocity[rows])]
        branch = str(branches[fastest])
        who = _who(study, scenario_name, branch)
        if above_velocity_max(velocity[fastest], rules, CHECK_TOLERANCE):
            violations.append(Violation(
                "velocity_max", scenario_name, float(start[fastest]),
                float(velocity[fastest]), rules.velocity_max_m_s,
                text.velocity_outside(who, index + 1, velocity[fastest],
                                      rules.velocity_max_m_s, start[fastest], True),
                branch))
        if below_velocity_min(velocity[slowest], rules, CHECK_TOLERANCE):
            violations.append(Violation(
                "velocity_min", scenario_name, float(start[slowest]),
                float(velocity[slowest]), rules.velocity_min_m_s,
                text.velocity_outside(who, index + 1, velocity[slowest],
                                      rules.velocity_min_m_s, start[slowest], False),
                branch))
    return violations


def _outlet_violations(study: Study, scenario: Scenario,
                       outlets: list[DeliveryPoint]) -> list[Violation]:
    """Energy after the exit loss at every delivery point against its required head."""
    return [Violation(
        "outlet_head", scenario.name, outlet.chainage_m, outlet.energy_m,
        outlet.required_head_m,
        text.outlet_short(_who(study, scenario.name, outlet.branch), outlet.energy_m,
                          outlet.required_head_m, outlet.chainage_m), outlet.branch)
        for outlet in outlets
        if outlet.energy_m < outlet.required_head_m - CHECK_TOLERANCE]


def _scenario_result(study: Study, scheme: SchemeHydraulics, scenario: Scenario,
                     arrays: dict[str, ScenarioArrays], capacity: bool) -> ScenarioResult:
    """Points, segments, delivery points and (with ``capacity``) the trunk's capacity."""
    points = scheme.points(arrays)
    segments = scheme.segments(arrays)
    trunk = scheme.lines[0]
    outlets = scheme.delivery_points(scenario, arrays, capacity)
    result = ScenarioResult(scenario.name, inflow_m3_s(study, scenario),
                            scenario.outlet_flow_m3_s, arrays[trunk.name].outlet_energy_m,
                            study.outlet.required_head_m, points, segments, outlets=outlets)
    if capacity:
        result.capacity_m3_s = scheme.capacity_m3_s(scenario, trunk.name, outlet_only=False,
                                                     arrays=arrays)
        result.capacity_outlet_only_m3_s = outlets[0].uncontrolled_flow_m3_s
        if result.capacity_m3_s is not None and result.capacity_outlet_only_m3_s is not None:
            # More limits can only lower the capacity; keep root-solve noise from
            # saying otherwise.
            result.capacity_m3_s = min(result.capacity_m3_s, result.capacity_outlet_only_m3_s)
    return result


def check_design(study: Study, design: Design, *, capacity: bool = True) -> CheckResult:
    """Analyse ``design`` in every scenario of ``study`` (contract sections 5, 7 and 10).

    Returns points, segments, violations, costs, the delivery point of every line and
    (unless ``capacity=False``) the gravity capacity of the design in each scenario and
    the uncontrolled flow of each delivery point.
    """
    scheme = SchemeHydraulics(study, design)
    evaluated = [scheme.evaluate(scenario) for scenario in study.scenarios]
    segment_surges: dict[str, np.ndarray] = {}
    pieces = _piece_table(study, scheme, evaluated, segment_surges)
    surge_by_piece = pieces["surge_head_m"].to_numpy()
    scenarios, station = list(study.scenarios), None
    if study.pump is not None:  # the least station head per scenario (section 9)
        # The station lifts every line its head reaches (above each line's first tank);
        # every line is run again with it.
        station, scenarios, evaluated, pieces = pump_the_scheme(scheme, evaluated, pieces,
                                                                segment_surges)
    violations = _class_violations(study, pieces)

    results: list[ScenarioResult] = []
    for scenario, arrays in zip(scenarios, evaluated, strict=True):
        result = _scenario_result(study, scheme, scenario, arrays, capacity)
        points = result.points
        points["surge_head_m"] = surge_rule.point_surges_m(points, scheme.parts,
                                                           segment_surges, surge_by_piece)
        points["transient_pressure_m"] = points["pressure_m"] - points["surge_head_m"]
        violations.extend(_pressure_violations(study, scenario, points, surge_by_piece))
        if scenario.velocity_limits:
            violations.extend(_velocity_violations(study, scenario.name, result.segments,
                                                   len(design.pieces), study.rules))
        violations.extend(_outlet_violations(study, scenario, result.outlets))
        violations.extend(_tank_violations(study, scheme, scenario, arrays, result))
        results.append(result)
    change_total = study.costs.change_cost * design.n_changes
    total = float(pieces["cost"].sum()) + change_total
    tanks = tuple(t for part in scheme.parts.values() for t in part.tanks.tanks)
    tank_total = sum(tank_cost(study, t) for t in tanks)
    if tank_total:
        total += tank_total
    notes = [] if station is None else station_notes(station, study)
    return CheckResult(study, design, results, violations, pieces, total, change_total,
                       notes, tanks=tanks, tank_cost_total=float(tank_total), station=station)


def _tank_violations(study: Study, scheme: SchemeHydraulics, scenario: Scenario,
                     arrays: dict[str, ScenarioArrays], result: ScenarioResult
                     ) -> list[Violation]:
    """``tank_inflow`` where a tank cannot fill at the scenario's flows (section 8);
    records every tank's energy left to fill it on ``result`` (lines in order)."""
    violations, energies = [], []
    for name, part in scheme.parts.items():
        inflow = arrays[name].tank_inflow_energy_m
        if inflow is None:
            continue
        energies.append(inflow)
        for tank, energy in tanks_short(part.tanks, inflow, CHECK_TOLERANCE):
            violations.append(Violation(
                "tank_inflow", scenario.name, tank.chainage_m, energy, tank.water_level_m,
                text.tank_cannot_fill(_who(study, scenario.name, name), energy,
                                      tank.water_level_m, tank.chainage_m), name))
    if energies:
        result.tank_inflow_energy_m = np.concatenate(energies)
    return violations
