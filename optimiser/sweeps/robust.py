"""Roughness studies that need the optimiser: the robust design and re-optimised costs.

The *robust design* is one design feasible at every roughness of a range: every scenario
of the study is repeated at each listed roughness (:func:`variants.with_roughness_range`)
and all of them enter one MILP. Its *premium* is its cost less that of the nominal
design (the least-cost design of the study as written, with the catalogue's roughness
and the scenarios' own overrides). With a pump both are life-cycle costs: the robust
design's energy is the mean over the range (:func:`robust_study`), the nominal design's
that at the catalogue's roughness.

Friction loss at a given flow grows with absolute roughness (Colebrook, C.F. (1939),
Turbulent flow in pipes, J. Inst. Civil Eng. 11; laminar loss does not depend on it), so
every pressure and outlet margin falls as roughness grows: the roughest value of the
range binds, and a design that meets it meets every smaller one. The whole list still
enters the programme, so the result does not rest on that argument.

The *re-optimised sweep* is the least cost at each roughness of the range, each solved
on its own (a trade-off over roughness).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import pandas as pd
from rich.console import Console

from optimiser.model import Status, Study
from optimiser.sweeps.runner import run_all
from optimiser.sweeps.tradeoff import (
    ROUGHNESS,
    SolveTask,
    solve_task,
    step_tasks,
    table_columns,
)
from optimiser.sweeps.variants import with_roughness_range

if TYPE_CHECKING:
    from optimiser.milp import DesignOutcome


def robust_study(study: Study, roughness_mm: Sequence[float]) -> Study:
    """The study whose scenarios are every (scenario, roughness) pair of the range.

    With a pump (contract section 9) each pair is a scenario of its own with its own
    station head, and the station must meet every one (its installed power is the largest
    over all of them). A scenario's hours a year are shared equally among its roughness
    values: the energy is priced as the mean over the range, as for a pipe that ages
    evenly through it over its life, not once per value."""
    values = sorted({float(r) for r in roughness_mm})
    return with_roughness_range(study, values, share_hours=study.pump is not None)


@dataclass(frozen=True)
class SolvedDesign:
    """An optimiser run kept whole: its table row and its outcome (None if it failed)."""

    study: Study
    row: dict[str, Any]
    outcome: DesignOutcome | None

    @property
    def cost(self) -> float | None:
        return None if self.outcome is None else self.outcome.total_cost

    @property
    def objective(self) -> float | None:
        """What the run minimised: the life-cycle cost with a pump, else ``cost``."""
        if self.outcome is None or self.study.pump is None:
            return self.cost
        check = self.outcome.check
        return None if check is None else check.life_cycle_cost

    @property
    def failed(self) -> bool:
        return self.outcome is None


@dataclass(frozen=True)
class RoughnessRuns:
    """Everything a roughness study solved: the nominal design, the robust design (if
    asked) and the re-optimised cost at each roughness (if asked)."""

    roughness_mm: list[float]
    nominal: SolvedDesign | None
    robust: SolvedDesign | None
    reoptimised: pd.DataFrame | None

    @property
    def premium(self) -> float | None:
        """Robust less nominal :attr:`SolvedDesign.objective` (None unless both have a
        design)."""
        if self.robust is None or self.nominal is None:
            return None
        if self.robust.objective is None or self.nominal.objective is None:
            return None
        return self.robust.objective - self.nominal.objective

    @property
    def premium_fraction(self) -> float | None:
        premium = self.premium
        if premium is None or self.nominal is None or not self.nominal.objective:
            return None
        return premium / self.nominal.objective

    @property
    def failures(self) -> list[str]:
        """Messages of every solve that failed (the CLI exits 3 on any)."""
        messages = []
        for name, solved in (("nominal design", self.nominal), ("robust design",
                                                                 self.robust)):
            if solved is not None and solved.failed:
                messages.append(f"{name}: {solved.row['note']}")
        if self.reoptimised is not None:
            for row in self.reoptimised[self.reoptimised["status"] == Status.FAILED].itertuples():
                messages.append(f"re-optimised at {row.value:g} mm: {row.note}")
        return messages


def roughness_runs(study: Study, roughness_mm: Sequence[float], *, nominal: bool = True,
                   robust: bool = False, reoptimise: bool = True, workers: int = 1,
                   dask_address: str | None = None, console: Console | None = None,
                   solver_name: str | None = None, time_limit_s: float | None = None,
                   mip_gap: float | None = None) -> RoughnessRuns:
    """Solve, in one batch (so ``workers`` and Dask spread all of it): the nominal design
    (if ``nominal`` or ``robust``), the robust design over ``roughness_mm`` (if
    ``robust``) and the least cost at each roughness (if ``reoptimise``)."""
    values = [float(r) for r in roughness_mm]
    options = {"solver_name": solver_name, "time_limit_s": time_limit_s, "mip_gap": mip_gap}
    tasks: list[SolveTask] = []
    want_nominal = nominal or robust
    if want_nominal:
        tasks.append(SolveTask(study, math.nan, keep_outcome=True, **options))
    robust_variant = robust_study(study, values) if robust else None
    if robust_variant is not None:
        tasks.append(SolveTask(robust_variant, max(values), keep_outcome=True, **options))
    if reoptimise:
        tasks.extend(step_tasks(study, ROUGHNESS, values, **options))
    rows = run_all(solve_task, tasks, workers=workers, dask_address=dask_address,
                   console=console, label="solving over roughness")
    position = 0
    nominal_run = robust_run = None
    if want_nominal:
        row = rows[position]
        nominal_run = SolvedDesign(study, row, row.pop("outcome"))
        position += 1
    if robust_variant is not None:
        row = rows[position]
        robust_run = SolvedDesign(robust_variant, row, row.pop("outcome"))
        position += 1
    table = None
    if reoptimise:
        table = pd.DataFrame(rows[position:], columns=table_columns(study)).rename(
            columns={"value": "roughness_mm"})
    return RoughnessRuns(values, nominal_run, robust_run, table)


def robust_design(study: Study, roughness_mm: Sequence[float], **options: Any
                  ) -> RoughnessRuns:
    """The robust design over ``roughness_mm`` and the nominal design, without the
    re-optimised sweep (``options`` as :func:`roughness_runs`)."""
    return roughness_runs(study, roughness_mm, robust=True, reoptimise=False, **options)
