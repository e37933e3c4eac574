"""Solving a built model on HiGHS or CBC and reading back status, objective and bound.

HiGHS is called through ``highspy`` (its Python interface, the one pulp's own HiGHS
interface uses): the model's arrays go in with one call, a warm start with another, and
HiGHS's information record gives the best bound (``mip_dual_bound``). CBC is the binary
that ships with pulp: the model is written as an MPS file (by HiGHS, from the same
arrays; the objective's constant as a column fixed at 1), a warm start as a CBC solution
file, and CBC's best bound is read from its log (the final "Lower bound:", else the last
"best possible"); at an optimal stop, where the log prints no final bound, the bound is
the one CBC's ``-ratio`` rule proves (objective less the gap times the larger of the
objective and the root node's value). When none is found the caller falls back to a
bound it already holds. CBC does not always stop at its ``-sec`` limit, so it is ended
at 1.25x the limit + 2 s.

Status words: ``optimal`` (proven within the relative gap), ``feasible`` (stopped by the
time limit with a solution in hand), ``infeasible`` (proven), ``no_solution`` (stopped
without a solution) and ``failed`` (the solver broke down).
"""

from __future__ import annotations

import contextlib
import dataclasses
import math
import os
import re
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from optimiser.milp.formulation import Formulation, WarmStart
from optimiser.model.status import Status

SOLVERS = ("highs", "cbc")
LEAST_LIMIT_S = 0.01
"""The least time limit passed to a solver [s] (HiGHS and CBC want a positive one)."""


@dataclass(frozen=True)
class SolveReport:
    """What a solve gave: status, objective and best bound (with the objective's constant
    added), wall time, the solver's name and a message."""

    status: Status
    objective: float | None
    bound: float | None
    seconds: float
    solver: str
    message: str = ""

    @property
    def has_solution(self) -> bool:
        return self.status.has_design

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


def _highs_model(form: Formulation, with_offset: bool = True):
    """A ``highspy.Highs`` instance holding the model (quiet; the objective offset
    included unless ``with_offset`` is false)."""
    import highspy

    model = form.model
    matrix = model.csr()
    inf = highspy.kHighsInf
    lp = highspy.HighsLp()
    lp.num_col_ = model.n_columns
    lp.num_row_ = model.n_rows
    lp.col_cost_ = np.asarray(model.cost, dtype=float)
    lp.col_lower_ = np.clip(np.asarray(model.lower, dtype=float), -inf, inf)
    lp.col_upper_ = np.clip(np.asarray(model.upper, dtype=float), -inf, inf)
    lp.row_lower_ = np.clip(np.asarray(model.row_lower, dtype=float), -inf, inf)
    lp.row_upper_ = np.clip(np.asarray(model.row_upper, dtype=float), -inf, inf)
    # HiGHS measures its gap on the objective including the offset.
    lp.offset_ = float(form.objective_offset) if with_offset else 0.0
    lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
    lp.a_matrix_.num_col_ = model.n_columns
    lp.a_matrix_.num_row_ = model.n_rows
    lp.a_matrix_.start_ = matrix.indptr.astype(np.int32)
    lp.a_matrix_.index_ = matrix.indices.astype(np.int32)
    lp.a_matrix_.value_ = matrix.data.astype(float)
    integer = np.asarray(model.integer, dtype=bool)
    if integer.any():
        kinds = highspy.HighsVarType
        lp.integrality_ = [kinds.kInteger if flag else kinds.kContinuous for flag in integer]
    with _quiet_stdout():
        highs = highspy.Highs()
    highs.setOptionValue("output_flag", False)
    status = highs.passModel(lp)
    if status == highspy.HighsStatus.kError:
        raise RuntimeError("HiGHS rejected the model")
    return highs, bool(integer.any())


def solve(form: Formulation, solver_name: str, *, time_limit_s: float, mip_gap: float,
          warm_start: WarmStart | None = None, msg: bool = False) -> SolveReport:
    """Solve ``form``; the column values land in ``form.values``."""
    if solver_name not in SOLVERS:
        raise ValueError(f"unknown solver {solver_name!r}; use one of {', '.join(SOLVERS)}")
    # The caller's limit stands (it is the time its run has left); only a limit the
    # solvers would refuse is raised, to a moment.
    time_limit_s = max(float(time_limit_s), LEAST_LIMIT_S)
    started = time.perf_counter()
    form.values = None
    form.row_duals = None
    form.column_duals = None
    if solver_name == "highs":
        report = _solve_highs(form, time_limit_s, mip_gap, warm_start, msg, started)
    else:
        report = _solve_cbc(form, time_limit_s, mip_gap, warm_start, msg, started)
    offset = form.objective_offset
    return dataclasses.replace(
        report,
        objective=None if report.objective is None else float(report.objective) + offset,
        bound=None if report.bound is None else float(report.bound) + offset)


