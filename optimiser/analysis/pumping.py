"""The pump station of a pumped main in the check (contract section 9).

A station at chainage 0 adds a head H >= 0 to the water leaving the source: the energy
line starts at the scenario's source level + H minus the entrance loss. H shifts the
whole energy line (and so every pressure and the outlet energy) by the same amount and
changes no velocity, so the least H that meets every limit of a scenario is the largest
deficit of that scenario's gravity line:

    H = max(0, max over points (minimum - pressure), required head - outlet energy,
            max over points (transient limit - (pressure - surge head)))

The check then runs the scenario with that H (capped at ``max_head_m``: what the cap
leaves short is reported as the ordinary min_pressure / outlet_head violations), takes
the pumping pressures into the class check, and prices the energy. A head that breaks a
pressure class is not lowered: the class violation is reported (``max_pressure``).

Classes with a pump: every piece takes the larger of the static head of the static
line held by the non-return valve when the pump stops (the higher of the top water
level and the level the main delivers to: the outlet's required head, or the first
break-pressure tank's water level when the study goes on by gravity below a tank)
and the largest pressure head in it while pumping in any scenario, plus its surge. A
pump trip is the classic down-surge of a rising main: the line drops by the surge head
below the pumping grade line, so the down-surge limit
``[surge] min_transient_pressure_m`` is checked against the pumping
pressures (and is one of the limits the least H must meet).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.scheme_check import SchemeHydraulics
from optimiser.analysis.static_line import static_line_m
from optimiser.analysis.surge import water_density_kg_m3
from optimiser.hydraulics.pumping import (
    present_worth_factor,
    pump_power_kw,
    yearly_energy_kwh,
)
from optimiser.model import Scenario, Study

__all__ = ["StationResult", "least_head_m", "pump_the_scheme", "pumped_scenario",
           "reached_lines", "run_station", "segment_surges_m", "static_line_m",
           "station_notes", "station_result", "with_pumping_heads"]


@dataclass(frozen=True)
class StationResult:
    """The station in every scenario, and its life-cycle costs (contract section 9)."""

    head_m: dict[str, float]
    """Head the station adds, by scenario [m] (the least that meets every limit, at
    most ``max_head_m``)."""
    needed_head_m: dict[str, float]
    """The least head meeting every limit, before the cap [m]."""
    power_kw: dict[str, float]
    energy_kwh_per_year: dict[str, float]
    installed_kw: float
    energy_cost_per_year: float
    present_worth_factor: float
    energy_present_value: float
    station_cost: float

    @property
    def capital_and_energy(self) -> float:
        """Station cost plus the present value of the energy."""
        return self.station_cost + self.energy_present_value

    def as_dict(self) -> dict:
        """The JSON ``pump`` object (contract section 9, plus the needed head and the
        energy a year)."""
        return {"head_m": dict(self.head_m), "power_kw": dict(self.power_kw),
                "installed_kw": self.installed_kw,
                "energy_cost_per_year": self.energy_cost_per_year,
                "present_worth_factor": self.present_worth_factor,
                "energy_present_value": self.energy_present_value,
                "station_cost": self.station_cost,
                "needed_head_m": dict(self.needed_head_m),
                "energy_kwh_per_year": dict(self.energy_kwh_per_year)}


def reached_lines(scheme: SchemeHydraulics) -> dict[str, int | None]:
    """The lines the station's head reaches, each with the grid node of its first
    break-pressure tank (None: no tank on it, the head reaches its delivery point).

    The trunk is always reached; a branch is reached when its parent is and its
    junction lies above the parent's first tank (the energy restarts at a tank,
    contract section 8, so nothing below it sees the station)."""
    reached: dict[str, int | None] = {}
    for line in scheme.lines:
        part = scheme.parts[line.name]
        first = int(part.tanks.node[0]) if part.tanks.any else None
        if line.parent is not None:
            if line.parent not in reached:
                continue
            above = reached[line.parent]
            parent_nodes = scheme.parts[line.parent].grid.node_chainage_m
            if above is not None and line.at_chainage_m >= parent_nodes[above]:
                continue
        reached[line.name] = first
    return reached


def _line_deficits(part: DesignHydraulics, arrays: ScenarioArrays, first_tank: int | None,
                   surge_at_segment: np.ndarray) -> list[float]:
    """Deficits [m] of one reached line's gravity energy line: its pressure minimums
    and down-surge limit above its first tank, and its delivery (the outlet's required
    head, or the first tank's inflow: arriving energy less the inlet loss at least its
    water level)."""
    points = part.point_arrays(arrays)
    pressure = part.pressure_m(points)
    rising = np.ones(len(pressure), dtype=bool)
    delivery = part.line.required_head_m - arrays.outlet_energy_m
    if first_tank is not None and arrays.tank_inflow_energy_m is not None:
        rising = points.segment < first_tank
        delivery = float(part.tanks.level_m[0] - arrays.tank_inflow_energy_m[0])
    short = part.node_min_pressure_m[points.node] - pressure
    deficits = [float(delivery), float(np.max(short[rising], initial=-np.inf))]
    limit = part.study.surge.min_transient_pressure_m
    if limit is not None:  # the pump trip's down-surge, on the rising main
        low = limit - (pressure - surge_at_segment[points.segment])
        deficits.append(float(np.max(low[rising], initial=-np.inf)))
    return deficits


def segment_surges_m(part: DesignHydraulics, segment_surges: Mapping[str, np.ndarray],
                     surge_by_piece: np.ndarray) -> np.ndarray:
    """Surge head [m] of each grid segment of a line: its own where the check worked
    it per segment (tanks with surge by wave speed), else its piece's (as
    :func:`optimiser.analysis.surge.point_surges_m`)."""
    own = segment_surges.get(part.line.name)
    if own is not None:
        return np.asarray(own, dtype=float)
    return surge_by_piece[part.piece_index[part.grid.segment_piece]].astype(float)


def least_head_m(scheme: SchemeHydraulics, arrays: Mapping[str, ScenarioArrays],
                 surges: Mapping[str, np.ndarray]) -> float:
    """Least head [m] the station must add to this scenario's gravity energy lines so
    that every limit the head reaches holds (0 if none is short).

    H lifts the energy of every reached line (:func:`reached_lines`) by the same amount,
    flows fixed, so H is the largest deficit over the reached lines: every pressure
    minimum and the down-surge limit above each line's first tank, each reached
    delivery point's required head, and the inflow of each line's first tank:

        H = max(0, max over reached lines and points of the deficit)

    ``surges``: each line's surge head by grid segment (:func:`segment_surges_m`).
    """
    deficits = [0.0]
    for name, first_tank in reached_lines(scheme).items():
        deficits += _line_deficits(scheme.parts[name], arrays[name], first_tank,
                                   surges[name])
    return max(deficits)


def pumped_scenario(scenario: Scenario, head_m: float) -> Scenario:
    """The scenario with the station's head added to its source level (the energy line
    then starts at source level + H minus the entrance loss)."""
    return dataclasses.replace(scenario, source_level_m=scenario.source_level_m + head_m)


def station_result(study: Study, head_m: dict[str, float],
                   needed_head_m: dict[str, float]) -> StationResult:
    """Power per scenario, installed power, energy cost a year and its present value,
    station cost (contract section 9); rho from the study's water temperature."""
    pump = study.pump
    assert pump is not None
    density = water_density_kg_m3(study)
    power: dict[str, float] = {}
    energy: dict[str, float] = {}
    for scenario in study.scenarios:
        power[scenario.name] = float(pump_power_kw(
            density, inflow_m3_s(study, scenario), head_m[scenario.name], pump.efficiency))
        energy[scenario.name] = float(yearly_energy_kwh(power[scenario.name],
                                                        scenario.hours_per_year))
    installed = max(power.values(), default=0.0)
    cost_per_year = sum(energy.values()) * pump.energy_price
    factor = float(present_worth_factor(pump.discount_rate, pump.life_years))
    return StationResult(dict(head_m), dict(needed_head_m), power, energy, installed,
                         cost_per_year, factor, factor * cost_per_year,
                         pump.station_cost_per_kw * installed)


