"""A pump station at the source (contract section 9): life-cycle cost settings."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class PumpStation:
    """``[pump]``: wire-to-water efficiency (0 < eff <= 1), energy price [currency/kWh],
    life [years], discount rate [1/year], capital per kW installed, and the most head
    the station may add [m] (None: no limit)."""

    efficiency: float
    energy_price: float
    life_years: float = 30.0
    discount_rate: float = 0.05
    station_cost_per_kw: float = 0.0
    max_head_m: float | None = None
