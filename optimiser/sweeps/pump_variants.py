"""Economic parameters of a pumped main as trade-off variables (contract section 9).

``tradeoff --vary energy-price|discount-rate|hours`` re-optimises a pumped study at each
value: the economic diameter moves with the price of energy, the discount rate and the
hours pumped. ``hours`` is the total hours a year of all scenarios, shared among them
in the study's own proportions (evenly if the study gives none).
"""

from __future__ import annotations

import dataclasses
from typing import Any

from optimiser.model import Study

PUMP_VARIABLES = ("energy-price", "discount-rate", "hours")
"""Trade-off variables of a pumped study."""

LIFE_CYCLE_COLUMNS = ["life_cycle_cost", "station_cost", "energy_present_value"]
"""Columns a trade-off table of a pumped study adds (after the gravity columns)."""


def vary_pump(study: Study, variable: str, value: float) -> Study:
    """The pumped study with ``variable`` set to ``value`` (currency per kWh, a rate per
    year such as 0.05, or hours a year)."""
    pump = study.pump
    if pump is None:
        raise ValueError(f"--vary {variable} needs a [pump] in the study")
    if variable == "energy-price":
        return dataclasses.replace(study, pump=dataclasses.replace(pump, energy_price=value))
    if variable == "discount-rate":
        return dataclasses.replace(study, pump=dataclasses.replace(pump, discount_rate=value))
    if variable == "hours":
        total = sum(s.hours_per_year for s in study.scenarios)
        count = len(study.scenarios)
        shares = [s.hours_per_year / total if total > 0 else 1.0 / count
                  for s in study.scenarios]
        scenarios = tuple(dataclasses.replace(s, hours_per_year=value * share)
                          for s, share in zip(study.scenarios, shares, strict=True))
        return dataclasses.replace(study, scenarios=scenarios)
    raise ValueError(f"cannot vary {variable!r}")


def pump_value(study: Study, variable: str) -> float:
    """The study's own value of a pump variable."""
    pump = study.pump
    if pump is None:
        raise ValueError(f"--vary {variable} needs a [pump] in the study")
    if variable == "energy-price":
        return pump.energy_price
    if variable == "discount-rate":
        return pump.discount_rate
    return float(sum(s.hours_per_year for s in study.scenarios))


def life_cycle_row(check: Any) -> dict[str, Any]:
    """The life-cycle columns of a step from its check (empty without a pump)."""
    station = None if check is None else check.station
    if station is None:
        return {}
    return {"life_cycle_cost": check.life_cycle_cost, "station_cost": station.station_cost,
            "energy_present_value": station.energy_present_value}


def parse_pump_value(option: str, variable: str, text: str) -> float:
    """``--from``/``--to`` of a pump variable: a plain number (a rate may be given as
    ``5 %``); never negative, a rate at most 1, hours at most 8,784."""
    cleaned = text.strip()
    percent = cleaned.endswith("%")
    try:
        value = float(cleaned.rstrip("%").strip())
    except ValueError:
        raise ValueError(f"{option}: expected a number for {variable}, got {text!r}") from None
    if percent:
        value /= 100.0
    high = {"energy-price": 1000.0, "discount-rate": 1.0, "hours": 8784.0}[variable]
    if not 0.0 <= value <= high:
        raise ValueError(f"{option}: {variable} must be between 0 and {high:g}, got {text!r}")
    return value
