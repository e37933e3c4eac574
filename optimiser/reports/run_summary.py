"""The optimiser's figures shown in a design report, read from the outcome itself or from
a ``result.json`` the engineer gives to ``report --result``."""

from __future__ import annotations

import math
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
        """From the JSON ``design`` writes (contract section 5); missing figures are None.

        Raises ValueError naming the first key whose value ``design`` could not have
        written (a status it does not give, a figure that is not a number or null), so a
        hand-edited or foreign file is refused rather than printed as nonsense.
        """
        status = data.get("status")
        if status not in _RUN_STATUSES:
            raise ValueError(f"key status: {status!r} is not a status of `optimiser design` "
                             f"({', '.join(sorted(_RUN_STATUSES))})")
        figures = {key: _figure(data, key) for key in _FIGURES}
        solver = data.get("solver")
        if solver is not None and not isinstance(solver, str):
            raise ValueError(f"key solver: expected a name or null, got {solver!r}")
        label, cost = _uniform(data.get("uniform"))
        return cls(str(status), figures["gap"], figures["lower_bound"], figures["lp_bound"],
                   solver, figures["solve_time_s"], label, cost)


_RUN_STATUSES = {"optimal", "feasible", "infeasible"}
"""The statuses ``design`` writes in ``result.json`` (contract section 5)."""
_FIGURES = ("gap", "lower_bound", "lp_bound", "solve_time_s")


def _figure(data: dict[str, Any], key: str) -> float | None:
    """A number of the result (JSON null, or missing: None; ``design`` writes nan and
    inf as null, so a non-finite value is refused too)."""
    value = data.get(key)
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float) \
            or not math.isfinite(value):
        raise ValueError(f"key {key}: expected a number or null, got {value!r}")
    return float(value)


def _uniform(uniform: Any) -> tuple[str | None, float | None]:
    """Label and cost of the result's cheapest uniform design (None when absent)."""
    if uniform is None:
        return None, None
    if not isinstance(uniform, dict):
        raise ValueError(f"key uniform: expected an object or null, got {uniform!r}")
    cost = _figure(uniform, "cost")
    if cost is None:
        return None, None
    label = uniform.get("label")
    if label is None:
        dn = _figure(uniform, "dn_mm")
        label = (f"{uniform.get('material', '')} DN{0.0 if dn is None else dn:g} "
                 f"{uniform.get('pressure_class', '')}")
    return str(label), cost
