"""The static line of the class check (contract sections 5, 8 and 9)."""

from __future__ import annotations

from optimiser.model import Study
from optimiser.model.lines import Line, study_lines


def first_tanks(study: Study) -> dict[str, tuple[float, float]]:
    """(chainage [m], water level [m]) of the first break-pressure tank of the study on
    each line that has one, by line name."""
    first: dict[str, tuple[float, float]] = {}
    for tank in study.tanks:
        known = first.get(tank.branch)
        if known is None or tank.chainage_m < known[0]:
            first[tank.branch] = (tank.chainage_m, tank.water_level_m)
    return first


def pumped_lines(study: Study) -> list[Line]:
    """The lines a station at the source reaches with its head (contract section 9):
    the trunk, and every branch whose parent is reached and whose junction lies above
    the parent's first break-pressure tank (the energy restarts at a tank, section 8)."""
    first = first_tanks(study)
    reached: list[Line] = []
    names: set[str] = set()
    for line in study_lines(study):
        if line.parent is not None:
            above = first.get(line.parent)
            if line.parent not in names or (above is not None
                                            and line.at_chainage_m >= above[0]):
                continue
        reached.append(line)
        names.add(line.name)
    return reached


def pump_reaches_branches(study: Study) -> bool:
    """A pumped study whose station's head reaches a branch (a pumped scheme)."""
    return study.pump is not None and len(pumped_lines(study)) > 1


def pumped_delivery_level_m(study: Study) -> float:
    """Where the station delivers [m]: the highest level over the lines its head
    reaches (:func:`pumped_lines`): a line's first break-pressure tank's water level
    (the tank the station fills, the line going on by gravity below it), else its
    outlet's required head (a single route: the first tank, else the outlet)."""
    first = first_tanks(study)
    return max(line.required_head_m if line.name not in first else first[line.name][1]
               for line in pumped_lines(study))


def static_line_m(study: Study) -> float:
    """Level of the static line for the class check [m]: the source's top water level;
    with a pump, the higher of it and the highest level the station delivers to (held
    by the non-return valve when the pump stops; below a tank the tank's level restarts
    it, section 8)."""
    top = study.source.top_water_level_m
    if study.pump is None:
        return top
    return max(top, pumped_delivery_level_m(study))
