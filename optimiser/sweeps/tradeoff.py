"""Trade-off curves: the least cost re-optimised at each value of one quantity.

Each step is a variant of the study (:mod:`optimiser.sweeps.variants`) solved by
:func:`optimiser.milp.optimise_design`. Steps are independent tasks, run serially, on
local processes or on a Dask cluster by :func:`optimiser.sweeps.runner.run_all`; each
task is a module-level function of plain data returning plain data, so the table is the
same whichever way it ran. A step without a feasible design stays in the table with
status ``infeasible`` and the first line of the diagnosis; a step where the solver fails
has status ``failed`` and the solver's message.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
from rich.console import Console

from optimiser.milp import DesignOutcome, SolverError, VerificationError, optimise_design
from optimiser.model import Status, Study
from optimiser.sweeps.pump_variants import LIFE_CYCLE_COLUMNS, life_cycle_row
from optimiser.sweeps.runner import run_all
from optimiser.sweeps.variants import (
    known_variable,
    study_value,
    variable_names,
    vary,
    with_roughness,
)

ROUGHNESS = "roughness"
"""The variable of a re-optimised roughness sweep (every option's roughness, mm)."""

COLUMNS = ["value", "status", "cost", "lower_bound", "gap", "lp_bound", "n_pieces",
           "pieces", "binding_scenario", "binding_what", "binding_chainage_m",
           "binding_margin_m", "verified", "note", "target_gap", "time_limit_s",
           "new_tanks"]
"""Columns of a sweep table, in order. ``value`` is in SI units (m, m^3/s or mm);
``target_gap`` and ``time_limit_s`` are the settings the step was solved with."""


@dataclass(frozen=True)
class SolveTask:
    """One solve of a sweep: the study variant to solve, the swept value it stands for,
    and the solver options. ``keep_outcome`` returns the whole outcome as well (for the
    nominal and robust designs, whose files are written)."""

    study: Study
    value: float
    solver_name: str | None = None
    time_limit_s: float | None = None
    mip_gap: float | None = None
    keep_outcome: bool = False


def table_columns(study: Study) -> list[str]:
    """:data:`COLUMNS`, and the life-cycle columns for a pumped study."""
    return COLUMNS + LIFE_CYCLE_COLUMNS if study.pump is not None else COLUMNS


def variant(study: Study, variable: str, value: float) -> Study:
    """The study with ``variable`` (one of VARIABLES, or ``roughness``) set to ``value``."""
    if variable == ROUGHNESS:
        return with_roughness(study, value)
    return vary(study, variable, value)


def _length_text(length_m: float) -> str:
    return f"{length_m / 1000:.1f} km" if length_m >= 1000.0 else f"{length_m:.0f} m"


def pieces_summary(outcome: DesignOutcome) -> tuple[int, str]:
    """Number of pieces and a one-line schedule, adjacent runs of one option joined:
    ``"DN300 DI PN16 ×7.6 km; DN250 PE PN10 ×420 m"`` (pipe length). On a scheme each
    branch's runs follow its name: ``"main: DN300 ...; east: DN160 ..."``."""
    if outcome.check is None:
        return 0, ""
    scheme = outcome.check.study.is_scheme
    runs: list[list[Any]] = []
    for row in outcome.check.pieces.itertuples():
        key = (row.branch if scheme else "", row.material, float(row.dn_mm),
               row.pressure_class)
        if runs and runs[-1][0] == key:
            runs[-1][1] += float(row.length_m)
        else:
            runs.append([key, float(row.length_m)])
    parts = []
    for index, ((branch, material, dn, pressure_class), length) in enumerate(runs):
        first = index == 0 or runs[index - 1][0][0] != branch
        parts.append(f"{branch + ': ' if branch and first else ''}DN{dn:g} {material} "
                     f"{pressure_class} ×{_length_text(length)}")
    return len(runs), "; ".join(parts)


def binding_point(outcome: DesignOutcome) -> dict[str, Any]:
    """The limiting point of the design over all scenarios (its tightest limit): a
    minimum pressure at a chainage, or the outlet head at the route's end. On a scheme
    every delivery point counts (contract section 7; a pump's head is often set by a
    branch's) and the line is named: ``pressure on NAME``, ``outlet head of NAME``
    (chainage along that line)."""
    empty = {"binding_scenario": None, "binding_what": None, "binding_chainage_m": None,
             "binding_margin_m": None}
    if not outcome.binding or outcome.check is None:
        return empty
    check = outcome.check
    scheme = check.study.is_scheme
    end_m = check.study.route.total_chainage_m
    candidates: list[tuple[str, str, float, float]] = []
    for point in outcome.binding:
        candidates.append((point.scenario, f"pressure on {point.branch}" if scheme
                           else "pressure", point.chainage_m, point.margin_m))
        if not scheme:
            candidates.append((point.scenario, "outlet head", end_m, point.outlet_margin_m))
    if scheme:
        candidates += [(scenario.name, f"outlet head of {outlet.branch}", outlet.chainage_m,
                        outlet.margin_m)
                       for scenario in check.scenarios for outlet in scenario.outlets]
    best: dict[str, Any] | None = None
    for scenario, what, chainage_m, margin_m in candidates:
        if best is None or margin_m < best["binding_margin_m"]:
            best = {"binding_scenario": scenario, "binding_what": what,
                    "binding_chainage_m": float(chainage_m),
                    "binding_margin_m": float(margin_m)}
    return best or empty


def outcome_row(value: float, outcome: DesignOutcome) -> dict[str, Any]:
    """One table row (plain Python values) from an optimiser outcome."""
    n_pieces, summary = pieces_summary(outcome)
    note = ""
    if outcome.status == Status.INFEASIBLE and outcome.diagnosis:
        note = outcome.diagnosis[0]
    elif outcome.status == Status.FEASIBLE:
        note = time_limit_note(outcome.time_limit_s, outcome.gap, outcome.mip_gap)
    return {"value": float(value), "status": outcome.status, "cost": outcome.total_cost,
            "lower_bound": outcome.lower_bound, "gap": outcome.gap,
            "lp_bound": outcome.lp_bound, "n_pieces": n_pieces, "pieces": summary,
            **binding_point(outcome), "verified": bool(outcome.verified), "note": note,
            "target_gap": outcome.mip_gap, "time_limit_s": outcome.time_limit_s,
            "new_tanks": (None if outcome.design is None
                          else sum(1 for t in outcome.design.tanks if t.new)),
            **life_cycle_row(outcome.check)}


def time_limit_note(time_limit_s: float, gap: float | None, target_gap: float) -> str:
    """What a step with status ``feasible`` means: stopped at its time limit before its
    gap reached the target, so its cost may be above the least cost by up to its gap."""
    reached = "no bound" if gap is None else f"gap {100 * gap:.2f} %"
    return (f"stopped at the time limit ({time_limit_s:g} s) with {reached}, above the "
            f"target {100 * target_gap:.2f} %")


def failed_row(value: float, message: str) -> dict[str, Any]:
    row: dict[str, Any] = dict.fromkeys(COLUMNS)
    row.update({"value": float(value), "status": Status.FAILED, "n_pieces": 0, "pieces": "",
                "verified": False, "note": message})
    return row


def _failed_task_row(task: SolveTask, message: str) -> dict[str, Any]:
    """The row of a step whose solve failed, with the settings it was given."""
    row = failed_row(task.value, message)
    study = task.study.solver
    row["target_gap"] = study.mip_gap if task.mip_gap is None else task.mip_gap
    row["time_limit_s"] = study.time_limit_s if task.time_limit_s is None \
        else task.time_limit_s
    return row


def solve_task(task: SolveTask) -> dict[str, Any]:
    """Solve one step; a table row back (plain data: picklable, no solver objects), with
    the outcome under ``"outcome"`` when the task asks to keep it."""
    try:
        outcome = optimise_design(task.study, solver_name=task.solver_name,
                                  time_limit_s=task.time_limit_s, mip_gap=task.mip_gap)
    except (SolverError, VerificationError) as error:
        # One step's failure must not lose the others; the caller reports it (exit 3).
        row = _failed_task_row(task, f"{type(error).__name__}: {error}")
        outcome = None
    else:
        row = outcome_row(task.value, outcome)
    if task.keep_outcome:
        row["outcome"] = outcome
    return row


def step_tasks(study: Study, variable: str, values: Sequence[float], *,
               solver_name: str | None = None, time_limit_s: float | None = None,
               mip_gap: float | None = None) -> list[SolveTask]:
    """One task per value: the study's variant at that value."""
    if not known_variable(variable) and variable != ROUGHNESS:
        raise ValueError(f"cannot vary {variable!r}; choose one of "
                         f"{variable_names()}, {ROUGHNESS}")
    return [SolveTask(variant(study, variable, float(v)), float(v), solver_name,
                      time_limit_s, mip_gap) for v in values]


def sweep(study: Study, variable: str, values: Sequence[float], *, workers: int = 1,
          dask_address: str | None = None, console: Console | None = None,
          solver_name: str | None = None, time_limit_s: float | None = None,
          mip_gap: float | None = None, label: str | None = None) -> pd.DataFrame:
    """Re-optimise ``study`` at each value of ``variable``; one row per value, in order."""
    tasks = step_tasks(study, variable, values, solver_name=solver_name,
                       time_limit_s=time_limit_s, mip_gap=mip_gap)
    rows = run_all(solve_task, tasks, workers=workers, dask_address=dask_address,
                   console=console, label=label or f"re-optimising over {variable}")
    return pd.DataFrame(rows, columns=table_columns(study))


def tradeoff(study: Study, variable: str, values: Sequence[float], *, workers: int = 1,
             dask_address: str | None = None, console: Console | None = None,
             solver_name: str | None = None, time_limit_s: float | None = None,
             mip_gap: float | None = None) -> pd.DataFrame:
    """Least cost of ``study`` at each value of ``variable`` (``source-level`` or
    ``required-head`` in m, ``flow`` in m^3/s): a table with :data:`COLUMNS`.

    More available head (a higher source, a lower required head) can only enlarge the
    set of feasible designs, so the least cost is non-increasing in it; the table shows
    that up to the solver's relative gap.
    """
    if not known_variable(variable):
        raise ValueError(f"cannot vary {variable!r}; choose one of {variable_names()}")
    return sweep(study, variable, values, workers=workers, dask_address=dask_address,
                 console=console, solver_name=solver_name, time_limit_s=time_limit_s,
                 mip_gap=mip_gap, label=f"trade-off over {variable}")


@dataclass(frozen=True)
class TradeoffResult:
    """A trade-off table and the study's own point on it (value and its row)."""

    variable: str
    table: pd.DataFrame
    own_value: float
    own_row: dict[str, Any]

    @property
    def failed(self) -> pd.DataFrame:
        return self.table[self.table["status"] == Status.FAILED]

    @property
    def infeasible(self) -> pd.DataFrame:
        return self.table[self.table["status"] == Status.INFEASIBLE]


def tradeoff_with_study_point(study: Study, variable: str, values: Sequence[float], *,
                              workers: int = 1, dask_address: str | None = None,
                              console: Console | None = None,
                              solver_name: str | None = None,
                              time_limit_s: float | None = None,
                              mip_gap: float | None = None) -> TradeoffResult:
    """:func:`tradeoff`, plus the study's own point, solved as ``design`` solves it.

    The steps take ``time_limit_s`` and ``mip_gap`` (a curve rarely needs the study's
    tight gap), but the study's own point is the design the engineer gets from
    ``design STUDY [--solver S]``: the study itself at its own ``[solver]`` gap and time
    limit, in the same batch. A step at the study's value is reused for it only when the
    steps run at the study's own settings (no ``time_limit_s`` or ``mip_gap`` given).
    """
    if not known_variable(variable):
        raise ValueError(f"cannot vary {variable!r}; choose one of {variable_names()}")
    own = float(study_value(study, variable))
    steps = [float(v) for v in values]
    matches = [i for i, v in enumerate(steps) if math.isclose(v, own, rel_tol=1e-12,
                                                               abs_tol=1e-12)]
    tasks = step_tasks(study, variable, steps, solver_name=solver_name,
                       time_limit_s=time_limit_s, mip_gap=mip_gap)
    reuse = bool(matches) and time_limit_s is None and mip_gap is None
    if not reuse:
        # The study itself, not a variant, at its own settings: the point the engineer
        # already has from `design`.
        tasks.append(SolveTask(study, own, solver_name))
    rows = run_all(solve_task, tasks, workers=workers, dask_address=dask_address,
                   console=console, label=f"trade-off over {variable}")
    table = pd.DataFrame(rows[:len(steps)], columns=table_columns(study))
    own_row = rows[matches[0]] if reuse else rows[-1]
    return TradeoffResult(variable, table, own, own_row)
