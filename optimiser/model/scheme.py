"""Branched schemes (contract section 7): branches that leave the trunk or another branch.

The trunk is the study's own route, named ``"main"`` (:data:`TRUNK`). Each
:class:`Branch` has its own route (chainage 0 at its junction), its own delivery point,
fittings and offtakes, and hangs below its parent at ``at_chainage_m`` of the parent's
chainage. Together they form a tree with one source.
"""

from __future__ import annotations

from dataclasses import dataclass

from optimiser.model.route import Fitting, Offtake, Route

TRUNK = "main"
"""Name of the trunk: the route of the study file's ``[route]`` table."""


@dataclass(frozen=True)
class Branch:
    """One branch of a scheme, resolved by the loader.

    ``flow_m3_s`` is delivered at its end in every scenario unless the scenario says
    otherwise (:meth:`optimiser.model.Scenario.branch_flow`); ``required_head_m`` is the
    energy that must remain there after ``exit_k`` x V^2/2g of its last pipe;
    ``junction_k`` x V^2/2g of its first pipe is lost at the tee.
    """

    name: str
    parent: str
    at_chainage_m: float
    route: Route
    flow_m3_s: float
    required_head_m: float
    exit_k: float = 1.0
    junction_k: float = 0.0
    min_pressure_m: float = 0.0
    local_k_per_km: float = 0.0
    fittings: tuple[Fitting, ...] = ()
    offtakes: tuple[Offtake, ...] = ()
    profile_label: str = ""
    """Where its profile came from (a file name, or the links of a network file), for
    messages and reports."""