def _solve_highs(form: Formulation, time_limit_s: float, mip_gap: float,
                 warm_start: WarmStart | None, msg: bool, started: float) -> SolveReport:
    import highspy

    try:
        highs, is_mip = _highs_model(form)
    except RuntimeError as error:
        return SolveReport(Status.FAILED, None, None, time.perf_counter() - started, "highs",
                           str(error))
    highs.setOptionValue("output_flag", bool(msg))
    highs.setOptionValue("time_limit", float(time_limit_s))
    highs.setOptionValue("mip_rel_gap", float(mip_gap))
    highs.setOptionValue("mip_feasibility_tolerance", 1e-9)
    if warm_start and is_mip:
        columns, values = form.warm_columns(warm_start)
        if len(columns):
            highs.setSolution(len(columns), columns, values)
    highs.run()
    seconds = time.perf_counter() - started
    status = highs.getModelStatus()
    info = highs.getInfo()
    states = highspy.HighsModelStatus
    has_point = info.primal_solution_status == 2  # a feasible point
    objective = None
    if has_point:
        solution = highs.getSolution()
        form.values = np.asarray(solution.col_value, dtype=float)
        if not is_mip and solution.dual_valid:
            form.row_duals = np.asarray(solution.row_dual, dtype=float)
            form.column_duals = np.asarray(solution.col_dual, dtype=float)
        objective = float(info.objective_function_value) - form.objective_offset
    if status == states.kOptimal:
        bound = (info.mip_dual_bound - form.objective_offset) if is_mip else objective
        return SolveReport(Status.OPTIMAL, objective, bound, seconds, "highs")
    if status in (states.kInfeasible, states.kUnboundedOrInfeasible):
        return SolveReport(Status.INFEASIBLE, None, None, seconds, "highs")
    if has_point and is_mip:
        bound = info.mip_dual_bound - form.objective_offset
        return SolveReport(Status.FEASIBLE, objective, bound if math.isfinite(bound) else None,
                           seconds, "highs", f"stopped: {status.name}")
    form.values = None
    if status in (states.kTimeLimit, states.kIterationLimit, states.kInterrupt):
        bound = info.mip_dual_bound - form.objective_offset if is_mip else None
        return SolveReport(Status.NO_SOLUTION, None,
                           bound if bound is not None and math.isfinite(bound) else None,
                           seconds, "highs", f"stopped without a solution: {status.name}")
    return SolveReport(Status.FAILED, None, None, seconds, "highs", f"HiGHS status {status.name}")


CBC_HARD_STOP = 1.25
CBC_GRACE_S = 2.0
"""CBC is stopped after CBC_HARD_STOP x its time limit + CBC_GRACE_S seconds."""

_CBC_BOUND = re.compile(r"^Lower bound:\s+(\S+)", re.MULTILINE)
_CBC_PARTIAL = re.compile(r"best possible\s+(-?[0-9.eE+]+)")
_CBC_ROOT = re.compile(r"Cuts at root node changed objective from \S+ to (\S+)")
_CBC_CONTINUOUS = re.compile(r"Continuous objective value is (\S+)")


def _number(text: str) -> float | None:
    try:
        value = float(text)
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def _cbc_bound(log: str) -> float | None:
    """CBC's best bound from its log: the final "Lower bound:" line, else the last
    progress line's "best possible" (the first one is only the root's)."""
    match = _CBC_BOUND.search(log)
    if match:
        return _number(match.group(1))
    partials = _CBC_PARTIAL.findall(log)
    return _number(partials[-1]) if partials else None


def _cbc_root(log: str) -> float | None:
    """The root node's objective in CBC's log (after cuts, else the continuous one)."""
    match = _CBC_ROOT.search(log) or _CBC_CONTINUOUS.search(log)
    return _number(match.group(1)) if match else None


def cbc_path() -> str:
    """The CBC binary that ships with pulp."""
    from pulp.apis import coin_api

    return coin_api.pulp_cbc_path


def _solve_cbc(form: Formulation, time_limit_s: float, mip_gap: float,
               warm_start: WarmStart | None, msg: bool, started: float) -> SolveReport:
    try:
        highs, is_mip = _highs_model(form, with_offset=False)
    except RuntimeError as error:
        return SolveReport(Status.FAILED, None, None, time.perf_counter() - started, "cbc",
                           str(error))
    offset = float(form.objective_offset)
    if offset:
        # The objective offset as a column fixed at 1 (MPS readers disagree on the sign
        # of an objective constant): CBC then measures its gap on the whole objective.
        highs.addCol(offset, 1.0, 1.0, 0, np.array([], dtype=np.int32), np.array([]))
    with tempfile.TemporaryDirectory(prefix="cbc_") as folder:
        mps = Path(folder) / "model.mps"
        solution = Path(folder) / "solution.txt"
        with _quiet_stdout():
            highs.writeModel(str(mps))
        command = [cbc_path(), str(mps), "-sec", f"{time_limit_s:g}",
                   "-ratio", f"{mip_gap:g}", "-timeMode", "elapsed"]
        if warm_start and is_mip:
            command += _cbc_start(form, warm_start, Path(folder) / "start.txt")
        command += ["-solve" if is_mip else "-initialSolve", "-solution", str(solution)]
        ran = _run_cbc(command, time_limit_s, started)
        if isinstance(ran, SolveReport):
            return ran
        log = ran.stdout + ran.stderr
        if msg:
            print(log)
        seconds = time.perf_counter() - started
        if ran.returncode != 0 or not solution.exists():
            return SolveReport(Status.FAILED, None, None, seconds, "cbc",
                               f"CBC exited with code {ran.returncode}")
        text = solution.read_text(encoding="utf-8", errors="replace").splitlines()
    return _cbc_report(form, text, log, is_mip, mip_gap, seconds)


