"""Typed model of a study: route, catalogue, scenarios, rules and designs (no I/O)."""

from optimiser.model.catalogue import Catalogue, PipeOption
from optimiser.model.design import Design, Piece
from optimiser.model.route import Fitting, Offtake, Route
from optimiser.model.scenario import Scenario
from optimiser.model.status import Status
from optimiser.model.study import (
    CostRules,
    DesignRules,
    Friction,
    Outlet,
    QuantityRules,
    SolverSettings,
    Source,
    Study,
    SurgeMethod,
    SurgeSettings,
)

__all__ = [
    "Catalogue",
    "CostRules",
    "Design",
    "DesignRules",
    "Fitting",
    "Friction",
    "Offtake",
    "Outlet",
    "Piece",
    "PipeOption",
    "QuantityRules",
    "Route",
    "Scenario",
    "SolverSettings",
    "Source",
    "Status",
    "Study",
    "SurgeMethod",
    "SurgeSettings",
]
