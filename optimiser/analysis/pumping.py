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
from dataclasses import dataclass

import numpy as np
import pandas as pd

from optimiser.analysis.design_hydraulics import DesignHydraulics, ScenarioArrays
from optimiser.analysis.flows import inflow_m3_s
from optimiser.analysis.static_line import static_line_m
from optimiser.analysis.surge import water_density_kg_m3
from optimiser.hydraulics.pumping import (
    present_worth_factor,
    pump_power_kw,
    yearly_energy_kwh,
)
from optimiser.model import Scenario, Study

__all__ = ["StationResult", "least_head_m", "pumped_scenario", "run_station",
           "static_line_m", "station_notes", "station_result", "with_pumping_heads"]


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


def least_head_m(hydraulics: DesignHydraulics, arrays: ScenarioArrays,
                 surge_by_piece: np.ndarray) -> float:
    """Least head [m] the station must add to this gravity energy line so that every
    pressure minimum, the outlet head and the down-surge limit hold (0 if none is
    short).

    With break-pressure tanks on the route the station lifts only to the first of them
    (the rising main; the energy restarts at the tank, section 8): the limits that count
    are those of the points above that tank and the tank's inflow, arriving energy less
    the inlet loss at least its water level, in place of the outlet head.
    """
    study = hydraulics.study
    points = hydraulics.point_arrays(arrays)
    pressure = hydraulics.pressure_m(points)
    rising = np.ones(len(pressure), dtype=bool)
    delivery = study.outlet.required_head_m - arrays.outlet_energy_m
    if hydraulics.tanks.any and arrays.tank_inflow_energy_m is not None:
        rising = points.segment < hydraulics.tanks.node[0]
        delivery = float(hydraulics.tanks.level_m[0] - arrays.tank_inflow_energy_m[0])
    short = hydraulics.node_min_pressure_m[points.node] - pressure
    deficits = [0.0, delivery, float(np.max(short[rising]))]
    limit = study.surge.min_transient_pressure_m
    if limit is not None:  # the pump trip's down-surge, on the rising main
        surge = surge_by_piece[hydraulics.grid.segment_piece[points.segment]]
        deficits.append(float(np.max((limit - (pressure - surge))[rising])))
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


def run_station(hydraulics: DesignHydraulics, evaluated: list[ScenarioArrays],
                surge_by_piece: np.ndarray
                ) -> tuple[StationResult, list[Scenario], list[ScenarioArrays]]:
    """The least head of every scenario (capped at ``max_head_m``), the scenarios run
    with it and their energy lines."""
    study = hydraulics.study
    pump = study.pump
    assert pump is not None
    needed: dict[str, float] = {}
    heads: dict[str, float] = {}
    scenarios: list[Scenario] = []
    pumped: list[ScenarioArrays] = []
    for scenario, arrays in zip(study.scenarios, evaluated, strict=True):
        need = least_head_m(hydraulics, arrays, surge_by_piece)
        head = need if pump.max_head_m is None else min(need, pump.max_head_m)
        needed[scenario.name], heads[scenario.name] = need, head
        scenarios.append(pumped_scenario(scenario, head))
        pumped.append(hydraulics.evaluate(scenarios[-1]))
    return station_result(study, heads, needed), scenarios, pumped


def with_pumping_heads(pieces: pd.DataFrame, hydraulics: DesignHydraulics,
                       pumped: list[ScenarioArrays]) -> pd.DataFrame:
    """The piece table with the largest pressure head of each piece while pumping
    (``pumping_head_m``, any scenario); ``static_head_m`` becomes the larger of it and
    the static head, which the class check judges (``class_head`` says which)."""
    table = pieces.copy()
    largest = np.full(len(table), -np.inf)
    for arrays in pumped:
        points = hydraulics.point_arrays(arrays)
        piece = hydraulics.piece_index[hydraulics.grid.segment_piece[points.segment]]
        np.maximum.at(largest, piece, hydraulics.pressure_m(points))
    table["still_head_m"] = table["static_head_m"]
    table["pumping_head_m"] = largest
    governs = largest > table["still_head_m"].to_numpy()
    table["static_head_m"] = np.maximum(largest, table["still_head_m"].to_numpy())
    table["class_head"] = np.where(governs, "pumping head", "static head")
    return table


def station_notes(station: StationResult, study: Study) -> list[str]:
    """A sentence per scenario whose least head exceeds ``max_head_m``."""
    pump = study.pump
    assert pump is not None
    return [f"{name}: the station would need {needed:.2f} m of head, more than max_head_m "
            f"({pump.max_head_m:g} m); checked at {station.head_m[name]:.2f} m"
            for name, needed in station.needed_head_m.items()
            if station.head_m[name] < needed - 1e-9]
