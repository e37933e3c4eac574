"""What a design run gives back: :class:`DesignOutcome`, its stage records, its errors.

One frozen record that the reports, the JSON and the command line read. ``status`` is a
:class:`~optimiser.model.status.Status` (a string enumeration: ``optimal``, ``feasible``,
``infeasible``, so the JSON is unchanged).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from optimiser.analysis import CheckResult
from optimiser.milp.extract import rule_problems
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.uniform import UniformDesign
from optimiser.model import Design
from optimiser.model.status import Status


class SolverError(RuntimeError):
    """The solver failed, or stopped without a design (exit code 3)."""


class VerificationError(RuntimeError):
    """A design from the integer programme failed the check or the rules: a bug."""


@dataclass(frozen=True)
class BindingPoint:
    """Least pressure margin of a scenario, and its outlet margin."""

    scenario: str
    chainage_m: float
    label: str
    pressure_m: float
    min_pressure_m: float
    margin_m: float
    outlet_margin_m: float


def binding_points(check: CheckResult) -> list[BindingPoint]:
    """The least pressure margin and the outlet margin of every scenario of ``check``."""
    points = []
    for scenario in check.scenarios:
        least = scenario.least_pressure_margin
        points.append(BindingPoint(
            scenario.name, float(least["chainage_m"]), str(least["label"]),
            float(least["pressure_m"]), float(least["min_pressure_m"]),
            float(least["pressure_m"] - least["min_pressure_m"]),
            float(scenario.outlet_margin_m)))
    return points


@dataclass(frozen=True)
class Stage:
    """One step of the search, for the record.

    ``kind`` says what the step was (an enumeration of
    :mod:`optimiser.milp.search.kinds`, never compared by its text); ``name`` is the
    text shown to the user and written to the JSON.
    """

    kind: StageKind
    name: str
    status: Status
    objective: float | None
    bound: float | None
    seconds: float
    variables: int
    constraints: int
    binaries: int
    message: str = ""
    build_seconds: float = 0.0

    def as_dict(self) -> dict:
        """The record as written to the JSON (the kind is not written)."""
        values = dict(self.__dict__)
        del values["kind"]
        return values


@dataclass(frozen=True)
class DesignOutcome:
    """The result of :func:`optimiser.milp.optimise_design`."""

    status: Status
    """``optimal`` (proven within the gap), ``feasible`` (stopped by the time limit with a
    design) or ``infeasible``."""
    design: Design | None
    check: CheckResult | None
    total_cost: float | None
    lower_bound: float | None
    gap: float | None
    lp_bound: float | None
    solve_time_s: float
    solver_name: str
    mip_gap: float
    time_limit_s: float
    diagnosis: list[str] = field(default_factory=list)
    uniform: UniformDesign | None = None
    binding: list[BindingPoint] = field(default_factory=list)
    stages: list[Stage] = field(default_factory=list)
    rules_on: bool = False
    no_new_tank_cost: float | None = None
    """With ``[break_pressure_tanks] cost``: the cost of the best design without new
    tanks (None: none found, or new tanks not allowed)."""
    no_new_tank_status: Status | None = None

    @property
    def verified(self) -> bool:
        return self.check is not None and self.check.ok and self.design is not None \
            and not rule_problems(self.check.study, self.design)

    @property
    def uniform_saving(self) -> float | None:
        if self.uniform is None or self.total_cost is None:
            return None
        return self.uniform.cost - self.total_cost
