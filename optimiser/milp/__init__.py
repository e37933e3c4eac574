"""The optimiser: the provably cheapest telescoping design of a gravity main, by MILP.

Public API::

    from optimiser.milp import optimise_design, diagnose
    outcome = optimise_design(study)            # DesignOutcome
    outcome.status, outcome.design, outcome.total_cost, outcome.lower_bound, outcome.gap

See :mod:`optimiser.milp.formulation` for what the model holds exactly, what it holds
conservatively, and over which designs the answer is proven cheapest.
"""

from optimiser.milp.data import ProblemData, prepare
from optimiser.milp.diagnose import diagnose
from optimiser.milp.extract import rule_problems
from optimiser.milp.optimise import (
    BindingPoint,
    DesignOutcome,
    SolverError,
    Stage,
    VerificationError,
    optimise_design,
)
from optimiser.milp.uniform import UniformDesign, cheapest_uniform


def diagnose_study(study) -> list[str]:
    """Findings that prove no design of ``study`` exists, found without a solver."""
    return diagnose(prepare(study))


__all__ = [
    "BindingPoint",
    "DesignOutcome",
    "ProblemData",
    "SolverError",
    "Stage",
    "UniformDesign",
    "VerificationError",
    "cheapest_uniform",
    "diagnose",
    "diagnose_study",
    "optimise_design",
    "prepare",
    "rule_problems",
]
