"""Variants of a study: one quantity changed, everything else as the engineer wrote it."""

from __future__ import annotations

import dataclasses

import numpy as np

from optimiser.model import Scenario, Study
from optimiser.sweeps.branch_variants import (
    BRANCH_KINDS,
    branch_study_value,
    branch_variable,
    trunk_variable,
    vary_branch,
)
from optimiser.sweeps.pump_variants import PUMP_VARIABLES, pump_value, vary_pump

VARIABLES = ("source-level", "required-head", "flow", *PUMP_VARIABLES)
"""The plain variables (the pump's apply with a [pump] only); a scheme also has
``branch-head:NAME`` and ``branch-flow:NAME`` (:mod:`optimiser.sweeps.branch_variants`)."""


def known_variable(variable: str) -> bool:
    """True for one of VARIABLES or a branch variable (``branch-head:NAME``, ...)."""
    return variable in VARIABLES or branch_variable(variable) is not None


def variable_names() -> str:
    """The variables for a message: the plain ones and the branch forms."""
    return ", ".join((*VARIABLES, *(f"{kind}:NAME" for kind in BRANCH_KINDS)))


def with_source_level(study: Study, level_m: float) -> Study:
    """The source's design level set to ``level_m``. Scenario levels and the top water
    level move by the same amount (a higher intake raises all of them)."""
    shift = level_m - study.source.level_m
    source = dataclasses.replace(study.source, level_m=level_m,
                                 top_water_level_m=study.source.top_water_level_m + shift)
    scenarios = tuple(dataclasses.replace(s, source_level_m=s.source_level_m + shift)
                      for s in study.scenarios)
    return dataclasses.replace(study, source=source, scenarios=scenarios)


def with_required_head(study: Study, head_m: float) -> Study:
    """The outlet's required energy level set to ``head_m``."""
    return dataclasses.replace(study, outlet=dataclasses.replace(study.outlet,
                                                                 required_head_m=head_m))


def with_outlet_flow(study: Study, flow_m3_s: float) -> Study:
    """The first scenario's outlet flow set to ``flow_m3_s``; the others scale with it."""
    reference = study.scenarios[0].outlet_flow_m3_s
    scale = flow_m3_s / reference if reference > 0 else 1.0
    scenarios = tuple(
        dataclasses.replace(s, outlet_flow_m3_s=flow_m3_s if i == 0 else
                            s.outlet_flow_m3_s * scale)
        for i, s in enumerate(study.scenarios))
    return dataclasses.replace(study, scenarios=scenarios)


def scenario_roughness_mm(scenario: Scenario, roughness_mm: float) -> float:
    """The roughness [mm] ``scenario`` uses when ``roughness_mm`` stands for the
    catalogue's roughness of every option: the scenario's own rule applied to it
    (:meth:`Scenario.effective_roughness_mm`): times its ``roughness_factor``, or its own
    ``roughness_mm``, which the sweep does not change."""
    return float(scenario.effective_roughness_mm(np.array(roughness_mm)))


def at_roughness(scenario: Scenario, roughness_mm: float, name: str | None = None
                 ) -> Scenario:
    """``scenario`` with the catalogue's roughness replaced by ``roughness_mm``."""
    return dataclasses.replace(scenario, name=name or scenario.name,
                               roughness_mm=scenario_roughness_mm(scenario, roughness_mm),
                               roughness_factor=None)


def with_roughness(study: Study, roughness_mm: float) -> Study:
    """The study with ``roughness_mm`` for every option's catalogue roughness; each
    scenario's own factor still multiplies it (:func:`scenario_roughness_mm`)."""
    scenarios = tuple(at_roughness(s, roughness_mm) for s in study.scenarios)
    return dataclasses.replace(study, scenarios=scenarios)


def with_roughness_range(study: Study, roughness_mm: list[float], *,
                         share_hours: bool = False) -> Study:
    """One scenario per (scenario, roughness) pair: a design feasible for all of them is
    feasible at every listed roughness (the robust design's study). A scenario with its
    own ``roughness_mm`` does not move with the roughness and enters once, unchanged.
    With ``share_hours``, each moving scenario's ``hours_per_year`` is shared equally
    among its copies, so a pump's energy a year is the mean over the range."""
    scenarios = []
    share = 1.0 / len(roughness_mm) if share_hours else 1.0
    for s in study.scenarios:
        if s.roughness_mm is not None:
            scenarios.append(s)
            continue
        times = "" if s.roughness_factor is None else f" x {s.roughness_factor:g}"
        scenarios += [dataclasses.replace(at_roughness(s, r, f"{s.name} @ {r:g} mm{times}"),
                                          hours_per_year=s.hours_per_year * share)
                      for r in roughness_mm]
    return dataclasses.replace(study, scenarios=tuple(scenarios))


def vary(study: Study, variable: str, value: float) -> Study:
    """The study with ``variable`` (one of VARIABLES, or a branch variable) set to
    ``value`` (SI units)."""
    branched = vary_branch(study, variable, value)
    if branched is not None:
        return branched
    variable = trunk_variable(variable)
    if variable == "source-level":
        return with_source_level(study, value)
    if variable == "required-head":
        return with_required_head(study, value)
    if variable == "flow":
        return with_outlet_flow(study, value)
    if variable in PUMP_VARIABLES:
        return vary_pump(study, variable, value)
    raise ValueError(f"cannot vary {variable!r}; choose one of {variable_names()}")


def study_value(study: Study, variable: str) -> float:
    """The study's own value of ``variable`` (its point on a trade-off curve)."""
    own = branch_study_value(study, variable)
    if own is not None:
        return own
    variable = trunk_variable(variable)
    if variable == "source-level":
        return study.source.level_m
    if variable == "required-head":
        return study.outlet.required_head_m
    if variable == "flow":
        return study.scenarios[0].outlet_flow_m3_s
    if variable in PUMP_VARIABLES:
        return pump_value(study, variable)
    raise ValueError(variable)
