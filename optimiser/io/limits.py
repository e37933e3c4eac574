"""Accepted ranges of the numbers in input files: absurd magnitudes are refused.

A level of 1e308 m or a cost of 1e300 is a slip (of unit, exponent or column), and let
through it would overflow sums or make the optimiser's numbers meaningless. Every bound
is wide enough for any real gravity or pumped water main; docs/file-formats.md lists
them. Non-finite numbers (nan, inf) are refused earlier, by the schema and by
:func:`optimiser.io.tables.number`; flows are bounded in :mod:`optimiser.io.units`.

The study file's keys are matched by name wherever they appear (so ``exit_k`` is a loss
coefficient in any table), the CSV columns by their column name.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any


@dataclass(frozen=True)
class Limit:
    """An accepted closed range ``low <= value <= high``, its unit and what it is."""

    low: float
    high: float
    unit: str
    what: str

    def message(self, value: float) -> str | None:
        """None when ``value`` is in range, else the complaint (without its location)."""
        if self.low <= value <= self.high:
            return None
        unit = f" {self.unit}" if self.unit else ""
        return (f"{value:g} is outside the accepted range {self.low:g} to "
                f"{self.high:g}{unit} ({self.what}); check the number and its unit")


LEVEL = Limit(-500.0, 9000.0, "m", "levels: the lowest dry land is about -430 m, the "
              "highest about 8,850 m")
CHAINAGE = Limit(0.0, 2.0e6, "m", "chainage: at most 2,000 km")
COVER = Limit(0.0, 500.0, "m", "ground to pipe centreline")
PRESSURE = Limit(-10.0, 5000.0, "m", "pressure heads: -10 m is close to full vacuum")
LOSS_K = Limit(0.0, 1000.0, "", "local loss coefficients")
K_PER_KM = Limit(0.0, 1000.0, "per km", "local loss coefficients per km")
ROUGHNESS = Limit(0.0, 100.0, "mm", "absolute roughness")
FACTOR = Limit(0.0, 100.0, "", "multiplying factors")
C_VALUE = Limit(1.0, 200.0, "", "Hazen-Williams C")
DIAMETER = Limit(0.0, 10000.0, "mm", "pipe sizes: at most 10 m")
HEAD_RATING = Limit(0.0, 5000.0, "m", "pressure ratings and allowances")
COST = Limit(0.0, 1.0e12, "", "costs, in the study currency")
VELOCITY = Limit(0.0, 20.0, "m/s", "velocity limits")
COUNT = Limit(0.0, 1.0e6, "", "counts")
TIME = Limit(0.0, 1.0e6, "s", "solver time limit: at most about 11 days")
ENERGY_PRICE = Limit(0.0, 1000.0, "per kWh", "energy prices, in the study currency")
LIFE = Limit(1.0, 200.0, "years", "life of a pump station")
RATE = Limit(0.0, 1.0, "per year", "discount rates: 0.05 is 5 %")
HOURS = Limit(0.0, 8784.0, "h", "hours a year: at most a leap year")
PLAN = Limit(-1.0e8, 1.0e8, "m", "plan coordinates: every map grid places the earth "
             "within 1e8 m of its origin")

MIN_SECTION_M = 1e-3
"""Shortest section between two profile points, and shortest link [m]: 1 mm, the
tolerance of a design's piece ends (contract section 4) and of a junction from its
line's ends; closer points are one point (sections of 1e-9 m broke the check)."""

STUDY_KEYS: dict[str, Limit] = {
    "level_m": LEVEL, "top_water_level_m": LEVEL, "source_level_m": LEVEL,
    "required_head_m": LEVEL, "water_level_m": LEVEL,
    "cover_m": COVER, "min_pressure_m": PRESSURE,
    "k": LOSS_K, "local_k_per_km": K_PER_KM,
    "roughness_mm": ROUGHNESS, "roughness_factor": FACTOR, "offtake_factor": FACTOR,
    "branch_factor": FACTOR, "surge_allowance_m": HEAD_RATING, "max_head_m": HEAD_RATING,
    "change_cost": COST, "cost": COST,
    "min_piece_length_m": CHAINAGE, "max_changes": COUNT, "max_count": COUNT,
    "velocity_min_m_s": VELOCITY, "velocity_max_m_s": VELOCITY,
    "time_limit_s": TIME,
    "energy_price": ENERGY_PRICE, "life_years": LIFE, "discount_rate": RATE,
    "station_cost_per_kw": COST, "hours_per_year": HOURS,
}
"""Study-file keys by name. Keys ending in ``_k`` are loss coefficients (:data:`LOSS_K`).
Chainages in the study file are checked against the route instead."""

TABLE_VALUES: dict[tuple[str, ...], Limit] = {("costs", "zone_factor"): FACTOR}
"""Tables whose every value (under keys the user names) has one range."""

CSV_COLUMNS: dict[str, Limit] = {
    "chainage_m": CHAINAGE, "ground_m": LEVEL,
    "dn_mm": DIAMETER, "internal_diameter_mm": DIAMETER,
    "allowable_head_m": HEAD_RATING, "roughness_mm": ROUGHNESS,
    "hazen_williams_c": C_VALUE, "cost_per_m": COST,
    # the compact form's nodes and links (io/network_file.py)
    "min_pressure_m": PRESSURE, "required_head_m": LEVEL, "length_m": CHAINAGE,
    # plan positions (nodes file; x/y profile of a route from coordinates)
    "x_m": PLAN, "y_m": PLAN,
}
"""CSV columns by name (profile, catalogue, design, nodes and links)."""


def study_key_limit(location: tuple[Any, ...]) -> Limit | None:
    """The range of the study-file value at ``location`` (keys and list indices), if any."""
    names = tuple(item for item in location if isinstance(item, str))
    if names[:-1] in TABLE_VALUES:
        return TABLE_VALUES[names[:-1]]
    key = names[-1] if names else ""
    if key in STUDY_KEYS:
        return STUDY_KEYS[key]
    return LOSS_K if key.endswith("_k") else None


def out_of_range(raw: Any, location: tuple[Any, ...] = ()) -> list[tuple[tuple, str]]:
    """Every finite number of a parsed study file that is outside its range.

    Returns (location, message) pairs; the location is pydantic's (keys and 0-based list
    indices). Values that are not finite numbers are left to the schema.
    """
    found: list[tuple[tuple, str]] = []
    if isinstance(raw, dict):
        items = raw.items()
    elif isinstance(raw, list):
        items = enumerate(raw)
    else:
        items = ()
    for key, value in items:
        here = (*location, key)
        if isinstance(value, dict | list):
            found.extend(out_of_range(value, here))
            continue
        if isinstance(value, bool) or not isinstance(value, int | float):
            continue
        limit = study_key_limit(here)
        if limit is None or not math.isfinite(value):
            continue
        complaint = limit.message(float(value))
        if complaint:
            found.append((here, complaint))
    return found