def run_station(scheme: SchemeHydraulics, evaluated: list[dict[str, ScenarioArrays]],
                surges: Mapping[str, np.ndarray]
                ) -> tuple[StationResult, list[Scenario], list[dict[str, ScenarioArrays]]]:
    """The least head of every scenario (capped at ``max_head_m``), the scenarios run
    with it and the energy lines of every line of the scheme."""
    study = scheme.study
    pump = study.pump
    assert pump is not None
    needed: dict[str, float] = {}
    heads: dict[str, float] = {}
    scenarios: list[Scenario] = []
    pumped: list[dict[str, ScenarioArrays]] = []
    for scenario, arrays in zip(study.scenarios, evaluated, strict=True):
        need = least_head_m(scheme, arrays, surges)
        head = need if pump.max_head_m is None else min(need, pump.max_head_m)
        needed[scenario.name], heads[scenario.name] = need, head
        scenarios.append(pumped_scenario(scenario, head))
        pumped.append(scheme.evaluate(scenarios[-1]))
    return station_result(study, heads, needed), scenarios, pumped


def with_pumping_heads(pieces: pd.DataFrame, scheme: SchemeHydraulics,
                       pumped: list[dict[str, ScenarioArrays]]) -> pd.DataFrame:
    """The piece table with the largest pressure head of each piece while pumping
    (``pumping_head_m``, any scenario, any line); ``static_head_m`` becomes the larger
    of it and the static head, which the class check judges (``class_head`` says
    which)."""
    table = pieces.copy()
    largest = np.full(len(table), -np.inf)
    for arrays in pumped:
        for name, line_arrays in arrays.items():
            part = scheme.parts[name]
            points = part.point_arrays(line_arrays)
            piece = part.piece_index[part.grid.segment_piece[points.segment]]
            np.maximum.at(largest, piece, part.pressure_m(points))
    table["still_head_m"] = table["static_head_m"]
    table["pumping_head_m"] = largest
    governs = largest > table["still_head_m"].to_numpy()
    table["static_head_m"] = np.maximum(largest, table["still_head_m"].to_numpy())
    table["class_head"] = np.where(governs, "pumping head", "static head")
    return table


