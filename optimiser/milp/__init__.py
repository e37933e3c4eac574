"""The optimiser: the provably cheapest telescoping design of a gravity main, by MILP.

Public API::

    from optimiser.milp import optimise_design, diagnose
    outcome = optimise_design(study)            # DesignOutcome
    outcome.status, outcome.design, outcome.total_cost, outcome.lower_bound, outcome.gap

See :mod:`optimiser.milp.formulation` for what the model holds exactly, what it holds
conservatively, and over which designs the answer is proven cheapest, and
:mod:`optimiser.milp.optimise` for the run, stage by stage (:mod:`optimiser.milp.search`).
"""

from optimiser.milp.class_limits import split_at_class_limits
from optimiser.milp.data import ProblemData, prepare
from optimiser.milp.diagnose import diagnose
from optimiser.milp.extract import rule_problems
from optimiser.milp.optimise import optimise_design
from optimiser.milp.outcome import (
    BindingPoint,
    DesignOutcome,
    SolverError,
    Stage,
    VerificationError,
)
from optimiser.milp.search.kinds import StageKind
from optimiser.milp.solvers import SOLVERS
from optimiser.milp.uniform import UniformDesign, cheapest_uniform
from optimiser.model.status import Status


def diagnose_study(study) -> list[str]:
    """Findings that prove no design of ``study`` exists, found without a solver."""
    return diagnose(prepare(split_at_class_limits(study)))


__all__ = [
    "SOLVERS",
    "BindingPoint",
    "DesignOutcome",
    "ProblemData",
    "SolverError",
    "Stage",
    "StageKind",
    "Status",
    "UniformDesign",
    "VerificationError",
    "cheapest_uniform",
    "diagnose",
    "diagnose_study",
    "optimise_design",
    "prepare",
    "rule_problems",
]
