"""The ``sensitivity`` study as a whole: a fixed design across a roughness range, the
re-optimised and robust designs, and a Monte Carlo of roughness and ageing.

:func:`sensitivity_study` computes everything; :class:`SensitivityResult` holds it for
the reports (:mod:`optimiser.reports.sensitivity_report`), which only format it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from optimiser.analysis.sensitivity import (
    MonteCarloResult,
    RoughnessDistribution,
    monte_carlo,
    roughness_sweep,
)
from optimiser.model import Design, Study
from optimiser.sweeps.pump_monte_carlo import pump_monte_carlo
from optimiser.sweeps.pump_roughness import pump_roughness_sweep
from optimiser.sweeps.robust import RoughnessRuns, roughness_runs
from optimiser.sweeps.scheme_monte_carlo import scheme_monte_carlo
from optimiser.sweeps.scheme_roughness import scheme_roughness_sweep

if TYPE_CHECKING:
    from rich.console import Console

    from optimiser.analysis.check import CheckResult


@dataclass(frozen=True)
class MonteCarloSettings:
    """What a Monte Carlo of roughness draws: distribution, samples, seed, year, ageing."""

    distribution: RoughnessDistribution
    samples: int
    seed: int
    years: float
    ageing_mm_per_year: dict[str, float]


@dataclass(frozen=True)
class SensitivityResult:
    """Everything a ``sensitivity`` run found, ready to print and write."""

    study: Study
    roughness_mm: list[float]
    design_source: str  # "given" (--design FILE) or "optimised" (the nominal design)
    fixed_check: CheckResult | None  # the fixed design checked on the study as written
    fixed_sweep: pd.DataFrame | None
    runs: RoughnessRuns
    robust_sweep: pd.DataFrame | None = None
    monte_carlo: MonteCarloResult | None = None
    monte_carlo_settings: MonteCarloSettings | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def pumped(self) -> bool:
        """A pumped main: the fixed-design tables hold the station's columns."""
        return self.study.pump is not None

    @property
    def design_flows_m3_s(self) -> dict[str, float]:
        return {s.name: s.outlet_flow_m3_s for s in self.study.scenarios}


def _fixed_design(study: Study, given: Design | None, runs: RoughnessRuns,
                  notes: list[str]) -> tuple[Design | None, CheckResult | None]:
    """The design held fixed (the given one, else the nominal least-cost design) and its
    check on the study as written."""
    from optimiser.analysis import check_design

    fixed, fixed_check = given, None
    if given is not None:
        fixed_check = check_design(study, given, capacity=False)
    elif runs.nominal is not None and runs.nominal.outcome is not None:
        fixed, fixed_check = runs.nominal.outcome.design, runs.nominal.outcome.check
    if fixed is None:
        notes.append("The study as written has no design (status "
                     f"{runs.nominal.row['status'] if runs.nominal else 'unknown'}), so the "
                     "fixed-design analysis and the Monte Carlo are skipped; give --design.")
    elif fixed_check is not None and not fixed_check.ok:
        notes.append("The fixed design does not meet every limit of the study as written "
                     "(run check for the list).")
    return fixed, fixed_check


def _on_tree(study: Study, design: Design | None) -> bool:
    """Judged by the check's own line hydraulics rather than the linear check: a
    scheme, and any study with break-pressure tanks (the linear check follows one
    chain from the source and knows no restart at a tank)."""
    return study.is_scheme or bool(study.tanks) or (design is not None and
                                                     bool(design.tanks))


def _monte_carlo(study: Study, fixed: Design, settings: MonteCarloSettings,
                 notes: list[str]) -> MonteCarloResult:
    rates = settings.ageing_mm_per_year
    # A scheme's tree and a pumped main's station are judged by the check's own
    # hydraulics (the linear form covers a gravity route only).
    run = pump_monte_carlo if study.pump is not None else \
        scheme_monte_carlo if _on_tree(study, fixed) else monte_carlo
    result = run(study, fixed, settings.distribution, samples=settings.samples,
                 seed=settings.seed, years=settings.years, ageing_mm_per_year=rates)
    if rates and settings.years == 0:
        notes.append("--ageing has no effect at year 0: give --years T.")
    unused = sorted(set(rates) - {p.option.material for p in fixed.pieces})
    if unused:
        notes.append(f"--ageing: the fixed design uses no {', '.join(unused)}.")
    return result


ROUGHNESS_RULE = ("the swept (or drawn and aged) roughness stands for every option's "
                  "catalogue roughness; a scenario's roughness_factor still multiplies "
                  "it, and a scenario's own roughness_mm replaces it (that scenario does "
                  "not move with the sweep); flows, levels and offtakes as each scenario "
                  "states them")
"""How a swept roughness combines with a scenario's own (JSON, page and docs)."""


def scenario_roughness_notes(study: Study) -> list[str]:
    """One note per scenario whose own roughness rule changes the swept value."""
    notes = []
    for scenario in study.scenarios:
        if scenario.roughness_mm is not None:
            notes.append(f"Scenario {scenario.name!r} states its own roughness_mm = "
                         f"{scenario.roughness_mm:g} mm: the swept roughness, the Monte "
                         "Carlo draws and the ageing do not change it.")
        elif scenario.roughness_factor is not None:
            notes.append(f"Scenario {scenario.name!r} has roughness_factor = "
                         f"{scenario.roughness_factor:g}: it multiplies the swept (or drawn "
                         "and aged) roughness.")
    return notes


def sensitivity_study(study: Study, roughness_mm: Sequence[float], *,
                      given: Design | None = None, robust: bool = False,
                      reoptimise: bool = True,
                      monte_carlo_settings: MonteCarloSettings | None = None,
                      workers: int = 1, dask_address: str | None = None,
                      console: Console | None = None,
                      **solver_options: Any) -> SensitivityResult:
    """Run the whole roughness study of ``study`` (``solver_options`` as
    :func:`optimiser.sweeps.robust.roughness_runs`)."""
    values = [float(v) for v in roughness_mm]
    runs = roughness_runs(study, values, nominal=given is None, robust=robust,
                          reoptimise=reoptimise, workers=workers, dask_address=dask_address,
                          console=console, **solver_options)
    notes: list[str] = scenario_roughness_notes(study)
    fixed, fixed_check = _fixed_design(study, given, runs, notes)
    grid = np.asarray(values)
    # A scheme's tree is swept by the check's own hydraulics (no linear form of a tree);
    # a pumped main by the check with its station (the least head at each roughness).
    sweep = pump_roughness_sweep if study.pump is not None else \
        scheme_roughness_sweep if _on_tree(study, fixed) else roughness_sweep
    fixed_sweep = sweep(study, fixed, grid) if fixed is not None else None
    robust_sweep = None
    robust_outcome = runs.robust.outcome if runs.robust is not None else None
    if robust_outcome is not None and robust_outcome.design is not None:
        robust_sweep = sweep(study, robust_outcome.design, grid)
    mc = settings = None
    if monte_carlo_settings is not None and fixed is not None:
        settings = monte_carlo_settings
        mc = _monte_carlo(study, fixed, settings, notes)
    return SensitivityResult(study, values, "given" if given is not None else "optimised",
                             fixed_check, fixed_sweep, runs, robust_sweep, mc, settings,
                             notes)