def pump_the_scheme(scheme: SchemeHydraulics, evaluated: list[dict[str, ScenarioArrays]],
                    pieces: pd.DataFrame, segment_surges: Mapping[str, np.ndarray]
                    ) -> tuple[StationResult, list[Scenario], list[dict[str, ScenarioArrays]],
                               pd.DataFrame]:
    """The station in the check (contract section 9): its least head per scenario, the
    scenarios and energy lines with it, and the piece table with the pumping heads."""
    surge_by_piece = pieces["surge_head_m"].to_numpy()
    surges = {name: segment_surges_m(part, segment_surges, surge_by_piece)
              for name, part in scheme.parts.items()}
    station, scenarios, pumped = run_station(scheme, evaluated, surges)
    return station, scenarios, pumped, with_pumping_heads(pieces, scheme, pumped)


def station_notes(station: StationResult, study: Study) -> list[str]:
    """A sentence per scenario whose least head exceeds ``max_head_m``."""
    pump = study.pump
    assert pump is not None
    return [f"{name}: the station would need {needed:.2f} m of head, more than max_head_m "
            f"({pump.max_head_m:g} m); checked at {station.head_m[name]:.2f} m"
            for name, needed in station.needed_head_m.items()
            if station.head_m[name] < needed - 1e-9]
