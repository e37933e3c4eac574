"""Statuses of a design run, a solver call, a search stage and a sweep step.

One enumeration for every place a status is shown or stored. It is a ``StrEnum``, so a
member compares equal to its string and serialises to it: the JSON strings of the
contract (``optimal``, ``feasible``, ``infeasible``) are unchanged.
"""

from __future__ import annotations

from enum import StrEnum


class Status(StrEnum):
    """Outcome of a run, a solve, a stage or a sweep step."""

    OPTIMAL = "optimal"
    """Proven cheapest within the relative gap asked for."""
    FEASIBLE = "feasible"
    """A verified design in hand, stopped (time limit) before the gap was proven."""
    INFEASIBLE = "infeasible"
    """No design meets every limit (or, for a solver call, the model has no solution)."""
    NO_SOLUTION = "no_solution"
    """A solver call stopped (time or iteration limit) without a solution."""
    FAILED = "failed"
    """A solver call or a sweep step failed."""
    ERROR = "error"
    """An option of a comparison could not be designed (bad input, solver error)."""
    DONE = "done"
    """A search stage that ran without a solver (for example a presolve step)."""
    SKIPPED = "skipped"
    """A search stage left out (too large for the time left)."""

    @property
    def has_design(self) -> bool:
        """True for the statuses that come with a design (or a solver's solution)."""
        return self in (Status.OPTIMAL, Status.FEASIBLE)
