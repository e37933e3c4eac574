"""The optimiser's figures shown in a design report, read from the outcome itself or from
a ``result.json`` the engineer gives to ``report --result``."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from optimiser.milp import DesignOutcome


@dataclass(frozen=True)
class RunSummary:
    """Status, bounds, gap, solver and the cheapest uniform design of one design run."""

    status: str
    gap: float | None
    lower_bound: float | None
    lp_bound: float | None
    solver: str | None
    solve_time_s: float | None
    uniform_label: str | None = None
    uniform_cost: float | None = None

    @classmethod
    def from_outcome(cls, outcome: DesignOutcome) -> RunSummary:
        uniform = outcome.uniform
        return cls(str(outcome.status), outcome.gap, outcome.lower_bound, outcome.lp_bound,
                   outcome.solver_name, outcome.solve_time_s,
                   None if uniform is None else uniform.option.label,
                   None if uniform is None else uniform.cost)

    @classmethod
    def from_result_dict(cls, data: dict[str, Any]) -> RunSummary:
        """From the JSON ``design`` writes (contract section 6); missing figures are None."""
        uniform = data.get("uniform")
        label = cost = None
        if isinstance(uniform, dict) and "cost" in uniform:
            label = uniform.get("label") or (f"{uniform.get('material', '')} "
                                             f"DN{uniform.get('dn_mm', 0):g} "
                                             f"{uniform.get('pressure_class', '')}")
            cost = uniform["cost"]
        return cls(str(data.get("status")), data.get("gap"), data.get("lower_bound"),
                   data.get("lp_bound"), data.get("solver"), data.get("solve_time_s"),
                   label, cost)
