"""The static line of the class check (contract sections 5, 8 and 9)."""

from __future__ import annotations

from optimiser.model import TRUNK, Study


def pumped_delivery_level_m(study: Study) -> float:
    """Where a rising main delivers [m]: the water level of the first break-pressure
    tank on the route (the tank the station fills, when the study goes on by gravity
    below it), else the outlet's required head."""
    tanks = sorted((t for t in study.tanks if t.branch == TRUNK), key=lambda t: t.chainage_m)
    return tanks[0].water_level_m if tanks else study.outlet.required_head_m


def static_line_m(study: Study) -> float:
    """Level of the static line for the class check [m]: the source's top water level;
    with a pump, the higher of it and the level the rising main delivers to (held by
    the non-return valve when the pump stops; below a tank the tank's level restarts
    it, section 8)."""
    top = study.source.top_water_level_m
    if study.pump is None:
        return top
    return max(top, pumped_delivery_level_m(study))
