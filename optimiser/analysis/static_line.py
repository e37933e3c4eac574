"""The static line of the class check (contract sections 5 and 9)."""

from __future__ import annotations

from optimiser.model import Study


def static_line_m(study: Study) -> float:
    """Level of the static line for the class check [m]: the source's top water level;
    with a pump, the higher of it and the outlet's required head (held by the
    non-return valve when the pump stops)."""
    top = study.source.top_water_level_m
    if study.pump is None:
        return top
    return max(top, study.outlet.required_head_m)
