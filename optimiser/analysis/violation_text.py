"""The sentence of each violation of the check: what is short, where, by how much and in
which scenario, in one sentence, e.g.

    peak day: pressure head 1.20 m at 9+100.0 is 0.80 m below the minimum 2.00 m

Only words: the figures come from the check, which keeps them in the violation's
``kind``, ``value``, ``limit``, ``chainage_m`` and ``scenario`` fields as well.
"""

from __future__ import annotations

STATIC = "static (every scenario)"
"""Who a pressure-class violation concerns: the static check holds for every scenario."""


def at(chainage_m: float) -> str:
    """Chainage in the trade's km+m notation: 9100.0 -> '9+100.0'."""
    kilometres = int(chainage_m // 1000)
    return f"{kilometres}+{chainage_m - 1000 * kilometres:05.1f}"


def pressure_short(scenario: str, pressure_m: float, minimum_m: float,
                   chainage_m: float) -> str:
    return (f"{scenario}: pressure head {pressure_m:.2f} m at {at(chainage_m)} is "
            f"{minimum_m - pressure_m:.2f} m below the minimum {minimum_m:.2f} m")


def transient_short(scenario: str, pressure_m: float, surge_m: float, limit_m: float,
                    chainage_m: float) -> str:
    left = pressure_m - surge_m
    return (f"{scenario}: pressure head {pressure_m:.2f} m at {at(chainage_m)} less the "
            f"surge head {surge_m:.1f} m of its pipe is {left:.2f} m, {limit_m - left:.2f} m "
            f"below the down-surge limit {limit_m:.2f} m")


def outlet_short(scenario: str, energy_m: float, required_m: float, chainage_m: float) -> str:
    return (f"{scenario}: energy at the outlet at {at(chainage_m)} after the exit loss is "
            f"{energy_m:.2f} m, {required_m - energy_m:.2f} m short of the required "
            f"{required_m:.2f} m")


def velocity_outside(scenario: str, piece_number: int, velocity_m_s: float,
                     limit_m_s: float, chainage_m: float, above: bool) -> str:
    """Above the maximum (``above``) or below the minimum velocity."""
    where = f"in piece {piece_number} at {at(chainage_m)}"
    if above:
        return (f"{scenario}: velocity {velocity_m_s:.2f} m/s {where} is "
                f"{velocity_m_s - limit_m_s:.2f} m/s above the maximum {limit_m_s:.2f} m/s")
    return (f"{scenario}: velocity {velocity_m_s:.2f} m/s {where} is "
            f"{limit_m_s - velocity_m_s:.2f} m/s below the minimum {limit_m_s:.2f} m/s "
            "(settling, water age)")


def class_exceeded(piece: str, head_m: float, what: str, limit_m: float,
                   chainage_m: float) -> str:
    """``what`` names the head, e.g. 'static head 131.8 m + surge allowance 30 m'."""
    return (f"{STATIC}: {piece}, at its lowest point {at(chainage_m)}: {what} = "
            f"{head_m:.1f} m is {head_m - limit_m:.1f} m above the class's {limit_m:g} m")


def tank_cannot_fill(scenario: str, energy_m: float, level_m: float, chainage_m: float) -> str:
    """A break-pressure tank the line cannot fill (contract section 8)."""
    return (f"{scenario}: the break-pressure tank at {at(chainage_m)} cannot fill: energy "
            f"arriving after its inlet loss is {energy_m:.2f} m, {level_m - energy_m:.2f} m "
            f"below its water level {level_m:.2f} m")


def scenario_on(scenario: str, branch: str | None) -> str:
    """Who a violation concerns: the scenario, and on a scheme the branch (``None`` on a
    single route, whose sentences name no branch)."""
    return scenario if branch is None else f"{scenario}, branch '{branch}'"
