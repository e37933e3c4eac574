"""A pump station at the source (contract section 9): life-cycle cost settings."""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.model.validation import at_least, is_finite, refuse


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

    def __post_init__(self) -> None:
        refuse("PumpStation", pump_problems(self))


def pump_problems(pump: PumpStation) -> list[str]:
    """A station whose power or present worth would be infinite, nan or negative."""
    problems = []
    if not is_finite(pump.efficiency) or not 0.0 < pump.efficiency <= 1.0:
        problems.append(f"efficiency must lie in (0, 1] (wire-to-water), got "
                        f"{pump.efficiency}")
    problems += at_least("energy_price", pump.energy_price, 0.0)
    problems += at_least("life_years", pump.life_years, 0.0, strict=True)
    problems += at_least("discount_rate", pump.discount_rate, 0.0)
    problems += at_least("station_cost_per_kw", pump.station_cost_per_kw, 0.0)
    problems += at_least("max_head_m", pump.max_head_m, 0.0)
    return problems
