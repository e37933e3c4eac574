"""Break-pressure tanks (contract section 8): open tanks that restart the energy line and
the static line at their water level."""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

from optimiser.model.scheme import TRUNK


@dataclass(frozen=True)
class BreakPressureTank:
    """A tank on ``branch`` at ``chainage_m`` with its water level [m].

    ``new`` is True for a tank the design adds (it costs ``TankRules.cost``), False for
    one the study always has (``[[break_pressure_tank]]``)."""

    chainage_m: float
    water_level_m: float
    branch: str = TRUNK
    label: str = ""
    new: bool = False


class TankSites(StrEnum):
    EVERY_POINT = "every point"
    MARKED = "marked"


@dataclass(frozen=True)
class TankRules:
    """``[break_pressure_tanks]``: losses of every tank, and what ``design`` may add.

    ``cost`` None: the study lets ``design`` add no tank (the losses still apply to the
    study's own tanks)."""

    cost: float | None = None
    sites: TankSites = TankSites.EVERY_POINT
    height_m: float = 1.0
    inlet_k: float = 1.0
    outlet_k: float = 0.5
    max_count: int | None = None
    marked_chainages_m: tuple[float, ...] = ()
    """Chainages of the profile rows whose ``tank_site`` column is yes/true/1 (used with
    ``sites = "marked"``)."""
    marked_on_branches: tuple[tuple[str, float], ...] = ()
    """In a scheme with ``sites = "marked"``: (branch, chainage) of the rows marked in
    the branches' own profiles (the trunk's are ``marked_chainages_m``)."""
