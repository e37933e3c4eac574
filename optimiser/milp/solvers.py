"""Running a pulp model on HiGHS or CBC and reading back status, objective and bound.

HiGHS is driven through pulp's own HiGHS interface (highspy); the subclass below only
passes the model to HiGHS in bulk (pulp adds it one column and one row at a time, which
dominates the time on large routes), hands HiGHS a starting solution and keeps HiGHS's
information record so the best bound (``mip_dual_bound``) can be reported. CBC runs
through ``PULP_CBC_CMD``; its best bound is read from its log ("Lower bound:"), and when
the log does not give one the caller falls back to a bound it already holds.

Status words: ``optimal`` (proven within the relative gap), ``feasible`` (stopped by the
time limit with a solution in hand), ``infeasible`` (proven), ``no_solution`` (stopped
without a solution) and ``failed`` (the solver broke down).
"""

from __future__ import annotations

import contextlib
import math
import os
import re
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pulp

from optimiser.milp.formulation import Formulation

SOLVERS = ("highs", "cbc")


@dataclass
class SolveReport:
    status: str
    objective: float | None
    bound: float | None
    seconds: float
    solver: str
    message: str = ""

    @property
    def has_solution(self) -> bool:
        return self.status in ("optimal", "feasible")

    @property
    def gap(self) -> float | None:
        return relative_gap(self.objective, self.bound)


def relative_gap(objective: float | None, bound: float | None) -> float | None:
    """(objective - bound) / |objective|, never below 0; None if either is unknown."""
    if objective is None or bound is None or not math.isfinite(bound):
        return None
    if objective == 0:
        return 0.0 if bound >= 0 else math.inf
    return max(0.0, (objective - bound) / abs(objective))


@contextlib.contextmanager
def _quiet_stdout():
    """Silence file descriptor 1 (HiGHS prints a banner from C++ on its first instance,
    which would corrupt JSON written to standard output)."""
    sys.stdout.flush()
    saved = os.dup(1)
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, 1)
        yield
    finally:
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


class _Highs(pulp.HiGHS):
    """pulp's HiGHS interface with bulk model loading, a warm start and the info record."""

    def createAndConfigureSolver(self, lp: pulp.LpProblem) -> None:  # noqa: N802
        with _quiet_stdout():
            super().createAndConfigureSolver(lp)

    def __init__(self, warm_start: dict[str, float] | None = None, offset: float = 0.0,
                 **options) -> None:
        super().__init__(**options)
        self.warm_start = warm_start
        self.offset = offset
        self.model_status = None
        self.info = None
        self.is_mip = False

    def buildSolverModel(self, lp: pulp.LpProblem) -> None:  # noqa: N802 (pulp's name)
        import highspy

        inf = highspy.kHighsInf
        variables = lp.variables()
        count = len(variables)
        cost = np.zeros(count)
        lower = np.empty(count)
        upper = np.empty(count)
        integer: list[int] = []
        for index, var in enumerate(variables):
            var.index = index
            lower[index] = -inf if var.lowBound is None else var.lowBound
            upper[index] = inf if var.upBound is None else var.upBound
            if var.cat == pulp.LpInteger and self.mip:
                integer.append(index)
        for var, coefficient in lp.objective.items():
            cost[var.index] = coefficient
        if lp.sense == pulp.LpMaximize:
            cost = -cost
        # HiGHS measures its gap on the objective including the offset.
        lp.solverModel.changeObjectiveOffset(float(self.offset))
        lp.solverModel.addCols(count, cost, lower, upper, 0, np.zeros(count, dtype=np.int32),
                               np.zeros(0, dtype=np.int32), np.zeros(0))
        if integer:
            lp.solverModel.changeColsIntegrality(
                len(integer), np.array(integer, dtype=np.int32),
                np.full(len(integer), highspy.HighsVarType.kInteger.value, dtype=np.uint8))
        self.is_mip = bool(integer)
        constraints = list(lp._constraints.values())
        starts = np.empty(len(constraints), dtype=np.int32)
        row_lower = np.empty(len(constraints))
        row_upper = np.empty(len(constraints))
        indices: list[int] = []
        values: list[float] = []
        for row, constraint in enumerate(constraints):
            constraint.index = row
            starts[row] = len(indices)
            for var, coefficient in constraint.items():
                if coefficient != 0:
                    indices.append(var.index)
                    values.append(coefficient)
            lb = constraint.getLb()
            ub = constraint.getUb()
            row_lower[row] = -inf if lb is None else lb
            row_upper[row] = inf if ub is None else ub
        lp.solverModel.addRows(len(constraints), row_lower, row_upper, len(indices), starts,
                               np.array(indices, dtype=np.int32), np.array(values))

    def callSolver(self, lp: pulp.LpProblem) -> None:  # noqa: N802 (pulp's name)
        if self.warm_start and self.is_mip:
            known = [(v.index, self.warm_start[v.name]) for v in lp.variables()
                     if v.name in self.warm_start]
            if known:
                lp.solverModel.setSolution(len(known),
                                           np.array([k for k, _ in known], dtype=np.int32),
                                           np.array([value for _, value in known]))
        lp.solverModel.run()
        self.model_status = lp.solverModel.getModelStatus()
        self.info = lp.solverModel.getInfo()