def _cbc_start(form: Formulation, warm_start: WarmStart, start: Path) -> list[str]:
    """Write a warm start as a CBC solution file; the options that read it."""
    columns, values = form.warm_columns(warm_start)
    if not len(columns):
        return []
    lines = ["Stopped on time - objective value 0\n"]
    lines += [f"{c:>7} c{c} {v:>15.10g} {0:>23}\n"
              for c, v in zip(columns.tolist(), values.tolist(), strict=True)]
    start.write_text("".join(lines), encoding="utf-8")
    return ["-mips", str(start)]


def _run_cbc(command: list[str], time_limit_s: float, started: float
             ) -> subprocess.CompletedProcess | SolveReport:
    """Run CBC; a report if it could not be started or ran past its hard stop."""
    try:
        # CBC checks its -sec limit only between some of its steps (preprocessing and
        # root cuts can run far past it): a hard stop keeps the run near its limit.
        return subprocess.run(command, capture_output=True, text=True, check=False,
                              stdin=subprocess.DEVNULL,
                              timeout=CBC_HARD_STOP * time_limit_s + CBC_GRACE_S)
    except subprocess.TimeoutExpired:
        return SolveReport(Status.NO_SOLUTION, None, None, time.perf_counter() - started,
                           "cbc", "CBC ran past its time limit and was stopped")
    except OSError as error:
        return SolveReport(Status.FAILED, None, None, time.perf_counter() - started, "cbc",
                           f"CBC could not be started: {error}")


def _cbc_values(text: list[str], n_columns: int) -> np.ndarray:
    """Column values from the lines of CBC's solution file (after its status line)."""
    values = np.zeros(n_columns)
    for line in text[1:]:
        parts = line.split()
        if len(parts) >= 3 and parts[1].startswith("c") and parts[1][1:].isdigit() \
                and int(parts[1][1:]) < n_columns:
            values[int(parts[1][1:])] = float(parts[2])
    return values


def _cbc_proven_bound(log: str, objective: float, bound: float | None, mip_gap: float
                      ) -> float:
    """The bound of an integer programme CBC stopped by -ratio.

    The gap to the best possible is below that fraction of "the larger of two" (best
    known, best possible), or "of the objective value at the root node" (CBC 2.10.3's own
    help for ratioGap gives both); the larger of the objective and the root value covers
    either reading. The log prints no final bound then.
    """
    root = _cbc_root(log)
    scale = max(abs(objective), abs(root) if root is not None else 0.0)
    proven = objective - mip_gap * scale
    return proven if bound is None else max(bound, proven)


def _cbc_report(form: Formulation, text: list[str], log: str, is_mip: bool,
                mip_gap: float, seconds: float) -> SolveReport:
    """Status, objective and bound from CBC's solution file and log (without the
    objective's offset: solve() adds it to objective and bound)."""
    first = text[0] if text else ""
    values = _cbc_values(text, form.model.n_columns)
    objective_match = re.search(r"objective value\s+(\S+)", first)
    objective = float(objective_match.group(1)) if objective_match else None
    bound = _cbc_bound(log)
    word = first.split()[0] if first.split() else ""
    if word == "Optimal" and objective is not None:
        bound = _cbc_proven_bound(log, objective, bound, mip_gap) if is_mip else objective
    offset = float(form.objective_offset)
    if objective is not None:
        objective -= offset
    if bound is not None:
        bound -= offset
    if word == "Optimal":
        form.values = values
        return SolveReport(Status.OPTIMAL, objective, bound, seconds, "cbc")
    if word == "Infeasible" or first.startswith("Integer infeasible"):
        return SolveReport(Status.INFEASIBLE, None, None, seconds, "cbc")
    if word == "Stopped" and objective_match and "no integer" not in first.lower():
        form.values = values
        return SolveReport(Status.FEASIBLE, objective, bound, seconds, "cbc", first.strip())
    if word == "Stopped":
        return SolveReport(Status.NO_SOLUTION, None, None, seconds, "cbc",
                           "stopped without a solution")
    return SolveReport(Status.FAILED, None, None, seconds, "cbc", f"CBC: {first.strip()}")
