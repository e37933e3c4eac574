"""Typed model of a study: route, catalogue, scenarios, rules and designs (no I/O)."""

from optimiser.model.catalogue import Catalogue, PipeOption
from optimiser.model.design import Design, Piece
from optimiser.model.pump import PumpStation
from optimiser.model.route import Fitting, Offtake, Route
from optimiser.model.scenario import Scenario
from optimiser.model.scheme import TRUNK, Branch
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
from optimiser.model.tanks import BreakPressureTank, TankRules, TankSites

__all__ = [
    "TRUNK",
    "Branch",
    "BreakPressureTank",
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
    "PumpStation",
    "QuantityRules",
    "Route",
    "Scenario",
    "SolverSettings",
    "Source",
    "Status",
    "Study",
    "SurgeMethod",
    "SurgeSettings",
    "TankRules",
    "TankSites",
]