def solve(form: Formulation, solver_name: str, *, time_limit_s: float, mip_gap: float,
          warm_start: dict[str, float] | None = None, msg: bool = False) -> SolveReport:
    """Solve ``form.problem``; values land in the pulp variables."""
    if solver_name not in SOLVERS:
        raise ValueError(f"unknown solver {solver_name!r}; use one of {', '.join(SOLVERS)}")
    time_limit_s = max(float(time_limit_s), 0.5)
    started = time.perf_counter()
    if solver_name == "highs":
        report = _solve_highs(form, time_limit_s, mip_gap, warm_start, msg, started)
    else:
        report = _solve_cbc(form, time_limit_s, mip_gap, warm_start, msg, started)
    if report.objective is not None:
        report.objective = float(report.objective) + form.objective_offset
    if report.bound is not None:
        report.bound = float(report.bound) + form.objective_offset
    return report


def _solve_highs(form: Formulation, time_limit_s: float, mip_gap: float,
                 warm_start: dict[str, float] | None, msg: bool, started: float
                 ) -> SolveReport:
    import highspy

    solver = _Highs(warm_start=warm_start, offset=form.objective_offset, msg=msg,
                    timeLimit=time_limit_s, gapRel=mip_gap, mip_feasibility_tolerance=1e-9)
    try:
        form.problem.solve(solver)
    except pulp.PulpSolverError as error:
        return SolveReport("failed", None, None, time.perf_counter() - started, "highs",
                           str(error))
    seconds = time.perf_counter() - started
    status = solver.model_status
    info = solver.info
    states = highspy.HighsModelStatus
    objective = pulp.value(form.problem.objective)
    has_point = info is not None and info.primal_solution_status == 2  # feasible point
    if status == states.kOptimal:
        bound = (info.mip_dual_bound - form.objective_offset) if solver.is_mip else objective
        return SolveReport("optimal", objective, bound, seconds, "highs")
    if status in (states.kInfeasible, states.kUnboundedOrInfeasible):
        return SolveReport("infeasible", None, None, seconds, "highs")
    if has_point and solver.is_mip:
        bound = info.mip_dual_bound - form.objective_offset
        return SolveReport("feasible", objective, bound if math.isfinite(bound) else None,
                           seconds, "highs", f"stopped: {status.name}")
    if status in (states.kTimeLimit, states.kIterationLimit, states.kInterrupt):
        return SolveReport("no_solution", None, None, seconds, "highs",
                           f"stopped without a solution: {status.name}")
    return SolveReport("failed", None, None, seconds, "highs", f"HiGHS status {status.name}")


_CBC_BOUND = re.compile(r"^Lower bound:\s+(\S+)", re.MULTILINE)
_CBC_PARTIAL = re.compile(r"best possible\s+(-?[0-9.eE+]+)")


def _solve_cbc(form: Formulation, time_limit_s: float, mip_gap: float,
               warm_start: dict[str, float] | None, msg: bool, started: float
               ) -> SolveReport:
    problem = form.problem
    if warm_start:
        for var in problem.variables():
            if var.name in warm_start:
                var.setInitialValue(warm_start[var.name])
    descriptor, log_path = tempfile.mkstemp(prefix="cbc_", suffix=".log")
    os.close(descriptor)
    solver = pulp.PULP_CBC_CMD(msg=False, timeLimit=time_limit_s, gapRel=mip_gap,
                               warmStart=bool(warm_start), logPath=log_path)
    try:
        problem.solve(solver)
        log = Path(log_path).read_text(encoding="utf-8", errors="replace")
    except pulp.PulpSolverError as error:
        return SolveReport("failed", None, None, time.perf_counter() - started, "cbc",
                           str(error))
    finally:
        if os.path.exists(log_path):
            os.unlink(log_path)
    if msg:
        print(log)
    seconds = time.perf_counter() - started
    objective = pulp.value(problem.objective)
    bound = None
    match = _CBC_BOUND.search(log) or _CBC_PARTIAL.search(log)
    if match:
        try:
            bound = float(match.group(1))
        except ValueError:
            bound = None
    has_integers = any(v.cat == pulp.LpInteger for v in problem.variables())
    if problem.sol_status == pulp.LpSolutionOptimal:
        if bound is None and not has_integers:
            bound = objective
        return SolveReport("optimal", objective, bound, seconds, "cbc")
    if problem.sol_status == pulp.LpSolutionIntegerFeasible:
        return SolveReport("feasible", objective, bound, seconds, "cbc", "stopped on time")
    if problem.status == pulp.LpStatusInfeasible:
        return SolveReport("infeasible", None, None, seconds, "cbc")
    if "Stopped" in log or problem.status == pulp.LpStatusNotSolved:
        return SolveReport("no_solution", None, None, seconds, "cbc",
                           "stopped without a solution")
    return SolveReport("failed", None, None, seconds, "cbc", f"CBC status {problem.status}")
